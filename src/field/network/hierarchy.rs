//! A contraction hierarchy of the road graph (Geisberger, Sanders, Schultes and Delling 2008,
//! *Contraction Hierarchies*, WEA 2008) and travel matrices on it by bucket many-to-many
//! queries (Knopp, Sanders, Schultes, Schulz and Wagner 2007, *Computing many-to-many shortest
//! paths using highway hierarchies*, ALENEX 2007; from memory).
//!
//! Nodes are contracted one at a time, least important first: a node's importance is the
//! shortcuts its contraction would add against the arcs it removes, the road pieces those
//! shortcuts stand for against those removed, and its depth in the hierarchy (weights 2, 4 and
//! 1, common practice for road graphs, from memory); a node whose neighbour was contracted is
//! weighed again when it comes up, and waits if it is no longer the least important (lazy
//! updates). Contracting v adds the shortcut u → x for a pair of its neighbours
//! unless a witness search from u (a Dijkstra search that avoids v and stops after a fixed number
//! of settled nodes) finds a way at most as costly — never skipped on a guess, so a missing
//! witness only costs an unneeded shortcut, not a wrong distance.
//!
//! Costs are those of the Dijkstra searches ([`Cost`]: hours in ticks, then metres in ticks),
//! summed in whole ticks, so the least cost of an up-and-down path is the least cost in the
//! graph to the tick, whatever the order of the sums: the matrix equals the Dijkstra searches'
//! in hours and metres exactly.
//!
//! A query searches upwards (arcs to nodes contracted later) from every point's exits on the
//! reverse graph and files each node reached in that node's bucket; then it searches upwards
//! from every point's entries and scans the buckets of the nodes it reaches. The drives kept
//! for the route lines unpack their shortcuts into the graph's arcs.
//!
//! # Units
//! Costs in ticks (see [`crate::field::network::types::TICKS_PER_HOUR`]); seconds of wall time
//! for the build.

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use crate::field::network::types::{Cost, Leg, NO_WAY, RoadNetwork, Row, add};

/// `Edge::first` of an arc of the graph itself (its index is in `second`).
const ORIGINAL: u32 = u32::MAX;
/// No parent: a search's seed.
const SEED: u32 = u32::MAX;
/// Settled nodes after which a witness search gives up: while ranking, and while contracting.
const RANK_SETTLED: usize = 20;
const CONTRACT_SETTLED: usize = 80;

/// An arc of the hierarchy: a graph arc or a shortcut of two hierarchy arcs through a node
/// contracted before both ends.
#[derive(Debug, Clone, Copy)]
struct Edge {
    cost: Cost,
    tail: u32,
    head: u32,
    first: u32,
    second: u32,
    /// Graph arcs it stands for.
    hops: u32,
}

/// An arc to a node contracted later: `node` is the head of an upward arc, or the tail of an
/// arc into the node it is listed at.
#[derive(Debug, Clone, Copy)]
struct UpArc {
    cost: Cost,
    node: u32,
    edge: u32,
}

/// The nodes an upward search reached: (node, cost, hierarchy arc it was reached by).
type Settled = Vec<(u32, Cost, u32)>;

/// The contraction hierarchy of a [`RoadNetwork`].
pub(super) struct Hierarchy {
    /// Arcs v → x with x contracted after v, listed at v.
    up_first: Vec<u32>,
    up: Vec<UpArc>,
    /// Arcs x → v with x contracted after v, listed at v.
    down_first: Vec<u32>,
    down: Vec<UpArc>,
    edges: Vec<Edge>,
    pub(super) shortcuts: usize,
}

/// A Dijkstra search with reusable arrays, for witnesses and queries.
struct Dijkstra {
    /// Witness targets: `mark[x] == stamp` for the heads of the arcs out of the node
    /// whose shortcuts are sought.
    mark: Vec<u32>,
    stamp: u32,
    best: Vec<Cost>,
    parent: Vec<u32>,
    touched: Vec<u32>,
    heap: BinaryHeap<Reverse<(Cost, u32)>>,
}

impl Dijkstra {
    fn new(nodes: usize) -> Dijkstra {
        Dijkstra {
            mark: vec![u32::MAX; nodes],
            stamp: 0,
            best: vec![(NO_WAY, 0); nodes],
            parent: vec![SEED; nodes],
            touched: Vec::new(),
            heap: BinaryHeap::new(),
        }
    }

