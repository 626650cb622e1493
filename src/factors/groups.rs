//! Station factor profiles, factor groups (by rule and by Ward clustering), group factor
//! summaries with precision flags, and group axle-correction factors.
//!
//! # Method
//! - **Profile**: a station's 12 monthly factors and 7 day-of-week factors (TMG convention,
//!   factor = AADT / period average; see [`crate::continuous::aadt`]). Only stations whose
//!   year is usable for factors ([`crate::continuous::Sufficiency::usable_for_factors`])
//!   should have one.
//! - **Groups by rule** (project default mapping, names ours): functional class 1-2 →
//!   *freeway*, 3-4 → *arterial*, 5-7 → *collector/local*, each split *urban* / *rural*,
//!   giving `freeway_urban`, `freeway_rural`, `arterial_urban`, `arterial_rural`,
//!   `collector_local_urban`, `collector_local_rural`; plus `recreational`, which overrides
//!   the class when the station's **seasonal amplitude** `max_j MF_j / min_j MF_j`
//!   (= highest MADT / lowest MADT) is at least `recreational_amplitude` (default 1.8, a
//!   project choice: e.g. a summer month at 1.35 × AADT against a winter month at 0.75 ×).
//! - **Groups by data** (Ward hierarchical clustering, `kodama`): each of the 19 profile
//!   variables (or the 12 monthly only) is standardised across stations (z-score; a constant
//!   variable becomes 0), distances are Euclidean, linkage is Ward. **Number of groups**: with
//!   merge heights `h_1 ≤ … ≤ h_{N−1}` (the merge to `k−1` groups has height `h_{N−k+1}`),
//!   each `k` in `2..=k_max` whose every group has at least `n_min` stations is scored by the
//!   **relative jump** in merge height `h(k → k−1) / h(k+1 → k)` (the denominator floored at
//!   1e-9 × the largest height, and 0 for `k = N`); the `k` with the largest jump wins (the
//!   smaller `k` on ties): the dendrogram is cut just below the merge that is largest
//!   relative to the one before it (an elbow criterion; common practice, not a TMG rule).
//!   When no `k ≥ 2` qualifies, all stations form one group. Group numbers follow the
//!   lowest station index in each group. Precision is not part of the choice; it is
//!   reported per group by [`GroupSummary`]. With nested structure (one pattern far from
//!   two closer ones) the criterion picks the strongest level (k = 2); the analyst can
//!   then set [`ClusterParams::fixed_k`], and the scores and merge heights are returned
//!   for that judgement.
//! - **Group summary**: per factor, mean (the group factor), SD, CV, n and precision at 95 %
//!   (see [`super::precision`]); a group **misses the target** when any of its 19 factors
//!   has precision worse than the target (default ±10 %) or n < 2. TMG exempts recreational
//!   groups from the target; the flag is still computed and the caller decides.
//! - **Group ACF**: [`AcfPooling::MeanOfStations`] (default; the mean of station ACFs, like
//!   other group factors) or [`AcfPooling::RatioOfSums`] (`Σ vehicles / (Σ axles / 2)`,
//!   weighting stations by their counts).
//!
//! # Units
//! Factors dimensionless; amplitude a ratio ≥ 1.
//!
//! # References
//! - FHWA TMG 2013 §3.2.3 and TMG 2016 ch. 3 (factor groups; cluster, judgmental,
//!   recreational; from memory, `tests/fixtures/REFERENCES.md` §2.5); NCHRP Research Report 1124 (2024)
//!   summary on clustering versus functional-class grouping (read, `tests/fixtures/REFERENCES.md` §2.5).
//! - Ward clustering of standardised factor profiles: common practice (`tests/fixtures/REFERENCES.md` §2.5).
//! - Precision target ±10 % at 95 %: TMG (from memory, `tests/fixtures/REFERENCES.md` §2.6).

use kodama::{linkage, Method};

use super::precision::{
    required_sample_size, FactorStats, DEFAULT_CONFIDENCE, DEFAULT_TARGET_PRECISION,
};
use super::FactorError;
use crate::continuous::{AxleSample, StationFactors};

