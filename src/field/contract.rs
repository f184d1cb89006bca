//! From plan to signed work and back: the bid schedule and scope of work for a plan folder, the
//! completion template a crew fills in, and the check of a filled completion file that turns it
//! into next season's inventory.
//!
//! Reads a plan folder's own outputs (plan.csv, patches.csv, treatments.used.toml), so the
//! contract describes exactly the plan that was written, without solving again.
//!
//! # Units
//! Money in the catalogue's currency; stems as counts; areas in hectares; dates as YYYY-MM-DD.

use std::collections::{BTreeMap, HashMap};
use std::path::Path;

use serde::Deserialize;

use crate::core::error::{Error, Result};
pub use crate::field::plan_folder::{PatchRecord, PlanFolder, PlannedPatch};
use crate::input::treatments::{Method, MethodId};

/// Site class of a treated patch for the bid schedule.
pub fn site_class(p: &PlannedPatch, method: &Method) -> &'static str {
    if method.herbicide && p.herbicide == "restricted" {
        "restricted site"
    } else if p.access == "permission" {
        "permission"
    } else {
        "open"
    }
}

/// One bid line: a method on a site class.
#[derive(Debug, Clone)]
pub struct LineItem {
    pub number: usize,
    pub method: String,
    pub method_id: MethodId,
    pub site_class: &'static str,
    /// The size class the line treats (empty for a catalogue without size classes).
    pub size_class: String,
    pub patch_ids: Vec<String>,
    pub stems: f64,
    pub hectares: Option<f64>,
    /// Sum of the plan's costs for these patches (exact, in cents as plan.csv has them).
    pub cents: i64,
}

fn cents(amount: f64) -> i64 {
    (amount * 100.0).round() as i64
}

/// Group the plan's rows by method, size class and site class, in catalogue then class order.
pub fn line_items(folder: &PlanFolder) -> Vec<LineItem> {
    let order = |c: &str| {
        ["open", "permission", "restricted site"]
            .iter()
            .position(|x| *x == c)
            .unwrap_or(3)
    };
    // Lines by method, size class (catalogue order) and site class; a patch without size
    // classes is one line of its method.
    let class_ids = folder.catalogue.class_ids();
    let mut groups: BTreeMap<(MethodId, usize, usize), LineItem> = BTreeMap::new();
    for p in &folder.planned {
        let method = folder.method_of(p);
        let class = site_class(p, method);
        // (method, size class index, size class id, stems, cents) per line of this patch.
        let mut parts: Vec<(MethodId, usize, String, f64, i64)> = Vec::new();
        if p.classes.iter().all(|c| c.method.is_none()) {
            parts.push((p.method_id, 0, String::new(), p.stems, cents(p.cost)));
        } else {
            // The patch's cost split over its treated classes in proportion to what each costs
            // before the site factor (per-stem cost + its share of its method's fixed cost);
            // cumulative rounding keeps the lines' cents summing to the plan's.
            let treated: Vec<(MethodId, usize, String, f64)> = p
                .classes
                .iter()
                .filter_map(|c| {
                    let k = class_ids.iter().position(|id| *id == c.class).unwrap_or(0);
                    c.method.map(|m| (m, k, c.class.clone(), c.stems))
                })
                .collect();
            let raw: Vec<f64> = treated
                .iter()
                .map(|(m, k, _, n)| {
                    let per_stem = folder.catalogue.cover(*m, *k).map(|c| c.0).unwrap_or(0.0);
                    let method_stems: f64 = treated.iter().filter(|t| t.0 == *m).map(|t| t.3).sum();
                    let fixed = folder.catalogue.method(*m).cost_per_patch;
                    per_stem * n
                        + if method_stems > 0.0 {
                            fixed * n / method_stems
                        } else {
                            fixed
                        }
                })
                .collect();
            let sum: f64 = raw.iter().sum();
            let total = cents(p.cost);
            let (mut before, mut given) = (0.0, 0i64);
            for (t, r) in treated.into_iter().zip(&raw) {
                before += r;
                let upto = if sum > 0.0 {
                    (total as f64 * before / sum).round() as i64
                } else {
                    total
                };
                parts.push((t.0, t.1, t.2, t.3, upto - given));
                given = upto;
            }
        }
        for (m, k, size_class, stems, line_cents) in parts {
            let item = groups
                .entry((m, k, order(class)))
                .or_insert_with(|| LineItem {
                    number: 0,
                    method: folder.catalogue.method(m).id.clone(),
                    method_id: m,
                    site_class: class,
                    size_class,
                    patch_ids: Vec::new(),
                    stems: 0.0,
                    hectares: Some(0.0),
                    cents: 0,
                });
            item.patch_ids.push(p.patch_id.clone());
            item.stems += stems;
            item.hectares = match (item.hectares, folder.area_of(&p.patch_id)) {
                (Some(a), Some(b)) => Some(a + b),
                _ => None,
            };
            item.cents += line_cents;
        }
    }
    groups
        .into_values()
        .enumerate()
        .map(|(k, mut item)| {
            item.number = k + 1;
            item
        })
        .collect()
}

