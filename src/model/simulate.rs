//! A stochastic patch-occupancy model of the insect on the patch graph, run year by year, to
//! check a plan against spread that is random rather than the optimiser's smooth proxy.
//!
//! Incidence-function form (Hanski 1994), discrete yearly steps. With A_i = n a_i h_i the host
//! of patch i relative to the average untreated patch (a_i its share of all host, h_i the share of
//! its host standing this year) and o_j = 1 for occupied patches:
//!
//! ```text
//! S_i   = sum_j k_ij A_j o_j                     (connectivity; b = 1)
//! P_col = 1 - exp(-c A_i (S_i + iota pi_i))      (an empty patch is colonised)
//! P_ext = min(1, e / A_i^x)                      (an occupied patch goes extinct)
//! ```
//!
//! (the colonisation variant 1 - exp(-c S) of the methods notes, scaled by the receiving patch's
//! host as in the Levins model of `model.rs`). Treatment sets h_i = r_i at the start of year 1;
//! after each year h_i grows by `regrowth` (h <- min(1, h (1 + g))). Optional density-dependent
//! long-distance movement: a patch occupied for `after_years` years running sends a share
//! `share` of its colonisation pressure through the same kernel family at `multiple` x alpha.
//!
//! The deterministic counterpart is the incidence J_i = P_col / (P_col + P_ext) with P_col taken
//! at the mean occupancy (the stationary law of the two-state chain each patch is, given its
//! neighbours): [`equilibrium`]. Without links it is exact; with links it is a mean-field value.
//!
//! Common random numbers: year t of run k draws one uniform per patch from a generator seeded by
//! (seed, k, t) and every strategy uses the same draws, so strategies differ only by what they
//! treat. Runs are independent of the thread that computes them.

/// Model parameters (documented defaults; all illustrative, set them from local knowledge or
/// from a calibration).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Params {
    /// e: yearly extinction probability of an average untreated patch.
    pub extinction: f64,
    /// x: how fast extinction falls with host (Hanski 1994's exponent).
    pub extinction_exponent: f64,
    /// c: colonisation scale per year.
    pub colonisation: f64,
    /// iota: introductions per unit of pressure, in average-patch equivalents of occupied host.
    pub introduction: f64,
    /// g: yearly regrowth of the host left after treatment.
    pub regrowth: f64,
    pub long_distance: Option<LongDistance>,
}

impl Default for Params {
    fn default() -> Params {
        Params {
            extinction: 0.2,
            extinction_exponent: 1.0,
            colonisation: 0.5,
            introduction: 0.05,
            regrowth: 0.1,
            long_distance: None,
        }
    }
}

/// Density-dependent long-distance movement.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct LongDistance {
    pub share: f64,
    pub multiple: f64,
    pub after_years: u32,
}

/// The landscape the simulation runs on.
#[derive(Debug, Clone)]
pub struct Landscape {
    /// a_i: share of all host.
    pub share: Vec<f64>,
    /// pi_i.
    pub pressure: Vec<f64>,
    /// (i, j, k_ij), i < j.
    pub links: Vec<(usize, usize, f64)>,
    /// Links of the long-distance kernel (empty unless long-distance movement is on).
    pub long_links: Vec<(usize, usize, f64)>,
    /// Occupied at year 0.
    pub initial: Vec<bool>,
}

/// What a strategy leaves of each patch's host in year 1 (r_i), fixed or drawn per run.
pub enum Treatment<'a> {
    Fixed(Vec<f64>),
    /// r for run k (e.g. a random feasible plan drawn from the run's own stream).
    PerRun(&'a (dyn Fn(u64) -> Vec<f64> + Sync)),
}

/// One strategy's simulated years: per run, per year (0..=years), occupied host (share of all
/// host) and occupied patches; and per patch, the runs occupied in the final year.
#[derive(Debug, Clone)]
pub struct Trace {
    pub occupied_host: Vec<Vec<f64>>,
    pub occupied_patches: Vec<Vec<u32>>,
    pub final_occupied: Vec<u32>,
}

pub use crate::core::rng::SplitMix;

/// The generator of one (seed, run, year, purpose) stream.
pub fn stream(seed: u64, run: u64, year: u64, purpose: u64) -> SplitMix {
    let mut m = SplitMix::new(seed ^ 0x5851_F42D_4C95_7F2D);
    let a = m.next_u64() ^ run.wrapping_mul(0xD1B5_4A32_D192_ED03);
    let mut m = SplitMix::new(a);
    let b = m.next_u64() ^ year.wrapping_mul(0x8CB9_2BA7_2F3D_8DD7) ^ purpose.rotate_left(17);
    SplitMix::new(b)
}