/// Urban or rural area: the network model's own type.
pub use crate::model::Area;

/// A station's factor profile: 12 monthly + 7 day-of-week factors.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorProfile {
    /// Station identifier.
    pub station_id: String,
    /// `MF_j`, 0 = January.
    pub monthly: [f64; 12],
    /// `DF_i`, 0 = Monday.
    pub day_of_week: [f64; 7],
}

impl FactorProfile {
    /// Profile from a station's factors.
    pub fn from_factors(station_id: impl Into<String>, f: &StationFactors) -> FactorProfile {
        FactorProfile {
            station_id: station_id.into(),
            monthly: f.monthly,
            day_of_week: f.day_of_week,
        }
    }

    /// The 19 values, monthly first.
    pub fn values(&self) -> [f64; 19] {
        let mut v = [0.0; 19];
        v[..12].copy_from_slice(&self.monthly);
        v[12..].copy_from_slice(&self.day_of_week);
        v
    }

    /// Seasonal amplitude `max MF / min MF` (= highest MADT / lowest MADT).
    pub fn seasonal_amplitude(&self) -> f64 {
        let max = self.monthly.iter().copied().fold(f64::MIN, f64::max);
        let min = self.monthly.iter().copied().fold(f64::MAX, f64::min);
        max / min
    }

    fn check(&self) -> Result<(), FactorError> {
        if self.values().iter().all(|v| v.is_finite() && *v > 0.0) {
            Ok(())
        } else {
            Err(FactorError::BadProfile {
                station_id: self.station_id.clone(),
            })
        }
    }
}

/// Factor groups formed by rule from functional class and area.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum RuleGroup {
    /// Functional class 1-2, urban.
    FreewayUrban,
    /// Functional class 1-2, rural.
    FreewayRural,
    /// Functional class 3-4, urban.
    ArterialUrban,
    /// Functional class 3-4, rural.
    ArterialRural,
    /// Functional class 5-7, urban.
    CollectorLocalUrban,
    /// Functional class 5-7, rural.
    CollectorLocalRural,
    /// High seasonal amplitude, any class.
    Recreational,
}

impl RuleGroup {
    /// All rule groups.
    pub const ALL: [RuleGroup; 7] = [
        RuleGroup::FreewayUrban,
        RuleGroup::FreewayRural,
        RuleGroup::ArterialUrban,
        RuleGroup::ArterialRural,
        RuleGroup::CollectorLocalUrban,
        RuleGroup::CollectorLocalRural,
        RuleGroup::Recreational,
    ];

    /// The group's name in outputs.
    pub fn name(self) -> &'static str {
        match self {
            RuleGroup::FreewayUrban => "freeway_urban",
            RuleGroup::FreewayRural => "freeway_rural",
            RuleGroup::ArterialUrban => "arterial_urban",
            RuleGroup::ArterialRural => "arterial_rural",
            RuleGroup::CollectorLocalUrban => "collector_local_urban",
            RuleGroup::CollectorLocalRural => "collector_local_rural",
            RuleGroup::Recreational => "recreational",
        }
    }
}

/// Parameters of grouping by rule.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct RuleGroupParams {
    /// Seasonal amplitude (`max MF / min MF`) from which a station is recreational
    /// (default 1.8; project choice).
    pub recreational_amplitude: f64,
}

impl Default for RuleGroupParams {
    fn default() -> Self {
        RuleGroupParams {
            recreational_amplitude: 1.8,
        }
    }
}

