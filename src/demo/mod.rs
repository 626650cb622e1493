//! Demo study generator: an invented region with known truth, written as a study folder.
//!
//! [`generate`] writes a complete study folder (network, stations, counts, history, toll,
//! `study.toml`) that follows the study folder contract, plus a `truth/` folder with the
//! figures the generator used, so that tests and demonstrations can compare the tool's
//! estimates with the truth.
//!
//! # Method
//!
//! 1. `network` lays out an invented region: a rural grid of minor arterials and collectors,
//!    one or more towns with dense street grids, an interstate and a freeway crossing the
//!    region, rural principal arterials between the towns and local dead-end roads. Each
//!    segment gets a true AADT from a log-linear model of functional class, area and lanes,
//!    plus a spatially smooth random field and a random walk along its route (so consecutive
//!    segments of one route carry similar volumes).
//! 2. `patterns` defines the temporal patterns (factor groups): monthly, day-of-week and
//!    hourly profiles, directional split, holidays and growth. The expected daily volume of a
//!    segment on a date is `AADT x norm x month x weekday x holiday`, with `norm` chosen so
//!    that the mean over the year is exactly the AADT.
//! 3. `counts` draws hourly (or 15-minute) counts at the stations: expected volume x
//!    lognormal day noise x lognormal interval noise, then a Poisson draw; class counts by a
//!    multinomial draw over the segment's class mix. `faults` then corrupts a few
//!    station-days (stuck, dead, spikes, level shifts, partial days, swapped directions);
//!    `gaps` drops a few hours from some short counts; `disturbances` adds real traffic that
//!    is not a fault (event evenings, storms, roadworks, holiday eves, bridge days).
//! 4. `extras` writes history, toll billing and the truth tables.
//!
//! Everything is drawn from one `ChaCha8Rng` seeded by [`DemoParams::seed`]; no wall clock is
//! read, so identical parameters give byte-identical files.
//!
//! # Units
//!
//! Volumes in vehicles (per interval, per day for AADT, both directions together for AADT),
//! lengths in km (haversine between node coordinates), coordinates in decimal degrees WGS 84,
//! speeds in km/h, growth rates as fractions per year (0.015 = 1.5 %/yr). Times are local
//! clock times of an invented zone at UTC-05:00 (standard) and UTC-04:00 (daylight saving
//! from the second Sunday of March 02:00 to the first Sunday of November 02:00).
//!
//! # References
//!
//! FHWA *Traffic Monitoring Guide* (2022): functional classes, the 13 vehicle classes and the
//! factor convention (a factor multiplies a count to give AADT).

mod clock;
mod counts;
mod disturbances;
mod extras;
mod faults;
mod gaps;
mod network;
mod patterns;
mod sink;
mod traffic;

#[cfg(test)]
mod tests;

use std::path::{Path, PathBuf};

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// How big a demo study to generate.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum DemoSize {
    /// About 300 segments, 10 continuous and 100 short counts; under 3 MB on disk.
    Small,
    /// About 3000 segments, 60 continuous and 1000 short counts.
    Large,
    /// The large network with 400 continuous counters (about 7 million hourly rows) for
    /// timing the reader; few short counts, no bad rows.
    Bench,
}

/// What to generate.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct DemoParams {
    /// Seed of the random generator; the same parameters always give the same files.
    pub seed: u64,
    /// Size of the study.
    pub size: DemoSize,
    /// Study year (the year of the continuous counts); default 2025.
    pub year: i32,
    /// Whether to write a handful of deliberately unreadable rows into the short counts
    /// (recorded in `truth/bad_rows.csv`). Default: true for Small and Large, false for Bench.
    pub bad_rows: bool,
}

impl DemoParams {
    /// Default parameters for a size: year 2025, bad rows except for Bench.
    ///
    /// ```
    /// use roadtally::demo::{DemoParams, DemoSize};
    /// let p = DemoParams::new(7, DemoSize::Small);
    /// assert_eq!(p.year, 2025);
    /// assert!(p.bad_rows);
    /// ```
    pub fn new(seed: u64, size: DemoSize) -> Self {
        DemoParams {
            seed,
            size,
            year: 2025,
            bad_rows: size != DemoSize::Bench,
        }
    }
}

impl Default for DemoParams {
    fn default() -> Self {
        DemoParams::new(1, DemoSize::Small)
    }
}

/// What [`generate`] wrote.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct DemoSummary {
    /// Segments in `network/segments.csv`.
    pub segments: usize,
    /// Stations of kind `continuous`.
    pub stations_continuous: usize,
    /// Stations of kind `short`.
    pub stations_short: usize,
    /// Data rows in all `counts/*` files, bad rows included.
    pub count_rows: u64,
    /// Rows of `truth/faults.csv` (one per faulty station x direction x date).
    pub faults: usize,
    /// Every file written, in the order written.
    pub files: Vec<PathBuf>,
}

/// Why a demo study could not be written.
#[derive(thiserror::Error, Debug)]
pub enum DemoError {
    /// A file or folder could not be created, written or renamed.
    #[error("cannot write {path}: {source}")]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// The CSV writer failed.
    #[error("cannot write CSV {path}: {source}")]
    Csv {
        path: PathBuf,
        #[source]
        source: csv::Error,
    },
    /// The study year is outside the range the generator supports.
    #[error("study year {year} is not supported (use 1971..=2199)")]
    Year { year: i32 },
}

