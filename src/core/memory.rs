//! The memory budget: `--max-memory-gb` (capped by the process's own address-space limit) and
//! the measured costs every growing stage is checked against *before* it allocates.
//!
//! Who checks what:
//! - the host raster's header ([`Budget::check_raster_header`]) and then the streaming labeller
//!   after every strip ([`Budget::check_labelling`]): runs and provisional labels held, and
//!   what resolving them will take;
//! - the patch count, right after labelling or reading and before outlines and the graph
//!   ([`Budget::check_patches`]);
//! - the link count, from a counting pass over the R-tree ([`crate::model::graph::LinkFinder::count`])
//!   before a single link is stored ([`Budget::check_links`]);
//! - the suitability raster, read in strips of at most [`STRIP_BYTES`] and sampled in chunks of
//!   at most [`SAMPLE_CHUNK`] points, both counted in [`Budget::plan_bytes`];
//! - GDAL's block cache, capped at [`GDAL_CACHE_MB`].
//!
//! An input that would exceed the budget is refused (exit 2) with the counts, the estimate and
//! what to change; nothing is left to fail in an allocation.
//!
//! # Units
//! Bytes internally; the user-facing limit is in GB (10^9 bytes). The per-item costs are peak
//! resident bytes of a whole `plan` run, measured with `/usr/bin/time -v` on this project's
//! machine (docs/benchmarks.md, "memory guard"), rounded up.

use crate::core::error::{Error, Result};

/// Links this version plans at most, whatever the memory.
pub const MAX_LINKS: usize = 5_000_000;

/// Patches this version plans at most, whatever the memory.
pub const MAX_PATCHES: usize = 500_000;

/// A `plan` run's resident memory before any patch: the binary, GDAL, PROJ, HiGHS and GDAL's
/// block cache. Measured: 60-115 MB for 24 to 20,000 stands without links.
pub const BASE_BYTES: f64 = 150e6;

/// Peak bytes per patch over a whole `plan` run (patch, site, choices, model, optimiser,
/// outputs). Measured: 2.9 kB per inventory stand (20,000 to 100,000 stands, no links).
pub const BYTES_PER_PATCH: f64 = 3_500.0;

/// Bytes per run of host cells in a raster patch (a row's stretch of the patch): the run and
/// its share of the outline's vertices, kept and written. Measured: about 0.27 kB per run on
/// the 10^8-cell synthetic raster (1.19 million runs, 672 MB in all).
pub const BYTES_PER_RUN: f64 = 300.0;

/// Bytes per outline piece (a polygon of a patch's outline: runs joined where they share an
/// edge), kept and written. Measured: 4.8 kB per piece on an 8-connected checkerboard (500,000
/// single-cell pieces in one patch, 2.48 GB in all).
pub const BYTES_PER_OUTLINE_PIECE: f64 = 5_000.0;

/// Transient bytes per run while the union that draws one patch's outline runs (charged for
/// the patch with the most runs). Measured: 0.6 kB per run for solid shapes, 0.9 kB on a
/// checkerboard, up to 9.3 kB for a tall ragged shape of 40,000 runs.
pub const UNION_BYTES_PER_RUN: f64 = 10_000.0;

/// Peak bytes per link over a whole `plan` run (edge, model link, adjacency both ways,
/// relaxation and search state). Measured: 141 B per link between 1.0 and 3.9 million links
/// (173 B before the edge list was sized by the counting pass).
pub const BYTES_PER_LINK: f64 = 200.0;

/// Labeller bytes per run of host cells in one row: the run with its provisional label, then
/// the run in its component.
pub const LABEL_BYTES_PER_RUN: f64 = 16.0 + 12.0;

/// Labeller bytes per provisional label: union-find parent and running sums, then the
/// component it resolves to (allocated when labels are resolved).
pub const LABEL_BYTES_PER_LABEL: f64 = 4.0 + 40.0 + 4.0 + 128.0;

/// The least a raster can cost to label per cell when half its cells are separate host runs
/// (a checkerboard): refused from the header above this.
pub const HEADER_BYTES_PER_CELL: f64 = 8.0;

/// One strip of raster values (host or suitability) read through GDAL at a time.
pub const STRIP_BYTES: usize = 64 << 20;

