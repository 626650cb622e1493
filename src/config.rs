//! Run settings: command-line options merged with `study.toml`, then split into one
//! parameter struct per stage. One precedence rule: a command-line option beats study.toml,
//! which beats the documented default.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::continuous::stage::ContinuousParams;
use crate::expansion::ExpansionParams;
use crate::factors::stage::FactorParams;
use crate::input::{self, InputError, SETTINGS_FILE};
use crate::qc::QcParams;
use crate::spatial::stage::SpatialParams;

mod suggest;

/// Everything `study.toml` may say. Every key has a default; unknown keys are an error so a
/// misspelt threshold is never silently ignored.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct Settings {
    /// The study year. Default: the calendar year holding the most permanent-counter records.
    pub year: Option<i32>,
    /// Largest share (0..1) of a file's rows that may be rejected before the run raises a
    /// data-loss alarm (exit code 1). Default 0.01.
    pub max_rejected_share: f64,
    /// Largest share (0..1) of a stage's units (segments, short counts) that may fall back
    /// from the stage's method to a cruder substitute (a default factor group, unfactored
    /// counts, regression instead of kriging, a design input without its figures) before the
    /// run raises a fallback alarm (exit code 1) naming the stage. Default 0.10: a tenth of the
    /// network resting on substitutes is material for a published statistic (project choice,
    /// in line with the ±10 % precision target of TMG factor groups).
    pub max_fallback_share: f64,
    /// IANA time-zone name (e.g. `America/New_York`) for count timestamps written without a
    /// UTC offset, as many logger exports are. A timestamp with an offset keeps its own. A
    /// clock time the zone skips (spring forward) is rejected; one it repeats (fall back) is
    /// read as the earlier hour the first time and the later hour the second time. Default:
    /// none, so a timestamp without offset is rejected.
    pub time_zone: Option<String>,
    /// Count quality control.
    pub qc: QcParams,
    /// Permanent-counter statistics.
    pub continuous: ContinuousParams,
    /// Factor groups, growth.
    pub factors: FactorParams,
    /// Short-count expansion and its calibration.
    pub expansion: ExpansionParams,
    /// Estimation of uncounted segments.
    pub spatial: SpatialParams,
    /// Assembly of each segment's row (uncertainty of figures without a spread of their own).
    pub segments: crate::segments::SegmentsParams,
    /// Toll rates per vehicle-km and group, for the payment comparison.
    pub toll: crate::toll::reconcile::TollRates,
    /// Design period and pavement type for the design inputs.
    pub design: crate::design::stage::DesignParams,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            year: None,
            max_rejected_share: 0.01,
            max_fallback_share: 0.10,
            time_zone: None,
            qc: QcParams::default(),
            continuous: ContinuousParams::default(),
            factors: FactorParams::default(),
            expansion: ExpansionParams::default(),
            spatial: SpatialParams::default(),
            segments: Default::default(),
            toll: Default::default(),
            design: Default::default(),
        }
    }
}

impl Settings {
    /// Parses the text of a study.toml.
    pub fn parse(text: &str) -> Result<Settings, InputError> {
        let s: Settings = toml::from_str(text).map_err(|e| InputError::BadConfig {
            path: PathBuf::from(SETTINGS_FILE),
            // An unknown key gets its closest valid key; any other TOML message keeps its
            // lines: line, column and a caret under the fault.
            reason: suggest::unknown_key_message(text, &e)
                .unwrap_or_else(|| e.to_string().trim_end().to_string()),
        })?;
        s.validate()?;
        Ok(s)
    }

