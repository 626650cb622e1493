//! The tables `run` writes, built from stage outputs.

use super::table::{Cell, Column, Format, Table};
use crate::model::RejectedRow;

/// `rejected_rows.csv`, as the data contract lists its columns.
pub fn rejected_rows(rows: &[RejectedRow]) -> Table {
    let mut t = Table::new(
        "rejected_rows",
        "Input rows that were not used, with the reason",
        vec![
            Column::new("file", "", Format::Text),
            Column::new("line", "", Format::Integer),
            Column::new("column", "", Format::Text),
            Column::new("value", "", Format::Text),
            Column::new("reason", "", Format::Text),
        ],
    );
    for r in rows {
        t.push(vec![
            Cell::from(r.file.as_str()),
            Cell::Int(r.line as i64),
            Cell::from(r.column.as_str()),
            Cell::from(r.value.as_str()),
            Cell::from(r.reason.as_str()),
        ]);
    }
    t
}

use crate::continuous::stage::ContinuousOutput;
use crate::expansion::calibration::Calibration;
use crate::expansion::stage::ExpansionOutput;
use crate::factors::precision::FactorStats;
use crate::factors::stage::FactorOutput;
use crate::model::StudyData;
use crate::qc::QcOutput;
use crate::segments::{SegmentRow, Sourced};
use crate::spatial::stage::{Interval, SpatialOutput};

/// A column; shorthand for [`Column::new`] in the table builders.
pub(crate) fn col(name: &str, unit: &'static str, format: Format) -> Column {
    Column::new(name, unit, format)
}

fn opt(v: Option<f64>) -> Cell {
    Cell::from(v)
}

fn sourced(s: &Option<Sourced>) -> [Cell; 3] {
    match s {
        Some(s) => [Cell::from(s.value), Cell::from(s.lo95), Cell::from(s.hi95)],
        None => [Cell::Empty, Cell::Empty, Cell::Empty],
    }
}

fn source(s: &Option<Sourced>) -> Cell {
    s.as_ref()
        .map_or(Cell::Empty, |s| Cell::from(s.source.as_str()))
}

