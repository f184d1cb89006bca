//! Command-line arguments as plain data. Nothing here validates or reads files: the resolve step
//! in [`crate::app::resolve`] merges these flags with a scenario file and defaults.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand};

/// Plan which tree-of-heaven patches to treat this season, and how, to cut spotted lanternfly
/// establishment risk the most for a fixed budget.
#[derive(Debug, Parser)]
#[command(name = "hostcut", version, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Build the patch graph and risk model, choose treatments under the budget, write the plan
    Plan(PlanCommand),
    /// Plan at many budgets: what each extra thousand buys, with a chart and a justification page
    Curve(CurveArgs),
    /// Turn a plan into a bid schedule, a scope of work and a completion template
    Contract(ContractArgs),
    /// Check a filled completion file and write next season's inventory
    Record(RecordArgs),
    /// Turn a plan into crew-day work orders with routes, a GeoPackage and a printable report
    Orders(OrdersArgs),
    /// Check a plan against a stochastic spread simulation, year by year, against other strategies
    Simulate(SimulateArgs),
    /// Fit the dispersal scale and spread rates to your own survey history
    Calibrate(CalibrateArgs),
    /// Plan this season's surveys: which sites, which method, how many visits for the survey hours
    Survey(SurveyArgs),
    /// Plan several seasons at once: new treatments, follow-ups and regrowth under yearly budgets
    Program(ProgramArgs),
    /// Benchmark the optimiser on a synthetic landscape (formulations against each other)
    Bench(BenchArgs),
    /// Make the invented demo landscape and plan it end to end
    Demo(DemoArgs),
    /// Write the demo landscape's input files into a folder (deterministic)
    MakeDemoInputs(MakeDemoArgs),
}

/// `hostcut plan`: the shared planning flags plus the ones only a single plan has.
#[derive(Debug, Clone, Args)]
pub struct PlanCommand {
    #[command(flatten)]
    pub inputs: PlanArgs,
    /// Also write the exact MIP (transportation formulation, objective R x 1000 / R before) in
    /// MPS, for checking with another solver
    #[arg(long, value_name = "FILE")]
    pub write_mps: Option<PathBuf>,
}

/// Flags of `hostcut plan`. Every flag overrides the same setting in `--scenario`.
#[derive(Debug, Clone, Default, Args)]
pub struct PlanArgs {
    /// Scenario TOML with any of the settings below (flags override it)
    #[arg(long, value_name = "FILE")]
    pub scenario: Option<PathBuf>,

    /// Host layer: a raster (band 1 = tree-of-heaven stems per hectare) or polygons with a stems attribute
    #[arg(long, value_name = "RASTER|VECTOR", conflicts_with = "inventory")]
    pub host: Option<PathBuf>,
    /// A density raster of one size class, stems/ha of that class, on the host raster's grid
    /// (repeat once per class of the catalogue; the host raster still outlines the patches)
    #[arg(long = "host-class", value_name = "CLASS=RASTER")]
    pub host_class: Vec<String>,
    /// Layer to read in a multi-layer host file (e.g. a GeoPackage)
    #[arg(long, value_name = "NAME")]
    pub host_layer: Option<String>,
    /// Name of the stems attribute of host polygons (matched ignoring case)
    #[arg(long, value_name = "FIELD")]
    pub stems_field: Option<String>,
    /// Name of the id attribute of host polygons [default: P0001, P0002... in layer order]
    #[arg(long, value_name = "FIELD")]
    pub id_field: Option<String>,
    /// Stand inventory CSV: id,x,y,stems[,access,herbicide,cost_factor,pressure,area_ha,suitability]
    #[arg(long, value_name = "CSV")]
    pub inventory: Option<PathBuf>,
    /// CRS of the inventory's x,y, e.g. EPSG:32618 or 32618; lon/lat (EPSG:4326, CRS84) is
    /// projected into the local UTM zone, a CRS in feet (e.g. EPSG:2272) into its metre form
    #[arg(long, value_name = "CRS")]
    pub crs: Option<String>,
    /// Work CRS (projected, metres) to convert the inventory into, instead of the default
    #[arg(long, value_name = "CRS")]
    pub work_crs: Option<String>,
    /// CRS to assume for a raster or vector layer that carries none
    #[arg(long, value_name = "CRS")]
    pub assume_crs: Option<String>,
    /// Establishment suitability raster, 0 (cannot establish) to 1 (fully suitable), any CRS
    #[arg(long, value_name = "RASTER")]
    pub suitability: Option<PathBuf>,
    /// Cells at or above this density (stems/ha) are host
    #[arg(long, allow_negative_numbers = true, value_name = "STEMS_PER_HA")]
    pub min_density: Option<f64>,
    /// Patches smaller than this are dropped as slivers (count reported)
    #[arg(long, allow_negative_numbers = true, value_name = "HA")]
    pub min_patch_ha: Option<f64>,
    /// Split patches into blocks no larger than this, so a work order is crew-sized
    #[arg(long, allow_negative_numbers = true, value_name = "HA")]
    pub max_patch_ha: Option<f64>,
    /// Cell connectivity for raster patches
    #[arg(long, value_name = "4|8")]
    pub connectivity: Option<u8>,

