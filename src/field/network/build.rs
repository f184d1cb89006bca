//! Building the road graph: vertices merged within the tolerance, spans grouped into chains
//! between graph nodes, arcs in compressed sparse rows numbered along a Hilbert curve, weakly
//! connected pieces, the R*-tree of spans; and snapping a point onto it.
//!
//! # Units
//! Coordinates in the working CRS (metres); speeds in km/h; times in hours.

use std::collections::{BTreeMap, HashMap};
use std::hash::{BuildHasherDefault, Hasher};

use rstar::primitives::{GeomWithData, Line};
use rstar::{PointDistance, RTree};

use crate::core::error::{Error, Result};
use crate::field::network::types::{
    Arc, Chain, NetworkOptions, NetworkStats, Piece, PieceId, Position, REVERSED, RoadNetwork,
    Snap, Span, hours_ticks, metres_ticks,
};
use crate::input::roads::{OneWay, RoadSegment};

type FastMap<K, V> = HashMap<K, V, BuildHasherDefault<CellHasher>>;

/// A multiplicative hasher for grid cells (deterministic; the keys are not user-chosen strings,
/// so no defence against collision attacks is needed).
#[derive(Default)]
struct CellHasher(u64);

impl Hasher for CellHasher {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.write_u64(b as u64);
        }
    }
    fn write_i64(&mut self, i: i64) {
        self.write_u64(i as u64);
    }
    fn write_u64(&mut self, i: u64) {
        self.0 = (self.0.rotate_left(5) ^ i).wrapping_mul(0x51_7c_c1_b7_27_22_0a_95);
    }
}

/// Nodes by grid cell of side `tolerance`: the first node of a cell and a chain through
/// `next_in_cell`, so a vertex finds any node within the tolerance in the 3 x 3 cells around it.
struct NodeIndex {
    tolerance: f64,
    nodes: Vec<(f64, f64)>,
    first_in_cell: FastMap<(i64, i64), u32>,
    next_in_cell: Vec<u32>,
}

impl NodeIndex {
    fn new(tolerance: f64) -> NodeIndex {
        NodeIndex {
            tolerance,
            nodes: Vec::new(),
            first_in_cell: FastMap::default(),
            next_in_cell: Vec::new(),
        }
    }

    /// The nearest node within the tolerance of `p` (lowest id on ties), or a new one at `p`.
    fn node_at(&mut self, p: (f64, f64)) -> u32 {
        let (cx, cy) = (
            (p.0 / self.tolerance).floor() as i64,
            (p.1 / self.tolerance).floor() as i64,
        );
        let mut best: Option<(f64, u32)> = None;
        for dx in -1..=1 {
            for dy in -1..=1 {
                let mut at = self.first_in_cell.get(&(cx + dx, cy + dy)).copied();
                while let Some(v) = at {
                    let q = self.nodes[v as usize];
                    let d = (q.0 - p.0).hypot(q.1 - p.1);
                    if d <= self.tolerance && best.is_none_or(|(bd, bv)| (d, v) < (bd, bv)) {
                        best = Some((d, v));
                    }
                    at = Some(self.next_in_cell[v as usize]).filter(|&n| n != u32::MAX);
                }
            }
        }
        if let Some((_, v)) = best {
            return v;
        }
        let v = self.nodes.len() as u32;
        self.nodes.push(p);
        let previous = self.first_in_cell.insert((cx, cy), v);
        self.next_in_cell.push(previous.unwrap_or(u32::MAX));
        v
    }
}

/// Position of (x, y) (each in 0..2^16) along a Hilbert curve (the classic iterative `xy2d`;
/// common practice for ordering points so that near points get near numbers).
fn hilbert(mut x: u32, mut y: u32) -> u64 {
    let n: u32 = 1 << 16;
    let mut d = 0u64;
    let mut s = n / 2;
    while s > 0 {
        let rx = u32::from(x & s > 0);
        let ry = u32::from(y & s > 0);
        d += u64::from(s) * u64::from(s) * u64::from((3 * rx) ^ ry);
        if ry == 0 {
            if rx == 1 {
                x = n - 1 - x;
                y = n - 1 - y;
            }
            std::mem::swap(&mut x, &mut y);
        }
        s /= 2;
    }
    d
}