/// How many of each thing a size has. `Tiny` exists for fast unit tests only.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Scale {
    /// Rural grid nodes per side.
    pub rural_grid: usize,
    /// Rural grid spacing, km.
    pub rural_spacing_km: f64,
    /// Street grid nodes per side, one entry per town (at most 3).
    pub towns: &'static [usize],
    pub continuous: usize,
    pub short: usize,
    /// Every n-th continuous station is classified (counts by FHWA class).
    pub classified_every: usize,
    /// Gzip the continuous counts file.
    pub gzip_continuous: bool,
}

impl Scale {
    #[cfg(test)]
    pub(crate) const TINY: Scale = Scale {
        rural_grid: 4,
        rural_spacing_km: 6.0,
        towns: &[4],
        continuous: 4,
        short: 20,
        classified_every: 3,
        gzip_continuous: true,
    };

    pub(crate) fn of(size: DemoSize) -> Scale {
        match size {
            DemoSize::Small => Scale {
                rural_grid: 8,
                rural_spacing_km: 5.0,
                towns: &[7, 5],
                continuous: 10,
                short: 100,
                classified_every: 4,
                gzip_continuous: true,
            },
            DemoSize::Large => Scale {
                rural_grid: 27,
                rural_spacing_km: 3.4,
                towns: &[16, 15, 12],
                continuous: 60,
                short: 1000,
                classified_every: 6,
                gzip_continuous: true,
            },
            DemoSize::Bench => Scale {
                continuous: 400,
                short: 40,
                classified_every: 20,
                // Plain CSV: the benchmark times the reader, not gunzip.
                gzip_continuous: false,
                ..Scale::of(DemoSize::Large)
            },
        }
    }
}

/// Generates a demo study into `out` (created if needed; existing files of the same names
/// are replaced, each atomically).
///
/// ```no_run
/// use roadtally::demo::{generate, DemoParams, DemoSize};
/// let summary = generate(&DemoParams::new(42, DemoSize::Small), "demo-study".as_ref()).unwrap();
/// assert!(summary.segments > 200);
/// ```
pub fn generate(params: &DemoParams, out: &Path) -> Result<DemoSummary, DemoError> {
    generate_scaled(params, Scale::of(params.size), out)
}

/// [`generate`] with an explicit scale (tests use [`Scale::TINY`]).
pub(crate) fn generate_scaled(
    params: &DemoParams,
    scale: Scale,
    out: &Path,
) -> Result<DemoSummary, DemoError> {
    if !(1971..=2199).contains(&params.year) {
        return Err(DemoError::Year { year: params.year });
    }
    let mut rng = ChaCha8Rng::seed_from_u64(params.seed);
    let mut files = Vec::new();

    let net = network::build(&mut rng, &scale);
    let pats = patterns::Pattern::all();
    let plan = counts::plan_stations(&mut rng, &net, &scale, params.year);

    for dir in ["network", "counts", "truth"] {
        let path = out.join(dir);
        std::fs::create_dir_all(&path).map_err(|source| DemoError::Io { path, source })?;
    }

    files.push(extras::write_study_toml(out, params)?);
    files.extend(network::write(out, &net)?);
    files.push(counts::write_stations(out, &plan)?);

    // Disturbances on their own random stream: the volumes' draws stay where they were.
    let counters: Vec<usize> = plan.continuous.iter().map(|c| c.segment).collect();
    let disturb = disturbances::Plan::draw(
        &mut ChaCha8Rng::seed_from_u64(params.seed ^ disturbances::STREAM),
        &net,
        params.year,
        &counters,
    );
    let cont =
        counts::write_continuous(&mut rng, out, &net, &pats, &plan, &disturb, params, &scale)?;
    files.push(cont.path.clone());
    let short = counts::write_short(&mut rng, out, &net, &pats, &plan, &disturb, params)?;
    files.push(short.path.clone());

    files.push(extras::write_history(
        &mut rng,
        out,
        &net,
        &plan,
        params.year,
    )?);
    let toll = extras::write_toll(
        &mut rng,
        &mut ChaCha8Rng::seed_from_u64(params.seed ^ extras::TOLL_STREAM),
        out,
        &net,
        &pats,
        &disturb,
        &cont.passages,
        &counters,
        params.year,
    )?;
    files.extend(toll);

    let mut fault_rows = cont.faults;
    fault_rows.extend(short.faults);
    files.push(faults::write_faults(out, &fault_rows)?);
    files.push(faults::write_bad_rows(out, &short.bad_rows)?);
    files.push(gaps::write(out, &short.gaps)?);
    files.push(extras::write_segment_truth(
        out,
        &net,
        &pats,
        &disturb,
        params.year,
    )?);
    let mut disturbed = cont.disturbed;
    disturbed.extend(short.disturbed);
    files.extend(disturbances::write(out, &disturb, params.year, &disturbed)?);
    files.extend(extras::write_pattern_truth(out, &pats, params.year)?);

    Ok(DemoSummary {
        segments: net.segments.len(),
        stations_continuous: plan.continuous.len(),
        stations_short: plan.short.len(),
        count_rows: cont.rows + short.rows,
        faults: fault_rows.len(),
        files,
    })
}