    /// Access polygons (e.g. parcels) with access, herbicide, cost_factor and contact fields
    #[arg(long, value_name = "VECTOR")]
    pub access: Option<PathBuf>,
    /// Layer to read in a multi-layer `--access` file
    #[arg(long, value_name = "NAME")]
    pub access_layer: Option<String>,
    /// Field of `--access` with the parcel id [default: parcel_id]; `none` if it has none
    #[arg(long, value_name = "FIELD")]
    pub parcel_field: Option<String>,
    /// Field of `--access` with open / permission / denied [default: access]; `none` if the
    /// layer holds no access rules
    #[arg(long, value_name = "FIELD")]
    pub access_field: Option<String>,
    /// Field of `--access` with allowed / restricted / prohibited [default: herbicide]; `none`
    /// if the layer holds no herbicide rules
    #[arg(long, value_name = "FIELD")]
    pub herbicide_field: Option<String>,
    /// Field of `--access` with the cost factor [default: cost_factor]; `none` if it has none
    #[arg(long, value_name = "FIELD")]
    pub cost_factor_field: Option<String>,
    /// Field of `--access` with the landowner or manager contact [default: contact]; `none` if
    /// it has none
    #[arg(long, value_name = "FIELD")]
    pub contact_field: Option<String>,
    /// Transport corridor lines (rail, highway); repeat for several
    #[arg(long, value_name = "VECTOR")]
    pub corridor: Vec<PathBuf>,
    /// Introduction weight beta of each `--corridor`, in order (one value applies to all)
    #[arg(long, allow_negative_numbers = true, value_name = "BETA")]
    pub corridor_weight: Vec<f64>,
    /// Buffer in metres of each `--corridor`, in order (one value applies to all)
    #[arg(long, allow_negative_numbers = true, value_name = "METRES")]
    pub corridor_buffer_m: Vec<f64>,
    /// Layer of each multi-layer `--corridor` file, in order (one value applies to all)
    #[arg(long, value_name = "NAME")]
    pub corridor_layer: Vec<String>,
    /// Known lanternfly detections (points)
    #[arg(long, value_name = "VECTOR")]
    pub detections: Option<PathBuf>,
    /// Layer to read in a multi-layer `--detections` file
    #[arg(long, value_name = "NAME")]
    pub detections_layer: Option<String>,
    /// Water features: streams, ponds, wells, wetlands (points, lines or polygons); repeat for
    /// several. Patches within the buffer get only methods the catalogue allows near water
    #[arg(long, value_name = "VECTOR")]
    pub water: Vec<PathBuf>,
    /// Buffer in metres of each `--water` layer, in order (one value applies to all) [default:
    /// 15, common practice; the product label governs]
    #[arg(long, allow_negative_numbers = true, value_name = "METRES")]
    pub water_buffer_m: Vec<f64>,
    /// Layer of each multi-layer `--water` file, in order (one value applies to all)
    #[arg(long, value_name = "NAME")]
    pub water_layer: Vec<String>,
    /// Sensitive sites: schools, water supplies, protected habitats (points, lines or
    /// polygons); repeat for several. Patches within the buffer are restricted sites
    #[arg(long, value_name = "VECTOR")]
    pub sensitive: Vec<PathBuf>,
    /// Buffer in metres of each `--sensitive` layer, in order (one value applies to all)
    /// [default: 30, common practice; local rules govern]
    #[arg(long, allow_negative_numbers = true, value_name = "METRES")]
    pub sensitive_buffer_m: Vec<f64>,
    /// Layer of each multi-layer `--sensitive` file, in order (one value applies to all)
    #[arg(long, value_name = "NAME")]
    pub sensitive_layer: Vec<String>,
    /// Weight gamma of detections in the introduction pressure
    #[arg(long, allow_negative_numbers = true, value_name = "GAMMA")]
    pub detection_weight: Option<f64>,

