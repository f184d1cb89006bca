//! Outputs: every file of a plan folder, written into a staging folder beside `--out` and moved
//! into place only when all of them are complete, so a failed or killed run never leaves a
//! partial plan.

use std::path::{Path, PathBuf};

use serde::Serialize;

use crate::core::cautions;
use crate::core::error::{Error, Result};
use crate::input::gis::{self, Property, ToLonLat};
use crate::input::patches::Patches;
use crate::input::treatments::Catalogue;
use crate::model::graph::Pressure;
use crate::planning::plan::Plan;

/// The marker file in every folder hostcut writes. `--force` replaces only a folder that holds
/// it, and only with a run of the same command, so no user's own folder is ever emptied.
pub const MARKER: &str = ".hostcut-folder";

/// Test hook (tests/safety.rs), a comma-separated list: `kill:STEP` makes the process kill
/// itself with SIGKILL at that step of [`Staging::commit`] (`staged`, `swapped`, `moved-old`),
/// `pause:STEP` waits there for three seconds (holding the folder's lock), and `no-exchange`
/// forces the two-rename fallback used where the file system cannot swap folders. Documented in
/// DEVELOPERS.md; it changes nothing unless set.
const TEST_HOOK: &str = "HOSTCUT_TEST_HOOK";

fn test_hook_is(value: &str) -> bool {
    std::env::var(TEST_HOOK).is_ok_and(|v| v.split(',').any(|part| part.trim() == value))
}

fn checkpoint(step: &str) {
    if test_hook_is(&format!("pause:{step}")) {
        std::thread::sleep(std::time::Duration::from_secs(3));
    }
    if test_hook_is(&format!("kill:{step}")) {
        let _ =
            rustix::process::kill_process(rustix::process::getpid(), rustix::process::Signal::KILL);
        // SIGKILL cannot be caught; the process ends here.
        std::thread::sleep(std::time::Duration::from_secs(60));
    }
}

/// The command a hostcut output folder was written by, from its marker; `None` when the folder
/// has no marker (it is not one of ours).
pub fn written_by(folder: &Path) -> Option<String> {
    let text = std::fs::read_to_string(folder.join(MARKER)).ok()?;
    text.lines()
        .find_map(|l| l.strip_prefix("command = "))
        .map(|c| c.trim().trim_matches('"').to_string())
}

fn marker_text(command: &str) -> String {
    format!(
        "# Written by hostcut {}: `hostcut {command} --force` may replace this folder with a new run.\ncommand = \"{command}\"\n",
        env!("CARGO_PKG_VERSION")
    )
}

/// An exclusive lock on writing one output folder, held for the whole run: a second run into
/// the same `--out` is refused instead of mixing two runs' files. The lock is an advisory
/// `flock` on `.NAME.hostcut-lock` beside the folder, released by the kernel if the process
/// dies, and the file is removed when the run ends.
struct OutputLock {
    path: PathBuf,
    file: std::fs::File,
}

impl OutputLock {
    fn acquire(path: PathBuf, out: &Path) -> Result<OutputLock> {
        use rustix::fs::{FlockOperation, flock};
        use std::os::unix::fs::MetadataExt;
        loop {
            let file = std::fs::OpenOptions::new()
                .create(true)
                .truncate(false)
                .write(true)
                .open(&path)
                .map_err(|e| Error::io("create the lock file", &path, e))?;
            if flock(&file, FlockOperation::NonBlockingLockExclusive).is_err() {
                return Err(Error::input_with_hint(
                    format!(
                        "another hostcut run is writing `{}` right now",
                        out.display()
                    ),
                    "wait for it to finish, or give this run another `--out`",
                ));
            }
            // The file may have been removed (by the run that held it) between our open and our
            // lock: then we hold a lock nobody else can see, so take the lock again.
            let held = file.metadata().map(|m| (m.dev(), m.ino()));
            let now = std::fs::metadata(&path).map(|m| (m.dev(), m.ino()));
            match (held, now) {
                (Ok(a), Ok(b)) if a == b => return Ok(OutputLock { path, file }),
                _ => continue,
            }
        }
    }
}