fn relative_host(l: &Landscape, h: &[f64]) -> Vec<f64> {
    let n = l.share.len() as f64;
    l.share.iter().zip(h).map(|(a, h)| n * a * h).collect()
}

fn extinction_p(p: &Params, area: f64) -> f64 {
    if area <= 0.0 {
        1.0
    } else {
        (p.extinction / area.powf(p.extinction_exponent)).min(1.0)
    }
}

/// One run of one strategy: occupancy per year from the shared uniforms of run `run`.
fn one_run(
    l: &Landscape,
    p: &Params,
    years: u32,
    seed: u64,
    run: u64,
    r: &[f64],
    mut states: Option<&mut Vec<Vec<bool>>>,
) -> (Vec<f64>, Vec<u32>, Vec<bool>) {
    let n = l.share.len();
    let mut occ = l.initial.clone();
    let mut h = vec![1.0; n];
    let mut streak: Vec<u32> = occ.iter().map(|&o| u32::from(o)).collect();
    let mut host_series = Vec::with_capacity(years as usize + 1);
    let mut count_series = Vec::with_capacity(years as usize + 1);
    let record = |occ: &[bool], h: &[f64], hs: &mut Vec<f64>, cs: &mut Vec<u32>| {
        hs.push((0..n).filter(|&i| occ[i]).map(|i| l.share[i] * h[i]).sum());
        cs.push(occ.iter().filter(|o| **o).count() as u32);
    };
    record(&occ, &h, &mut host_series, &mut count_series);
    if let Some(st) = states.as_mut() {
        st.push(occ.clone());
    }
    let mut s = vec![0.0; n];
    for year in 1..=years {
        if year == 1 {
            h.copy_from_slice(r);
        }
        let area = relative_host(l, &h);
        s.iter_mut().for_each(|v| *v = 0.0);
        for &(i, j, k) in &l.links {
            if occ[j] {
                s[i] += k * area[j];
            }
            if occ[i] {
                s[j] += k * area[i];
            }
        }
        if let Some(ld) = p.long_distance {
            // Saturated sources send `share` of their pressure far instead of near.
            for &(i, j, k) in &l.links {
                let sj = occ[j] && streak[j] >= ld.after_years;
                let si = occ[i] && streak[i] >= ld.after_years;
                if sj {
                    s[i] -= ld.share * k * area[j];
                }
                if si {
                    s[j] -= ld.share * k * area[i];
                }
            }
            for &(i, j, k) in &l.long_links {
                if occ[j] && streak[j] >= ld.after_years {
                    s[i] += ld.share * k * area[j];
                }
                if occ[i] && streak[i] >= ld.after_years {
                    s[j] += ld.share * k * area[i];
                }
            }
        }
        let mut u = stream(seed, run, year as u64, 0);
        let mut next = occ.clone();
        for i in 0..n {
            let draw = u.unit();
            if occ[i] {
                if draw < extinction_p(p, area[i]) {
                    next[i] = false;
                }
            } else {
                let pc = 1.0
                    - (-p.colonisation
                        * area[i]
                        * (s[i].max(0.0) + p.introduction * l.pressure[i]))
                        .exp();
                if draw < pc {
                    next[i] = true;
                }
            }
        }
        for i in 0..n {
            streak[i] = if next[i] { streak[i] + 1 } else { 0 };
        }
        occ = next;
        record(&occ, &h, &mut host_series, &mut count_series);
        if let Some(st) = states.as_mut() {
            st.push(occ.clone());
        }
        for v in h.iter_mut() {
            *v = (*v * (1.0 + p.regrowth)).min(1.0);
        }
    }
    (host_series, count_series, occ)
}