impl RoadNetwork {
    /// Build the graph from `segments` (see the module doc for nodes, arcs and speeds).
    pub fn build(segments: &[RoadSegment], options: &NetworkOptions) -> Result<RoadNetwork> {
        let tolerance = options.snap_tolerance_m;
        if !(tolerance > 0.0 && tolerance.is_finite()) {
            return Err(Error::input_with_hint(
                format!("road snapping tolerance {tolerance} m is not a positive distance"),
                "give a tolerance in metres such as 0.5",
            ));
        }
        if !(options.walk_kmh > 0.0 && options.walk_kmh.is_finite()) {
            return Err(Error::input(format!(
                "walking speed {} km/h is not a positive speed",
                options.walk_kmh
            )));
        }
        let mut stats = NetworkStats {
            segments: segments.len(),
            ..NetworkStats::default()
        };
        let mut index = NodeIndex::new(tolerance);
        let mut spans: Vec<Span> = Vec::new();
        for segment in segments {
            let Some(kmh) = options.speeds.speed(segment) else {
                *stats.not_drivable.entry(segment.class.clone()).or_default() += 1;
                continue;
            };
            let mut previous: Option<u32> = None;
            for &p in &segment.points {
                let v = index.node_at(p);
                if let Some(u) = previous {
                    if u == v {
                        stats.zero_length += 1;
                        continue;
                    }
                    let (pu, pv) = (index.nodes[u as usize], index.nodes[v as usize]);
                    let metres = (pv.0 - pu.0).hypot(pv.1 - pu.1);
                    let hours = metres / (kmh * 1000.0);
                    let forward = matches!(segment.oneway, OneWay::Both | OneWay::Forward);
                    let backward = matches!(segment.oneway, OneWay::Both | OneWay::Reverse);
                    spans.push(Span {
                        a: u,
                        b: v,
                        metres,
                        forward_hours: if forward { hours } else { f64::INFINITY },
                        backward_hours: if backward { hours } else { f64::INFINITY },
                        chain: u32::MAX,
                        aligned: true,
                        index: 0,
                        before_forward: 0.0,
                        before_backward: 0.0,
                        before_metres: 0.0,
                    });
                    stats.road_km += metres / 1000.0;
                }
                previous = Some(v);
            }
        }
        let nodes = index.nodes;
        if nodes.len() >= (u32::MAX >> 1) as usize || spans.len() >= (u32::MAX >> 1) as usize {
            return Err(Error::input(format!(
                "road network of {} vertices and {} pieces is larger than this tool handles (2^31)",
                nodes.len(),
                spans.len()
            )));
        }
        let n = nodes.len();
        let (mut chains, chain_spans, mut graph_vertex) = chains(n, &mut spans);
        // Number graph nodes along a Hilbert curve, so a search's frontier touches memory that
        // is near together (measured: the 10^6-piece grid of docs/benchmarks.md).
        if !graph_vertex.is_empty() {
            let (mut x0, mut y0, mut x1, mut y1) = (f64::MAX, f64::MAX, f64::MIN, f64::MIN);
            for &v in &graph_vertex {
                let p = nodes[v as usize];
                (x0, y0, x1, y1) = (x0.min(p.0), y0.min(p.1), x1.max(p.0), y1.max(p.1));
            }
            let scale = 65535.0 / (x1 - x0).max(y1 - y0).max(1e-9);
            let key = |v: u32| {
                let p = nodes[v as usize];
                hilbert(((p.0 - x0) * scale) as u32, ((p.1 - y0) * scale) as u32)
            };
            let mut order: Vec<u32> = (0..graph_vertex.len() as u32).collect();
            order.sort_by_key(|&g| (key(graph_vertex[g as usize]), g));
            let mut new_id = vec![0u32; order.len()];
            for (k, &g) in order.iter().enumerate() {
                new_id[g as usize] = k as u32;
            }
            graph_vertex = order.iter().map(|&g| graph_vertex[g as usize]).collect();
            for c in &mut chains {
                c.s = new_id[c.s as usize];
                c.t = new_id[c.t as usize];
            }
        }
        // Arcs as (tail, head, hours, metres, chain with direction bit), one per chain and
        // drivable direction; a chain from a node back to itself gives no arc.
        let mut arcs: Vec<(u32, u32, f64, f64, u32)> = Vec::new();
        for (k, c) in chains.iter().enumerate() {
            if c.s == c.t {
                continue;
            }
            if c.forward_hours.is_finite() {
                arcs.push((c.s, c.t, c.forward_hours, c.metres, k as u32));
            }
            if c.backward_hours.is_finite() {
                arcs.push((c.t, c.s, c.backward_hours, c.metres, k as u32 | REVERSED));
            }
        }
        // Compressed sparse rows by a counting sort on the tail (stable: input order kept).
        let graph_nodes = graph_vertex.len();
        let mut first_out = vec![0u32; graph_nodes + 1];
        for a in &arcs {
            first_out[a.0 as usize + 1] += 1;
        }
        for v in 0..graph_nodes {
            first_out[v + 1] += first_out[v];
        }
        let mut fill = first_out.clone();
        let mut arc_data = vec![
            Arc {
                hours: 0,
                metres: 0,
                head: 0
            };
            arcs.len()
        ];
        let mut arc_chain = vec![0u32; arcs.len()];
        for &(u, v, h, m, c) in &arcs {
            let at = fill[u as usize] as usize;
            fill[u as usize] += 1;
            arc_data[at] = Arc {
                hours: hours_ticks(h),
                metres: metres_ticks(m),
                head: v,
            };
            arc_chain[at] = c;
        }
        drop(arcs);
        // Weakly connected pieces by union-find over spans.
        let mut parent: Vec<u32> = (0..n as u32).collect();
        fn find(parent: &mut [u32], mut v: u32) -> u32 {
            while parent[v as usize] != v {
                parent[v as usize] = parent[parent[v as usize] as usize];
                v = parent[v as usize];
            }
            v
        }
        for s in &spans {
            let (ra, rb) = (find(&mut parent, s.a), find(&mut parent, s.b));
            if ra != rb {
                let (lo, hi) = (ra.min(rb), ra.max(rb));
                parent[hi as usize] = lo;
            }
        }
        let roots: Vec<u32> = (0..n as u32).map(|v| find(&mut parent, v)).collect();
        let mut has_span = vec![false; n];
        for s in &spans {
            has_span[s.a as usize] = true;
            has_span[s.b as usize] = true;
        }
        // Vertices of no span (a segment all within the tolerance) belong to no piece.
        let mut root_km: BTreeMap<u32, (f64, usize)> = BTreeMap::new();
        for (v, &r) in roots.iter().enumerate() {
            if has_span[v] {
                root_km.entry(r).or_default().1 += 1;
            }
        }
        for s in &spans {
            root_km.get_mut(&roots[s.a as usize]).expect("root").0 += s.metres / 1000.0;
        }
        // Number pieces by road length, longest first (ties: lowest node first).
        let mut order: Vec<(u32, f64, usize)> =
            root_km.iter().map(|(&r, &(km, c))| (r, km, c)).collect();
        order.sort_by(|x, y| y.1.total_cmp(&x.1).then(x.0.cmp(&y.0)));
        let mut number: HashMap<u32, u32> = HashMap::with_capacity(order.len());
        let mut pieces = Vec::with_capacity(order.len());
        for (k, &(r, km, count)) in order.iter().enumerate() {
            number.insert(r, k as u32);
            pieces.push(Piece {
                nodes: count,
                road_km: km,
            });
        }
        let piece_of: Vec<u32> = roots
            .iter()
            .map(|r| number.get(r).copied().unwrap_or(u32::MAX))
            .collect();
        let tree = RTree::bulk_load(
            spans
                .iter()
                .enumerate()
                .map(|(k, s)| {
                    let (pa, pb) = (nodes[s.a as usize], nodes[s.b as usize]);
                    GeomWithData::new(Line::new([pa.0, pa.1], [pb.0, pb.1]), k as u32)
                })
                .collect(),
        );
        stats.nodes = n;
        stats.spans = spans.len();
        stats.graph_nodes = graph_nodes;
        stats.arcs = arc_data.len();
        Ok(RoadNetwork {
            nodes,
            first_out,
            arcs: arc_data,
            arc_chain,
            graph_vertex,
            chains,
            chain_spans,
            spans,
            tree,
            piece_of,
            pieces,
            stats,
            walk_kmh: options.walk_kmh,
            max_walk_m: options.max_walk_m,
        })
    }

