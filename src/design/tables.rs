//! Default design tables (lane distribution, per-class truck factors, HCM defaults), their
//! editable CSV form under the top-level `factors/` folder, and the AASHTO 1993
//! Appendix D load-equivalency equations.
//!
//! # Method
//! - **Lane distribution** `D_L`: share of the one-direction ESALs in the design lane, by
//!   lanes per direction. AASHTO 1993 Part II §2.1.3 gives ranges (1 lane 100 %, 2 lanes
//!   80–100 %, 3 lanes 60–80 %, 4 lanes 50–75 %; from memory, high confidence, references
//!   §5.1). The point value used by default is **the midpoint of the published range**
//!   (1.00, 0.90, 0.70, 0.625), a project choice; the range is kept in the table so a
//!   designer can take the upper end (the conservative choice). More than 4 lanes per
//!   direction use the 4-lane row.
//! - **Truck factors** (ESALs per vehicle, flexible and rigid, FHWA classes 4–13 and the
//!   HPMS groups single-unit 4–7 / combination 8–13): there is **no single published
//!   source**; the defaults are common practice / from memory, of the right order only
//!   (class 9 flexible about 1.0–1.5, references §5.3; WSDOT single units 0.40 and
//!   tractor-semitrailers 1.00, from memory, low-moderate confidence). **Replace them with
//!   your agency's WIM-derived values.**
//! - **Load equivalency** (AASHTO 1993 App. D, equations from memory, references §5.2),
//!   `LEF = W_t18 / W_tx`, `Lx` the axle load in kips, `L2` = 1 single, 2 tandem, 3 tridem:
//!
//!   ```text
//!   flexible: log10(W_tx/W_t18) = 4.79 log10(18+1) − 4.79 log10(Lx+L2) + 4.33 log10(L2)
//!                                 + G_t/β_x − G_t/β_18
//!             G_t = log10((4.2 − p_t)/(4.2 − 1.5))
//!             β_x = 0.40 + 0.081 (Lx+L2)^3.23 / ((SN+1)^5.19 · L2^3.23)
//!   rigid:    log10(W_tx/W_t18) = 4.62 log10(18+1) − 4.62 log10(Lx+L2) + 3.28 log10(L2)
//!                                 + G_t/β_x − G_t/β_18
//!             G_t = log10((4.5 − p_t)/(4.5 − 1.5))
//!             β_x = 1.00 + 3.63 (Lx+L2)^5.20 / ((D+1)^8.46 · L2^3.52)
//!   (β_18 is β_x at Lx = 18, L2 = 1)
//!   ```
//! - **HCM defaults** (PHF, heavy-vehicle share) by facility and area type, from memory of
//!   the HCM 6th ed. (2016) and HCM 2010 (references §3.2): basic freeway / multilane
//!   PHF 0.94 urban, 0.88 rural, heavy vehicles 5 % urban, 12 % rural; other roads
//!   (signalised urban streets, rural two-lane highways) PHF 0.92 urban, 0.88 rural with
//!   the same heavy-vehicle shares (the heavy shares for other roads are a project choice,
//!   low confidence).
//!
//! # Units
//! Lane distribution and heavy shares are fractions; truck factors are ESALs per vehicle;
//! axle loads are kips; slab thickness is inches; SN is the structural number (inches).
//!
//! # References
//! - AASHTO, *Guide for Design of Pavement Structures*, 1993, Part II §2.1.3, App. D
//!   (Tables D.4/D.5 reproduced to 3 significant figures by the equations; references §5.2).
//! - TRB, *Highway Capacity Manual*, 6th ed., 2016; HCM 2010 Ch. 11; NCHRP Report 599 (2008).
//! - `factors/README.md`: the shipped CSV files, their sources and how to edit them.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::{check_range, DesignError};
use crate::model::Area;

/// Source note of the AASHTO 1993 lane-distribution ranges.
pub const LANE_SOURCE: &str = "AASHTO Guide for Design of Pavement Structures 1993 Part II 2.1.3 (range, from memory, high confidence); default = range midpoint (project choice)";

/// Source note of the per-class truck factors.
pub const TRUCK_FACTOR_SOURCE: &str = "common practice / from memory, order of magnitude only; replace with your agency's WIM-derived values";

