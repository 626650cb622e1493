//! Reading the design tables under a study's `factors/` folder (lane distribution, truck
//! factors, HCM defaults) into [`DesignTables`]; a table the study does not carry keeps its
//! built-in default.

use std::path::Path;

use super::error::InputError;
use crate::model::design_tables::{
    DesignTables, HcmDefaults, LaneDistribution, LoadEquivalency, TableError,
};

/// The design tables of a study: its own `factors/` copies where present, else the shipped
/// defaults (AASHTO 1993 lane distribution, truck factors, HCM defaults).
pub fn read_design_tables(root: &Path) -> Result<DesignTables, InputError> {
    let mut t = DesignTables::default();
    let rel = |e| study_relative(e, root);
    let p = root.join("factors/lane_distribution.csv");
    if p.exists() {
        t.lanes = load_lane_distribution(&p).map_err(rel)?;
    }
    let p = root.join("factors/truck_factors.csv");
    if p.exists() {
        t.trucks = load_truck_factors(&p).map_err(rel)?;
    }
    let p = root.join("factors/hcm_defaults.csv");
    if p.exists() {
        t.hcm = load_hcm_defaults(&p).map_err(rel)?;
    }
    Ok(t)
}

/// The error with its path relative to the study folder, as every other input message
/// names its file.
fn study_relative(e: InputError, root: &Path) -> InputError {
    let rel = |p: std::path::PathBuf| p.strip_prefix(root).map(Path::to_path_buf).unwrap_or(p);
    match e {
        InputError::BadTable { path, line, reason } => InputError::BadTable {
            path: rel(path),
            line,
            reason,
        },
        InputError::Unreadable { path, reason } => InputError::Unreadable {
            path: rel(path),
            reason,
        },
        other => other,
    }
}

fn table_error(path: &Path, line: Option<u64>, reason: impl Into<String>) -> InputError {
    InputError::BadTable {
        path: path.to_path_buf(),
        line,
        reason: reason.into(),
    }
}

fn read_rows<T: serde::de::DeserializeOwned>(path: &Path) -> Result<Vec<T>, InputError> {
    let file = std::fs::File::open(path).map_err(|e| InputError::Unreadable {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(file);
    let mut out = Vec::new();
    for rec in reader.deserialize() {
        out.push(rec.map_err(|e| {
            table_error(
                path,
                Some(e.position().map_or(0, |p| p.line())),
                e.to_string(),
            )
        })?);
    }
    Ok(out)
}

fn whole_table(path: &Path) -> impl Fn(TableError) -> InputError + '_ {
    move |e| table_error(path, None, e.message)
}

/// Reads a lane-distribution table (`lanes_per_direction,d_l_min,d_l_max,d_l_default,source`).
pub fn load_lane_distribution(path: &Path) -> Result<LaneDistribution, InputError> {
    LaneDistribution::from_rows(read_rows(path)?).map_err(whole_table(path))
}

/// Reads a truck-factor table
/// (`class,description,flexible_esal_per_vehicle,rigid_esal_per_vehicle,source`).
pub fn load_truck_factors(path: &Path) -> Result<LoadEquivalency, InputError> {
    LoadEquivalency::from_rows(read_rows(path)?).map_err(whole_table(path))
}

/// Reads an HCM default table (`facility,area,phf,heavy_share,source`).
pub fn load_hcm_defaults(path: &Path) -> Result<HcmDefaults, InputError> {
    HcmDefaults::from_rows(read_rows(path)?).map_err(whole_table(path))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::PathBuf;

    fn shipped(name: &str) -> PathBuf {
        Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("factors")
            .join(name)
    }

    /// Writes rows in the form the loaders read (the round-trip check of the reader).
    fn write_rows<T: serde::Serialize>(path: &Path, rows: &[T]) {
        let mut w = csv::Writer::from_path(path).unwrap();
        for r in rows {
            w.serialize(r).unwrap();
        }
        w.flush().unwrap();
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
        write_rows(&p, &LaneDistribution::aashto_1993().rows());
        assert_eq!(
            load_lane_distribution(&p).unwrap(),
            LaneDistribution::aashto_1993()
        );
        let p = dir.path().join("tf.csv");
        write_rows(&p, LoadEquivalency::defaults().rows());
        assert_eq!(load_truck_factors(&p).unwrap(), LoadEquivalency::defaults());
        let p = dir.path().join("hcm.csv");
        write_rows(&p, HcmDefaults::hcm6().rows());
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
            matches!(e, InputError::BadTable { ref path, line: None, .. } if path == &p),
            "{e}"
        );
        std::fs::write(
            &p,
            "lanes_per_direction,d_l_min,d_l_max,d_l_default,source\n1,1,1,abc,x\n",
        )
        .unwrap();
        assert!(matches!(
            load_lane_distribution(&p),
            Err(InputError::BadTable { line: Some(2), .. })
        ));
        let p = dir.path().join("tf.csv");
        std::fs::write(&p, "class,description,flexible_esal_per_vehicle,rigid_esal_per_vehicle,source\n9,x,1,1,x\n").unwrap();
        assert!(load_truck_factors(&p).is_err());
        assert!(matches!(
            load_hcm_defaults(&dir.path().join("missing.csv")),
            Err(InputError::Unreadable { .. })
        ));
    }

    /// A study's own table that is bad is named relative to the study folder, as every
    /// other input is (found by the mutation test: the message held the whole path).
    #[test]
    fn study_tables_are_named_relative_to_the_study() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::create_dir(dir.path().join("factors")).unwrap();
        std::fs::write(dir.path().join("factors/lane_distribution.csv"), "x\n1\n").unwrap();
        let e = read_design_tables(dir.path()).unwrap_err().to_string();
        assert!(e.starts_with("factors/lane_distribution.csv"), "{e}");
    }
}
