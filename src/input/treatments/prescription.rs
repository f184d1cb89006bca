//! Prescriptions: a [`Choice`] per patch (a covering method or leave per size class), the
//! patch's choices with their cost, crew time and what they leave, the prescription in words,
//! a programme's price of a prescription on a grown stand, and the caution codes of a plan row.

use super::*;

pub const LEAVE: u16 = u16::MAX;

/// One way to treat one patch (a prescription): a method or none per size class, what it costs
/// there and what it leaves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Choice {
    /// The primary method: the one treating the most stems (plan rows that name one method).
    pub method: MethodId,
    pub cost: f64,
    pub hours: f64,
    /// r: the host-weighted share of host left after treatment (each class's stems x its
    /// `host_weight`; 1 - effectiveness for one method on every stem).
    pub remaining: f64,
    /// The method index used on each size class, [`LEAVE`] for a class left or absent.
    pub per_class: [u16; MAX_CLASSES],
}

impl Default for Choice {
    fn default() -> Self {
        Choice {
            method: MethodId(0),
            cost: 0.0,
            hours: 0.0,
            remaining: 1.0,
            per_class: [LEAVE; MAX_CLASSES],
        }
    }
}

impl Choice {
    /// One method on every stem (a catalogue without size classes, or a test's choice).
    pub fn single(method: MethodId, cost: f64, hours: f64, remaining: f64) -> Choice {
        let mut per_class = [LEAVE; MAX_CLASSES];
        per_class[0] = method.0;
        Choice {
            method,
            cost,
            hours,
            remaining,
            per_class,
        }
    }

    /// The method used on class `c`, if the class is treated.
    pub fn method_for(&self, c: usize) -> Option<MethodId> {
        self.per_class
            .get(c)
            .filter(|&&m| m != LEAVE)
            .map(|&m| MethodId(m))
    }

    /// The distinct methods used, in catalogue order (the primary alone when no class is set).
    pub fn methods(&self) -> Vec<MethodId> {
        let mut out: Vec<MethodId> = (0..MAX_CLASSES)
            .filter_map(|c| self.method_for(c))
            .collect();
        if out.is_empty() {
            out.push(self.method);
        }
        out.sort_unstable();
        out.dedup();
        out
    }

    /// Whether any method of this prescription is a herbicide one (its output then carries the
    /// cautions block, `--quiet` included).
    pub fn uses_herbicide(&self, catalogue: &Catalogue) -> bool {
        self.methods()
            .iter()
            .any(|&m| catalogue.method(m).herbicide)
    }
}

/// The prescription in words for plan.csv and orders: `trees: stem_injection 12; saplings:
/// basal_bark 140; seedlings: leave 800`, classes from the largest stems down; present
/// classes only.
pub fn prescription_text(catalogue: &Catalogue, choice: &Choice, by_class: &[f64]) -> String {
    let ids = catalogue.class_ids();
    let whole = whole_stems(by_class, by_class.iter().sum());
    (0..ids.len())
        .rev()
        .filter(|&c| by_class.get(c).copied().unwrap_or(0.0) > 0.0)
        .map(|c| {
            let what = choice
                .method_for(c)
                .map(|m| catalogue.method(m).id.as_str())
                .unwrap_or("leave");
            format!("{}: {what} {}", ids[c], whole[c])
        })
        .collect::<Vec<_>>()
        .join("; ")
}

/// Whole stems per class that add up to `total` rounded (largest-remainder rounding, the
/// Hamilton method, common practice for shares that must sum to a whole): each class gets its
/// count rounded down, and the stems still missing go one each to the classes with the largest
/// fractions (the first class on a tie). Where a person reads per-class stems beside the
/// patch's, they then add up.
pub fn whole_stems(counts: &[f64], total: f64) -> Vec<f64> {
    let target = total.round().max(0.0);
    let mut out: Vec<f64> = counts.iter().map(|n| n.max(0.0).floor()).collect();
    let mut missing = target - out.iter().sum::<f64>();
    let mut order: Vec<usize> = (0..counts.len()).collect();
    order.sort_by(|&a, &b| {
        let f = |k: usize| counts[k].max(0.0) - counts[k].max(0.0).floor();
        f(b).total_cmp(&f(a)).then(a.cmp(&b))
    });
    // Add to the largest fractions; a target below the floors (never for counts summing to
    // `total`) takes from the smallest fractions instead.
    if !order.is_empty() {
        let mut k = 0;
        while missing >= 1.0 {
            out[order[k % order.len()]] += 1.0;
            missing -= 1.0;
            k += 1;
        }
        while missing <= -1.0 && out.iter().any(|&n| n >= 1.0) {
            for &c in order.iter().rev() {
                if missing <= -1.0 && out[c] >= 1.0 {
                    out[c] -= 1.0;
                    missing += 1.0;
                }
            }
        }
    }
    out
}