    /// Offer trap-tree methods: remove most stems, keep a few male stems treated with a systemic
    /// insecticide as lanternfly sinks (catalogue methods with `sink_kill`)
    #[arg(long)]
    pub trap_trees: bool,
    /// Treatment catalogue TOML (replaces the built-in models/treatments.toml)
    #[arg(long, value_name = "FILE")]
    pub treatments: Option<PathBuf>,
    /// Dispersal kernel: `exp` or `cauchy`, optionally with its scale (`exp:200`); give it
    /// several times to plan across dispersal scenarios (an ensemble, equal weights)
    #[arg(long, value_name = "FAMILY[:ALPHA_M]")]
    pub kernel: Vec<String>,
    /// calibration.toml from `hostcut calibrate`: the kernel family and scale fitted to surveys
    /// (and, for `simulate`, the fitted colonisation, extinction and introduction)
    #[arg(long, value_name = "FILE")]
    pub calibration: Option<PathBuf>,
    /// Dispersal scenarios to plan across: TOML with `[[scenario]]` kernel, alpha_m, weight, name
    #[arg(long, value_name = "FILE.toml")]
    pub ensemble: Option<PathBuf>,
    /// With scenarios: minimise the weighted mean R, the worst-case R, or the largest regret
    /// (as a share of each scenario's least achievable R)
    #[arg(long, value_enum, value_name = "HOW")]
    pub robust: Option<crate::core::scenario::Robust>,
    /// Dispersal kernel scale alpha in metres
    #[arg(long, allow_negative_numbers = true, value_name = "METRES")]
    pub alpha_m: Option<f64>,
    /// Patches are linked when the kernel is at least this
    #[arg(long, allow_negative_numbers = true)]
    pub epsilon: Option<f64>,

    /// Season budget (currency of the treatment catalogue)
    #[arg(long, allow_negative_numbers = true)]
    pub budget: Option<f64>,
    /// Score each treatment by its host over the next T years as it regrows (the mean of
    /// min(1, r (1 + g)^(t-1)) for t = 1..T, g = `horizon_regrowth`, default 0.1) instead of
    /// its host right after treatment. Default 10, the simulation's default horizon; 1 is the
    /// one-season objective (the host right after treatment). `hostcut program` ignores it: it
    /// models regrowth and follow-ups season by season itself
    #[arg(long, value_name = "T")]
    pub horizon_years: Option<u32>,
    /// Crew hours available this season
    #[arg(long, allow_negative_numbers = true, value_name = "HOURS")]
    pub crew_hours: Option<f64>,
    /// Patch ids that must be treated (comma-separated or repeated)
    #[arg(long, value_name = "IDS", value_delimiter = ',')]
    pub require: Vec<String>,
    /// Patch ids that must not be treated (comma-separated or repeated)
    #[arg(long, value_name = "IDS", value_delimiter = ',')]
    pub exclude: Vec<String>,
    /// Depot or yard as `X,Y` in the working CRS (for the nearest-first baseline); default: the
    /// centroid of the eligible patches
    #[arg(long, value_name = "X,Y", allow_negative_numbers = true)]
    pub depot: Option<String>,
    /// Limit on the whole command's wall time (reading layers, every search, writing outputs);
    /// the best plan found is reported with its proven gap
    #[arg(long, allow_negative_numbers = true, value_name = "SECONDS")]
    pub time_limit_s: Option<f64>,
    /// Stop when (risk_after - bound) / risk_after is at most this
    #[arg(long, allow_negative_numbers = true)]
    pub gap: Option<f64>,