/// `segment_statistics.csv`: the contract's columns first, then ours.
pub fn segment_statistics(data: &StudyData, rows: &[SegmentRow]) -> Table {
    let mut cols = vec![
        col("segment_id", "", Format::Text),
        col("aadt", "veh/day", Format::Integer),
        col("aadt_lo95", "veh/day", Format::Integer),
        col("aadt_hi95", "veh/day", Format::Integer),
        col("basis", "", Format::Text),
        col("heavy_share", "share", Format::Share),
        col("single_unit_share", "share", Format::Share),
        col("combination_share", "share", Format::Share),
        col("k_factor", "factor", Format::Decimal(4)),
        col("d_factor", "factor", Format::Decimal(3)),
        col("dhv", "veh/h", Format::Integer),
        col("ddhv", "veh/h", Format::Integer),
        col("daily_vkt", "veh-km/day", Format::Integer),
    ];
    cols.extend([
        col("daily_vkt_lo95", "veh-km/day", Format::Integer),
        col("daily_vkt_hi95", "veh-km/day", Format::Integer),
        col("aadt_fwd", "veh/day", Format::Integer),
        col("aadt_rev", "veh/day", Format::Integer),
        col("heavy_aadt", "veh/day", Format::Integer),
        col("heavy_share_lo95", "share", Format::Share),
        col("heavy_share_hi95", "share", Format::Share),
        col("heavy_source", "", Format::Text),
        col("k_factor_lo95", "factor", Format::Decimal(4)),
        col("k_factor_hi95", "factor", Format::Decimal(4)),
        col("k_source", "", Format::Text),
        col("d_source", "", Format::Text),
        col("factor_group", "", Format::Text),
        col("count_years", "", Format::Text),
        col("count_type", "", Format::Text),
        col("count_hours", "h", Format::Integer),
        col("counts_combined", "", Format::Integer),
        col("functional_class", "", Format::Integer),
        col("area", "", Format::Text),
        col("lanes", "", Format::Integer),
        col("length_km", "km", Format::Decimal(3)),
    ]);
    let mut t = Table::new("segment_statistics", "Annual statistics per segment", cols);
    for r in rows {
        let seg = &data.network.segments[r.segment];
        let a = r.aadt;
        let k = r.k.as_ref().map(|k| k.value);
        let d = r.d.as_ref().map(|d| d.value);
        let dhv = k.map(|k| k * a.value);
        let ddhv = dhv.zip(d).map(|(h, d)| h * d);
        let [hs, hlo, hhi] = sourced(&r.heavy);
        let [_, klo, khi] = sourced(&r.k);
        let mut row = vec![
            Cell::from(seg.id.as_str()),
            Cell::from(a.value),
            Cell::from(a.lo95),
            Cell::from(a.hi95),
            Cell::from(r.basis.as_str()),
            hs,
            sourced(&r.single_unit)[0].clone(),
            sourced(&r.combination)[0].clone(),
            opt(k),
            opt(d),
            opt(dhv),
            opt(ddhv),
            Cell::from(a.value * seg.length_km),
        ];
        row.extend([
            Cell::from(a.lo95 * seg.length_km),
            Cell::from(a.hi95 * seg.length_km),
            opt(r.aadt_dir[0]),
            opt(r.aadt_dir[1]),
            opt(r.heavy.as_ref().map(|h| h.value * a.value)),
            hlo,
            hhi,
            source(&r.heavy),
            klo,
            khi,
            source(&r.k),
            source(&r.d),
            Cell::from(r.group.as_str()),
            Cell::from(r.count_years.as_str()),
            Cell::from(r.count_type.as_str()),
            Cell::from(r.count_hours),
            Cell::from(r.counts),
            Cell::Int(seg.functional_class.code() as i64),
            Cell::from(seg.area.as_str()),
            Cell::from(seg.lanes),
            Cell::from(seg.length_km),
        ]);
        t.push(row);
    }
    t
}

