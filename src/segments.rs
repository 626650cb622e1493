//! Assembly of the per-segment statistics from the stages: each segment's AADT comes from
//! its permanent counter, else its short counts, else the spatial estimate; class shares and
//! design-hour figures from the best source available, which the row names.

use crate::continuous::stage::ContinuousOutput;
use crate::expansion::stage::ExpansionOutput;
use crate::expansion::Z95;
use crate::factors::precision::FactorStats;
use crate::factors::stage::FactorOutput;
use crate::model::HistoryRecord;
use crate::model::{Network, StationList};
use crate::spatial::history::HistoryPoint;
use crate::spatial::stage::{Interval, Observation, ObservationKind, SpatialOutput};

/// Settings of the segment assembly (`[segments]` in study.toml): the uncertainty given to
/// figures measured without a spread of their own, and the reach of the same-road rule for
/// class shares.
#[derive(Debug, Clone, serde::Serialize, serde::Deserialize, PartialEq)]
#[serde(default, deny_unknown_fields)]
pub struct SegmentsParams {
    /// Reach along a route, km, within which a segment without a classified count takes the
    /// class shares of the nearest classified segment on the same route (the TMG's "same
    /// road" application, §2.5 of the references). Default 30 km, the spatial stage's
    /// `route_reach_km`: about the length over which a route's truck mix holds between major
    /// junctions (common practice, an assumption).
    pub share_borrow_reach_km: f64,
    /// Relative standard deviation of a permanent counter's measured D-factor. Default 0.02:
    /// D comes from one design hour of a whole counted year, so only its hour-to-hour noise
    /// remains; ±4 % at 95 % (an assumption, common practice; no published figure).
    pub counter_d_cv: f64,
    /// Relative standard deviation of a permanent counter's peak-hour factor. Default 0.02, as
    /// for D: the PHF is averaged over the counter's busiest hours of a whole year (an
    /// assumption, common practice).
    pub counter_phf_cv: f64,
    /// Relative standard deviation of the D-factor of short counts (the mean direction split
    /// of their peak hours). Default 0.05: a few days' peak hours vary more than a year's
    /// design hour (an assumption, common practice).
    pub short_count_d_cv: f64,
    /// Relative standard deviation of the class shares of a short classified count. Default
    /// 0.15: the day-to-day spread of a heavy share over a 24-48 h count (common practice).
    pub short_count_share_cv: f64,
    /// Coefficient of variation of the group's ratio K30 / peak-hour share when the group has
    /// fewer than two counters to measure it. Default 0.15 (an assumption, common practice:
    /// the K30 spread within a factor group is of that order, §3.1 of the references gives
    /// K 12-18 % on main rural highways).
    pub peak_ratio_cv: f64,
}

impl Default for SegmentsParams {
    fn default() -> Self {
        SegmentsParams {
            share_borrow_reach_km: 30.0,
            counter_d_cv: 0.02,
            counter_phf_cv: 0.02,
            short_count_d_cv: 0.05,
            short_count_share_cv: 0.15,
            peak_ratio_cv: 0.15,
        }
    }
}

/// Where a segment's AADT comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Basis {
    /// A permanent counter on the segment.
    Continuous,
    /// One or more short counts on the segment.
    ShortCount,
    /// No count: the spatial estimate.
    Estimated,
}

impl Basis {
    /// The contract's spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            Basis::Continuous => "continuous",
            Basis::ShortCount => "short_count",
            Basis::Estimated => "estimated",
        }
    }
}

/// A share or factor with its source and a 95 % interval.
#[derive(Debug, Clone, PartialEq)]
pub struct Sourced {
    /// The value.
    pub value: f64,
    /// Lower 95 % bound.
    pub lo95: f64,
    /// Upper 95 % bound.
    pub hi95: f64,
    /// Where it came from (`counter`, `short_count`, `group:<name>`, `network`).
    pub source: String,
}

impl Sourced {
    fn measured(value: f64, rel_sd: f64, source: &str) -> Sourced {
        Sourced {
            value,
            lo95: (value * (1.0 - Z95 * rel_sd)).max(0.0),
            hi95: value * (1.0 + Z95 * rel_sd),
            source: source.to_string(),
        }
    }

