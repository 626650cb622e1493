//! One integration binary that drives the real `roadtally` CLI on small hand-made studies.
//!
//! Each test builds its study in its own temporary folder (see [`Study`]).

mod docs;
mod generated;
mod integrity;
mod publish;
mod reading;
mod traces;

use std::path::{Path, PathBuf};
use std::process::Output;

use assert_cmd::Command;

/// A study folder `study/` under a per-test temporary directory, with its output folder
/// `out/` beside it (never inside it: roadtally refuses that).
pub struct Study {
    pub dir: tempfile::TempDir,
    root: PathBuf,
}

/// A valid minimal network: three nodes, two segments (S2 one-way).
pub const NODES: &str = "node_id,lon,lat\nA,10.000,45.000\nB,10.010,45.000\nC,10.020,45.000\n";
pub const SEGMENTS: &str =
    "segment_id,from_node,to_node,length_km,functional_class,area,lanes,oneway,route\n\
S1,A,B,0.80,3,urban,2,false,R1\nS2,B,C,0.80,3,urban,1,true,R1\n";
pub const STATIONS: &str = "station_id,segment_id,kind\nC1,S1,continuous\nK1,S2,short\n";

impl Study {
    /// A study with the minimal network and stations and the given count file.
    pub fn new(counts: &str) -> Study {
        let dir = tempfile::tempdir().expect("temp dir");
        let root = dir.path().join("study");
        std::fs::create_dir(&root).unwrap();
        let s = Study { dir, root };
        s.write("network/nodes.csv", NODES);
        s.write("network/segments.csv", SEGMENTS);
        s.write("stations.csv", STATIONS);
        s.write("counts/counts.csv", counts);
        s
    }

    pub fn path(&self) -> &Path {
        &self.root
    }

    pub fn write(&self, rel: &str, text: &str) {
        self.write_bytes(rel, text.as_bytes());
    }

    pub fn write_bytes(&self, rel: &str, bytes: &[u8]) {
        let p = self.path().join(rel);
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(p, bytes).unwrap();
    }

    pub fn remove(&self, rel: &str) {
        std::fs::remove_file(self.path().join(rel)).unwrap();
    }

    pub fn out(&self) -> PathBuf {
        self.dir.path().join("out")
    }

    /// Runs `roadtally run <study> --out <out> --quiet`.
    pub fn run(&self) -> Output {
        roadtally()
            .args(["run", "--quiet", "--out"])
            .arg(self.out())
            .arg(self.path())
            .output()
            .expect("runs")
    }

    /// Runs `roadtally check <study>`.
    pub fn check(&self) -> Output {
        roadtally()
            .arg("check")
            .arg(self.path())
            .output()
            .expect("runs")
    }

    /// Reads an output CSV as rows of strings (header included).
    pub fn output_csv(&self, name: &str) -> Vec<Vec<String>> {
        let mut r = csv::Reader::from_path(self.out().join(name)).expect(name);
        let mut rows = vec![r.headers().unwrap().iter().map(String::from).collect()];
        for rec in r.records() {
            rows.push(rec.unwrap().iter().map(String::from).collect());
        }
        rows
    }
}

pub fn roadtally() -> Command {
    Command::cargo_bin("roadtally").expect("binary built")
}

/// Hourly `fwd` rows for one station from `start_hour` for `hours` hours on 2025-06-03 (-04:00).
pub fn hourly_rows(station: &str, dir: &str, hours: std::ops::Range<u32>, vehicles: u32) -> String {
    hours
        .map(|h| format!("{station},{dir},2025-06-03T{h:02}:00:00-04:00,60,{vehicles}\n"))
        .collect()
}

/// Copies a folder tree (a study) to `to`.
pub fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let target = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), &target).unwrap();
        }
    }
}

/// A temporary copy of the committed demo study at `<tmp>/study`.
pub fn demo_copy() -> (tempfile::TempDir, PathBuf) {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/small");
    let dir = tempfile::tempdir().expect("temp dir");
    let study = dir.path().join("study");
    copy_dir(&demo, &study);
    (dir, study)
}