/// Month names for a season window, e.g. "July to October".
pub fn window(months: &[u8]) -> String {
    const NAMES: [&str; 12] = [
        "January",
        "February",
        "March",
        "April",
        "May",
        "June",
        "July",
        "August",
        "September",
        "October",
        "November",
        "December",
    ];
    let mut m: Vec<u8> = months.to_vec();
    m.sort_unstable();
    m.dedup();
    let contiguous = m.windows(2).all(|w| w[1] == w[0] + 1);
    let name = |x: u8| NAMES[(x as usize).clamp(1, 12) - 1];
    match (m.first(), m.last()) {
        (Some(&a), Some(&b)) if contiguous && a != b => format!("{} to {}", name(a), name(b)),
        (Some(&a), _) if m.len() == 1 => name(a).to_string(),
        _ => m.iter().map(|&x| name(x)).collect::<Vec<_>>().join(", "),
    }
}

/// One row of a filled completion file.
#[derive(Debug, Clone, Deserialize)]
pub struct CompletionRow {
    pub patch_id: String,
    pub method: String,
    #[serde(default)]
    pub planned_stems: Option<f64>,
    #[serde(default)]
    pub treated_stems: Option<String>,
    #[serde(default)]
    pub date: String,
    #[serde(default)]
    pub applicator_licence: String,
    #[serde(default)]
    pub product_active_ingredient: String,
    #[serde(default)]
    pub notes: String,
    /// Why a different method than planned was used (required when `method` differs).
    #[serde(default)]
    pub reason: String,
}

/// A checked completion row.
#[derive(Debug, Clone)]
pub struct Done {
    pub patch_id: String,
    /// The method actually used (the planned one, or an eligible substitute).
    pub method: String,
    pub method_id: MethodId,
    /// The planned method, when a different one was used.
    pub substituted_for: Option<String>,
    /// Why the method was substituted (the completion file's `reason`).
    pub reason: String,
    pub treated_stems: f64,
    pub date: (i32, u8, u8),
}

/// How `record` treats stems above the plan's estimate.
#[derive(Debug, Clone, Copy)]
pub struct ExtraStems {
    /// Stems above the plan up to this share of the planned stems (0.25 = 25 %) are accepted
    /// with a warning.
    pub tolerance: f64,
    /// Accept any number above the plan (with a warning), not only within the tolerance.
    pub accept_all: bool,
}

/// Default tolerance for stems above the plan: 25 % (common practice: a raster or walk-through
/// estimate of a stand's stems is often off by a quarter; a crew count beyond that suggests a
/// different stand or a mistake).
pub const DEFAULT_EXTRA_STEMS_PCT: f64 = 25.0;

/// A checked completion file: the work done and the warnings to show (stems above the plan,
/// substituted methods).
#[derive(Debug, Clone)]
pub struct Completion {
    pub done: Vec<Done>,
    pub warnings: Vec<String>,
}

/// Whether `method` may be used at the planned patch's site: the herbicide rule, water nearby,
/// the restricted-site rule (the same rule the planner applied, [`Method::allowed_on`]). The
/// reason in words when it may not.
pub fn eligible_at(method: &Method, p: &PlannedPatch) -> std::result::Result<(), String> {
    if method.herbicide && p.no_herbicide() {
        return Err("NO HERBICIDE ON THIS SITE".into());
    }
    if let Some(water) = p.near_water()
        && !method.allowed_near_water()
    {
        return Err(format!(
            "{water}, and `{}` is not allowed near water",
            method.id
        ));
    }
    if p.herbicide == "restricted" && !method.allowed_at_restricted_sites() {
        return Err(format!(
            "a restricted site, where `{}` is not allowed (drift-prone)",
            method.id
        ));
    }
    Ok(())
}

