//! Streaming connected-component labelling of a host raster, one row at a time, so a raster
//! of 10^8 cells never has to be in memory: only the previous row's runs, the union-find over
//! provisional labels and each label's running sums are kept (the two-pass scheme of Hoshen &
//! Kopelman 1976, on runs of cells; from memory).
//!
//! A run is a maximal stretch of host cells in one row with the same key (parcel, block
//! column). Two runs in adjacent rows with the same key join when they touch: overlap for
//! 4-connectivity, overlap or corner contact for 8. Rows in different block rows never join.
//! This is exactly the rule of joining each host cell to its left, upper (and, for 8, upper
//! diagonal) neighbours of the same key.
//!
//! # Units
//! Values are stems per hectare; cells are counted; positions are (column, row) in cell units
//! from the raster's corner, converted to the working CRS by the caller.

use crate::core::memory::Labelling;

/// A run of host cells in one row: columns `c0..c1` (end exclusive).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Run {
    pub row: u32,
    pub c0: u32,
    pub c1: u32,
}

/// A labelled component: its runs in row-major order and running sums.
#[derive(Debug, Clone, PartialEq)]
pub struct Blob {
    pub runs: Vec<Run>,
    /// 1-based parcel index (0 = outside every parcel).
    pub parcel: u32,
    pub cells: u64,
    /// Sum of cell values (stems/ha).
    pub sum: f64,
    /// Sum of value x (column + 0.5) and value x (row + 0.5): the value-weighted centre.
    pub sum_col: f64,
    pub sum_row: f64,
}

impl Blob {
    /// Row-major cell indices for a raster `width` wide.
    pub fn cell_indices(&self, width: usize) -> impl Iterator<Item = usize> + '_ {
        self.runs.iter().flat_map(move |r| {
            let base = r.row as usize * width;
            (r.c0 as usize..r.c1 as usize).map(move |c| base + c)
        })
    }
}

/// How cells become components.
#[derive(Debug, Clone, Copy)]
pub struct Rules {
    pub min_density: f64,
    /// 4 or 8.
    pub connectivity: u8,
    /// Side of the square blocks no component crosses (usize::MAX: none).
    pub block_side: usize,
}

#[derive(Debug, Clone, Copy)]
struct Sums {
    cells: u64,
    sum: f64,
    sum_col: f64,
    sum_row: f64,
    parcel: u32,
}

/// The labeller's state between rows.
pub struct Labeller {
    width: usize,
    rules: Rules,
    row: usize,
    /// The previous row's runs with their provisional labels.
    previous: Vec<(Run, u32)>,
    current: Vec<(Run, u32)>,
    /// Key (parcel, block column) of each previous and current run, parallel to the lists.
    previous_keys: Vec<(u32, usize)>,
    current_keys: Vec<(u32, usize)>,
    parent: Vec<u32>,
    sums: Vec<Sums>,
    /// Every run with its provisional label, in row-major order.
    runs: Vec<(Run, u32)>,
    max_value: f64,
    /// Components so far (provisional labels less the merges between them).
    roots: usize,
}

impl Labeller {
    pub fn new(width: usize, rules: Rules) -> Labeller {
        Labeller {
            width,
            rules,
            row: 0,
            previous: Vec::new(),
            current: Vec::new(),
            previous_keys: Vec::new(),
            current_keys: Vec::new(),
            parent: Vec::new(),
            sums: Vec::new(),
            runs: Vec::new(),
            max_value: f64::NAN,
            roots: 0,
        }
    }

    fn find(&mut self, mut i: u32) -> u32 {
        while self.parent[i as usize] != i {
            let p = self.parent[i as usize];
            self.parent[i as usize] = self.parent[p as usize];
            i = p;
        }
        i
    }

    fn union(&mut self, a: u32, b: u32) -> u32 {
        let (a, b) = (self.find(a), self.find(b));
        if a != b {
            self.parent[a.max(b) as usize] = a.min(b);
            self.roots -= 1;
        }
        a.min(b)
    }

    /// What the labeller holds after the rows pushed so far, for the memory budget. `closed`
    /// counts the components no later row can reach: only a component with a run in the last
    /// row can still grow or merge.
    pub fn held(&self) -> Labelling {
        Labelling {
            rows: self.row,
            runs: self.runs.len(),
            labels: self.parent.len(),
            closed: self.roots.saturating_sub(self.current.len()),
        }
    }

    /// The largest finite value seen so far (NaN if none).
    pub fn max_value(&self) -> f64 {
        self.max_value
    }