/// `station_statistics.csv`: one row per permanent counter and direction (`both` = two-way).
pub fn station_statistics(
    data: &StudyData,
    cont: &ContinuousOutput,
    factors: &FactorOutput,
) -> Table {
    let mut t = Table::new(
        "station_statistics",
        "Permanent-counter statistics of the study year",
        vec![
            col("station_id", "", Format::Text),
            col("segment_id", "", Format::Text),
            col("direction", "", Format::Text),
            col("aadt_aashto", "veh/day", Format::Integer),
            col("aadt_simple", "veh/day", Format::Integer),
            col("aadt_lo95", "veh/day", Format::Integer),
            col("aadt_hi95", "veh/day", Format::Integer),
            col("sufficiency", "", Format::Text),
            col("usable_for_factors", "", Format::Text),
            col("days_used", "days", Format::Integer),
            col("factor_group", "", Format::Text),
            col("v30", "veh/h", Format::Integer),
            col("k30", "factor", Format::Decimal(4)),
            col("d30", "factor", Format::Decimal(3)),
            col("dhv", "veh/h", Format::Integer),
            col("ddhv", "veh/h", Format::Integer),
            col("v100", "veh/h", Format::Integer),
            col("k100", "factor", Format::Decimal(4)),
            col("design_hour_heavy_share", "share", Format::Share),
            col("peak_hour_factor", "factor", Format::Decimal(3)),
            col("heavy_share", "share", Format::Share),
            col("single_unit_share", "share", Format::Share),
            col("combination_share", "share", Format::Share),
            col(
                "axle_correction_factor",
                "veh/axle pair",
                Format::Decimal(4),
            ),
        ]
        .into_iter()
        .chain((1..=12).map(|m| Column::new(&format!("madt_m{m:02}"), "veh/day", Format::Integer)))
        .chain((1..=12).map(|m| {
            Column::new(
                &format!("monthly_factor_m{m:02}"),
                "factor",
                Format::Decimal(3),
            )
        }))
        .chain(
            ["mon", "tue", "wed", "thu", "fri", "sat", "sun"]
                .iter()
                .map(|d| Column::new(&format!("weekday_factor_{d}"), "factor", Format::Decimal(3))),
        )
        .collect(),
    );
    let group_of = |st: usize| {
        let seg = data.stations.stations[st].segment;
        factors.groups[factors.segment_group[seg]].name.clone()
    };
    for s in &cont.stations {
        let st = &data.stations.stations[s.station];
        let f = s.aadt.factors();
        for (dir, res) in [
            ("both", Some(&s.aadt)),
            ("fwd", s.by_direction[0].as_ref()),
            ("rev", s.by_direction[1].as_ref()),
        ] {
            let Some(res) = res else { continue };
            let two_way = dir == "both";
            let value = res.aashto.unwrap_or(res.simple);
            let h = crate::expansion::Z95 * s.aadt_log_sd;
            let d = s.design.as_ref().filter(|_| two_way);
            let c = s.classes.as_ref().filter(|_| two_way);
            let mut row = vec![
                Cell::from(st.id.as_str()),
                Cell::from(st.segment_id.as_str()),
                Cell::from(dir),
                opt(res.aashto),
                Cell::from(res.simple),
                Cell::from(value * (-h).exp()),
                Cell::from(value * h.exp()),
                Cell::from(res.sufficiency.label()),
                Cell::from(if res.sufficiency.usable_for_factors() {
                    "yes"
                } else {
                    "no"
                }),
                Cell::from(res.days_used),
                Cell::from(group_of(s.station)),
                opt(d.map(|d| d.v30)),
                opt(d.map(|d| d.k30)),
                opt(d.filter(|_| s.d_measured).map(|d| d.d)),
                opt(d.map(|d| d.dhv)),
                opt(d.filter(|_| s.d_measured).map(|d| d.ddhv)),
                opt(d.and_then(|d| d.v100)),
                opt(d.and_then(|d| d.k100)),
                opt(d.and_then(|d| d.heavy_share)),
                opt(s.phf.filter(|_| two_way)),
                opt(c.and_then(|c| c.heavy_share)),
                opt(c.and_then(|c| c.single_unit_share)),
                opt(c.and_then(|c| c.combination_share)),
                opt(if two_way {
                    crate::factors::stage::station_acf(s)
                } else {
                    None
                }),
            ];
            row.extend(res.madt.iter().map(|m| opt(*m)));
            let ff = f.as_ref().filter(|_| two_way);
            row.extend((0..12).map(|m| opt(ff.map(|f| f.monthly[m]))));
            row.extend((0..7).map(|d| opt(ff.map(|f| f.day_of_week[d]))));
            t.push(row);
        }
    }
    t
}

fn stats_row(group: &str, factor: &str, st: &FactorStats, target: f64) -> Vec<Cell> {
    vec![
        Cell::from(group),
        Cell::from(factor),
        Cell::from(st.n),
        Cell::from(st.mean),
        opt((st.n >= 2).then_some(st.sd)),
        opt((st.n >= 2).then_some(st.cv)),
        opt(st.precision95),
        Cell::from(if st.meets(target) { "yes" } else { "no" }),
    ]
}

