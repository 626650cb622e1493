//! `cargo bench --bench read_qc`: the reading + quality-control benchmark of
//! [`roadtally::bench`], on the generated bench study in `target/bench-study` (set
//! `ROADTALLY_BENCH_DIR` to use another folder). Prints the report; see the module docs of
//! `roadtally::bench` for what is measured and how.

use std::path::PathBuf;

fn main() -> anyhow::Result<()> {
    let dir = std::env::var_os("ROADTALLY_BENCH_DIR")
        .map(PathBuf::from)
        .unwrap_or_else(|| {
            PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(roadtally::bench::DEFAULT_DIR)
        });
    let regenerate = std::env::args().any(|a| a == "--regenerate");
    print!("{}", roadtally::bench::run_bench(&dir, regenerate)?);
    Ok(())
}