/// One row of the lane-distribution table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LaneDistributionRow {
    /// Lanes in one direction (1..).
    pub lanes_per_direction: u32,
    /// Lower end of the published range, fraction.
    pub d_l_min: f64,
    /// Upper end of the published range, fraction.
    pub d_l_max: f64,
    /// The point value used, fraction.
    pub d_l_default: f64,
    /// Where the values come from.
    pub source: String,
}

/// Lane distribution factor `D_L` by lanes per direction.
#[derive(Debug, Clone, PartialEq)]
pub struct LaneDistribution {
    rows: BTreeMap<u32, LaneDistributionRow>,
}

impl LaneDistribution {
    /// Builds the table from rows; lanes per direction must start at 1 and be contiguous,
    /// each `0 < d_l_min <= d_l_default <= d_l_max <= 1`.
    pub fn from_rows(rows: Vec<LaneDistributionRow>) -> Result<LaneDistribution, DesignError> {
        let mut map = BTreeMap::new();
        for r in rows {
            let ok = r.d_l_min > 0.0
                && r.d_l_min <= r.d_l_default
                && r.d_l_default <= r.d_l_max
                && r.d_l_max <= 1.0;
            if !ok || r.lanes_per_direction == 0 {
                return Err(table_error(
                    "",
                    format!(
                        "lane row {} needs 0 < d_l_min <= d_l_default <= d_l_max <= 1",
                        r.lanes_per_direction
                    ),
                ));
            }
            if map.insert(r.lanes_per_direction, r).is_some() {
                return Err(table_error("", "a lanes_per_direction appears twice"));
            }
        }
        let contiguous = map.keys().copied().eq(1..=map.len() as u32);
        if map.is_empty() || !contiguous {
            return Err(table_error(
                "",
                "lanes_per_direction must run 1, 2, 3, ... without gaps",
            ));
        }
        Ok(LaneDistribution { rows: map })
    }

    /// The built-in defaults, identical to the shipped `factors/lane_distribution.csv`.
    ///
    /// ```
    /// use roadtally::design::LaneDistribution;
    /// let t = LaneDistribution::aashto_1993();
    /// assert_eq!(t.d_l(2), 0.90);
    /// assert_eq!(t.range(3), (0.60, 0.80));
    /// ```
    pub fn aashto_1993() -> LaneDistribution {
        let row = |n, lo, hi, d| LaneDistributionRow {
            lanes_per_direction: n,
            d_l_min: lo,
            d_l_max: hi,
            d_l_default: d,
            source: LANE_SOURCE.to_string(),
        };
        LaneDistribution::from_rows(vec![
            row(1, 1.00, 1.00, 1.00),
            row(2, 0.80, 1.00, 0.90),
            row(3, 0.60, 0.80, 0.70),
            row(4, 0.50, 0.75, 0.625),
        ])
        .expect("built-in table is valid")
    }

    fn row(&self, lanes_per_direction: u32) -> &LaneDistributionRow {
        let last = *self.rows.keys().next_back().expect("table is not empty");
        &self.rows[&lanes_per_direction.clamp(1, last)]
    }

    /// The point value `D_L` for `lanes_per_direction` (0 is read as 1; more lanes than the
    /// table has use its last row).
    pub fn d_l(&self, lanes_per_direction: u32) -> f64 {
        self.row(lanes_per_direction).d_l_default
    }

    /// The published range `(min, max)` for `lanes_per_direction`.
    pub fn range(&self, lanes_per_direction: u32) -> (f64, f64) {
        let r = self.row(lanes_per_direction);
        (r.d_l_min, r.d_l_max)
    }

    /// The rows, fewest lanes first.
    pub fn rows(&self) -> Vec<LaneDistributionRow> {
        self.rows.values().cloned().collect()
    }
}

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

/// One row of the truck-factor table: a FHWA class (`"4"`..`"13"`) or an HPMS group
/// (`"su"` classes 4–7, `"cu"` classes 8–13).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TruckFactorRow {
    /// `4`..`13`, `su` or `cu`.
    pub class: String,
    /// Short description.
    pub description: String,
    /// ESALs per vehicle on a flexible pavement.
    pub flexible_esal_per_vehicle: f64,
    /// ESALs per vehicle on a rigid pavement.
    pub rigid_esal_per_vehicle: f64,
    /// Where the values come from.
    pub source: String,
}

