//! What the analyst hands on: the design and totals tables, the workbook's cover, the report's
//! content and the run manifest, all built from the stages' outputs.

use std::collections::BTreeMap;

use super::report::{
    CalendarRow, DayStatus, GroupCurves, MapMarker, MapSegment, ReportData, Series,
};
use super::table::{Cell, Format, Table, TableSpec};
use super::tables::col;
use super::xlsx::CoverSheet;
use crate::design::stage::DesignRow;
use crate::model::StudyData;
use crate::pipeline::Results;
use crate::totals::Total;

/// The caution every publication carries.
pub const CAUTION: &str = "Every figure here is an estimate with a stated uncertainty (its 95 % interval). \
Pavement and capacity design follows local codes and a licensed engineer's judgement; these figures are \
inputs to that judgement, not a substitute for it.";

/// The design default tables in use whose stated source says "from memory", one line each:
/// the file, what it feeds, and its distinct sources. Empty when every table in use cites a
/// checked source (an agency's own tables in the study's `factors/`).
pub fn memory_defaults(t: &crate::model::design_tables::DesignTables) -> Vec<String> {
    fn line(file: &str, feeds: &str, sources: Vec<&str>) -> Option<String> {
        let mut memory: Vec<&str> = sources
            .into_iter()
            .filter(|s| s.to_ascii_lowercase().contains("from memory"))
            .collect();
        memory.sort_unstable();
        memory.dedup();
        (!memory.is_empty()).then(|| format!("factors/{file} ({feeds}): {}", memory.join("; ")))
    }
    let lanes = t.lanes.rows();
    [
        line(
            "lane_distribution.csv",
            "lane distribution D_L, feeds the design-lane ESALs",
            lanes.iter().map(|r| r.source.as_str()).collect(),
        ),
        line(
            "truck_factors.csv",
            "ESALs per truck, feed the truck factor and every ESAL figure",
            t.trucks.rows().iter().map(|r| r.source.as_str()).collect(),
        ),
        line(
            "hcm_defaults.csv",
            "PHF and heavy share where the study measured none, feed the capacity inputs",
            t.hcm.rows().iter().map(|r| r.source.as_str()).collect(),
        ),
    ]
    .into_iter()
    .flatten()
    .collect()
}

/// The cover's and report's note on design defaults stated from memory.
fn memory_note(t: &crate::model::design_tables::DesignTables) -> String {
    let lines = memory_defaults(t);
    if lines.is_empty() {
        "none: every design table in use cites its source".to_string()
    } else {
        format!(
            "the design figures (design_inputs: D_L, truck factor, ESALs, PHF and heavy share where marked HCM default) rest on these tables, whose values are stated from memory; replace them with checked or agency values in the study's factors/ folder. {}",
            lines.join(" | ")
        )
    }
}

/// The flag shown beside design figures that rest on defaults stated "from memory".
pub const MEMORY_FLAG: &str = "uses default tables stated from memory (see the cover or the report's design note): check them against the source before design use";

