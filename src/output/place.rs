//! Putting a written output set into place as a whole.
//!
//! A run writes its whole output set into a temporary folder beside the output folder
//! (`.<name>.tmp-<pid>`, same parent, so every move is a rename on one file system), then:
//! an absent output folder is that temporary folder renamed; an existing one gets the new
//! files moved in and roadtally's own files of an earlier run that this run did not write
//! (a `toll_*.csv` of a study that has since lost its toll.csv) removed, while anything else
//! in the folder is left alone. Every file moved out of the way is kept in the temporary
//! folder until the set is in place; if any move fails, the moves done so far are undone, so
//! the folder holds the earlier run's output as it was. The temporary folder is removed in
//! every case.

use std::path::{Path, PathBuf};

use super::OutputError;

/// The files (relative to the output folder) that roadtally writes, and so may replace or
/// remove in a folder it writes into. `toll_*.csv` at the top level is roadtally's too.
pub const OWN_FILES: &[&str] = &[
    "cross_validation.csv",
    "design_inputs.csv",
    "diagnostics.csv",
    "factor_groups.csv",
    "factors.csv",
    "factors/group_assignment.csv",
    "hourly_distribution.csv",
    "network_findings.csv",
    "network_totals.csv",
    "qc_log.csv",
    "qc_summary.csv",
    "ranked_hours.csv",
    "rejected_rows.csv",
    "report.html",
    "roadtally.xlsx",
    "run_manifest.json",
    "segment_statistics.csv",
    "segments.geojson",
    "short_count_calibration.csv",
    "short_counts.csv",
    "spatial_model.csv",
    "station_statistics.csv",
    "toll_by_month.csv",
    "toll_by_segment.csv",
    "toll_reconciliation.csv",
];

/// Whether `rel` (a `/`-separated name in an output folder) is one of roadtally's files.
pub fn is_own(rel: &str) -> bool {
    OWN_FILES.contains(&rel)
        || (rel.starts_with("toll_") && rel.ends_with(".csv") && !rel.contains('/'))
}

/// `path` made absolute with every existing part resolved (links, `..`), so two spellings
/// of one folder compare equal; the part that does not exist yet is appended as written.
fn resolved(path: &Path) -> PathBuf {
    let abs = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
    let mut rest = Vec::new();
    let mut cur = abs.as_path();
    loop {
        if let Ok(c) = std::fs::canonicalize(cur) {
            let mut out = c;
            out.extend(rest.iter().rev());
            return out;
        }
        match (cur.parent(), cur.file_name()) {
            (Some(p), Some(n)) => {
                rest.push(n.to_os_string());
                cur = p;
            }
            _ => return abs,
        }
    }
}

/// Refuses an output folder that is the study folder, lies inside it, or holds it: the
/// outputs would be mixed with the inputs (a `factors/group_assignment.csv` written into the
/// study is read back as an input by the next run).
pub fn check_target(study: &Path, out: &Path) -> Result<(), OutputError> {
    let (s, o) = (resolved(study), resolved(out));
    let relation = if o == s {
        "is"
    } else if o.starts_with(&s) {
        "is inside"
    } else if s.starts_with(&o) {
        "holds"
    } else {
        return Ok(());
    };
    Err(OutputError::OverlapsStudy {
        out: out.to_path_buf(),
        study: study.to_path_buf(),
        relation,
    })
}

/// Creates the empty temporary folder beside `out` that the output set is written into.
pub fn staging_dir(out: &Path) -> Result<PathBuf, OutputError> {
    let io = |path: &Path| {
        let path = path.to_path_buf();
        move |cause| OutputError::Io { path, cause }
    };
    let abs = std::path::absolute(out).map_err(io(out))?;
    if abs.exists() && !abs.is_dir() {
        return Err(OutputError::Occupied {
            path: out.to_path_buf(),
            reason: "it is a file, not a folder".into(),
        });
    }
    let (Some(parent), Some(name)) = (abs.parent(), abs.file_name()) else {
        return Err(OutputError::Occupied {
            path: out.to_path_buf(),
            reason: "it names no folder that can be written".into(),
        });
    };
    super::ensure_dir(parent)?;
    let tmp = parent.join(format!(
        ".{}.tmp-{}",
        name.to_string_lossy(),
        std::process::id()
    ));
    if tmp.exists() {
        std::fs::remove_dir_all(&tmp).map_err(io(&tmp))?;
    }
    std::fs::create_dir(&tmp).map_err(io(&tmp))?;
    Ok(tmp)
}

