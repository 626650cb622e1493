//! Sampled, distance-decayed edge betweenness: how much of the network's traffic would pass a
//! segment if trips went the fastest way.
//!
//! # Method
//! Travel time of a segment = length / speed limit (the class's mean limit where none is
//! given); one-way segments are traversed `from → to` only. From `origins` nodes drawn
//! uniformly without replacement (ChaCha8 seeded with [`SEED`], so a study gives the same
//! figure every run), a shortest-path tree by travel time (Dijkstra) is grown, and every node
//! `d` reached sends a trip of weight `exp(-t(o, d) / τ)` back along the tree: each segment
//! accumulates the weight of the trips that cross it. This is edge betweenness (Brandes 2008,
//! "On variants of shortest-path betweenness centrality", *Social Networks* 30, sampling from
//! a subset of sources) with a gravity-type decay, because most trips are short (common
//! practice in transport modelling; the decay is a modelling assumption, not a measured
//! figure). Ties between equally fast paths go to the first found.
//!
//! Two decays are returned: a local one (τ = 10 min, the street a trip takes to the nearest
//! main road) and a regional one (τ = 45 min, through traffic). Values are scaled to a mean of
//! 1 over the segments; the spatial stage uses `ln(1 + B)`.

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use rand::seq::index::sample;
use rand::SeedableRng;
use rayon::prelude::*;

use crate::model::Network;

/// Seed of the origin sample.
pub const SEED: u64 = 0x005E_EDB7;
/// Decay times, minutes.
pub const TAU_LOCAL_MIN: f64 = 10.0;
/// Regional decay, minutes.
pub const TAU_REGIONAL_MIN: f64 = 45.0;

/// Local and regional betweenness per segment, each scaled to mean 1.
#[derive(Debug, Clone, Default)]
pub struct Betweenness {
    /// τ = 10 min.
    pub local: Vec<f64>,
    /// τ = 45 min.
    pub regional: Vec<f64>,
    /// Origins sampled.
    pub origins: usize,
}

/// Computes both measures from `origins` sampled nodes (all nodes when there are fewer);
/// `speed_fill[c]` is the speed limit used for class `c` where a segment gives none.
pub fn betweenness(net: &Network, origins: usize, speed_fill: &[f64; 8]) -> Betweenness {
    let n = net.nodes.len();
    let m = net.segments.len();
    if n == 0 || m == 0 {
        return Betweenness::default();
    }
    let mut arcs: Vec<Vec<(usize, usize, f64)>> = vec![Vec::new(); n];
    for (s, seg) in net.segments.iter().enumerate() {
        let kph = seg
            .speed_limit_kph
            .unwrap_or(speed_fill[seg.functional_class.code() as usize])
            .max(5.0);
        let minutes = seg.length_km / kph * 60.0;
        arcs[seg.from].push((s, seg.to, minutes));
        if !seg.oneway {
            arcs[seg.to].push((s, seg.from, minutes));
        }
    }
    let k = origins.min(n).max(1);
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(SEED);
    let picked: Vec<usize> = sample(&mut rng, n, k).into_vec();
    let taus = [TAU_LOCAL_MIN, TAU_REGIONAL_MIN];
    let sums = picked
        .par_chunks(
            picked
                .len()
                .div_ceil(rayon::current_num_threads() * 4)
                .max(1),
        )
        .map(|chunk| {
            let mut tree = Tree::new(n);
            let mut acc = vec![[0.0f64; 2]; m];
            for &o in chunk {
                tree.grow(&arcs, o);
                tree.send(&taus, &mut acc);
            }
            acc
        })
        .reduce(
            || vec![[0.0f64; 2]; m],
            |mut a, b| {
                for (x, y) in a.iter_mut().zip(&b) {
                    x[0] += y[0];
                    x[1] += y[1];
                }
                a
            },
        );
    let scaled = |i: usize| {
        let mean = sums.iter().map(|x| x[i]).sum::<f64>() / m as f64;
        sums.iter()
            .map(|x| if mean > 0.0 { x[i] / mean } else { 0.0 })
            .collect()
    };
    Betweenness {
        local: scaled(0),
        regional: scaled(1),
        origins: k,
    }
}

/// One shortest-path tree, its buffers reused from origin to origin.
struct Tree {
    dist: Vec<f64>,
    pred: Vec<Option<(usize, usize)>>,
    order: Vec<usize>,
    load: Vec<[f64; 2]>,
    heap: BinaryHeap<Reverse<(u64, usize)>>,
}

impl Tree {
    fn new(n: usize) -> Tree {
        Tree {
            dist: vec![f64::INFINITY; n],
            pred: vec![None; n],
            order: Vec::with_capacity(n),
            load: vec![[0.0; 2]; n],
            heap: BinaryHeap::new(),
        }
    }

    /// Dijkstra from `o`; `order` lists the reached nodes nearest first.
    fn grow(&mut self, arcs: &[Vec<(usize, usize, f64)>], o: usize) {
        for &v in &self.order {
            self.dist[v] = f64::INFINITY;
            self.pred[v] = None;
        }
        self.order.clear();
        self.dist[o] = 0.0;
        // Non-negative f64 bit patterns order like the numbers.
        self.heap.push(Reverse((0f64.to_bits(), o)));
        while let Some(Reverse((bits, u))) = self.heap.pop() {
            let d = f64::from_bits(bits);
            if d > self.dist[u] {
                continue;
            }
            self.order.push(u);
            for &(s, v, t) in &arcs[u] {
                let nd = d + t;
                if nd < self.dist[v] {
                    self.dist[v] = nd;
                    self.pred[v] = Some((s, u));
                    self.heap.push(Reverse((nd.to_bits(), v)));
                }
            }
        }
    }

    /// Sends each reached node's decayed trip weight back to the origin along the tree.
    fn send(&mut self, taus: &[f64; 2], acc: &mut [[f64; 2]]) {
        for &v in &self.order {
            let t = self.dist[v];
            self.load[v] = [(-t / taus[0]).exp(), (-t / taus[1]).exp()];
        }
        for &v in self.order.iter().rev() {
            if let Some((s, u)) = self.pred[v] {
                let l = self.load[v];
                acc[s][0] += l[0];
                acc[s][1] += l[1];
                self.load[u][0] += l[0];
                self.load[u][1] += l[1];
            }
        }
    }
}