/// `factors.csv`: one row per group and factor, with its statistics and precision.
pub fn factors_table(factors: &FactorOutput, target: f64) -> Table {
    let mut t = Table::new(
        "factors",
        "Factor statistics per group (TMG convention: factors multiply a count)",
        vec![
            col("factor_group", "", Format::Text),
            col("factor", "", Format::Text),
            col("stations", "", Format::Integer),
            col("mean", "factor", Format::Decimal(3)),
            col("sd", "factor", Format::Decimal(3)),
            col("cv", "share", Format::Share),
            col("precision95", "share", Format::Share),
            col("meets_target", "", Format::Text),
        ],
    );
    let days = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"];
    for g in &factors.groups {
        if let Some(s) = &g.summary {
            for (m, st) in s.monthly.iter().enumerate() {
                t.push(stats_row(
                    &g.name,
                    &format!("monthly_m{:02}", m + 1),
                    st,
                    target,
                ));
            }
            for (d, st) in s.day_of_week.iter().enumerate() {
                t.push(stats_row(
                    &g.name,
                    &format!("weekday_{}", days[d]),
                    st,
                    target,
                ));
            }
        }
        for (name, st) in [
            ("k30", &g.k30),
            ("d30", &g.d),
            ("peak_hour_factor", &g.phf),
            ("heavy_share", &g.heavy_share),
            ("single_unit_share", &g.single_unit_share),
            ("combination_share", &g.combination_share),
        ] {
            if let Some(st) = st {
                t.push(stats_row(&g.name, name, st, target));
            }
        }
        if let Some((acf, cv)) = g.acf {
            t.push(vec![
                Cell::from(g.name.as_str()),
                Cell::from("axle_correction_factor"),
                Cell::Empty,
                Cell::from(acf),
                Cell::from(acf * cv),
                Cell::from(cv),
                Cell::Empty,
                Cell::Empty,
            ]);
        }
        t.push(vec![
            Cell::from(g.name.as_str()),
            Cell::from("annual_growth_rate"),
            Cell::from(g.growth.n_units_informative),
            Cell::from(g.growth.rate),
            Cell::from(g.growth.rate_se),
            Cell::Empty,
            Cell::Empty,
            Cell::from(format!("{:?}", g.growth.source).to_lowercase()),
        ]);
    }
    t
}

/// `factor_groups.csv`: the groups, their stations, where their factors come from, and the
/// precision reached.
pub fn factor_groups(data: &StudyData, factors: &FactorOutput) -> Table {
    let mut t = Table::new(
        "factor_groups",
        "Factor groups: member counters, factor source and precision reached",
        vec![
            col("factor_group", "", Format::Text),
            col("segments", "", Format::Integer),
            col("counters", "", Format::Integer),
            col("counters_used", "", Format::Integer),
            col("factor_source", "", Format::Text),
            col("member_station_ids", "", Format::Text),
            col("worst_precision95", "share", Format::Share),
            col("meets_target", "", Format::Text),
            col("counters_needed", "", Format::Integer),
            col("growth_rate", "share/yr", Format::Share),
            col("growth_rate_lo95", "share/yr", Format::Share),
            col("growth_rate_hi95", "share/yr", Format::Share),
            col("growth_source", "", Format::Text),
        ],
    );
    for (gi, g) in factors.groups.iter().enumerate() {
        let segs = factors.segment_group.iter().filter(|&&x| x == gi).count();
        if segs == 0 && g.members.is_empty() {
            continue;
        }
        let ids: Vec<&str> = g
            .members
            .iter()
            .map(|&s| data.stations.stations[s].id.as_str())
            .collect();
        let (worst, meets, needed) = match &g.summary {
            Some(s) => (
                opt(s.worst_precision),
                Cell::from(if s.meets_target { "yes" } else { "no" }),
                s.stations_needed(s.target, None)
                    .map_or(Cell::Empty, Cell::from),
            ),
            None => (Cell::Empty, Cell::from("no"), Cell::Empty),
        };
        t.push(vec![
            Cell::from(g.name.as_str()),
            Cell::from(segs),
            Cell::from(g.members.len()),
            Cell::from(g.factor_stations.len()),
            Cell::from(g.source.as_str()),
            Cell::from(ids.join(" ")),
            worst,
            meets,
            needed,
            Cell::from(g.growth.rate),
            Cell::from(g.growth.rate_lo95),
            Cell::from(g.growth.rate_hi95),
            Cell::from(format!("{:?}", g.growth.source).to_lowercase()),
        ]);
    }
    t
}

