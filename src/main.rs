//! Thin binary: parse arguments, build the configuration, run the pipeline, map the outcome
//! to the contract's exit code (0 done, 1 done with an alarm, 2 could not run).

use std::process::ExitCode;

use clap::Parser;
use roadtally::cli::{Cli, Command};
use roadtally::config::Config;
use roadtally::demo::{self, DemoParams};
use roadtally::pipeline;

fn main() -> ExitCode {
    let cli = Cli::parse();
    match dispatch(&cli) {
        Ok(code) => ExitCode::from(code),
        Err(e) => {
            eprintln!("roadtally: error: {e:#}");
            ExitCode::from(2)
        }
    }
}

/// A table as aligned text for the terminal.
fn table_text(t: &roadtally::output::Table) -> String {
    use roadtally::output::table::cell_text;
    let cells: Vec<Vec<String>> =
        std::iter::once(t.columns.iter().map(|c| c.name.clone()).collect())
            .chain(t.rows.iter().map(|r| {
                r.iter()
                    .zip(&t.columns)
                    .map(|(c, col)| cell_text(c, col.format))
                    .collect()
            }))
            .collect();
    let widths: Vec<usize> = (0..t.columns.len())
        .map(|i| cells.iter().map(|r| r[i].len()).max().unwrap_or(0))
        .collect();
    cells
        .iter()
        .map(|r| {
            r.iter()
                .zip(&widths)
                .map(|(c, w)| format!("{c:>w$}"))
                .collect::<Vec<_>>()
                .join("  ")
                + "\n"
        })
        .collect()
}

fn dispatch(cli: &Cli) -> anyhow::Result<u8> {
    match &cli.command {
        Command::Check { study, year } => {
            let config = Config::new(study, None, *year, cli.quiet)?;
            let report = pipeline::check(&config)?;
            if !cli.quiet {
                print!("{report}");
            }
            let alarms = report.loss_alarms(config.settings.max_rejected_share);
            for a in &alarms {
                eprintln!("alarm: {a}");
            }
            Ok(u8::from(!alarms.is_empty()))
        }
        Command::Run { study, out, year } => {
            let outcome = roadtally::output::run::run_study(study, out, *year, cli.quiet)?;
            let report = &outcome.report;
            if !cli.quiet {
                print!("{}", report.check);
                let q = &report.qc;
                println!(
                    "quality control: {} direction-days, {} clean, {} flagged, {} rejected",
                    q.direction_days, q.clean, q.flagged, q.rejected
                );
                let [c, s, e] = report.basis_counts;
                println!(
                    "segments: {c} from permanent counters, {s} from short counts, {e} estimated"
                );
                let fb: Vec<String> = report
                    .fallbacks
                    .iter()
                    .map(|(stage, n, of, unit)| format!("{stage} {n} of {of} {unit}"))
                    .collect();
                println!("fallbacks (diagnostics.csv): {}", fb.join(", "));
                let [p, c] = report.design_gaps;
                if p + c > 0 {
                    println!(
                        "design inputs: {p} segments without pavement inputs, {c} without capacity inputs (design_inputs.csv says why)"
                    );
                }
                if let Some((v, lo, hi)) = report.network_vkt {
                    println!(
                        "network daily VKT: {v:.0} veh-km/day (95 % {lo:.0} to {hi:.0}, segments independent)"
                    );
                }
                print!(
                    "\nshort-count calibration\n{}",
                    table_text(&report.calibration)
                );
                print!(
                    "\ncross-validation of uncounted-segment estimates\n{}",
                    table_text(&report.cross_validation)
                );
                println!(
                    "\nwrote {} files to {}",
                    report.written.len(),
                    out.display()
                );
            }
            for a in &outcome.alarms {
                eprintln!("alarm: {a}");
            }
            Ok(outcome.exit_code())
        }
        Command::Calibrate { study, out, year } => {
            let config = Config::new(study, None, *year, cli.quiet)?;
            if let Some(out) = out {
                roadtally::output::place::check_target(study, out)?;
            }
            let r = pipeline::compute(&config)?;
            let table = roadtally::output::tables::calibration_table(&r.calibration);
            print!("{}", table_text(&table));
            if let Some(out) = out {
                roadtally::output::ensure_dir(out)?;
                roadtally::output::csv_out::write(out, &table)?;
            }
            Ok(0)
        }
        Command::Config { .. } => {
            print!("{}", roadtally::config::Settings::defaults_toml());
            Ok(0)
        }
        Command::Demo { out, seed, size } => {
            let params = DemoParams::new(*seed, *size);
            let summary = demo::generate(&params, out)?;
            if !cli.quiet {
                println!(
                    "wrote a demo study to {}: {} segments, {} permanent and {} short-count stations, {} count rows, {} injected faults",
                    out.display(),
                    summary.segments,
                    summary.stations_continuous,
                    summary.stations_short,
                    summary.count_rows,
                    summary.faults
                );
            }
            Ok(0)
        }
        Command::Bench { dir, regenerate } => {
            print!("{}", roadtally::bench::run_bench(dir, *regenerate)?);
            Ok(0)
        }
    }
}
