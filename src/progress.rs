//! Progress bars on a terminal, silence elsewhere.

use std::io::IsTerminal;

use indicatif::{ProgressBar, ProgressStyle};

/// Decides once whether progress is shown, and hands out bars.
#[derive(Debug, Clone, Copy)]
pub struct Progress {
    visible: bool,
}

impl Progress {
    /// Bars are shown when stderr is a terminal and `quiet` is off.
    pub fn new(quiet: bool) -> Progress {
        Progress {
            visible: !quiet && std::io::stderr().is_terminal(),
        }
    }

    /// No bars at all (tests, library use).
    pub fn hidden() -> Progress {
        Progress { visible: false }
    }

    /// A bar over `total` bytes.
    pub fn bytes(&self, label: &str, total: u64) -> Bar {
        self.bar(
            label,
            total,
            "{msg:>16} [{bar:30}] {bytes}/{total_bytes} ({eta})",
        )
    }

    /// A bar over `total` items.
    pub fn items(&self, label: &str, total: u64) -> Bar {
        self.bar(label, total, "{msg:>16} [{bar:30}] {pos}/{len} ({eta})")
    }

    fn bar(&self, label: &str, total: u64, template: &str) -> Bar {
        if !self.visible {
            return Bar(None);
        }
        let pb = ProgressBar::new(total);
        pb.set_style(
            ProgressStyle::with_template(template)
                .expect("valid template")
                .progress_chars("=> "),
        );
        pb.set_message(label.to_string());
        Bar(Some(pb))
    }
}

/// A progress bar that may be hidden.
#[derive(Debug, Clone)]
pub struct Bar(Option<ProgressBar>);

impl Bar {
    /// Advances by `n`.
    pub fn inc(&self, n: u64) {
        if let Some(b) = &self.0 {
            b.inc(n);
        }
    }

    /// Clears the bar.
    pub fn finish(&self) {
        if let Some(b) = &self.0 {
            b.finish_and_clear();
        }
    }
}
