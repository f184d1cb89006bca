//! Shortest paths on the road graph: Dijkstra searches (Dijkstra 1959) from snapped points,
//! the travel matrix among points, and the road geometry of a drive.
//!
//! # Units
//! Coordinates in the working CRS (metres); hours; road kilometres in [`Travel`].

use std::cmp::Reverse;
use std::collections::BinaryHeap;

use std::collections::HashMap;

use crate::core::error::{Error, Result};
use crate::field::network::hierarchy::Hierarchy;
use crate::field::network::types::{
    Cost, Leg, NO_WAY, REVERSED, RoadNetwork, Row, Snap, Travel, TravelMethod, Unreachable, add,
    cost_hours, cost_metres, hours_ticks, metres_ticks,
};

/// Where a snapped point joins the graph: (graph node, cost to leave by it).
pub(super) fn access(network: &RoadNetwork, snap: &Snap) -> Vec<(u32, Cost)> {
    if let Some(node) = network.at_node(snap) {
        return vec![(node, (0, 0))];
    }
    let p = network.position(snap);
    let c = p.chain;
    let mut out = Vec::with_capacity(2);
    if c.forward_hours.is_finite() {
        out.push((
            c.t,
            (
                hours_ticks(c.forward_hours - p.forward_before),
                metres_ticks(c.metres - p.metres_before),
            ),
        ));
    }
    if c.backward_hours.is_finite() {
        out.push((
            c.s,
            (
                hours_ticks(p.backward_before),
                metres_ticks(p.metres_before),
            ),
        ));
    }
    out
}

/// Where a snapped point is arrived at from the graph: (graph node, cost from there).
pub(super) fn egress(network: &RoadNetwork, snap: &Snap) -> Vec<(u32, Cost)> {
    if let Some(node) = network.at_node(snap) {
        return vec![(node, (0, 0))];
    }
    let p = network.position(snap);
    let c = p.chain;
    let mut out = Vec::with_capacity(2);
    if c.forward_hours.is_finite() {
        out.push((
            c.s,
            (hours_ticks(p.forward_before), metres_ticks(p.metres_before)),
        ));
    }
    if c.backward_hours.is_finite() {
        out.push((
            c.t,
            (
                hours_ticks(c.backward_hours - p.backward_before),
                metres_ticks(c.metres - p.metres_before),
            ),
        ));
    }
    out
}

/// Drive along one chain from one snapped point to another on the same chain, if allowed:
/// (cost, whether it runs the chain's way).
fn same_chain(network: &RoadNetwork, from: &Snap, to: &Snap) -> Option<(Cost, bool)> {
    if network.at_node(from).is_some() || network.at_node(to).is_some() {
        return None;
    }
    let (pf, pt) = (network.position(from), network.position(to));
    if network.spans[from.span as usize].chain != network.spans[to.span as usize].chain {
        return None;
    }
    let c = pf.chain;
    let d = pt.metres_before - pf.metres_before;
    if d >= 0.0 && c.forward_hours.is_finite() {
        Some((
            (
                hours_ticks(pt.forward_before - pf.forward_before),
                metres_ticks(d),
            ),
            true,
        ))
    } else if d <= 0.0 && c.backward_hours.is_finite() {
        Some((
            (
                hours_ticks(pf.backward_before - pt.backward_before),
                metres_ticks(-d),
            ),
            false,
        ))
    } else {
        None
    }
}

/// A reusable Dijkstra search over one network.
pub(super) struct Search {
    /// Cost of the best path found to each node.
    best: Vec<Cost>,
    /// Arc by which each node was reached, `u32::MAX` for a source.
    pred: Vec<u32>,
    touched: Vec<u32>,
    /// Target marks: `mark[v] == stamp` when v is an end node of a point still to settle.
    mark: Vec<u32>,
    stamp: u32,
    heap: BinaryHeap<Reverse<(Cost, u32)>>,
}

impl Search {
    pub(super) fn new(nodes: usize) -> Search {
        Search {
            best: vec![(NO_WAY, 0); nodes],
            pred: vec![u32::MAX; nodes],
            touched: Vec::new(),
            mark: vec![0; nodes],
            stamp: 0,
            heap: BinaryHeap::new(),
        }
    }

    fn reset(&mut self) {
        for &v in &self.touched {
            self.best[v as usize] = (NO_WAY, 0);
            self.pred[v as usize] = u32::MAX;
        }
        self.touched.clear();
        self.heap.clear();
    }