/// The prescriptions a patch may receive. A method is used only where it is allowed on the
/// site (denied access: none; herbicide prohibited: no herbicide methods; within a water buffer:
/// only methods allowed near water; restricted sites: no drift-prone method unless the catalogue
/// allows it there — the rest stay eligible and are flagged by the caution codes) and only on
/// the size classes it covers; trap-tree methods (with `sink_kill`) only when `trap_trees` is
/// on. Every class present gets one covering method or is left; the all-leave prescription is
/// not a choice. Cost = the fixed `cost_per_patch` of each distinct method used + stems x cost
/// per stem of each class, times the site's cost factor, to the cent; hours = stems x hours per
/// stem; remaining = the host-weighted mean over classes (stems x the class's `host_weight`)
/// of each class's remainder (1 when left). With size classes, prescriptions no better than another on cost, hours and remaining
/// are dropped; a catalogue without size classes gives one choice per method, in catalogue
/// order, as before.
pub fn choices_for(catalogue: &Catalogue, patch: &Patch, trap_trees: bool) -> Vec<Choice> {
    let usable: Vec<MethodId> = catalogue
        .methods
        .iter()
        .enumerate()
        .filter(|(_, m)| m.allowed_on(&patch.site))
        .filter(|(_, m)| m.effectiveness > 0.0)
        .filter(|(_, m)| trap_trees || m.sink_kill.is_none())
        .map(|(k, _)| MethodId(k as u16))
        .collect();
    let (stems, _) = catalogue.stems_by_class(patch);
    let host_weights = catalogue.host_weights();
    let total: f64 = stems.iter().sum();
    let host: f64 = stems.iter().zip(&host_weights).map(|(n, w)| n * w).sum();
    // Classes present; a patch of 0 stems (only ever planned when required) has every class.
    let present: Vec<usize> = if !catalogue.has_classes() || total <= 0.0 {
        (0..stems.len()).collect()
    } else {
        (0..stems.len()).filter(|&c| stems[c] > 0.0).collect()
    };
    // A class's share of the patch's host: its stems x its host weight over the patch's sum
    // (the stem share when every weight is 1, as in a catalogue without classes: x 1.0 is exact).
    let weight = |c: usize| {
        if total > 0.0 && host > 0.0 {
            stems[c] * host_weights[c] / host
        } else {
            1.0 / present.len() as f64
        }
    };
    // Options per present class: None = leave, or a covering method.
    let options: Vec<Vec<Option<MethodId>>> = present
        .iter()
        .map(|&c| {
            let mut o = vec![None];
            o.extend(
                usable
                    .iter()
                    .filter(|&&m| catalogue.cover(m, c).is_some())
                    .map(|&m| Some(m)),
            );
            o
        })
        .collect();
    let mut out = Vec::new();
    let mut index = vec![0usize; present.len()];
    'combinations: loop {
        // The combination `index` (the odometer's first class turns slowest, so a one-class
        // catalogue lists its methods in catalogue order).
        let picks: Vec<Option<MethodId>> = index.iter().zip(&options).map(|(&k, o)| o[k]).collect();
        if picks.iter().any(Option::is_some) {
            let mut per_class = [LEAVE; MAX_CLASSES];
            let mut fixed = 0.0;
            let mut variable = 0.0;
            let mut hours = 0.0;
            let mut remaining = 0.0;
            let mut used: Vec<MethodId> = Vec::new();
            let mut treated: BTreeMap<MethodId, f64> = BTreeMap::new();
            for (&c, pick) in present.iter().zip(&picks) {
                match pick {
                    None => remaining += weight(c),
                    Some(m) => {
                        let method = catalogue.method(*m);
                        let (cps, hps) = catalogue.cover(*m, c).unwrap_or((0.0, 0.0));
                        per_class[c] = m.0;
                        if !used.contains(m) {
                            used.push(*m);
                            fixed += method.cost_per_patch;
                        }
                        variable += cps * stems[c];
                        hours += hps * stems[c];
                        remaining += weight(c) * method.remaining();
                        *treated.entry(*m).or_insert(0.0) += stems[c];
                    }
                }
            }
            // The primary method treats the most stems (the first in catalogue order on a tie).
            let primary = treated
                .iter()
                .fold(None::<(MethodId, f64)>, |best, (&m, &n)| match best {
                    Some((_, b)) if b >= n => best,
                    _ => Some((m, n)),
                })
                .map(|(m, _)| m)
                .unwrap_or_default();
            out.push(Choice {
                method: primary,
                // Money is priced to the cent per patch, as a contract line would be.
                cost: ((fixed + variable) * patch.site.cost_factor * 100.0).round() / 100.0,
                hours,
                remaining,
                per_class,
            });
        }
        // Next combination.
        let mut k = present.len();
        loop {
            if k == 0 {
                break 'combinations;
            }
            k -= 1;
            index[k] += 1;
            if index[k] < options[k].len() {
                continue 'combinations;
            }
            index[k] = 0;
        }
    }
    if catalogue.has_classes() {
        drop_dominated(&mut out);
    }
    out
}

