//! Reading the design tables under a study's `factors/` folder (lane distribution, truck
//! factors, HCM defaults) into [`DesignTables`]; a table the study does not carry keeps its
//! built-in default.

use std::path::{Path, PathBuf};

use super::error::InputError;
use crate::model::design_tables::{
    DesignTables, HcmDefaults, LaneDistribution, LoadEquivalency, TableError,
};
use crate::model::FileSummary;

/// Relative names of the design tables a study may carry under `factors/`.
pub const DESIGN_TABLE_FILES: [&str; 3] = [
    "factors/lane_distribution.csv",
    "factors/truck_factors.csv",
    "factors/hcm_defaults.csv",
];

/// The design tables of a study: its own `factors/` copies where present, else the shipped
/// defaults (AASHTO 1993 lane distribution, truck factors, HCM defaults). Each table read is
/// tallied in `files`.
pub fn read_design_tables(
    root: &Path,
    files: &mut Vec<FileSummary>,
) -> Result<DesignTables, InputError> {
    let mut t = DesignTables::default();
    let [lanes, trucks, hcm] = DESIGN_TABLE_FILES;
    if let Some(rows) = read_table(root, lanes, files)? {
        t.lanes = LaneDistribution::from_rows(rows).map_err(whole_table(Path::new(lanes)))?;
    }
    if let Some(rows) = read_table(root, trucks, files)? {
        t.trucks = LoadEquivalency::from_rows(rows).map_err(whole_table(Path::new(trucks)))?;
    }
    if let Some(rows) = read_table(root, hcm, files)? {
        t.hcm = HcmDefaults::from_rows(rows).map_err(whole_table(Path::new(hcm)))?;
    }
    Ok(t)
}

/// The rows of an optional table under the study folder, tallied in `files`.
fn read_table<T: serde::de::DeserializeOwned>(
    root: &Path,
    rel: &str,
    files: &mut Vec<FileSummary>,
) -> Result<Option<Vec<T>>, InputError> {
    let p = root.join(rel);
    if !p.exists() {
        return Ok(None);
    }
    let rows: Vec<T> = read_rows(&p, Path::new(rel))?;
    let mut summary = FileSummary::new(rel);
    summary.rows = rows.len() as u64;
    files.push(summary);
    Ok(Some(rows))
}

/// Refuses a `factors/*.csv` the tool does not read (`known` lists the ones it does), so that
/// a misspelt table name never leaves its defaults silently in force.
pub fn refuse_unknown_factor_files(root: &Path, known: &[&str]) -> Result<(), InputError> {
    let dir = root.join("factors");
    let Ok(entries) = std::fs::read_dir(&dir) else {
        return Ok(());
    };
    let mut names: Vec<String> = entries
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.to_ascii_lowercase().ends_with(".csv"))
        .collect();
    names.sort();
    for n in names {
        let rel = format!("factors/{n}");
        if !known.contains(&rel.as_str()) {
            return Err(InputError::BadTable {
                path: PathBuf::from(&rel),
                line: None,
                reason: format!(
                    "not a table roadtally reads (it reads {}); rename it to the table it is meant to replace, or move it out of factors/",
                    known
                        .iter()
                        .map(|k| k.trim_start_matches("factors/"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            });
        }
    }
    Ok(())
}

fn table_error(path: &Path, line: Option<u64>, reason: impl Into<String>) -> InputError {
    InputError::BadTable {
        path: path.to_path_buf(),
        line,
        reason: reason.into(),
    }
}

/// The rows of the table at `path`; errors name it `name` (relative to the study folder when
/// it is a study's table).
fn read_rows<T: serde::de::DeserializeOwned>(
    path: &Path,
    name: &Path,
) -> Result<Vec<T>, InputError> {
    let file = std::fs::File::open(path).map_err(|e| InputError::Unreadable {
        path: name.to_path_buf(),
        reason: e.to_string(),
    })?;
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(file);
    let mut out = Vec::new();
    for rec in reader.deserialize() {
        out.push(rec.map_err(|e| {
            table_error(
                name,
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
    LaneDistribution::from_rows(read_rows(path, path)?).map_err(whole_table(path))
}

/// Reads a truck-factor table
/// (`class,description,flexible_esal_per_vehicle,rigid_esal_per_vehicle,source`).
pub fn load_truck_factors(path: &Path) -> Result<LoadEquivalency, InputError> {
    LoadEquivalency::from_rows(read_rows(path, path)?).map_err(whole_table(path))
}

/// Reads an HCM default table (`facility,area,phf,heavy_share,source`).
pub fn load_hcm_defaults(path: &Path) -> Result<HcmDefaults, InputError> {
    HcmDefaults::from_rows(read_rows(path, path)?).map_err(whole_table(path))
}

#[cfg(test)]
mod tests {
    use super::*;

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
        let e = read_design_tables(dir.path(), &mut Vec::new())
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("factors/lane_distribution.csv"), "{e}");
    }
}
