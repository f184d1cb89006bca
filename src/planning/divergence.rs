//! Why R and lambda_M moved differently under a plan: one sentence, computed from the plan.
//!
//! R (the optimiser's measure) weighs every patch's own host and the introduction pressure;
//! lambda_M is the leading eigenvalue of the links alone. A plan can cut one a lot and the other
//! little: treating isolated or high-pressure host cuts R and leaves lambda_M, and treating the
//! tightly linked core cuts lambda_M more than R. To first order a treatment that cuts patch i's
//! host by a share e_i cuts lambda_M by 2 lambda_M sum_i e_i x_i^2 (x the leading unit
//! eigenvector before treatment: d lambda / d r_i = 2 lambda x_i^2 at r = 1), so the
//! eigenvector's weight on the treated patches, sum over treated of x_i^2, is what says how much
//! the plan can move lambda_M; their share of R (`RiskModel::risk_shares`) says the same for R.
//! Both are reported with the sentence.
//!
//! Threshold: the reductions differ by [`THRESHOLD_POINTS`] percentage points or more. On the
//! demo they are 57.3 % (R) and 52.3 % (lambda_M), 5 points apart (65.9 % and 68.1 % with
//! `--horizon-years 1`), the ordinary difference between a quadratic measure and an
//! eigenvalue; the case issue 22 reports is 50 % against 0.1 %. The same threshold applies to
//! R against the host expected occupied at equilibrium (p*, [`explain_establishment`]).

use serde::{Deserialize, Serialize};

/// Reductions this many percentage points apart or more get the sentence.
pub const THRESHOLD_POINTS: f64 = 20.0;

/// summary.json `measures_diverge`: present only when the reductions diverge.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Divergence {
    pub r_reduction_pct: f64,
    pub lambda_reduction_pct: f64,
    /// The leading eigenvector's weight (sum of x_i^2, before treatment) on the treated patches.
    pub eigenvector_share_treated_pct: f64,
    /// The treated patches' share of R before treatment.
    pub risk_share_treated_pct: f64,
    pub sentence: String,
}

/// The sentence, when R falls by `r_pct` and lambda_M by `lambda_pct` (percent), with
/// `vector` the leading unit eigenvector before treatment, `shares` each patch's share of R
/// before, and `treated` the patches the plan treats. None when the reductions agree to within
/// [`THRESHOLD_POINTS`] (or lambda_M is 0 before).
pub fn explain(
    r_pct: f64,
    lambda_pct: f64,
    vector: &[f64],
    shares: &[f64],
    treated: &[bool],
) -> Option<Divergence> {
    if !(r_pct.is_finite() && lambda_pct.is_finite())
        || (r_pct - lambda_pct).abs() < THRESHOLD_POINTS
    {
        return None;
    }
    let norm: f64 = vector.iter().map(|x| x * x).sum();
    if norm <= 0.0 {
        return None;
    }
    let on = |w: &[f64], total: f64| {
        100.0
            * w.iter()
                .zip(treated)
                .filter(|(_, t)| **t)
                .map(|(v, _)| v)
                .sum::<f64>()
            / total
    };
    let squares: Vec<f64> = vector.iter().map(|x| x * x).collect();
    let eigen = on(&squares, norm);
    let total_share: f64 = shares.iter().sum();
    let risk = if total_share > 0.0 {
        on(shares, total_share)
    } else {
        0.0
    };
    let sentence = if r_pct > lambda_pct {
        format!(
            "R fell {r_pct:.1} % but metapopulation capacity only {lambda_pct:.1} % because the leading eigenvector, which sets lambda_M, puts {:.1} % of its weight on patches this plan leaves untreated: the treated patches hold {risk:.1} % of R but only {eigen:.1} % of the connected core that sustains the population.",
            100.0 - eigen
        )
    } else {
        format!(
            "Metapopulation capacity fell {lambda_pct:.1} % but R only {r_pct:.1} % because the treated patches carry {eigen:.1} % of the leading eigenvector's weight but only {risk:.1} % of R: the plan breaks the connected core, while R also counts each patch's own host and its introduction pressure, which lambda_M leaves out."
        )
    };
    Some(Divergence {
        r_reduction_pct: r_pct,
        lambda_reduction_pct: lambda_pct,
        eigenvector_share_treated_pct: eigen,
        risk_share_treated_pct: risk,
        sentence,
    })
}