/// The rule group of a station or segment. `profile` is the station's own factor profile
/// when it has one (permanent counters); without it the recreational test is skipped.
pub fn rule_group(
    functional_class: u8,
    area: Area,
    profile: Option<&FactorProfile>,
    params: &RuleGroupParams,
) -> Result<RuleGroup, FactorError> {
    if let Some(p) = profile {
        if p.seasonal_amplitude() >= params.recreational_amplitude {
            return Ok(RuleGroup::Recreational);
        }
    }
    let urban = area == Area::Urban;
    Ok(match (functional_class, urban) {
        (1 | 2, true) => RuleGroup::FreewayUrban,
        (1 | 2, false) => RuleGroup::FreewayRural,
        (3 | 4, true) => RuleGroup::ArterialUrban,
        (3 | 4, false) => RuleGroup::ArterialRural,
        (5..=7, true) => RuleGroup::CollectorLocalUrban,
        (5..=7, false) => RuleGroup::CollectorLocalRural,
        (fc, _) => return Err(FactorError::BadFunctionalClass(fc)),
    })
}

/// Parameters of Ward clustering.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ClusterParams {
    /// Most groups considered (default 8).
    pub k_max: usize,
    /// Fewest stations a group may have (default 5, the low end of the TMG's 5-8 CCS per
    /// group).
    pub n_min: usize,
    /// Cluster on the 7 day-of-week factors as well as the 12 monthly ones (default true).
    pub include_day_of_week: bool,
    /// Analyst's override: cut the tree into exactly this many groups (clamped to
    /// `1..=N`), ignoring `k_max`, `n_min` and the jump criterion (default `None`).
    pub fixed_k: Option<usize>,
}

impl Default for ClusterParams {
    fn default() -> Self {
        ClusterParams {
            k_max: 8,
            n_min: 5,
            include_day_of_week: true,
            fixed_k: None,
        }
    }
}

/// Result of clustering station profiles.
#[derive(Debug, Clone, PartialEq)]
pub struct Clustering {
    /// Number of groups chosen.
    pub k: usize,
    /// Group of each profile (same order as the input), `0..k`.
    pub labels: Vec<usize>,
    /// Ward merge heights in ascending order (N − 1 values).
    pub merge_heights: Vec<f64>,
    /// `(k, relative jump)` of every admissible `k` considered, ascending `k`.
    pub scores: Vec<(usize, f64)>,
}

impl Clustering {
    /// Indices of the profiles in group `g`.
    pub fn members(&self, g: usize) -> Vec<usize> {
        (0..self.labels.len())
            .filter(|&i| self.labels[i] == g)
            .collect()
    }
}

/// Ward hierarchical clustering of standardised profiles with the gap criterion for the
/// number of groups (module docs).
pub fn cluster_profiles(
    profiles: &[FactorProfile],
    params: &ClusterParams,
) -> Result<Clustering, FactorError> {
    let n = profiles.len();
    if n == 0 {
        return Err(FactorError::NoStations);
    }
    for p in profiles {
        p.check()?;
    }
    let dims = if params.include_day_of_week { 19 } else { 12 };
    let rows: Vec<Vec<f64>> = profiles
        .iter()
        .map(|p| p.values()[..dims].to_vec())
        .collect();
    // Standardise each variable across stations.
    let mut z = rows.clone();
    for c in 0..dims {
        let mean = rows.iter().map(|r| r[c]).sum::<f64>() / n as f64;
        let var = rows.iter().map(|r| (r[c] - mean).powi(2)).sum::<f64>() / n as f64;
        let sd = var.sqrt();
        for r in z.iter_mut() {
            r[c] = if sd > 1e-12 { (r[c] - mean) / sd } else { 0.0 };
        }
    }
    if n == 1 {
        return Ok(Clustering {
            k: 1,
            labels: vec![0],
            merge_heights: vec![],
            scores: vec![],
        });
    }
    let mut condensed = Vec::with_capacity(n * (n - 1) / 2);
    for a in 0..n - 1 {
        for b in a + 1..n {
            let d2: f64 = (0..dims).map(|c| (z[a][c] - z[b][c]).powi(2)).sum();
            condensed.push(d2.sqrt());
        }
    }
    let dendrogram = linkage(&mut condensed, n, Method::Ward);
    let steps = dendrogram.steps();
    let heights: Vec<f64> = steps.iter().map(|s| s.dissimilarity).collect();

    let cut = |k: usize| -> Vec<usize> {
        // members[label]; labels n + i are created by step i.
        let mut members: Vec<Option<Vec<usize>>> = (0..n).map(|i| Some(vec![i])).collect();
        for s in &steps[..n - k] {
            let mut m = members[s.cluster1].take().unwrap_or_default();
            m.extend(members[s.cluster2].take().unwrap_or_default());
            members.push(Some(m));
        }
        let mut groups: Vec<Vec<usize>> = members.into_iter().flatten().collect();
        for g in groups.iter_mut() {
            g.sort_unstable();
        }
        groups.sort_by_key(|g| g[0]);
        let mut labels = vec![0; n];
        for (gi, g) in groups.iter().enumerate() {
            for &i in g {
                labels[i] = gi;
            }
        }
        labels
    };

    // Floor for the denominator, so that identical stations (height 0) do not divide by 0.
    let floor = heights.iter().copied().fold(0.0, f64::max).max(1e-300) * 1e-9;
    let mut scores = Vec::new();
    let mut best: Option<(usize, f64, Vec<usize>)> = None;
    for k in 2..=params.k_max.min(n) {
        let labels = cut(k);
        let smallest = (0..k)
            .map(|g| labels.iter().filter(|&&l| l == g).count())
            .min()
            .unwrap_or(0);
        if smallest < params.n_min.max(1) {
            continue;
        }
        let up = heights[n - k];
        let below = if k == n { 0.0 } else { heights[n - k - 1] };
        let gap = up / below.max(floor);
        scores.push((k, gap));
        if best.as_ref().is_none_or(|(_, g, _)| gap > *g) {
            best = Some((k, gap, labels));
        }
    }
    let (k, labels) = match (params.fixed_k, best) {
        (Some(k), _) => {
            let k = k.clamp(1, n);
            (k, cut(k))
        }
        (None, Some((k, _, labels))) => (k, labels),
        (None, None) => (1, vec![0; n]),
    };
    Ok(Clustering {
        k,
        labels,
        merge_heights: heights,
        scores,
    })
}

