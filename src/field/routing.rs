//! Routes for crew days: the order of stops from the depot and back, and the split of a season's
//! stops into days that fit the working hours.
//!
//! - Small days (up to [`EXACT_MAX`] stops) are ordered exactly by the Held–Karp dynamic
//!   programme (Held & Karp 1962, *J. SIAM* 10:196–210).
//! - Larger sets get nearest-neighbour tours from several starts, each improved by 2-opt and
//!   Or-opt moves to a local optimum (Lin 1965; Or 1976; see Johnson & McGeoch 1997, "The
//!   traveling salesman problem: a case study in local optimization"); the best is kept.
//! - Days are cut from one tour over all stops by the exact split of Beasley (1983, *Omega*
//!   11:403–408, "route first, cluster second"): fewest days, then least travel, subject to each
//!   day's travel plus work fitting the day and at most a set number of stops.
//!
//! Node 0 of a [`Matrix`] is the depot. Times in hours. Everything is deterministic.

/// Largest stop count ordered exactly (2^12 x 12^2 steps).
pub const EXACT_MAX: usize = 12;

/// Travel times between the depot (node 0) and the stops (1..n). Road travel with one-way
/// streets is asymmetric (`get(i, j) != get(j, i)`); the tours below are directed and stay
/// correct on such a matrix.
#[derive(Debug, Clone)]
pub struct Matrix {
    n: usize,
    t: Vec<f64>,
    symmetric: bool,
}

impl Matrix {
    /// Travel times from straight-line distances: metres x `detour` / (`speed_kmh` x 1000).
    pub fn from_points(points: &[(f64, f64)], detour: f64, speed_kmh: f64) -> Matrix {
        let n = points.len();
        let mut t = vec![0.0; n * n];
        for i in 0..n {
            for j in 0..n {
                let d = (points[i].0 - points[j].0).hypot(points[i].1 - points[j].1);
                t[i * n + j] = d * detour / (speed_kmh * 1000.0);
            }
        }
        Matrix {
            n,
            t,
            symmetric: true,
        }
    }

    /// From a full row-major matrix (used by tests on published instances).
    pub fn from_rows(n: usize, t: Vec<f64>) -> Matrix {
        assert_eq!(t.len(), n * n);
        let symmetric = (0..n).all(|i| (0..i).all(|j| t[i * n + j] == t[j * n + i]));
        Matrix { n, t, symmetric }
    }

    pub fn len(&self) -> usize {
        self.n
    }

    pub fn is_empty(&self) -> bool {
        self.n == 0
    }

    /// Whether every trip takes as long both ways.
    pub fn is_symmetric(&self) -> bool {
        self.symmetric
    }

    /// Travel along `path` in order minus travel along it backwards: what reversing it adds.
    fn reversal(&self, path: &[usize]) -> f64 {
        if self.symmetric {
            return 0.0;
        }
        path.windows(2)
            .map(|w| self.get(w[1], w[0]) - self.get(w[0], w[1]))
            .sum()
    }

    #[inline]
    pub fn get(&self, i: usize, j: usize) -> f64 {
        self.t[i * self.n + j]
    }
}

/// Travel of the closed tour depot → `stops` in order → depot.
pub fn tour_length(m: &Matrix, stops: &[usize]) -> f64 {
    let mut prev = 0;
    let mut total = 0.0;
    for &s in stops {
        total += m.get(prev, s);
        prev = s;
    }
    total + m.get(prev, 0)
}

/// The best order of `stops` (node numbers, depot excluded): exact for small sets, the local
/// search otherwise.
pub fn order(m: &Matrix, stops: &[usize]) -> Vec<usize> {
    if stops.len() <= EXACT_MAX {
        exact(m, stops)
    } else {
        heuristic(m, stops, 32)
    }
}