    fn reset(&mut self) {
        for &v in &self.touched {
            self.best[v as usize] = (NO_WAY, 0);
            self.parent[v as usize] = SEED;
        }
        self.touched.clear();
        self.heap.clear();
    }

    fn seed(&mut self, v: u32, cost: Cost) {
        if cost < self.best[v as usize] {
            if self.best[v as usize].0 == NO_WAY {
                self.touched.push(v);
            }
            self.best[v as usize] = cost;
            self.parent[v as usize] = SEED;
            self.heap.push(Reverse((cost, v)));
        }
    }

    /// A witness search from `source` over the nodes not yet contracted, avoiding `skip`,
    /// until the least cost passes `limit` or `max_settled` nodes are settled. Costs found
    /// (settled or not) are real drives that avoid `skip`.
    #[allow(clippy::too_many_arguments)]
    fn witness(
        &mut self,
        edges: &[Edge],
        out: &[Vec<u32>],
        source: u32,
        skip: u32,
        limit: Cost,
        max_settled: usize,
        (mark, stamp): (&[u32], u32),
        targets: usize,
    ) {
        self.reset();
        self.seed(source, (0, 0));
        let mut settled = 0;
        let mut left = targets;
        while let Some(Reverse((cost, u))) = self.heap.pop() {
            if cost > self.best[u as usize] {
                continue;
            }
            if cost > limit || settled == max_settled {
                break;
            }
            if mark[u as usize] == stamp && u != source {
                left -= 1;
                if left == 0 {
                    break;
                }
            }
            settled += 1;
            for &e in &out[u as usize] {
                let edge = &edges[e as usize];
                let v = edge.head;
                if v == skip {
                    continue;
                }
                let next = add(cost, edge.cost);
                if next < self.best[v as usize] {
                    if self.best[v as usize].0 == NO_WAY {
                        self.touched.push(v);
                    }
                    self.best[v as usize] = next;
                    self.heap.push(Reverse((next, v)));
                }
            }
        }
    }

    /// An upward search from `seeds` over `arcs` (in compressed rows by `first`): every node
    /// reached, with its cost and the hierarchy arc it was reached by, in `settled`.
    fn upward(
        &mut self,
        first: &[u32],
        arcs: &[UpArc],
        seeds: &[(u32, Cost)],
        settled: &mut Vec<(u32, Cost, u32)>,
    ) {
        self.reset();
        settled.clear();
        for &(v, cost) in seeds {
            self.seed(v, cost);
        }
        while let Some(Reverse((cost, u))) = self.heap.pop() {
            let ui = u as usize;
            if cost > self.best[ui] {
                continue;
            }
            settled.push((u, cost, self.parent[ui]));
            for arc in &arcs[first[ui] as usize..first[ui + 1] as usize] {
                let v = arc.node as usize;
                let next = add(cost, arc.cost);
                if next < self.best[v] {
                    if self.best[v].0 == NO_WAY {
                        self.touched.push(v as u32);
                    }
                    self.best[v] = next;
                    self.parent[v] = arc.edge;
                    self.heap.push(Reverse((next, v as u32)));
                }
            }
        }
    }
}

/// The contraction's state: arcs among the nodes not yet contracted.
struct Contraction {
    edges: Vec<Edge>,
    out: Vec<Vec<u32>>,
    into: Vec<Vec<u32>>,
    level: Vec<u32>,
}

