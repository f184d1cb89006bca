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
    /// This many patches (drawn from the seed) get their pressure multiplied by 100 to 1000:
    /// a few patches that dominate the risk (issue 23's "spikes" shape).
    pub spikes: usize,
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
            spikes: 0,
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
        if spec.spikes > 0 && !land.patches.is_empty() {
            let mut r = SplitMix::new(spec.landscape.seed ^ 0x5b1e);
            let mut pressure = land.model.pressure.clone();
            for _ in 0..spec.spikes {
                let i =
                    ((r.unit() * land.patches.len() as f64) as usize).min(land.patches.len() - 1);
                pressure[i] *= 100.0 + 900.0 * r.unit();
            }
            let stems: Vec<f64> = land.patches.iter().map(|p| p.stems).collect();
            land.model = crate::model::risk::RiskModel::new(&stems, &pressure, &land.graph);
        }
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

/// The landscape shapes of `hostcut bench --shape` (issue 23): each a deterministic recipe for
/// an [`InstanceSpec`] at any size, the area growing with the patch count so that the density
/// (and so the links per patch) stays about that of 5,000 patches.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shape {
    /// Today's benchmark: tight, separate clusters (40 per 5,000 patches, 800 m spread, 30 km
    /// side), exponential kernel, alpha 400 m.
    Tight,
    /// Clusters that overlap: 40 per 5,000 patches with a 3 km spread over 20 km, exp 400 m.
    Overlap,
    /// Near-uniform scatter over 60 km (every patch its own centre), exp alpha 1000 m.
    Scatter,
    /// Fat tails: overlapping clusters over 60 km, Cauchy alpha 200 m (cut where k < 0.01).
    Cauchy,
    /// Binding crew hours: clusters over 60 km, exp 400 m, hours half those of the budget's
    /// share of treating everything.
    Crew,
    /// Today's tight clusters with one patch in 500 at 100 to 1000 times the pressure.
    Spikes,
}

impl Shape {
    pub const ALL: [Shape; 6] = [
        Shape::Tight,
        Shape::Overlap,
        Shape::Scatter,
        Shape::Cauchy,
        Shape::Crew,
        Shape::Spikes,
    ];

    pub fn as_str(self) -> &'static str {
        match self {
            Shape::Tight => "tight",
            Shape::Overlap => "overlap",
            Shape::Scatter => "scatter",
            Shape::Cauchy => "cauchy",
            Shape::Crew => "crew",
            Shape::Spikes => "spikes",
        }
    }

    pub fn parse(s: &str) -> Option<Shape> {
        Shape::ALL.into_iter().find(|k| k.as_str() == s.trim())
    }

    /// The instance of this shape with `patches` patches, `methods` methods and the budget a
    /// `budget_share` of treating everything.
    pub fn spec(
        self,
        patches: usize,
        methods: usize,
        budget_share: f64,
        seed: u64,
    ) -> InstanceSpec {
        use crate::core::kernel::{Kernel, KernelKind};
        let scale = (patches.max(1) as f64 / 5000.0).sqrt();
        let clusters = (patches / 125).max(1);
        let (clusters, side_km, spread_m, kind, alpha_m, epsilon) = match self {
            Shape::Tight | Shape::Spikes => (clusters, 30.0, 800.0, KernelKind::Exp, 400.0, 1e-3),
            Shape::Overlap => (clusters, 20.0, 3000.0, KernelKind::Exp, 400.0, 1e-3),
            Shape::Scatter => (patches.max(1), 60.0, 0.0, KernelKind::Exp, 1000.0, 1e-3),
            Shape::Cauchy => (clusters, 60.0, 3000.0, KernelKind::Cauchy, 200.0, 1e-2),
            Shape::Crew => (clusters, 60.0, 3000.0, KernelKind::Exp, 400.0, 1e-3),
        };
        let landscape = Spec {
            patches,
            clusters,
            side_m: side_km * 1000.0 * scale,
            spread_m,
            kernel: Kernel { kind, alpha_m },
            epsilon,
            seed,
        };
        InstanceSpec {
            hours_share: (self == Shape::Crew).then_some(0.5 * budget_share),
            spikes: if self == Shape::Spikes {
                (patches / 500).max(1)
            } else {
                0
            },
            ..InstanceSpec::new(landscape, methods, budget_share)
        }
    }
}