/// Points sampled from the suitability raster per pass: each costs its position, its
/// reprojected position, its cell and its value.
pub const SAMPLE_CHUNK: usize = 1 << 20;

/// Bytes per sampled point (positions before and after reprojection, owner, row order, value).
pub const SAMPLE_BYTES_PER_POINT: f64 = 16.0 + 16.0 + 8.0 + 8.0 + 8.0;

/// GDAL's raster block cache, megabytes (GDAL's own default is 5 % of RAM).
pub const GDAL_CACHE_MB: usize = 64;

/// Of an address-space limit (`ulimit -v`), the share left to the budget: GDAL, PROJ and the
/// thread stacks reserve address space they never touch.
const ADDRESS_SPACE_SHARE: f64 = 0.6;

/// The memory a run may use, and the checks against it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Budget {
    /// Bytes.
    limit: f64,
    /// `--max-memory-gb` as given.
    max_memory_gb: f64,
    /// The process's address-space limit in bytes, when it is the tighter one.
    address_space: Option<f64>,
}

impl Budget {
    /// `--max-memory-gb`, capped at a share of the process's address-space limit when that is
    /// lower (so a run under `ulimit -v` is refused, never aborted).
    pub fn new(max_memory_gb: f64) -> Budget {
        let asked = max_memory_gb * 1e9;
        let address_space = address_space_limit()
            .map(|b| b as f64 * ADDRESS_SPACE_SHARE)
            .filter(|&b| b < asked);
        Budget {
            limit: address_space.unwrap_or(asked),
            max_memory_gb,
            address_space,
        }
    }

    /// No limit (library callers and tests that build small graphs).
    pub fn unlimited() -> Budget {
        Budget {
            limit: f64::INFINITY,
            max_memory_gb: f64::INFINITY,
            address_space: None,
        }
    }

    /// The limit in GB.
    pub fn gb(&self) -> f64 {
        self.limit / 1e9
    }

    /// What the limit is, for messages: `--max-memory-gb 0.5`, or the address-space limit.
    pub fn describe(&self) -> String {
        match self.address_space {
            Some(b) => format!(
                "the {:.2} GB this process may use ({:.0} % of its address-space limit, `ulimit -v`)",
                b / 1e9,
                100.0 * ADDRESS_SPACE_SHARE
            ),
            None => format!("`--max-memory-gb {}`", self.max_memory_gb),
        }
    }

