//! Does the static objective rank plans the way the dynamics do? The plan, the rule-of-thumb
//! plans and random feasible plans at the same budget are scored by R (the optimiser's
//! objective) and by the simulated occupied host; Spearman's rank correlation between the two,
//! with a bootstrap interval over the plans, says how far R can be trusted on this landscape.
//!
//! # Units
//! R as the risk model's index; occupied host in percent of all host.

use serde::Serialize;

use crate::core::rng::SplitMix;

/// One plan scored both ways.
#[derive(Debug, Clone, Serialize)]
pub struct Scored {
    pub plan: String,
    pub risk_after: f64,
    pub mean_occupied_host_pct: f64,
    pub final_occupied_host_pct: f64,
}

/// sim.json's `proxy_check`.
#[derive(Debug, Clone, Serialize)]
pub struct ProxyCheck {
    pub plans: usize,
    /// Spearman's rho between R and the mean occupied host over the years (positive: a lower R
    /// goes with less occupied host, as it should).
    pub spearman: Option<f64>,
    pub ci95: Option<[f64; 2]>,
    /// Share of the other plans that leave as much host occupied as the plan or more (mean over
    /// the years), in percent: 100 means the plan is best in the simulation too.
    pub plan_rank_pct: Option<f64>,
    /// The same against the final year's occupied host.
    pub spearman_final: Option<f64>,
    pub spearman_final_ci95: Option<[f64; 2]>,
    pub bootstrap_resamples: usize,
    pub reading: String,
}

/// Resamples of the percentile bootstrap (common practice: 1,000-2,000 for a 95 % interval).
pub const RESAMPLES: usize = 2000;

/// Ranks 1..n with ties given their average rank (the convention of scipy.stats.rankdata's
/// "average" method, which scipy.stats.spearmanr uses).
pub fn ranks(v: &[f64]) -> Vec<f64> {
    let mut order: Vec<usize> = (0..v.len()).collect();
    order.sort_by(|&a, &b| v[a].total_cmp(&v[b]));
    let mut r = vec![0.0; v.len()];
    let mut k = 0;
    while k < order.len() {
        let mut j = k;
        while j + 1 < order.len() && v[order[j + 1]] == v[order[k]] {
            j += 1;
        }
        let average = (k + j) as f64 / 2.0 + 1.0;
        for &i in &order[k..=j] {
            r[i] = average;
        }
        k = j + 1;
    }
    r
}

/// Pearson's correlation; None when either side is constant.
pub fn pearson(x: &[f64], y: &[f64]) -> Option<f64> {
    let n = x.len() as f64;
    if x.len() < 2 {
        return None;
    }
    let (mx, my) = (x.iter().sum::<f64>() / n, y.iter().sum::<f64>() / n);
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (a, b) in x.iter().zip(y) {
        sxy += (a - mx) * (b - my);
        sxx += (a - mx) * (a - mx);
        syy += (b - my) * (b - my);
    }
    (sxx > 0.0 && syy > 0.0).then(|| (sxy / (sxx * syy).sqrt()).clamp(-1.0, 1.0))
}

/// Spearman's rho: Pearson's correlation of the average ranks.
pub fn spearman(x: &[f64], y: &[f64]) -> Option<f64> {
    pearson(&ranks(x), &ranks(y))
}

/// Percentile bootstrap 95 % interval of Spearman's rho, resampling the plans with replacement
/// (resamples where rho is undefined, all ties, are skipped). Deterministic for a seed.
pub fn bootstrap_ci(x: &[f64], y: &[f64], seed: u64) -> Option<[f64; 2]> {
    let n = x.len();
    if n < 3 {
        return None;
    }
    let mut g = SplitMix::new(seed ^ 0x5052_4f58_5943_4b21);
    let mut rhos = Vec::with_capacity(RESAMPLES);
    let (mut bx, mut by) = (vec![0.0; n], vec![0.0; n]);
    for _ in 0..RESAMPLES {
        for k in 0..n {
            let i = ((g.unit() * n as f64) as usize).min(n - 1);
            bx[k] = x[i];
            by[k] = y[i];
        }
        if let Some(r) = spearman(&bx, &by) {
            rhos.push(r);
        }
    }
    if rhos.len() < RESAMPLES / 2 {
        return None;
    }
    rhos.sort_by(f64::total_cmp);
    let q = |p: f64| crate::model::simulate::quantile(&rhos, p);
    Some([q(0.025), q(0.975)])
}

