//! Writing a computed run: every table as CSV, the workbook, the map, the report and the
//! manifest, from the pipeline's [`Results`].

use std::path::{Path, PathBuf};

use super::table::Table;
use super::{csv_out, publish, tables, OutputError};
use crate::config::Settings;
use crate::input;
use crate::pipeline::{check_report, CheckReport, Results};

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
    pub calibration: Table,
    /// Cross-validation table.
    pub cross_validation: Table,
    /// Network daily VKT with its 95 % interval (segments independent).
    pub network_vkt: Option<(f64, f64, f64)>,
    /// Per stage: (stage, units fallen back, units handled, unit), for the summary.
    pub fallbacks: Vec<(&'static str, usize, usize, &'static str)>,
    /// Segments without pavement inputs and without capacity inputs (the reasons are in
    /// design_inputs.csv).
    pub design_gaps: [usize; 2],
}

/// Writes every output of a computed run into `out` and returns what was written.
pub fn write_all(r: &Results, settings: &Settings, out: &Path) -> Result<RunReport, OutputError> {
    let check = check_report(&r.data, Some(r.year));
    let data = &r.data;
    let seg_table = tables::segment_statistics(data, &r.segments, &r.spatial);
    let calibration = tables::calibration_table(&r.calibration);
    let cross_validation = tables::cross_validation(data, &r.spatial);
    let all = [
        seg_table,
        tables::station_statistics(data, &r.continuous, &r.factors),
        tables::hourly_distribution(data, &r.continuous),
        tables::ranked_hours(data, &r.continuous),
        tables::factors_table(&r.factors, settings.factors.target_precision),
        tables::factor_groups(data, &r.factors),
        tables::short_counts(data, &r.expansion),
        calibration.clone(),
        cross_validation.clone(),
        tables::spatial_model(&r.spatial),
        tables::qc_log(data, &r.qc),
        tables::qc_summary(data, &r.qc),
        tables::network_findings(&r.qc),
        tables::rejected_rows(&data.rejected),
        tables::diagnostics(&r.diagnostics()),
    ];
    let mut all = all.to_vec();
    if let Some(toll) = &r.toll {
        all.push(tables::toll_reconciliation(data, toll, &settings.toll));
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
            &[],
        ));
        let segs = crate::toll::reconcile::summarise_by_segment(&ok);
        let keys: Vec<(String, String)> = segs
            .iter()
            .map(|m| (m.segment.0.clone(), m.group.as_str().to_string()))
            .collect();
        let totals: Vec<_> = segs.iter().map(|m| m.totals.clone()).collect();
        let advice: Vec<Option<&str>> = segs
            .iter()
            .map(|m| {
                toll.iter()
                    .filter(|t| t.record.group == m.group)
                    .filter(|t| data.network.segments[t.record.segment].id == m.segment)
                    .find_map(|t| t.advice)
            })
            .collect();
        all.push(tables::toll_summary(
            "toll_by_segment",
            "Toll reconciliation per segment",
            &keys,
            &totals,
            &advice,
        ));
    }
    let days = if chrono::NaiveDate::from_ymd_opt(r.year, 2, 29).is_some() {
        366.0
    } else {
        365.0
    };
    all.push(publish::design_table(
        data,
        &r.design.rows,
        settings.design.design_years,
    ));
    all.push(publish::totals_table(&r.totals, days));
    super::place::check_target(&data.root, out)?;
    // The whole set goes into a temporary folder beside `out`, then into place as a set.
    let tmp = super::place::staging_dir(out)?;
    let staged = write_set(&tmp, r, settings, &all, &check);
    let rel: Vec<String> = match staged {
        Ok(paths) => paths
            .iter()
            .map(|p| input::rejects::relative_name(&tmp, p))
            .collect(),
        Err(e) => {
            let _ = std::fs::remove_dir_all(&tmp);
            return Err(e);
        }
    };
    let written = super::place::commit(&tmp, out, &rel, &mut |a, b| std::fs::rename(a, b))?;
    let mut basis_counts = [0; 3];
    for s in &r.segments {
        basis_counts[s.basis as usize] += 1;
    }
    let design_gaps = [
        r.design.rows.iter().filter(|d| d.pavement.is_err()).count(),
        r.design.rows.iter().filter(|d| d.capacity.is_err()).count(),
    ];
    Ok(RunReport {
        design_gaps,
        fallbacks: r
            .diagnostics()
            .iter()
            .map(|d| (d.stage, d.fallback_units, d.total, d.unit))
            .collect(),
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

/// Writes the whole output set into `dir` and returns the paths written.
fn write_set(
    dir: &Path,
    r: &Results,
    settings: &Settings,
    all: &[Table],
    check: &CheckReport,
) -> Result<Vec<PathBuf>, OutputError> {
    let data = &r.data;
    let mut written = Vec::new();
    for t in all {
        written.push(csv_out::write(dir, t)?);
    }
    let fdir = dir.join("factors");
    super::ensure_dir(&fdir)?;
    written.push(csv_out::write(
        &fdir,
        &tables::group_assignment(&r.factors),
    )?);
    let by_name: std::collections::BTreeMap<String, Table> =
        all.iter().map(|t| (t.name.clone(), t.clone())).collect();
    let refs: Vec<&Table> = all.iter().collect();
    let cover = publish::cover(r, check.rows_read());
    written.push(super::xlsx::write_workbook(
        dir,
        "roadtally.xlsx",
        &cover,
        &refs,
    )?);
    written.push(super::geojson_out::write_segments_geojson(
        dir,
        "segments.geojson",
        &data.network,
        &by_name["segment_statistics"],
        "segment_id",
    )?);
    let report = publish::report_data(r, &by_name);
    written.push(super::report::write_report(dir, "report.html", &report)?);
    let names: Vec<String> = written
        .iter()
        .map(|p| input::rejects::relative_name(dir, p))
        .collect();
    let alarms = crate::pipeline::alarms(r, settings);
    let manifest = publish::manifest(data, settings, r.year, &names, &alarms);
    written.push(super::write_atomic(dir, "run_manifest.json", &manifest)?);
    Ok(written)
}