    /// Checks the values that types alone do not bound, before any work starts.
    pub fn validate(&self) -> Result<(), InputError> {
        let bad = |reason: String| InputError::BadConfig {
            path: PathBuf::from(SETTINGS_FILE),
            reason,
        };
        if let Some(y) = self.year {
            if !(1900..=2200).contains(&y) {
                return Err(bad(format!(
                    "year = {y} is not a plausible study year (1900-2200)"
                )));
            }
        }
        let m = self.max_rejected_share;
        if !(0.0..=1.0).contains(&m) {
            return Err(bad(format!(
                "max_rejected_share = {m} is a share of a file's rows: it must be in [0, 1]"
            )));
        }
        let m = self.max_fallback_share;
        if !(0.0..=1.0).contains(&m) {
            return Err(bad(format!(
                "max_fallback_share = {m} is a share of a stage's segments or counts: it must be in [0, 1]"
            )));
        }
        let c = self.qc.min_coverage;
        if !(c > 0.0 && c <= 1.0) {
            return Err(bad(format!(
                "[qc] min_coverage = {c} is a share of the day's quarter-hours: it must be in (0, 1]"
            )));
        }
        if self.spatial.neighbours < 3 {
            return Err(bad(format!(
                "[spatial] neighbours = {} counted segments is too few for a kriging system with a drift: at least 3",
                self.spatial.neighbours
            )));
        }
        let full = self.spatial.full_model_min_counts;
        let terms = crate::spatial::stage::FULL_MODEL_TERMS;
        if full <= terms {
            return Err(bad(format!(
                "[spatial] full_model_min_counts = {full} counted segments cannot fit the full drift model's {terms} coefficients with any residual freedom: at least {}",
                terms + 1
            )));
        }
        if self.spatial.betweenness_origins == 0 {
            return Err(bad(
                "[spatial] betweenness_origins = 0: at least one origin is needed".to_string(),
            ));
        }
        let p = self.toll.detectable_pct;
        if !(p > 0.0 && p.is_finite()) {
            return Err(bad(format!(
                "[toll] detectable_pct = {p} is the billing discrepancy an audit must detect: it must be a finite percentage > 0"
            )));
        }
        let g = &self.segments;
        let r = g.share_borrow_reach_km;
        if !(r > 0.0 && r <= 1000.0) {
            return Err(bad(format!(
                "[segments] share_borrow_reach_km = {r} is a distance along a route: it must be in (0, 1000] km"
            )));
        }
        for (key, v) in [
            ("counter_d_cv", g.counter_d_cv),
            ("counter_phf_cv", g.counter_phf_cv),
            ("short_count_d_cv", g.short_count_d_cv),
            ("short_count_share_cv", g.short_count_share_cv),
            ("peak_ratio_cv", g.peak_ratio_cv),
        ] {
            if !(0.0..=1.0).contains(&v) {
                return Err(bad(format!(
                    "[segments] {key} = {v} is a relative standard deviation: it must be in [0, 1]"
                )));
            }
        }
        if let Some(z) = &self.time_zone {
            z.parse::<chrono_tz::Tz>().map_err(|_| {
                bad(format!(
                    "time_zone = {z:?} is not an IANA time-zone name (such as \"America/New_York\" or \"Europe/Berlin\")"
                ))
            })?;
        }
        for h in &self.qc.holidays {
            h.parse::<crate::qc::calendar::Holiday>()
                .map_err(|e| bad(format!("[qc] holidays: {e}")))?;
        }
        Ok(())
    }

    /// How the reader treats what the files leave open (after [`Settings::validate`]).
    pub fn read_options(&self) -> input::ReadOptions {
        input::ReadOptions {
            time_zone: self.time_zone.as_deref().and_then(|z| z.parse().ok()),
        }
    }

    /// Reads the study's study.toml, or the defaults when it has none.
    pub fn load(study: &Path) -> Result<Settings, InputError> {
        match input::read_settings_text(study)? {
            Some(text) => Settings::parse(&text),
            None => Ok(Settings::default()),
        }
    }

    /// A complete study.toml with every key at its default.
    pub fn defaults_toml() -> String {
        let body = toml::to_string_pretty(&Settings::default()).expect("settings serialise");
        format!(
            "# roadtally study.toml: every key with its default value.\n\
             # `year` is absent by default: the study year is then the calendar year holding\n\
             # the most permanent-counter records. Each table's keys are documented in the\n\
             # README (section Settings) and in the code of the stage that uses them.\n\
             # year = 2025\n\n{body}"
        )
    }
}

/// A validated run configuration.
#[derive(Debug, Clone)]
pub struct Config {
    /// Study folder.
    pub study: PathBuf,
    /// Output folder (for `run`).
    pub out: Option<PathBuf>,
    /// Settings after merging study.toml and command-line options.
    pub settings: Settings,
    /// No progress bars and no summary.
    pub quiet: bool,
}