/// `design_inputs.csv`: pavement and capacity inputs per segment; where a segment has none,
/// `pavement_note` / `capacity_note` say why (never a silently blank row).
pub fn design_table(data: &StudyData, rows: &[DesignRow], design_years: u32) -> Table {
    use crate::design::{CapacityInputs, PavementInputs};
    type Row<'r> = (&'r str, &'r DesignRow);
    // A pavement or capacity figure, empty where the segment has no such inputs.
    fn pav(f: fn(&PavementInputs) -> Cell) -> impl Fn(&Row) -> Cell {
        move |r: &Row| r.1.pavement.as_ref().map_or(Cell::Empty, f)
    }
    fn cap(f: fn(&CapacityInputs) -> Cell) -> impl Fn(&Row) -> Cell {
        move |r: &Row| r.1.capacity.as_ref().map_or(Cell::Empty, f)
    }
    let title = if memory_defaults(&data.design_tables).is_empty() {
        "Pavement (AASHTO 1993) and capacity (HCM) inputs per segment".to_string()
    } else {
        format!("Pavement (AASHTO 1993) and capacity (HCM) inputs per segment; {MEMORY_FLAG}")
    };
    let spec = TableSpec::<Row>::new("design_inputs", &title)
        .col("segment_id", "", Format::Text, |r| Cell::from(r.0))
        .col(
            "heavy_aadt",
            "veh/day",
            Format::Integer,
            pav(|p| Cell::from(p.heavy_aadt)),
        )
        .col(
            "heavy_aadt_lo95",
            "veh/day",
            Format::Integer,
            pav(|p| Cell::from(p.heavy_aadt_lo95)),
        )
        .col(
            "heavy_aadt_hi95",
            "veh/day",
            Format::Integer,
            pav(|p| Cell::from(p.heavy_aadt_hi95)),
        )
        .col(
            "single_unit_aadt",
            "veh/day",
            Format::Integer,
            pav(|p| Cell::from(p.su_aadt)),
        )
        .col(
            "combination_aadt",
            "veh/day",
            Format::Integer,
            pav(|p| Cell::from(p.cu_aadt)),
        )
        .col(
            "directional_factor_dd",
            "factor",
            Format::Decimal(3),
            pav(|p| Cell::from(p.d_d)),
        )
        .col(
            "lanes_per_direction",
            "",
            Format::Integer,
            pav(|p| Cell::from(p.lanes_per_direction)),
        )
        .col(
            "lane_factor_dl",
            "factor",
            Format::Decimal(3),
            pav(|p| Cell::from(p.d_l)),
        )
        .col(
            "truck_factor",
            "ESAL/truck",
            Format::Decimal(3),
            pav(|p| Cell::from(p.truck_factor)),
        )
        .col(
            "annual_esal_design_lane",
            "ESAL/yr",
            Format::Integer,
            pav(|p| Cell::from(p.annual_esal_design_lane)),
        )
        .col(
            "annual_esal_lo95",
            "ESAL/yr",
            Format::Integer,
            pav(|p| Cell::from(p.annual_esal_design_lane_lo95)),
        )
        .col(
            "annual_esal_hi95",
            "ESAL/yr",
            Format::Integer,
            pav(|p| Cell::from(p.annual_esal_design_lane_hi95)),
        )
        .col("growth_rate", "share/yr", Format::Share, |r| {
            r.1.pavement
                .as_ref()
                .map_or(Cell::Empty, |_| Cell::from(r.1.growth_rate))
        })
        .col("design_years", "yr", Format::Integer, move |r| {
            r.1.pavement
                .as_ref()
                .map_or(Cell::Empty, |_| Cell::from(design_years))
        })
        .col(
            "growth_factor",
            "factor",
            Format::Decimal(3),
            pav(|p| Cell::from(p.growth_factor)),
        )
        .col(
            "cumulative_esal",
            "ESAL",
            Format::Integer,
            pav(|p| Cell::from(p.cumulative_esal)),
        )
        .col(
            "cumulative_esal_lo95",
            "ESAL",
            Format::Integer,
            pav(|p| Cell::from(p.cumulative_esal_lo95)),
        )
        .col(
            "cumulative_esal_hi95",
            "ESAL",
            Format::Integer,
            pav(|p| Cell::from(p.cumulative_esal_hi95)),
        )
        .col(
            "ddhv",
            "veh/h",
            Format::Integer,
            cap(|c| Cell::from(c.ddhv)),
        )
        .col(
            "ddhv_lo95",
            "veh/h",
            Format::Integer,
            cap(|c| Cell::from(c.ddhv_lo95)),
        )
        .col(
            "ddhv_hi95",
            "veh/h",
            Format::Integer,
            cap(|c| Cell::from(c.ddhv_hi95)),
        )
        .col(
            "peak_hour_factor",
            "factor",
            Format::Decimal(3),
            cap(|c| Cell::from(c.phf)),
        )
        .col(
            "phf_source",
            "",
            Format::Text,
            cap(|c| Cell::from(c.phf_source.as_str())),
        )
        .col(
            "design_hour_heavy_share",
            "share",
            Format::Share,
            cap(|c| Cell::from(c.design_hour_heavy_share)),
        )
        .col(
            "heavy_share_source",
            "",
            Format::Text,
            cap(|c| Cell::from(c.hv_source.as_str())),
        )
        .col("pavement_note", "", Format::Text, |r| {
            r.1.pavement
                .as_ref()
                .err()
                .map_or(Cell::Empty, |g| Cell::from(g.to_string()))
        })
        .col("capacity_note", "", Format::Text, |r| {
            r.1.capacity
                .as_ref()
                .err()
                .map_or(Cell::Empty, |g| Cell::from(g.to_string()))
        });
    let records: Vec<Row> = rows
        .iter()
        .map(|r| (data.network.segments[r.segment].id.as_str(), r))
        .collect();
    spec.build(&records)
}