    /// Least costs from `sources` (node, cost already spent) until every node in `targets` is
    /// settled (all nodes when `targets` is empty).
    pub(super) fn run(&mut self, network: &RoadNetwork, sources: &[(u32, Cost)], targets: &[u32]) {
        self.reset();
        self.stamp = self.stamp.wrapping_add(1);
        if self.stamp == 0 {
            self.mark.iter_mut().for_each(|m| *m = 0);
            self.stamp = 1;
        }
        let mut remaining = 0usize;
        for &t in targets {
            if self.mark[t as usize] != self.stamp {
                self.mark[t as usize] = self.stamp;
                remaining += 1;
            }
        }
        let all = targets.is_empty();
        for &(v, cost) in sources {
            if cost < self.best[v as usize] {
                if self.best[v as usize].0 == NO_WAY {
                    self.touched.push(v);
                }
                self.best[v as usize] = cost;
                self.heap.push(Reverse((cost, v)));
            }
        }
        while let Some(Reverse((cost, u))) = self.heap.pop() {
            let ui = u as usize;
            // Entries are pushed only on a strict improvement, so the one whose cost equals
            // the node's is its only live entry: each node is settled once.
            if cost > self.best[ui] {
                continue;
            }
            if !all && self.mark[ui] == self.stamp {
                remaining -= 1;
                if remaining == 0 {
                    break;
                }
            }
            let (hu, mu) = cost;
            let range = network.first_out[ui] as usize..network.first_out[ui + 1] as usize;
            for (data, arc) in network.arcs[range.clone()].iter().zip(range) {
                let v = data.head as usize;
                let next = (hu + data.hours, mu + data.metres);
                if next < self.best[v] {
                    if self.best[v].0 == NO_WAY {
                        self.touched.push(v as u32);
                    }
                    self.best[v] = next;
                    self.pred[v] = arc as u32;
                    self.heap.push(Reverse((next, v as u32)));
                }
            }
        }
    }

    /// The arcs of the best path to `end` in order, and the source node it leaves from.
    fn arcs_to(&self, network: &RoadNetwork, end: u32) -> (Vec<u32>, u32) {
        let mut arcs = Vec::new();
        let mut v = end;
        while self.pred[v as usize] != u32::MAX {
            let arc = self.pred[v as usize];
            arcs.push(arc);
            v = network.arc_tail(arc);
        }
        arcs.reverse();
        (arcs, v)
    }

    /// The kept drive to a point through its egress ends, if any.
    fn leg(&self, network: &RoadNetwork, ends: &[(u32, Cost)]) -> Option<Leg> {
        let (cost, end) = self.arrive(ends)?;
        let (arcs, first) = self.arcs_to(network, end);
        Some(Leg {
            arcs,
            first,
            end,
            cost,
        })
    }

    /// Least cost and end node to reach a point through its egress ends.
    fn arrive(&self, ends: &[(u32, Cost)]) -> Option<(Cost, u32)> {
        let mut best: Option<(Cost, u32)> = None;
        for &(v, c) in ends {
            let d = self.best[v as usize];
            if d.0 != NO_WAY {
                let total = add(d, c);
                if best.is_none_or(|(b, _)| total < b) {
                    best = Some((total, v));
                }
            }
        }
        best
    }
}