impl Contraction {
    /// The shortcuts contracting `v` needs, in `found`: (arc into v, arc out of v, cost of the
    /// two), one for each pair of v's neighbours without a witness.
    fn shortcuts(
        &self,
        search: &mut Dijkstra,
        v: u32,
        max_settled: usize,
        found: &mut Vec<(u32, u32, Cost)>,
    ) {
        found.clear();
        let out = &self.out[v as usize];
        // Targets: the heads of v's arcs, marked with a new stamp in the search's mark array.
        search.stamp = search.stamp.wrapping_add(1);
        if search.stamp == u32::MAX {
            search.mark.iter_mut().for_each(|m| *m = u32::MAX);
            search.stamp = 0;
        }
        let stamp = search.stamp;
        let mut targets = 0;
        for &e_out in out {
            let x = self.edges[e_out as usize].head as usize;
            if search.mark[x] != stamp {
                search.mark[x] = stamp;
                targets += 1;
            }
        }
        for &e_in in &self.into[v as usize] {
            let into = self.edges[e_in as usize];
            let u = into.tail;
            let mut limit: Option<Cost> = None;
            for &e_out in out {
                let edge = &self.edges[e_out as usize];
                if edge.head != u {
                    let c = add(into.cost, edge.cost);
                    limit = Some(limit.map_or(c, |l| l.max(c)));
                }
            }
            let Some(limit) = limit else { continue };
            let own = usize::from(search.mark[u as usize] == stamp);
            let mark = std::mem::take(&mut search.mark);
            search.witness(
                &self.edges,
                &self.out,
                u,
                v,
                limit,
                max_settled,
                (&mark, stamp),
                targets - own,
            );
            search.mark = mark;
            for &e_out in out {
                let edge = &self.edges[e_out as usize];
                if edge.head == u {
                    continue;
                }
                let c = add(into.cost, edge.cost);
                if search.best[edge.head as usize] > c {
                    found.push((e_in, e_out, c));
                }
            }
        }
    }

    /// Importance of `v` (module doc): lower is contracted sooner. Positive, so its bits order
    /// as the number does.
    fn importance(&self, search: &mut Dijkstra, v: u32, found: &mut Vec<(u32, u32, Cost)>) -> u32 {
        self.shortcuts(search, v, RANK_SETTLED, found);
        let vi = v as usize;
        let removed = (self.out[vi].len() + self.into[vi].len()) as f32;
        let removed_hops: u32 = self.out[vi]
            .iter()
            .chain(&self.into[vi])
            .map(|&e| self.edges[e as usize].hops)
            .sum();
        let added_hops: u32 = found
            .iter()
            .map(|&(a, b, _)| self.edges[a as usize].hops + self.edges[b as usize].hops)
            .sum();
        let mut value = self.level[vi] as f32;
        if removed > 0.0 {
            value += 2.0 * found.len() as f32 / removed
                + 4.0 * added_hops as f32 / removed_hops.max(1) as f32;
        }
        value.to_bits()
    }
}

