//! Typed diagnostics a stage returns beside its results: how many of the units it handled
//! (segments, short counts) fell back from its method to a cruder substitute, and why. The
//! run publishes them (`diagnostics.csv`, the terminal summary, the manifest) and raises an
//! alarm when a stage falls back for more than a material share of its units.

/// One kind of event a stage counts.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DiagnosticCount {
    /// What happened, in a few words (`regression only: kriging system failed`).
    pub kind: String,
    /// Units it happened to.
    pub count: usize,
    /// Whether it is a fallback from the stage's method (counts toward the alarm), or only
    /// reported (a documented default that is the method, such as the HCM default PHF).
    pub fallback: bool,
}

/// A stage's diagnostics.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct StageDiagnostics {
    /// The stage (`factors`, `expansion`, `spatial`, `design`).
    pub stage: &'static str,
    /// What the stage counts in (`segments`, `short counts`).
    pub unit: &'static str,
    /// Units the stage handled.
    pub total: usize,
    /// Units with at least one fallback (a unit with two kinds counts once).
    pub fallback_units: usize,
    /// Counts per kind.
    pub items: Vec<DiagnosticCount>,
}

impl StageDiagnostics {
    /// Empty diagnostics of `stage`, counted in `unit`.
    pub fn new(stage: &'static str, unit: &'static str) -> StageDiagnostics {
        StageDiagnostics {
            stage,
            unit,
            ..StageDiagnostics::default()
        }
    }

    /// Records one unit and the kinds that happened to it (`(kind, is_fallback)`).
    pub fn record<'a>(&mut self, kinds: impl IntoIterator<Item = (&'a str, bool)>) {
        self.total += 1;
        let mut fell_back = false;
        for (kind, fallback) in kinds {
            fell_back |= fallback;
            match self.items.iter_mut().find(|i| i.kind == kind) {
                Some(i) => i.count += 1,
                None => self.items.push(DiagnosticCount {
                    kind: kind.to_string(),
                    count: 1,
                    fallback,
                }),
            }
        }
        self.fallback_units += usize::from(fell_back);
    }

    /// Share of units that fell back (0 when the stage handled none).
    pub fn fallback_share(&self) -> f64 {
        if self.total == 0 {
            0.0
        } else {
            self.fallback_units as f64 / self.total as f64
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_unit_with_two_fallbacks_counts_once() {
        let mut d = StageDiagnostics::new("s", "segments");
        d.record([("a", true), ("b", true)]);
        d.record([("info", false)]);
        d.record([]);
        d.record([("a", true)]);
        assert_eq!((d.total, d.fallback_units), (4, 2));
        assert_eq!(d.items.len(), 3);
        assert_eq!(d.items[0].count, 2);
        assert!((d.fallback_share() - 0.5).abs() < 1e-12);
    }
}