/// Held–Karp: the shortest closed tour from the depot through every stop.
pub fn exact(m: &Matrix, stops: &[usize]) -> Vec<usize> {
    let k = stops.len();
    if k <= 1 {
        return stops.to_vec();
    }
    assert!(k <= 20, "Held-Karp on {k} stops");
    let full = 1usize << k;
    // best[set * k + last]: shortest path from the depot through `set`, ending at `last`.
    let mut best = vec![f64::INFINITY; full * k];
    let mut from = vec![u8::MAX; full * k];
    for j in 0..k {
        best[(1 << j) * k + j] = m.get(0, stops[j]);
    }
    for set in 1..full {
        for last in 0..k {
            let here = best[set * k + last];
            if set & (1 << last) == 0 || !here.is_finite() {
                continue;
            }
            for next in 0..k {
                if set & (1 << next) != 0 {
                    continue;
                }
                let to = set | (1 << next);
                let v = here + m.get(stops[last], stops[next]);
                if v < best[to * k + next] - 1e-12 {
                    best[to * k + next] = v;
                    from[to * k + next] = last as u8;
                }
            }
        }
    }
    let all = full - 1;
    let mut last = (0..k)
        .min_by(|&a, &b| {
            let va = best[all * k + a] + m.get(stops[a], 0);
            let vb = best[all * k + b] + m.get(stops[b], 0);
            va.total_cmp(&vb)
        })
        .expect("k >= 2");
    let mut set = all;
    let mut out = Vec::with_capacity(k);
    loop {
        out.push(stops[last]);
        let prev = from[set * k + last];
        set &= !(1 << last);
        if prev == u8::MAX {
            break;
        }
        last = prev as usize;
    }
    out.reverse();
    out
}

/// Nearest-neighbour tours from the depot and from up to `starts - 1` stops, each improved by
/// 2-opt and Or-opt; the shortest is returned (depot excluded, in visiting order).
pub fn heuristic(m: &Matrix, stops: &[usize], starts: usize) -> Vec<usize> {
    if stops.len() <= 2 {
        return stops.to_vec();
    }
    // A cycle over the depot and the stops; position 0 holds the depot.
    let nodes: Vec<usize> = std::iter::once(0).chain(stops.iter().copied()).collect();
    let mut best: Option<(f64, Vec<usize>)> = None;
    let starts = starts.clamp(1, nodes.len());
    for s in 0..starts {
        // Spread the starting nodes over the set, deterministically.
        let first = nodes[s * nodes.len() / starts];
        let mut cycle = nearest_neighbour(m, &nodes, first);
        improve(m, &mut cycle);
        let length = cycle_length(m, &cycle);
        if best.as_ref().is_none_or(|(b, _)| length < *b - 1e-12) {
            best = Some((length, cycle));
        }
    }
    let cycle = best.expect("at least one start").1;
    let at = cycle.iter().position(|&v| v == 0).expect("depot in cycle");
    let mut out: Vec<usize> = cycle[at + 1..]
        .iter()
        .chain(cycle[..at].iter())
        .copied()
        .collect();
    // Same tour either way round on a symmetric matrix; keep the one that starts with the
    // nearer end. A directed tour is never turned round.
    if m.is_symmetric() && m.get(0, out[0]) > m.get(0, *out.last().expect("nonempty")) {
        out.reverse();
    }
    out
}

fn cycle_length(m: &Matrix, cycle: &[usize]) -> f64 {
    let n = cycle.len();
    (0..n).map(|i| m.get(cycle[i], cycle[(i + 1) % n])).sum()
}

fn nearest_neighbour(m: &Matrix, nodes: &[usize], first: usize) -> Vec<usize> {
    let mut left: Vec<usize> = nodes.iter().copied().filter(|&v| v != first).collect();
    let mut cycle = vec![first];
    let mut here = first;
    while !left.is_empty() {
        let (k, _) = left
            .iter()
            .enumerate()
            .min_by(|a, b| m.get(here, *a.1).total_cmp(&m.get(here, *b.1)))
            .expect("nonempty");
        here = left.swap_remove(k);
        cycle.push(here);
    }
    cycle
}