    /// Refuse inputs and models estimated to need more memory than this (GB; default 16)
    #[arg(long, value_name = "GB", allow_negative_numbers = true)]
    pub max_memory_gb: Option<f64>,
    /// Which exact MIP to build: `transport` (default; the tightest bound) or `compact` (fewer
    /// columns, weaker bound; for comparison)
    #[arg(long, value_enum)]
    pub formulation: Option<crate::core::scenario::Formulation>,
    /// Output folder (must be new or empty unless `--force`)
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Replace an earlier run of this same command in `--out` (a folder hostcut did not write is never replaced)
    #[arg(long)]
    pub force: bool,
    /// Print only errors and the standing cautions
    #[arg(long)]
    pub quiet: bool,
}

/// Flags of `hostcut curve`: the inputs of `plan` (or `--plan DIR`) and the budgets to try.
#[derive(Debug, Clone, Args)]
pub struct CurveArgs {
    #[command(flatten)]
    pub inputs: PlanArgs,
    /// Reuse the inputs and settings of an earlier plan folder (its scenario.resolved.toml)
    #[arg(long = "plan", value_name = "DIR", conflicts_with = "scenario")]
    pub plan_dir: Option<PathBuf>,
    /// Budgets to plan at, comma-separated
    #[arg(
        long,
        value_name = "B1,B2,...",
        value_delimiter = ',',
        allow_negative_numbers = true,
        conflicts_with = "budget_range"
    )]
    pub budgets: Vec<f64>,
    /// Evenly spaced budgets MIN:MAX:STEPS (default: 0 to the cost of treating every eligible
    /// patch with its most effective method, 20 budgets)
    #[arg(long, value_name = "MIN:MAX:STEPS")]
    pub budget_range: Option<String>,
    /// Currency of the outputs (default: the treatment catalogue's); another currency than the
    /// catalogue's needs `--exchange-rate`
    #[arg(long, value_name = "CODE")]
    pub currency: Option<String>,
    /// Units of `--currency` per unit of the catalogue's currency; every amount is converted and
    /// the rate is stated on the page
    #[arg(long, value_name = "RATE", requires = "currency")]
    pub exchange_rate: Option<f64>,
    /// Title of the justification page (default: a description of what it shows)
    #[arg(long)]
    pub title: Option<String>,
    /// Place the page is about, e.g. the programme area, shown under the title
    #[arg(long)]
    pub place: Option<String>,
    /// Date shown under the title, as written (e.g. 2027-03-01)
    #[arg(long)]
    pub date: Option<String>,
    /// Budget points solved at once (each worker solves a run of neighbouring budgets)
    #[arg(long, default_value_t = 2)]
    pub jobs: usize,
}

/// `--out DIR` and `--force`, for the commands that read a plan folder and write another.
#[derive(Debug, Clone, Args)]
pub struct OutFolder {
    /// Output folder (must be new or empty unless `--force`)
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Replace an earlier run of this same command in `--out` (a folder hostcut did not write is never replaced)
    #[arg(long)]
    pub force: bool,
}

/// Flags of `hostcut contract`.
#[derive(Debug, Clone, Args)]
pub struct ContractArgs {
    /// The plan folder (the `--out` of `hostcut plan` or `hostcut demo`)
    #[arg(long = "plan", value_name = "DIR")]
    pub plan_dir: PathBuf,
    #[command(flatten)]
    pub output: OutFolder,
    /// Units of printed areas: ha (hectares) or ac (international acres, 1 ac = 0.40468564224 ha)
    #[arg(long, value_name = "UNIT", default_value = "ha", value_parser = ["ha", "ac"])]
    pub area_units: String,
}