/// A move that [`commit`] can undo.
enum Done {
    /// An earlier file moved into the backup folder.
    Backed(String),
    /// A folder created in the output folder.
    Created(PathBuf),
    /// A new file moved into place.
    Placed(String),
}

/// Moves the output set `rel` (names relative to `tmp`) from `tmp` into `out` as described in
/// the module docs, with `rename` doing each move (a parameter so tests can make one fail).
/// Returns the paths placed. `tmp` is removed whatever happens.
pub fn commit(
    tmp: &Path,
    out: &Path,
    rel: &[String],
    rename: &mut dyn FnMut(&Path, &Path) -> std::io::Result<()>,
) -> Result<Vec<PathBuf>, OutputError> {
    let result = commit_inner(tmp, out, rel, rename);
    let _ = std::fs::remove_dir_all(tmp);
    result
}

fn commit_inner(
    tmp: &Path,
    out: &Path,
    rel: &[String],
    rename: &mut dyn FnMut(&Path, &Path) -> std::io::Result<()>,
) -> Result<Vec<PathBuf>, OutputError> {
    let placed: Vec<PathBuf> = rel.iter().map(|r| out.join(r)).collect();
    if std::fs::symlink_metadata(out).is_err() {
        rename(tmp, out).map_err(|cause| OutputError::Io {
            path: out.to_path_buf(),
            cause,
        })?;
        return Ok(placed);
    }
    check_free(out, rel)?;
    let stale = stale_files(out, rel);
    let backup = tmp.join(".replaced");
    let mut done = Vec::new();
    let mut step = |done: &mut Vec<Done>| -> Result<(), OutputError> {
        for r in rel.iter().chain(&stale) {
            let dest = out.join(r);
            if std::fs::symlink_metadata(&dest).is_ok() {
                let keep = backup.join(r);
                make_dirs(keep.parent().expect("has a parent"), None)?;
                rename(&dest, &keep).map_err(|cause| OutputError::Io { path: dest, cause })?;
                done.push(Done::Backed(r.clone()));
            }
        }
        for r in rel {
            let dest = out.join(r);
            make_dirs(dest.parent().expect("has a parent"), Some(done))?;
            rename(&tmp.join(r), &dest).map_err(|cause| OutputError::Io { path: dest, cause })?;
            done.push(Done::Placed(r.clone()));
        }
        Ok(())
    };
    if let Err(e) = step(&mut done) {
        // Undo in reverse order: new files out, created folders away, earlier files back.
        for d in done.iter().rev() {
            let _ = match d {
                Done::Placed(r) => std::fs::remove_file(out.join(r)),
                Done::Created(p) => std::fs::remove_dir(p),
                Done::Backed(r) => std::fs::rename(backup.join(r), out.join(r)),
            };
        }
        return Err(e);
    }
    Ok(placed)
}

/// Creates `dir` and its missing parents, noting each created one in `done`.
fn make_dirs(dir: &Path, mut done: Option<&mut Vec<Done>>) -> Result<(), OutputError> {
    let mut missing = Vec::new();
    let mut cur = dir;
    while std::fs::symlink_metadata(cur).is_err() {
        missing.push(cur.to_path_buf());
        match cur.parent() {
            Some(p) => cur = p,
            None => break,
        }
    }
    for d in missing.into_iter().rev() {
        std::fs::create_dir(&d).map_err(|cause| OutputError::Io {
            path: d.clone(),
            cause,
        })?;
        if let Some(done) = done.as_deref_mut() {
            done.push(Done::Created(d));
        }
    }
    Ok(())
}

/// Checks, before anything moves, that every name of the set is free for a file: no folder
/// where a file goes, no file where a folder goes.
fn check_free(out: &Path, rel: &[String]) -> Result<(), OutputError> {
    for r in rel {
        let mut at = out.to_path_buf();
        let parts: Vec<&str> = r.split('/').collect();
        for (i, part) in parts.iter().enumerate() {
            at.push(part);
            let Ok(m) = std::fs::symlink_metadata(&at) else {
                break;
            };
            let last = i + 1 == parts.len();
            if last && m.is_dir() {
                return Err(OutputError::Occupied {
                    path: at,
                    reason: "a folder has the name of an output file".into(),
                });
            }
            if !last && !m.is_dir() {
                return Err(OutputError::Occupied {
                    path: at,
                    reason: "a file has the name of an output folder".into(),
                });
            }
        }
    }
    Ok(())
}

