//! The stages from resolved settings to the optimiser's input, shared by every command that
//! plans: layers in → patches → graph and pressure → risk model → eligible choices.

use crate::core::error::{Error, Result};
use crate::core::kernel::Kernel;
use crate::core::memory::{Budget, RasterCost};
use crate::core::printer;
use crate::core::progress::Bars;
use crate::core::scenario::Scenario;
use crate::input::layers;
use crate::input::patches::{self, Patches};
use crate::input::suitability;
use crate::input::treatments::{self, Catalogue, Choice};
use crate::model::graph::{self, PatchGraph, Pressure};
use crate::model::risk::RiskModel;
use crate::model::simulate::Landscape;
use crate::solve::problem::Problem;

/// Everything a planning command needs, built once.
pub struct Prepared {
    /// The scenario with the layers and fields actually read (for `scenario.resolved.toml`).
    pub resolved: Scenario,
    pub catalogue: Catalogue,
    /// The catalogue's text, kept in the plan folder.
    pub catalogue_text: String,
    pub patches: Patches,
    pub graph: PatchGraph,
    pub pressure: Pressure,
    pub model: RiskModel,
    pub kernel: Kernel,
    /// Eligible choices per patch (empty for untreatable patches).
    pub choices: Vec<Vec<Choice>>,
    /// Eligible and not excluded.
    pub eligible: Vec<bool>,
    pub required: Vec<bool>,
    pub excluded: Vec<bool>,
    /// Establishment suitability s_i (1 without a layer or column).
    pub suitability: Vec<f64>,
    /// Effective host h_i = stems_i x s_i.
    pub host: Vec<f64>,
    /// What the pressure was built from, kept so other kernels can be modelled on the same
    /// patches (ensembles) and so simulations can start where the insect was found.
    pub corridors: Vec<crate::input::layers::Corridor>,
    pub detections: Vec<(f64, f64)>,
    pub detection_weight: f64,
    pub epsilon: f64,
    /// The run's memory budget, for graphs built later (other kernels).
    pub budget: Budget,
}

/// Run the stages for `s`; `progress` receives one line per stage; `bars`: whether the raster
/// labelling draws a bar (the command's printer's choice, [`crate::core::printer::Printer::bars`]).
pub fn prepare(s: &Scenario, progress: &dyn Fn(&str), bars: Bars) -> Result<Prepared> {
    prepare_noting(s, progress, &|line| printer::note(line), bars)
}