    /// Where a snapped point lies on its chain.
    pub(super) fn position(&self, snap: &Snap) -> Position {
        let span = self.spans[snap.span as usize];
        let chain = self.chains[span.chain as usize];
        let share = if span.aligned {
            snap.along
        } else {
            1.0 - snap.along
        };
        let (ahead, back) = if span.aligned {
            (span.forward_hours, span.backward_hours)
        } else {
            (span.backward_hours, span.forward_hours)
        };
        let partial = |hours: f64| if share > 0.0 { share * hours } else { 0.0 };
        Position {
            chain,
            forward_before: span.before_forward + partial(ahead),
            backward_before: span.before_backward + partial(back),
            metres_before: span.before_metres + share * span.metres,
        }
    }

    /// The graph node a snapped point sits on, when it is at (within a micrometre of) a
    /// chain's end.
    pub(super) fn at_node(&self, snap: &Snap) -> Option<u32> {
        let p = self.position(snap);
        if p.metres_before <= 1e-6 {
            Some(p.chain.s)
        } else if p.chain.metres - p.metres_before <= 1e-6 {
            Some(p.chain.t)
        } else {
            None
        }
    }

    /// The nearest point on any road to `point`; `None` when the network has no road.
    pub fn snap(&self, point: (f64, f64)) -> Option<Snap> {
        let query = [point.0, point.1];
        let nearest = self.tree.nearest_neighbor(&query)?;
        let on = nearest.geom().nearest_point(&query);
        let walk_m = nearest.distance_2(&query).sqrt();
        let span = nearest.data;
        let s = self.spans[span as usize];
        let (pa, pb) = (self.nodes[s.a as usize], self.nodes[s.b as usize]);
        let along = if s.metres > 0.0 {
            (((on[0] - pa.0) * (pb.0 - pa.0) + (on[1] - pa.1) * (pb.1 - pa.1))
                / (s.metres * s.metres))
                .clamp(0.0, 1.0)
        } else {
            0.0
        };
        Some(Snap {
            point,
            on_road: (on[0], on[1]),
            walk_m,
            piece: PieceId(self.piece_of[s.a as usize]),
            span,
            along,
        })
    }

