//! The AASHTO 1993 Appendix D load-equivalency equations and truck factors from axle loads.
//!
//! # Method
//! `LEF = W_t18 / W_tx` (equations from memory, tests/fixtures/REFERENCES.md §5.2), `Lx` the axle load in kips,
//! `L2` = 1 single, 2 tandem, 3 tridem:
//!
//! ```text
//! flexible: log10(W_tx/W_t18) = 4.79 log10(18+1) − 4.79 log10(Lx+L2) + 4.33 log10(L2)
//!                               + G_t/β_x − G_t/β_18
//!           G_t = log10((4.2 − p_t)/(4.2 − 1.5))
//!           β_x = 0.40 + 0.081 (Lx+L2)^3.23 / ((SN+1)^5.19 · L2^3.23)
//! rigid:    log10(W_tx/W_t18) = 4.62 log10(18+1) − 4.62 log10(Lx+L2) + 3.28 log10(L2)
//!                               + G_t/β_x − G_t/β_18
//!           G_t = log10((4.5 − p_t)/(4.5 − 1.5))
//!           β_x = 1.00 + 3.63 (Lx+L2)^5.20 / ((D+1)^8.46 · L2^3.52)
//! (β_18 is β_x at Lx = 18, L2 = 1)
//! ```
//!
//! # Units
//! Axle loads are kips; slab thickness is inches; SN is the structural number (inches);
//! truck factors are ESALs per vehicle.
//!
//! # References
//! - AASHTO, *Guide for Design of Pavement Structures*, 1993, App. D (Tables D.4/D.5
//!   reproduced to 3 significant figures by the equations; tests/fixtures/REFERENCES.md §5.2).

use super::{check_range, DesignError};

/// Axle group of the load-equivalency equations.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AxleType {
    /// Single axle (`L2 = 1`).
    Single,
    /// Tandem axle (`L2 = 2`).
    Tandem,
    /// Tridem axle (`L2 = 3`).
    Tridem,
}

impl AxleType {
    /// The axle code `L2` of AASHTO 1993 App. D.
    pub fn l2(self) -> f64 {
        match self {
            AxleType::Single => 1.0,
            AxleType::Tandem => 2.0,
            AxleType::Tridem => 3.0,
        }
    }
}

/// AASHTO 1993 App. D flexible-pavement load-equivalency factor of one axle group
/// (ESALs per passage), for axle load `load_kips`, structural number `sn` and terminal
/// serviceability `pt`.
///
/// ```
/// use roadtally::design::{lef_flexible, AxleType};
/// let lef = lef_flexible(18.0, AxleType::Single, 5.0, 2.5);
/// assert!((lef - 1.0).abs() < 1e-12);
/// ```
pub fn lef_flexible(load_kips: f64, axle: AxleType, sn: f64, pt: f64) -> f64 {
    let l2 = axle.l2();
    let gt = ((4.2 - pt) / (4.2 - 1.5)).log10();
    let beta = |lx: f64, l2: f64| {
        0.40 + 0.081 * (lx + l2).powf(3.23) / ((sn + 1.0).powf(5.19) * l2.powf(3.23))
    };
    let log_ratio = 4.79 * 19f64.log10() - 4.79 * (load_kips + l2).log10()
        + 4.33 * l2.log10()
        + gt / beta(load_kips, l2)
        - gt / beta(18.0, 1.0);
    10f64.powf(-log_ratio)
}

/// AASHTO 1993 App. D rigid-pavement load-equivalency factor of one axle group (ESALs per
/// passage), for axle load `load_kips`, slab thickness `slab_in` and terminal
/// serviceability `pt`.
///
/// ```
/// use roadtally::design::{lef_rigid, AxleType};
/// assert!((lef_rigid(18.0, AxleType::Single, 9.0, 2.5) - 1.0).abs() < 1e-12);
/// ```
pub fn lef_rigid(load_kips: f64, axle: AxleType, slab_in: f64, pt: f64) -> f64 {
    let l2 = axle.l2();
    let gt = ((4.5 - pt) / (4.5 - 1.5)).log10();
    let beta = |lx: f64, l2: f64| {
        1.00 + 3.63 * (lx + l2).powf(5.20) / ((slab_in + 1.0).powf(8.46) * l2.powf(3.52))
    };
    let log_ratio = 4.62 * 19f64.log10() - 4.62 * (load_kips + l2).log10()
        + 3.28 * l2.log10()
        + gt / beta(load_kips, l2)
        - gt / beta(18.0, 1.0);
    10f64.powf(-log_ratio)
}

