//! Run settings: command-line options merged with `study.toml`, then split into one
//! parameter struct per stage. One precedence rule: a command-line option beats study.toml,
//! which beats the documented default.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::input::{self, InputError, SETTINGS_FILE};

/// Everything `study.toml` may say. Every key has a default; unknown keys are an error so a
/// misspelt threshold is never silently ignored.
#[derive(Debug, Clone, Default, Serialize, Deserialize, PartialEq)]
#[serde(default, deny_unknown_fields)]
pub struct Settings {
    /// The study year. Default: the calendar year holding the most permanent-counter records.
    pub year: Option<i32>,
}

impl Settings {
    /// Parses the text of a study.toml.
    pub fn parse(text: &str) -> Result<Settings, InputError> {
        toml::from_str(text).map_err(|e| InputError::BadConfig {
            path: PathBuf::from(SETTINGS_FILE),
            reason: e.to_string().trim_end().replace('\n', " "),
        })
    }

    /// Reads the study's study.toml, or the defaults when it has none.
    pub fn load(study: &Path) -> Result<Settings, InputError> {
        match input::read_settings_text(study)? {
            Some(text) => Settings::parse(&text),
            None => Ok(Settings::default()),
        }
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
        assert_eq!(Settings::parse("").unwrap(), Settings::default());
    }
}