/// Group factors with their spread and precision.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupSummary {
    /// Stations in the group.
    pub n: usize,
    /// Statistics of each monthly factor across the group (mean = group factor).
    pub monthly: [FactorStats; 12],
    /// Statistics of each day-of-week factor across the group.
    pub day_of_week: [FactorStats; 7],
    /// Precision target used (fraction).
    pub target: f64,
    /// The worst (largest) precision among the 19 factors; `None` for n < 2.
    pub worst_precision: Option<f64>,
    /// Whether every factor meets the target.
    pub meets_target: bool,
}

impl GroupSummary {
    /// Summary of a group of profiles against precision `target` (fraction; use
    /// [`DEFAULT_TARGET_PRECISION`] for ±10 %).
    pub fn new(profiles: &[&FactorProfile], target: f64) -> Result<GroupSummary, FactorError> {
        if profiles.is_empty() {
            return Err(FactorError::NoStations);
        }
        for p in profiles {
            p.check()?;
        }
        let stats = |idx: usize| -> FactorStats {
            let v: Vec<f64> = profiles.iter().map(|p| p.values()[idx]).collect();
            FactorStats::from_values(&v).expect("checked positive, non-empty")
        };
        let monthly: [FactorStats; 12] = std::array::from_fn(stats);
        let day_of_week: [FactorStats; 7] = std::array::from_fn(|i| stats(12 + i));
        let all = monthly.iter().chain(day_of_week.iter());
        let worst_precision = all
            .clone()
            .map(|s| s.precision95)
            .try_fold(0.0f64, |acc, p| p.map(|p| acc.max(p)));
        let meets_target = all.clone().all(|s| s.meets(target));
        Ok(GroupSummary {
            n: profiles.len(),
            monthly,
            day_of_week,
            target,
            worst_precision,
            meets_target,
        })
    }

    /// Summary against the default ±10 % target.
    pub fn with_default_target(profiles: &[&FactorProfile]) -> Result<GroupSummary, FactorError> {
        GroupSummary::new(profiles, DEFAULT_TARGET_PRECISION)
    }

