//! Network totals: vehicle-km travelled by functional class and area, light and heavy.
//!
//! # Method
//! `VKT = Σ_i AADT_i · L_i` (daily; annual = 365 × daily, or 366 in a leap study year).
//! Each segment's standard error is read off its own 95 % interval in log space,
//! `s_i = ln(hi_i / lo_i) / (2 · 1.96)`, so `se_i ≈ AADT_i · L_i · s_i`. Heavy VKT uses
//! `AADT_i · h_i · L_i` with `s² = s_aadt² + s_h²`; light uses `1 − h_i` likewise.
//!
//! **Correlation.** The main interval treats segments as independent,
//! `se = sqrt(Σ se_i²)`, which is right for counted segments but too narrow for estimated ones
//! that share neighbours and a drift. The table therefore also gives the fully correlated bound,
//! `se = Σ se_i`, which is the most an interval can widen. The truth lies between the two.
//!
//! # Units
//! vehicle-km per day, and per year.

use crate::expansion::Z95;
use crate::model::Network;
use crate::segments::SegmentRow;

/// One total with both intervals.
#[derive(Debug, Clone, PartialEq)]
pub struct Total {
    /// Functional class (1..7), or 0 for every class.
    pub functional_class: u8,
    /// `urban`, `rural` or `all`.
    pub area: &'static str,
    /// `all`, `light` or `heavy`.
    pub vehicles: &'static str,
    /// Segments summed.
    pub segments: usize,
    /// Daily VKT.
    pub daily_vkt: f64,
    /// Standard error, segments independent.
    pub se_independent: f64,
    /// Standard error, segments fully correlated.
    pub se_correlated: f64,
}

impl Total {
    /// 95 % interval under independence.
    pub fn interval(&self) -> (f64, f64) {
        (
            (self.daily_vkt - Z95 * self.se_independent).max(0.0),
            self.daily_vkt + Z95 * self.se_independent,
        )
    }

    /// 95 % interval when segments are fully correlated.
    pub fn interval_correlated(&self) -> (f64, f64) {
        (
            (self.daily_vkt - Z95 * self.se_correlated).max(0.0),
            self.daily_vkt + Z95 * self.se_correlated,
        )
    }
}

/// Log-space sd of a value from its 95 % interval.
pub fn log_sd(value: f64, lo: f64, hi: f64) -> f64 {
    if value > 0.0 && lo > 0.0 && hi > lo {
        (hi / lo).ln() / (2.0 * Z95)
    } else {
        0.0
    }
}

/// Per-segment VKT contribution and its standard error for `vehicles`.
fn part(r: &SegmentRow, length_km: f64, vehicles: &str) -> Option<(f64, f64)> {
    let a = &r.aadt;
    if !a.value.is_finite() {
        return None;
    }
    let s_a = log_sd(a.value, a.lo95, a.hi95);
    let (share, s_h) = match vehicles {
        "all" => (1.0, 0.0),
        _ => {
            let h = r.heavy.as_ref()?;
            let s = log_sd(h.value, h.lo95, h.hi95);
            if vehicles == "heavy" {
                (h.value, s)
            } else {
                // Light share 1 - h: its absolute error equals the heavy share's.
                let light = 1.0 - h.value;
                (
                    light,
                    if light > 0.0 {
                        s * h.value / light
                    } else {
                        0.0
                    },
                )
            }
        }
    };
    let v = a.value * share * length_km;
    Some((v, v * (s_a * s_a + s_h * s_h).sqrt()))
}

/// Totals by functional class x area x vehicle group, plus the network rows (class 0, `all`).
pub fn network_totals(network: &Network, rows: &[SegmentRow]) -> Vec<Total> {
    let mut out = Vec::new();
    let areas = ["urban", "rural", "all"];
    for fc in 0..=7u8 {
        for area in areas {
            for vehicles in ["all", "light", "heavy"] {
                let mut t = Total {
                    functional_class: fc,
                    area,
                    vehicles,
                    segments: 0,
                    daily_vkt: 0.0,
                    se_independent: 0.0,
                    se_correlated: 0.0,
                };
                let mut var = 0.0;
                for r in rows {
                    let seg = &network.segments[r.segment];
                    if (fc != 0 && seg.functional_class.code() != fc)
                        || (area != "all" && seg.area.as_str() != area)
                    {
                        continue;
                    }
                    if let Some((v, se)) = part(r, seg.length_km, vehicles) {
                        t.segments += 1;
                        t.daily_vkt += v;
                        var += se * se;
                        t.se_correlated += se;
                    }
                }
                t.se_independent = var.sqrt();
                if t.segments > 0 {
                    out.push(t);
                }
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::segments::{Basis, SegmentRow};
    use crate::spatial::stage::Interval;
    use approx::assert_relative_eq;

    fn row(seg: usize, aadt: f64, lo: f64, hi: f64) -> SegmentRow {
        SegmentRow {
            segment: seg,
            basis: Basis::Estimated,
            aadt: Interval {
                value: aadt,
                lo95: lo,
                hi95: hi,
            },
            aadt_dir: [None, None],
            direction_basis: crate::segments::DirectionBasis::EvenSplit,
            group: String::new(),
            heavy: None,
            single_unit: None,
            combination: None,
            k: None,
            d: None,
            phf: None,
            design_hour_heavy: None,
            count_years: String::new(),
            count_type: String::new(),
            count_hours: 0,
            counts: 0,
        }
    }

    /// Hand computation on three segments (lengths 2, 1 and 4 km):
    /// AADT 1000 [900, 1111.11], 5000 [4000, 6250], 200 [100, 400].
    /// s = ln(hi/lo)/3.92: 0.05376, 0.11385, 0.35365. VKT 2000 + 5000 + 800 = 7800.
    /// se_i = 107.51, 569.25, 282.92; independent sqrt(Σ se²) = 644.71;
    /// correlated Σ se = 959.69. 95 %: 7800 ± 1263.6 (independent), ± 1881.0 (correlated).
    #[test]
    fn three_segment_totals_match_the_hand_computation() {
        let rows = [
            row(0, 1000.0, 900.0, 1000.0 / 0.9),
            row(1, 5000.0, 4000.0, 6250.0),
            row(2, 200.0, 100.0, 400.0),
        ];
        let lengths = [2.0, 1.0, 4.0];
        let mut var = 0.0;
        let mut sum_se = 0.0;
        let mut vkt = 0.0;
        for (r, l) in rows.iter().zip(lengths) {
            let (v, se) = part(r, l, "all").unwrap();
            vkt += v;
            var += se * se;
            sum_se += se;
        }
        assert_relative_eq!(vkt, 7800.0);
        assert_relative_eq!(var.sqrt(), 644.71, epsilon = 0.01);
        assert_relative_eq!(sum_se, 959.69, epsilon = 0.01);
        assert_relative_eq!(Z95 * var.sqrt(), 1263.61, epsilon = 0.01);
        assert_relative_eq!(Z95 * sum_se, 1880.96, epsilon = 0.01);
    }
}