    /// The hint to raise the limit, when raising it is possible.
    fn raise(&self) -> &'static str {
        if self.address_space.is_some() {
            "raise the process's memory limit (`ulimit -v`)"
        } else {
            "raise `--max-memory-gb` if the machine has the memory"
        }
    }

    /// Estimated peak bytes of planning `patches` patches (costing `raster` more when they come
    /// from a raster) joined by `links` links, with a suitability raster sampled or not.
    pub fn plan_bytes(patches: usize, raster: RasterCost, links: usize, suitability: bool) -> f64 {
        BASE_BYTES
            + patches as f64 * BYTES_PER_PATCH
            + raster.bytes()
            + links as f64 * BYTES_PER_LINK
            + if suitability {
                STRIP_BYTES as f64 + SAMPLE_CHUNK as f64 * SAMPLE_BYTES_PER_POINT
            } else {
                0.0
            }
    }

    /// The most links the budget leaves room for beside `patches` patches (never above
    /// [`MAX_LINKS`]).
    pub fn links_allowed(&self, patches: usize, raster: RasterCost, suitability: bool) -> usize {
        let left = self.limit - Self::plan_bytes(patches, raster, 0, suitability);
        if left <= 0.0 {
            return 0;
        }
        ((left / BYTES_PER_LINK).floor().min(MAX_LINKS as f64)) as usize
    }

    /// Refuse a raster of `width` x `height` cells from its header alone when even its strips
    /// of runs on a checkerboard would exceed the budget.
    pub fn check_raster_header(&self, what: &str, width: usize, height: usize) -> Result<()> {
        let cells = width.saturating_mul(height);
        let need = cells as f64 * HEADER_BYTES_PER_CELL;
        if need > self.limit {
            return Err(Error::input_with_hint(
                format!(
                    "{what} has {width} x {height} cells: labelling it may need up to {:.3} GB, more than {}",
                    need / 1e9,
                    self.describe()
                ),
                format!(
                    "clip it to the programme area, coarsen it with `gdalwarp -tr`, or {}",
                    self.raise()
                ),
            ));
        }
        Ok(())
    }

    /// Refuse the labelling of a raster as soon as what it holds (`runs` runs and `labels`
    /// provisional labels after `rows` of `height` rows), resolved into components, would
    /// exceed the budget, or when `closed` components are already more than [`MAX_PATCHES`].
    pub fn check_labelling(
        &self,
        what: &str,
        progress: Labelling,
        width: usize,
        height: usize,
    ) -> Result<()> {
        let Labelling {
            rows,
            runs,
            labels,
            closed,
        } = progress;
        let need = BASE_BYTES
            + STRIP_BYTES as f64
            + runs as f64 * LABEL_BYTES_PER_RUN
            + labels as f64 * LABEL_BYTES_PER_LABEL;
        let coarsen = "coarsen the raster with `gdalwarp -tr` (e.g. 30 m cells), raise `--min-density`, use `--connectivity 8`, clip it to the programme area";
        if closed > MAX_PATCHES {
            return Err(Error::input_with_hint(
                format!(
                    "{what} ({width} x {height} cells) holds more than {MAX_PATCHES} separate host patches ({closed} in its first {rows} rows): more than this version plans"
                ),
                coarsen.replace(", clip", ", or clip"),
            ));
        }
        if need > self.limit {
            return Err(Error::input_with_hint(
                format!(
                    "{what} ({width} x {height} cells): labelling needs about {:.2} GB after {rows} of {height} rows ({runs} runs of host cells, {labels} provisional patches), more than {}",
                    need / 1e9,
                    self.describe()
                ),
                format!("{coarsen}, or {}", self.raise()),
            ));
        }
        Ok(())
    }

    /// Refuse `patches` patches (costing `raster` more when from a raster) when they are more
    /// than [`MAX_PATCHES`] or would leave no room in the budget.
    pub fn check_patches(
        &self,
        patches: usize,
        raster: RasterCost,
        suitability: bool,
    ) -> Result<()> {
        let hint = "coarsen the raster (`gdalwarp -tr`), raise `--min-density` or `--min-patch-ha`, plan the area in parts";
        if patches > MAX_PATCHES {
            return Err(Error::input_with_hint(
                format!("{patches} patches: more than this version plans ({MAX_PATCHES})"),
                hint.replace(", plan", ", or plan"),
            ));
        }
        let need = Self::plan_bytes(patches, raster, 0, suitability);
        if need > self.limit {
            let runs = if raster.runs > 0 {
                format!(
                    " ({} runs of host cells, outlines of {} polygons, the largest patch {} runs)",
                    raster.runs, raster.pieces, raster.largest_runs
                )
            } else {
                String::new()
            };
            return Err(Error::input_with_hint(
                format!(
                    "{patches} {}{runs} {} about {:.2} GB to plan before any link, more than {}",
                    if patches == 1 { "patch" } else { "patches" },
                    if patches == 1 { "needs" } else { "need" },
                    need / 1e9,
                    self.describe()
                ),
                format!("{hint}, or {}", self.raise()),
            ));
        }
        Ok(())
    }

    /// Refuse a graph of `count` links (from the counting pass) between `patches` patches when
    /// it exceeds [`MAX_LINKS`] or, with the patches, the budget. `what` names the graph (e.g.
    /// `the patch graph`), `cutoff_m` is the kernel's reach.
    pub fn check_links(
        &self,
        what: &str,
        count: LinkCount,
        patches: usize,
        raster: RasterCost,
        suitability: bool,
        cutoff_m: f64,
    ) -> Result<()> {
        let need = Self::plan_bytes(patches, raster, count.links, suitability);
        let over_count = count.links > MAX_LINKS;
        let over_memory = need > self.limit;
        if !over_count && !over_memory {
            return Ok(());
        }
        let links = if count.exact {
            format!("{} links", count.links)
        } else {
            format!(
                "about {} links (estimated from {} of the patches; at least {})",
                count.links, count.visited, count.at_least
            )
        };
        let mut why = Vec::new();
        if over_count {
            why.push(format!("more than this version plans ({MAX_LINKS} links)"));
        }
        if over_memory {
            why.push(format!("more than {}", self.describe()));
        }
        let mut hint = format!(
            "shorten the kernel cutoff ({cutoff_m:.0} m now: raise `--epsilon` or lower `--alpha-m`), coarsen the raster or raise `--min-patch-ha` (fewer patches), or plan the area in parts"
        );
        if over_memory && !over_count {
            hint = format!("{}, or {hint}", self.raise());
        }
        Err(Error::input_with_hint(
            format!(
                "{what} would have {links} between {patches} patches, needing about {:.2} GB: {}; refused before building it",
                need / 1e9,
                why.join(" and ")
            ),
            hint,
        ))
    }

    /// Rows per strip for a raster `width` wide at `bytes_per_cell`: a multiple of GDAL's
    /// `block_rows` near 256 rows, at most [`STRIP_BYTES`] (at least one row).
    pub fn strip_rows(width: usize, bytes_per_cell: usize, block_rows: usize) -> usize {
        let block = block_rows.max(1);
        let cap = (STRIP_BYTES / (bytes_per_cell.max(1) * width.max(1))).max(1);
        let want = 256usize.div_ceil(block) * block;
        if want <= cap {
            want
        } else if block > cap {
            cap
        } else {
            (cap / block) * block
        }
    }
}