impl Drop for OutputLock {
    fn drop(&mut self) {
        // Remove the file while still holding the lock; a run waiting on the old file sees it
        // gone and locks a new one.
        let _ = std::fs::remove_file(&self.path);
        let _ = &self.file;
    }
}

/// A staging folder beside `--out` that becomes `--out` on [`Staging::commit`] and is removed
/// otherwise.
///
/// Commit swaps whole folders: a new `--out` is a rename; replacing an earlier run (`--force`)
/// exchanges the two folders in one atomic rename (Linux `renameat2(RENAME_EXCHANGE)`), then
/// removes the old one. A reader — or a run killed at any moment — sees either the old folder
/// whole or the new one whole, never a mix, and files of the earlier run never survive into the
/// new one. `--force` replaces only a folder that holds hostcut's marker written by the same
/// command; anything else is refused.
pub struct Staging {
    out: PathBuf,
    dir: PathBuf,
    command: &'static str,
    done: bool,
    _lock: OutputLock,
}

fn is_empty_dir(path: &Path) -> Result<bool> {
    Ok(std::fs::read_dir(path)
        .map_err(|e| Error::io("read", path, e))?
        .next()
        .is_none())
}

/// Whether process `pid` is still running.
fn alive(pid: u32) -> bool {
    Path::new(&format!("/proc/{pid}")).exists()
}

/// The absolute path of `out`, with `.` and `..` resolved through the parent folder.
fn absolute_out(out: &Path) -> Result<PathBuf> {
    let abs = std::path::absolute(out).map_err(|e| Error::io("resolve", out, e))?;
    if let Ok(real) = abs.canonicalize() {
        return Ok(real);
    }
    // It does not exist yet: resolve its parent (which may not exist either).
    let name = abs.file_name().map(|n| n.to_os_string());
    match (abs.parent(), name) {
        (Some(parent), Some(name)) => match parent.canonicalize() {
            Ok(p) => Ok(p.join(name)),
            Err(_) => Ok(abs),
        },
        _ => Ok(abs),
    }
}

impl Staging {
    /// Check that `out` may be written by `command` (new, empty, or with `force` a folder this
    /// tool wrote for the same command), lock it against a concurrent run, and make the staging
    /// folder with the marker.
    pub fn new(out: &Path, force: bool, command: &'static str) -> Result<Staging> {
        let out = absolute_out(out)?;
        let (Some(parent), Some(name)) = (out.parent(), out.file_name()) else {
            return Err(Error::input_with_hint(
                format!("`{}` cannot be an output folder", out.display()),
                "give `--out` a folder name, e.g. `--out run1`",
            ));
        };
        let name = name.to_string_lossy().into_owned();
        std::fs::create_dir_all(parent).map_err(|e| Error::io("create", parent, e))?;
        let lock = OutputLock::acquire(parent.join(format!(".{name}.hostcut-lock")), &out)?;
        let partial = format!(".{name}.partial-");
        let old = format!(".{name}.old-");
        // Folders left by runs that were killed (their process is gone): a staging folder is
        // removed; an old folder moved aside by the two-rename fallback is put back if the new
        // one never arrived. Both are ours: they hold the marker.
        if let Ok(entries) = std::fs::read_dir(parent) {
            for entry in entries.flatten() {
                let file_name = entry.file_name().to_string_lossy().into_owned();
                let dead = |prefix: &str| {
                    file_name
                        .strip_prefix(prefix)
                        .and_then(|p| p.parse::<u32>().ok())
                        .is_some_and(|pid| !alive(pid))
                };
                if !entry.path().join(MARKER).is_file() {
                    continue;
                }
                if dead(&partial) {
                    let _ = std::fs::remove_dir_all(entry.path());
                } else if dead(&old) {
                    if out.exists() {
                        let _ = std::fs::remove_dir_all(entry.path());
                    } else {
                        let _ = std::fs::rename(entry.path(), &out);
                    }
                }
            }
        }
        Self::check_target(&out, force, command)?;
        let dir = parent.join(format!("{partial}{}", std::process::id()));
        if dir.exists() {
            let _ = std::fs::remove_dir_all(&dir);
        }
        std::fs::create_dir_all(&dir).map_err(|e| Error::io("create", &dir, e))?;
        let staging = Staging {
            out,
            dir,
            command,
            done: false,
            _lock: lock,
        };
        staging.write(MARKER, marker_text(command))?;
        Ok(staging)
    }

