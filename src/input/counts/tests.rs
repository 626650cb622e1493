use super::*;
use crate::demo::{generate_scaled, DemoParams, DemoSize, Scale};
use crate::input::{network, stations};

/// A tiny generated study with plain (not gzipped) count files, edited by `edit`
/// (which gets the continuous counts file's text and returns the new text).
fn study(edit: impl FnOnce(String) -> String) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let scale = Scale {
        gzip_continuous: false,
        ..Scale::TINY
    };
    generate_scaled(&DemoParams::new(3, DemoSize::Small), scale, dir.path()).unwrap();
    let path = continuous_file(dir.path());
    let text = std::fs::read_to_string(&path).unwrap();
    std::fs::write(&path, edit(text)).unwrap();
    dir
}

fn continuous_file(root: &Path) -> PathBuf {
    count_files(root)
        .unwrap()
        .into_iter()
        .find(|(_, n)| n.contains("continuous"))
        .expect("a continuous counts file")
        .0
}

/// The store (as text), rejected rows and file summaries of reading `root` with `split`.
fn read(root: &Path, split: Split) -> (String, Vec<RejectedRow>, Vec<FileSummary>) {
    let (mut rejects, mut files) = (Vec::new(), Vec::new());
    let net = network::read_network(root, &mut rejects, &mut files).unwrap();
    let st = stations::read_stations(root, &net, &mut rejects, &mut files).unwrap();
    let ctx = Ctx {
        net: &net,
        stations: &st,
        zone: None,
    };
    let store = read_counts_split(
        root,
        &ctx,
        &mut rejects,
        &mut files,
        &Progress::hidden(),
        split,
    )
    .unwrap();
    (format!("{store:?}"), rejects, files)
}

const SEQUENTIAL: Split = Split {
    min_bytes: u64::MAX,
    range_bytes: RANGE_BYTES,
    workers: 1,
};

fn parallel(range_bytes: u64) -> Split {
    Split {
        min_bytes: 0,
        range_bytes,
        workers: 2,
    }
}

/// Whether the continuous file is read in ranges (rather than falling back).
fn splits(root: &Path, range_bytes: u64) -> bool {
    let (mut rejects, mut files) = (Vec::new(), Vec::new());
    let net = network::read_network(root, &mut rejects, &mut files).unwrap();
    let st = stations::read_stations(root, &net, &mut rejects, &mut files).unwrap();
    let path = continuous_file(root);
    let len = std::fs::metadata(&path).unwrap().len();
    let ctx = Ctx {
        net: &net,
        stations: &st,
        zone: None,
    };
    read_parallel(
        &path,
        "x",
        len,
        &ctx,
        parallel(range_bytes),
        &crate::progress::Bar::hidden(),
    )
    .unwrap()
    .is_some()
}

fn assert_same(root: &Path, ranges: &[u64]) {
    let seq = read(root, SEQUENTIAL);
    for &r in ranges {
        let par = read(root, parallel(r));
        assert_eq!(seq.1, par.1, "rejected rows, ranges of {r} bytes");
        assert_eq!(seq.2, par.2, "file summaries, ranges of {r} bytes");
        assert!(seq.0 == par.0, "store differs, ranges of {r} bytes");
    }
}

#[test]
fn ranges_give_the_sequential_result_on_a_generated_study() {
    let dir = study(|t| t);
    assert!(splits(dir.path(), 997));
    assert_same(dir.path(), &[997, 4099, 65_536, 1 << 20]);
}

#[test]
fn rows_of_a_day_read_later_merge_exactly() {
    // Move a block of rows (the middle of some station-days) to the end of the file, and
    // scatter blank lines: later, non-overlapping rows of days other ranges already hold.
    let dir = study(|t| {
        let mut lines: Vec<&str> = t.lines().collect();
        let moved: Vec<&str> = lines.drain(500..700).collect();
        lines.extend(moved);
        let mut out = String::new();
        for (i, l) in lines.iter().enumerate() {
            out.push_str(l);
            out.push('\n');
            if i % 97 == 5 {
                out.push('\n');
            }
        }
        out
    });
    assert!(splits(dir.path(), 2003));
    assert_same(dir.path(), &[997, 2003, 8191]);
}