/// `network_totals.csv`.
pub fn totals_table(totals: &[Total], days_in_year: f64) -> Table {
    let mut t = Table::new(
        "network_totals",
        "Vehicle-km travelled by functional class and area, light and heavy",
        vec![
            col("functional_class", "", Format::Text),
            col("area", "", Format::Text),
            col("vehicles", "", Format::Text),
            col("segments", "", Format::Integer),
            col("daily_vkt", "veh-km/day", Format::Integer),
            col("daily_vkt_lo95", "veh-km/day", Format::Integer),
            col("daily_vkt_hi95", "veh-km/day", Format::Integer),
            col("daily_vkt_lo95_correlated", "veh-km/day", Format::Integer),
            col("daily_vkt_hi95_correlated", "veh-km/day", Format::Integer),
            col(
                "annual_vkt_million",
                "million veh-km/yr",
                Format::Decimal(3),
            ),
        ],
    );
    for x in totals {
        let (lo, hi) = x.interval();
        let (clo, chi) = x.interval_correlated();
        t.push(vec![
            Cell::from(if x.functional_class == 0 {
                "all".to_string()
            } else {
                x.functional_class.to_string()
            }),
            Cell::from(x.area),
            Cell::from(x.vehicles),
            Cell::from(x.segments),
            Cell::from(x.daily_vkt),
            Cell::from(lo),
            Cell::from(hi),
            Cell::from(clo),
            Cell::from(chi),
            Cell::from(x.daily_vkt * days_in_year / 1e6),
        ]);
    }
    t
}

/// The workbook's first sheet.
pub fn cover(r: &Results, input_rows: u64) -> CoverSheet {
    let mut basis = [0usize; 3];
    for s in &r.segments {
        basis[s.basis as usize] += 1;
    }
    CoverSheet {
        title: format!("Annual traffic statistics {}", r.year),
        lines: vec![
            ("Study year".into(), Cell::Int(r.year.into())),
            ("Tool".into(), Cell::from(format!("roadtally {}", env!("CARGO_PKG_VERSION")))),
            ("Input rows read".into(), Cell::Int(input_rows as i64)),
            ("Input rows rejected".into(), Cell::from(r.data.rejected.len())),
            ("Segments".into(), Cell::from(r.segments.len())),
            ("From permanent counters".into(), Cell::from(basis[0])),
            ("From short counts".into(), Cell::from(basis[1])),
            ("Estimated (no count)".into(), Cell::from(basis[2])),
            ("Short counts expanded".into(), Cell::from(r.expansion.counts.len())),
            ("Direction-days rejected by QC".into(), Cell::from(r.qc.summary.rejected)),
            (
                "Design defaults from memory".into(),
                Cell::from(memory_note(&r.data.design_tables)),
            ),
            ("Methods".into(), Cell::from("AASHTO AADT at permanent counters; TMG factor groups and factor application for short counts, with intervals calibrated on the counters; kriging with external drift on ln AADT for uncounted segments. See README and the report.")),
        ],
        caution: CAUTION.into(),
    }
}