/// Per-class truck factors (ESALs per vehicle), flexible and rigid.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadEquivalency {
    /// Classes 4..=13 (index 0 = class 4): (flexible, rigid).
    classes: [(f64, f64); 10],
    /// Single-unit group (flexible, rigid).
    su: (f64, f64),
    /// Combination group (flexible, rigid).
    cu: (f64, f64),
    rows: Vec<TruckFactorRow>,
}

/// The built-in truck-factor rows: (key, description, flexible, rigid).
const TRUCK_FACTORS: [(&str, &str, f64, f64); 12] = [
    ("4", "buses", 0.60, 0.90),
    ("5", "two-axle six-tire single-unit trucks", 0.25, 0.25),
    ("6", "three-axle single-unit trucks", 0.60, 0.90),
    ("7", "four-or-more-axle single-unit trucks", 0.90, 1.40),
    ("8", "four-or-fewer-axle single-trailer trucks", 0.60, 0.80),
    ("9", "five-axle single-trailer trucks (3-S2)", 1.10, 1.80),
    ("10", "six-or-more-axle single-trailer trucks", 1.20, 2.00),
    ("11", "five-or-fewer-axle multi-trailer trucks", 1.20, 1.60),
    ("12", "six-axle multi-trailer trucks", 1.30, 1.90),
    ("13", "seven-or-more-axle multi-trailer trucks", 1.50, 2.50),
    ("su", "single-unit group (classes 4-7)", 0.40, 0.50),
    ("cu", "combination group (classes 8-13)", 1.00, 1.60),
];

impl LoadEquivalency {
    /// Builds the table; it needs exactly one row for each of classes 4..13, `su` and `cu`,
    /// with non-negative finite factors.
    pub fn from_rows(rows: Vec<TruckFactorRow>) -> Result<LoadEquivalency, DesignError> {
        let mut classes = [None; 10];
        let (mut su, mut cu) = (None, None);
        for r in &rows {
            let v = (r.flexible_esal_per_vehicle, r.rigid_esal_per_vehicle);
            if !(v.0.is_finite() && v.1.is_finite() && v.0 >= 0.0 && v.1 >= 0.0) {
                return Err(table_error(
                    "",
                    format!("truck factors of {} must be finite and >= 0", r.class),
                ));
            }
            let slot = match r.class.trim() {
                "su" => &mut su,
                "cu" => &mut cu,
                c => match c.parse::<usize>() {
                    Ok(n @ 4..=13) => &mut classes[n - 4],
                    _ => {
                        return Err(table_error(
                            "",
                            format!("class '{c}' is not 4..13, su or cu"),
                        ))
                    }
                },
            };
            if slot.replace(v).is_some() {
                return Err(table_error("", format!("class {} appears twice", r.class)));
            }
        }
        let missing = || table_error("", "every class 4..13 and the groups su, cu need a row");
        let mut out = [(0.0, 0.0); 10];
        for (o, c) in out.iter_mut().zip(classes) {
            *o = c.ok_or_else(missing)?;
        }
        Ok(LoadEquivalency {
            classes: out,
            su: su.ok_or_else(missing)?,
            cu: cu.ok_or_else(missing)?,
            rows,
        })
    }

    /// The built-in defaults, identical to the shipped `factors/truck_factors.csv`
    /// (common practice / from memory; replace with WIM-derived values).
    pub fn defaults() -> LoadEquivalency {
        let rows = TRUCK_FACTORS
            .iter()
            .map(|&(c, d, f, r)| TruckFactorRow {
                class: c.to_string(),
                description: d.to_string(),
                flexible_esal_per_vehicle: f,
                rigid_esal_per_vehicle: r,
                source: TRUCK_FACTOR_SOURCE.to_string(),
            })
            .collect();
        LoadEquivalency::from_rows(rows).expect("built-in table is valid")
    }

    /// ESALs per vehicle of FHWA class `class` (4..=13); `None` for other classes.
    pub fn class_factor(&self, class: usize, rigid: bool) -> Option<f64> {
        let v = self.classes.get(class.checked_sub(4)?)?;
        Some(if rigid { v.1 } else { v.0 })
    }

    /// ESALs per vehicle of the single-unit group (classes 4–7).
    pub fn single_unit_factor(&self, rigid: bool) -> f64 {
        if rigid {
            self.su.1
        } else {
            self.su.0
        }
    }

    /// ESALs per vehicle of the combination group (classes 8–13).
    pub fn combination_factor(&self, rigid: bool) -> f64 {
        if rigid {
            self.cu.1
        } else {
            self.cu.0
        }
    }