/// `factors/group_assignment.csv`: the editable table that sends segments to groups.
pub fn group_assignment(factors: &FactorOutput) -> Table {
    let mut t = Table::new(
        "group_assignment",
        "Assignment of segments without a permanent counter to factor groups (edit and copy to <study>/factors/ to override)",
        vec![
            col("route", "", Format::Text),
            col("functional_class", "", Format::Integer),
            col("area", "", Format::Text),
            col("factor_group", "", Format::Text),
        ],
    );
    for r in &factors.assignment {
        t.push(vec![
            r.route.as_deref().map_or(Cell::Empty, Cell::from),
            r.functional_class
                .map_or(Cell::Empty, |c| Cell::Int(c as i64)),
            r.area.map_or(Cell::Empty, |a| Cell::from(a.as_str())),
            Cell::from(r.group.as_str()),
        ]);
    }
    t
}

/// `short_count_calibration.csv`: the calibration experiment's table.
pub fn calibration_table(cal: &Calibration) -> Table {
    let mut t = Table::new(
        "short_count_calibration",
        "Simulated short counts drawn from permanent counters: errors and interval coverage",
        vec![
            col("hours", "h", Format::Integer),
            col("class_group", "", Format::Text),
            col("trials", "", Format::Integer),
            col("median_ape_pct", "%", Format::Decimal(2)),
            col("p90_ape_pct", "%", Format::Decimal(2)),
            col("coverage95", "share", Format::Share),
            col("interval_scale", "factor", Format::Decimal(3)),
            col("k_median_ape_pct", "%", Format::Decimal(2)),
            col("k_group_median_ape_pct", "%", Format::Decimal(2)),
        ],
    );
    for r in &cal.rows {
        t.push(vec![
            Cell::from(r.hours),
            Cell::from(r.class_group.as_str()),
            Cell::from(r.trials),
            Cell::from(r.median_ape),
            Cell::from(r.p90_ape),
            Cell::from(r.coverage),
            opt(cal.scales.get(&r.hours).copied()),
            opt(r.k_median_ape),
            opt(r.k_group_median_ape),
        ]);
    }
    t
}

/// `short_counts.csv`: every expanded short count.
pub fn short_counts(data: &StudyData, exp: &ExpansionOutput) -> Table {
    let mut t = Table::new(
        "short_counts",
        "Short counts expanded to AADT of the study year",
        vec![
            col("station_id", "", Format::Text),
            col("segment_id", "", Format::Text),
            col("count_year", "", Format::Integer),
            col("first_date", "", Format::Text),
            col("last_date", "", Format::Text),
            col("hours", "h", Format::Integer),
            col("periods_24h", "", Format::Integer),
            col("measure", "", Format::Text),
            col("classified", "", Format::Text),
            col("aadt", "veh/day", Format::Integer),
            col("aadt_lo95", "veh/day", Format::Integer),
            col("aadt_hi95", "veh/day", Format::Integer),
            col("heavy_share", "share", Format::Share),
            col("status", "", Format::Text),
        ],
    );
    for c in &exp.counts {
        let (lo, hi) = c.expanded.interval95(1.0);
        t.push(vec![
            Cell::from(data.stations.stations[c.station].id.as_str()),
            Cell::from(data.network.segments[c.segment].id.as_str()),
            Cell::from(c.year),
            Cell::from(c.first.to_string()),
            Cell::from(c.last.to_string()),
            Cell::from(c.hours),
            Cell::from(c.expanded.days),
            Cell::from(c.measure),
            Cell::from(if c.classified { "yes" } else { "no" }),
            Cell::from(c.expanded.aadt),
            Cell::from(lo),
            Cell::from(hi),
            opt(c.heavy_share),
            Cell::from("expanded"),
        ]);
    }
    for (s, y, why) in &exp.unexpanded {
        let st = &data.stations.stations[*s];
        let mut row = vec![
            Cell::from(st.id.as_str()),
            Cell::from(st.segment_id.as_str()),
            Cell::from(*y),
        ];
        row.extend(std::iter::repeat_n(Cell::Empty, 10));
        row.push(Cell::from(format!("not expanded: {why}")));
        t.push(row);
    }
    t
}