/// Flags of `hostcut record`.
#[derive(Debug, Clone, Args)]
pub struct RecordArgs {
    /// The plan folder the work was done from
    #[arg(long = "plan", value_name = "DIR")]
    pub plan_dir: PathBuf,
    /// The filled completion file (from `hostcut contract`'s completion_template.csv)
    #[arg(long, value_name = "CSV")]
    pub completed: PathBuf,
    /// Stems treated above the plan's estimate are accepted with a warning up to this share of
    /// the planned stems, in percent; beyond it the file is refused
    #[arg(long, value_name = "PCT", default_value_t = 25.0)]
    pub extra_stems_tolerance_pct: f64,
    /// Accept stems treated above the plan beyond the tolerance (after confirming the count)
    #[arg(long)]
    pub accept_extra_stems: bool,
    #[command(flatten)]
    pub output: OutFolder,
}

/// Flags of `hostcut simulate`.
#[derive(Debug, Clone, Args)]
pub struct SimulateArgs {
    #[command(flatten)]
    pub inputs: PlanArgs,
    /// Simulate the plan in this plan folder, with its inputs and settings
    #[arg(long = "plan", value_name = "DIR", conflicts_with = "scenario")]
    pub plan_dir: Option<PathBuf>,
    /// Years to simulate (treatment at the start of year 1) [default: 10]
    #[arg(long)]
    pub years: Option<u32>,
    /// Stochastic runs per strategy (the same random numbers for every strategy) [default: 500]
    #[arg(long)]
    pub runs: Option<u32>,
    /// Seed of the random streams; the same seed gives byte-identical outputs [default: 42]
    #[arg(long)]
    pub seed: Option<u64>,
    /// Threads (results do not depend on it)
    #[arg(long, default_value_t = 2)]
    pub jobs: usize,
    /// Random feasible plans simulated besides the plan and the rules, to check whether plans
    /// with a lower R also leave less host occupied (proxy.csv, sim.json `proxy_check`); 0: none
    /// [default: 12]
    #[arg(long)]
    pub proxy_plans: Option<usize>,
    /// e: yearly extinction probability of an average-sized untreated patch [default: 0.2, or the `--calibration` fit]
    #[arg(long)]
    pub extinction: Option<f64>,
    /// x: extinction falls as host^-x [default: 1.0, or the `--calibration` fit]
    #[arg(long)]
    pub extinction_exponent: Option<f64>,
    /// c: colonisation scale per year [default: 0.5, or the `--calibration` fit]
    #[arg(long)]
    pub colonisation: Option<f64>,
    /// iota: introductions per unit of pressure (average-patch equivalents of occupied host) [default: 0.05, or the `--calibration` fit]
    #[arg(long)]
    pub introduction: Option<f64>,
    /// g: yearly regrowth of the host left after treatment (h <- min(1, h (1 + g))) [default: 0.1]
    #[arg(long)]
    pub regrowth: Option<f64>,
    /// Share of a saturated patch's colonisation pressure that travels far (0 = off) [default: 0]
    #[arg(long)]
    pub long_distance_share: Option<f64>,
    /// Long-distance kernel scale as a multiple of alpha [default: 10]
    #[arg(long)]
    pub long_distance_multiple: Option<f64>,
    /// Years a patch must stay occupied to count as saturated [default: 3]
    #[arg(long)]
    pub long_distance_after_years: Option<u32>,
}

/// Flags of `hostcut calibrate`.
#[derive(Debug, Clone, Args)]
pub struct CalibrateArgs {
    #[command(flatten)]
    pub inputs: PlanArgs,
    /// Fit on the patches of this plan folder (its inputs and settings)
    #[arg(long = "plan", value_name = "DIR", conflicts_with = "scenario")]
    pub plan_dir: Option<PathBuf>,
    /// Survey records: x,y,year,result (positive|negative) [,date,source]
    #[arg(long, value_name = "CSV")]
    pub surveys: PathBuf,
    /// CRS of the survey coordinates [default: the plan's]; with `--plan`, `--crs` means this too
    #[arg(long, value_name = "CRS")]
    pub surveys_crs: Option<String>,
    /// A survey outside every patch counts for the nearest patch within this distance
    #[arg(long, value_name = "METRES", default_value_t = 100.0)]
    pub survey_radius_m: f64,
    /// Kernel scales searched, MIN:MAX metres
    #[arg(long, value_name = "MIN:MAX", default_value = "25:3000")]
    pub alpha_range: String,
    /// Scales on the profile grid (log-spaced)
    #[arg(long, default_value_t = 17)]
    pub alpha_steps: usize,
    /// x: extinction falls as host^-x (held fixed)
    #[arg(long, default_value_t = 1.0)]
    pub extinction_exponent: f64,
    /// Fewest observed year-to-year transitions to fit at all
    #[arg(long, default_value_t = 30)]
    pub min_transitions: usize,
}

