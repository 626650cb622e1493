//! Pavement-design traffic per segment: heavy AADT by group, directional and lane
//! distribution, annual and cumulative design-lane ESALs, with 95 % intervals.
//!
//! # Method
//! - Heavy AADT `= AADT · T` (`T` = share of classes 4–13); single-unit (4–7) and
//!   combination (8–13) AADT split it by the [`HeavyMix`].
//! - Truck factor `TF` (ESALs per heavy vehicle) = the heavy-mix-weighted mean of the
//!   per-class (or per-group) factors of a [`LoadEquivalency`] table (tests/fixtures/REFERENCES.md §5.3).
//! - `D_D`: directional distribution of the heavy ESALs; given, or 0.5 on a two-way and
//!   1.0 on a one-way segment (AASHTO 1993 Part II §2.1.3 "usually 0.50", from memory).
//! - `D_L` from the [`LaneDistribution`] table with lanes per direction = `lanes_total / 2`
//!   rounded down (at least 1) on a two-way segment, `lanes_total` on a one-way one. With an
//!   odd total this takes the direction with fewer lanes, whose design lane carries the
//!   larger share (the conservative reading).
//! - First-year design-lane ESALs `w18_1 = 365 · AADT · T · TF · D_D · D_L`; cumulative over
//!   `n` design years `w18 = w18_1 · GF`, `GF = ((1+g)^n − 1)/g` (`n` when `g = 0`)
//!   (AASHTO 1993 App. D; Asphalt Institute MS-1; Huang 2004 ch. 6; from memory,
//!   tests/fixtures/REFERENCES.md §5.4). `AADT` is the base-year (study-year) AADT; year 1 of the design
//!   period carries it unchanged.
//! - **Intervals** (stated assumption): the errors of AADT, of the heavy share and of the
//!   growth rate come from different data (counts/expansion/kriging, classified counts,
//!   history fits), so they are treated as **independent and log-normal**, and the
//!   log-space half-widths of a product are combined in quadrature, separately for each
//!   side: `ln(x/x_lo) = √Σ ln(x_i/x_i,lo)²` and likewise for the upper side. For
//!   independent log-normal factors this is exactly the 95 % interval of the product
//!   (adding the widths linearly would be the interval of "everything wrong at once", far
//!   wider than 95 %). The growth factor's bounds are `GF(g_lo)`, `GF(g_hi)` (GF rises with
//!   `g`). `TF`, `D_D` and `D_L` are design choices from tables and carry no interval here;
//!   their uncertainty is the designer's (the lane range is kept in the table).
//!
//! # Units
//! AADT vehicles/day; shares fractions; growth rate fraction per year; design period
//! years; ESALs (18-kip equivalent single-axle loads) per year or over the period.
//!
//! # References
//! - AASHTO, *Guide for Design of Pavement Structures*, 1993, Part II §2.1.3 and App. D.
//! - Asphalt Institute MS-1 growth-factor table; Y. H. Huang, *Pavement Analysis and
//!   Design*, 2nd ed., 2004, ch. 6 (from memory).
//! - `tests/fixtures/REFERENCES.md` §4 (class groups SU 4–7, CU 8–13), §5.1, §5.3, §5.4.

use super::{check_range, DesignError};
use crate::model::design_tables::{LaneDistribution, LoadEquivalency};

/// Days per year used for annual ESALs.
pub const DAYS_PER_YEAR: f64 = 365.0;

/// Compound traffic growth factor over `n_years`: `((1+g)^n − 1)/g`, `n` when `g = 0`.
///
/// Source: AASHTO 1993 App. D / AI MS-1 / Huang 2004 (formula from memory; tests/fixtures/REFERENCES.md §5.4).
///
/// ```
/// use roadtally::design::growth_factor;
/// assert!((growth_factor(0.04, 20) - 29.7781).abs() < 1e-4);
/// assert_eq!(growth_factor(0.0, 20), 20.0);
/// ```
pub fn growth_factor(g: f64, n_years: u32) -> f64 {
    let n = f64::from(n_years);
    if g.abs() < 1e-12 {
        n
    } else {
        // ((1+g)^n − 1)/g computed through ln_1p / exp_m1, exact near g = 0.
        (n * g.ln_1p()).exp_m1() / g
    }
}

