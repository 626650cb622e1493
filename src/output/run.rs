//! The `run` command as one library call: settings, the pipeline, the output set and the
//! alarms, ending in the exit code of the data contract. The binary calls [`run_study`] and
//! prints; tests call it in-process and get the same outcome and code as the binary.

use std::path::Path;

use super::{write_all, OutputError, RunReport};
use crate::config::Config;
use crate::input::InputError;
use crate::pipeline::{self, PipelineError};

/// Why a run could not finish (exit code 2, nothing written).
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The settings or the study folder could not be read.
    #[error(transparent)]
    Input(#[from] InputError),
    /// A stage could not run.
    #[error(transparent)]
    Pipeline(#[from] PipelineError),
    /// The output set could not be written (the folder is left as it was).
    #[error(transparent)]
    Output(#[from] OutputError),
}

/// A finished run: what it wrote and the alarms that fired.
#[derive(Debug, Clone)]
pub struct RunOutcome {
    /// The configuration it ran with.
    pub config: Config,
    /// What was read and written.
    pub report: RunReport,
    /// Data-loss and foundation alarms (each makes the exit code 1).
    pub alarms: Vec<String>,
}

impl RunOutcome {
    /// `0` done, `1` done but an alarm fired.
    pub fn exit_code(&self) -> u8 {
        u8::from(!self.alarms.is_empty())
    }
}

/// The exit code of a run's result: `0` done, `1` done with an alarm, `2` could not run.
pub fn exit_code(result: &Result<RunOutcome, RunError>) -> u8 {
    result.as_ref().map_or(2, RunOutcome::exit_code)
}

/// `roadtally run <study> --out <out> [--year <year>]`: reads the settings (the year from the
/// command line beating study.toml), refuses an output folder in or around the study,
/// computes every stage, writes the whole output set into `out` and names the alarms.
pub fn run_study(
    study: &Path,
    out: &Path,
    year: Option<i32>,
    quiet: bool,
) -> Result<RunOutcome, RunError> {
    let config = Config::new(study, Some(out), year, quiet)?;
    super::place::check_target(study, out)?;
    let progress = crate::progress::Progress::new(quiet);
    let results = pipeline::compute_with(&config, &progress)?;
    let report = crate::progress::step(&progress, "writing outputs", || {
        write_all(&results, &config.settings, out)
    })?;
    let alarms = pipeline::alarms(&results, &config.settings);
    Ok(RunOutcome {
        config,
        report,
        alarms,
    })
}
