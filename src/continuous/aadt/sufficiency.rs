//! When a station's year is good enough: the sufficiency rule and the verdict.

use super::MadwCell;

/// When a year of days is good enough for an AASHTO AADT and for factors.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SufficiencyRule {
    /// Valid days a MADW cell needs to count as measured (default 1, as TMG App. L allows
    /// "between one and five records"). A value of 0 is treated as 1.
    pub min_days_per_cell: u8,
    /// Months that must hold at least one measured cell (default 12).
    pub required_months: u8,
    /// Whether empty cells of present months may be imputed (default true).
    pub allow_imputed_cells: bool,
    /// Most empty cells that may be imputed before the station is insufficient
    /// (default 12, about one cell in seven; a project choice).
    pub max_imputed_cells: u8,
}

impl Default for SufficiencyRule {
    fn default() -> Self {
        SufficiencyRule {
            min_days_per_cell: 1,
            required_months: 12,
            allow_imputed_cells: true,
            max_imputed_cells: 12,
        }
    }
}

/// Why a station's year is not sufficient.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum InsufficiencyReason {
    /// Too few months hold a measured cell.
    TooFewMonths {
        /// Months present.
        present: u8,
        /// Months required.
        required: u8,
    },
    /// Cells are empty and the rule forbids imputation.
    ImputationNotAllowed {
        /// Empty cells in present months.
        empty_cells: usize,
    },
    /// More cells are empty than the rule allows to impute.
    TooManyEmptyCells {
        /// Empty cells in present months.
        empty_cells: usize,
        /// The rule's maximum.
        max: u8,
    },
    /// Cells are empty and no month has all 7 weekdays, so weekday ratios are unknown.
    NoCompleteMonth,
}

/// Verdict on a station's year of data.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Sufficiency {
    /// All 84 cells measured.
    Full,
    /// Some cells imputed (listed) and, when `required_months < 12`, some months dropped.
    Imputed {
        /// The imputed cells, in (dow, month) order.
        cells: Vec<MadwCell>,
        /// Months (0-based) with no measured cell, left out of the averages.
        dropped_months: Vec<u8>,
    },
    /// A partial year: AADT is reported but the station is unusable for factors.
    Insufficient {
        /// Why.
        reason: InsufficiencyReason,
    },
}

impl Sufficiency {
    /// Whether the station may contribute a factor profile to a factor group:
    /// `Full`, or `Imputed` with no dropped month.
    pub fn usable_for_factors(&self) -> bool {
        match self {
            Sufficiency::Full => true,
            Sufficiency::Imputed { dropped_months, .. } => dropped_months.is_empty(),
            Sufficiency::Insufficient { .. } => false,
        }
    }

    /// Short label for tables: `full`, `imputed` or `partial_year`.
    pub fn label(&self) -> &'static str {
        match self {
            Sufficiency::Full => "full",
            Sufficiency::Imputed { .. } => "imputed",
            Sufficiency::Insufficient { .. } => "partial_year",
        }
    }
}