/// Score the plans and read the result.
pub fn check(scored: &[Scored], seed: u64) -> ProxyCheck {
    let r: Vec<f64> = scored.iter().map(|s| s.risk_after).collect();
    let mean: Vec<f64> = scored.iter().map(|s| s.mean_occupied_host_pct).collect();
    let last: Vec<f64> = scored.iter().map(|s| s.final_occupied_host_pct).collect();
    let spearman_mean = spearman(&r, &mean);
    let spearman_mean_ci95 = spearman_mean.and_then(|_| bootstrap_ci(&r, &mean, seed));
    let plan_rank_pct = scored.iter().position(|s| s.plan == "plan").and_then(|k| {
        let others = scored.len().checked_sub(1).filter(|n| *n > 0)?;
        let at_least = (0..scored.len())
            .filter(|&j| j != k && mean[j] >= mean[k])
            .count();
        Some(100.0 * at_least as f64 / others as f64)
    });
    let spearman_final = spearman(&r, &last);
    let spearman_final_ci95 = spearman_final.and_then(|_| bootstrap_ci(&r, &last, seed ^ 1));
    let mut reading = reading(scored.len(), spearman_mean, spearman_mean_ci95);
    // The final year can tell another story than the mean over the years: say so.
    if let (Some(rho), Some([lo, hi])) = (spearman_final, spearman_final_ci95)
        && spearman_mean_ci95.is_some_and(|ci| ci[0] > 0.0)
        && lo <= 0.0
    {
        reading.push_str(&format!(
            " In the final year alone the ranking does not hold (Spearman's rho {rho:.2}, 95% bootstrap interval {lo:.2} to {hi:.2}): R ranks plans by the years soon after treatment, not by where the insect settles in the end."
        ));
    }
    if let Some(rank) = plan_rank_pct {
        reading.push_str(&format!(
            " Over the years the plan does at least as well in the simulation as {rank:.0}% of the other plans."
        ));
    }
    ProxyCheck {
        plans: scored.len(),
        spearman: spearman_mean,
        ci95: spearman_mean_ci95,
        plan_rank_pct,
        spearman_final,
        spearman_final_ci95,
        bootstrap_resamples: RESAMPLES,
        reading,
    }
}

/// One sentence a reviewer can act on. Thresholds on the interval's lower end: above 0.5 a
/// strong agreement, above 0 a weak one (common practice for rank correlations).
fn reading(n: usize, rho: Option<f64>, ci: Option<[f64; 2]>) -> String {
    let (Some(rho), Some([lo, hi])) = (rho, ci) else {
        return format!(
            "R and the simulation cannot be compared on these {n} plans (too few plans, or every plan scores the same)."
        );
    };
    let stats = format!(
        "Spearman's rho {rho:.2}, 95% bootstrap interval {lo:.2} to {hi:.2}, over {n} plans at this budget"
    );
    if lo > 0.5 {
        format!(
            "Plans with a lower R also leave less host occupied in the simulation ({stats}): R is a fair guide on this landscape."
        )
    } else if lo > 0.0 {
        format!(
            "Plans with a lower R tend to leave less host occupied in the simulation, but weakly ({stats}): read the plan together with the simulation."
        )
    } else {
        format!(
            "R does not rank plans the way the simulation does on this landscape ({stats}): judge plans by the simulation too, and consider a multi-season programme (`hostcut program`)."
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Expected values by hand from the definitions (average ranks for ties, as
    // scipy.stats.rankdata(method="average")).
    #[test]
    fn ranks_average_ties_and_spearman_is_pearson_of_ranks() {
        assert_eq!(ranks(&[10.0, 20.0, 20.0, 5.0]), vec![2.0, 3.5, 3.5, 1.0]);
        assert_eq!(spearman(&[1.0, 2.0, 3.0], &[10.0, 20.0, 30.0]), Some(1.0));
        assert_eq!(spearman(&[1.0, 2.0, 3.0], &[3.0, 2.0, 1.0]), Some(-1.0));
        assert_eq!(spearman(&[1.0, 1.0, 1.0], &[3.0, 2.0, 1.0]), None);
        // x = 1..5, y = 2,1,4,3,5: d = -1,1,-1,1,0, rho = 1 - 6*4/(5*24) = 0.8.
        let r = spearman(&[1.0, 2.0, 3.0, 4.0, 5.0], &[2.0, 1.0, 4.0, 3.0, 5.0]).unwrap();
        assert!((r - 0.8).abs() < 1e-12);
        let ci = bootstrap_ci(
            &[1.0, 2.0, 3.0, 4.0, 5.0, 6.0],
            &[1.0, 3.0, 2.0, 4.0, 6.0, 5.0],
            7,
        )
        .unwrap();
        assert!(ci[0] <= ci[1] && ci[0] >= -1.0 && ci[1] <= 1.0);
    }
}