/// Simulate every strategy over `runs` runs on `jobs` threads. The result does not depend on
/// `jobs`: run k always uses the streams of run k, and results are gathered in run order.
pub fn simulate(
    l: &Landscape,
    p: &Params,
    strategies: &[Treatment],
    years: u32,
    runs: u32,
    seed: u64,
    jobs: usize,
) -> Vec<Trace> {
    let n = l.share.len();
    let jobs = jobs.clamp(1, runs.max(1) as usize);
    type RunOut = Vec<(Vec<f64>, Vec<u32>, Vec<bool>)>;
    let mut per_run: Vec<Option<RunOut>> = (0..runs).map(|_| None).collect();
    std::thread::scope(|scope| {
        let handles: Vec<_> = (0..jobs)
            .map(|w| {
                scope.spawn(move || {
                    let mut out = Vec::new();
                    let mut k = w as u32;
                    while k < runs {
                        let results: RunOut = strategies
                            .iter()
                            .map(|t| {
                                let r = match t {
                                    Treatment::Fixed(r) => r.clone(),
                                    Treatment::PerRun(f) => f(k as u64),
                                };
                                one_run(l, p, years, seed, k as u64, &r, None)
                            })
                            .collect();
                        out.push((k, results));
                        k += jobs as u32;
                    }
                    out
                })
            })
            .collect();
        for h in handles {
            for (k, r) in h.join().expect("simulation worker") {
                per_run[k as usize] = Some(r);
            }
        }
    });
    let mut traces: Vec<Trace> = strategies
        .iter()
        .map(|_| Trace {
            occupied_host: Vec::with_capacity(runs as usize),
            occupied_patches: Vec::with_capacity(runs as usize),
            final_occupied: vec![0; n],
        })
        .collect();
    for run in per_run.into_iter().flatten() {
        for (t, (host, count, last)) in traces.iter_mut().zip(run) {
            t.occupied_host.push(host);
            t.occupied_patches.push(count);
            for (i, o) in last.iter().enumerate() {
                t.final_occupied[i] += u32::from(*o);
            }
        }
    }
    traces
}

/// The occupancy of every patch in years 0..=years of run `run` (untreated unless `r` says
/// otherwise): the same draws as [`simulate`]'s run `run`. Used to make survey histories with
/// known parameters.
pub fn history(
    l: &Landscape,
    p: &Params,
    years: u32,
    seed: u64,
    run: u64,
    r: &[f64],
) -> Vec<Vec<bool>> {
    let mut states = Vec::with_capacity(years as usize + 1);
    one_run(l, p, years, seed, run, r, Some(&mut states));
    states
}

/// The deterministic (mean-field) equilibrium occupancy with host h: the largest fixed point of
/// p_i = Pc_i(p) / (Pc_i(p) + Pe_i), iterated from p = 1.
pub fn equilibrium(l: &Landscape, p: &Params, h: &[f64]) -> Vec<f64> {
    let n = l.share.len();
    let area = relative_host(l, h);
    let mut occ = vec![1.0; n];
    let mut s = vec![0.0; n];
    for _ in 0..100_000 {
        s.iter_mut().for_each(|v| *v = 0.0);
        for &(i, j, k) in &l.links {
            s[i] += k * area[j] * occ[j];
            s[j] += k * area[i] * occ[i];
        }
        let mut change: f64 = 0.0;
        for i in 0..n {
            let pc =
                1.0 - (-p.colonisation * area[i] * (s[i] + p.introduction * l.pressure[i])).exp();
            let pe = extinction_p(p, area[i]);
            let next = if pc + pe > 0.0 { pc / (pc + pe) } else { 0.0 };
            change = change.max((next - occ[i]).abs());
            occ[i] = next;
        }
        if change < 1e-12 {
            break;
        }
    }
    occ
}

/// Sample quantile (linear interpolation between order statistics, "type 7" of Hyndman & Fan
/// 1996, the default of R and NumPy).
pub fn quantile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let h = (sorted.len() - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// Mean and 95 % normal confidence interval of paired differences (mean ± 1.96 sd / sqrt(n)).
pub fn mean_ci(values: &[f64]) -> (f64, f64, f64) {
    let n = values.len() as f64;
    if n == 0.0 {
        return (f64::NAN, f64::NAN, f64::NAN);
    }
    let mean = values.iter().sum::<f64>() / n;
    let var = if n > 1.0 {
        values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0)
    } else {
        0.0
    };
    let half = 1.96 * (var / n).sqrt();
    (mean, mean - half, mean + half)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantiles_match_numpy() {
        // numpy.quantile([1, 2, 3, 4], [0.05, 0.5, 0.95]) = 1.15, 2.5, 3.85 (from memory;
        // type 7 by hand: h = 3q).
        let v = [1.0, 2.0, 3.0, 4.0];
        assert!((quantile(&v, 0.05) - 1.15).abs() < 1e-12);
        assert!((quantile(&v, 0.5) - 2.5).abs() < 1e-12);
        assert!((quantile(&v, 0.95) - 3.85).abs() < 1e-12);
    }

    #[test]
    fn streams_are_uniform_and_distinct() {
        let mut a = stream(42, 0, 1, 0);
        let mut b = stream(42, 1, 1, 0);
        let xs: Vec<f64> = (0..20_000).map(|_| a.unit()).collect();
        let mean = xs.iter().sum::<f64>() / xs.len() as f64;
        // Mean of U(0,1) is 1/2 with sd 1/sqrt(12 n) = 0.002 here.
        assert!((mean - 0.5).abs() < 0.01);
        assert!(xs.iter().all(|x| (0.0..1.0).contains(x)));
        assert_ne!(a.next_u64(), b.next_u64());
    }
}