    /// Refuse a target that is not a folder, a non-empty folder without `force`, and with
    /// `force` a folder that is not hostcut's output of the same command.
    fn check_target(out: &Path, force: bool, command: &str) -> Result<()> {
        if !out.exists() {
            return Ok(());
        }
        if !out.is_dir() {
            return Err(Error::input_with_hint(
                format!("`{}` exists and is not a folder", out.display()),
                "give `--out` a new folder name",
            ));
        }
        if is_empty_dir(out)? {
            return Ok(());
        }
        if !force {
            return Err(Error::input_with_hint(
                format!("output folder `{}` is not empty", out.display()),
                "give a new folder, or add `--force` to replace an earlier run of this command there",
            ));
        }
        match written_by(out) {
            Some(c) if c == command => Ok(()),
            Some(c) => Err(Error::input_with_hint(
                format!(
                    "`{}` holds the output of `hostcut {c}`; `--force` replaces only an earlier `hostcut {command}` run",
                    out.display()
                ),
                "give this run its own folder",
            )),
            None => Err(Error::input_with_hint(
                format!(
                    "`{}` was not written by hostcut (it has no {MARKER} marker), so `--force` will not replace it",
                    out.display()
                ),
                "give a new folder: hostcut never deletes a folder it did not write",
            )),
        }
    }

    /// The final output folder.
    pub fn out(&self) -> &Path {
        &self.out
    }

    /// The staging folder itself (files are written here until commit).
    pub fn dir(&self) -> &Path {
        &self.dir
    }

    /// Path of `name` inside the staging folder.
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.join(name)
    }

    pub fn write(&self, name: &str, contents: impl AsRef<[u8]>) -> Result<()> {
        let path = self.path(name);
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent).map_err(|e| Error::io("create", parent, e))?;
        }
        std::fs::write(&path, contents).map_err(|e| Error::io("write", &path, e))
    }

    /// Move the staged folder into place as `out`, whole.
    pub fn commit(mut self) -> Result<PathBuf> {
        let io = |action, path: &Path, e: std::io::Error| Error::io(action, path, e);
        checkpoint("staged");
        // Checked again: the folder may have changed since the run started.
        Self::check_target(&self.out, true, self.command)?;
        if !self.out.exists() || is_empty_dir(&self.out)? {
            // rename(2) replaces an empty folder atomically.
            std::fs::rename(&self.dir, &self.out)
                .map_err(|e| io("move outputs to", &self.out, e))?;
            self.done = true;
            return Ok(self.out.clone());
        }
        let exchanged = !test_hook_is("no-exchange")
            && rustix::fs::renameat_with(
                rustix::fs::CWD,
                &self.dir,
                rustix::fs::CWD,
                &self.out,
                rustix::fs::RenameFlags::EXCHANGE,
            )
            .is_ok();
        if exchanged {
            // The staging path now holds the earlier run's folder.
            checkpoint("swapped");
            self.done = true;
            std::fs::remove_dir_all(&self.dir).map_err(|e| io("remove", &self.dir, e))?;
            return Ok(self.out.clone());
        }
        // Two renames where the file system cannot exchange folders; a run killed between them
        // leaves the old folder aside, and the next run puts it back (see `Staging::new`).
        let name = self
            .out
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let aside = self
            .dir
            .with_file_name(format!(".{name}.old-{}", std::process::id()));
        std::fs::rename(&self.out, &aside).map_err(|e| io("move aside", &self.out, e))?;
        checkpoint("moved-old");
        std::fs::rename(&self.dir, &self.out).map_err(|e| io("move outputs to", &self.out, e))?;
        self.done = true;
        std::fs::remove_dir_all(&aside).map_err(|e| io("remove", &aside, e))?;
        Ok(self.out.clone())
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        if !self.done {
            let _ = std::fs::remove_dir_all(&self.dir);
        }
    }
}