/// 2-opt and Or-opt (segments of 1 to 3, either direction) until neither improves.
fn improve(m: &Matrix, cycle: &mut Vec<usize>) {
    let n = cycle.len();
    if n < 4 {
        return;
    }
    const EPS: f64 = 1e-10;
    loop {
        let mut improved = false;
        // 2-opt: replace edges (a,b), (c,d) by (a,c), (b,d), reversing b..c.
        for i in 0..n - 1 {
            // What reversing cycle[i + 1..=j] adds on an asymmetric matrix, kept as j grows
            // (the same sum, in the same order, as `Matrix::reversal`), so a pass is O(n^2).
            let mut reversal = m.reversal(&cycle[i + 1..=(i + 1).min(n - 1)]);
            for j in i + 2..n {
                if !m.is_symmetric() {
                    reversal += m.get(cycle[j], cycle[j - 1]) - m.get(cycle[j - 1], cycle[j]);
                }
                if i == 0 && j == n - 1 {
                    continue;
                }
                let (a, b) = (cycle[i], cycle[i + 1]);
                let (c, d) = (cycle[j], cycle[(j + 1) % n]);
                // On an asymmetric matrix the reversed stretch b..c is driven the other way.
                let delta = m.get(a, c) + m.get(b, d) - m.get(a, b) - m.get(c, d) + reversal;
                if delta < -EPS {
                    cycle[i + 1..=j].reverse();
                    improved = true;
                    reversal = m.reversal(&cycle[i + 1..=j]);
                }
            }
        }
        // Or-opt: move a segment of 1..3 nodes elsewhere, possibly reversed.
        'search: for len in 1..=3usize {
            if n < len + 3 {
                break;
            }
            for start in 0..n {
                let seg: Vec<usize> = (0..len).map(|k| cycle[(start + k) % n]).collect();
                let prev = cycle[(start + n - 1) % n];
                let next = cycle[(start + len) % n];
                let removed = m.get(prev, seg[0]) + m.get(seg[len - 1], next) - m.get(prev, next);
                // The rest of the cycle, starting after the segment.
                let rest: Vec<usize> = (0..n - len).map(|k| cycle[(start + len + k) % n]).collect();
                for p in 0..rest.len() {
                    let (u, v) = (rest[p], rest[(p + 1) % rest.len()]);
                    if u == prev && v == next {
                        continue;
                    }
                    let forward = m.get(u, seg[0]) + m.get(seg[len - 1], v) - m.get(u, v);
                    let backward =
                        m.get(u, seg[len - 1]) + m.get(seg[0], v) - m.get(u, v) + m.reversal(&seg);
                    let (added, reversed) = if backward < forward {
                        (backward, true)
                    } else {
                        (forward, false)
                    };
                    if added - removed < -EPS {
                        let mut s = seg.clone();
                        if reversed {
                            s.reverse();
                        }
                        let mut new = Vec::with_capacity(n);
                        new.extend_from_slice(&rest[..=p]);
                        new.extend_from_slice(&s);
                        new.extend_from_slice(&rest[p + 1..]);
                        *cycle = new;
                        improved = true;
                        break 'search;
                    }
                }
            }
        }
        if !improved {
            break;
        }
    }
}

/// One day cut from the tour: positions `from..to` of the tour.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cut {
    pub from: usize,
    pub to: usize,
    /// Travel of depot → tour[from..to] → depot.
    pub travel: f64,
    pub work: f64,
}