fn parse_date(text: &str) -> Option<(i32, u8, u8)> {
    crate::field::calendar::Date::parse(text).map(|d| (d.year, d.month, d.day))
}

/// Check a filled completion file against the plan. Every problem row is reported, each with
/// its line number; a row with an empty `treated_stems` is work not done.
pub fn check_completion(folder: &PlanFolder, path: &Path, extra: ExtraStems) -> Result<Completion> {
    let bytes = std::fs::read(path).map_err(|e| Error::io("read", path, e))?;
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(&bytes);
    // An empty file, or a header with no rows, is not "nothing done": the template lists every
    // planned patch, and work not done is a row with an empty `treated_stems`.
    let rows = bytes
        .split(|b| *b == b'\n')
        .filter(|l| !l.iter().all(u8::is_ascii_whitespace))
        .count();
    if rows < 2 {
        return Err(Error::input_with_hint(
            format!(
                "completion file `{}` has no rows{}",
                path.display(),
                if rows == 0 {
                    " (it is empty)"
                } else {
                    " below its header"
                }
            ),
            "fill in the plan folder's completion_template.csv: one row per planned patch, `treated_stems` left empty where nothing was done",
        ));
    }
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(bytes);
    let planned: HashMap<&str, &PlannedPatch> = folder
        .planned
        .iter()
        .map(|p| (p.patch_id.as_str(), p))
        .collect();
    let mut problems = Vec::new();
    let mut done = Vec::new();
    let mut warnings = Vec::new();
    let mut seen: HashMap<String, usize> = HashMap::new();
    let headers = match reader.headers() {
        Ok(h) => h.clone(),
        Err(e) => {
            return Err(Error::input_with_hint(
                format!("completion file `{}`, line 1: {e}", path.display()),
                "fill in the completion_template.csv that `hostcut contract` wrote",
            ));
        }
    };
    for (k, record) in reader.records().enumerate() {
        let line = k + 2;
        // Ids the template neutralised for spreadsheets ([`crate::core::csv_cells`]) read as written.
        let row = record.and_then(|r| {
            crate::core::csv_cells::restored(&r).deserialize::<CompletionRow>(Some(&headers))
        });
        let row = match row {
            Ok(r) => r,
            Err(e) => {
                problems.push(format!("line {line}: unreadable row ({e})"));
                continue;
            }
        };
        let Some(plan) = planned.get(row.patch_id.as_str()) else {
            problems.push(format!(
                "line {line}: patch `{}` is not in the plan",
                row.patch_id
            ));
            continue;
        };
        if let Some(first) = seen.insert(row.patch_id.clone(), line) {
            problems.push(format!(
                "line {line}: patch `{}` is recorded twice (first on line {first})",
                row.patch_id
            ));
            continue;
        }
        let substituted = row.method != plan.method;
        let method_id = if substituted {
            let Some(used) = folder.catalogue.find(&row.method) else {
                problems.push(format!(
                    "line {line}: patch `{}` was planned for `{}`; the row says `{}`, which is not a method of the plan's catalogue (treatments.used.toml)",
                    row.patch_id, plan.method, row.method
                ));
                continue;
            };
            if let Err(why) = eligible_at(folder.catalogue.method(used), plan) {
                problems.push(format!(
                    "line {line}: patch `{}` was planned for `{}`; `{}` is not eligible there: {why}",
                    row.patch_id, plan.method, row.method
                ));
                continue;
            }
            if row.reason.trim().is_empty() {
                problems.push(format!(
                    "line {line}: patch `{}` was planned for `{}` and the row says `{}`: a different method needs a `reason` (add the column and say why)",
                    row.patch_id, plan.method, row.method
                ));
                continue;
            }
            used
        } else {
            plan.method_id
        };
        let treated = match row
            .treated_stems
            .as_deref()
            .map(str::trim)
            .filter(|t| !t.is_empty())
        {
            None => continue,
            Some(t) => match t.parse::<f64>() {
                Ok(v) if v.is_finite() && v >= 0.0 => v,
                _ => {
                    problems.push(format!(
                        "line {line}: treated_stems `{t}` is not a number of stems"
                    ));
                    continue;
                }
            },
        };
        if treated > plan.stems * 1.0001 + 0.5 {
            let over = 100.0 * (treated / plan.stems.max(1e-9) - 1.0);
            let within = treated <= plan.stems * (1.0 + extra.tolerance) + 0.5;
            if within || extra.accept_all {
                warnings.push(format!(
                    "line {line}: patch `{}` records {treated} stems treated, {over:.0} % more than the {} planned ({}); next season's inventory starts from the stems treated",
                    row.patch_id,
                    plan.stems,
                    if within {
                        format!("within the {:.0} % tolerance", extra.tolerance * 100.0)
                    } else {
                        "accepted by `--accept-extra-stems`".to_string()
                    }
                ));
            } else {
                problems.push(format!(
                    "line {line}: patch `{}` records {treated} stems treated, {over:.0} % more than the {} planned, beyond the {:.0} % tolerance",
                    row.patch_id,
                    plan.stems,
                    extra.tolerance * 100.0
                ));
            }
        }
        let method = folder.catalogue.method(method_id);
        // Every method the work applied: the planned prescription's (trees injected, seedlings
        // pulled: plan.csv's `method` names only the one on most stems), or the substitute.
        let applied: Vec<MethodId> = if substituted {
            vec![method_id]
        } else {
            plan.methods_used()
        };
        let herbicide = applied
            .iter()
            .any(|&m| folder.catalogue.method(m).herbicide);
        match parse_date(&row.date) {
            None => problems.push(format!(
                "line {line}: date `{}` is not a date like 2027-08-15",
                row.date
            )),
            Some(date) => {
                for &m in &applied {
                    let m = folder.catalogue.method(m);
                    if !m.months.contains(&date.1) {
                        problems.push(format!(
                            "line {line}: {} is outside the season window for `{}` ({})",
                            row.date,
                            m.id,
                            window(&m.months)
                        ));
                    }
                }
                if herbicide && row.applicator_licence.trim().is_empty() {
                    problems.push(format!(
                        "line {line}: herbicide work on `{}` needs the applicator's licence number",
                        row.patch_id
                    ));
                }
                if herbicide && row.product_active_ingredient.trim().is_empty() {
                    problems.push(format!(
                        "line {line}: herbicide work on `{}` needs the product's active ingredient",
                        row.patch_id
                    ));
                }
                if substituted {
                    warnings.push(format!(
                        "line {line}: patch `{}` was treated with `{}` instead of the planned `{}` ({}); its effectiveness ({:.0} %) is used for next season",
                        row.patch_id,
                        method.id,
                        plan.method,
                        row.reason.trim(),
                        method.effectiveness * 100.0
                    ));
                }
                done.push(Done {
                    patch_id: row.patch_id.clone(),
                    method: method.id.clone(),
                    method_id,
                    substituted_for: substituted.then(|| plan.method.clone()),
                    reason: row.reason.trim().to_string(),
                    treated_stems: treated,
                    date,
                });
            }
        }
    }
    if !problems.is_empty() {
        return Err(Error::input_with_hint(
            format!(
                "completion file `{}` has {} problem(s):\n  {}",
                path.display(),
                problems.len(),
                problems.join("\n  ")
            ),
            "fix those rows (the template from `hostcut contract` has the planned patch, method and stems) and run again; a method other than the planned one must be eligible at the site and give a `reason`; stems beyond the tolerance need `--accept-extra-stems` once the count is confirmed",
        ));
    }
    Ok(Completion { done, warnings })
}