fn ape(est: f64, obs: f64) -> f64 {
    100.0 * (est - obs).abs() / obs
}

/// `cross_validation.csv`: leave-one-out errors and coverage per estimator and class group.
pub fn cross_validation(data: &StudyData, sp: &SpatialOutput) -> Table {
    let mut t = Table::new(
        "cross_validation",
        "Leave-one-out validation over counted segments",
        vec![
            col("estimator", "", Format::Text),
            col("class_group", "", Format::Text),
            col("segments", "", Format::Integer),
            col("median_ape_pct", "%", Format::Decimal(2)),
            col("p90_ape_pct", "%", Format::Decimal(2)),
            col("coverage95", "share", Format::Share),
        ],
    );
    type Pick = fn(&crate::spatial::stage::CvPoint) -> Interval;
    let estimators: [(&str, Pick); 3] = [
        ("kriging_external_drift", |p| p.kriged),
        ("drift_regression", |p| p.regression),
        ("class_area_mean", |p| p.class_mean),
    ];
    let mut groups: Vec<&str> = sp
        .cv
        .iter()
        .map(|p| {
            data.network.segments[p.segment]
                .functional_class
                .broad_group()
        })
        .collect();
    groups.sort();
    groups.dedup();
    groups.push("all");
    for (name, f) in estimators {
        for g in &groups {
            let pts: Vec<_> = sp
                .cv
                .iter()
                .filter(|p| {
                    *g == "all"
                        || data.network.segments[p.segment]
                            .functional_class
                            .broad_group()
                            == *g
                })
                .collect();
            if pts.is_empty() {
                continue;
            }
            let mut apes: Vec<f64> = pts.iter().map(|p| ape(f(p).value, p.observed)).collect();
            let cov =
                pts.iter().filter(|p| f(p).covers(p.observed)).count() as f64 / pts.len() as f64;
            t.push(vec![
                Cell::from(name),
                Cell::from(*g),
                Cell::from(pts.len()),
                Cell::from(crate::expansion::calibration::quantile(&mut apes, 0.5)),
                Cell::from(crate::expansion::calibration::quantile(&mut apes, 0.9)),
                Cell::from(cov),
            ]);
        }
    }
    t
}

/// `qc_log.csv`, as the data contract lists its columns.
pub fn qc_log(data: &StudyData, qc: &QcOutput) -> Table {
    let mut t = Table::new(
        "qc_log",
        "Station-days that a quality rule rejected or flagged",
        vec![
            col("station_id", "", Format::Text),
            col("direction", "", Format::Text),
            col("date", "", Format::Text),
            col("rule", "", Format::Text),
            col("action", "", Format::Text),
            col("detail", "", Format::Text),
        ],
    );
    for f in &qc.findings {
        t.push(vec![
            Cell::from(data.stations.stations[f.station].id.as_str()),
            Cell::from(f.direction.as_str()),
            Cell::from(f.date.to_string()),
            Cell::from(f.rule.as_str()),
            Cell::from(f.action.as_str()),
            Cell::from(f.detail.as_str()),
        ]);
    }
    t
}