/// Beasley's split: cut `tour` (stop nodes in order) into consecutive days with travel plus
/// `work[node]` at most `day_hours` and at most `max_stops` stops each, minimising the number
/// of days and then the total travel. `None` if some stop alone does not fit a day.
pub fn split(
    m: &Matrix,
    tour: &[usize],
    work: &[f64],
    day_hours: f64,
    max_stops: usize,
) -> Option<Vec<Cut>> {
    let n = tour.len();
    // best[j]: (days, travel) to cover tour[..j]; back[j]: where the last day starts.
    let mut best = vec![(usize::MAX, f64::INFINITY); n + 1];
    let mut back = vec![usize::MAX; n + 1];
    best[0] = (0, 0.0);
    for i in 0..n {
        if best[i].0 == usize::MAX {
            continue;
        }
        let mut travel_in = 0.0;
        let mut hours = 0.0;
        for j in i..n.min(i + max_stops.max(1)) {
            travel_in += if j == i {
                m.get(0, tour[j])
            } else {
                m.get(tour[j - 1], tour[j])
            };
            hours += work[tour[j]];
            let travel = travel_in + m.get(tour[j], 0);
            if travel + hours > day_hours + 1e-9 {
                break;
            }
            let cand = (best[i].0 + 1, best[i].1 + travel);
            let old = best[j + 1];
            if cand.0 < old.0 || (cand.0 == old.0 && cand.1 < old.1 - 1e-12) {
                best[j + 1] = cand;
                back[j + 1] = i;
            }
        }
    }
    if best[n].0 == usize::MAX {
        return None;
    }
    let mut cuts = Vec::new();
    let mut j = n;
    while j > 0 {
        let i = back[j];
        let stops = &tour[i..j];
        cuts.push(Cut {
            from: i,
            to: j,
            travel: tour_length(m, stops),
            work: stops.iter().map(|&s| work[s]).sum(),
        });
        j = i;
    }
    cuts.reverse();
    Some(cuts)
}