    /// The rows as read or built.
    pub fn rows(&self) -> &[TruckFactorRow] {
        &self.rows
    }
}

/// Facility kind of the HCM default table.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Facility {
    /// Basic freeway and multilane-highway segments (functional classes 1–2).
    Freeway,
    /// Other roads: urban streets (signalised intersections) and rural two-lane highways.
    Other,
}

impl Facility {
    /// The facility of a FHWA functional class (1–2 freeway, otherwise other).
    pub fn of_functional_class(fc: u8) -> Facility {
        if fc <= 2 {
            Facility::Freeway
        } else {
            Facility::Other
        }
    }
}

/// One row of the HCM default table.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HcmDefault {
    /// Facility kind.
    pub facility: Facility,
    /// `urban` or `rural`.
    pub area: String,
    /// Peak hour factor (0, 1].
    pub phf: f64,
    /// Heavy-vehicle share of the design hour, fraction.
    pub heavy_share: f64,
    /// Where the values come from.
    pub source: String,
}

/// HCM default PHF and heavy-vehicle share by facility and area type.
#[derive(Debug, Clone, PartialEq)]
pub struct HcmDefaults {
    rows: Vec<HcmDefault>,
}

impl HcmDefaults {
    /// Builds the table; it needs exactly one row per facility × area, `0 < phf <= 1`,
    /// `0 <= heavy_share < 1`.
    pub fn from_rows(rows: Vec<HcmDefault>) -> Result<HcmDefaults, DesignError> {
        for r in &rows {
            if !(r.phf > 0.0 && r.phf <= 1.0 && r.heavy_share >= 0.0 && r.heavy_share < 1.0) {
                return Err(table_error(
                    "",
                    "HCM rows need 0 < phf <= 1 and 0 <= heavy_share < 1",
                ));
            }
            if r.area != "urban" && r.area != "rural" {
                return Err(table_error(
                    "",
                    format!("area '{}' is not urban or rural", r.area),
                ));
            }
        }
        for f in [Facility::Freeway, Facility::Other] {
            for a in ["urban", "rural"] {
                let n = rows
                    .iter()
                    .filter(|r| r.facility == f && r.area == a)
                    .count();
                if n != 1 {
                    return Err(table_error(
                        "",
                        format!("the HCM table needs exactly one row for {f:?} {a}"),
                    ));
                }
            }
        }
        Ok(HcmDefaults { rows })
    }

    /// The built-in defaults, identical to the shipped `factors/hcm_defaults.csv`
    /// (HCM 6th ed. / HCM 2010, from memory).
    ///
    /// ```
    /// use roadtally::design::{Facility, HcmDefaults};
    /// use roadtally::model::Area;
    /// let d = HcmDefaults::hcm6();
    /// assert_eq!(d.get(Facility::Freeway, Area::Rural).phf, 0.88);
    /// ```
    pub fn hcm6() -> HcmDefaults {
        let fw = "HCM 6th ed. 2016 Ch. 12/26 basic freeway and multilane defaults (HCM 2010 Ch. 11), from memory";
        let si = "HCM 6th ed. 2016 signalised intersection default PHF 0.92 (from memory); heavy share as freeway (project choice, low confidence)";
        let tl = "HCM 6th ed. 2016 rural default PHF 0.88 (from memory); heavy share as freeway (project choice, low confidence)";
        let row = |facility, area: &str, phf, heavy_share, source: &str| HcmDefault {
            facility,
            area: area.to_string(),
            phf,
            heavy_share,
            source: source.to_string(),
        };
        HcmDefaults::from_rows(vec![
            row(Facility::Freeway, "urban", 0.94, 0.05, fw),
            row(Facility::Freeway, "rural", 0.88, 0.12, fw),
            row(Facility::Other, "urban", 0.92, 0.05, si),
            row(Facility::Other, "rural", 0.88, 0.12, tl),
        ])
        .expect("built-in table is valid")
    }

    /// The row for `facility` and `area`.
    pub fn get(&self, facility: Facility, area: Area) -> &HcmDefault {
        self.rows
            .iter()
            .find(|r| r.facility == facility && r.area == area.as_str())
            .expect("the table has every facility x area (checked on construction)")
    }

    /// The rows as read or built.
    pub fn rows(&self) -> &[HcmDefault] {
        &self.rows
    }
}