/// The rows of every source by one Dijkstra search each, spread over `threads` threads.
fn dijkstra_rows(
    network: &RoadNetwork,
    starts: &[Vec<(u32, Cost)>],
    exits: &[Vec<(u32, Cost)>],
    threads: usize,
) -> Vec<Row> {
    let n = starts.len();
    let targets: Vec<u32> = exits.iter().flatten().map(|e| e.0).collect();
    std::thread::scope(|scope| {
        let handles: Vec<_> = (0..threads)
            .map(|t| {
                let targets = &targets;
                scope.spawn(move || {
                    let mut search = Search::new(network.graph_vertex.len());
                    let mut out = Vec::new();
                    for i in (t..n).step_by(threads) {
                        search.run(network, &starts[i], targets);
                        // The drives from the depot to every point and from every point to
                        // the depot, kept for the route lines.
                        let mut legs = Vec::new();
                        if i == 0 {
                            for (j, ends) in exits.iter().enumerate().skip(1) {
                                legs.push(((0, j), search.leg(network, ends)));
                            }
                        } else {
                            legs.push(((i, 0), search.leg(network, &exits[0])));
                        }
                        let row = exits
                            .iter()
                            .map(|ends| search.arrive(ends).map(|(c, _)| c))
                            .collect();
                        out.push((i, row, legs));
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

impl RoadNetwork {
    fn walk_hours(&self, snap: &Snap) -> f64 {
        snap.walk_m / (self.walk_kmh * 1000.0)
    }

    /// Travel among `points` (point 0 the depot) by shortest paths, the searches spread over
    /// `threads` threads, by the method [`TravelMethod::for_size`] picks. An empty network is
    /// an input error.
    pub fn travel(&self, points: &[(f64, f64)], threads: usize) -> Result<Travel> {
        let method = TravelMethod::for_size(points.len(), self.graph_vertex.len(), threads);
        self.travel_by(points, threads, method)
    }

    /// [`RoadNetwork::travel`] by a given method; every method gives the same hours and
    /// kilometres (to the tick: see [`Cost`]).
    pub fn travel_by(
        &self,
        points: &[(f64, f64)],
        threads: usize,
        method: TravelMethod,
    ) -> Result<Travel> {
        let n = points.len();
        let snaps: Vec<Snap> = points
            .iter()
            .map(|&p| {
                self.snap(p).ok_or_else(|| {
                    Error::input_with_hint(
                        "the road layer has no drivable road",
                        "check the road layer and its class field: every road may be of a class that is not driven (footway, path, ...)",
                    )
                })
            })
            .collect::<Result<_>>()?;
        let starts: Vec<Vec<(u32, Cost)>> = snaps.iter().map(|s| access(self, s)).collect();
        let exits: Vec<Vec<(u32, Cost)>> = snaps.iter().map(|s| egress(self, s)).collect();
        let threads = threads.clamp(1, n.max(1));
        let (mut preprocess_s, mut shortcuts) = (0.0, 0);
        let rows = match method {
            TravelMethod::Dijkstra => dijkstra_rows(self, &starts, &exits, threads),
            TravelMethod::Hierarchy => {
                let started = std::time::Instant::now();
                let hierarchy = Hierarchy::build(self, threads);
                preprocess_s = started.elapsed().as_secs_f64();
                shortcuts = hierarchy.shortcuts;
                hierarchy.rows(&starts, &exits, threads)
            }
        };
        let mut hours = vec![f64::INFINITY; n * n];
        let mut km = vec![f64::INFINITY; n * n];
        let mut depot_legs = HashMap::new();
        for (i, row, legs) in rows {
            for (j, through) in row.into_iter().enumerate() {
                if i == j {
                    hours[i * n + j] = 0.0;
                    km[i * n + j] = 0.0;
                    continue;
                }
                let mut best = through;
                // A drive along the chain both points are on, when it is cheaper.
                if let Some((direct, _)) = same_chain(self, &snaps[i], &snaps[j])
                    && best.is_none_or(|b| direct < b)
                {
                    best = Some(direct);
                }
                if let Some(cost) = best {
                    hours[i * n + j] =
                        self.walk_hours(&snaps[i]) + cost_hours(cost) + self.walk_hours(&snaps[j]);
                    km[i * n + j] = cost_metres(cost) / 1000.0;
                }
            }
            depot_legs.extend(legs);
        }
        let far_from_road = snaps
            .iter()
            .enumerate()
            .filter(|(_, s)| s.walk_m > self.max_walk_m)
            .map(|(k, s)| (k, s.walk_m))
            .collect();
        let mut unreachable = Vec::new();
        if n > 0 {
            let depot_piece = snaps[0].piece;
            for (k, s) in snaps.iter().enumerate().skip(1) {
                if s.piece != depot_piece {
                    unreachable.push((
                        k,
                        Unreachable::OtherPiece {
                            piece: s.piece,
                            depot_piece,
                        },
                    ));
                    continue;
                }
                let to_point = hours[k].is_infinite();
                let to_depot = hours[k * n].is_infinite();
                if to_point || to_depot {
                    unreachable.push((k, Unreachable::OneWay { to_point, to_depot }));
                }
            }
        }
        Ok(Travel {
            n,
            hours,
            km,
            snaps,
            far_from_road,
            unreachable,
            depot_legs,
            method,
            preprocess_s,
            shortcuts,
        })
    }

    /// The road geometry of the fastest drive from one snapped point to another: the point on
    /// the road where the drive starts, the vertices passed, the point where it ends (walks not
    /// included). `None` when there is no way.
    pub fn path(&self, from: &Snap, to: &Snap) -> Option<Vec<(f64, f64)>> {
        let ends = egress(self, to);
        let starts = access(self, from);
        // One search's arrays per thread, reused from leg to leg (allocating and clearing them
        // for every leg cost more than the search on a large network).
        thread_local! {
            static SEARCH: std::cell::RefCell<Option<Search>> = const { std::cell::RefCell::new(None) };
        }
        let targets: Vec<u32> = ends.iter().map(|e| e.0).collect();
        SEARCH.with(|cell| {
            let mut cached = cell.borrow_mut();
            if cached
                .as_ref()
                .is_none_or(|s| s.best.len() != self.graph_vertex.len())
            {
                *cached = Some(Search::new(self.graph_vertex.len()));
            }
            let search = cached.as_mut().expect("just made");
            search.run(self, &starts, &targets);
            self.path_along(search.leg(self, &ends), from, to)
        })
    }

    /// The road geometry of a drive from `from` to `to` whose way through the graph is
    /// `through` (`None`: no way through the graph; a drive along their shared chain may still
    /// be shorter).
    fn path_along(&self, through: Option<Leg>, from: &Snap, to: &Snap) -> Option<Vec<(f64, f64)>> {
        let direct = same_chain(self, from, to);
        let mut line = vec![from.on_road];
        // The vertices strictly between a snapped point and its chain's end (or start).
        let tail = |snap: &Snap, towards_t: bool| -> Vec<(f64, f64)> {
            if self.at_node(snap).is_some() {
                return Vec::new();
            }
            let span = self.spans[snap.span as usize];
            let chain = self.chains[span.chain as usize];
            let vertices = self.chain_vertices(&chain);
            let k = span.index as usize;
            let picked: Vec<u32> = if towards_t {
                vertices[k + 1..].to_vec()
            } else {
                vertices[..=k].iter().rev().copied().collect()
            };
            picked.iter().map(|&v| self.nodes[v as usize]).collect()
        };
        match (through, direct) {
            (None, None) => return None,
            (through, Some((direct, aligned)))
                if through.as_ref().is_none_or(|l| direct < l.cost) =>
            {
                let (pf, pt) = (self.position(from), self.position(to));
                let chain = pf.chain;
                let vertices = self.chain_vertices(&chain);
                let (lo, hi) = (
                    pf.metres_before.min(pt.metres_before),
                    pf.metres_before.max(pt.metres_before),
                );
                let mut between: Vec<(f64, f64)> = Vec::new();
                let mut at = 0.0;
                for (k, &span_id) in self.chain_spans
                    [chain.first as usize..(chain.first + chain.count) as usize]
                    .iter()
                    .enumerate()
                {
                    at += self.spans[span_id as usize].metres;
                    if at > lo && at < hi {
                        between.push(self.nodes[vertices[k + 1] as usize]);
                    }
                }
                if !aligned {
                    between.reverse();
                }
                line.extend(between);
            }
            (
                Some(Leg {
                    arcs, first, end, ..
                }),
                _,
            ) => {
                // From the point to the first graph node.
                if self.at_node(from).is_none() {
                    let c = self.position(from).chain;
                    line.extend(tail(from, first == c.t && c.forward_hours.is_finite()));
                }
                line.push(self.nodes[self.graph_vertex[first as usize] as usize]);
                for arc in arcs {
                    let code = self.arc_chain[arc as usize];
                    let c = self.chains[(code & !REVERSED) as usize];
                    let mut vertices = self.chain_vertices(&c);
                    if code & REVERSED != 0 {
                        vertices.reverse();
                    }
                    line.extend(vertices[1..].iter().map(|&v| self.nodes[v as usize]));
                }
                // From the last graph node to the point.
                if self.at_node(to).is_none() {
                    let c = self.position(to).chain;
                    let mut rest = tail(to, end == c.t && c.backward_hours.is_finite());
                    rest.reverse();
                    line.extend(rest);
                }
            }
            (None, Some(_)) => unreachable!("handled by the guard above"),
        }
        line.push(to.on_road);
        line.dedup();
        Some(line)
    }

    /// The road geometry of each leg of a visit of `order` (indices into `travel`'s points),
    /// e.g. `[0, 3, 1, 0]` for depot → 3 → 1 → depot; an empty leg where there is no way.
    /// Legs from or to the depot (point 0) follow the drives the matrix searches found; the
    /// others are searched.
    pub fn route(&self, travel: &Travel, order: &[usize]) -> Vec<Vec<(f64, f64)>> {
        order
            .windows(2)
            .map(|w| {
                let (from, to) = (&travel.snaps[w[0]], &travel.snaps[w[1]]);
                let line = if w[0] == 0 || w[1] == 0 {
                    match travel.depot_legs.get(&(w[0], w[1])) {
                        Some(leg) => self.path_along(leg.clone(), from, to),
                        None => self.path(from, to),
                    }
                } else {
                    self.path(from, to)
                };
                line.unwrap_or_default()
            })
            .collect()
    }
}
