//! The map's context layers for `orders`: the parcels, corridors, water and sensitive sites the
//! plan was made with, read back from the plan folder's `scenario.resolved.toml`.
//!
//! Context is for the eye only: a layer that cannot be read any more (the folder moved, a file
//! deleted) is named in `skipped` and left off the map; it never stops the orders.
//!
//! # Units
//! Working CRS (the plan's), metres.

use std::path::Path;

use geo::Geometry;

use crate::core::scenario::read_scenario;
use crate::input::gis::{self, Crs};

/// What a context layer shows, in drawing order (bottom first).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ContextKind {
    Parcels,
    Water,
    Sensitive,
    Corridor,
}

pub struct ContextLayer {
    pub kind: ContextKind,
    pub name: String,
    pub geometries: Vec<Geometry<f64>>,
}

#[derive(Default)]
pub struct Context {
    pub layers: Vec<ContextLayer>,
    /// Layers the plan used that could not be read back: `name (reason)`.
    pub skipped: Vec<String>,
}

/// The plan folder's context layers, reprojected into `crs`; none when the folder records none.
pub fn context(plan_dir: &Path, crs: &Crs) -> Context {
    let mut out = Context::default();
    let Ok(scenario) = read_scenario(&plan_dir.join("scenario.resolved.toml")) else {
        return out;
    };
    let mut wanted: Vec<(ContextKind, String, &Path, Option<&str>)> = Vec::new();
    if let Some(a) = &scenario.access {
        wanted.push((
            ContextKind::Parcels,
            "parcels".into(),
            &a.path,
            a.layer.as_deref(),
        ));
    }
    for w in &scenario.water {
        wanted.push((
            ContextKind::Water,
            "water".into(),
            &w.path,
            w.layer.as_deref(),
        ));
    }
    for s in &scenario.sensitive {
        wanted.push((
            ContextKind::Sensitive,
            "sensitive sites".into(),
            &s.path,
            s.layer.as_deref(),
        ));
    }
    for c in &scenario.corridors {
        let name = if c.name.is_empty() {
            "corridor".to_string()
        } else {
            c.name.clone()
        };
        wanted.push((ContextKind::Corridor, name, &c.path, c.layer.as_deref()));
    }
    wanted.sort_by_key(|w| w.0 as u8);
    for (kind, name, path, layer) in wanted {
        match gis::read_vector(path, layer, crs, Some(crs), "a context layer", "--plan") {
            Ok(l) => out.layers.push(ContextLayer {
                kind,
                name,
                geometries: l.features.into_iter().map(|f| f.geometry).collect(),
            }),
            Err(e) => out.skipped.push(format!("{name} ({e})")),
        }
    }
    out
}