/// What raster patches cost beyond their count: their runs, the pieces their outlines will
/// have, and the runs of the largest one (its outline union is the transient peak). Zero for
/// inventory and polygon patches.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct RasterCost {
    pub runs: usize,
    pub pieces: usize,
    pub largest_runs: usize,
}

impl RasterCost {
    pub fn bytes(&self) -> f64 {
        self.runs as f64 * BYTES_PER_RUN
            + self.pieces as f64 * BYTES_PER_OUTLINE_PIECE
            + self.largest_runs as f64 * UNION_BYTES_PER_RUN
    }
}

/// What the labeller holds after some rows, for [`Budget::check_labelling`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Labelling {
    pub rows: usize,
    pub runs: usize,
    pub labels: usize,
    /// Components that no later row can reach or merge: final, and kept (at least this many
    /// patches will come out).
    pub closed: usize,
}

/// A link count from [`crate::model::graph::LinkFinder::count`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LinkCount {
    /// The count, or the estimate when the pass stopped early.
    pub links: usize,
    /// Whether every patch was visited.
    pub exact: bool,
    /// Patches visited.
    pub visited: usize,
    /// Links certainly present (the count so far).
    pub at_least: usize,
}

/// The process's address-space limit (`ulimit -v`) in bytes, if any.
fn address_space_limit() -> Option<u64> {
    rustix::process::getrlimit(rustix::process::Resource::As).current
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn strips_are_block_multiples_within_the_byte_cap() {
        // Common practice: whole GDAL blocks per read.
        assert_eq!(Budget::strip_rows(1000, 4, 16), 256);
        assert_eq!(Budget::strip_rows(1000, 4, 100), 300);
        // 10^6 cells of 8 bytes a row: 8 rows fill 64 MiB.
        assert_eq!(Budget::strip_rows(1_000_000, 8, 1), 8);
        assert_eq!(Budget::strip_rows(1_000_000, 8, 3), 6);
        // Wider than a strip: still one row.
        assert_eq!(Budget::strip_rows(100_000_000, 8, 1), 1);
    }

    #[test]
    fn links_allowed_never_exceeds_the_fixed_limit() {
        // Common practice: the budget only ever lowers the fixed limit.
        assert_eq!(
            Budget::unlimited().links_allowed(10, RasterCost::default(), false),
            MAX_LINKS
        );
        let small = Budget {
            limit: 0.5e9,
            max_memory_gb: 0.5,
            address_space: None,
        };
        let n = small.links_allowed(12_000, RasterCost::default(), false);
        let used = Budget::plan_bytes(12_000, RasterCost::default(), n, false);
        assert!(used <= 0.5e9 && used + BYTES_PER_LINK > 0.5e9, "{n} {used}");
    }
}
