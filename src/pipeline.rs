//! The only place that knows the order of the stages: [`compute`] runs them and returns
//! their [`Results`]; it writes nothing (writing is the output layer's, which takes the
//! results).

use std::collections::BTreeMap;
use std::fmt;

use crate::config::Config;
use crate::input::{self, InputError};
use crate::model::{FileSummary, StudyData};
use crate::progress::Progress;
use crate::segments::Basis;

/// Why a run could not finish (exit code 2).
#[derive(Debug, thiserror::Error)]
pub enum PipelineError {
    /// Reading failed.
    #[error(transparent)]
    Input(#[from] InputError),
    /// No study year: none in study.toml and no permanent-counter record.
    #[error("study.toml: no `year` given and no permanent-counter record to take it from")]
    NoYear,
    /// The factor groups could not be formed.
    // The cause is the source; `{:#}` prints it once after the colon.
    #[error("factor groups")]
    Factors(#[from] crate::factors::FactorError),
    /// The uncounted-segment estimate could not be set up.
    #[error("uncounted-segment estimate")]
    Spatial(#[from] crate::spatial::SpatialError),
}

/// What reading and checking found.
#[derive(Debug, Clone)]
pub struct CheckReport {
    /// Rows read and rejected per file.
    pub files: Vec<FileSummary>,
    /// Rejected rows per reason.
    pub rejected_by_reason: BTreeMap<String, u64>,
    /// Stations accepted.
    pub stations: usize,
    /// Segments accepted.
    pub segments: usize,
    /// Station-days with any count.
    pub station_days: usize,
    /// Count rows used.
    pub count_rows_used: u64,
    /// The study year.
    pub year: Option<i32>,
    /// The first [`SHOWN_REJECTS`] rejected rows, for the terminal (all of them go to
    /// rejected_rows.csv in a run).
    pub first_rejected: Vec<crate::model::RejectedRow>,
}

/// Rejected rows `check` prints one by one.
pub const SHOWN_REJECTS: usize = 20;

impl CheckReport {
    /// Rows read over every file.
    pub fn rows_read(&self) -> u64 {
        self.files.iter().map(|f| f.rows).sum()
    }

    /// Rows rejected over every file.
    pub fn rows_rejected(&self) -> u64 {
        self.files.iter().map(|f| f.rejected).sum()
    }

    /// Data-loss alarms: every file that lost more than `max_share` of its rows.
    pub fn loss_alarms(&self, max_share: f64) -> Vec<String> {
        self.files
            .iter()
            .filter(|f| f.rejected > 0 && f.rejected as f64 > max_share * f.rows.max(1) as f64)
            .map(|f| {
                format!(
                    "{} lost {} of its {} rows ({:.1} %, more than max_rejected_share = {:.1} %): see rejected_rows.csv",
                    f.file,
                    f.rejected,
                    f.rows,
                    100.0 * f.rejected as f64 / f.rows.max(1) as f64,
                    100.0 * max_share
                )
            })
            .collect()
    }

    /// The exit code: 0 when the rejected rows stay within `max_share` of every file (they
    /// are listed in rejected_rows.csv either way), 1 when a file lost more.
    pub fn exit_code(&self, max_share: f64) -> i32 {
        i32::from(!self.loss_alarms(max_share).is_empty())
    }
}

/// Groups a rejection reason: the text before any parenthesised detail.
fn reason_key(reason: &str) -> String {
    reason
        .split(" (")
        .next()
        .unwrap_or(reason)
        .trim()
        .to_string()
}

/// The reading summary of a study read for `year`.
pub fn check_report(data: &StudyData, year: Option<i32>) -> CheckReport {
    let mut by_reason = BTreeMap::new();
    for r in &data.rejected {
        *by_reason.entry(reason_key(&r.reason)).or_insert(0) += 1;
    }
    CheckReport {
        files: data.files.clone(),
        rejected_by_reason: by_reason,
        stations: data.stations.stations.len(),
        segments: data.network.segments.len(),
        station_days: data.counts.days.iter().map(|d| d.len()).sum(),
        count_rows_used: data.counts.rows_used,
        year,
        first_rejected: data.rejected.iter().take(SHOWN_REJECTS).cloned().collect(),
    }
}

/// The study year: the setting, else the year with most permanent-counter records.
fn study_year(config: &Config, data: &StudyData) -> Option<i32> {
    config
        .settings
        .year
        .or_else(|| data.counts.busiest_continuous_year())
}

/// Reads and checks a study without writing anything.
pub fn check(config: &Config) -> Result<CheckReport, PipelineError> {
    let progress = Progress::new(config.quiet);
    let data = input::read_study_with(&config.study, &config.settings.read_options(), &progress)?;
    let year = study_year(config, &data);
    Ok(check_report(&data, year))
}

/// Every stage's output, for writers and tests.
pub struct Results {
    /// What was read.
    pub data: StudyData,
    /// The study year.
    pub year: i32,
    /// Quality control.
    pub qc: crate::qc::QcOutput,
    /// Permanent-counter statistics.
    pub continuous: crate::continuous::stage::ContinuousOutput,
    /// Factor groups.
    pub factors: crate::factors::stage::FactorOutput,
    /// Calibration experiment.
    pub calibration: crate::expansion::calibration::Calibration,
    /// Expanded short counts.
    pub expansion: crate::expansion::stage::ExpansionOutput,
    /// Spatial estimates.
    pub spatial: crate::spatial::stage::SpatialOutput,
    /// Per-segment rows.
    pub segments: Vec<crate::segments::SegmentRow>,
    /// Toll reconciliation, when the study has a toll.csv.
    pub toll: Option<Vec<crate::toll::stage::TollResult>>,
    /// Design inputs per segment, with the stage's diagnostics.
    pub design: crate::design::stage::DesignOutput,
    /// Network totals.
    pub totals: Vec<crate::totals::Total>,
}

impl Results {
    /// Every stage's diagnostics, in stage order.
    pub fn diagnostics(&self) -> [&crate::model::StageDiagnostics; 4] {
        [
            &self.factors.diagnostics,
            &self.expansion.diagnostics,
            &self.spatial.diagnostics,
            &self.design.diagnostics,
        ]
    }
}

/// The alarms of a finished run (exit code 1): data loss beyond `max_rejected_share` in a
/// file; a run without its foundation (no permanent counter gave statistics for the study
/// year, so no factor comes from the study's own data); a run where no count reached any
/// segment (every segment's figures are then empty); a stage that fell back from its method
/// for more than `max_fallback_share` of its units.
pub fn alarms(r: &Results, settings: &crate::config::Settings) -> Vec<String> {
    let mut out = check_report(&r.data, Some(r.year)).loss_alarms(settings.max_rejected_share);
    for d in r.diagnostics() {
        if d.fallback_units > 0 && d.fallback_share() > settings.max_fallback_share {
            let kinds: Vec<String> = d
                .items
                .iter()
                .filter(|i| i.fallback)
                .map(|i| format!("{} {}", i.count, i.kind))
                .collect();
            out.push(format!(
                "stage {}: {} of {} {} ({:.1} %) fell back from its method, more than max_fallback_share = {:.1} % ({}): see diagnostics.csv",
                d.stage,
                d.fallback_units,
                d.total,
                d.unit,
                100.0 * d.fallback_share(),
                100.0 * settings.max_fallback_share,
                kinds.join("; ")
            ));
        }
    }
    if r.continuous.stations.is_empty() {
        let why = r.continuous.skipped.first().map_or(
            "the study has no permanent counter".to_string(),
            |(_, w)| w.clone(),
        );
        out.push(format!(
            "no permanent counter gave statistics for {} ({} skipped; first: {why}): every factor is a flat default and every interval rests on assumptions, not on the study's data",
            r.year,
            r.continuous.skipped.len()
        ));
    }
    // No count reached any segment (found by the mutation test: studies whose few surviving
    // count rows quality control rejected): the segment table has no figure at all.
    if !r.segments.is_empty() && r.segments.iter().all(|s| s.basis == Basis::Estimated) {
        out.push(format!(
            "no count gives an AADT for any segment ({} permanent counter(s) without statistics, {} short count(s) not expanded): every segment's figures are empty",
            r.continuous.skipped.len(),
            r.expansion.unexpanded.len()
        ));
    }
    out
}

/// Runs every stage and keeps their outputs (no files written), with progress on a terminal.
pub fn compute(config: &Config) -> Result<Results, PipelineError> {
    compute_with(config, &Progress::new(config.quiet))
}

/// [`compute`] with the given progress: a byte bar while reading, a spinner for each later
/// step (quality control, counters and factors, calibration, expansion, kriging, design).
pub fn compute_with(config: &Config, progress: &Progress) -> Result<Results, PipelineError> {
    use crate::progress::step;
    let settings = &config.settings;
    let data = input::read_study_with(&config.study, &config.settings.read_options(), progress)?;
    let year = study_year(config, &data).ok_or(PipelineError::NoYear)?;
    let qc_input = crate::qc::QcInput {
        counts: &data.counts,
        stations: &data.stations,
        network: &data.network,
        history: &data.history,
    };
    let qc = step(progress, "quality control", || {
        crate::qc::run(&qc_input, &settings.qc)
    });
    let continuous_input = crate::continuous::stage::ContinuousInput {
        network: &data.network,
        stations: &data.stations,
        counts: &data.counts,
        year,
        filter: &qc,
    };
    let continuous = step(progress, "permanent counters", || {
        crate::continuous::stage::run(&continuous_input, &settings.continuous)
    });
    let factor_input = crate::factors::stage::FactorInput {
        network: &data.network,
        stations: &data.stations,
        history: &data.history,
        continuous: &continuous,
        year,
        assignment: data.assignment.as_deref(),
    };
    let factors = step(progress, "factor groups", || {
        crate::factors::stage::run(&factor_input, &settings.factors)
    })?;
    let calibration = step(progress, "calibration", || {
        calibrate(
            &data,
            &continuous,
            &factors,
            &settings.expansion,
            settings.factors.cell_factors,
        )
    });
    let expansion_input = crate::expansion::stage::ExpansionInput {
        network: &data.network,
        stations: &data.stations,
        counts: &data.counts,
        year,
        filter: &qc,
        factors: &factors,
        calibration: &calibration,
    };
    let expansion = step(progress, "short counts", || {
        crate::expansion::stage::run(&expansion_input, &settings.expansion)
    });
    let obs = crate::segments::observations(&data.network, &data.stations, &continuous, &expansion);
    let history = crate::segments::history_points(&data.network, &data.history, &factors, year);
    let spatial_input = crate::spatial::stage::SpatialInput {
        network: &data.network,
        observations: &obs,
        history: &history,
    };
    let spatial = step(progress, "kriging", || {
        crate::spatial::stage::run(&spatial_input, &settings.spatial)
    })?;
    let segments = crate::segments::assemble(
        &crate::segments::SegmentsInput {
            network: &data.network,
            stations: &data.stations,
            continuous: &continuous,
            factors: &factors,
            expansion: &expansion,
            spatial: &spatial,
        },
        &settings.segments,
    );
    let toll = data.toll.as_ref().map(|t| {
        crate::toll::stage::run(
            &crate::toll::stage::TollInput {
                network: &data.network,
                stations: &data.stations,
                toll: t,
                segments: &segments,
                continuous: &continuous,
                factors: &factors,
                counts: &data.counts,
                filter: &qc,
            },
            &settings.toll,
        )
    });
    let design_input = crate::design::stage::DesignInput {
        network: &data.network,
        segments: &segments,
        factors: &factors,
        tables: &data.design_tables,
    };
    let design = step(progress, "design inputs", || {
        crate::design::stage::run(&design_input, &settings.design)
    });
    let totals = crate::totals::network_totals(&data.network, &segments);
    Ok(Results {
        data,
        year,
        qc,
        continuous,
        factors,
        calibration,
        expansion,
        spatial,
        segments,
        toll,
        design,
        totals,
    })
}

/// The calibration experiment on the study's own permanent counters.
pub fn calibrate(
    data: &StudyData,
    cont: &crate::continuous::stage::ContinuousOutput,
    factors: &crate::factors::stage::FactorOutput,
    params: &crate::expansion::ExpansionParams,
    cell_how: crate::factors::stage::CellFactors,
) -> crate::expansion::calibration::Calibration {
    use crate::expansion::calibration::CalibrationStation;
    let usable: Vec<&crate::continuous::stage::StationStats> = cont
        .stations
        .iter()
        .filter(|s| s.aadt.sufficiency.usable_for_factors())
        .collect();
    let stations: Vec<CalibrationStation> = usable
        .iter()
        .map(|s| {
            let st = &data.stations.stations[s.station];
            let seg = &data.network.segments[st.segment];
            CalibrationStation {
                station_id: st.id.0.clone(),
                group: factors.groups[factors.segment_group[st.segment]]
                    .name
                    .clone(),
                class_group: seg.functional_class.broad_group().to_string(),
                hours: s.hours.clone(),
                aadt: s.aadt_value,
                year: s.aadt.year,
                k30_and_peak_share: s.design.as_ref().map(|d| d.k30).zip(s.daily_peak_share),
            }
        })
        .collect();
    let how = cell_how;
    let make = |idx: &[usize]| {
        let sel: Vec<&crate::continuous::stage::StationStats> =
            idx.iter().map(|&i| usable[i]).collect();
        crate::factors::stage::group_factors(&sel, how)
            .unwrap_or_else(|| crate::factors::GroupFactors::flat(None, 0))
    };
    crate::expansion::calibration::calibrate(&stations, &make, params)
}

impl fmt::Display for CheckReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(f, "{:<32} {:>12} {:>10}", "file", "rows read", "rejected")?;
        for s in &self.files {
            writeln!(f, "{:<32} {:>12} {:>10}", s.file, s.rows, s.rejected)?;
        }
        writeln!(
            f,
            "{:<32} {:>12} {:>10}",
            "total",
            self.rows_read(),
            self.rows_rejected()
        )?;
        if !self.rejected_by_reason.is_empty() {
            writeln!(f, "\nrejected rows by reason:")?;
            for (why, n) in &self.rejected_by_reason {
                writeln!(f, "  {n:>8}  {why}")?;
            }
            writeln!(
                f,
                "\nrejected rows{} (file:line, column, value: reason):",
                if self.rows_rejected() > self.first_rejected.len() as u64 {
                    format!(", the first {}", self.first_rejected.len())
                } else {
                    String::new()
                }
            )?;
            for r in &self.first_rejected {
                let col = if r.column.is_empty() {
                    "whole row".to_string()
                } else {
                    format!("column {}", r.column)
                };
                writeln!(
                    f,
                    "  {}:{}, {col}, {:?}: {}",
                    r.file, r.line, r.value, r.reason
                )?;
            }
        }
        writeln!(
            f,
            "\nsegments {}, stations {}, station-days counted {}, count rows used {}",
            self.segments, self.stations, self.station_days, self.count_rows_used
        )?;
        match self.year {
            Some(y) => writeln!(f, "study year {y}"),
            None => writeln!(
                f,
                "study year: none (no permanent-counter records and no `year` in study.toml)"
            ),
        }
    }
}