/// The cost, hours and follow-up stems of `choice` on the patch's stems scaled by `scale` (a
/// programme's grown stand): fixed costs of the methods used + stems x cost per stem per class,
/// times the cost factor, to the cent; follow-up stems = each treated class's stems x its
/// method's follow-up share.
pub fn price_scaled(
    catalogue: &Catalogue,
    patch: &Patch,
    choice: &Choice,
    scale: f64,
) -> (f64, f64, f64) {
    let (stems, _) = catalogue.stems_by_class(patch);
    let mut used: Vec<MethodId> = Vec::new();
    let (mut fixed, mut variable, mut hours, mut follow) = (0.0, 0.0, 0.0, 0.0);
    for (c, &n) in stems.iter().enumerate() {
        let Some(m) = choice.method_for(c) else {
            continue;
        };
        let method = catalogue.method(m);
        let (cps, hps) = catalogue.cover(m, c).unwrap_or((0.0, 0.0));
        if !used.contains(&m) {
            used.push(m);
            fixed += method.cost_per_patch;
        }
        let n = n * scale;
        variable += cps * n;
        hours += hps * n;
        follow += method.follow_up_share() * n;
    }
    let cost = ((fixed + variable) * patch.site.cost_factor * 100.0).round() / 100.0;
    (cost, hours, follow)
}

/// Drop every prescription another is at least as good as on cost, hours and remaining (the
/// first of equals kept), so the optimiser sees only the Pareto set.
fn drop_dominated(choices: &mut Vec<Choice>) {
    let all = choices.clone();
    let mut kept = Vec::with_capacity(all.len());
    for (a, x) in all.iter().enumerate() {
        let dominated = all.iter().enumerate().any(|(b, y)| {
            b != a
                && y.cost <= x.cost
                && y.hours <= x.hours
                && y.remaining <= x.remaining
                && (y.cost < x.cost || y.hours < x.hours || y.remaining < x.remaining || b < a)
        });
        if !dominated {
            kept.push(*x);
        }
    }
    *choices = kept;
}

/// Caution codes for a prescription: those of every method it uses ([`caution_codes`]), merged.
pub fn prescription_cautions(
    catalogue: &Catalogue,
    choice: &Choice,
    patch: &Patch,
) -> Vec<&'static str> {
    let mut codes: Vec<&'static str> = choice
        .methods()
        .into_iter()
        .flat_map(|m| caution_codes(catalogue.method(m), patch))
        .collect();
    codes.sort_unstable();
    codes.dedup();
    codes
}