/// Flags of `hostcut survey`.
#[derive(Debug, Clone, Args)]
pub struct SurveyArgs {
    #[command(flatten)]
    pub inputs: PlanArgs,
    /// Survey the patches of this plan folder (its inputs and settings)
    #[arg(long = "plan", value_name = "DIR", conflicts_with = "scenario")]
    pub plan_dir: Option<PathBuf>,
    /// Crew hours for surveys this season, travel included
    #[arg(long, value_name = "H")]
    pub hours: f64,
    /// More candidate sites besides the patches (rail yards, warehouses, parks): any GDAL
    /// point, line or polygon layer; labelled by its `id` or `name` field
    #[arg(long, value_name = "FILE")]
    pub sites: Option<PathBuf>,
    /// Survey records in the `calibrate` format: x,y,year,result (positive|negative) [,date,source]
    #[arg(long, value_name = "CSV")]
    pub surveys: Option<PathBuf>,
    /// Survey-method catalogue replacing the built-in (illustrative) one
    #[arg(long, value_name = "FILE")]
    pub survey_methods: Option<PathBuf>,
    /// Most visits to one site this season
    #[arg(long, default_value_t = 3)]
    pub max_visits: u32,
    /// `host`: weight each site's expected finds by its host (a user's site counts as an
    /// average patch); `none`: every population counts the same
    #[arg(long, value_name = "WHAT", default_value = "none")]
    pub weight: String,
    /// This season's year [default: the year after the last survey record]
    #[arg(long, value_name = "YEAR")]
    pub season: Option<i32>,
    /// Years of history an unsurveyed site's probability grows over
    #[arg(long, default_value_t = 10)]
    pub history_years: u32,
    /// Detection probability of a past negative visit (the records do not name the method)
    /// [default: the `visual` method's, else the catalogue's first]
    #[arg(long, value_name = "P")]
    pub past_detection: Option<f64>,
    /// A survey record outside every patch counts for the nearest site within this distance
    #[arg(long, value_name = "METRES", default_value_t = 100.0)]
    pub survey_radius_m: f64,
    /// Straight-line travel speed, km/h
    #[arg(long, default_value_t = 30.0)]
    pub speed_kmh: f64,
    /// Road distance over straight-line distance
    #[arg(long, default_value_t = 1.3)]
    pub detour_factor: f64,
}

/// Flags of `hostcut program`.
#[derive(Debug, Clone, Args)]
pub struct ProgramArgs {
    #[command(flatten)]
    pub inputs: PlanArgs,
    /// Reuse the inputs and settings of an earlier plan folder
    #[arg(long = "plan", value_name = "DIR", conflicts_with = "scenario")]
    pub plan_dir: Option<PathBuf>,
    /// Seasons in the programme
    #[arg(long, value_name = "N")]
    pub seasons: usize,
    /// Budget of each season, comma-separated (one value: the same every season)
    #[arg(long, value_name = "B1,B2,...", value_delimiter = ',', required = true)]
    pub budgets: Vec<f64>,
    /// Crew hours of each season, comma-separated (one value: every season); `--crew-hours`
    /// gives one limit for every season too
    #[arg(long, value_name = "H1,H2,...", value_delimiter = ',')]
    pub season_crew_hours: Vec<f64>,
    /// Weight of season t in the objective is DISCOUNT^(t-1)
    #[arg(long, default_value_t = 1.0)]
    pub discount: f64,
    /// Yearly growth of untreated host (0.05 = 5 % more stems a year)
    #[arg(long, default_value_t = 0.05)]
    pub growth: f64,
    /// Yearly regrowth of a treated patch toward its untreated host once visits stop
    #[arg(long, default_value_t = 0.5)]
    pub regrowth: f64,
}

