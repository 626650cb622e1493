//! Records that the optional and log files hold: published history, toll billing rows,
//! group-assignment overrides and the log of input rows that were not used.

use chrono::NaiveDate;

use super::Area;

/// A published AADT of an earlier year.
#[derive(Debug, Clone, PartialEq)]
pub struct HistoryRecord {
    /// Segment index in the network.
    pub segment: usize,
    /// Year the figure was published for.
    pub year: i32,
    /// Published AADT, vehicles/day.
    pub aadt: f64,
}

/// Toll vehicle groups of the contract.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum VehicleGroup {
    /// Classes 1-3.
    Light,
    /// Classes 4-13.
    Heavy,
    /// Every class.
    All,
}

impl VehicleGroup {
    /// The contract's spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            VehicleGroup::Light => "light",
            VehicleGroup::Heavy => "heavy",
            VehicleGroup::All => "all",
        }
    }
}

/// One billing row of `toll.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct TollRecord {
    /// Line in toll.csv.
    pub line: u64,
    /// Segment index in the network.
    pub segment: usize,
    /// First billed day.
    pub from_date: NaiveDate,
    /// Last billed day (inclusive).
    pub to_date: NaiveDate,
    /// Vehicle group billed.
    pub group: VehicleGroup,
    /// Passages billed, both directions.
    pub billed_vehicles: u64,
}

/// Longest value kept in the log; longer values are shortened with an ellipsis.
const MAX_VALUE_CHARS: usize = 60;

/// One input row that was not used, as `rejected_rows.csv` lists it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RejectedRow {
    /// Input file, relative to the study folder, `/`-separated.
    pub file: String,
    /// Line number in that file, the header being line 1.
    pub line: u64,
    /// Column at fault; empty where the whole row is at fault.
    pub column: String,
    /// The offending value, shortened if long.
    pub value: String,
    /// Why the row was not used.
    pub reason: String,
}

impl RejectedRow {
    /// A rejected row; `value` is shortened to a readable length.
    pub fn new(
        file: &str,
        line: u64,
        column: &str,
        value: &str,
        reason: impl Into<String>,
    ) -> Self {
        RejectedRow {
            file: file.to_string(),
            line,
            column: column.to_string(),
            value: shorten(value),
            reason: reason.into(),
        }
    }
}

fn shorten(value: &str) -> String {
    if value.chars().count() <= MAX_VALUE_CHARS {
        value.to_string()
    } else {
        let mut s: String = value.chars().take(MAX_VALUE_CHARS - 1).collect();
        s.push('…');
        s
    }
}

/// One row of the editable group-assignment table (`factors/group_assignment.csv`).
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub struct AssignmentRow {
    /// Route the row applies to; `None` for the default row of a class and area.
    pub route: Option<String>,
    /// FHWA functional class, `None` for any.
    pub functional_class: Option<u8>,
    /// Area, `None` for any.
    pub area: Option<Area>,
    /// Group name.
    pub group: String,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_values_are_shortened() {
        let r = RejectedRow::new("a.csv", 2, "x", &"9".repeat(200), "why");
        assert_eq!(r.value.chars().count(), MAX_VALUE_CHARS);
        assert!(r.value.ends_with('…'));
    }
}
