//! The probability that an undetected population is present at a candidate survey site this
//! season (issue 24), from the same colonisation law as the stochastic model
//! ([`crate::model::simulate`]) and the site's survey history.
//!
//! ```text
//! S_i = sum_j k(d_ij) A_j o_j                 (connectivity to known populations, o_j = 1)
//! q_i = 1 - exp(-c A_i (S_i + iota pi_i))     (yearly colonisation probability of an empty site)
//! each year from the start of the history to this season:
//!   p <- 1 - (1 - p)(1 - q_i)                 (an undetected population may have arrived)
//!   p <- p (1 - d) / (p (1 - d) + 1 - p)      (each negative visit that year, detection d;
//!                                              MacKenzie et al. 2002)
//! ```
//!
//! A site never surveyed starts the history at p = 0 and grows for every year of it; a negative
//! visit lowers p but never to zero (absence is never certain). Extinction of an undetected
//! population is left out, so p_present errs high (a site is looked at sooner, not later).
//! A site with a positive record in the history is a known population: a source for the others,
//! not a candidate (surveying it finds nothing undetected).
//!
//! # Units
//! Coordinates in metres of the working CRS; A relative host (1 = an average untreated patch);
//! probabilities 0 to 1; years.

use geo::{Distance, Euclidean};

use crate::core::kernel::Kernel;
use crate::input::layers::Corridor;

/// The colonisation law's rates.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rates {
    /// c: colonisation scale per year.
    pub colonisation: f64,
    /// iota: introductions per unit of pressure.
    pub introduction: f64,
}

/// One candidate site (or known population) as the model sees it.
#[derive(Debug, Clone, PartialEq)]
pub struct SiteModel {
    pub x: f64,
    pub y: f64,
    /// A_i: host relative to the average untreated patch (1 for a user's site).
    pub host: f64,
    /// pi_i: introduction pressure.
    pub pressure: f64,
    /// A known population (detection layer or a positive survey).
    pub known: bool,
}

/// Bayes' rule after one negative visit with detection probability `d`
/// (MacKenzie et al. 2002): p' = p (1 - d) / (p (1 - d) + 1 - p).
pub fn after_negative(p: f64, d: f64) -> f64 {
    let stay = p * (1.0 - d);
    let denom = stay + 1.0 - p;
    if denom <= 0.0 { 0.0 } else { stay / denom }
}

/// One year of possible arrival: p' = 1 - (1 - p)(1 - q).
pub fn after_year(p: f64, q: f64) -> f64 {
    1.0 - (1.0 - p) * (1.0 - q)
}

/// The yearly colonisation probability q_i of every site from the known populations.
pub fn colonisation(sites: &[SiteModel], kernel: Kernel, rates: Rates) -> Vec<f64> {
    let sources: Vec<usize> = (0..sites.len()).filter(|&j| sites[j].known).collect();
    sites
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let conn: f64 = sources
                .iter()
                .filter(|&&j| j != i)
                .map(|&j| kernel.value((sites[j].x - s.x).hypot(sites[j].y - s.y)) * sites[j].host)
                .sum();
            let load = rates.colonisation * s.host * (conn + rates.introduction * s.pressure);
            1.0 - (-load).exp()
        })
        .collect()
}

/// A site's survey history, year by year from the first year counted.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct History {
    /// Detection probability of each negative visit, by year offset from the first year
    /// counted (0 = the first year; the last = this season).
    pub negatives: Vec<Vec<f64>>,
}

/// p_present this season after `years` years of history (the last one this season), given the
/// yearly colonisation probability `q` and the negative visits of each year.
pub fn p_present(q: f64, years: usize, history: &History) -> f64 {
    let mut p = 0.0;
    for y in 0..years {
        p = after_year(p, q);
        if let Some(ds) = history.negatives.get(y) {
            for &d in ds {
                p = after_negative(p, d);
            }
        }
    }
    p
}

/// Years since the last negative visit in the history (`None`: never surveyed in it).
pub fn years_since_negative(years: usize, history: &History) -> Option<usize> {
    (0..years.min(history.negatives.len()))
        .rev()
        .find(|&y| !history.negatives[y].is_empty())
        .map(|y| years - 1 - y)
}

/// Probability that `visits` visits of detection `d` each find a population that is there.
pub fn detect_in(visits: u32, d: f64) -> f64 {
    1.0 - (1.0 - d).powi(visits as i32)
}

/// Introduction pressure at a user's site, the patches' formula ([`crate::model::graph::pressure`])
/// at its geometry: pi = 1 + sum_c beta_c [dist <= b_c] + gamma sum_d k(dist to detection d),
/// detections beyond the kernel cutoff ignored. Also the names of the corridors within reach.
pub fn site_pressure(
    geometry: &geo::Geometry<f64>,
    point: (f64, f64),
    corridors: &[Corridor],
    detections: &[(f64, f64)],
    gamma: f64,
    kernel: Kernel,
    epsilon: f64,
) -> (f64, Vec<String>) {
    let mut value = 1.0;
    let mut near = Vec::new();
    for c in corridors {
        let within = c
            .lines
            .0
            .iter()
            .flat_map(|l| l.lines())
            .any(|seg| Euclidean.distance(geometry, &seg) <= c.buffer_m);
        if within {
            value += c.weight;
            near.push(c.name.clone());
        }
    }
    if gamma > 0.0 {
        let reach = kernel.cutoff(epsilon);
        value += gamma
            * detections
                .iter()
                .map(|&(x, y)| (x - point.0).hypot(y - point.1))
                .filter(|&d| d <= reach)
                .map(|d| kernel.value(d))
                .sum::<f64>();
    }
    (value, near)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bayes_matches_the_closed_form() {
        // k negative visits of detection d from p: p (1-d)^k / (p (1-d)^k + 1 - p)
        // (MacKenzie et al. 2002, Bayes over repeat visits).
        let (p, d) = (0.4, 0.3);
        let mut q = p;
        for k in 1..5 {
            q = after_negative(q, d);
            let s = p * (1.0 - d).powi(k);
            assert!((q - s / (s + 1.0 - p)).abs() < 1e-15);
        }
    }
}