/// The follow-up visit is due at the start of the follow-up method's window next season (common
/// practice: survivors and root suckers are treated the next growing season, for two or three
/// seasons); `method` is the method the visit uses (`Catalogue::follow_up_of` the one applied).
pub fn follow_up_due(method: &Method, date: (i32, u8, u8)) -> String {
    let first = method.months.iter().min().copied().unwrap_or(date.1);
    format!("{:04}-{:02}-01", date.0 + 1, first)
}

/// One row of next season's inventory: a patch of the plan folder with the stems left after
/// the work done (at the effectiveness of the method used) and its follow-up date.
#[derive(Debug, Clone)]
pub struct NextStand<'a> {
    pub patch: &'a PatchRecord,
    pub stems: f64,
    /// YYYY-MM-DD, or empty for a patch not treated.
    pub follow_up_due: String,
    /// The patch's outline as WKT in the folder's work CRS, or empty when it has none.
    pub outline: String,
}

/// What `hostcut record` tells of the season: next season's inventory and planned against done.
#[derive(Debug, Clone)]
pub struct Season<'a> {
    pub next: Vec<NextStand<'a>>,
    /// The patches treated with a method other than planned, in completion-file order.
    pub substituted: Vec<&'a Done>,
    /// The completion check's warnings (stems above the plan, substituted methods).
    pub warnings: &'a [String],
    pub planned_patches: usize,
    pub done_patches: usize,
    pub planned_stems: f64,
    pub treated_stems: f64,
    pub removed_stems: f64,
    /// The plan's estimate, in cents.
    pub planned_cents: i64,
    /// The estimate pro rata by the stems treated, in cents.
    pub done_cents: i64,
}

