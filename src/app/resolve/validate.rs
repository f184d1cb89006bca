//! Validation of a resolved scenario: every number in range, one host layer, a consistent
//! ensemble.

use crate::core::error::{Error, Result};
use crate::core::scenario::*;

fn check(ok: bool, message: impl FnOnce() -> String, hint: &str) -> Result<()> {
    if ok {
        Ok(())
    } else {
        Err(Error::input_with_hint(message(), hint))
    }
}

/// Validate every number and the choice of host layer.
pub fn validate(s: &Scenario) -> Result<()> {
    validate_with(s, true)
}

fn validate_ensemble(e: &EnsembleSection) -> Result<()> {
    let hint = "each `[[scenario]]` needs `kernel = \"exp\"` or `\"cauchy\"`, `alpha_m` above 0 and a `weight` of 0 or more";
    if e.members.is_empty() {
        return Err(Error::input_with_hint(
            "the ensemble has no scenarios",
            hint,
        ));
    }
    if e.members.len() > 50 {
        return Err(Error::input(format!(
            "the ensemble has {} scenarios; this version plans across at most 50",
            e.members.len()
        )));
    }
    let mut names = std::collections::BTreeSet::new();
    for m in &e.members {
        if !(m.alpha_m.is_finite() && m.alpha_m > 0.0) {
            return Err(Error::input_with_hint(
                format!(
                    "ensemble scenario `{}`: alpha_m must be a positive distance in metres, got {}",
                    m.name, m.alpha_m
                ),
                hint,
            ));
        }
        if !(m.weight.is_finite() && m.weight >= 0.0) {
            return Err(Error::input_with_hint(
                format!(
                    "ensemble scenario `{}`: weight must be 0 or more, got {}",
                    m.name, m.weight
                ),
                hint,
            ));
        }
        if !names.insert(m.name.as_str()) {
            return Err(Error::input(format!(
                "ensemble scenario name `{}` appears twice",
                m.name
            )));
        }
    }
    if e.members.iter().map(|m| m.weight).sum::<f64>() <= 0.0 {
        return Err(Error::input_with_hint(
            "the ensemble's weights are all 0",
            hint,
        ));
    }
    Ok(())
}

