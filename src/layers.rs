//! The one rule of direction, checked: a module imports only modules of a lower layer.
//!
//! The layers, lowest first (DEVELOPERS.md draws them):
//!
//! ```text
//! 0  model, progress, demo      records; terminal progress; the demo generator (each a leaf)
//! 1  input                      reads files into model records
//! 2  qc                         count quality rules
//! 3  continuous                 permanent-counter statistics
//! 4  factors                    factor groups, group factors, growth
//! 5  expansion                  short counts -> AADT with intervals
//! 6  spatial                    uncounted segments (kriging)
//! 7  segments                   one row per segment from the stages above
//! 8  design, toll, totals       design inputs, toll reconciliation, network totals
//! 9  config                     settings: one Params per stage
//! 10 pipeline                   runs the stages in order, returns Results
//! 11 output                     writes Results
//! 12 bench                      timing harness
//! 13 cli                        command-line definitions
//! ```
//!
//! Modules of one layer do not import each other, and the stages (layers 2 to 8) never name
//! `input`: they take model records, whoever read them. The check reads every `.rs` file under
//! `src/` (test code and doc comments included) and fails on any `crate::x` or, in doc
//! comments, `roadtally::x` path that points to a layer at or above the file's own.

#![cfg(test)]

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// Layer of each top-level module.
const LAYERS: &[(&str, u32)] = &[
    ("model", 0),
    ("progress", 0),
    ("demo", 0),
    ("input", 1),
    ("qc", 2),
    ("continuous", 3),
    ("factors", 4),
    ("expansion", 5),
    ("spatial", 6),
    ("segments", 7),
    ("design", 8),
    ("toll", 8),
    ("totals", 8),
    ("config", 9),
    ("pipeline", 10),
    ("output", 11),
    ("bench", 12),
    ("cli", 13),
];

/// The layers of the stages, which take model records and never the reading code.
const STAGES: std::ops::RangeInclusive<u32> = 2..=8;

fn layer(module: &str) -> Option<u32> {
    LAYERS.iter().find(|(m, _)| *m == module).map(|&(_, l)| l)
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).expect("src/ is readable") {
        let p = e.expect("directory entry").path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// Top-level modules a line names through `crate::` (or `roadtally::` in a doc comment),
/// including the heads of a `crate::{a, b::c}` group.
fn named_modules(line: &str) -> Vec<String> {
    let doc = line.trim_start().starts_with("//");
    let mut out = Vec::new();
    for prefix in ["crate::", "roadtally::"] {
        if prefix == "roadtally::" && !doc {
            continue;
        }
        let mut rest = line;
        while let Some(i) = rest.find(prefix) {
            // `crate::` must start a path, not end an identifier such as `foo_crate::`.
            let before = rest[..i].chars().next_back();
            rest = &rest[i + prefix.len()..];
            if before.is_some_and(|c| c.is_alphanumeric() || c == '_') {
                continue;
            }
            if let Some(group) = rest.strip_prefix('{') {
                let inner = group.split('}').next().unwrap_or("");
                out.extend(
                    inner
                        .split(',')
                        .filter_map(|p| p.trim().split("::").next())
                        .map(|h| h.trim().to_string())
                        .filter(|h| !h.is_empty() && h != "self"),
                );
            } else {
                let head: String = rest
                    .chars()
                    .take_while(|c| c.is_alphanumeric() || *c == '_')
                    .collect();
                out.push(head);
            }
        }
    }
    out
}

/// Every upward or sideways import under `src`: (file:line, from module, to module).
fn violations(src: &Path) -> Vec<(String, String, String)> {
    let mut files = Vec::new();
    rust_files(src, &mut files);
    files.sort();
    let mut found = Vec::new();
    for f in files {
        let rel = f.strip_prefix(src).expect("under src").to_path_buf();
        let first = rel.components().next().expect("a path");
        let module = first
            .as_os_str()
            .to_string_lossy()
            .trim_end_matches(".rs")
            .to_string();
        let Some(own) = layer(&module) else {
            continue; // lib.rs, main.rs and this file sit above every layer
        };
        let text = std::fs::read_to_string(&f).expect("source is readable");
        for (n, line) in text.lines().enumerate() {
            for target in named_modules(line) {
                if target == module {
                    continue;
                }
                let stage_reads_files = target == "input" && STAGES.contains(&own);
                let ok = layer(&target).is_some_and(|t| t < own) && !stage_reads_files;
                if !ok {
                    found.push((
                        format!("src/{}:{}", rel.display(), n + 1),
                        module.clone(),
                        target,
                    ));
                }
            }
        }
    }
    found
}

#[test]
fn every_import_points_down() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let found = violations(&src);
    let text: Vec<String> = found
        .iter()
        .map(|(at, from, to)| format!("{at}: {from} imports {to}"))
        .collect();
    assert!(found.is_empty(), "upward imports:\n{}", text.join("\n"));
}

#[test]
fn the_check_catches_an_upward_import() {
    let dir = tempfile::tempdir().unwrap();
    let src = dir.path();
    std::fs::create_dir_all(src.join("qc")).unwrap();
    std::fs::write(
        src.join("qc/mod.rs"),
        "use crate::model::Network;\nuse crate::input::read_study;\n",
    )
    .unwrap();
    std::fs::write(
        src.join("model.rs"),
        "//! [`crate::model`]\nuse crate::{progress, qc::QcOutput};\n/// `roadtally::output::Table`\n",
    )
    .unwrap();
    let found = violations(src);
    let targets: BTreeMap<String, String> = found
        .into_iter()
        .map(|(at, _, to)| (format!("{at} {to}"), to))
        .collect();
    assert_eq!(
        targets.keys().cloned().collect::<Vec<_>>(),
        [
            "src/model.rs:2 progress",
            "src/model.rs:2 qc",
            "src/model.rs:3 output",
            "src/qc/mod.rs:2 input"
        ],
    );
}

#[test]
fn every_module_has_a_layer() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    for e in std::fs::read_dir(&src).unwrap() {
        let name = e
            .unwrap()
            .file_name()
            .to_string_lossy()
            .trim_end_matches(".rs")
            .to_string();
        let top = ["lib", "main", "layers"].contains(&name.as_str());
        assert!(
            top || layer(&name).is_some(),
            "src/{name} has no layer in LAYERS"
        );
    }
}
