//! The per-segment statistics table.

use super::opt;
use crate::model::StudyData;
use crate::output::table::{Cell, Format, Table, TableSpec};
use crate::segments::{SegmentRow, Sourced};
use crate::spatial::stage::SpatialOutput;

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

/// One segment's record for the table: its network segment, its row and its estimate note.
struct Rec<'a> {
    seg: &'a crate::model::Segment,
    r: &'a SegmentRow,
    note: &'a str,
    /// Year of the history an estimate rests on.
    history_year: Option<i32>,
}

impl Rec<'_> {
    fn k(&self) -> Option<f64> {
        self.r.k.as_ref().map(|k| k.value)
    }
    fn d(&self) -> Option<f64> {
        self.r.d.as_ref().map(|d| d.value)
    }
    fn dhv(&self) -> Option<f64> {
        self.k().map(|k| k * self.r.aadt.value)
    }
}

/// `segment_statistics.csv`: the contract's columns first, then ours. Each column is declared
/// with its value ([`TableSpec`]), so header and cells cannot drift apart. `estimate_note`
/// names the fallback an uncounted segment's estimate needed (empty when none).
pub fn segment_statistics(data: &StudyData, rows: &[SegmentRow], spatial: &SpatialOutput) -> Table {
    let spec = TableSpec::<Rec>::new("segment_statistics", "Annual statistics per segment")
        .col("segment_id", "", Format::Text, |x| {
            Cell::from(x.seg.id.as_str())
        })
        .col("aadt", "veh/day", Format::Integer, |x| {
            Cell::from(x.r.aadt.value)
        })
        .col("aadt_lo95", "veh/day", Format::Integer, |x| {
            Cell::from(x.r.aadt.lo95)
        })
        .col("aadt_hi95", "veh/day", Format::Integer, |x| {
            Cell::from(x.r.aadt.hi95)
        })
        .col("basis", "", Format::Text, |x| {
            Cell::from(x.r.basis.as_str())
        })
        .col("heavy_share", "share", Format::Share, |x| {
            sourced(&x.r.heavy)[0].clone()
        })
        .col("single_unit_share", "share", Format::Share, |x| {
            sourced(&x.r.single_unit)[0].clone()
        })
        .col("combination_share", "share", Format::Share, |x| {
            sourced(&x.r.combination)[0].clone()
        })
        .col("k_factor", "factor", Format::Decimal(4), |x| opt(x.k()))
        .col("d_factor", "factor", Format::Decimal(3), |x| opt(x.d()))
        .col("dhv", "veh/h", Format::Integer, |x| opt(x.dhv()))
        .col("ddhv", "veh/h", Format::Integer, |x| {
            opt(x.dhv().zip(x.d()).map(|(h, d)| h * d))
        })
        .col("daily_vkt", "veh-km/day", Format::Integer, |x| {
            Cell::from(x.r.aadt.value * x.seg.length_km)
        })
        .col("daily_vkt_lo95", "veh-km/day", Format::Integer, |x| {
            Cell::from(x.r.aadt.lo95 * x.seg.length_km)
        })
        .col("daily_vkt_hi95", "veh-km/day", Format::Integer, |x| {
            Cell::from(x.r.aadt.hi95 * x.seg.length_km)
        })
        .col("aadt_fwd", "veh/day", Format::Integer, |x| {
            opt(x.r.aadt_dir[0])
        })
        .col("aadt_rev", "veh/day", Format::Integer, |x| {
            opt(x.r.aadt_dir[1])
        })
        .col("direction_basis", "", Format::Text, |x| {
            Cell::from(x.r.direction_basis.as_str())
        })
        .col("heavy_aadt", "veh/day", Format::Integer, |x| {
            opt(x.r.heavy.as_ref().map(|h| h.value * x.r.aadt.value))
        })
        .col("heavy_share_lo95", "share", Format::Share, |x| {
            sourced(&x.r.heavy)[1].clone()
        })
        .col("heavy_share_hi95", "share", Format::Share, |x| {
            sourced(&x.r.heavy)[2].clone()
        })
        .col("heavy_source", "", Format::Text, |x| source(&x.r.heavy))
        .col("k_factor_lo95", "factor", Format::Decimal(4), |x| {
            sourced(&x.r.k)[1].clone()
        })
        .col("k_factor_hi95", "factor", Format::Decimal(4), |x| {
            sourced(&x.r.k)[2].clone()
        })
        .col("k_source", "", Format::Text, |x| source(&x.r.k))
        .col("d_source", "", Format::Text, |x| source(&x.r.d))
        .col("factor_group", "", Format::Text, |x| {
            Cell::from(x.r.group.as_str())
        })
        .col("count_years", "", Format::Text, |x| {
            Cell::from(x.r.count_years.as_str())
        })
        .col("count_type", "", Format::Text, |x| {
            Cell::from(x.r.count_type.as_str())
        })
        .col("count_hours", "h", Format::Integer, |x| {
            Cell::from(x.r.count_hours)
        })
        .col("counts_combined", "", Format::Integer, |x| {
            Cell::from(x.r.counts)
        })
        .col("functional_class", "", Format::Integer, |x| {
            Cell::Int(x.seg.functional_class.code() as i64)
        })
        .col("area", "", Format::Text, |x| {
            Cell::from(x.seg.area.as_str())
        })
        .col("route", "", Format::Text, |x| {
            x.seg.route.as_deref().map_or(Cell::Empty, Cell::from)
        })
        .col("lanes", "", Format::Integer, |x| Cell::from(x.seg.lanes))
        .col("length_km", "km", Format::Decimal(3), |x| {
            Cell::from(x.seg.length_km)
        })
        .col("estimate_note", "", Format::Text, |x| Cell::from(x.note))
        .col("history_year", "", Format::Integer, |x| {
            x.history_year
                .map_or(Cell::Empty, |y| Cell::Int(i64::from(y)))
        });
    let recs: Vec<Rec> = rows
        .iter()
        .map(|r| Rec {
            seg: &data.network.segments[r.segment],
            r,
            note: spatial
                .estimates
                .get(r.segment)
                .and_then(|e| e.as_ref())
                .filter(|_| r.basis == crate::segments::Basis::Estimated)
                .map_or("", |e| e.fallback.as_str()),
            history_year: spatial
                .estimates
                .get(r.segment)
                .and_then(|e| e.as_ref())
                .filter(|_| r.basis == crate::segments::Basis::Estimated)
                .and_then(|e| e.history_year),
        })
        .collect();
    spec.build(&recs)
}