pub(crate) fn validate_with(s: &Scenario, need_budget: bool) -> Result<()> {
    if let Some(e) = &s.ensemble {
        validate_ensemble(e)?;
    }
    match (&s.host.path, &s.host.inventory) {
        (None, None) => {
            return Err(Error::input_with_hint(
                "no host layer given",
                "give `--host RASTER|VECTOR` or `--inventory stands.csv --crs EPSG:NNNN` (or `host.path` / `host.inventory` in the scenario)",
            ));
        }
        (Some(_), Some(_)) => {
            return Err(Error::input(
                "give either a host layer or a stand inventory, not both",
            ));
        }
        (None, Some(_)) if s.host.crs.is_none() => {
            return Err(Error::input_with_hint(
                "the stand inventory needs the CRS of its x,y coordinates",
                "add `--crs EPSG:NNNN` naming the CRS of its x,y (a UTM zone, a state plane in metres or feet, or EPSG:4326 for lon/lat)",
            ));
        }
        (Some(_), None) if s.host.work_crs.is_some() => {
            return Err(Error::input_with_hint(
                "`--work-crs` names the CRS a stand inventory is converted into; a host layer is worked in its own CRS",
                "reproject the layer first (`ogr2ogr -t_srs` / `gdalwarp -t_srs`), or leave out `--work-crs`",
            ));
        }
        (Some(_), None) if s.host.crs.is_some() => {
            return Err(Error::input_with_hint(
                "`--crs` names the CRS of a stand inventory; a host layer carries its own",
                "for a layer with no CRS use `--assume-crs EPSG:NNNN`",
            ));
        }
        _ => {}
    }
    let h = &s.host;
    check(
        h.min_density.is_finite() && h.min_density > 0.0,
        || {
            format!(
                "min_density must be a positive number of stems/ha, got {}",
                h.min_density
            )
        },
        "e.g. `--min-density 10`",
    )?;
    check(
        h.min_patch_ha.is_finite() && h.min_patch_ha >= 0.0,
        || format!("min_patch_ha must be 0 or more, got {}", h.min_patch_ha),
        "e.g. `--min-patch-ha 0.05`",
    )?;
    if let Some(m) = h.max_patch_ha {
        check(
            m.is_finite() && m > 0.0,
            || format!("max_patch_ha must be positive, got {m}"),
            "e.g. `--max-patch-ha 4`",
        )?;
    }
    check(
        h.connectivity == 4 || h.connectivity == 8,
        || format!("connectivity must be 4 or 8, got {}", h.connectivity),
        "use `--connectivity 8` (diagonal neighbours join) or `4`",
    )?;
    for c in &s.corridors {
        check(
            c.weight.is_finite() && c.weight >= 0.0,
            || {
                format!(
                    "corridor `{}`: weight must be 0 or more, got {}",
                    c.path.display(),
                    c.weight
                )
            },
            "e.g. `--corridor-weight 3`",
        )?;
        check(
            c.buffer_m.is_finite() && c.buffer_m >= 0.0,
            || {
                format!(
                    "corridor `{}`: buffer must be 0 or more metres, got {}",
                    c.path.display(),
                    c.buffer_m
                )
            },
            "e.g. `--corridor-buffer-m 500`",
        )?;
    }
    for (sections, what) in [(&s.water, "water"), (&s.sensitive, "sensitive")] {
        for w in sections {
            if let Some(b) = w.buffer_m {
                check(
                    b.is_finite() && b >= 0.0,
                    || {
                        format!(
                            "{what} layer `{}`: buffer must be 0 or more metres, got {b}",
                            w.path.display()
                        )
                    },
                    &format!("e.g. `--{what}-buffer-m 15`"),
                )?;
            }
        }
    }
    if let Some(a) = &s.access {
        for (rule, _) in ACCESS_FIELDS {
            if let Some(f) = a.field(rule) {
                check(
                    !f.trim().is_empty(),
                    || format!("access layer: the {rule} field name is empty"),
                    "name the field, or write `none` if the layer has no such field",
                )?;
            }
        }
    }
    if let Some(d) = &s.detections {
        check(
            d.weight.is_finite() && d.weight >= 0.0,
            || format!("detection weight must be 0 or more, got {}", d.weight),
            "e.g. `--detection-weight 1`",
        )?;
    }
    let m = &s.model;
    check(
        m.alpha_m.is_finite() && m.alpha_m > 0.0,
        || {
            format!(
                "alpha_m must be a positive distance in metres, got {}",
                m.alpha_m
            )
        },
        "e.g. `--alpha-m 200`",
    )?;
    check(
        m.epsilon.is_finite() && m.epsilon > 0.0 && m.epsilon < 1.0,
        || {
            format!(
                "epsilon must be between 0 and 1 (exclusive), got {}",
                m.epsilon
            )
        },
        "e.g. `--epsilon 0.001`",
    )?;
    check(
        m.persistence_ratio.is_finite() && m.persistence_ratio > 0.0,
        || {
            format!(
                "model.persistence_ratio must be positive, got {}",
                m.persistence_ratio
            )
        },
        "e.g. `persistence_ratio = 2.0`",
    )?;
    check(
        m.introduction_weight.is_finite() && m.introduction_weight >= 0.0,
        || {
            format!(
                "model.introduction_weight must be 0 or more, got {}",
                m.introduction_weight
            )
        },
        "e.g. `introduction_weight = 0.01`",
    )?;
    match s.plan.budget {
        None if !need_budget => {}
        None => {
            return Err(Error::input_with_hint(
                "no budget given",
                "add `--budget AMOUNT` (the season's money for treatments)",
            ));
        }
        Some(b) => check(
            b.is_finite() && b >= 0.0,
            || format!("budget must be 0 or more, got {b}"),
            "e.g. `--budget 60000`",
        )?,
    }
    if let Some(t) = s.plan.horizon_years {
        check(
            (1..=100).contains(&t),
            || format!("horizon_years must be 1 to 100, got {t}"),
            "e.g. `--horizon-years 10` (the simulation's default horizon)",
        )?;
    }
    if let Some(g) = s.plan.horizon_regrowth {
        check(
            g.is_finite() && (0.0..=10.0).contains(&g),
            || format!("horizon_regrowth must be 0 to 10, got {g}"),
            "e.g. `horizon_regrowth = 0.1` (host left after treatment grows 10 % a year)",
        )?;
    }
    if let Some(hours) = s.plan.crew_hours {
        check(
            hours.is_finite() && hours >= 0.0,
            || format!("crew hours must be 0 or more, got {hours}"),
            "e.g. `--crew-hours 400`",
        )?;
    }
    check(
        s.solver.max_memory_gb.is_finite() && s.solver.max_memory_gb > 0.0,
        || {
            format!(
                "max_memory_gb must be positive, got {}",
                s.solver.max_memory_gb
            )
        },
        "e.g. `--max-memory-gb 8`",
    )?;
    for id in &s.plan.require {
        if s.plan.exclude.contains(id) {
            return Err(Error::input(format!(
                "patch `{id}` is both required and excluded"
            )));
        }
    }
    check(
        s.solver.time_limit_s.is_finite() && s.solver.time_limit_s > 0.0,
        || {
            format!(
                "time limit must be positive seconds, got {}",
                s.solver.time_limit_s
            )
        },
        "e.g. `--time-limit-s 60`",
    )?;
    check(
        s.solver.gap.is_finite() && (0.0..1.0).contains(&s.solver.gap),
        || format!("gap must be in [0, 1), got {}", s.solver.gap),
        "e.g. `--gap 0.0001`",
    )?;
    Ok(())
}