/// As [`prepare`], with the notes on the inputs (skips, CRS conversions, defaulted rules) sent
/// to `note` instead of the printer: for a landscape prepared again where the command's own
/// run says them (the demo's invented surveys).
pub fn prepare_noting(
    s: &Scenario,
    progress: &dyn Fn(&str),
    note: &dyn Fn(&str),
    bars: Bars,
) -> Result<Prepared> {
    let (mut catalogue, catalogue_text) = Catalogue::load(s.plan.treatments.as_deref())?;
    if let Some(mix) = &s.host.default_mix {
        catalogue.set_default_mix(mix)?;
    }
    let budget = Budget::new(s.solver.max_memory_gb);
    progress("reading layers");
    let layers = layers::load(s, &budget, &catalogue.inventory_classes())?;
    let patches = patches::build(&layers, &s.host, &budget, bars)?;
    progress(&format!(
        "{} patches from the {} host layer",
        patches.len(),
        patches.source
    ));
    // Skips and defaulted rules are said even under `--quiet`: they change what was planned.
    for line in patches.skipped.lines() {
        note(&format!("note: {line}"));
    }
    if let Some(n) = &patches.crs_conversion {
        note(&format!("note: {n}"));
    }
    for n in &patches.notes {
        note(&format!("note: {n}"));
    }
    if !patches.water_checked && !patches.items.is_empty() {
        progress("no water layer given: sites are not checked for nearby water (WATER_UNCHECKED)");
    }
    let mut resolved = s.clone();
    layers.bindings.apply(&mut resolved);
    // The work CRS an inventory was converted into (the UTM zone chosen for lon/lat, the metre
    // form of a feet CRS) is recorded, so the resolved scenario repeats it.
    if resolved.host.inventory.is_some() {
        resolved.host.work_crs = Some(patches.crs.name.clone());
    }

    let by_label = patches.by_label();
    let mut required = vec![false; patches.len()];
    let mut excluded = vec![false; patches.len()];
    for (ids, flags, flag) in [
        (&s.plan.require, &mut required, "--require"),
        (&s.plan.exclude, &mut excluded, "--exclude"),
    ] {
        for id in ids.iter() {
            match by_label.get(id.as_str()) {
                Some(p) => flags[p.index()] = true,
                None => {
                    let mut known: Vec<&str> = by_label.keys().copied().collect();
                    known.sort_unstable();
                    let sample = known.iter().take(5).copied().collect::<Vec<_>>().join(", ");
                    return Err(Error::input_with_hint(
                        format!("`{flag}`: no patch has id `{id}`"),
                        format!("use ids from patches.csv of a previous run (e.g. {sample})"),
                    ));
                }
            }
        }
    }

    let kernel = Kernel {
        kind: s.model.kernel,
        alpha_m: s.model.alpha_m,
    };
    // Patches, then links, are checked against the budget before the graph is built.
    let raster = patches::raster_cost(&patches.runs);
    let with_suitability = s.host.suitability.is_some();
    budget.check_patches(patches.len(), raster, with_suitability)?;
    let points: Vec<(f64, f64)> = patches.items.iter().map(|p| (p.x, p.y)).collect();
    let graph = graph::build_graph_within(
        &points,
        kernel,
        s.model.epsilon,
        &budget,
        "the patch graph",
        raster,
        with_suitability,
    )?;
    let pressure = graph::pressure(
        &patches,
        &layers.corridors,
        &layers.detections,
        layers.detection_weight,
        kernel,
        s.model.epsilon,
    );
    let assume = match &s.host.assume_crs {
        Some(def) => Some(crate::input::gis::Crs::parse(def, "`--assume-crs`")?),
        None => None,
    };
    let suitability =
        suitability::per_patch(&patches, s.host.suitability.as_deref(), assume.as_ref())?;
    // Effective host h_i = stems_i x s_i; a_i = h_i / sum h.
    let host: Vec<f64> = patches
        .items
        .iter()
        .zip(&suitability)
        .map(|(p, s)| p.stems * s)
        .collect();
    if host.iter().sum::<f64>() <= 0.0 {
        return Err(Error::input_with_hint(
            "suitability is 0 over every patch: no host can carry the insect",
            "check the suitability layer covers the programme area with values above 0",
        ));
    }
    // Patches with no host the insect can establish on (suitability 0, or 0 stems) carry no
    // risk: they stay in patches.csv with risk 0, their links leave the model, and no budget
    // is spent on them unless they are required.
    let without_host = host.iter().filter(|&&h| h <= 0.0).count();
    if without_host > 0 {
        for (i, &h) in host.iter().enumerate() {
            if h <= 0.0 && !required[i] {
                excluded[i] = true;
            }
        }
        note(&format!(
            "note: {without_host} patches have no host the insect can establish on (suitability 0 or 0 stems): kept in patches.csv with risk 0, not planned for treatment unless required"
        ));
    }
    let model = RiskModel::new(&host, &pressure.values, &graph);
    progress(&format!(
        "{} links within the kernel cutoff ({:.0} m)",
        graph.edges.len(),
        kernel.cutoff(s.model.epsilon)
    ));

    let choices: Vec<_> = patches
        .items
        .iter()
        .map(|p| treatments::choices_for(&catalogue, p, s.plan.trap_trees))
        .collect();
    let eligible: Vec<bool> = choices
        .iter()
        .zip(&excluded)
        .map(|(c, x)| !c.is_empty() && !x)
        .collect();
    for (i, p) in patches.items.iter().enumerate() {
        if required[i] && choices[i].is_empty() {
            return Err(Error::input_with_hint(
                format!(
                    "`--require`: patch `{}` cannot be treated (access {}, herbicide {}, water {}): no method of the catalogue is allowed there",
                    p.label,
                    p.site.access.as_str(),
                    p.site.herbicide.as_str(),
                    p.site.water.as_str()
                ),
                "drop it from `--require`, or change its access rules",
            ));
        }
    }
    Ok(Prepared {
        resolved,
        catalogue,
        catalogue_text,
        patches,
        graph,
        pressure,
        model,
        kernel,
        choices,
        eligible,
        required,
        excluded,
        suitability,
        host,
        corridors: layers.corridors.clone(),
        detections: layers.detections.clone(),
        detection_weight: layers.detection_weight,
        epsilon: s.model.epsilon,
        budget,
    })
}

impl Prepared {
    /// The share of each patch's host left right after `assignment` (indices into
    /// [`Prepared::choices`]; 1 untreated): what the simulation starts year 1 from, whatever the
    /// objective's horizon.
    pub fn treated_host(&self, assignment: &[Option<usize>]) -> Vec<f64> {
        assignment
            .iter()
            .enumerate()
            .map(|(i, a)| a.map_or(1.0, |o| self.choices[i][o].remaining))
            .collect()
    }