impl Config {
    /// Builds the configuration for a study; `year` from the command line overrides study.toml.
    pub fn new(
        study: &Path,
        out: Option<&Path>,
        year: Option<i32>,
        quiet: bool,
    ) -> Result<Config, InputError> {
        let mut settings = Settings::load(study)?;
        if year.is_some() {
            settings.year = year;
            settings.validate()?;
        }
        Ok(Config {
            study: study.to_path_buf(),
            out: out.map(Path::to_path_buf),
            settings,
            quiet,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unknown_keys_are_reported_with_their_name() {
        let e = Settings::parse("yaer = 2025").unwrap_err().to_string();
        assert!(e.contains("study.toml") && e.contains("yaer"), "{e}");
        assert_eq!(Settings::parse("year = 2024").unwrap().year, Some(2024));
        assert_eq!(Settings::parse("").unwrap().year, None);
    }

    /// Every table and key of the settings type, misspelt by swapping two adjacent letters,
    /// is rejected with the original offered; so is a misspelt table name.
    #[test]
    fn every_misspelt_key_gets_its_own_name_suggested() {
        fn swap(k: &str) -> String {
            let mut c: Vec<char> = k.chars().collect();
            let i = (1..c.len())
                .find(|&i| c[i] != c[i - 1])
                .expect("two letters");
            c.swap(i - 1, i);
            c.into_iter().collect()
        }
        fn walk(v: &toml::Value, path: &[String], out: &mut Vec<(Vec<String>, String, bool)>) {
            for (k, v) in v.as_table().unwrap() {
                let table = matches!(v, toml::Value::Table(_));
                out.push((path.to_vec(), k.clone(), table));
                if table {
                    let mut p = path.to_vec();
                    p.push(k.clone());
                    walk(v, &p, out);
                }
            }
        }
        let mut keys = Vec::new();
        walk(
            &toml::Value::try_from(Settings::default()).unwrap(),
            &[],
            &mut keys,
        );
        // Keys whose default is "none" are not in the serialised defaults.
        keys.push((vec![], "year".into(), false));
        keys.push((vec!["toll".into()], "light_per_vkm".into(), false));
        let mut checked = 0;
        for (path, key, is_table) in keys {
            let bad = swap(&key);
            let text = match (path.is_empty(), is_table) {
                (_, true) => format!(
                    "year = 2025\n[{}]\n",
                    [path.clone(), vec![bad.clone()]].concat().join(".")
                ),
                (true, false) => format!("year = 2025\n{bad} = 1\n"),
                (false, false) => format!("year = 2025\n[{}]\n{bad} = 1\n", path.join(".")),
            };
            let e = Settings::parse(&text).unwrap_err().to_string();
            assert!(
                e.starts_with("study.toml: line ")
                    && e.contains(&format!("unknown key `{bad}`; did you mean `{key}`?")),
                "{text}\n{e}"
            );
            checked += 1;
        }
        assert!(checked > 80, "{checked} keys");
        let e = Settings::parse("[spatial]\nneighbors = 8\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("line 2, column 1: unknown key `neighbors`; did you mean `neighbours`?\n"),
            "{e}"
        );
        assert!(e.contains("2 | neighbors = 8\n  | ^^^^^^^^^"), "{e}");
        let e = Settings::parse("[spatial]\ncolour = 8\n")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("the keys here are `neighbours`, `route_reach_km`"),
            "{e}"
        );
    }

    /// Every key, not one: the printed defaults parse back to the same settings.
    #[test]
    fn toml_errors_keep_line_and_column_and_zones_are_checked() {
        let e = Settings::parse("year = 2025\nmax_rejected_share = \"x\"\n")
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 2, column") && e.contains('\n'), "{e}");
        let e = Settings::parse("time_zone = \"Mars/Olympus\"")
            .unwrap_err()
            .to_string();
        assert!(e.contains("Mars/Olympus") && e.contains("IANA"), "{e}");
        let s = Settings::parse("time_zone = \"America/Chicago\"").unwrap();
        assert!(s.read_options().time_zone.is_some());
    }

    /// The switches of the spatial and segment stages are range-checked by name.
    #[test]
    fn model_switches_and_cvs_are_range_checked() {
        for (text, needle) in [
            (
                "[spatial]\nfull_model_min_counts = 17",
                "full_model_min_counts = 17",
            ),
            ("[segments]\ncounter_d_cv = 1.5", "counter_d_cv = 1.5"),
            (
                "[segments]\nshort_count_share_cv = -0.1",
                "short_count_share_cv",
            ),
            (
                "[segments]\nshare_borrow_reach_km = 0.0",
                "share_borrow_reach_km",
            ),
            ("[toll]\ndetectable_pct = 0.0", "detectable_pct = 0"),
        ] {
            let e = Settings::parse(text).unwrap_err().to_string();
            assert!(e.contains(needle), "{text}: {e}");
        }
        let s = Settings::parse(
            "[spatial]\nfull_model_min_counts = 18\n[segments]\npeak_ratio_cv = 0.0",
        )
        .unwrap();
        assert_eq!(s.spatial.full_model_min_counts, 18);
        assert_eq!(s.segments.peak_ratio_cv, 0.0);
    }

    #[test]
    fn the_printed_defaults_parse_back() {
        let text = Settings::defaults_toml();
        let s = Settings::parse(&text).expect("defaults parse");
        let again = toml::to_string_pretty(&s).unwrap();
        assert_eq!(again, toml::to_string_pretty(&Settings::default()).unwrap());
    }

    /// The README's settings tables (section "Settings (study.toml)", one `### [table]`
    /// heading per table, one `| `key` |` row per key) and the settings type agree: every key
    /// the type has is documented under its table, and every documented key is accepted.
    #[test]
    fn the_readme_documents_every_setting() {
        use std::collections::BTreeSet;
        let readme = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md"))
            .expect("README.md");
        let section = readme
            .split("## Settings (study.toml)")
            .nth(1)
            .expect("settings section")
            .split("\n## ")
            .next()
            .unwrap();
        let mut documented: BTreeSet<(String, String)> = BTreeSet::new();
        let mut optional: BTreeSet<(String, String)> = BTreeSet::new();
        let mut table = String::new();
        for line in section.lines() {
            if let Some(h) = line.strip_prefix("### ") {
                table = h
                    .trim_matches(|c| c == '`' || c == '[' || c == ']')
                    .to_string();
                if table == "Top level" {
                    table.clear();
                }
            } else if let Some(rest) = line.strip_prefix("| `") {
                let key = rest.split('`').next().unwrap().to_string();
                let default = rest.split('|').nth(1).unwrap_or("").trim();
                if default == "none" {
                    optional.insert((table.clone(), key.clone()));
                }
                documented.insert((table.clone(), key));
            }
        }
        // Keys of the type: the serialised defaults (keys without a default are absent there).
        fn walk(v: &toml::Value, table: &str, out: &mut BTreeSet<(String, String)>) {
            for (k, v) in v.as_table().unwrap() {
                match v {
                    toml::Value::Table(_) => {
                        let t = if table.is_empty() {
                            k.clone()
                        } else {
                            format!("{table}.{k}")
                        };
                        walk(v, &t, out);
                    }
                    _ => {
                        out.insert((table.to_string(), k.clone()));
                    }
                }
            }
        }
        let mut typed = BTreeSet::new();
        walk(
            &toml::Value::try_from(Settings::default()).unwrap(),
            "",
            &mut typed,
        );
        let undocumented: Vec<_> = typed.difference(&documented).collect();
        assert!(
            undocumented.is_empty(),
            "settings missing from the README: {undocumented:?}"
        );
        for (table, key) in documented.difference(&typed) {
            assert!(
                optional.contains(&(table.clone(), key.clone())),
                "README documents [{table}] {key} with a default, but the settings have no such key"
            );
            let accepted = ["2025", "1.0", "true", "\"UTC\""].iter().any(|v| {
                let text = if table.is_empty() {
                    format!("{key} = {v}")
                } else {
                    format!("[{table}]\n{key} = {v}")
                };
                Settings::parse(&text).is_ok()
            });
            assert!(
                accepted,
                "README documents [{table}] {key}, which study.toml rejects"
            );
        }
    }
}