/// Write a file the user named outside any output folder (e.g. `--write-mps`): refused if it
/// exists (hostcut never overwrites a file it did not write in this run) or if its folder does
/// not; `write` fills a temporary file beside it, which is then linked into place without ever
/// replacing anything.
pub fn write_new_file(
    path: &Path,
    flag: &str,
    write: impl FnOnce(&Path) -> Result<()>,
) -> Result<()> {
    check_new_file(path, flag)?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    // The temporary keeps the extension: writers choose their format by it.
    let temporary = path.with_file_name(format!(".partial-{}-{name}", std::process::id()));
    let result = write(&temporary).and_then(|()| {
        std::fs::hard_link(&temporary, path).map_err(|e| {
            if e.kind() == std::io::ErrorKind::AlreadyExists {
                Error::input_with_hint(
                    format!(
                        "`{flag} {}`: the file appeared while this run was working",
                        path.display()
                    ),
                    "give a new file name",
                )
            } else {
                Error::io("write", path, e)
            }
        })
    });
    let _ = std::fs::remove_file(&temporary);
    result
}

/// Refuse `path` for a new file if it exists or its folder does not.
pub fn check_new_file(path: &Path, flag: &str) -> Result<()> {
    if path.exists() {
        return Err(Error::input_with_hint(
            format!("`{flag} {}`: the file exists", path.display()),
            "give a new file name; hostcut never overwrites a file it did not write in this run",
        ));
    }
    let parent = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    if !parent.is_dir() {
        return Err(Error::input_with_hint(
            format!(
                "`{flag} {}`: the folder `{}` does not exist",
                path.display(),
                parent.display()
            ),
            "create the folder first, or give a path in an existing folder",
        ));
    }
    Ok(())
}

/// Make a run repeatable: keep the catalogue it used as `treatments.used.toml` and write
/// `scenario.resolved.toml` pointing at it, under a one-line `header` comment. Paths inside the
/// output folder are written relative to it, so the folder can be moved or copied.
pub fn write_provenance(
    staging: &Staging,
    scenario: &crate::core::scenario::Scenario,
    catalogue_text: &str,
    header: &str,
) -> Result<()> {
    staging.write("treatments.used.toml", catalogue_text)?;
    let mut resolved = scenario.clone();
    resolved.plan.treatments = Some(staging.path("treatments.used.toml"));
    resolved.relative_to(staging.dir(), staging.out());
    staging.write(
        "scenario.resolved.toml",
        format!("# {header}\n{}", resolved.to_toml()?),
    )
}

/// `summary.json`.
#[derive(Debug, Serialize)]
pub struct Summary {
    pub currency: String,
    pub budget: f64,
    pub spent: f64,
    pub crew_hours_limit: Option<f64>,
    pub crew_hours: f64,
    pub risk_before: f64,
    pub risk_after: f64,
    pub risk_reduction_pct: f64,
    pub lambda_before: f64,
    pub lambda_after: f64,
    /// False when lambda_M or the establishment probabilities were cut short by the time limit.
    pub metrics_converged: bool,
    pub greedy_risk_after: Option<f64>,
    pub greedy_reduction_pct: Option<f64>,
    pub status: &'static str,
    pub gap: Option<f64>,
    pub bound: Option<f64>,
    pub solve_seconds: f64,
    /// `--time-limit-s`: the limit on the whole command's wall time.
    pub time_limit_s: f64,
    /// Seconds from the command's start to writing summary.json (reading layers included).
    pub elapsed_s: f64,
    /// How the plan was searched for (e.g. `transport MIP`, `component merge MIP`).
    pub solver_path: &'static str,
    /// Which proof gave `bound`: exact, floor, relaxation or HiGHS dual bound.
    pub bound_from: &'static str,
    pub n_patches: usize,
    pub n_edges: usize,
    pub n_treated: usize,
    pub n_eligible: usize,
    pub stems_total: f64,
    pub stems_treated: f64,
    pub dropped_slivers: usize,
    pub host_source: &'static str,
    pub crs: String,
    pub kernel: String,
    pub alpha_m: f64,
    pub epsilon: f64,
    pub tool_version: &'static str,
    /// Today's-practice plans under the same budget, hours and eligibility.
    pub baselines: serde_json::Map<String, serde_json::Value>,
    /// Depot used by the nearest-first baseline, working CRS.
    pub depot: [f64; 2],
    /// The suitability layer used, if any (effective host = stems x suitability).
    pub suitability_layer: Option<String>,
    /// Plans across dispersal scenarios: the objective, each scenario and the regret table's
    /// verdict (absent for a single kernel).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub ensemble: Option<serde_json::Value>,
    /// Cells, features and patches skipped while reading, by reason.
    pub skipped: crate::input::layers::Skipped,
    /// Patches kept with no host the insect can establish on (suitability 0 or 0 stems): risk
    /// 0, not planned for treatment unless required (patches.csv lists them).
    pub patches_without_host: usize,
    /// How the site rules were read and checked.
    pub site_rules: SiteRules,
}