/// The report's content.
pub fn report_data(r: &Results, tables: &BTreeMap<String, Table>) -> ReportData {
    let net = &r.data.network;
    let map = r
        .segments
        .iter()
        .filter(|s| s.aadt.value.is_finite())
        .map(|s| {
            let seg = &net.segments[s.segment];
            let (a, b) = (&net.nodes[seg.from], &net.nodes[seg.to]);
            MapSegment {
                from: (a.lon, a.lat),
                to: (b.lon, b.lat),
                aadt: s.aadt.value,
                lo95: s.aadt.lo95,
                hi95: s.aadt.hi95,
                basis: s.basis.as_str().to_string(),
                label: format!("{} {}", seg.id, seg.route.as_deref().unwrap_or("")),
                id: seg.id.as_str().to_string(),
                route: seg.route.clone().unwrap_or_default(),
                class: format!("{} {}", seg.functional_class.code(), seg.area.as_str()),
                group: s.group.clone(),
                length_km: seg.length_km,
                heavy_share: s.heavy.as_ref().map_or(f64::NAN, |h| h.value),
                k_factor: s.k.as_ref().map_or(f64::NAN, |k| k.value),
                d_factor: s.d.as_ref().map_or(f64::NAN, |d| d.value),
            }
        })
        .collect();
    let mut monthly = Vec::new();
    let mut weekday = Vec::new();
    for g in &r.factors.groups {
        if let Some(s) = &g.summary {
            monthly.push(Series {
                name: g.name.clone(),
                values: s.monthly_factors().to_vec(),
            });
            weekday.push(Series {
                name: g.name.clone(),
                values: s.day_of_week_factors().to_vec(),
            });
        }
    }
    let q = &r.qc.summary;
    let extra: Vec<Table> = [
        "factor_groups",
        // Per segment: the verdicts and what would make the audit conclusive.
        "toll_by_segment",
        "toll_reconciliation",
        "design_inputs",
        "spatial_model",
    ]
    .iter()
    .filter_map(|n| tables.get(*n).cloned())
    .collect();
    let (ranked_hours, hourly_profiles) = counter_curves(r);
    ReportData {
        markers: markers(r),
        ranked_hours,
        hourly_profiles,
        qc_calendar: qc_calendar(r),
        stations: tables.get("station_statistics").map(station_table),
        title: format!("Annual traffic statistics {}", r.year),
        study_year: r.year,
        generated_by: format!("roadtally {}", env!("CARGO_PKG_VERSION")),
        summary: vec![
            ("Segments".into(), r.segments.len().to_string()),
            ("Permanent counters used".into(), r.continuous.stations.len().to_string()),
            ("Short counts expanded".into(), r.expansion.counts.len().to_string()),
            ("Direction-days checked".into(), q.direction_days.to_string()),
            ("Direction-days rejected / flagged".into(), format!("{} / {}", q.rejected, q.flagged)),
            ("Input rows rejected".into(), r.data.rejected.len().to_string()),
            ("Design defaults from memory".into(), memory_note(&r.data.design_tables)),
        ],
        map,
        monthly_factors: monthly,
        weekday_factors: weekday,
        calibration: tables.get("short_count_calibration").cloned(),
        cross_validation: tables.get("cross_validation").cloned(),
        qc_summary: tables.get("qc_summary").cloned(),
        // The report shows the network rows and one row per class; the CSV has every area.
        network_totals: tables.get("network_totals").map(|t| {
            let mut t = t.clone();
            let area = t.column("area").expect("area column");
            t.rows.retain(|r| matches!(&r[area], Cell::Text(a) if a == "all"));
            t
        }),
        extra_tables: extra,
        methods: vec![
            ("Permanent counters".into(), "AADT by the AASHTO method: the mean over the seven weekdays of the mean over twelve months of each month-weekday average (FHWA TMG 2022, App. L). K30 is the 30th-highest two-way clock hour over AADT; D its heavier direction's share.".into()),
            ("Factor groups".into(), "Functional class by area with a recreational group (TMG); segments without a counter follow the editable assignment table and the same-road rule. Factors multiply a count: F = AADT / MADW.".into()),
            ("Short counts".into(), "Each 24-hour period times the group's day-of-week-by-month factor, axle correction and growth (TMG factor application); the 95 % interval is scaled by a calibration that draws simulated counts from every permanent counter and expands them without it.".into()),
            ("Uncounted segments".into(), "Kriging with external drift on ln AADT: a regression on class, area, lanes, speed and the route's counted level gives the drift; an exponential covariance fitted by weighted least squares; each count enters with its own measurement variance. Intervals exp(m ± 1.96 √v). Validated by leave-one-out against two simpler estimators.".into()),
            ("Network totals".into(), "Sum of AADT × length; the interval treats segments as independent, and a second interval as fully correlated, which bounds it.".into()),
        ],
        caution: CAUTION.into(),
    }
}