/// Pavement type, selecting the truck-factor column.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PavementType {
    /// Flexible (asphalt) pavement.
    Flexible,
    /// Rigid (concrete) pavement.
    Rigid,
}

/// How the heavy vehicles (classes 4–13) divide among classes.
#[derive(Debug, Clone, PartialEq)]
pub enum HeavyMix {
    /// Relative frequency of each FHWA class 4..=13 among heavy vehicles (index 0 = class
    /// 4); normalised to sum 1, so shares of AADT may be passed as they are.
    PerClass([f64; 10]),
    /// Only the HPMS groups are known: the fraction of heavy vehicles that are single-unit
    /// (classes 4–7); the rest are combination (8–13).
    Groups {
        /// Single-unit fraction of the heavy vehicles, 0..=1.
        single_unit_fraction: f64,
    },
}

impl HeavyMix {
    /// The group mix from the single-unit and combination shares of AADT (the
    /// `single_unit_share` and `combination_share` of `segment_statistics.csv`).
    pub fn from_aadt_shares(single_unit_share: f64, combination_share: f64) -> Option<HeavyMix> {
        let total = single_unit_share + combination_share;
        (single_unit_share >= 0.0 && combination_share >= 0.0 && total > 0.0 && total.is_finite())
            .then(|| HeavyMix::Groups {
                single_unit_fraction: single_unit_share / total,
            })
    }

    /// Single-unit fraction of the heavy vehicles.
    fn single_unit_fraction(&self) -> Result<f64, DesignError> {
        match self {
            HeavyMix::Groups {
                single_unit_fraction,
            } => check_range(
                "single_unit_fraction",
                *single_unit_fraction,
                0.0,
                1.0,
                "a fraction in [0, 1]",
            ),
            HeavyMix::PerClass(f) => {
                let total = per_class_total(f)?;
                Ok(f[..4].iter().sum::<f64>() / total)
            }
        }
    }

    /// ESALs per heavy vehicle under this mix.
    fn truck_factor(&self, t: &LoadEquivalency, rigid: bool) -> Result<f64, DesignError> {
        match self {
            HeavyMix::Groups { .. } => {
                let s = self.single_unit_fraction()?;
                Ok(s * t.single_unit_factor(rigid) + (1.0 - s) * t.combination_factor(rigid))
            }
            HeavyMix::PerClass(f) => {
                let total = per_class_total(f)?;
                let esal: f64 = f
                    .iter()
                    .enumerate()
                    .map(|(i, w)| w * t.class_factor(i + 4, rigid).expect("classes 4..=13"))
                    .sum();
                Ok(esal / total)
            }
        }
    }
}

fn per_class_total(f: &[f64; 10]) -> Result<f64, DesignError> {
    for &w in f {
        check_range("class share", w, 0.0, f64::MAX, "a finite share >= 0")?;
    }
    let total: f64 = f.iter().sum();
    check_range(
        "sum of heavy class shares",
        total,
        f64::MIN_POSITIVE,
        f64::MAX,
        "> 0",
    )
}

/// The traffic of one segment that pavement design needs.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentDesignInput {
    /// Base-year AADT, vehicles/day, both directions.
    pub aadt: f64,
    /// Lower end of its 95 % interval.
    pub aadt_lo95: f64,
    /// Upper end of its 95 % interval.
    pub aadt_hi95: f64,
    /// Heavy (classes 4–13) share of AADT, fraction.
    pub heavy_share: f64,
    /// Lower end of its 95 % interval.
    pub heavy_share_lo95: f64,
    /// Upper end of its 95 % interval.
    pub heavy_share_hi95: f64,
    /// How the heavy vehicles divide among classes or groups.
    pub heavy_mix: HeavyMix,
    /// Through lanes, both directions together.
    pub lanes_total: u32,
    /// One-way segment.
    pub oneway: bool,
    /// Directional distribution of heavy ESALs; `None` = 0.5 two-way, 1.0 one-way.
    pub d_factor: Option<f64>,
    /// Annual growth rate of heavy traffic, fraction per year (from the growth stage).
    pub growth_rate: f64,
    /// Lower end of its 95 % interval.
    pub growth_rate_lo95: f64,
    /// Upper end of its 95 % interval.
    pub growth_rate_hi95: f64,
    /// Design period, years (>= 1).
    pub design_years: u32,
    /// Pavement type (truck-factor column).
    pub pavement: PavementType,
}