    /// Whether `assignment` (indices into [`Prepared::choices`]) prescribes herbicide anywhere.
    pub fn prescribes_herbicide(&self, assignment: &[Option<usize>]) -> bool {
        assignment.iter().enumerate().any(|(i, k)| {
            k.and_then(|k| self.choices.get(i).and_then(|c| c.get(k)))
                .is_some_and(|c| c.uses_herbicide(&self.catalogue))
        })
    }

    /// The index of patch `i`'s choice that a plan.csv row names: with size classes by the
    /// row's `prescription` (several prescriptions share a primary method), without by its
    /// `method` (`prescription` empty).
    pub fn choice_named(&self, i: usize, method: &str, prescription: &str) -> Option<usize> {
        let (by_class, _) = self.catalogue.stems_by_class(&self.patches.items[i]);
        self.choices[i].iter().position(|c| {
            if prescription.is_empty() {
                self.catalogue.methods[c.method.0 as usize].id == method
            } else {
                crate::input::treatments::prescription_text(&self.catalogue, c, &by_class)
                    == prescription
            }
        })
    }

    /// The prepared model's patches and links; year 0 occupied where the detections are (the
    /// patch each detection falls nearest to, within the kernel cutoff); no long-distance links.
    pub fn landscape(&self) -> Landscape {
        let prepared = self;
        let items = &prepared.patches.items;
        let mut initial = vec![false; items.len()];
        let reach = prepared.kernel.cutoff(prepared.epsilon);
        for &(x, y) in &prepared.detections {
            let nearest = (0..items.len()).min_by(|&a, &b| {
                let da = (items[a].x - x).hypot(items[a].y - y);
                let db = (items[b].x - x).hypot(items[b].y - y);
                da.total_cmp(&db)
            });
            if let Some(i) = nearest
                && (items[i].x - x).hypot(items[i].y - y) <= reach
            {
                initial[i] = true;
            }
        }
        let m = &prepared.model;
        Landscape {
            share: m.share.clone(),
            pressure: m.pressure.clone(),
            links: m.links.iter().map(|l| (l.a, l.b, l.kernel)).collect(),
            long_links: Vec::new(),
            initial,
        }
    }
    /// The graph, pressure and risk model of the same patches under another kernel, refused
    /// like the plan's own graph when its links do not fit the budget.
    pub fn model_for(&self, kernel: Kernel) -> Result<(PatchGraph, Pressure, RiskModel)> {
        let points: Vec<(f64, f64)> = self.patches.items.iter().map(|p| (p.x, p.y)).collect();
        let graph = graph::build_graph_within(
            &points,
            kernel,
            self.epsilon,
            &self.budget,
            &format!(
                "the patch graph of scenario {}:{}",
                kernel.kind.as_str(),
                kernel.alpha_m
            ),
            self.raster_cost(),
            self.resolved.host.suitability.is_some(),
        )?;
        let pressure = graph::pressure(
            &self.patches,
            &self.corridors,
            &self.detections,
            self.detection_weight,
            kernel,
            self.epsilon,
        );
        let model = RiskModel::new(&self.host, &pressure.values, &graph);
        Ok((graph, pressure, model))
    }

    /// What the raster patches cost in memory beyond their count (runs and outlines).
    pub fn raster_cost(&self) -> RasterCost {
        patches::raster_cost(&self.patches.runs)
    }

    /// T of the objective's horizon term: `plan.horizon_years`, else
    /// [`crate::model::risk::DEFAULT_HORIZON_YEARS`] (1 is the one-season objective).
    pub fn horizon_years(&self) -> u32 {
        self.resolved
            .plan
            .horizon_years
            .unwrap_or(crate::model::risk::DEFAULT_HORIZON_YEARS)
    }

    /// The optimiser's problem at `budget` and `crew_hours`: with a horizon
    /// (`plan.horizon_years`), each option's remaining host is its mean over the horizon as it
    /// regrows ([`crate::model::risk::horizon_remaining`]); the dynamics (`simulate`) take the
    /// host as treated from [`Prepared::treated_host`].
    pub fn problem(&self, budget: f64, crew_hours: Option<f64>) -> Problem<'_> {
        let mut choices = self.choices.clone();
        let years = self.horizon_years();
        if years > 1 {
            let g = self
                .resolved
                .plan
                .horizon_regrowth
                .unwrap_or(crate::model::risk::HORIZON_REGROWTH);
            for c in choices.iter_mut().flatten() {
                c.remaining = crate::model::risk::horizon_remaining(c.remaining, years, g);
            }
        }
        Problem {
            model: &self.model,
            choices,
            budget,
            crew_hours,
            required: self.required.clone(),
            excluded: self.excluded.clone(),
        }
    }

    /// What treating every eligible patch with its most effective method would cost.
    pub fn cost_of_everything(&self) -> f64 {
        let problem = self.problem(f64::INFINITY, None);
        problem.cost(&problem.everything().0)
    }
}