/// Every station as a map marker at the middle of its segment.
fn markers(r: &Results) -> Vec<MapMarker> {
    let net = &r.data.network;
    r.data
        .stations
        .stations
        .iter()
        .map(|st| {
            let seg = &net.segments[st.segment];
            let (a, b) = (&net.nodes[seg.from], &net.nodes[seg.to]);
            MapMarker {
                id: st.id.as_str().to_string(),
                segment_id: st.segment_id.as_str().to_string(),
                at: ((a.lon + b.lon) / 2.0, (a.lat + b.lat) / 2.0),
                continuous: st.kind == crate::model::StationKind::Continuous,
            }
        })
        .collect()
}

/// Ranked-hour curves and weekday hourly profiles of the permanent counters, grouped by
/// factor group in the groups' order.
fn counter_curves(r: &Results) -> (Vec<GroupCurves>, Vec<GroupCurves>) {
    let f = &r.factors;
    let mut ranked: Vec<GroupCurves> = f
        .groups
        .iter()
        .map(|g| GroupCurves {
            group: g.name.clone(),
            counters: Vec::new(),
        })
        .collect();
    let mut profiles = ranked.clone();
    for s in &r.continuous.stations {
        let st = &r.data.stations.stations[s.station];
        let g = f.segment_group[st.segment];
        let name = st.id.as_str().to_string();
        if let Some(d) = &s.design {
            ranked[g].counters.push(Series {
                name: name.clone(),
                values: d
                    .ranked_k
                    .iter()
                    .take(super::report::RANKS_SHOWN)
                    .copied()
                    .collect(),
            });
        }
        if let Some(sh) = s.distribution.as_ref().and_then(|d| d.shares[0]) {
            profiles[g].counters.push(Series {
                name,
                values: sh.to_vec(),
            });
        }
    }
    ranked.retain(|g| !g.counters.is_empty());
    profiles.retain(|g| !g.counters.is_empty());
    (ranked, profiles)
}

/// The QC calendar: per permanent counter with records in the study year, each day's status
/// (the worse of its directions).
fn qc_calendar(r: &Results) -> Vec<CalendarRow> {
    use chrono::{Datelike, NaiveDate};
    let Some(first) = NaiveDate::from_ymd_opt(r.year, 1, 1) else {
        return Vec::new();
    };
    let ndays = if NaiveDate::from_ymd_opt(r.year, 2, 29).is_some() {
        366
    } else {
        365
    };
    let flagged = r.qc.flagged_days();
    let mut rows = Vec::new();
    for (si, st) in r.data.stations.stations.iter().enumerate() {
        if st.kind != crate::model::StationKind::Continuous {
            continue;
        }
        let Some(days) = r.data.counts.days.get(si) else {
            continue;
        };
        let mut out = vec![DayStatus::Missing; ndays];
        let mut any = false;
        for (date, day) in days.range(first..) {
            if date.year() != r.year {
                break;
            }
            let mut status = DayStatus::Missing;
            for d in crate::model::Direction::ALL {
                if day.dir(d).is_none() {
                    continue;
                }
                let s = if r.qc.is_rejected(si, *date, d) {
                    DayStatus::Rejected
                } else if flagged.contains(&(si, *date, d)) {
                    DayStatus::Flagged
                } else {
                    DayStatus::Accepted
                };
                status = status.max(s);
            }
            any |= status != DayStatus::Missing;
            out[date.ordinal0() as usize] = status;
        }
        if any {
            rows.push(CalendarRow {
                station: st.id.as_str().to_string(),
                days: out,
            });
        }
    }
    rows
}