    /// Add the next row: its values (NaN = nodata) and parcel indices (empty = no parcels).
    pub fn push_row(&mut self, values: &[f32], parcels: &[u32]) {
        debug_assert_eq!(values.len(), self.width);
        let row = self.row;
        let block = self.rules.block_side;
        let new_block_row = block != usize::MAX && row.is_multiple_of(block);
        std::mem::swap(&mut self.previous, &mut self.current);
        std::mem::swap(&mut self.previous_keys, &mut self.current_keys);
        self.current.clear();
        self.current_keys.clear();
        if new_block_row {
            self.previous.clear();
            self.previous_keys.clear();
        }
        let min_density = self.rules.min_density;
        let is_host = |v: f32| v.is_finite() && f64::from(v) >= min_density;
        let key = |c: usize| {
            (
                parcels.get(c).copied().unwrap_or(0),
                if block == usize::MAX { 0 } else { c / block },
            )
        };
        let mut c = 0;
        let w = self.width;
        let mut p = 0; // first previous run that may still touch
        let reach = usize::from(self.rules.connectivity == 8);
        while c < w {
            let v = values[c];
            if v.is_finite() {
                let v = f64::from(v);
                if self.max_value.is_nan() || v > self.max_value {
                    self.max_value = v;
                }
            }
            if !is_host(v) {
                c += 1;
                continue;
            }
            let k = key(c);
            let start = c;
            let (mut sum, mut sum_col) = (0.0, 0.0);
            while c < w && is_host(values[c]) && key(c) == k {
                let v = f64::from(values[c]);
                if self.max_value.is_nan() || v > self.max_value {
                    self.max_value = v;
                }
                sum += v;
                sum_col += v * (c as f64 + 0.5);
                c += 1;
            }
            let run = Run {
                row: row as u32,
                c0: start as u32,
                c1: c as u32,
            };
            // Previous runs touching [start - reach, c + reach).
            let lo = start.saturating_sub(reach);
            let hi = c + reach;
            while p < self.previous.len() && (self.previous[p].0.c1 as usize) <= lo {
                p += 1;
            }
            let mut label: Option<u32> = None;
            let mut q = p;
            while q < self.previous.len() && (self.previous[q].0.c0 as usize) < hi {
                if self.previous_keys[q] == k {
                    let other = self.previous[q].1;
                    label = Some(match label {
                        None => self.find(other),
                        Some(l) => self.union(l, other),
                    });
                }
                q += 1;
            }
            let label = match label {
                Some(l) => l,
                None => {
                    let l = self.parent.len() as u32;
                    self.parent.push(l);
                    self.roots += 1;
                    self.sums.push(Sums {
                        cells: 0,
                        sum: 0.0,
                        sum_col: 0.0,
                        sum_row: 0.0,
                        parcel: k.0,
                    });
                    l
                }
            };
            let s = &mut self.sums[label as usize];
            s.cells += (c - start) as u64;
            s.sum += sum;
            s.sum_col += sum_col;
            s.sum_row += sum * (row as f64 + 0.5);
            self.current.push((run, label));
            self.current_keys.push(k);
            self.runs.push((run, label));
        }
        self.row += 1;
    }

    /// Resolve the labels: components in the row-major order of their first cell.
    pub fn finish(mut self) -> Vec<Blob> {
        let n = self.parent.len();
        let mut slot = vec![u32::MAX; n];
        let mut blobs: Vec<Blob> = Vec::new();
        // A root is its component's smallest label, created at its first run, so numbering
        // roots in label order numbers components by their first cell.
        for l in 0..n as u32 {
            let root = self.find(l);
            if slot[root as usize] == u32::MAX {
                slot[root as usize] = blobs.len() as u32;
                blobs.push(Blob {
                    runs: Vec::new(),
                    parcel: self.sums[root as usize].parcel,
                    cells: 0,
                    sum: 0.0,
                    sum_col: 0.0,
                    sum_row: 0.0,
                });
            }
            let b = &mut blobs[slot[root as usize] as usize];
            let s = self.sums[l as usize];
            b.cells += s.cells;
            b.sum += s.sum;
            b.sum_col += s.sum_col;
            b.sum_row += s.sum_row;
        }
        let runs = std::mem::take(&mut self.runs);
        for (run, label) in runs {
            let root = self.find(label);
            blobs[slot[root as usize] as usize].runs.push(run);
        }
        blobs
    }
}