/// Truck factor of a vehicle from its axle groups (`(load_kips, axle)` each), flexible.
///
/// ```
/// use roadtally::design::{truck_factor_flexible, AxleType};
/// // 80-kip 3-S2: 12-kip steer axle and two 34-kip tandems (tests/fixtures/REFERENCES.md §5.3).
/// let tf = truck_factor_flexible(&[(12.0, AxleType::Single), (34.0, AxleType::Tandem), (34.0, AxleType::Tandem)], 5.0, 2.5).unwrap();
/// assert!((tf - 2.3786).abs() < 1e-3);
/// ```
pub fn truck_factor_flexible(
    axles: &[(f64, AxleType)],
    sn: f64,
    pt: f64,
) -> Result<f64, DesignError> {
    check_range("sn", sn, 1.0, 20.0, "a structural number in [1, 20]")?;
    check_range("pt", pt, 1.5, 4.19, "terminal serviceability in [1.5, 4.2)")?;
    Ok(axles.iter().map(|&(l, a)| lef_flexible(l, a, sn, pt)).sum())
}

/// Truck factor of a vehicle from its axle groups (`(load_kips, axle)` each), rigid.
pub fn truck_factor_rigid(
    axles: &[(f64, AxleType)],
    slab_in: f64,
    pt: f64,
) -> Result<f64, DesignError> {
    check_range(
        "slab_in",
        slab_in,
        4.0,
        20.0,
        "a slab thickness in [4, 20] in",
    )?;
    check_range("pt", pt, 1.5, 4.49, "terminal serviceability in [1.5, 4.5)")?;
    Ok(axles
        .iter()
        .map(|&(l, a)| lef_rigid(l, a, slab_in, pt))
        .sum())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// References §5.2 computed values (AASHTO 1993 App. D equations, Tables D.4/D.5 to
    /// 3 significant figures): flexible SN 5, p_t 2.5.
    #[test]
    fn lef_flexible_matches_reference_values() {
        let single = [
            (10.0, 0.0877),
            (12.0, 0.1891),
            (20.0, 1.5125),
            (30.0, 6.9707),
        ];
        for (l, v) in single {
            assert_relative_eq!(
                lef_flexible(l, AxleType::Single, 5.0, 2.5),
                v,
                max_relative = 1e-3
            );
        }
        let tandem = [
            (32.0, 0.8569),
            (34.0, 1.0947),
            (20.0, 0.1206),
            (40.0, 2.0805),
        ];
        for (l, v) in tandem {
            assert_relative_eq!(
                lef_flexible(l, AxleType::Tandem, 5.0, 2.5),
                v,
                max_relative = 1e-3
            );
        }
        assert_relative_eq!(
            lef_flexible(42.0, AxleType::Tridem, 5.0, 2.5),
            0.5967,
            max_relative = 1e-3
        );
        assert_relative_eq!(
            lef_flexible(10.0, AxleType::Single, 3.0, 2.5),
            0.1175,
            max_relative = 1e-3
        );
        assert_relative_eq!(
            lef_flexible(18.0, AxleType::Single, 3.0, 2.0),
            1.0,
            max_relative = 1e-12
        );
    }

    /// References §5.2 computed values: rigid, D = 9 in, p_t 2.5.
    #[test]
    fn lef_rigid_matches_reference_values() {
        let single = [
            (10.0, 0.0817),
            (12.0, 0.1764),
            (20.0, 1.5666),
            (30.0, 8.2819),
        ];
        for (l, v) in single {
            assert_relative_eq!(
                lef_rigid(l, AxleType::Single, 9.0, 2.5),
                v,
                max_relative = 1e-3
            );
        }
        assert_relative_eq!(
            lef_rigid(34.0, AxleType::Tandem, 9.0, 2.5),
            1.9196,
            max_relative = 1e-3
        );
    }

    /// References §5.3: 80-kip 3-S2 truck factor 2.3786 flexible (SN 5), 4.0155 rigid (D 9).
    #[test]
    fn three_s2_truck_factor() {
        let axles = [
            (12.0, AxleType::Single),
            (34.0, AxleType::Tandem),
            (34.0, AxleType::Tandem),
        ];
        assert_relative_eq!(
            truck_factor_flexible(&axles, 5.0, 2.5).unwrap(),
            2.3786,
            max_relative = 1e-3
        );
        assert_relative_eq!(
            truck_factor_rigid(&axles, 9.0, 2.5).unwrap(),
            4.0155,
            max_relative = 1e-3
        );
        assert!(truck_factor_flexible(&axles, 5.0, 4.5).is_err());
    }
}