    /// From group statistics: the mean, with the spread of the group's stations as the
    /// interval for one new segment (`mean ± t·sd·sqrt(1 + 1/n)`; z when n < 2, with a 25 % CV).
    fn from_stats(st: &FactorStats, source: String) -> Sourced {
        let sd = if st.n >= 2 { st.sd } else { 0.25 * st.mean };
        let t = if st.n >= 2 {
            crate::factors::precision::t_quantile(0.975, (st.n - 1) as f64)
        } else {
            Z95
        };
        let half = t * sd * (1.0 + 1.0 / st.n.max(1) as f64).sqrt();
        Sourced {
            value: st.mean,
            lo95: (st.mean - half).max(0.0),
            hi95: st.mean + half,
            source,
        }
    }
}

/// The published statistics of one segment.
#[derive(Debug, Clone)]
pub struct SegmentRow {
    /// Segment index.
    pub segment: usize,
    /// Basis.
    pub basis: Basis,
    /// AADT with interval.
    pub aadt: Interval,
    /// AADT per direction (fwd, rev): see [`DirectionBasis`].
    pub aadt_dir: [Option<f64>; 2],
    /// Where the directional AADT comes from.
    pub direction_basis: DirectionBasis,
    /// Factor group name.
    pub group: String,
    /// Heavy (4-13), single-unit (4-7), combination (8-13) shares.
    pub heavy: Option<Sourced>,
    /// Single-unit share.
    pub single_unit: Option<Sourced>,
    /// Combination share.
    pub combination: Option<Sourced>,
    /// K-factor.
    pub k: Option<Sourced>,
    /// D-factor.
    pub d: Option<Sourced>,
    /// Peak-hour factor where measured at the segment's counter or its group.
    pub phf: Option<Sourced>,
    /// Design-hour heavy share where measured.
    pub design_hour_heavy: Option<f64>,
    /// The count behind the figure: year(s), type, hours, number of counts.
    pub count_years: String,
    /// Count type (`continuous`, `vehicles`, `axles`, `classified`).
    pub count_type: String,
    /// Hours of data behind the figure.
    pub count_hours: usize,
    /// Counts combined.
    pub counts: usize,
}

/// Where a segment's AADT per direction comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DirectionBasis {
    /// The permanent counter's own directional AADTs.
    Continuous,
    /// The AADT split by the short counts' own daily direction shares (hours-weighted).
    ShortCount,
    /// Half each way: a two-way road without directional counts carries close to half its
    /// daily traffic in each direction (common practice).
    EvenSplit,
    /// A one-way segment: all of it `fwd`.
    OneWay,
}

impl DirectionBasis {
    /// The spelling in `segment_statistics.csv`.
    pub fn as_str(self) -> &'static str {
        match self {
            DirectionBasis::Continuous => "continuous",
            DirectionBasis::ShortCount => "short_count",
            DirectionBasis::EvenSplit => "even_split",
            DirectionBasis::OneWay => "one_way",
        }
    }
}

/// Fills a row's directional AADT where no counter measured it (see [`DirectionBasis`]);
/// `fwd_share` is the short counts' share where they measured one.
fn split_directions(row: &mut SegmentRow, oneway: bool, fwd_share: Option<f64>) {
    let a = row.aadt.value;
    match (row.aadt_dir, oneway) {
        ([Some(_), Some(_)], _) => row.direction_basis = DirectionBasis::Continuous,
        (_, true) => {
            row.aadt_dir = [Some(a), Some(0.0)];
            row.direction_basis = DirectionBasis::OneWay;
        }
        (_, false) => {
            let (s, basis) = match fwd_share {
                Some(s) => (s, DirectionBasis::ShortCount),
                None => (0.5, DirectionBasis::EvenSplit),
            };
            row.aadt_dir = [Some(a * s), Some(a * (1.0 - s))];
            row.direction_basis = basis;
        }
    }
}

/// Observations for the spatial stage: every segment with a counter or a short count.
pub fn observations(
    network: &Network,
    stations: &StationList,
    cont: &ContinuousOutput,
    exp: &ExpansionOutput,
) -> Vec<Observation> {
    let mut obs = Vec::new();
    let mut seen = vec![false; network.segments.len()];
    for s in &cont.stations {
        let seg = stations.stations[s.station].segment;
        if !seen[seg] && s.aadt_value > 0.0 {
            seen[seg] = true;
            obs.push(Observation {
                segment: seg,
                log_aadt: s.aadt_value.ln(),
                meas_var: s.aadt_log_sd.powi(2),
                kind: ObservationKind::Counter,
            });
        }
    }
    for (&seg, c) in &exp.segments {
        if !seen[seg] && c.aadt > 0.0 {
            seen[seg] = true;
            obs.push(Observation {
                segment: seg,
                log_aadt: c.aadt.ln(),
                meas_var: c.log_sd.powi(2),
                kind: ObservationKind::ShortCount,
            });
        }
    }
    obs.sort_by_key(|o| o.segment);
    obs
}

