//! Random problem instances for benchmarks and tests, the one generator both use: a synthetic
//! landscape (`model::synthetic`, clustered patches, log-normal stems, a corridor of raised
//! pressure, one patch in ten where herbicide is prohibited), each patch's choices from the
//! built-in treatment catalogue (the default size mix, or a mix of its own per patch), a budget as a share of treating everything, and optionally
//! crew hours and required and excluded patches drawn from the same seed. Invented data: never
//! a real place.
//!
//! # Units
//! Metres for the landscape; costs in the catalogue's currency; hours in crew hours.

use crate::core::error::Result;
use crate::core::rng::SplitMix;
use crate::input::treatments::{self, Catalogue, Choice};
use crate::model::synthetic::{self, Landscape, Spec};
use crate::solve::problem::Problem;

/// What to generate: the landscape and the problem's rules on top of it.
#[derive(Debug, Clone, Copy)]
pub struct InstanceSpec {
    pub landscape: Spec,
    /// The first `methods` methods of the built-in catalogue are offered.
    pub methods: usize,
    /// The budget as a share of the cost of treating every patch with its most effective
    /// choice, rounded to cents.
    pub budget_share: f64,
    /// Crew hours as a share of the hours of that plan; None: unlimited.
    pub hours_share: Option<f64>,
    /// Each patch with a choice is required with this probability, else excluded with
    /// `excluded_share` (drawn from the landscape's seed).
    pub required_share: f64,
    pub excluded_share: f64,
    /// Give each patch its own mix of size classes (drawn from the landscape's seed: one stand
    /// in five of one class only, the rest random shares) instead of the catalogue's default
    /// mix, so prescriptions differ from patch to patch.
    pub mixed_classes: bool,
}

impl InstanceSpec {
    /// The benchmark's instance: `methods` methods, the budget a share of treating
    /// everything, no crew-hour limit, nothing required or excluded.
    pub fn new(landscape: Spec, methods: usize, budget_share: f64) -> InstanceSpec {
        InstanceSpec {
            landscape,
            methods,
            budget_share,
            hours_share: None,
            required_share: 0.0,
            excluded_share: 0.0,
            mixed_classes: false,
        }
    }
}

/// A generated instance; [`Instance::problem`] is the optimiser's view of it.
pub struct Instance {
    pub land: Landscape,
    pub catalogue: Catalogue,
    pub choices: Vec<Vec<Choice>>,
    pub budget: f64,
    pub crew_hours: Option<f64>,
    pub required: Vec<bool>,
    pub excluded: Vec<bool>,
}

impl Instance {
    pub fn generate(spec: &InstanceSpec) -> Result<Instance> {
        let mut land = synthetic::generate(&spec.landscape);
        let (catalogue, _) = Catalogue::load(None)?;
        if spec.mixed_classes && catalogue.has_classes() {
            let k = catalogue.n_classes();
            let mut r = SplitMix::new(spec.landscape.seed ^ 0x0c1a_55e5);
            for p in &mut land.patches {
                let shares: Vec<f64> = if r.unit() < 0.2 {
                    let only = ((r.unit() * k as f64) as usize).min(k - 1);
                    (0..k).map(|c| if c == only { 1.0 } else { 0.0 }).collect()
                } else {
                    let u: Vec<f64> = (0..k).map(|_| 0.05 + r.unit()).collect();
                    let sum: f64 = u.iter().sum();
                    u.iter().map(|x| x / sum).collect()
                };
                p.by_class = Some(shares.iter().map(|s| s * p.stems).collect());
            }
        }
        let choices: Vec<Vec<Choice>> = land
            .patches
            .iter()
            .map(|p| {
                treatments::choices_for(&catalogue, p, false)
                    .into_iter()
                    .filter(|c| (c.method.0 as usize) < spec.methods)
                    .collect()
            })
            .collect();
        let n = land.patches.len();
        let mut required = vec![false; n];
        let mut excluded = vec![false; n];
        if spec.required_share > 0.0 || spec.excluded_share > 0.0 {
            let mut r = SplitMix::new(spec.landscape.seed ^ 0x5eed);
            for i in 0..n {
                if !choices[i].is_empty() && r.unit() < spec.required_share {
                    required[i] = true;
                } else if r.unit() < spec.excluded_share {
                    excluded[i] = true;
                }
            }
        }
        let mut instance = Instance {
            land,
            catalogue,
            choices,
            budget: f64::INFINITY,
            crew_hours: None,
            required,
            excluded,
        };
        let (everything, hours) = {
            let problem = instance.problem();
            let all = problem.everything().0;
            (problem.cost(&all), problem.hours(&all))
        };
        instance.budget = (spec.budget_share * everything * 100.0).round() / 100.0;
        instance.crew_hours = spec.hours_share.map(|share| share * hours);
        Ok(instance)
    }

    pub fn len(&self) -> usize {
        self.choices.len()
    }

    pub fn is_empty(&self) -> bool {
        self.choices.is_empty()
    }

    pub fn problem(&self) -> Problem<'_> {
        Problem {
            model: &self.land.model,
            choices: self.choices.clone(),
            budget: self.budget,
            crew_hours: self.crew_hours,
            required: self.required.clone(),
            excluded: self.excluded.clone(),
        }
    }
}
