//! Neighbour search: the k-d tree of the data points and the `k` nearest points of a target.

use kiddo::SquaredEuclidean;

use super::Kriger;
use crate::spatial::variogram::splitmix64;

impl Kriger {
    pub(super) fn neighbours(&self, xy: [f64; 2], exclude: Option<usize>) -> Vec<usize> {
        let n = self.data.len();
        let available = n - usize::from(exclude.is_some());
        let k = self.params.neighbours.min(available);
        // The tree holds slightly jittered coordinates (see `tree_coordinates`), so ask for a
        // few spare candidates and rank them by their exact distances.
        let ask = (k + usize::from(exclude.is_some()) + TREE_SPARE).min(n);
        let mut found: Vec<(f64, usize)> = self
            .tree
            .nearest_n::<SquaredEuclidean>(&xy, ask)
            .into_iter()
            .map(|nn| nn.item as usize)
            .filter(|&i| Some(i) != exclude)
            .map(|i| (dist(self.data.xy[i], xy), i))
            .collect();
        // Sorting by (distance, index) makes the neighbourhood, and hence the estimate,
        // independent of the order of the input rows.
        found.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        found.truncate(k);
        found.into_iter().map(|(_, i)| i).collect()
    }
}

/// Spare candidates asked of the k-d tree beyond the `k` neighbours.
const TREE_SPARE: usize = 8;

/// Largest jitter added to a coordinate for the k-d tree only, km (0.1 mm).
const TREE_JITTER_KM: f64 = 1e-7;

/// Coordinates for the k-d tree. kiddo's immutable tree (4.2) panics when more points than a
/// bucket share one value on a split axis, which happens on gridded street networks and with
/// repeated midpoints. A fixed per-point offset below 0.1 mm (SplitMix64 hash of the index, so
/// it is deterministic) separates such values. The tree only proposes candidates: neighbours
/// are ranked by exact distance, so the jitter can only reorder points whose distances to the
/// target differ by less than about 0.3 mm.
pub(super) fn tree_coordinates(xy: &[[f64; 2]]) -> Vec<[f64; 2]> {
    let unit = |h: u64| (h >> 11) as f64 / (1u64 << 53) as f64;
    xy.iter()
        .enumerate()
        .map(|(i, p)| {
            let h = splitmix64(i as u64);
            [
                p[0] + TREE_JITTER_KM * unit(h),
                p[1] + TREE_JITTER_KM * unit(splitmix64(h)),
            ]
        })
        .collect()
}

pub(super) fn dist(a: [f64; 2], b: [f64; 2]) -> f64 {
    (a[0] - b[0]).hypot(a[1] - b[1])
}
