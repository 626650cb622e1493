//! Network-driven true volumes: trips between places assigned to the roads they take.
//!
//! # Method
//!
//! Every node is a place with an activity weight (lognormal, higher in towns and falling off
//! from a town centre; low at the dead ends of local roads), and the ends of the highways that
//! leave the region are gateways carrying external through traffic. Trips follow a gravity
//! model, `T(o, d) ∝ w_o · w_d · exp(-t_od / τ)` with `t_od` the fastest travel time (length /
//! speed limit, one-way streets one way only), and are loaded on the fastest path from `o`
//! (a stochastic all-or-nothing assignment: every sampled origin sees its own link times,
//! perturbed by a lognormal factor, so near-equal routes share traffic while a slower
//! parallel street gets almost none). Origins are drawn in proportion to their weight and each
//! carries `W / M` of the total (unbiased importance sampling).
//!
//! Two layers: light vehicles (`τ` = 12 min) and heavy vehicles (`τ` = 30 min, their own
//! place weights, more through traffic): the heavy share then follows a road's role in the
//! network, not its class alone.
//!
//! A segment's AADT is the scaled assigned flow plus its own access traffic (the trips to and
//! from the frontage, lognormal around a base by class and area) times a little independent
//! noise. Two parallel streets 350 m apart can so differ tenfold, as on real networks.
//!
//! # Units
//!
//! Travel times in minutes, flows in relative trips, AADT in vehicles/day (both directions).

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, LogNormal, WeightedIndex};

use super::network::Network;

/// Sampled origins per layer.
const ORIGINS: usize = 300;
/// Gravity decay of light and heavy trips, minutes.
const TAU_LIGHT_MIN: f64 = 12.0;
const TAU_HEAVY_MIN: f64 = 30.0;
/// Log sd of the per-origin link-time perturbation.
const ROUTE_CHOICE_SD: f64 = 0.12;

/// Assigned light and heavy flow per segment (both directions, relative units).
pub(crate) struct Flows {
    pub light: Vec<f64>,
    pub heavy: Vec<f64>,
}

/// Outgoing arcs of each node: (segment, head node, minutes).
fn arcs(net: &Network) -> Vec<Vec<(usize, usize, f64)>> {
    let mut out = vec![Vec::new(); net.nodes.len()];
    for (s, seg) in net.segments.iter().enumerate() {
        // Junction delays make lower classes slower than their limit (drivers prefer the
        // arterial of two streets with the same limit).
        let delay = [1.0, 1.0, 1.0, 1.05, 1.2, 1.3, 1.5][usize::from(seg.class - 1)];
        let minutes = seg.length_km / f64::from(seg.speed_kph) * 60.0 * delay;
        out[seg.from].push((s, seg.to, minutes));
        if !seg.oneway {
            out[seg.to].push((s, seg.from, minutes));
        }
    }
    out
}

/// Activity weights of the places, light and heavy.
fn weights(net: &Network, rng: &mut ChaCha8Rng, gateways: &[usize]) -> (Vec<f64>, Vec<f64>) {
    let spread = LogNormal::new(0.0, 0.7).expect("finite sd");
    let mut degree = vec![0usize; net.nodes.len()];
    for s in &net.segments {
        degree[s.from] += 1;
        degree[s.to] += 1;
    }
    let mut light = Vec::with_capacity(net.nodes.len());
    let mut heavy = Vec::with_capacity(net.nodes.len());
    for (i, n) in net.nodes.iter().enumerate() {
        let town = net
            .town_centres()
            .iter()
            .map(|&(cx, cy, r)| {
                let d = (n.x_km - cx).hypot(n.y_km - cy);
                if d <= r {
                    4.0 * (1.0 - 0.6 * d / r)
                } else {
                    0.0
                }
            })
            .fold(0.0, f64::max);
        let base = if degree[i] <= 1 { 0.3 } else { 1.0 } + town;
        light.push(base * spread.sample(rng));
        // Freight: industrial estates are scattered, towns matter less.
        heavy.push((1.0 + 0.3 * town) * spread.sample(rng));
    }
    let (lt, ht): (f64, f64) = (light.iter().sum(), heavy.iter().sum());
    for &g in gateways {
        light[g] += 0.05 * lt;
        heavy[g] += 0.05 * ht;
    }
    (light, heavy)
}

/// Loads one layer: gravity trips from sampled origins on their fastest paths.
fn load(
    net: &Network,
    arcs: &[Vec<(usize, usize, f64)>],
    w: &[f64],
    tau: f64,
    rng: &mut ChaCha8Rng,
) -> Vec<f64> {
    let n = net.nodes.len();
    let mut flow = vec![0.0; net.segments.len()];
    let pick = WeightedIndex::new(w).expect("positive weights");
    let share = w.iter().sum::<f64>() / ORIGINS as f64;
    let jitter = LogNormal::new(0.0, ROUTE_CHOICE_SD).expect("finite sd");
    let mut dist = vec![f64::INFINITY; n];
    let mut pred: Vec<Option<(usize, usize)>> = vec![None; n];
    let mut order = Vec::with_capacity(n);
    let mut demand = vec![0.0; n];
    let mut perturbed = vec![0.0; net.segments.len()];
    for _ in 0..ORIGINS {
        let o = pick.sample(rng);
        for p in perturbed.iter_mut() {
            *p = jitter.sample(rng);
        }
        dist.fill(f64::INFINITY);
        pred.fill(None);
        order.clear();
        dist[o] = 0.0;
        let mut heap = BinaryHeap::new();
        // Non-negative f64 bit patterns order like the numbers.
        heap.push(Reverse((0f64.to_bits(), o)));
        while let Some(Reverse((bits, u))) = heap.pop() {
            let d = f64::from_bits(bits);
            if d > dist[u] {
                continue;
            }
            order.push(u);
            for &(s, v, t) in &arcs[u] {
                let nd = d + t * perturbed[s];
                if nd < dist[v] {
                    dist[v] = nd;
                    pred[v] = Some((s, u));
                    heap.push(Reverse((nd.to_bits(), v)));
                }
            }
        }
        for &d in &order {
            demand[d] = if d == o {
                0.0
            } else {
                share * w[d] * (-dist[d] / tau).exp()
            };
        }
        // Farthest first: each node hands its own and its subtree's trips to its parent arc.
        for &v in order.iter().rev() {
            if let Some((s, u)) = pred[v] {
                flow[s] += demand[v];
                demand[u] += demand[v];
            }
        }
    }
    flow
}

/// Assigns light and heavy trips; `gateways` are nodes where traffic enters the region.
pub(crate) fn assign(net: &Network, rng: &mut ChaCha8Rng, gateways: &[usize]) -> Flows {
    let arcs = arcs(net);
    let (wl, wh) = weights(net, rng, gateways);
    let light = load(net, &arcs, &wl, TAU_LIGHT_MIN, rng);
    let heavy = load(net, &arcs, &wh, TAU_HEAVY_MIN, rng);
    Flows { light, heavy }
}

/// Median of the positive values of `v` at `keep` (1.0 when none).
pub(crate) fn median_where(v: &[f64], keep: impl Fn(usize) -> bool) -> f64 {
    let mut x: Vec<f64> = (0..v.len())
        .filter(|&i| keep(i) && v[i] > 0.0)
        .map(|i| v[i])
        .collect();
    if x.is_empty() {
        return 1.0;
    }
    x.sort_by(f64::total_cmp);
    x[x.len() / 2]
}
