//! The only place that knows the order of the stages.

use std::collections::BTreeMap;
use std::fmt;
use std::path::PathBuf;

use crate::config::Config;
use crate::input::{self, FileSummary, InputError, StudyData};
use crate::output::{self, csv_out, tables, OutputError};
use crate::progress::Progress;

/// Why a run could not finish (exit code 2).
#[derive(Debug, thiserror::Error)]
pub enum PipelineError {
    /// Reading failed.
    #[error(transparent)]
    Input(#[from] InputError),
    /// Writing failed.
    #[error(transparent)]
    Output(#[from] OutputError),
    /// `run` was called without an output folder.
    #[error("no output folder given (use --out <dir>)")]
    NoOutput,
    /// No study year: none in study.toml and no permanent-counter record.
    #[error("study.toml: no `year` given and no permanent-counter record to take it from")]
    NoYear,
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
}

impl CheckReport {
    /// Rows read over every file.
    pub fn rows_read(&self) -> u64 {
        self.files.iter().map(|f| f.rows).sum()
    }

    /// Rows rejected over every file.
    pub fn rows_rejected(&self) -> u64 {
        self.files.iter().map(|f| f.rejected).sum()
    }

    /// The contract's exit code: 0 when every row was used, 1 when some were rejected.
    pub fn exit_code(&self) -> i32 {
        i32::from(self.rows_rejected() > 0)
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

fn report(data: &StudyData, year: Option<i32>) -> CheckReport {
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
    let data = input::read_study(&config.study, &progress)?;
    let year = study_year(config, &data);
    Ok(report(&data, year))
}

/// What a run wrote and found.
#[derive(Debug, Clone)]
pub struct RunReport {
    /// The reading summary.
    pub check: CheckReport,
    /// Quality-control summary.
    pub qc: crate::qc::QcSummary,
    /// Files written.
    pub written: Vec<PathBuf>,
    /// Segments by basis: continuous, short_count, estimated.
    pub basis_counts: [usize; 3],
    /// The calibration table and cross-validation table, for the terminal summary.
    pub calibration: output::Table,
    /// Cross-validation table.
    pub cross_validation: output::Table,
    /// Network daily VKT with its 95 % interval (segments independent).
    pub network_vkt: Option<(f64, f64, f64)>,
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
    /// Design inputs per segment.
    pub design: Vec<crate::design::stage::DesignRow>,
    /// Network totals.
    pub totals: Vec<crate::totals::Total>,
}

/// Runs every stage and keeps their outputs (no files written).
pub fn compute(config: &Config) -> Result<Results, PipelineError> {
    let progress = Progress::new(config.quiet);
    let settings = &config.settings;
    let mut data = input::read_study(&config.study, &progress)?;
    let assignment =
        input::extras::read_group_assignment(&data.root, &mut data.rejected, &mut data.files)?;
    let year = study_year(config, &data).ok_or(PipelineError::NoYear)?;
    let qc = crate::qc::run(&data.counts, &data.stations, &data.network, &settings.qc);
    let continuous = crate::continuous::stage::run(&data, year, &qc, &settings.continuous);
    let factors =
        crate::factors::stage::run(&data, &continuous, year, assignment, &settings.factors);
    let calibration = calibrate(
        &data,
        &continuous,
        &factors,
        &settings.expansion,
        settings.factors.cell_factors,
    );
    let expansion = crate::expansion::stage::run(
        &data,
        year,
        &qc,
        &factors,
        &calibration,
        &settings.expansion,
    );
    let obs = crate::segments::observations(&data, &continuous, &expansion);
    let spatial = crate::spatial::stage::run(&data.network, &obs, &settings.spatial);
    let segments = crate::segments::assemble(&data, &continuous, &factors, &expansion, &spatial);
    let toll = data
        .toll
        .as_ref()
        .map(|t| crate::toll::stage::run(&data, t, &segments, &continuous, &factors));
    let tables = input::read_design_tables(&data.root)?;
    let design = crate::design::stage::run(&data, &segments, &factors, &tables, &settings.design);
    let totals = crate::totals::network_totals(&data, &segments);
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
            .unwrap_or_else(|| crate::expansion::GroupFactors::flat(None, 0))
    };
    crate::expansion::calibration::calibrate(&stations, &make, params)
}

/// Runs the whole pipeline and writes the outputs.
pub fn run(config: &Config) -> Result<RunReport, PipelineError> {
    let out = config.out.clone().ok_or(PipelineError::NoOutput)?;
    let r = compute(config)?;
    let check = report(&r.data, Some(r.year));
    let data = &r.data;
    let seg_table = tables::segment_statistics(data, &r.segments);
    let calibration = tables::calibration_table(&r.calibration);
    let cross_validation = tables::cross_validation(data, &r.spatial);
    let all = [
        seg_table,
        tables::station_statistics(data, &r.continuous, &r.factors),
        tables::hourly_distribution(data, &r.continuous),
        tables::ranked_hours(data, &r.continuous),
        tables::factors_table(&r.factors, config.settings.factors.target_precision),
        tables::factor_groups(data, &r.factors),
        tables::short_counts(data, &r.expansion),
        calibration.clone(),
        cross_validation.clone(),
        tables::spatial_model(&r.spatial),
        tables::qc_log(data, &r.qc),
        tables::network_findings(&r.qc),
        tables::rejected_rows(&data.rejected),
    ];
    let mut all = all.to_vec();
    if let Some(toll) = &r.toll {
        all.push(tables::toll_reconciliation(
            data,
            toll,
            &config.settings.toll,
        ));
        let ok: Vec<crate::toll::reconcile::ReconciliationRow> =
            toll.iter().filter_map(|t| t.result.clone().ok()).collect();
        let months = crate::toll::reconcile::summarise_by_month(&ok);
        let keys: Vec<(String, String)> = months
            .iter()
            .map(|m| {
                (
                    format!("{}-{:02}", m.year, m.month),
                    m.group.as_str().to_string(),
                )
            })
            .collect();
        let totals: Vec<_> = months.iter().map(|m| m.totals.clone()).collect();
        all.push(tables::toll_summary(
            "toll_by_month",
            "Toll reconciliation per month",
            &keys,
            &totals,
        ));
        let segs = crate::toll::reconcile::summarise_by_segment(&ok);
        let keys: Vec<(String, String)> = segs
            .iter()
            .map(|m| (m.segment.0.clone(), m.group.as_str().to_string()))
            .collect();
        let totals: Vec<_> = segs.iter().map(|m| m.totals.clone()).collect();
        all.push(tables::toll_summary(
            "toll_by_segment",
            "Toll reconciliation per segment",
            &keys,
            &totals,
        ));
    }
    let days = if chrono::NaiveDate::from_ymd_opt(r.year, 2, 29).is_some() {
        366.0
    } else {
        365.0
    };
    all.push(output::publish::design_table(
        data,
        &r.design,
        config.settings.design.design_years,
    ));
    all.push(output::publish::totals_table(&r.totals, days));
    output::ensure_dir(&out)?;
    let mut written = Vec::new();
    for t in &all {
        written.push(csv_out::write(&out, t)?);
    }
    let fdir = out.join("factors");
    output::ensure_dir(&fdir)?;
    written.push(csv_out::write(
        &fdir,
        &tables::group_assignment(&r.factors),
    )?);
    let by_name: std::collections::BTreeMap<String, output::Table> =
        all.iter().map(|t| (t.name.clone(), t.clone())).collect();
    let refs: Vec<&output::Table> = all.iter().collect();
    let cover = output::publish::cover(&r, check.rows_read());
    written.push(output::xlsx::write_workbook(
        &out,
        "roadtally.xlsx",
        &cover,
        &refs,
    )?);
    written.push(output::geojson_out::write_segments_geojson(
        &out,
        "segments.geojson",
        &data.network,
        &by_name["segment_statistics"],
        "segment_id",
    )?);
    let report = output::publish::report_data(&r, &by_name);
    written.push(output::report::write_report(&out, "report.html", &report)?);
    let names: Vec<String> = written
        .iter()
        .map(|p| input::rejects::relative_name(&out, p))
        .collect();
    let manifest = output::publish::manifest(data, &config.settings, r.year, &names);
    written.push(output::write_atomic(&out, "run_manifest.json", &manifest)?);
    let mut basis_counts = [0; 3];
    for s in &r.segments {
        basis_counts[s.basis as usize] += 1;
    }
    Ok(RunReport {
        check,
        qc: r.qc.summary.clone(),
        written,
        basis_counts,
        calibration,
        cross_validation,
        network_vkt: r
            .totals
            .iter()
            .find(|t| t.functional_class == 0 && t.area == "all" && t.vehicles == "all")
            .map(|t| {
                let (lo, hi) = t.interval();
                (t.daily_vkt, lo, hi)
            }),
    })
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