/// `network_findings.csv`: what the network checks found.
pub fn network_findings(qc: &QcOutput) -> Table {
    let mut t = Table::new(
        "network_findings",
        "Network checks: components, dead ends, lengths",
        vec![
            col("check", "", Format::Text),
            col("segment_id", "", Format::Text),
            col("node_id", "", Format::Text),
            col("detail", "", Format::Text),
        ],
    );
    for f in &qc.network {
        t.push(vec![
            Cell::from(f.check),
            f.segment_id
                .as_ref()
                .map_or(Cell::Empty, |s| Cell::from(s.as_str())),
            f.node_id
                .as_ref()
                .map_or(Cell::Empty, |s| Cell::from(s.as_str())),
            Cell::from(f.detail.as_str()),
        ]);
    }
    t
}

/// The spatial model: regression coefficients and covariance parameters.
pub fn spatial_model(sp: &SpatialOutput) -> Table {
    let mut t = Table::new(
        "spatial_model",
        "Drift regression on ln AADT and the fitted covariance model",
        vec![
            col("term", "", Format::Text),
            col("value", "", Format::Decimal(6)),
            col("note", "", Format::Text),
        ],
    );
    for (n, v) in &sp.coefficients {
        t.push(vec![
            Cell::from(format!("beta_{n}")),
            Cell::from(*v),
            Cell::Empty,
        ]);
    }
    t.push(vec![
        Cell::from("residual_variance"),
        Cell::from(sp.residual_var),
        Cell::from("ln AADT squared"),
    ]);
    if let Some(m) = &sp.model {
        t.push(vec![
            Cell::from("partial_sill"),
            Cell::from(m.partial_sill),
            Cell::from("ln AADT squared"),
        ]);
        t.push(vec![
            Cell::from("practical_range_km"),
            Cell::from(m.range_km),
            Cell::from("km"),
        ]);
        t.push(vec![
            Cell::from("nugget"),
            Cell::from(m.nugget),
            Cell::from("micro-scale variance"),
        ]);
    }
    t.push(vec![
        Cell::from("model"),
        Cell::Empty,
        Cell::from(sp.model_note.as_str()),
    ]);
    t
}

/// `toll_reconciliation.csv`: one row per toll.csv row (the contract's columns first).
pub fn toll_reconciliation(
    data: &StudyData,
    results: &[crate::toll::stage::TollResult],
    rates: &crate::toll::reconcile::TollRates,
) -> Table {
    let mut t = Table::new(
        "toll_reconciliation",
        "Billed passages against the passages the statistics imply",
        vec![
            col("segment_id", "", Format::Text),
            col("from_date", "", Format::Text),
            col("to_date", "", Format::Text),
            col("vehicle_group", "", Format::Text),
            col("billed_vehicles", "veh", Format::Integer),
            col("estimated_vehicles", "veh", Format::Integer),
            col("estimated_lo95", "veh", Format::Integer),
            col("estimated_hi95", "veh", Format::Integer),
            col("verdict", "", Format::Text),
            col("difference", "veh", Format::Integer),
            col("difference_pct", "%", Format::Decimal(2)),
            col("measured_days", "days", Format::Integer),
            col("factored_days", "days", Format::Integer),
            col("billed_payment", "currency", Format::Decimal(2)),
            col("estimated_payment", "currency", Format::Decimal(2)),
            col("payment_difference", "currency", Format::Decimal(2)),
            col("note", "", Format::Text),
        ],
    );
    for r in results {
        let rec = &r.record;
        let seg = &data.network.segments[rec.segment];
        let mut row = vec![
            Cell::from(seg.id.as_str()),
            Cell::from(rec.from_date.to_string()),
            Cell::from(rec.to_date.to_string()),
            Cell::from(rec.group.as_str()),
            Cell::from(rec.billed_vehicles),
        ];
        match &r.result {
            Ok(x) => {
                let pay = crate::toll::reconcile::row_payment(x, seg.length_km, rates);
                row.extend([
                    Cell::from(x.estimated_vehicles),
                    Cell::from(x.estimated_lo95),
                    Cell::from(x.estimated_hi95),
                    Cell::from(x.verdict.as_str()),
                    Cell::from(x.difference),
                    opt(x.difference_pct),
                    Cell::from(x.measured_days),
                    Cell::from(x.factored_days),
                    opt(pay.as_ref().map(|p| p.payment.billed_payment)),
                    opt(pay.as_ref().map(|p| p.payment.estimated_payment)),
                    opt(pay.as_ref().map(|p| p.payment.difference)),
                    Cell::Empty,
                ]);
            }
            Err(why) => {
                row.extend(std::iter::repeat_n(Cell::Empty, 11));
                row.push(Cell::from(format!("not estimated: {why}")));
            }
        }
        t.push(row);
    }
    t
}