/// Flags of `hostcut bench`.
#[derive(Debug, Clone, Args)]
pub struct BenchArgs {
    /// Patches in the synthetic landscape
    #[arg(long, default_value_t = 200)]
    pub patches: usize,
    /// Clusters the patches gather in
    #[arg(long, default_value_t = 1)]
    pub clusters: usize,
    /// Side of the square area, metres
    #[arg(long, default_value_t = 3000.0)]
    pub side_m: f64,
    /// Spread of each cluster (standard deviation), metres
    #[arg(long, default_value_t = 800.0)]
    pub spread_m: f64,
    /// Kernel scale, metres (larger = more densely linked)
    #[arg(long, default_value_t = 400.0)]
    pub alpha_m: f64,
    /// Methods per patch (the built-in catalogue's first N)
    #[arg(long, default_value_t = 3)]
    pub methods: usize,
    /// Budget as a share of treating everything with its most effective method
    #[arg(long, default_value_t = 0.3)]
    pub budget_share: f64,
    /// Give each patch its own mix of size classes (one in five of one class only, the rest
    /// random shares) instead of the catalogue's default mix: prescriptions that differ by patch
    #[arg(long)]
    pub mixed_classes: bool,
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    #[arg(long, default_value_t = 600.0)]
    pub time_limit_s: f64,
    #[arg(long, default_value_t = 1e-4)]
    pub gap: f64,
    /// Solvers to run: hostcut (the plan command's: transportation MIP with the relaxation
    /// bound, rounding and local search), transport, compact, direct (plain HiGHS on each
    /// formulation; direct is the baseline)
    #[arg(long, value_delimiter = ',', default_value = "hostcut,direct")]
    pub formulations: Vec<String>,
    /// Also write the direct (baseline) formulation's MIP in MPS here, for an outside solver
    /// such as Debian's `coinor-cbc`
    #[arg(long, value_name = "FILE")]
    pub write_mps: Option<PathBuf>,
    /// Benchmark the raster path instead: a synthetic N x N Float32 host raster with
    /// `--patches` clumps of host in `--clusters` clusters, labelled into the patch graph and
    /// risk model as `hostcut plan` does (no optimisation)
    #[arg(long, value_name = "N")]
    pub raster_side: Option<usize>,
    /// Cell side of the synthetic raster, metres
    #[arg(long, value_name = "M", default_value_t = 20.0)]
    pub cell_m: f64,
    /// Keep the synthetic raster here (reused if it exists) [default: a temporary file]
    #[arg(long, value_name = "FILE", requires = "raster_side")]
    pub raster_file: Option<PathBuf>,
    /// Landscape shapes to run instead of one landscape (issue 23): tight, overlap, scatter,
    /// cauchy, crew, spikes; each row runs hostcut, plain HiGHS on the direct formulation
    /// (same time) and greedy, printed as one markdown table, worst gap first
    #[arg(long, value_delimiter = ',', value_name = "SHAPE")]
    pub shape: Vec<String>,
    /// Every shape (unless `--shape` names some) at budgets of 2, 10, 30 and 60 % (unless
    /// `--budget-shares` gives others)
    #[arg(long)]
    pub suite: bool,
    /// Budgets of the shape rows, as shares of treating everything [default: `--budget-share`,
    /// or 0.02,0.1,0.3,0.6 with `--suite`]
    #[arg(long, value_delimiter = ',', value_name = "SHARE")]
    pub budget_shares: Vec<f64>,
    /// Memory the plain-HiGHS baseline's model may take in a shape row, GB (larger models are
    /// reported as refused rather than run)
    #[arg(long, default_value_t = 8.0)]
    pub baseline_max_gb: f64,
}