/// summary.json's `site_rules`: whether water was checked, how many sites carry each rule, and
/// the rules that took their default.
#[derive(Debug, Clone, Serialize)]
pub struct SiteRules {
    /// `true` when water layers were given (patches are near water or clear), else every site
    /// is unchecked.
    pub water_checked: bool,
    pub patches_near_water: usize,
    pub patches_herbicide_prohibited: usize,
    pub patches_restricted: usize,
    pub patches_access_denied: usize,
    pub notes: Vec<String>,
}

impl SiteRules {
    pub fn of(patches: &Patches) -> SiteRules {
        use crate::core::site::{Access, Herbicide, Water};
        let count = |f: &dyn Fn(&crate::core::site::Site) -> bool| {
            patches.items.iter().filter(|p| f(&p.site)).count()
        };
        SiteRules {
            water_checked: patches.water_checked,
            patches_near_water: count(&|s| matches!(s.water, Water::Near(_))),
            patches_herbicide_prohibited: count(&|s| s.herbicide == Herbicide::Prohibited),
            patches_restricted: count(&|s| s.herbicide == Herbicide::Restricted),
            patches_access_denied: count(&|s| s.access == Access::Denied),
            notes: patches.notes.clone(),
        }
    }
}

/// Scientific notation for values that span many orders of magnitude.
fn sci(v: f64) -> String {
    if !v.is_finite() {
        String::new()
    } else if v.abs() < 1e-300 {
        "0".into()
    } else {
        format!("{v:.6e}")
    }
}

fn round(v: f64, digits: i32) -> String {
    if !v.is_finite() {
        return String::new();
    }
    let m = 10f64.powi(digits);
    format!("{}", (v * m).round() / m)
}

/// Everything the writers need.
pub struct Outputs<'a> {
    pub patches: &'a Patches,
    pub pressure: &'a Pressure,
    pub catalogue: &'a Catalogue,
    pub plan: &'a Plan,
    pub eligible: &'a [bool],
    /// Establishment suitability per patch (1 without a layer).
    pub suitability: &'a [f64],
}

/// The columns of plan.csv (a programme's season folders add `action`).
pub const PLAN_COLUMNS: [&str; 20] = [
    "priority",
    "patch_id",
    "method",
    "stems",
    "cost",
    "crew_hours",
    "risk_share",
    "reduction_pct",
    "value_per_cost",
    "x",
    "y",
    "lon",
    "lat",
    "parcel",
    "access",
    "herbicide",
    "contact",
    "corridors",
    "cautions",
    "site_notes",
];

/// A CSV file's bytes: the header row, then the rows, with text cells a spreadsheet would
/// execute neutralised ([`crate::core::csv_cells`]).
pub fn csv_bytes(header: &[&str], rows: &[Vec<String>]) -> Result<Vec<u8>> {
    crate::core::csv_cells::bytes(header, rows)
}

