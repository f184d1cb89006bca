//! Synthetic landscapes of a given size for benchmarks and tests: clustered patches, stems,
//! a corridor raising the pressure of the patches near it, deterministic by seed. Invented
//! data: never a real place.

use crate::core::kernel::Kernel;
use crate::core::rng::SplitMix;
use crate::core::site::{Access, Herbicide, PatchId, Site};
use crate::input::patches::Patch;
use crate::model::graph::{PatchGraph, build_graph};
use crate::model::risk::RiskModel;

/// What to generate.
#[derive(Debug, Clone, Copy)]
pub struct Spec {
    pub patches: usize,
    /// Clusters the patches gather in (1 = one cloud).
    pub clusters: usize,
    /// Side of the square area, metres.
    pub side_m: f64,
    /// Spread of a cluster (standard deviation, metres).
    pub spread_m: f64,
    pub kernel: Kernel,
    pub epsilon: f64,
    pub seed: u64,
}

/// A generated landscape.
pub struct Landscape {
    pub patches: Vec<Patch>,
    pub graph: PatchGraph,
    pub model: RiskModel,
}

/// Generate: cluster centres uniform in the square, patches normal around them (Box–Muller),
/// stems log-normal (median 150), pressure 1 + 3 within 300 m of a corridor across the middle,
/// one patch in ten on land where herbicide is prohibited.
pub fn generate(spec: &Spec) -> Landscape {
    let mut r = SplitMix::new(spec.seed);
    let centres: Vec<(f64, f64)> = (0..spec.clusters.max(1))
        .map(|_| (r.unit() * spec.side_m, r.unit() * spec.side_m))
        .collect();
    let mut normal = move || {
        let (u1, u2) = (r.unit().max(1e-12), r.unit());
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    };
    let mut patches = Vec::with_capacity(spec.patches);
    for i in 0..spec.patches {
        let c = centres[i % centres.len()];
        let x = (c.0 + spec.spread_m * normal()).clamp(0.0, spec.side_m);
        let y = (c.1 + spec.spread_m * normal()).clamp(0.0, spec.side_m);
        let stems = (150.0 * (0.8 * normal()).exp()).clamp(5.0, 5000.0).round();
        let near_corridor = (y - spec.side_m / 2.0).abs() <= 300.0;
        patches.push(Patch {
            id: PatchId(i as u32),
            label: format!("S{i:06}"),
            x,
            y,
            stems,
            area_ha: None,
            outline: None,
            site: Site {
                parcel: String::new(),
                access: Access::Open,
                herbicide: if i % 10 == 7 {
                    Herbicide::Prohibited
                } else {
                    Herbicide::Allowed
                },
                cost_factor: 1.0,
                ..Site::default()
            },
            pressure_override: Some(if near_corridor { 4.0 } else { 1.0 }),
            suitability: None,
        });
    }
    let points: Vec<(f64, f64)> = patches.iter().map(|p| (p.x, p.y)).collect();
    let graph = build_graph(&points, spec.kernel, spec.epsilon);
    let stems: Vec<f64> = patches.iter().map(|p| p.stems).collect();
    let pressure: Vec<f64> = patches
        .iter()
        .map(|p| p.pressure_override.unwrap_or(1.0))
        .collect();
    let model = RiskModel::new(&stems, &pressure, &graph);
    Landscape {
        patches,
        graph,
        model,
    }
}

/// A synthetic host-density raster: `clumps` roughly round clumps of host (radius 1.5 to 6
/// cells, peak 50 to 800 stems/ha falling off to the edge, one cell in ten missing so shapes
/// are ragged) gathered in `clusters` clusters; zero elsewhere. Deterministic by seed.
#[derive(Debug, Clone, Copy)]
pub struct RasterSpec {
    pub width: usize,
    pub height: usize,
    /// Cell side, metres.
    pub cell_m: f64,
    pub clumps: usize,
    pub clusters: usize,
    /// Spread of a cluster (standard deviation), cells.
    pub spread_cells: f64,
    pub seed: u64,
}

/// Largest clump radius, cells.
const CLUMP_RADIUS_MAX: f64 = 6.0;

/// The clumps of a [`RasterSpec`], sorted by their top row, ready to paint strips.
pub struct RasterPainter {
    spec: RasterSpec,
    /// (centre column, centre row, radius, peak), by centre row - radius.
    clumps: Vec<(f64, f64, f64, f64)>,
}

impl RasterPainter {
    pub fn new(spec: RasterSpec) -> RasterPainter {
        let mut r = SplitMix::new(spec.seed);
        let (w, h) = (spec.width as f64, spec.height as f64);
        let centres: Vec<(f64, f64)> = (0..spec.clusters.max(1))
            .map(|_| (r.unit() * w, r.unit() * h))
            .collect();
        let mut clumps = Vec::with_capacity(spec.clumps);
        for i in 0..spec.clumps {
            let c = centres[i % centres.len()];
            let (u1, u2) = (r.unit().max(1e-12), r.unit());
            let (n1, n2) = {
                let m = (-2.0 * u1.ln()).sqrt();
                let a = std::f64::consts::TAU * u2;
                (m * a.cos(), m * a.sin())
            };
            let x = (c.0 + spec.spread_cells * n1).clamp(0.0, w);
            let y = (c.1 + spec.spread_cells * n2).clamp(0.0, h);
            let radius = 1.5 + r.unit() * (CLUMP_RADIUS_MAX - 1.5);
            let peak = 50.0 + r.unit() * 750.0;
            clumps.push((x, y, radius, peak));
        }
        clumps.sort_by(|a, b| (a.1 - a.2).total_cmp(&(b.1 - b.2)));
        RasterPainter { spec, clumps }
    }