/// Pavement-design traffic of one segment.
#[derive(Debug, Clone, PartialEq)]
pub struct PavementInputs {
    /// Heavy AADT (classes 4–13), vehicles/day.
    pub heavy_aadt: f64,
    /// Lower end of its 95 % interval.
    pub heavy_aadt_lo95: f64,
    /// Upper end of its 95 % interval.
    pub heavy_aadt_hi95: f64,
    /// Single-unit AADT (classes 4–7), vehicles/day.
    pub su_aadt: f64,
    /// Combination AADT (classes 8–13), vehicles/day.
    pub cu_aadt: f64,
    /// ESALs per heavy vehicle.
    pub truck_factor: f64,
    /// Directional distribution factor used.
    pub d_d: f64,
    /// Lanes per direction used for `d_l`.
    pub lanes_per_direction: u32,
    /// Lane distribution factor used.
    pub d_l: f64,
    /// First-year ESALs in the design lane.
    pub annual_esal_design_lane: f64,
    /// Lower end of its 95 % interval.
    pub annual_esal_design_lane_lo95: f64,
    /// Upper end of its 95 % interval.
    pub annual_esal_design_lane_hi95: f64,
    /// Compound growth factor over the design period.
    pub growth_factor: f64,
    /// `GF(g_lo95)`.
    pub growth_factor_lo95: f64,
    /// `GF(g_hi95)`.
    pub growth_factor_hi95: f64,
    /// Cumulative design-lane ESALs over the design period.
    pub cumulative_esal: f64,
    /// Lower end of its 95 % interval.
    pub cumulative_esal_lo95: f64,
    /// Upper end of its 95 % interval.
    pub cumulative_esal_hi95: f64,
}

/// Interval of a product of independent log-normal factors `(value, lo, hi)`, combined in
/// quadrature in log space per side. A factor whose lower bound is 0 makes the lower bound
/// 0; an estimate of 0 has the interval (0, 0).
pub(crate) fn product_interval(estimate: f64, factors: &[(f64, f64, f64)]) -> (f64, f64) {
    if estimate <= 0.0 {
        return (0.0, 0.0);
    }
    let mut lo2 = 0.0;
    let mut hi2 = 0.0;
    let mut lo_zero = false;
    for &(x, lo, hi) in factors {
        if lo <= 0.0 {
            lo_zero = true;
        } else {
            lo2 += (x / lo).ln().powi(2);
        }
        hi2 += (hi / x).ln().powi(2);
    }
    let lo = if lo_zero {
        0.0
    } else {
        estimate * (-lo2.sqrt()).exp()
    };
    (lo, estimate * hi2.sqrt().exp())
}

fn check_bounds(
    name: &'static str,
    value: f64,
    lo: f64,
    hi: f64,
    min: f64,
    max: f64,
) -> Result<(), DesignError> {
    check_range(name, value, min, max, "a finite value in its domain")?;
    check_range(name, lo, min, value, "a lower bound in [min, estimate]")?;
    check_range(name, hi, value, max, "an upper bound in [estimate, max]")?;
    Ok(())
}