/// Write plan.csv, patches.csv, plan.geojson and cautions.txt into the staging folder.
pub fn write_tables(staging: &Staging, o: &Outputs) -> Result<()> {
    let patches = o.patches;
    let plan = o.plan;
    let to_lonlat = ToLonLat::new(&patches.crs)?;
    let lonlat = to_lonlat.points(&patches.items.iter().map(|p| (p.x, p.y)).collect::<Vec<_>>())?;
    let method_id = |i: usize| {
        plan.method_of[i]
            .map(|m| o.catalogue.method(m).id.clone())
            .unwrap_or_default()
    };

    let mut rows = Vec::new();
    for (rank, row) in plan.rows.iter().enumerate() {
        let i = row.patch.index();
        let p = &patches.items[i];
        rows.push(vec![
            (rank + 1).to_string(),
            p.label.clone(),
            o.catalogue.method(row.choice.method).id.clone(),
            round(p.stems, 1),
            round(row.choice.cost, 2),
            round(row.choice.hours, 2),
            round(plan.risk_shares[i], 6),
            round(row.reduction_pct, 4),
            round(row.value_per_cost, 4),
            round(p.x, 2),
            round(p.y, 2),
            round(lonlat[i].0, 7),
            round(lonlat[i].1, 7),
            p.site.parcel.clone(),
            p.site.access.as_str().into(),
            p.site.herbicide.as_str().into(),
            p.site.contact.clone(),
            o.pressure.corridors[i].join(";"),
            row.cautions.join(";"),
            p.site.notes(),
        ]);
    }
    staging.write("plan.csv", csv_bytes(&PLAN_COLUMNS, &rows)?)?;

    let mut rows = Vec::new();
    for (i, p) in patches.items.iter().enumerate() {
        rows.push(vec![
            p.label.clone(),
            round(p.x, 2),
            round(p.y, 2),
            round(lonlat[i].0, 7),
            round(lonlat[i].1, 7),
            round(p.stems, 1),
            p.area_ha.map(|a| round(a, 4)).unwrap_or_default(),
            round(o.pressure.values[i], 4),
            p.site.access.as_str().into(),
            p.site.herbicide.as_str().into(),
            round(p.site.cost_factor, 4),
            p.site.parcel.clone(),
            if o.eligible[i] {
                "yes".into()
            } else {
                "no".into()
            },
            round(plan.risk_shares[i], 6),
            sci(plan.patch_value[i]),
            round(plan.establishment_before[i], 6),
            round(plan.establishment_after[i], 6),
            method_id(i),
            round(o.suitability[i], 6),
            p.site.water.as_str().into(),
            p.site.notes(),
        ]);
    }
    let header = [
        "patch_id",
        "x",
        "y",
        "lon",
        "lat",
        "stems",
        "area_ha",
        "pressure",
        "access",
        "herbicide",
        "cost_factor",
        "parcel",
        "eligible",
        "risk_share",
        "patch_value",
        "establishment_p",
        "establishment_p_after",
        "method",
        "suitability",
        "water",
        "site_notes",
    ];
    staging.write("patches.csv", csv_bytes(&header, &rows)?)?;

    let mut priority = vec![0i64; patches.len()];
    for (rank, row) in plan.rows.iter().enumerate() {
        priority[row.patch.index()] = rank as i64 + 1;
    }
    let cautions_of: Vec<String> = {
        let mut c = vec![String::new(); patches.len()];
        for row in &plan.rows {
            c[row.patch.index()] = row.cautions.join(";");
        }
        c
    };
    let fields = [
        ("patch_id", Property::Text(String::new())),
        ("treated", Property::Integer(0)),
        ("priority", Property::Integer(0)),
        ("method", Property::Text(String::new())),
        ("stems", Property::Number(0.0)),
        ("cost", Property::Number(0.0)),
        ("crew_hours", Property::Number(0.0)),
        ("risk_share", Property::Number(0.0)),
        ("pressure", Property::Number(0.0)),
        ("access", Property::Text(String::new())),
        ("herbicide", Property::Text(String::new())),
        ("parcel", Property::Text(String::new())),
        ("cautions", Property::Text(String::new())),
    ];
    let mut cost_of = vec![f64::NAN; patches.len()];
    let mut hours_of = vec![f64::NAN; patches.len()];
    for row in &plan.rows {
        cost_of[row.patch.index()] = (row.choice.cost * 100.0).round() / 100.0;
        hours_of[row.patch.index()] = (row.choice.hours * 100.0).round() / 100.0;
    }
    let features: Vec<(geo::Geometry<f64>, Vec<Property>)> = patches
        .items
        .iter()
        .enumerate()
        .map(|(i, p)| {
            (
                p.geometry(),
                vec![
                    Property::Text(p.label.clone()),
                    Property::Integer(plan.method_of[i].is_some() as i64),
                    Property::Integer(priority[i]),
                    Property::Text(method_id(i)),
                    Property::Number((p.stems * 10.0).round() / 10.0),
                    Property::Number(cost_of[i]),
                    Property::Number(hours_of[i]),
                    Property::Number(plan.risk_shares[i]),
                    Property::Number(o.pressure.values[i]),
                    Property::Text(p.site.access.as_str().into()),
                    Property::Text(p.site.herbicide.as_str().into()),
                    Property::Text(p.site.parcel.clone()),
                    Property::Text(cautions_of[i].clone()),
                ],
            )
        })
        .collect();
    gis::write_geojson(
        &staging.path("plan.geojson"),
        &patches.crs,
        &fields,
        &features,
    )?;
    staging.write(
        "cautions.txt",
        format!(
            "{}\n{}\n",
            cautions::standing_text(),
            cautions::site_check_text(patches.water_checked)
        ),
    )?;
    Ok(())
}

