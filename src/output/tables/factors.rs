//! The factor tables: factor statistics, factor groups and the group assignment.

use super::{col, opt};
use crate::factors::precision::FactorStats;
use crate::factors::stage::FactorOutput;
use crate::model::StudyData;
use crate::output::table::{Cell, Format, Table};

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