/// roadtally's own files in `out` (top level and `factors/`) that the new set does not hold.
fn stale_files(out: &Path, rel: &[String]) -> Vec<String> {
    let mut found = Vec::new();
    for (sub, prefix) in [(out.to_path_buf(), ""), (out.join("factors"), "factors/")] {
        let Ok(entries) = std::fs::read_dir(&sub) else {
            continue;
        };
        for e in entries.flatten() {
            let name = format!("{prefix}{}", e.file_name().to_string_lossy());
            let is_file = e.file_type().is_ok_and(|t| !t.is_dir());
            if is_file && is_own(&name) && !rel.contains(&name) {
                found.push(name);
            }
        }
    }
    found.sort();
    found
}

#[cfg(test)]
mod tests {
    use super::*;

    fn set(dir: &Path, files: &[(&str, &str)]) {
        for (name, text) in files {
            let p = dir.join(name);
            std::fs::create_dir_all(p.parent().unwrap()).unwrap();
            std::fs::write(p, text).unwrap();
        }
    }

    fn text(p: &Path) -> String {
        std::fs::read_to_string(p).unwrap()
    }

    /// A move that fails part way leaves the earlier output as it was: replaced files back,
    /// stale files back, no new file, no temporary folder.
    #[test]
    fn a_failed_move_is_undone() {
        for fail_at in 1..9 {
            let root = tempfile::tempdir().unwrap();
            let out = root.path().join("out");
            set(
                &out,
                &[
                    ("qc_log.csv", "old qc"),
                    ("toll_by_month.csv", "old toll"),
                    ("notes.txt", "mine"),
                ],
            );
            let tmp = staging_dir(&out).unwrap();
            set(
                &tmp,
                &[
                    ("qc_log.csv", "new qc"),
                    ("rejected_rows.csv", "new rejects"),
                    ("factors/group_assignment.csv", "new groups"),
                ],
            );
            let rel: Vec<String> = [
                "qc_log.csv",
                "rejected_rows.csv",
                "factors/group_assignment.csv",
            ]
            .map(String::from)
            .to_vec();
            let mut n = 0;
            let mut rename = |a: &Path, b: &Path| {
                n += 1;
                if n == fail_at {
                    Err(std::io::Error::other("injected failure"))
                } else {
                    std::fs::rename(a, b)
                }
            };
            let r = commit(&tmp, &out, &rel, &mut rename);
            assert!(
                !tmp.exists(),
                "temporary folder removed (fail at {fail_at})"
            );
            if fail_at <= 5 {
                assert!(r.is_err(), "fail at {fail_at}");
                assert_eq!(text(&out.join("qc_log.csv")), "old qc");
                assert_eq!(text(&out.join("toll_by_month.csv")), "old toll");
                assert!(!out.join("rejected_rows.csv").exists());
                assert!(!out.join("factors").exists());
            } else {
                // Two backups and three placements: five renames; later counts never fire.
                r.unwrap();
                assert_eq!(text(&out.join("qc_log.csv")), "new qc");
                assert!(
                    !out.join("toll_by_month.csv").exists(),
                    "stale own file removed"
                );
                assert_eq!(
                    text(&out.join("factors/group_assignment.csv")),
                    "new groups"
                );
            }
            assert_eq!(text(&out.join("notes.txt")), "mine", "foreign file kept");
        }
    }

    #[test]
    fn output_inside_or_around_the_study_is_refused() {
        let root = tempfile::tempdir().unwrap();
        let study = root.path().join("study");
        std::fs::create_dir(&study).unwrap();
        assert!(check_target(&study, &study).is_err());
        assert!(check_target(&study, &study.join("x/../out")).is_err());
        assert!(check_target(&study, root.path()).is_err());
        assert!(check_target(&study, &study.join("./")).is_err());
        check_target(&study, &root.path().join("out")).unwrap();
        check_target(&study, &root.path().join("study-out")).unwrap();
    }
}