impl Hierarchy {
    /// Contract every node of `network` (initial importances computed over `threads` threads).
    pub(super) fn build(network: &RoadNetwork, threads: usize) -> Hierarchy {
        let n = network.graph_vertex.len();
        let mut c = Contraction {
            edges: Vec::with_capacity(network.arcs.len() * 2),
            out: vec![Vec::new(); n],
            into: vec![Vec::new(); n],
            level: vec![0; n],
        };
        // The graph's arcs, the least costly of parallel ones.
        for u in 0..n {
            for a in network.first_out[u] as usize..network.first_out[u + 1] as usize {
                let arc = network.arcs[a];
                let cost = (arc.hours, arc.metres);
                let same = c.out[u]
                    .iter()
                    .copied()
                    .find(|&e| c.edges[e as usize].head == arc.head);
                match same {
                    Some(e) if c.edges[e as usize].cost <= cost => {}
                    Some(e) => {
                        let edge = &mut c.edges[e as usize];
                        edge.cost = cost;
                        edge.second = a as u32;
                    }
                    None => {
                        let e = c.edges.len() as u32;
                        c.edges.push(Edge {
                            cost,
                            tail: u as u32,
                            head: arc.head,
                            first: ORIGINAL,
                            second: a as u32,
                            hops: 1,
                        });
                        c.out[u].push(e);
                        c.into[arc.head as usize].push(e);
                    }
                }
            }
        }
        let graph_edges = c.edges.len();
        // Initial importances, nodes split over the threads.
        let threads = threads.max(1);
        let chunk = n.div_ceil(threads).max(1);
        let mut importance = vec![0u32; n];
        std::thread::scope(|scope| {
            let c = &c;
            for (k, part) in importance.chunks_mut(chunk).enumerate() {
                scope.spawn(move || {
                    let mut search = Dijkstra::new(n);
                    let mut found = Vec::new();
                    for (o, value) in part.iter_mut().enumerate() {
                        *value = c.importance(&mut search, (k * chunk + o) as u32, &mut found);
                    }
                });
            }
        });
        let mut queue: BinaryHeap<Reverse<(u32, u32)>> = importance
            .iter()
            .enumerate()
            .map(|(v, &p)| Reverse((p, v as u32)))
            .collect();
        let mut search = Dijkstra::new(n);
        let mut found = Vec::new();
        let mut contracted = vec![false; n];
        let mut dirty = vec![false; n];
        let mut seen = vec![u32::MAX; n];
        let mut neighbours = Vec::new();
        while let Some(Reverse((p, v))) = queue.pop() {
            let vi = v as usize;
            if contracted[vi] || p != importance[vi] {
                continue;
            }
            // Lazy updates: a node whose neighbours changed is weighed again when it comes up,
            // and waits if it is no longer the least important.
            if dirty[vi] {
                dirty[vi] = false;
                let now = c.importance(&mut search, v, &mut found);
                if queue.peek().is_some_and(|&Reverse((next, _))| now > next) {
                    importance[vi] = now;
                    queue.push(Reverse((now, v)));
                    continue;
                }
            }
            c.shortcuts(&mut search, v, CONTRACT_SETTLED, &mut found);
            contracted[vi] = true;
            // v's own lists are final: every arc in them leads to a node contracted later.
            neighbours.clear();
            for k in 0..c.out[vi].len() {
                let e = c.out[vi][k];
                let x = c.edges[e as usize].head as usize;
                c.into[x].retain(|&f| f != e);
                neighbours.push(x as u32);
            }
            for k in 0..c.into[vi].len() {
                let e = c.into[vi][k];
                let u = c.edges[e as usize].tail as usize;
                c.out[u].retain(|&f| f != e);
                neighbours.push(u as u32);
            }
            for &(e_in, e_out, cost) in &found {
                let (u, x) = (c.edges[e_in as usize].tail, c.edges[e_out as usize].head);
                let hops = c.edges[e_in as usize].hops + c.edges[e_out as usize].hops;
                let edge = Edge {
                    cost,
                    tail: u,
                    head: x,
                    first: e_in,
                    second: e_out,
                    hops,
                };
                let same = c.out[u as usize]
                    .iter()
                    .position(|&e| c.edges[e as usize].head == x);
                match same {
                    Some(k) => {
                        let old = c.out[u as usize][k];
                        if c.edges[old as usize].cost <= cost {
                            continue;
                        }
                        let e = c.edges.len() as u32;
                        c.edges.push(edge);
                        c.out[u as usize][k] = e;
                        for f in c.into[x as usize].iter_mut() {
                            if *f == old {
                                *f = e;
                            }
                        }
                    }
                    None => {
                        let e = c.edges.len() as u32;
                        c.edges.push(edge);
                        c.out[u as usize].push(e);
                        c.into[x as usize].push(e);
                    }
                }
            }
            let next_level = c.level[vi] + 1;
            for &w in &neighbours {
                let wi = w as usize;
                if seen[wi] == v {
                    continue;
                }
                seen[wi] = v;
                c.level[wi] = c.level[wi].max(next_level);
                dirty[wi] = true;
            }
        }
        let compress = |lists: &[Vec<u32>], other: fn(&Edge) -> u32| {
            let mut first = Vec::with_capacity(n + 1);
            first.push(0u32);
            let mut arcs = Vec::new();
            for list in lists {
                for &e in list {
                    let edge = &c.edges[e as usize];
                    arcs.push(UpArc {
                        cost: edge.cost,
                        node: other(edge),
                        edge: e,
                    });
                }
                first.push(arcs.len() as u32);
            }
            (first, arcs)
        };
        let (up_first, up) = compress(&c.out, |e| e.head);
        let (down_first, down) = compress(&c.into, |e| e.tail);
        Hierarchy {
            up_first,
            up,
            down_first,
            down,
            shortcuts: c.edges.len() - graph_edges,
            edges: c.edges,
        }
    }

    /// The graph arcs hierarchy arc `e` stands for, in order, appended to `arcs`.
    fn unpack(&self, e: u32, arcs: &mut Vec<u32>) {
        let mut stack = vec![e];
        while let Some(e) = stack.pop() {
            let edge = &self.edges[e as usize];
            if edge.first == ORIGINAL {
                arcs.push(edge.second);
            } else {
                stack.push(edge.second);
                stack.push(edge.first);
            }
        }
    }

