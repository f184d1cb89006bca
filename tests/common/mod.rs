//! Helpers shared by the integration tests: run the real binary in a temp dir.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

pub fn bin() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_hostcut"))
}

/// Run `hostcut` with `args` in `dir`.
pub fn run(dir: &Path, args: &[&str]) -> Output {
    Command::new(bin())
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run hostcut")
}

pub fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

pub fn stdout(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

pub fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

/// Read summary.json of a plan folder.
pub fn summary(out: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap()
}

/// A one-method catalogue (no herbicide) with the given effectiveness and per-patch cost.
pub fn catalogue(effectiveness: f64, cost_per_patch: f64, cost_per_stem: f64) -> String {
    format!(
        "currency = \"USD\"\n[[method]]\nid = \"remove\"\nlabel = \"test removal\"\neffectiveness = {effectiveness}\ncost_per_stem = {cost_per_stem}\ncost_per_patch = {cost_per_patch}\nhours_per_stem = 0.0\nherbicide = false\nmonths = [6]\ncautions = [\"PPE\"]\n"
    )
}

/// Write a single-band Float32 GeoTIFF; `crs` None leaves it without a CRS.
pub fn geotiff(
    path: &Path,
    crs: Option<&str>,
    width: usize,
    height: usize,
    origin: (f64, f64),
    cell: f64,
    values: &[f32],
    nodata: Option<f64>,
) {
    use gdal::DriverManager;
    let driver = DriverManager::get_driver_by_name("GTiff").unwrap();
    let mut ds = driver
        .create_with_band_type::<f32, _>(path, width, height, 1)
        .unwrap();
    ds.set_geo_transform(&[origin.0, cell, 0.0, origin.1, 0.0, -cell])
        .unwrap();
    if let Some(def) = crs {
        let srs = gdal::spatial_ref::SpatialRef::from_definition(def).unwrap();
        ds.set_spatial_ref(&srs).unwrap();
    }
    let mut band = ds.rasterband(1).unwrap();
    if let Some(nd) = nodata {
        band.set_no_data_value(Some(nd)).unwrap();
    }
    let mut buffer = gdal::raster::Buffer::new((width, height), values.to_vec());
    band.write((0, 0), (width, height), &mut buffer).unwrap();
}

/// Headless Chromium, or `None` (the test then says so and passes) — except under CI, where
/// .ci/run installs it and its absence is a failure.
pub fn chromium() -> Option<PathBuf> {
    let found = ["/usr/bin/chromium", "/usr/bin/chromium-browser"]
        .into_iter()
        .map(PathBuf::from)
        .find(|p| p.exists());
    if found.is_none() {
        assert!(
            std::env::var_os("CI").is_none(),
            "CI must install chromium for this test"
        );
        eprintln!("skipped: no chromium on this machine");
    }
    found
}

/// Run headless Chromium on a local page with a throwaway profile in `scratch`.
pub fn chromium_run(chromium: &Path, scratch: &Path, args: &[String], page: &Path) -> Output {
    Command::new(chromium)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
        ])
        .arg(format!(
            "--user-data-dir={}",
            scratch.join("profile").display()
        ))
        .args(args)
        .arg(format!("file://{}", page.display()))
        .output()
        .expect("run chromium")
}

pub use hostcut::solve::instance::{Instance, InstanceSpec};

/// The tests' random instance spec, for `hostcut bench`'s generator
/// (`hostcut::solve::instance`): `patches` patches in one cloud on a 1.5 km square (so most
/// link), the kernel exponential on even seeds and Cauchy on odd ones with a scale of 100-600 m,
/// three methods, a budget of 20-70 % of treating everything, crew hours on every other seed,
/// and about one patch in eight required and one in eight excluded. Tests change fields to
/// fit (e.g. `clusters`, `side_m` for far-apart components).
pub fn small_spec(seed: u64, patches: usize) -> InstanceSpec {
    use hostcut::core::kernel::{Kernel, KernelKind};
    use hostcut::model::synthetic::Spec;
    let mut r = hostcut::core::rng::SplitMix::new(seed.wrapping_mul(0x9e37_79b9) ^ 0x7e57);
    let alpha_m = 100.0 + 500.0 * r.unit();
    let budget_share = 0.2 + 0.5 * r.unit();
    let hours = 0.3 + 0.5 * r.unit();
    InstanceSpec {
        landscape: Spec {
            patches,
            clusters: 1,
            side_m: 1500.0,
            spread_m: 400.0,
            kernel: Kernel {
                kind: if seed.is_multiple_of(2) {
                    KernelKind::Exp
                } else {
                    KernelKind::Cauchy
                },
                alpha_m,
            },
            epsilon: 0.001,
            seed,
        },
        methods: 3,
        budget_share,
        hours_share: (seed % 4 >= 2).then_some(hours),
        required_share: 0.12,
        excluded_share: 0.12,
        spikes: 0,
        mixed_classes: false,
    }
}

/// Generate the instance of `spec` (the generator is the library's; a failure is a bug).
pub fn random_instance(spec: &InstanceSpec) -> Instance {
    Instance::generate(spec).expect("generate a random instance")
}

/// A CSV file read by column name: `Table::read(path)`, then `table.rows[k].get("column")`.
pub struct Table {
    pub columns: Vec<String>,
    pub rows: Vec<Row>,
}

/// One data row of a [`Table`].
#[derive(Debug, Clone)]
pub struct Row {
    columns: std::rc::Rc<Vec<String>>,
    cells: Vec<String>,
}

impl Table {
    pub fn read(path: &Path) -> Table {
        let text = std::fs::read_to_string(path)
            .unwrap_or_else(|e| panic!("read {}: {e}", path.display()));
        Table::parse(&text)
    }

    pub fn parse(text: &str) -> Table {
        let mut reader = csv::Reader::from_reader(text.as_bytes());
        let columns: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
        let shared = std::rc::Rc::new(columns.clone());
        let rows = reader
            .records()
            .map(|r| Row {
                columns: shared.clone(),
                cells: r.unwrap().iter().map(String::from).collect(),
            })
            .collect();
        Table { columns, rows }
    }

    pub fn len(&self) -> usize {
        self.rows.len()
    }

    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }
}

impl Row {
    /// The cell under `column`; panics naming the columns when there is none.
    pub fn get(&self, column: &str) -> &str {
        match self.columns.iter().position(|c| c == column) {
            Some(k) => &self.cells[k],
            None => panic!("no column `{column}` in {:?}", self.columns),
        }
    }

    /// The cell under `column` as a number.
    pub fn num(&self, column: &str) -> f64 {
        let cell = self.get(column);
        cell.parse()
            .unwrap_or_else(|_| panic!("`{column}` = `{cell}` is not a number"))
    }
}

/// The built-in catalogue with every size class's `host_weight` 1 (each stem counts alike, as
/// before host weights): for tests whose subject is not the weights and whose fixtures were
/// sized for the plans before them.
pub fn catalogue_alike() -> String {
    let mut out = String::new();
    for line in hostcut::input::treatments::BUILTIN.lines() {
        if line.starts_with("host_weight =") {
            out.push_str("host_weight = 1.0\n");
        } else {
            out.push_str(line);
            out.push('\n');
        }
    }
    out
}