/// Per-month or per-segment toll summaries.
pub fn toll_summary(
    name: &str,
    title: &str,
    keys: &[(String, String)],
    totals: &[crate::toll::reconcile::TollTotals],
) -> Table {
    let mut t = Table::new(
        name,
        title,
        vec![
            col("key", "", Format::Text),
            col("vehicle_group", "", Format::Text),
            col("rows", "", Format::Integer),
            col("billed_vehicles", "veh", Format::Integer),
            col("estimated_vehicles", "veh", Format::Integer),
            col("difference_pct", "%", Format::Decimal(2)),
            col("consistent", "", Format::Integer),
            col("over_billed", "", Format::Integer),
            col("under_billed", "", Format::Integer),
        ],
    );
    for ((k, g), x) in keys.iter().zip(totals) {
        t.push(vec![
            Cell::from(k.as_str()),
            Cell::from(g.as_str()),
            Cell::from(x.rows),
            Cell::from(x.billed_vehicles),
            Cell::from(x.estimated_vehicles),
            opt(x.difference_pct),
            Cell::from(x.consistent),
            Cell::from(x.over_billed),
            Cell::from(x.under_billed),
        ]);
    }
    t
}

/// `hourly_distribution.csv`: each counter's share of the day per clock hour, by day type.
pub fn hourly_distribution(data: &StudyData, cont: &ContinuousOutput) -> Table {
    let mut cols = vec![
        col("station_id", "", Format::Text),
        col("day_type", "", Format::Text),
        col("days", "days", Format::Integer),
    ];
    cols.extend((0..24).map(|h| Column::new(&format!("h{h:02}"), "share", Format::Share)));
    let mut t = Table::new(
        "hourly_distribution",
        "Share of daily volume per clock hour, by day type",
        cols,
    );
    for s in &cont.stations {
        let Some(d) = &s.distribution else { continue };
        for (k, name) in ["weekday", "saturday", "sunday"].iter().enumerate() {
            let Some(sh) = &d.shares[k] else { continue };
            let mut row = vec![
                Cell::from(data.stations.stations[s.station].id.as_str()),
                Cell::from(*name),
                Cell::from(d.days[k]),
            ];
            row.extend(sh.iter().map(|v| Cell::from(*v)));
            t.push(row);
        }
    }
    t
}

/// `ranked_hours.csv`: each counter's highest hours of the year as K-values (the ranked-hour
/// curve), for agencies that design for another hour than the 30th.
pub fn ranked_hours(data: &StudyData, cont: &ContinuousOutput) -> Table {
    let mut t = Table::new(
        "ranked_hours",
        "Ranked two-way hours of the year as K-values",
        vec![
            col("station_id", "", Format::Text),
            col("rank", "", Format::Integer),
            col("volume", "veh/h", Format::Integer),
            col("k_value", "factor", Format::Decimal(4)),
        ],
    );
    for s in &cont.stations {
        let Some(d) = &s.design else { continue };
        for (i, k) in d.ranked_k.iter().enumerate() {
            t.push(vec![
                Cell::from(data.stations.stations[s.station].id.as_str()),
                Cell::from(i + 1),
                Cell::from(k * d.aadt),
                Cell::from(*k),
            ]);
        }
    }
    t
}