    /// Rows `row0..row0 + rows`, row-major: the highest clump value over each cell centre.
    pub fn rows(&self, row0: usize, rows: usize) -> Vec<f32> {
        let w = self.spec.width;
        let mut values = vec![0f32; w * rows];
        let (top, bottom) = (row0 as f64, (row0 + rows) as f64);
        // Clumps whose top is at most `bottom` and whose top is above `top` by less than a
        // diameter can reach the strip.
        let first = self
            .clumps
            .partition_point(|c| c.1 - c.2 < top - 2.0 * CLUMP_RADIUS_MAX);
        for &(cx, cy, radius, peak) in &self.clumps[first..] {
            if cy - radius >= bottom {
                break;
            }
            let r0 = ((cy - radius).floor().max(top)) as usize;
            let r1 = ((cy + radius).ceil().min(bottom)) as usize;
            let c0 = (cx - radius).floor().max(0.0) as usize;
            let c1 = ((cx + radius).ceil() as usize).min(w);
            for row in r0..r1 {
                for col in c0..c1 {
                    let (dx, dy) = (col as f64 + 0.5 - cx, row as f64 + 0.5 - cy);
                    let q = (dx * dx + dy * dy) / (radius * radius);
                    if q >= 1.0 || self.missing(col, row) {
                        continue;
                    }
                    let v = (peak * (1.0 - 0.8 * q)) as f32;
                    let cell = &mut values[(row - row0) * w + col];
                    if v > *cell {
                        *cell = v;
                    }
                }
            }
        }
        values
    }

    /// One cell in ten is missing, by a hash of its position and the seed.
    fn missing(&self, col: usize, row: usize) -> bool {
        let key = (row as u64) << 32 | col as u64;
        SplitMix::new(key ^ self.spec.seed.rotate_left(17)).unit() < 0.1
    }
}

/// Write the raster of `spec` as a tiled Float32 GeoTIFF (256 x 256 blocks) in UTM zone 18N,
/// painted and written 256 rows at a time.
pub fn write_raster(path: &std::path::Path, spec: RasterSpec) -> crate::core::error::Result<()> {
    use crate::core::error::Error;
    // Written beside the target and renamed when complete, so a failed or interrupted run
    // never leaves a partial raster that a later run would reuse.
    let mut partial = path.as_os_str().to_owned();
    partial.push(".partial");
    let partial = std::path::PathBuf::from(partial);
    let written = write_raster_to(&partial, path, spec);
    if written.is_err() {
        let _ = std::fs::remove_file(&partial);
        return written;
    }
    std::fs::rename(&partial, path).map_err(|e| Error::io("rename into place", path, e))
}

fn write_raster_to(
    partial: &std::path::Path,
    path: &std::path::Path,
    spec: RasterSpec,
) -> crate::core::error::Result<()> {
    let painter = RasterPainter::new(spec);
    crate::input::gis::write_geotiff_strips(
        partial,
        path,
        (spec.width, spec.height),
        [400_000.0, spec.cell_m, 0.0, 4_600_000.0, 0.0, -spec.cell_m],
        32618,
        |row0, rows| painter.rows(row0, rows),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::core::kernel::KernelKind;

    #[test]
    fn same_seed_same_landscape() {
        let spec = Spec {
            patches: 50,
            clusters: 3,
            side_m: 2000.0,
            spread_m: 200.0,
            kernel: Kernel {
                kind: KernelKind::Exp,
                alpha_m: 200.0,
            },
            epsilon: 1e-3,
            seed: 4,
        };
        let (a, b) = (generate(&spec), generate(&spec));
        assert_eq!(a.graph.edges.len(), b.graph.edges.len());
        assert!(
            a.patches
                .iter()
                .zip(&b.patches)
                .all(|(p, q)| p.x == q.x && p.stems == q.stems)
        );
        assert_eq!(a.patches.len(), 50);
        let other = generate(&Spec { seed: 5, ..spec });
        assert!(
            a.patches
                .iter()
                .zip(&other.patches)
                .any(|(p, q)| p.x != q.x)
        );
    }

    #[test]
    fn raster_strips_agree_and_clumps_land() {
        let spec = RasterSpec {
            width: 300,
            height: 200,
            cell_m: 20.0,
            clumps: 120,
            clusters: 4,
            spread_cells: 30.0,
            seed: 9,
        };
        let painter = RasterPainter::new(spec);
        let whole = painter.rows(0, spec.height);
        // Any strip height paints the same cells: clumps crossing strip edges are not lost.
        for strip in [1, 7, 64] {
            let mut streamed = Vec::new();
            let mut row0 = 0;
            while row0 < spec.height {
                let rows = strip.min(spec.height - row0);
                streamed.extend(painter.rows(row0, rows));
                row0 += rows;
            }
            assert_eq!(streamed, whole, "strip {strip}");
        }
        let host = whole.iter().filter(|&&v| v > 0.0).count();
        // 120 clumps of radius 1.5..6 cover roughly 120 x pi x 3.75^2 ~ 5,300 cells less
        // overlaps and the missing tenth: well over 1,000 and under 6,000.
        assert!((1000..6000).contains(&host), "{host} host cells");
        assert!(
            whole
                .iter()
                .all(|&v| v == 0.0 || (10.0..=800.0).contains(&v))
        );
        assert_eq!(RasterPainter::new(spec).rows(50, 20), painter.rows(50, 20));
    }
}