/// Caution codes for one treated patch: the method's own, with WATER by site — WATER where the
/// site is within a water buffer, WATER_UNCHECKED for herbicide work where no water layer was
/// given — plus the site's own codes (NO_HERBICIDE, RESTRICTED_SITE, PERMISSION).
pub fn caution_codes(method: &Method, patch: &Patch) -> Vec<&'static str> {
    let mut codes: Vec<&'static str> = method
        .cautions
        .iter()
        .filter_map(|c| cautions::lookup(c).map(|c| c.code))
        .filter(|c| *c != "WATER")
        .collect();
    match patch.site.water {
        Water::Near(_) => codes.push("WATER"),
        Water::Unchecked if method.herbicide => codes.push("WATER_UNCHECKED"),
        _ => {}
    }
    match patch.site.herbicide {
        Herbicide::Restricted if method.herbicide => codes.push("RESTRICTED_SITE"),
        Herbicide::Prohibited => codes.push("NO_HERBICIDE"),
        _ => {}
    }
    if patch.site.access == Access::Permission {
        codes.push("PERMISSION");
    }
    codes.sort_unstable();
    codes.dedup();
    codes
}

/// One method's part of a follow-up visit: the stems it treats.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FollowUp {
    pub method: MethodId,
    pub stems: f64,
}

/// The first follow-up visit of `choice` on the patch's stems x `scale`: each treated class's
/// survivors and suckers (its stems x its method's `follow_up_share`), visited with the
/// `follow_up_method` of the method applied to that class when the site allows it (else that
/// method again), grouped by follow-up method in catalogue order. A left class is not followed
/// up.
pub fn follow_ups(
    catalogue: &Catalogue,
    patch: &Patch,
    choice: &Choice,
    scale: f64,
) -> Vec<FollowUp> {
    let (stems, _) = catalogue.stems_by_class(patch);
    let mut out: Vec<FollowUp> = Vec::new();
    for (c, &n) in stems.iter().enumerate() {
        let Some(m) = choice.method_for(c) else {
            continue;
        };
        let method = catalogue.method(m);
        let follow = method
            .follow_up_method
            .as_ref()
            .and_then(|id| catalogue.find(id))
            .filter(|&f| catalogue.method(f).allowed_on(&patch.site))
            .unwrap_or(m);
        let n = method.follow_up_share() * (n * scale);
        match out.iter_mut().find(|g| g.method == follow) {
            Some(g) => g.stems += n,
            None => out.push(FollowUp {
                method: follow,
                stems: n,
            }),
        }
    }
    out.sort_by_key(|g| g.method);
    out
}

/// The cost and crew hours of one follow-up visit: the fixed cost of each method used + stems x
/// its cost per stem, times the site's cost factor, to the cent. Suckers and survivors are
/// seedling- and sapling-sized (methods notes section 8), so a follow-up stem is priced as the
/// smallest class the follow-up method covers.
pub fn price_follow_up(catalogue: &Catalogue, patch: &Patch, visit: &[FollowUp]) -> (f64, f64) {
    let (mut cost, mut hours) = (0.0, 0.0);
    for g in visit {
        let method = catalogue.method(g.method);
        let (cps, hps) = (0..catalogue.n_classes())
            .find_map(|c| catalogue.cover(g.method, c))
            .unwrap_or((method.cost_per_stem, method.hours_per_stem));
        cost += method.cost_per_patch + cps * g.stems;
        hours += hps * g.stems;
    }
    (
        (cost * patch.site.cost_factor * 100.0).round() / 100.0,
        hours,
    )
}

/// The share of the host a follow-up visit leaves: the stem-weighted mean of its methods'
/// remaining shares (one method's own share exactly).
pub fn follow_up_remaining(catalogue: &Catalogue, visit: &[FollowUp]) -> f64 {
    match visit {
        [] => 1.0,
        [g] => catalogue.method(g.method).remaining(),
        _ => {
            let stems: f64 = visit.iter().map(|g| g.stems).sum();
            if stems <= 0.0 {
                return catalogue.method(visit[0].method).remaining();
            }
            visit
                .iter()
                .map(|g| g.stems * catalogue.method(g.method).remaining())
                .sum::<f64>()
                / stems
        }
    }
}

/// The next follow-up visit: each method's stems x its own remaining share.
pub fn next_follow_up(catalogue: &Catalogue, visit: &[FollowUp]) -> Vec<FollowUp> {
    visit
        .iter()
        .map(|g| FollowUp {
            method: g.method,
            stems: g.stems * catalogue.method(g.method).remaining(),
        })
        .collect()
}