/// Each segment's latest published AADT (`history.csv`) of a year before `year`, brought to
/// `year` with its factor group's growth: the spatial stage's history points.
pub fn history_points(
    network: &Network,
    history: &[HistoryRecord],
    factors: &FactorOutput,
    year: i32,
) -> Vec<HistoryPoint> {
    let mut latest: Vec<Option<&HistoryRecord>> = vec![None; network.segments.len()];
    for h in history.iter().filter(|h| h.year < year && h.aadt > 0.0) {
        let slot = &mut latest[h.segment];
        if slot.is_none_or(|l| h.year > l.year) {
            *slot = Some(h);
        }
    }
    latest
        .iter()
        .flatten()
        .map(|h| {
            let growth = &factors.groups[factors.segment_group[h.segment]].growth;
            HistoryPoint {
                segment: h.segment,
                year: h.year,
                log_now: h.aadt.ln() + growth.factor(h.year, year).factor.ln(),
                age: f64::from(year - h.year),
            }
        })
        .collect()
}

fn network_stats(
    factors: &FactorOutput,
    pick: impl Fn(&crate::factors::stage::Group) -> Option<&FactorStats>,
) -> Option<FactorStats> {
    // The group with the most stations stands for the network when a segment's group has none.
    factors
        .groups
        .iter()
        .filter_map(pick)
        .max_by_key(|s| s.n)
        .copied()
}

/// Class shares for segments without a classified count of their own: the nearest classified
/// segment on the same route within `reach_km` (the "same road" principle), else the group. Either
/// way the interval reflects how much heavy shares differ between segments: the standard
/// deviation of ln(heavy share) over the study's classified segments (at least 0.25; 0.5 when
/// fewer than three are classified).
fn borrow_shares(net: &Network, rows: &mut [SegmentRow], reach_km: f64) {
    let measured = |r: &SegmentRow| {
        r.heavy
            .as_ref()
            .is_some_and(|h| h.source == "counter" || h.source == "short_count")
    };
    let logs: Vec<f64> = rows
        .iter()
        .filter(|r| measured(r))
        .filter_map(|r| r.heavy.as_ref().map(|h| h.value))
        .filter(|v| *v > 0.0)
        .map(f64::ln)
        .collect();
    let s_b = if logs.len() >= 3 {
        let m = logs.iter().sum::<f64>() / logs.len() as f64;
        (logs.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (logs.len() - 1) as f64)
            .sqrt()
            .max(0.25)
    } else {
        0.5
    };
    let classified: Vec<bool> = rows.iter().map(measured).collect();
    let routes = crate::spatial::network_drift::RouteNeighbours::build(net, &classified, reach_km);
    let widen = |v: f64, source: String| Sourced {
        value: v,
        lo95: v * (-Z95 * s_b).exp(),
        hi95: (v * (Z95 * s_b).exp()).min(1.0),
        source,
    };
    let snapshot: Vec<(Option<Sourced>, Option<Sourced>, Option<Sourced>)> = rows
        .iter()
        .map(|r| {
            (
                r.heavy.clone(),
                r.single_unit.clone(),
                r.combination.clone(),
            )
        })
        .collect();
    for (i, r) in rows.iter_mut().enumerate() {
        if classified[i] {
            continue;
        }
        let nearest = routes.lists[i]
            .iter()
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(k, _)| *k);
        let (h, su, cu, source) = match nearest {
            Some(k) => (
                snapshot[k].0.clone(),
                snapshot[k].1.clone(),
                snapshot[k].2.clone(),
                format!("route:{}", net.segments[k].id),
            ),
            None => (
                r.heavy.clone(),
                r.single_unit.clone(),
                r.combination.clone(),
                String::new(),
            ),
        };
        let src = |x: &Option<Sourced>| {
            if source.is_empty() {
                x.as_ref().map_or(String::new(), |x| x.source.clone())
            } else {
                source.clone()
            }
        };
        r.heavy = h.as_ref().map(|x| widen(x.value, src(&h)));
        r.single_unit = su.as_ref().map(|x| widen(x.value, src(&su)));
        r.combination = cu.as_ref().map(|x| widen(x.value, src(&cu)));
    }
}