/// The report's station table: the two-way rows of `station_statistics.csv` and its key
/// columns (stations.csv gives no station names; the id and its segment identify a counter).
fn station_table(t: &Table) -> Table {
    const KEEP: [&str; 12] = [
        "station_id",
        "segment_id",
        "factor_group",
        "sufficiency",
        "days_used",
        "aadt_aashto",
        "aadt_lo95",
        "aadt_hi95",
        "k30",
        "d30",
        "peak_hour_factor",
        "heavy_share",
    ];
    let idx: Vec<usize> = KEEP.iter().filter_map(|n| t.column(n)).collect();
    let mut out = Table::new(
        "station_statistics",
        "Permanent counters: days accepted, AADT with its 95 % interval and design-hour figures",
        idx.iter().map(|&i| t.columns[i].clone()).collect(),
    );
    let dir = t.column("direction");
    for row in &t.rows {
        if dir.is_some_and(|d| !matches!(&row[d], Cell::Text(s) if s == "both")) {
            continue;
        }
        out.push(idx.iter().map(|&i| row[i].clone()).collect());
    }
    out
}

/// `run_manifest.json`: tool version, settings, each input file's checksum and row tally, and
/// the run's alarms (the contract names them in the manifest), so a published figure can be
/// traced. No clock time, so identical inputs give identical bytes.
pub fn manifest(
    data: &StudyData,
    settings: &crate::config::Settings,
    year: i32,
    outputs: &[String],
    alarms: &[String],
) -> Vec<u8> {
    let mut inputs = Vec::new();
    for f in &data.files {
        inputs.push(serde_json::json!({
            "file": f.file,
            "sha256": f.sha256,
            "rows": f.rows,
            "rejected": f.rejected,
        }));
    }
    let doc = serde_json::json!({
        "tool": "roadtally",
        "version": env!("CARGO_PKG_VERSION"),
        "study_year": year,
        "settings": settings,
        "settings_file": data.settings_sha256.as_ref().map(|h| serde_json::json!({
            "file": crate::input::SETTINGS_FILE,
            "sha256": h,
        })),
        "inputs": inputs,
        "outputs": outputs,
        "alarms": alarms,
    });
    let mut out = serde_json::to_vec_pretty(&doc).expect("json");
    out.push(b'\n');
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::design_tables::{DesignTables, LaneDistribution};

    /// The shipped defaults (factors/*.csv) state their sources "from memory": all three are
    /// flagged; a lane table whose rows cite a checked source is not.
    #[test]
    fn defaults_from_memory_are_named_and_checked_tables_are_not() {
        let t = DesignTables::default();
        let lines = memory_defaults(&t);
        assert_eq!(lines.len(), 3, "{lines:?}");
        assert!(lines[0].starts_with("factors/lane_distribution.csv"));
        let mut rows = t.lanes.rows();
        for r in &mut rows {
            r.source = "agency pavement manual, table 4".into();
        }
        let checked = DesignTables {
            lanes: LaneDistribution::from_rows(rows).unwrap(),
            ..DesignTables::default()
        };
        let lines = memory_defaults(&checked);
        assert_eq!(lines.len(), 2);
        assert!(lines.iter().all(|l| !l.contains("lane_distribution")));
    }
}