/// Fewer days: try to move every stop of the lightest days into other days (cheapest insertion,
/// within the hours and the stop limit), and drop the days that empty; days that took stops are
/// re-routed at the end (which only shortens them). Never adds a day or breaks a limit; parts of
/// one split patch never share a day because each whole-day part fills its day.
pub fn consolidate(
    m: &Matrix,
    work: &[f64],
    mut days: Vec<Vec<usize>>,
    day_hours: f64,
    max_stops: usize,
) -> Vec<Vec<usize>> {
    let hours = |d: &[usize]| tour_length(m, d) + d.iter().map(|&s| work[s]).sum::<f64>();
    // The cheapest place for `stop` in `day`: (added hours, position).
    let insertion = |day: &[usize], stop: usize| -> (f64, usize) {
        let mut best = (f64::INFINITY, 0);
        for pos in 0..=day.len() {
            let a = if pos == 0 { 0 } else { day[pos - 1] };
            let b = if pos == day.len() { 0 } else { day[pos] };
            let added = m.get(a, stop) + m.get(stop, b) - m.get(a, b) + work[stop];
            if added < best.0 {
                best = (added, pos);
            }
        }
        best
    };
    let mut touched = vec![false; days.len()];
    loop {
        let mut by_load: Vec<usize> = (0..days.len()).collect();
        by_load.sort_by(|&a, &b| hours(&days[a]).total_cmp(&hours(&days[b])).then(a.cmp(&b)));
        let mut merged = false;
        for &from in &by_load {
            if days[from].is_empty() {
                continue;
            }
            let mut trial = days.clone();
            let mut took = Vec::new();
            let mut ok = true;
            for &stop in &days[from] {
                let mut best: Option<(f64, usize, usize)> = None;
                for to in 0..trial.len() {
                    if to == from || trial[to].is_empty() || trial[to].len() >= max_stops {
                        continue;
                    }
                    let (added, pos) = insertion(&trial[to], stop);
                    if hours(&trial[to]) + added <= day_hours + 1e-9
                        && best.is_none_or(|(b, _, _)| added < b)
                    {
                        best = Some((added, to, pos));
                    }
                }
                match best {
                    Some((_, to, pos)) => {
                        trial[to].insert(pos, stop);
                        took.push(to);
                    }
                    None => {
                        ok = false;
                        break;
                    }
                }
            }
            if ok {
                trial[from].clear();
                days = trial;
                for t in took {
                    touched[t] = true;
                }
                merged = true;
            }
        }
        if !merged {
            break;
        }
    }
    days.into_iter()
        .zip(touched)
        .filter(|(d, _)| !d.is_empty())
        .map(|(d, t)| {
            if !t {
                return d;
            }
            // Keep whichever order is shorter (the local search on long days is not exact).
            let o = order(m, &d);
            if tour_length(m, &o) <= tour_length(m, &d) {
                o
            } else {
                d
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn line(xs: &[f64]) -> Matrix {
        let pts: Vec<(f64, f64)> = xs.iter().map(|&x| (x, 0.0)).collect();
        Matrix::from_points(&pts, 1.0, 1.0)
    }

    #[test]
    fn tours_on_a_line_go_out_and_back() {
        // Depot at 0 and stops at 1..5 km: any optimal tour is 10 km (10 h at 1 km/h).
        let m = line(&[0.0, 3000.0, 1000.0, 5000.0, 2000.0, 4000.0]);
        let stops = [1, 2, 3, 4, 5];
        assert!((tour_length(&m, &exact(&m, &stops)) - 10.0).abs() < 1e-9);
        assert!((tour_length(&m, &heuristic(&m, &stops, 4)) - 10.0).abs() < 1e-9);
    }

    /// Every order of the stops, by brute force (common practice as an oracle for small tours).
    fn brute_force(m: &Matrix, stops: &[usize]) -> f64 {
        fn go(m: &Matrix, left: &mut Vec<usize>, path: &mut Vec<usize>, best: &mut f64) {
            if left.is_empty() {
                *best = best.min(tour_length(m, path));
                return;
            }
            for k in 0..left.len() {
                let v = left.remove(k);
                path.push(v);
                go(m, left, path, best);
                path.pop();
                left.insert(k, v);
            }
        }
        let mut best = f64::INFINITY;
        go(m, &mut stops.to_vec(), &mut Vec::new(), &mut best);
        best
    }

    #[test]
    fn asymmetric_tours_match_brute_force() {
        // One-way streets: a ring where going "forward" (i -> i+1) is cheap and going back costs a
        // long detour, plus deterministic pseudo-random noise. Oracle: brute force over all
        // orders (common practice). Held–Karp and the local search must respect direction.
        for seed in 0..20u64 {
            let n = 9;
            let mut state = seed
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            let mut next = || {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                (state >> 33) as f64 / (1u64 << 31) as f64
            };
            let mut t = vec![0.0; n * n];
            for i in 0..n {
                for j in 0..n {
                    if i != j {
                        let forward = (j + n - i) % n;
                        t[i * n + j] = forward as f64 + 3.0 * next();
                    }
                }
            }
            let m = Matrix::from_rows(n, t);
            assert!(!m.is_symmetric());
            let stops: Vec<usize> = (1..n).collect();
            let best = brute_force(&m, &stops);
            let exact_length = tour_length(&m, &exact(&m, &stops));
            assert!(
                (exact_length - best).abs() < 1e-9,
                "seed {seed}: exact {exact_length} vs {best}"
            );
            let tour = heuristic(&m, &stops, 4);
            let mut sorted = tour.clone();
            sorted.sort();
            assert_eq!(sorted, stops);
            let h = tour_length(&m, &tour);
            // The local search is a heuristic: never below the optimum, and here within 25 %.
            assert!(
                h >= best - 1e-9 && h <= best * 1.25,
                "seed {seed}: heuristic {h} vs {best}"
            );
        }
    }

    #[test]
    fn split_packs_days() {
        // Three stops at one place 1 km from the depot, 1 h of work each, 1 km/h: a day costs
        // 2 h of travel plus its work.
        let m = line(&[0.0, 1000.0, 1000.0, 1000.0]);
        let work = [0.0, 1.0, 1.0, 1.0];
        let cuts = split(&m, &[1, 2, 3], &work, 5.0, 10).unwrap();
        assert_eq!(cuts.len(), 1, "{cuts:?}");
        let cuts = split(&m, &[1, 2, 3], &work, 4.0, 10).unwrap();
        assert_eq!(cuts.len(), 2);
        assert!((cuts[0].travel - 2.0).abs() < 1e-9);
        let cuts = split(&m, &[1, 2, 3], &work, 5.0, 1).unwrap();
        assert_eq!(cuts.len(), 3);
        assert!(split(&m, &[1, 2, 3], &work, 2.5, 10).is_none());
    }
}