    /// The rows of every source (`starts[i]`: graph nodes and costs to leave point i by;
    /// `exits[j]`: to arrive at point j by), the searches spread over `threads` threads.
    pub(super) fn rows(
        &self,
        starts: &[Vec<(u32, Cost)>],
        exits: &[Vec<(u32, Cost)>],
        threads: usize,
    ) -> Vec<Row> {
        let n = starts.len();
        let nodes = self.up_first.len() - 1;
        let threads = threads.clamp(1, n.max(1));
        // Upward searches on the reverse graph from every point's exits.
        let spaces: Vec<(usize, Settled)> = std::thread::scope(|scope| {
            let handles: Vec<_> = (0..threads)
                .map(|t| {
                    scope.spawn(move || {
                        let mut search = Dijkstra::new(nodes);
                        let mut out = Vec::new();
                        for j in (t..n).step_by(threads) {
                            let mut settled = Vec::new();
                            search.upward(&self.down_first, &self.down, &exits[j], &mut settled);
                            out.push((j, settled));
                        }
                        out
                    })
                })
                .collect();
            handles
                .into_iter()
                .flat_map(|h| h.join().expect("a travel search thread panicked"))
                .collect()
        });
        // Buckets: at each node, the points whose reverse search reached it, with the cost from
        // the node to the point and the arc the search reached it by.
        let mut bucket_first = vec![0u32; nodes + 1];
        for (_, settled) in &spaces {
            for &(v, _, _) in settled {
                bucket_first[v as usize + 1] += 1;
            }
        }
        for v in 0..nodes {
            bucket_first[v + 1] += bucket_first[v];
        }
        let mut fill = bucket_first.clone();
        let mut bucket = vec![((0u64, 0u64), 0u32, 0u32); bucket_first[nodes] as usize];
        for (j, settled) in &spaces {
            for &(v, cost, parent) in settled {
                let at = &mut fill[v as usize];
                bucket[*at as usize] = (cost, *j as u32, parent);
                *at += 1;
            }
        }
        drop(fill);
        drop(spaces);
        let (bucket_first, bucket) = (&bucket_first, &bucket);
        let entry = |v: u32, j: usize| {
            bucket[bucket_first[v as usize] as usize..bucket_first[v as usize + 1] as usize]
                .iter()
                .find(|b| b.1 as usize == j)
                .copied()
        };
        std::thread::scope(|scope| {
            let handles: Vec<_> = (0..threads)
                .map(|t| {
                    scope.spawn(move || {
                        let mut search = Dijkstra::new(nodes);
                        let mut settled = Vec::new();
                        let mut out = Vec::new();
                        for i in (t..n).step_by(threads) {
                            search.upward(&self.up_first, &self.up, &starts[i], &mut settled);
                            let mut best: Vec<Option<Cost>> = vec![None; n];
                            let mut meet = vec![u32::MAX; n];
                            for &(v, cost, _) in &settled {
                                let range = bucket_first[v as usize] as usize
                                    ..bucket_first[v as usize + 1] as usize;
                                for &(to, j, _) in &bucket[range] {
                                    let total = add(cost, to);
                                    let j = j as usize;
                                    if best[j].is_none_or(|b| total < b) {
                                        best[j] = Some(total);
                                        meet[j] = v;
                                    }
                                }
                            }
                            // The drive through `meet[j]`: up from i's entry, down to j's exit.
                            let leg = |j: usize| -> Option<Leg> {
                                let cost = best[j]?;
                                let mut up_edges = Vec::new();
                                let mut v = meet[j];
                                while search.parent[v as usize] != SEED {
                                    let e = search.parent[v as usize];
                                    up_edges.push(e);
                                    v = self.edges[e as usize].tail;
                                }
                                let first = v;
                                let mut arcs = Vec::new();
                                for &e in up_edges.iter().rev() {
                                    self.unpack(e, &mut arcs);
                                }
                                let mut v = meet[j];
                                loop {
                                    let (_, _, parent) = entry(v, j)?;
                                    if parent == SEED {
                                        break;
                                    }
                                    self.unpack(parent, &mut arcs);
                                    v = self.edges[parent as usize].head;
                                }
                                Some(Leg {
                                    arcs,
                                    first,
                                    end: v,
                                    cost,
                                })
                            };
                            let legs = if i == 0 {
                                (1..n).map(|j| ((0, j), leg(j))).collect()
                            } else {
                                vec![((i, 0), leg(0))]
                            };
                            out.push((i, best, legs));
                        }
                        out
                    })
                })
                .collect();
            handles
                .into_iter()
                .flat_map(|h| h.join().expect("a travel search thread panicked"))
                .collect()
        })
    }
}