/// Pavement-design traffic of one segment.
///
/// ```
/// use roadtally::design::{pavement_inputs, HeavyMix, LaneDistribution, LoadEquivalency, PavementType, SegmentDesignInput};
/// let mut mix = [0.0; 10];
/// mix[6] = 1.0; // all heavy vehicles class 10, default TF 1.20 (flexible)
/// let input = SegmentDesignInput {
///     aadt: 20_000.0, aadt_lo95: 20_000.0, aadt_hi95: 20_000.0,
///     heavy_share: 0.12, heavy_share_lo95: 0.12, heavy_share_hi95: 0.12,
///     heavy_mix: HeavyMix::PerClass(mix), lanes_total: 4, oneway: false, d_factor: None,
///     growth_rate: 0.04, growth_rate_lo95: 0.04, growth_rate_hi95: 0.04, design_years: 20,
///     pavement: PavementType::Flexible,
/// };
/// let p = pavement_inputs(&input, &LaneDistribution::aashto_1993(), &LoadEquivalency::defaults()).unwrap();
/// assert!((p.cumulative_esal - 14_086_222.0).abs() < 1.0);
/// ```
pub fn pavement_inputs(
    input: &SegmentDesignInput,
    lanes: &LaneDistribution,
    truck_factors: &LoadEquivalency,
) -> Result<PavementInputs, DesignError> {
    let i = input;
    check_bounds("aadt", i.aadt, i.aadt_lo95, i.aadt_hi95, 0.0, f64::MAX)?;
    check_bounds(
        "heavy_share",
        i.heavy_share,
        i.heavy_share_lo95,
        i.heavy_share_hi95,
        0.0,
        1.0,
    )?;
    check_bounds(
        "growth_rate",
        i.growth_rate,
        i.growth_rate_lo95,
        i.growth_rate_hi95,
        -0.99,
        10.0,
    )?;
    if i.design_years == 0 {
        return Err(DesignError::BadInput {
            name: "design_years",
            value: 0.0,
            expected: "at least 1 year",
        });
    }
    let d_d = match i.d_factor {
        Some(d) => check_range("d_factor", d, 0.0, 1.0, "a fraction in [0, 1]")?,
        None if i.oneway => 1.0,
        None => 0.5,
    };
    let lanes_per_direction = if i.oneway {
        i.lanes_total
    } else {
        i.lanes_total / 2
    }
    .max(1);
    let d_l = lanes.d_l(lanes_per_direction);
    let rigid = i.pavement == PavementType::Rigid;
    let tf = i.heavy_mix.truck_factor(truck_factors, rigid)?;
    let su = i.heavy_mix.single_unit_fraction()?;

    let heavy_aadt = i.aadt * i.heavy_share;
    let aadt_f = (i.aadt, i.aadt_lo95, i.aadt_hi95);
    let share_f = (i.heavy_share, i.heavy_share_lo95, i.heavy_share_hi95);
    let (heavy_lo, heavy_hi) = product_interval(heavy_aadt, &[aadt_f, share_f]);

    let annual = DAYS_PER_YEAR * heavy_aadt * tf * d_d * d_l;
    let (annual_lo, annual_hi) = product_interval(annual, &[aadt_f, share_f]);

    let gf = growth_factor(i.growth_rate, i.design_years);
    let gf_lo = growth_factor(i.growth_rate_lo95, i.design_years);
    let gf_hi = growth_factor(i.growth_rate_hi95, i.design_years);
    let cumulative = annual * gf;
    let (cum_lo, cum_hi) = product_interval(cumulative, &[aadt_f, share_f, (gf, gf_lo, gf_hi)]);

    Ok(PavementInputs {
        heavy_aadt,
        heavy_aadt_lo95: heavy_lo,
        heavy_aadt_hi95: heavy_hi,
        su_aadt: heavy_aadt * su,
        cu_aadt: heavy_aadt * (1.0 - su),
        truck_factor: tf,
        d_d,
        lanes_per_direction,
        d_l,
        annual_esal_design_lane: annual,
        annual_esal_design_lane_lo95: annual_lo,
        annual_esal_design_lane_hi95: annual_hi,
        growth_factor: gf,
        growth_factor_lo95: gf_lo,
        growth_factor_hi95: gf_hi,
        cumulative_esal: cumulative,
        cumulative_esal_lo95: cum_lo,
        cumulative_esal_hi95: cum_hi,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    fn class10_only() -> HeavyMix {
        let mut m = [0.0; 10];
        m[6] = 1.0;
        HeavyMix::PerClass(m)
    }

    fn hand_input() -> SegmentDesignInput {
        SegmentDesignInput {
            aadt: 20_000.0,
            aadt_lo95: 18_000.0,
            aadt_hi95: 22_000.0,
            heavy_share: 0.12,
            heavy_share_lo95: 0.10,
            heavy_share_hi95: 0.14,
            heavy_mix: class10_only(),
            lanes_total: 4,
            oneway: false,
            d_factor: None,
            growth_rate: 0.04,
            growth_rate_lo95: 0.02,
            growth_rate_hi95: 0.06,
            design_years: 20,
            pavement: PavementType::Flexible,
        }
    }

    /// References §5.4 table (formula AASHTO 1993 App. D / AI MS-1 / Huang 2004, from
    /// memory; values computed): n = 20 at 2/4/5/10 % → 24.30/29.78/33.07/57.27; g = 0 → n.
    #[test]
    fn growth_factor_matches_the_table() {
        for (g, v) in [(0.02, 24.30), (0.04, 29.78), (0.05, 33.07), (0.10, 57.27)] {
            assert!((growth_factor(g, 20) - v).abs() < 0.005, "g {g}");
        }
        for (g, n, v) in [
            (0.06, 30, 79.06),
            (0.08, 25, 73.11),
            (0.02, 5, 5.20),
            (0.10, 1, 1.0),
        ] {
            assert!((growth_factor(g, n) - v).abs() < 0.005, "g {g} n {n}");
        }
        for n in [1, 5, 20, 30] {
            assert_relative_eq!(growth_factor(0.0, n), f64::from(n), max_relative = 1e-15);
            assert_relative_eq!(growth_factor(1e-9, n), f64::from(n), max_relative = 1e-6);
        }
    }

    /// Hand example (tests/fixtures/REFERENCES.md §5.4, computed): AADT 20,000, T 12 %, TF 1.2, D_D 0.5,
    /// D_L 0.9, g 4 %, n 20 → GF 29.7781, cumulative design-lane ESAL 14,086,222.
    #[test]
    fn esal_hand_example() {
        let p = pavement_inputs(
            &hand_input(),
            &LaneDistribution::aashto_1993(),
            &LoadEquivalency::defaults(),
        )
        .unwrap();
        assert_relative_eq!(p.heavy_aadt, 2400.0, max_relative = 1e-12);
        assert_relative_eq!(p.truck_factor, 1.2, max_relative = 1e-12);
        assert_relative_eq!(p.d_d, 0.5, max_relative = 1e-12);
        assert_eq!(p.lanes_per_direction, 2);
        assert_relative_eq!(p.d_l, 0.9, max_relative = 1e-12);
        assert_relative_eq!(p.growth_factor, 29.7781, max_relative = 1e-5);
        // 365 · 2400 · 1.2 · 0.5 · 0.9 = 473,040 first-year ESALs.
        assert_relative_eq!(p.annual_esal_design_lane, 473_040.0, max_relative = 1e-12);
        assert!(
            (p.cumulative_esal - 14_086_222.0).abs() < 1.0,
            "{}",
            p.cumulative_esal
        );
        assert_relative_eq!(p.su_aadt, 0.0, epsilon = 1e-12);
        assert_relative_eq!(p.cu_aadt, 2400.0, max_relative = 1e-12);
    }

    /// Intervals: the tool combines the AADT's and the truck share's log-space half-widths in
    /// quadrature, which assumes independent log-normal errors. Checked by simulation, not by
    /// the formula: 400,000 draws of AADT and T with those errors (a standard Monte Carlo
    /// oracle, common practice); the tool's heavy-AADT and annual-ESAL bounds match the
    /// simulated 2.5 % and 97.5 % quantiles within 1 %.
    #[test]
    fn intervals_match_a_simulation_of_independent_errors() {
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut i = hand_input();
        // Symmetric in log space: AADT 20,000 ×/÷ 1.10, T 0.12 ×/÷ 1.20.
        (i.aadt_lo95, i.aadt_hi95) = (20_000.0 / 1.1, 20_000.0 * 1.1);
        (i.heavy_share_lo95, i.heavy_share_hi95) = (0.12 / 1.2, 0.12 * 1.2);
        let p = pavement_inputs(
            &i,
            &LaneDistribution::aashto_1993(),
            &LoadEquivalency::defaults(),
        )
        .unwrap();
        let z = 1.959_963_985;
        let a = Normal::new(20_000f64.ln(), 1.1f64.ln() / z).unwrap();
        let t = Normal::new(0.12f64.ln(), 1.2f64.ln() / z).unwrap();
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let mut heavy: Vec<f64> = (0..400_000)
            .map(|_| (a.sample(&mut rng) + t.sample(&mut rng)).exp())
            .collect();
        heavy.sort_by(f64::total_cmp);
        let q = |f: f64| heavy[(f * heavy.len() as f64) as usize];
        assert_relative_eq!(p.heavy_aadt_lo95, q(0.025), max_relative = 0.01);
        assert_relative_eq!(p.heavy_aadt_hi95, q(0.975), max_relative = 0.01);
        // Annual ESAL is heavy AADT times constants (365 · TF · D_D · D_L): same relative bounds.
        let k = p.annual_esal_design_lane / p.heavy_aadt;
        assert_relative_eq!(
            p.annual_esal_design_lane_lo95,
            k * q(0.025),
            max_relative = 0.01
        );
        assert_relative_eq!(
            p.annual_esal_design_lane_hi95,
            k * q(0.975),
            max_relative = 0.01
        );
        assert_relative_eq!(
            p.growth_factor_lo95,
            growth_factor(0.02, 20),
            max_relative = 1e-12
        );
        assert!(
            p.cumulative_esal_lo95 < p.cumulative_esal
                && p.cumulative_esal < p.cumulative_esal_hi95
        );
    }

    #[test]
    fn directional_lane_and_group_rules() {
        let lanes = LaneDistribution::aashto_1993();
        let tf = LoadEquivalency::defaults();
        let mut i = hand_input();
        i.oneway = true;
        i.lanes_total = 3;
        i.heavy_mix = HeavyMix::from_aadt_shares(0.03, 0.09).unwrap();
        i.pavement = PavementType::Rigid;
        let p = pavement_inputs(&i, &lanes, &tf).unwrap();
        assert_relative_eq!(p.d_d, 1.0, max_relative = 1e-12);
        assert_eq!(p.lanes_per_direction, 3);
        assert_relative_eq!(p.d_l, 0.70, max_relative = 1e-12);
        // 0.25 · 0.50 + 0.75 · 1.60 (rigid su / cu defaults)
        assert_relative_eq!(
            p.truck_factor,
            0.25 * 0.50 + 0.75 * 1.60,
            max_relative = 1e-12
        );
        assert_relative_eq!(p.su_aadt, 600.0, max_relative = 1e-12);
        assert_relative_eq!(p.cu_aadt, 1800.0, max_relative = 1e-12);
        // Odd two-way total: 3 lanes → 1 per direction (the conservative reading).
        let mut j = hand_input();
        j.lanes_total = 3;
        j.d_factor = Some(0.6);
        let p = pavement_inputs(&j, &lanes, &tf).unwrap();
        assert_eq!(p.lanes_per_direction, 1);
        assert_relative_eq!(p.d_l, 1.0, max_relative = 1e-12);
        assert_relative_eq!(p.d_d, 0.6, max_relative = 1e-12);
    }

    #[test]
    fn bad_inputs_are_errors() {
        let lanes = LaneDistribution::aashto_1993();
        let tf = LoadEquivalency::defaults();
        let mut i = hand_input();
        i.aadt_lo95 = 21_000.0;
        assert!(pavement_inputs(&i, &lanes, &tf).is_err());
        let mut i = hand_input();
        i.design_years = 0;
        assert!(pavement_inputs(&i, &lanes, &tf).is_err());
        let mut i = hand_input();
        i.heavy_mix = HeavyMix::PerClass([0.0; 10]);
        assert!(pavement_inputs(&i, &lanes, &tf).is_err());
        assert!(HeavyMix::from_aadt_shares(0.0, 0.0).is_none());
    }

    proptest! {
        /// The interval always holds the estimate, and GF is increasing in g.
        #[test]
        fn intervals_hold_the_estimate(aadt in 100.0f64..100_000.0, w in 0.0f64..0.5, t in 0.01f64..0.5, g in -0.05f64..0.15) {
            let mut i = hand_input();
            i.aadt = aadt;
            i.aadt_lo95 = aadt * (1.0 - w).max(0.01);
            i.aadt_hi95 = aadt * (1.0 + w);
            i.heavy_share = t;
            i.heavy_share_lo95 = t * 0.8;
            i.heavy_share_hi95 = (t * 1.2).min(1.0);
            i.growth_rate = g;
            i.growth_rate_lo95 = g - 0.01;
            i.growth_rate_hi95 = g + 0.01;
            let p = pavement_inputs(&i, &LaneDistribution::aashto_1993(), &LoadEquivalency::defaults()).unwrap();
            prop_assert!(p.cumulative_esal_lo95 <= p.cumulative_esal && p.cumulative_esal <= p.cumulative_esal_hi95);
            prop_assert!(p.growth_factor_lo95 < p.growth_factor && p.growth_factor < p.growth_factor_hi95);
        }
    }
}