/// summary.json `establishment_diverges`: R and the host expected occupied at equilibrium
/// (sum_i a_i r_i p_i*) fell by shares [`THRESHOLD_POINTS`] or more apart; absent otherwise.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct EstablishmentDivergence {
    pub r_reduction_pct: f64,
    /// The fall of sum_i a_i r_i p_i*, percent.
    pub occupied_reduction_pct: f64,
    /// lambda_M / delta before and after the plan: above 1 the population can sustain itself
    /// without introductions (the persistence threshold of the establishment model).
    pub capacity_over_threshold_before: f64,
    pub capacity_over_threshold_after: f64,
    pub sentence: String,
}

/// The sentence for R against p*: R falls by `r_pct`, the equilibrium occupied host by
/// `occupied_pct`; `before`/`after` are lambda_M / delta. p* has a threshold R has not: the
/// population sustains itself only where lambda_M exceeds delta (Ovaskainen & Hanski 2001), so
/// a plan that takes the landscape below it empties far more host than R says, and a plan that
/// leaves it well above lets the untreated host fill at equilibrium, so occupancy falls less
/// than R.
pub fn explain_establishment(
    r_pct: f64,
    occupied_pct: f64,
    before: f64,
    after: f64,
) -> Option<EstablishmentDivergence> {
    if !(r_pct.is_finite() && occupied_pct.is_finite() && before.is_finite() && after.is_finite())
        || (r_pct - occupied_pct).abs() < THRESHOLD_POINTS
    {
        return None;
    }
    let sentence = if occupied_pct > r_pct {
        if before > 1.0 && after <= 1.0 {
            format!(
                "The host expected occupied at equilibrium (p*) fell {occupied_pct:.1} % but R only {r_pct:.1} % because the plan takes metapopulation capacity below the persistence threshold (from {before:.2} to {after:.2} times the capacity the population needs to sustain itself): below it the insect holds only where introductions keep bringing it, a threshold R does not have."
            )
        } else {
            format!(
                "The host expected occupied at equilibrium (p*) fell {occupied_pct:.1} % but R only {r_pct:.1} % because the landscape is near the persistence threshold ({after:.2} times the capacity the population needs to sustain itself after the plan, {before:.2} before), where a small cut in linked host empties much more of it at equilibrium; R has no threshold."
            )
        }
    } else {
        format!(
            "R fell {r_pct:.1} % but the host expected occupied at equilibrium (p*) only {occupied_pct:.1} % because the landscape keeps {after:.2} times the capacity the population needs to sustain itself after the plan: in the long run the insect fills most of the host left untreated, while R, a quadratic measure of linked host, falls faster than the host itself."
        )
    };
    Some(EstablishmentDivergence {
        r_reduction_pct: r_pct,
        occupied_reduction_pct: occupied_pct,
        capacity_over_threshold_before: before,
        capacity_over_threshold_after: after,
        sentence,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn agreeing_measures_get_no_sentence_and_diverging_ones_name_the_share() {
        // Reductions 11 points apart (the demo's under the one-season objective when this
        // was written): no sentence.
        assert!(explain(67.7, 78.6, &[1.0, 0.0], &[0.5, 0.5], &[true, false]).is_none());
        // Issue 22's case: R 50 %, lambda_M 0.1 %; the eigenvector lives on the untreated patch.
        let d = explain(50.0, 0.1, &[0.1, 0.995], &[0.5, 0.5], &[true, false]).unwrap();
        assert!(
            (d.eigenvector_share_treated_pct - 100.0 * 0.01 / (0.01 + 0.995 * 0.995)).abs() < 1e-9
        );
        assert!(d.sentence.contains("untreated"), "{}", d.sentence);
        let d = explain(10.0, 60.0, &[0.9, 0.1], &[0.1, 0.9], &[true, false]).unwrap();
        assert!((d.risk_share_treated_pct - 10.0).abs() < 1e-9);
        assert!(
            d.sentence
                .starts_with("Metapopulation capacity fell 60.0 %")
        );
    }
}