/// The summary record.
pub fn summary(
    o: &Outputs,
    budget: f64,
    crew_hours_limit: Option<f64>,
    n_edges: usize,
    model: &crate::core::scenario::ModelSection,
) -> Summary {
    let plan = o.plan;
    let finite = |v: f64| if v.is_finite() { Some(v) } else { None };
    let stems_treated = plan
        .rows
        .iter()
        .map(|r| o.patches.items[r.patch.index()].stems)
        .sum();
    Summary {
        currency: o.catalogue.currency.clone(),
        budget,
        // Costs are whole cents per patch; the sum is shown to the cent.
        spent: (plan.spent * 100.0).round() / 100.0,
        crew_hours_limit,
        crew_hours: plan.crew_hours,
        risk_before: plan.risk_before,
        risk_after: plan.risk_after,
        risk_reduction_pct: plan.reduction_pct(),
        lambda_before: plan.lambda_before,
        lambda_after: plan.lambda_after,
        metrics_converged: plan.metrics_converged,
        greedy_risk_after: plan.greedy_risk_after,
        greedy_reduction_pct: plan.greedy_risk_after.map(|g| {
            if plan.risk_before > 0.0 {
                100.0 * (1.0 - g / plan.risk_before)
            } else {
                0.0
            }
        }),
        status: plan.status.as_str(),
        gap: finite(plan.gap),
        bound: finite(plan.bound),
        solve_seconds: plan.solve_seconds,
        time_limit_s: f64::NAN,
        elapsed_s: f64::NAN,
        solver_path: plan.solver_path.as_str(),
        bound_from: plan.bound_from.as_str(),
        n_patches: o.patches.len(),
        n_edges,
        n_treated: plan.rows.len(),
        n_eligible: o.eligible.iter().filter(|e| **e).count(),
        stems_total: o.patches.items.iter().map(|p| p.stems).sum(),
        stems_treated,
        dropped_slivers: o.patches.dropped_slivers,
        host_source: o.patches.source,
        crs: o.patches.crs.name.clone(),
        kernel: format!("{:?}", model.kernel).to_lowercase(),
        alpha_m: model.alpha_m,
        epsilon: model.epsilon,
        tool_version: env!("CARGO_PKG_VERSION"),
        baselines: serde_json::Map::new(),
        depot: [f64::NAN, f64::NAN],
        suitability_layer: None,
        ensemble: None,
        skipped: o.patches.skipped.clone(),
        patches_without_host: o
            .patches
            .items
            .iter()
            .zip(o.suitability)
            .filter(|(p, s)| p.stems * **s <= 0.0)
            .count(),
        site_rules: SiteRules::of(o.patches),
    }
}