/// Flags of `hostcut orders`.
#[derive(Debug, Clone, Args)]
pub struct OrdersArgs {
    /// The plan folder (the `--out` of `hostcut plan` or `hostcut demo`)
    #[arg(long = "plan", value_name = "DIR")]
    pub plan_dir: PathBuf,
    /// Output folder (must be new or empty unless `--force`)
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Replace an earlier run of this same command in `--out` (a folder hostcut did not write is never replaced)
    #[arg(long)]
    pub force: bool,
    /// Crews' depot in the plan's CRS [default: centroid of the treated patches]
    #[arg(
        long,
        value_name = "X,Y",
        conflicts_with = "depot_lonlat",
        allow_hyphen_values = true
    )]
    pub depot: Option<String>,
    /// Crews' depot as WGS 84 longitude,latitude
    #[arg(long, value_name = "LON,LAT", allow_hyphen_values = true)]
    pub depot_lonlat: Option<String>,
    /// Number of crews working in parallel
    #[arg(long, value_name = "N", default_value_t = 1)]
    pub crews: usize,
    /// Working hours per crew-day, travel included
    #[arg(long, value_name = "H", default_value_t = 8.0)]
    pub day_hours: f64,
    /// Average travel speed between sites, km/h, for straight-line travel (without `--roads`)
    /// [default: 30]
    #[arg(long, value_name = "KMH")]
    pub speed_kmh: Option<f64>,
    /// Road distance over straight-line distance, for straight-line travel (without `--roads`;
    /// an assumption, stated in the outputs) [default: 1.3]
    #[arg(long, value_name = "F")]
    pub detour_factor: Option<f64>,
    /// Road layer to route the crews on (any GDAL line layer: GeoPackage, Shapefile,
    /// OpenStreetMap .osm.pbf); without it travel is straight line x detour
    #[arg(long, value_name = "FILE")]
    pub roads: Option<PathBuf>,
    /// Layer to read in a multi-layer `--roads` file [default: `lines` for OpenStreetMap, else
    /// the only line layer]
    #[arg(long, value_name = "NAME", requires = "roads")]
    pub roads_layer: Option<String>,
    /// Field of `--roads` with the road class (OpenStreetMap `highway` values get stated
    /// default speeds) [default: highway]
    #[arg(long, value_name = "FIELD", requires = "roads")]
    pub roads_class_field: Option<String>,
    /// Field of `--roads` saying a road is one-way (yes/1/T/FT forward, -1/TF reverse)
    /// [default: oneway]
    #[arg(long, value_name = "FIELD", requires = "roads")]
    pub roads_oneway_field: Option<String>,
    /// Field of `--roads` with the road's own speed, km/h or "N mph" [default: maxspeed]
    #[arg(long, value_name = "FIELD", requires = "roads")]
    pub roads_speed_field: Option<String>,
    /// One speed for every drivable road, km/h, instead of the class table and the layer's speeds
    #[arg(long, value_name = "KMH", requires = "roads")]
    pub road_speed_kmh: Option<f64>,
    /// First working day, YYYY-MM-DD [default: the season's first window opening from today]
    #[arg(long, value_name = "DATE")]
    pub start_date: Option<String>,
    /// Days of the week the crews work, e.g. mon-fri, mon-sat, mon,wed,fri
    #[arg(long, value_name = "DAYS", default_value = "mon-fri")]
    pub workdays: String,
    /// Most stops on one crew-day
    #[arg(long, value_name = "N", default_value_t = crate::field::orders::DEFAULT_MAX_STOPS)]
    pub max_stops: usize,
    /// A `hostcut curve` output folder whose budget curve goes into the report [default: the
    /// plan folder's own curve.svg, if it has one]
    #[arg(long, value_name = "DIR")]
    pub curve: Option<PathBuf>,
    /// Print only errors and the standing cautions
    #[arg(long)]
    pub quiet: bool,
}

#[derive(Debug, Clone, Args)]
pub struct DemoArgs {
    /// Output folder for the demo's inputs and plan
    #[arg(long, value_name = "DIR", default_value = "demo-out")]
    pub out: PathBuf,
    /// Replace an earlier run of this same command in `--out` (a folder hostcut did not write is never replaced)
    #[arg(long)]
    pub force: bool,
    /// Print only errors and the standing cautions
    #[arg(long)]
    pub quiet: bool,
}

#[derive(Debug, Clone, Args)]
pub struct MakeDemoArgs {
    /// Folder to write the demo inputs into (new or empty)
    #[arg(value_name = "DIR")]
    pub dir: PathBuf,
    /// Replace an earlier `make-demo-inputs` folder
    #[arg(long)]
    pub force: bool,
}