    /// Stations this group would need for every factor to meet `target` at 95 %: the largest
    /// [`required_sample_size`] over the 19 factors' CVs (with the finite-population
    /// correction when `population` is given).
    pub fn stations_needed(&self, target: f64, population: Option<usize>) -> Option<usize> {
        self.monthly
            .iter()
            .chain(self.day_of_week.iter())
            .map(|s| required_sample_size(s.cv, target, DEFAULT_CONFIDENCE, population))
            .try_fold(0usize, |acc, n| n.map(|n| acc.max(n)))
    }

    /// The group factors: mean monthly factors.
    pub fn monthly_factors(&self) -> [f64; 12] {
        self.monthly.map(|s| s.mean)
    }

    /// The group factors: mean day-of-week factors.
    pub fn day_of_week_factors(&self) -> [f64; 7] {
        self.day_of_week.map(|s| s.mean)
    }
}

/// How a group's axle-correction factor pools its stations.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum AcfPooling {
    /// Arithmetic mean of the station ACFs (default).
    #[default]
    MeanOfStations,
    /// `Σ vehicles / (Σ axles / 2)`.
    RatioOfSums,
}

/// The group axle-correction factor; samples without a defined ACF are skipped. `None`
/// when no sample has one.
pub fn group_axle_correction(samples: &[AxleSample], pooling: AcfPooling) -> Option<f64> {
    let ok: Vec<&AxleSample> = samples.iter().filter(|s| s.acf().is_some()).collect();
    if ok.is_empty() {
        return None;
    }
    match pooling {
        AcfPooling::MeanOfStations => {
            Some(ok.iter().filter_map(|s| s.acf()).sum::<f64>() / ok.len() as f64)
        }
        AcfPooling::RatioOfSums => crate::continuous::axle_correction_factor(
            ok.iter().map(|s| s.vehicles).sum(),
            ok.iter().map(|s| s.axles).sum(),
        ),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn profile(id: usize, monthly: [f64; 12], dow: [f64; 7], jitter: f64) -> FactorProfile {
        // Deterministic small perturbation, different per station and variable.
        let wobble = |k: usize| jitter * (((id * 31 + k * 17) % 11) as f64 - 5.0) / 5.0;
        FactorProfile {
            station_id: format!("S{id}"),
            monthly: std::array::from_fn(|j| monthly[j] * (1.0 + wobble(j))),
            day_of_week: std::array::from_fn(|i| dow[i] * (1.0 + wobble(12 + i))),
        }
    }

    const URBAN_M: [f64; 12] = [
        1.05, 1.03, 1.0, 0.99, 0.98, 0.97, 0.98, 0.99, 0.98, 0.99, 1.01, 1.04,
    ];
    const RURAL_M: [f64; 12] = [
        1.25, 1.18, 1.05, 1.0, 0.95, 0.91, 0.83, 0.87, 0.95, 1.0, 1.05, 1.11,
    ];
    const RECR_M: [f64; 12] = [
        1.9, 1.8, 1.5, 1.2, 0.9, 0.7, 0.55, 0.6, 0.85, 1.2, 1.6, 1.85,
    ];
    const COMMUTER_D: [f64; 7] = [0.93, 0.92, 0.92, 0.91, 0.89, 1.2, 1.45];
    const LEISURE_D: [f64; 7] = [1.08, 1.1, 1.1, 1.05, 0.9, 0.8, 0.95];

    /// Three obvious, comparably separated clusters of 6, 7 and 5 stations, interleaved:
    /// summer-peak commuter, flat-season leisure, winter-peak flat-week; 1 % noise.
    fn three_clusters() -> (Vec<FactorProfile>, Vec<usize>) {
        let winter_m: [f64; 12] = std::array::from_fn(|j| 2.0 - RURAL_M[j]);
        let mut out = Vec::new();
        let mut truth = Vec::new();
        for id in 0..18 {
            let t = id % 3;
            let t = if id == 17 { 1 } else { t };
            let p = match t {
                0 => profile(id, RURAL_M, COMMUTER_D, 0.01),
                1 => profile(id, URBAN_M, LEISURE_D, 0.01),
                _ => profile(id, winter_m, [1.0; 7], 0.01),
            };
            out.push(p);
            truth.push(t);
        }
        (out, truth)
    }

    #[test]
    fn ward_recovers_three_obvious_clusters() {
        // Synthetic check named in the brief: 3 well-separated patterns, 1 % noise.
        let (profiles, truth) = three_clusters();
        let c = cluster_profiles(
            &profiles,
            &ClusterParams {
                n_min: 3,
                ..ClusterParams::default()
            },
        )
        .unwrap();
        assert_eq!(c.k, 3);
        // Same partition as the truth (labels may be permuted).
        for a in 0..profiles.len() {
            for b in 0..profiles.len() {
                assert_eq!(truth[a] == truth[b], c.labels[a] == c.labels[b], "{a} {b}");
            }
        }
        assert_eq!(c.labels[0], 0);
        assert!(c.merge_heights.windows(2).all(|w| w[0] <= w[1] + 1e-12));
        let sizes: Vec<usize> = (0..3).map(|g| c.members(g).len()).collect();
        assert_eq!(sizes.iter().sum::<usize>(), 18);
        // Within-group factors are tight: every group meets ±10 %.
        for g in 0..3 {
            let members: Vec<&FactorProfile> = c.members(g).iter().map(|&i| &profiles[i]).collect();
            assert!(
                GroupSummary::with_default_target(&members)
                    .unwrap()
                    .meets_target
            );
        }
    }

    #[test]
    fn nested_clusters_choose_the_top_split_unless_k_is_fixed() {
        // Urban and rural differ only in season, recreational is far from both: the jump
        // criterion picks the strongest level (recreational vs the rest, k = 2); the
        // analyst's fixed k = 3 recovers all three.
        let mut profiles = Vec::new();
        let mut truth = Vec::new();
        for id in 0..18 {
            let t = id % 3;
            profiles.push(match t {
                0 => profile(id, URBAN_M, COMMUTER_D, 0.01),
                1 => profile(id, RURAL_M, COMMUTER_D, 0.01),
                _ => profile(id, RECR_M, LEISURE_D, 0.01),
            });
            truth.push(t);
        }
        let params = ClusterParams {
            n_min: 3,
            ..ClusterParams::default()
        };
        let c = cluster_profiles(&profiles, &params).unwrap();
        assert_eq!(c.k, 2);
        for a in 0..18 {
            for b in 0..18 {
                assert_eq!(
                    truth[a] == 2 && truth[b] == 2 || truth[a] != 2 && truth[b] != 2,
                    c.labels[a] == c.labels[b]
                );
            }
        }
        let fixed = cluster_profiles(
            &profiles,
            &ClusterParams {
                fixed_k: Some(3),
                ..params
            },
        )
        .unwrap();
        assert_eq!(fixed.k, 3);
        for a in 0..18 {
            for b in 0..18 {
                assert_eq!(truth[a] == truth[b], fixed.labels[a] == fixed.labels[b]);
            }
        }
    }

    #[test]
    fn n_min_too_large_gives_one_group() {
        let (profiles, _) = three_clusters();
        let c = cluster_profiles(
            &profiles,
            &ClusterParams {
                n_min: 10,
                ..ClusterParams::default()
            },
        )
        .unwrap();
        assert_eq!(c.k, 1);
        assert!(c.labels.iter().all(|&l| l == 0));
        let one = cluster_profiles(&profiles[..1], &ClusterParams::default()).unwrap();
        assert_eq!(one.k, 1);
        assert!(matches!(
            cluster_profiles(&[], &ClusterParams::default()),
            Err(FactorError::NoStations)
        ));
    }

    #[test]
    fn rule_groups_and_recreational() {
        let p = RuleGroupParams::default();
        assert_eq!(
            rule_group(1, Area::Urban, None, &p).unwrap(),
            RuleGroup::FreewayUrban
        );
        assert_eq!(
            rule_group(2, Area::Rural, None, &p).unwrap(),
            RuleGroup::FreewayRural
        );
        assert_eq!(
            rule_group(3, Area::Urban, None, &p).unwrap(),
            RuleGroup::ArterialUrban
        );
        assert_eq!(
            rule_group(4, Area::Rural, None, &p).unwrap(),
            RuleGroup::ArterialRural
        );
        assert_eq!(
            rule_group(5, Area::Urban, None, &p).unwrap(),
            RuleGroup::CollectorLocalUrban
        );
        assert_eq!(
            rule_group(7, Area::Rural, None, &p).unwrap(),
            RuleGroup::CollectorLocalRural
        );
        assert_eq!(
            rule_group(8, Area::Rural, None, &p),
            Err(FactorError::BadFunctionalClass(8))
        );
        // Recreational: amplitude 1.9 / 0.55 = 3.45 ≥ 1.8.
        let recr = profile(0, RECR_M, LEISURE_D, 0.0);
        assert_relative_eq!(recr.seasonal_amplitude(), 1.9 / 0.55, max_relative = 1e-12);
        assert_eq!(
            rule_group(3, Area::Rural, Some(&recr), &p).unwrap(),
            RuleGroup::Recreational
        );
        // refs §1.5 year: amplitude 1.2 / 0.8 = 1.5 < 1.8 → not recreational.
        let m: [f64; 12] = std::array::from_fn(|j| 1.0 / crate::continuous::aadt::tests::M[j]);
        let plain = profile(1, m, COMMUTER_D, 0.0);
        assert_relative_eq!(plain.seasonal_amplitude(), 1.5, max_relative = 1e-12);
        assert_eq!(
            rule_group(3, Area::Rural, Some(&plain), &p).unwrap(),
            RuleGroup::ArterialRural
        );
        assert_eq!(RuleGroup::ALL.map(|g| g.name())[6], "recreational");
    }

    #[test]
    fn group_summary_flags_imprecise_groups() {
        // Two stations far apart: precision is poor, the group is flagged.
        let a = profile(0, URBAN_M, COMMUTER_D, 0.0);
        let b = profile(1, RECR_M, LEISURE_D, 0.0);
        let s = GroupSummary::with_default_target(&[&a, &b]).unwrap();
        assert!(!s.meets_target);
        assert!(s.worst_precision.unwrap() > 0.10);
        assert_relative_eq!(
            s.monthly_factors()[0],
            (1.05 + 1.9) / 2.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            s.day_of_week_factors()[6],
            (1.45 + 0.95) / 2.0,
            max_relative = 1e-12
        );
        // Needs at least as many stations as the worst factor's CV demands (refs §2.6).
        let worst_cv = s
            .monthly
            .iter()
            .chain(s.day_of_week.iter())
            .map(|f| f.cv)
            .fold(0.0, f64::max);
        assert_eq!(
            s.stations_needed(0.10, None),
            required_sample_size(worst_cv, 0.10, 0.95, None)
        );
        assert!(s.stations_needed(0.10, None).unwrap() > 2);
        let single = GroupSummary::with_default_target(&[&a]).unwrap();
        assert!(single.worst_precision.is_none());
        assert!(!single.meets_target);
    }

    #[test]
    fn group_acf_pooling() {
        // refs §2.2 style: ACF = vehicles / (axles / 2).
        let s = [
            AxleSample {
                vehicles: 1000.0,
                axles: 2300.0,
            },
            AxleSample {
                vehicles: 3000.0,
                axles: 6000.0,
            },
            AxleSample {
                vehicles: 0.0,
                axles: 0.0,
            },
        ];
        let mean = group_axle_correction(&s, AcfPooling::MeanOfStations).unwrap();
        assert_relative_eq!(mean, (1000.0 / 1150.0 + 1.0) / 2.0, max_relative = 1e-12);
        let pooled = group_axle_correction(&s, AcfPooling::RatioOfSums).unwrap();
        assert_relative_eq!(pooled, 4000.0 / 4150.0, max_relative = 1e-12);
        assert!(group_axle_correction(&s[2..], AcfPooling::default()).is_none());
    }
}