    /// The graph node an arc leaves from.
    pub(super) fn arc_tail(&self, arc: u32) -> u32 {
        let code = self.arc_chain[arc as usize];
        let c = self.chains[(code & !REVERSED) as usize];
        if code & REVERSED != 0 { c.t } else { c.s }
    }

    /// The vertices of a chain in s → t order.
    pub(super) fn chain_vertices(&self, chain: &Chain) -> Vec<u32> {
        let mut out = vec![chain.start_vertex];
        let spans = &self.chain_spans[chain.first as usize..(chain.first + chain.count) as usize];
        for &k in spans {
            let span = self.spans[k as usize];
            out.push(if span.aligned { span.b } else { span.a });
        }
        out
    }
}

/// Group spans into chains between graph nodes: a vertex where exactly two spans meet, leading
/// to two other vertices and allowing the same directions through, is passed through; every
/// other vertex with a span is a graph node (and one vertex of each ring of passed-through
/// vertices). Fills each span's chain fields; gives the chains, their spans in order and the
/// vertex of each graph node.
fn chains(n: usize, spans: &mut [Span]) -> (Vec<Chain>, Vec<u32>, Vec<u32>) {
    // Spans at each vertex, in compressed sparse rows.
    let mut first = vec![0u32; n + 1];
    for s in spans.iter() {
        first[s.a as usize + 1] += 1;
        first[s.b as usize + 1] += 1;
    }
    for v in 0..n {
        first[v + 1] += first[v];
    }
    let mut fill = first.clone();
    let mut at_vertex = vec![0u32; 2 * spans.len()];
    for (k, s) in spans.iter().enumerate() {
        for v in [s.a, s.b] {
            at_vertex[fill[v as usize] as usize] = k as u32;
            fill[v as usize] += 1;
        }
    }
    drop(fill);
    // (into v allowed, out of v allowed) along a span.
    let rules_at = |span: &Span, v: u32| {
        if v == span.b {
            (
                span.forward_hours.is_finite(),
                span.backward_hours.is_finite(),
            )
        } else {
            (
                span.backward_hours.is_finite(),
                span.forward_hours.is_finite(),
            )
        }
    };
    let other = |span: &Span, v: u32| if span.a == v { span.b } else { span.a };
    let mut through: Vec<bool> = (0..n)
        .map(|v| {
            let (lo, hi) = (first[v] as usize, first[v + 1] as usize);
            if hi - lo != 2 {
                return false;
            }
            let v = v as u32;
            let (e1, e2) = (
                &spans[at_vertex[lo] as usize],
                &spans[at_vertex[lo + 1] as usize],
            );
            if other(e1, v) == other(e2, v) {
                return false;
            }
            let ((in1, out1), (in2, out2)) = (rules_at(e1, v), rules_at(e2, v));
            in1 == out2 && in2 == out1
        })
        .collect();
    let mut graph_id = vec![u32::MAX; n];
    let mut graph_vertex: Vec<u32> = Vec::new();
    let mut id_of = |v: u32, graph_vertex: &mut Vec<u32>| {
        if graph_id[v as usize] == u32::MAX {
            graph_id[v as usize] = graph_vertex.len() as u32;
            graph_vertex.push(v);
        }
        graph_id[v as usize]
    };
    let mut chains: Vec<Chain> = Vec::new();
    let mut chain_spans: Vec<u32> = Vec::with_capacity(spans.len());
    let mut assigned = vec![false; spans.len()];
    let mut ring_cursor = 0usize;
    let mut next_kept = 0usize;
    loop {
        // Kept vertices in order, then one vertex of each ring left.
        let start =
            if let Some(v) = (next_kept..n).find(|&v| !through[v] && first[v + 1] > first[v]) {
                next_kept = v + 1;
                v as u32
            } else {
                next_kept = n;
                while ring_cursor < spans.len() && assigned[ring_cursor] {
                    ring_cursor += 1;
                }
                if ring_cursor == spans.len() {
                    break;
                }
                let v = spans[ring_cursor].a;
                through[v as usize] = false;
                v
            };
        for slot in first[start as usize]..first[start as usize + 1] {
            let k0 = at_vertex[slot as usize] as usize;
            if assigned[k0] {
                continue;
            }
            let chain_id = chains.len() as u32;
            let first_span = chain_spans.len() as u32;
            let (mut v, mut k) = (start, k0);
            let (mut forward, mut backward, mut metres) = (0.0, 0.0, 0.0);
            let mut index = 0u32;
            let end = loop {
                assigned[k] = true;
                let span = &mut spans[k];
                let aligned = span.a == v;
                let (ahead, back) = if aligned {
                    (span.forward_hours, span.backward_hours)
                } else {
                    (span.backward_hours, span.forward_hours)
                };
                span.chain = chain_id;
                span.aligned = aligned;
                span.index = index;
                span.before_forward = forward;
                span.before_backward = backward;
                span.before_metres = metres;
                forward += ahead;
                backward += back;
                metres += span.metres;
                chain_spans.push(k as u32);
                index += 1;
                let next = if aligned { span.b } else { span.a };
                if !through[next as usize] || next == start {
                    break next;
                }
                let lo = first[next as usize] as usize;
                k = if at_vertex[lo] as usize == k {
                    at_vertex[lo + 1] as usize
                } else {
                    at_vertex[lo] as usize
                };
                v = next;
            };
            let s = id_of(start, &mut graph_vertex);
            let t = id_of(end, &mut graph_vertex);
            chains.push(Chain {
                s,
                t,
                first: first_span,
                count: index,
                start_vertex: start,
                forward_hours: forward,
                backward_hours: backward,
                metres,
            });
        }
    }
    (chains, chain_spans, graph_vertex)
}
