//! The permanent-counter tables: station statistics, hourly distributions and ranked hours.

use super::{col, opt};
use crate::continuous::stage::ContinuousOutput;
use crate::factors::stage::FactorOutput;
use crate::model::StudyData;
use crate::output::table::{Cell, Column, Format, Table};

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