/// What [`assemble`] reads: the stages whose figures a segment row brings together.
#[derive(Debug, Clone, Copy)]
pub struct SegmentsInput<'a> {
    /// The network.
    pub network: &'a Network,
    /// Every station (the segment of each counter).
    pub stations: &'a StationList,
    /// The permanent counters' statistics.
    pub continuous: &'a ContinuousOutput,
    /// The factor groups.
    pub factors: &'a FactorOutput,
    /// The expanded short counts.
    pub expansion: &'a ExpansionOutput,
    /// The uncounted-segment estimates.
    pub spatial: &'a SpatialOutput,
}

/// Builds every segment's row.
pub fn assemble(input: &SegmentsInput, params: &SegmentsParams) -> Vec<SegmentRow> {
    let (data, cont, factors, exp, spatial) = (
        input,
        input.continuous,
        input.factors,
        input.expansion,
        input.spatial,
    );
    let net = &data.network;
    let mut counter_of = vec![None; net.segments.len()];
    for (i, s) in cont.stations.iter().enumerate() {
        let seg = data.stations.stations[s.station].segment;
        if counter_of[seg].is_none() {
            counter_of[seg] = Some(i);
        }
    }
    let mut rows = (0..net.segments.len())
        .map(|seg| {
            let group = &factors.groups[factors.segment_group[seg]];
            let gname = format!("group:{}", group.name);
            let oneway = net.segments[seg].oneway;
            let from_group = |pick: fn(&crate::factors::stage::Group) -> Option<&FactorStats>| {
                pick(group)
                    .map(|st| Sourced::from_stats(st, gname.clone()))
                    .or_else(|| {
                        network_stats(factors, pick)
                            .map(|st| Sourced::from_stats(&st, "network".into()))
                    })
            };
            let mut fwd_share: Option<f64> = None;
            let mut row = SegmentRow {
                segment: seg,
                basis: Basis::Estimated,
                aadt: Interval {
                    value: f64::NAN,
                    lo95: f64::NAN,
                    hi95: f64::NAN,
                },
                aadt_dir: [None, None],
                direction_basis: DirectionBasis::EvenSplit,
                group: group.name.clone(),
                heavy: from_group(|g| g.heavy_share.as_ref()),
                single_unit: from_group(|g| g.single_unit_share.as_ref()),
                combination: from_group(|g| g.combination_share.as_ref()),
                k: from_group(|g| g.k30.as_ref()),
                d: if oneway {
                    Some(Sourced::measured(1.0, 0.0, "one_way"))
                } else {
                    from_group(|g| g.d.as_ref())
                },
                phf: from_group(|g| g.phf.as_ref()),
                design_hour_heavy: None,
                count_years: String::new(),
                count_type: String::new(),
                count_hours: 0,
                counts: 0,
            };
            if let Some(ci) = counter_of[seg] {
                let s = &cont.stations[ci];
                let h = Z95 * s.aadt_log_sd;
                row.basis = Basis::Continuous;
                row.aadt = Interval {
                    value: s.aadt_value,
                    lo95: s.aadt_value * (-h).exp(),
                    hi95: s.aadt_value * h.exp(),
                };
                row.aadt_dir = [0, 1].map(|i| {
                    s.by_direction[i]
                        .as_ref()
                        .map(|a| a.aashto.unwrap_or(a.simple))
                });
                if let Some(c) = &s.classes {
                    let m =
                        |v: Option<f64>| v.map(|x| Sourced::measured(x, s.aadt_log_sd, "counter"));
                    row.heavy = m(c.heavy_share).or(row.heavy);
                    row.single_unit = m(c.single_unit_share).or(row.single_unit);
                    row.combination = m(c.combination_share).or(row.combination);
                }
                if let Some(d) = &s.design {
                    row.k = Some(Sourced::measured(d.k30, s.aadt_log_sd, "counter"));
                    if s.d_measured && !oneway {
                        row.d = Some(Sourced::measured(d.d, params.counter_d_cv, "counter"));
                    }
                    row.design_hour_heavy = d.heavy_share;
                }
                if let Some(p) = s.phf {
                    row.phf = Some(Sourced::measured(p, params.counter_phf_cv, "counter"));
                }
                row.count_years = s.aadt.year.to_string();
                row.count_type = "continuous".into();
                row.count_hours = s.hours.len();
                row.counts = 1;
            } else if let Some(c) = exp.segments.get(&seg) {
                let h = Z95 * c.log_sd;
                row.basis = Basis::ShortCount;
                row.aadt = Interval {
                    value: c.aadt,
                    lo95: c.aadt * (-h).exp(),
                    hi95: c.aadt * h.exp(),
                };
                let counts: Vec<_> = c.counts.iter().map(|&i| &exp.counts[i]).collect();
                let mut years: Vec<i32> = counts.iter().map(|x| x.year).collect();
                years.sort();
                years.dedup();
                row.count_years = years
                    .iter()
                    .map(|y| y.to_string())
                    .collect::<Vec<_>>()
                    .join(" ");
                let mut kinds: Vec<&str> = counts
                    .iter()
                    .map(|x| {
                        if x.classified {
                            "classified"
                        } else {
                            x.measure
                        }
                    })
                    .collect();
                kinds.sort();
                kinds.dedup();
                row.count_type = kinds.join(" ");
                row.count_hours = counts.iter().map(|x| x.hours).sum();
                row.counts = counts.len();
                let shared: Vec<_> = counts.iter().filter(|x| x.fwd_share.is_some()).collect();
                let hours: usize = shared.iter().map(|x| x.hours).sum();
                if hours > 0 {
                    fwd_share = Some(
                        shared
                            .iter()
                            .filter_map(|x| x.fwd_share.map(|s| s * x.hours as f64))
                            .sum::<f64>()
                            / hours as f64,
                    );
                }
                // K from the counts' own busiest working-day hour, related to the design hour by
                // the group's ratio K30 / peak-hour share (its ranked-hour curve at rank 30);
                // D from the direction split of those peak hours.
                let peak_days: usize = counts.iter().map(|x| x.peak_days).sum();
                if let (Some(ratio), true) = (group.peak_ratio.as_ref(), peak_days > 0) {
                    let share = counts
                        .iter()
                        .filter_map(|x| x.daily_peak_share.map(|p| p * x.peak_days as f64))
                        .sum::<f64>()
                        / peak_days as f64;
                    let cv_r = if ratio.n >= 2 {
                        ratio.cv
                    } else {
                        params.peak_ratio_cv
                    };
                    // Day-to-day spread of a peak-hour share: 10 % (common practice).
                    let s = (cv_r * cv_r * (1.0 + 1.0 / ratio.n.max(1) as f64)
                        + 0.01 / peak_days as f64)
                        .sqrt();
                    let own = ratio.mean * share;
                    let (k, s, source) = match group.k30.as_ref().filter(|g| g.n >= 2) {
                        Some(g) => {
                            let (k, s) =
                                crate::expansion::calibration::shrink_k(own, s, g.mean, g.cv);
                            (k, s, "short_count+group")
                        }
                        None => (own, s, "short_count"),
                    };
                    row.k = Some(Sourced {
                        value: k,
                        lo95: k * (-Z95 * s).exp(),
                        hi95: k * (Z95 * s).exp(),
                        source: source.into(),
                    });
                }
                let ds: Vec<f64> = counts.iter().filter_map(|x| x.peak_d).collect();
                if !ds.is_empty() && !oneway {
                    let d = ds.iter().sum::<f64>() / ds.len() as f64;
                    row.d = Some(Sourced::measured(d, params.short_count_d_cv, "short_count"));
                }
                let classified: Vec<_> =
                    counts.iter().filter(|x| x.heavy_share.is_some()).collect();
                if !classified.is_empty() {
                    let n = classified.len() as f64;
                    let mean = |f: fn(&&&crate::expansion::stage::ExpandedCount) -> Option<f64>| {
                        classified.iter().filter_map(f).sum::<f64>() / n
                    };
                    // A short classified count's share carries its day-to-day spread.
                    let cv = params.short_count_share_cv;
                    row.heavy = Some(Sourced::measured(
                        mean(|x| x.heavy_share),
                        cv,
                        "short_count",
                    ));
                    row.single_unit = Some(Sourced::measured(
                        mean(|x| x.single_unit_share),
                        cv,
                        "short_count",
                    ));
                    row.combination = Some(Sourced::measured(
                        mean(|x| x.combination_share),
                        cv,
                        "short_count",
                    ));
                }
            } else if let Some(e) = &spatial.estimates[seg] {
                row.aadt = e.aadt;
                row.count_type = "none".into();
            }
            split_directions(&mut row, oneway, fwd_share);
            row
        })
        .collect::<Vec<_>>();
    borrow_shares(input.network, &mut rows, params.share_borrow_reach_km);
    rows
}
