//! Progress on a terminal, silence elsewhere.
//!
//! Bars count in one unit throughout: a byte bar's total is the size of the files on disk and
//! its position the bytes read from disk (compressed bytes for gzip files, so the two agree).
//! Steps without a natural count (quality control, calibration, kriging, writing) show a
//! spinner with the step's name. Nothing is drawn when stderr is not a terminal or `--quiet`
//! is set. [`Progress::recording`] keeps what a terminal would have shown, so the totals can be
//! tested without one.

use std::io::IsTerminal;
use std::sync::{Arc, Mutex};
use std::time::Duration;

use indicatif::{ProgressBar, ProgressStyle};

/// What one bar showed, as a recording keeps it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Recorded {
    /// The bar's label.
    pub label: String,
    /// Its total (`None` for a spinner).
    pub total: Option<u64>,
    /// Its position when it finished (or now).
    pub position: u64,
    /// The largest position it reached.
    pub peak: u64,
    /// How many times it moved (so a test can tell a bar that advanced while reading from
    /// one that jumped to its end).
    pub updates: u64,
    /// Whether it was finished.
    pub finished: bool,
}

/// Where bars go.
#[derive(Debug, Clone)]
enum Sink {
    Hidden,
    Terminal,
    Record(Arc<Mutex<Vec<Recorded>>>),
}

/// Decides once whether progress is shown, and hands out bars.
#[derive(Debug, Clone)]
pub struct Progress {
    sink: Sink,
}

impl Progress {
    /// Bars are shown when stderr is a terminal and `quiet` is off.
    pub fn new(quiet: bool) -> Progress {
        if Self::shown(quiet, std::io::stderr().is_terminal()) {
            Progress {
                sink: Sink::Terminal,
            }
        } else {
            Progress::hidden()
        }
    }

    /// The rule: shown only on a terminal, and never with `quiet`.
    pub fn shown(quiet: bool, terminal: bool) -> bool {
        terminal && !quiet
    }

    /// No bars at all (tests, library use).
    pub fn hidden() -> Progress {
        Progress { sink: Sink::Hidden }
    }

    /// Bars that draw nothing but are kept, for tests: see [`Progress::recorded`].
    pub fn recording() -> Progress {
        Progress {
            sink: Sink::Record(Arc::default()),
        }
    }

    /// What a recording progress kept, one entry per bar in the order they were made.
    pub fn recorded(&self) -> Vec<Recorded> {
        match &self.sink {
            Sink::Record(r) => r.lock().expect("progress record").clone(),
            _ => Vec::new(),
        }
    }

    /// A bar over `total` bytes.
    pub fn bytes(&self, label: &str, total: u64) -> Bar {
        self.bar(
            label,
            Some(total),
            "{msg:>16} [{bar:30}] {bytes}/{total_bytes} ({eta})",
        )
    }

    /// A bar over `total` items.
    pub fn items(&self, label: &str, total: u64) -> Bar {
        self.bar(
            label,
            Some(total),
            "{msg:>16} [{bar:30}] {pos}/{len} ({eta})",
        )
    }

    /// A spinner for a step without a count; it ticks on its own until finished.
    pub fn spinner(&self, label: &str) -> Bar {
        self.bar(label, None, "{msg:>16} {spinner} {elapsed}")
    }

    fn bar(&self, label: &str, total: Option<u64>, template: &str) -> Bar {
        match &self.sink {
            Sink::Hidden => Bar(Inner::Hidden),
            Sink::Record(r) => {
                let mut list = r.lock().expect("progress record");
                list.push(Recorded {
                    label: label.to_string(),
                    total,
                    position: 0,
                    peak: 0,
                    updates: 0,
                    finished: false,
                });
                Bar(Inner::Record(Arc::clone(r), list.len() - 1))
            }
            Sink::Terminal => {
                let pb = match total {
                    Some(t) => ProgressBar::new(t),
                    None => ProgressBar::new_spinner(),
                };
                pb.set_style(
                    ProgressStyle::with_template(template)
                        .expect("valid template")
                        .progress_chars("=> "),
                );
                pb.set_message(label.to_string());
                if total.is_none() {
                    pb.enable_steady_tick(Duration::from_millis(120));
                }
                Bar(Inner::Terminal(pb))
            }
        }
    }
}

#[derive(Debug, Clone)]
enum Inner {
    Hidden,
    Terminal(ProgressBar),
    Record(Arc<Mutex<Vec<Recorded>>>, usize),
}

/// A progress bar or spinner that may be hidden.
#[derive(Debug, Clone)]
pub struct Bar(Inner);

impl Bar {
    /// A bar that shows nothing.
    pub fn hidden() -> Bar {
        Bar(Inner::Hidden)
    }

    /// Advances by `n`.
    pub fn inc(&self, n: u64) {
        match &self.0 {
            Inner::Hidden => {}
            Inner::Terminal(b) => b.inc(n),
            Inner::Record(r, i) => {
                let mut list = r.lock().expect("progress record");
                let e = &mut list[*i];
                e.position += n;
                e.peak = e.peak.max(e.position);
                e.updates += 1;
            }
        }
    }

    /// The current position (0 when hidden).
    pub fn position(&self) -> u64 {
        match &self.0 {
            Inner::Hidden => 0,
            Inner::Terminal(b) => b.position(),
            Inner::Record(r, i) => r.lock().expect("progress record")[*i].position,
        }
    }

    /// Moves back or forth to `pos` (a step that is redone from an earlier point).
    pub fn set_position(&self, pos: u64) {
        match &self.0 {
            Inner::Hidden => {}
            Inner::Terminal(b) => b.set_position(pos),
            Inner::Record(r, i) => {
                let mut list = r.lock().expect("progress record");
                let e = &mut list[*i];
                e.position = pos;
                e.peak = e.peak.max(pos);
                e.updates += 1;
            }
        }
    }

    /// Clears the bar.
    pub fn finish(&self) {
        match &self.0 {
            Inner::Hidden => {}
            Inner::Terminal(b) => b.finish_and_clear(),
            Inner::Record(r, i) => r.lock().expect("progress record")[*i].finished = true,
        }
    }
}

/// Runs `f` under a spinner named `label`: the spinner goes when `f` returns.
pub fn step<T>(progress: &Progress, label: &str, f: impl FnOnce() -> T) -> T {
    let bar = progress.spinner(label);
    let out = f();
    bar.finish();
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shown_only_on_a_terminal_without_quiet() {
        assert!(Progress::shown(false, true));
        assert!(!Progress::shown(true, true));
        assert!(!Progress::shown(false, false));
        assert!(!Progress::shown(true, false));
    }

    #[test]
    fn a_recording_keeps_totals_and_positions() {
        let p = Progress::recording();
        let b = p.bytes("reading", 100);
        b.inc(60);
        b.set_position(10);
        b.inc(90);
        b.finish();
        p.spinner("kriging").finish();
        let r = p.recorded();
        assert_eq!(r.len(), 2);
        assert_eq!(
            (r[0].total, r[0].position, r[0].peak),
            (Some(100), 100, 100)
        );
        assert!(r[0].finished);
        assert_eq!(r[1].total, None);
    }
}