fn table_error(path: impl Into<PathBuf>, message: impl Into<String>) -> DesignError {
    DesignError::Table {
        path: path.into(),
        message: message.into(),
    }
}

fn with_path(e: DesignError, path: &Path) -> DesignError {
    match e {
        DesignError::Table { message, .. } => table_error(path, message),
        other => other,
    }
}

fn read_rows<T: serde::de::DeserializeOwned>(path: &Path) -> Result<Vec<T>, DesignError> {
    let file = std::fs::File::open(path).map_err(|source| DesignError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(file);
    let mut out = Vec::new();
    for rec in reader.deserialize() {
        out.push(rec.map_err(|e| DesignError::Csv {
            path: path.to_path_buf(),
            line: e.position().map_or(0, |p| p.line()),
            message: e.to_string(),
        })?);
    }
    Ok(out)
}

fn write_rows<T: Serialize>(path: &Path, rows: &[T]) -> Result<(), DesignError> {
    let io = |source| DesignError::Io {
        path: path.to_path_buf(),
        source,
    };
    let mut w = csv::Writer::from_path(path).map_err(|e| io(e.into()))?;
    for r in rows {
        w.serialize(r).map_err(|e| io(e.into()))?;
    }
    w.flush().map_err(io)
}

/// Reads a lane-distribution table (`lanes_per_direction,d_l_min,d_l_max,d_l_default,source`).
pub fn load_lane_distribution(path: &Path) -> Result<LaneDistribution, DesignError> {
    LaneDistribution::from_rows(read_rows(path)?).map_err(|e| with_path(e, path))
}

/// Writes a lane-distribution table in the form [`load_lane_distribution`] reads.
pub fn write_lane_distribution(path: &Path, t: &LaneDistribution) -> Result<(), DesignError> {
    write_rows(path, &t.rows())
}

/// Reads a truck-factor table
/// (`class,description,flexible_esal_per_vehicle,rigid_esal_per_vehicle,source`).
pub fn load_truck_factors(path: &Path) -> Result<LoadEquivalency, DesignError> {
    LoadEquivalency::from_rows(read_rows(path)?).map_err(|e| with_path(e, path))
}

/// Writes a truck-factor table in the form [`load_truck_factors`] reads.
pub fn write_truck_factors(path: &Path, t: &LoadEquivalency) -> Result<(), DesignError> {
    write_rows(path, t.rows())
}

/// Reads an HCM default table (`facility,area,phf,heavy_share,source`).
pub fn load_hcm_defaults(path: &Path) -> Result<HcmDefaults, DesignError> {
    HcmDefaults::from_rows(read_rows(path)?).map_err(|e| with_path(e, path))
}

/// Writes an HCM default table in the form [`load_hcm_defaults`] reads.
pub fn write_hcm_defaults(path: &Path, t: &HcmDefaults) -> Result<(), DesignError> {
    write_rows(path, t.rows())
}

/// Truck factor of a vehicle from its axle groups (`(load_kips, axle)` each), flexible.
///
/// ```
/// use roadtally::design::{tables::truck_factor_flexible, AxleType};
/// // 80-kip 3-S2: 12-kip steer axle and two 34-kip tandems (references §5.3).
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

    fn shipped(name: &str) -> PathBuf {
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("factors")
            .join(name)
    }

    /// AASHTO 1993 Part II §2.1.3 lane-distribution ranges (references §5.1, from memory,
    /// high confidence): 1 lane 100 %, 2 lanes 80–100 %, 3 lanes 60–80 %, 4 lanes 50–75 %.
    #[test]
    fn lane_distribution_matches_aashto_1993_table() {
        let t = LaneDistribution::aashto_1993();
        let published = [
            (1, 1.00, 1.00),
            (2, 0.80, 1.00),
            (3, 0.60, 0.80),
            (4, 0.50, 0.75),
        ];
        for (n, lo, hi) in published {
            let (a, b) = t.range(n);
            assert_relative_eq!(a, lo, max_relative = 1e-12);
            assert_relative_eq!(b, hi, max_relative = 1e-12);
            // The stated choice: the midpoint of the range.
            assert_relative_eq!(t.d_l(n), 0.5 * (lo + hi), max_relative = 1e-12);
        }
        assert_relative_eq!(t.d_l(7), 0.625, max_relative = 1e-12);
        assert_relative_eq!(t.d_l(0), 1.0, max_relative = 1e-12);
    }

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

    /// HCM defaults as quoted in references §3.2 (HCM 6th ed. 2016 / HCM 2010 Ch. 11, from
    /// memory): basic freeway PHF 0.94 urban / 0.88 rural, heavy vehicles 5 % urban / 12 %
    /// rural; signalised intersections PHF 0.92.
    #[test]
    fn hcm_defaults_match_the_manual_as_quoted() {
        let d = HcmDefaults::hcm6();
        let fu = d.get(Facility::Freeway, Area::Urban);
        let fr = d.get(Facility::Freeway, Area::Rural);
        assert_relative_eq!(fu.phf, 0.94, max_relative = 1e-12);
        assert_relative_eq!(fr.phf, 0.88, max_relative = 1e-12);
        assert_relative_eq!(fu.heavy_share, 0.05, max_relative = 1e-12);
        assert_relative_eq!(fr.heavy_share, 0.12, max_relative = 1e-12);
        assert_relative_eq!(
            d.get(Facility::Other, Area::Urban).phf,
            0.92,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            d.get(Facility::Other, Area::Rural).phf,
            0.88,
            max_relative = 1e-12
        );
        assert!(d.rows().iter().all(|r| r.source.contains("from memory")));
        assert_eq!(Facility::of_functional_class(2), Facility::Freeway);
        assert_eq!(Facility::of_functional_class(3), Facility::Other);
    }

    #[test]
    fn truck_factor_defaults_are_marked_and_complete() {
        let t = LoadEquivalency::defaults();
        for c in 4..=13 {
            assert!(t.class_factor(c, false).is_some());
        }
        assert!(t.class_factor(3, false).is_none());
        assert!(t.class_factor(14, true).is_none());
        assert_relative_eq!(
            t.class_factor(9, false).unwrap(),
            1.10,
            max_relative = 1e-12
        );
        assert!(t
            .rows()
            .iter()
            .all(|r| r.source.contains("common practice")));
    }

    #[test]
    fn shipped_csv_files_equal_built_in_defaults() {
        assert_eq!(
            load_lane_distribution(&shipped("lane_distribution.csv")).unwrap(),
            LaneDistribution::aashto_1993()
        );
        assert_eq!(
            load_truck_factors(&shipped("truck_factors.csv")).unwrap(),
            LoadEquivalency::defaults()
        );
        assert_eq!(
            load_hcm_defaults(&shipped("hcm_defaults.csv")).unwrap(),
            HcmDefaults::hcm6()
        );
    }

    #[test]
    fn tables_round_trip_through_csv() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("lanes.csv");
        write_lane_distribution(&p, &LaneDistribution::aashto_1993()).unwrap();
        assert_eq!(
            load_lane_distribution(&p).unwrap(),
            LaneDistribution::aashto_1993()
        );
        let p = dir.path().join("tf.csv");
        write_truck_factors(&p, &LoadEquivalency::defaults()).unwrap();
        assert_eq!(load_truck_factors(&p).unwrap(), LoadEquivalency::defaults());
        let p = dir.path().join("hcm.csv");
        write_hcm_defaults(&p, &HcmDefaults::hcm6()).unwrap();
        assert_eq!(load_hcm_defaults(&p).unwrap(), HcmDefaults::hcm6());
    }

    #[test]
    fn bad_tables_are_rejected_with_the_path() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("lanes.csv");
        std::fs::write(
            &p,
            "lanes_per_direction,d_l_min,d_l_max,d_l_default,source\n1,1,1,1,x\n3,0.6,0.8,0.7,x\n",
        )
        .unwrap();
        let e = load_lane_distribution(&p).unwrap_err();
        assert!(
            matches!(e, DesignError::Table { ref path, .. } if path == &p),
            "{e}"
        );
        std::fs::write(
            &p,
            "lanes_per_direction,d_l_min,d_l_max,d_l_default,source\n1,1,1,abc,x\n",
        )
        .unwrap();
        assert!(matches!(
            load_lane_distribution(&p),
            Err(DesignError::Csv { line: 2, .. })
        ));
        let p = dir.path().join("tf.csv");
        std::fs::write(&p, "class,description,flexible_esal_per_vehicle,rigid_esal_per_vehicle,source\n9,x,1,1,x\n").unwrap();
        assert!(load_truck_factors(&p).is_err());
        assert!(matches!(
            load_hcm_defaults(&dir.path().join("missing.csv")),
            Err(DesignError::Io { .. })
        ));
    }
}