#[test]
fn overlaps_and_offset_clashes_across_ranges_keep_the_first_row() {
    let dir = study(|t| {
        let lines: Vec<&str> = t.lines().collect();
        let mut out = t.clone();
        // Exact duplicates of early rows, a `both` row over them, another UTC offset.
        for l in &lines[1..40] {
            out.push_str(l);
            out.push('\n');
        }
        for l in &lines[300..310] {
            out.push_str(
                &l.replacen(",fwd,", ",both,", 1)
                    .replacen(",rev,", ",both,", 1),
            );
            out.push('\n');
            out.push_str(
                &l.replacen("-05:00", "+01:00", 1)
                    .replacen("-04:00", "+01:00", 1),
            );
            out.push('\n');
        }
        out
    });
    let seq = read(dir.path(), SEQUENTIAL);
    assert!(seq.1.iter().any(|r| r.reason.starts_with("overlaps")));
    assert_same(dir.path(), &[997, 4099, 65_536]);
}

#[test]
fn quotes_and_crlf_split_and_agree_with_the_sequential_reader() {
    // A quoted field across a newline is two bad lines, a stray quote one, a well-quoted
    // row is read: ranges and the sequential reader must agree on every one.
    let quoted = study(|mut t| {
        let second = t.lines().nth(1).unwrap().to_string();
        t.push_str("\"C\nX\",fwd,2025-01-01T00:00:00-05:00,60,3\n");
        t.push_str(&second.replacen(',', ",\"", 1));
        t.push('\n');
        // Well quoted, and in another year so it overlaps nothing.
        let other_year = second.replacen(",2025-", ",2019-", 1);
        t.push_str(&format!("\"{}\n", other_year.replacen(',', "\",", 1)));
        t
    });
    assert!(splits(quoted.path(), 997));
    assert_same(quoted.path(), &[997, 4099]);
    let (_, rejects, _) = read(quoted.path(), SEQUENTIAL);
    let quote_faults = rejects
        .iter()
        .filter(|r| r.reason.contains("quote"))
        .count();
    assert_eq!(quote_faults, 3, "{rejects:?}");
    let crlf = study(|t| t.replace('\n', "\r\n"));
    assert!(splits(crlf.path(), 997));
    assert_same(crlf.path(), &[997]);
    assert_eq!(
        read(crlf.path(), SEQUENTIAL).0,
        read(study(|t| t).path(), SEQUENTIAL).0
    );
}

/// The counts bar of a read with `split`, recorded: (total, final position, peak, updates).
fn counts_bar(root: &Path, split: Split) -> (u64, u64, u64, u64) {
    let (mut rejects, mut files) = (Vec::new(), Vec::new());
    let net = network::read_network(root, &mut rejects, &mut files).unwrap();
    let st = stations::read_stations(root, &net, &mut rejects, &mut files).unwrap();
    let ctx = Ctx {
        net: &net,
        stations: &st,
        zone: None,
    };
    let progress = Progress::recording();
    read_counts_split(root, &ctx, &mut rejects, &mut files, &progress, split).unwrap();
    let r = progress.recorded();
    assert_eq!(r.len(), 1, "{r:?}");
    assert!(r[0].finished);
    (r[0].total.unwrap(), r[0].position, r[0].peak, r[0].updates)
}

/// On gzip input the bar's total is the files' size on disk and its position counts bytes
/// read from disk, so it ends at its total and never passes it (counting decompressed bytes
/// against the compressed size ran to several times the total).
#[test]
fn the_progress_total_holds_on_gzip_input() {
    let dir = tempfile::tempdir().unwrap();
    generate_scaled(
        &DemoParams::new(3, DemoSize::Small),
        Scale::TINY,
        dir.path(),
    )
    .unwrap();
    let files = count_files(dir.path()).unwrap();
    assert!(files.iter().any(|(_, n)| n.ends_with(".gz")));
    let on_disk: u64 = files
        .iter()
        .map(|(p, _)| std::fs::metadata(p).unwrap().len())
        .sum();
    let (total, pos, peak, updates) = counts_bar(dir.path(), SEQUENTIAL);
    assert_eq!(total, on_disk);
    assert_eq!(pos, total);
    assert!(peak <= total, "peak {peak} of {total}");
    assert!(
        updates > 2,
        "the bar moves while reading ({updates} updates)"
    );
}

/// A plain file read in byte ranges moves the bar batch by batch, ending at its total.
#[test]
fn the_progress_bar_advances_while_ranges_are_read() {
    let dir = study(|t| t);
    let (total, pos, peak, updates) = counts_bar(dir.path(), parallel(4099));
    assert_eq!(pos, total);
    assert!(peak <= total);
    assert!(updates > 5, "{updates} updates");
}
