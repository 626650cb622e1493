//! The per-segment statistics table.

use super::{col, opt};
use crate::model::StudyData;
use crate::output::table::{Cell, Format, Table};
use crate::segments::{SegmentRow, Sourced};

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