/// The season the completion file reports: stems removed at each method's effectiveness,
/// follow-up dates, the outlines carried over (`outlines`, by patch id, from
/// [`crate::field::plan_folder::outlines`]), and the plan's cost pro rata by the stems treated.
pub fn season<'a>(
    folder: &'a PlanFolder,
    completion: &'a Completion,
    outlines: &BTreeMap<String, String>,
) -> Season<'a> {
    let done = &completion.done;
    let by_patch: HashMap<&str, &Done> = done.iter().map(|d| (d.patch_id.as_str(), d)).collect();
    let planned: HashMap<&str, &PlannedPatch> = folder
        .planned
        .iter()
        .map(|p| (p.patch_id.as_str(), p))
        .collect();
    let (mut treated_stems, mut removed_stems) = (0.0, 0.0);
    let mut next = Vec::new();
    for p in &folder.patches {
        let (stems, due) = match by_patch.get(p.patch_id.as_str()) {
            Some(d) => {
                // The method actually used (an eligible substitute counts at its own
                // effectiveness); a crew count above the estimate replaces it.
                let method = folder.catalogue.method(d.method_id);
                // As planned with size classes: each class at its own method's effectiveness,
                // a class left untouched, in proportion to the share of the planned stems the
                // crew reports worked. A substitute counts on every stem at its own.
                let removed = match planned.get(p.patch_id.as_str()) {
                    Some(pl)
                        if d.substituted_for.is_none()
                            && !pl.classes.is_empty()
                            && pl.stems > 0.0 =>
                    {
                        let full: f64 = pl
                            .classes
                            .iter()
                            .filter_map(|c| {
                                c.method
                                    .map(|m| c.stems * folder.catalogue.method(m).effectiveness)
                            })
                            .sum();
                        full * d.treated_stems / pl.stems
                    }
                    _ => d.treated_stems * method.effectiveness,
                };
                treated_stems += d.treated_stems;
                removed_stems += removed;
                (
                    (p.stems.max(d.treated_stems) - removed).max(0.0),
                    follow_up_due(
                        folder
                            .catalogue
                            .method(folder.catalogue.follow_up_of(d.method_id)),
                        d.date,
                    ),
                )
            }
            None => (p.stems, String::new()),
        };
        next.push(NextStand {
            patch: p,
            stems,
            follow_up_due: due,
            outline: outlines.get(&p.patch_id).cloned().unwrap_or_default(),
        });
    }
    let planned_stems: f64 = folder.planned.iter().map(|p| p.stems).sum();
    let planned_cents: i64 = folder
        .planned
        .iter()
        .map(|p| (p.cost * 100.0).round() as i64)
        .sum();
    let done_cents: i64 = folder
        .planned
        .iter()
        .filter_map(|p| {
            by_patch
                .get(p.patch_id.as_str())
                .map(|d| ((p.cost * d.treated_stems / p.stems.max(1e-9)) * 100.0).round() as i64)
        })
        .sum();
    Season {
        next,
        substituted: done
            .iter()
            .filter(|d| d.substituted_for.is_some())
            .collect(),
        warnings: &completion.warnings,
        planned_patches: folder.planned.len(),
        done_patches: done.len(),
        planned_stems,
        treated_stems,
        removed_stems,
        planned_cents,
        done_cents,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_and_windows() {
        assert_eq!(parse_date("2027-08-15"), Some((2027, 8, 15)));
        assert_eq!(parse_date("2027-02-29"), None);
        assert_eq!(parse_date("2028-02-29"), Some((2028, 2, 29)));
        assert_eq!(parse_date("15/08/2027"), None);
        assert_eq!(window(&[7, 8, 9, 10]), "July to October");
        assert_eq!(window(&[6]), "June");
        assert_eq!(window(&[4, 6]), "April, June");
    }
}
