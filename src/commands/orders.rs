//! `hostcut orders`: crew-day work orders from a plan folder — orders.csv, orders.geojson,
//! orders.gpkg (patches, stops, routes), orders.json and a self-contained printable report.html.
//!
//! Takes the resolved settings (`app::resolve::orders`), reads the road layer when one is given
//! (`field::travel`), builds the schedule (`field::orders`) and writes the report
//! (`report::orders`).

use crate::app::resolve::orders::{OrdersSettings, TravelSettings};
use crate::core::cautions;
use crate::core::error::Result;
use crate::core::printer::Printer;
use crate::field::contract;
use crate::field::orders;
use crate::field::travel::{self, TravelModel};
use crate::report;
use crate::report::output::Staging;

pub fn run(settings: OrdersSettings, printer: Printer) -> Result<String> {
    let OrdersSettings {
        folder,
        plan_dir,
        crs,
        options,
        travel,
        curve_svg,
        out,
        force,
    } = settings;
    // The output folder is refused before the road layer is read.
    let staging = Staging::new(&out, force, "orders")?;
    let model = match &travel {
        TravelSettings::StraightLine { detour, speed_kmh } => TravelModel::StraightLine {
            detour: *detour,
            speed_kmh: *speed_kmh,
        },
        TravelSettings::Roads(roads) => {
            printer.progress(&format!("reading the road layer {}", roads.path.display()));
            let loaded = travel::load_roads(roads, &crs)?;
            let skips = &loaded.skips;
            if skips.not_lines + skips.without_geometry + skips.degenerate > 0 {
                printer.note(format!(
                    "road layer: {} feature{} without geometry, {} not lines and {} line parts with fewer than two vertices were left out",
                    skips.without_geometry,
                    if skips.without_geometry == 1 { "" } else { "s" },
                    skips.not_lines,
                    skips.degenerate
                ));
            }
            TravelModel::Roads(Box::new(loaded))
        }
    };
    printer.progress("routing the crews");
    let schedule = orders::schedule(&folder, &options, &model)?;

    let outlines = orders::outlines(&plan_dir, &crs)?;
    let context = crate::field::context::context(&plan_dir, &crs);
    let mut ctx = report::orders::Orders::new(&folder, crs, schedule, options, &model, outlines);
    ctx.context = context;
    let summary = report::orders::write(&ctx, &staging, curve_svg.as_deref())?;
    staging.commit()?;
    let s = &ctx.schedule;
    let o = &ctx.options;

    let mut text = printer.text();
    if folder.planned.is_empty() {
        text.warning(
            "the plan treats no patches, so there is nothing to order (raise the plan's budget or check its eligibility rules)",
        );
    }
    text.line(format_args!(
        "hostcut orders: {} treated patches -> {} crew-days for {} crew{} ({} workdays from {})",
        folder.planned.len(),
        s.days.len(),
        o.crews,
        if o.crews == 1 { "" } else { "s" },
        o.workdays,
        o.start
    ));
    if let (Some(a), Some(b)) = (&summary.first_date, &summary.last_date) {
        text.line(format_args!("  work from {a} to {b}"));
    }
    text.line(format_args!(
        "  {:.1} h of work and {:.1} h of travel ({})",
        summary.work_hours,
        summary.travel_hours,
        ctx.units.long(summary.travel_km)
    ));
    text.line(format_args!("  travel: {}", s.travel_text));
    if s.depot_is_default {
        text.warning(format_args!(
            "note: depot assumed at the centroid of the treated patches ({:.0},{:.0}), not a yard anyone drives from; give the crews' yard with `--depot X,Y` or `--depot-lonlat LON,LAT`",
            s.depot.0, s.depot.1
        ));
    } else {
        text.line(format_args!("  depot {:.0},{:.0}", s.depot.0, s.depot.1));
    }
    if s.split_patches > 0 {
        text.line(format_args!(
            "  {} patch{} too big for one day {} split across days",
            s.split_patches,
            if s.split_patches == 1 { "" } else { "es" },
            if s.split_patches == 1 { "is" } else { "are" }
        ));
    }
    for u in &s.unreached {
        text.warning(format_args!(
            "warning: patch {} is NOT SCHEDULED: no road from the depot reaches it ({}); it is listed unscheduled in orders.csv and report.html — add the missing road to the layer, or plan its access separately",
            u.patch_id, u.reason
        ));
    }
    for f in &s.far_from_road {
        text.warning(format_args!(
            "warning: {} is {} from the nearest road (more than {}): the walk is counted at walking speed; check how the crew gets in",
            if f.patch_id == "depot" {
                "the depot".to_string()
            } else {
                format!("patch {}", f.patch_id)
            },
            ctx.units.short(f.walk_m),
            ctx.units.short(f.max_walk_m)
        ));
    }
    for m in &s.missing {
        text.warning(format_args!(
            "warning: the crews cannot finish {} inside its window ({}): {} crew-day{} missing; add crews or workdays, start earlier, or carry the work to next season",
            m.methods.join(" and "),
            contract::window(&m.months),
            m.crew_days,
            if m.crew_days == 1 { " is" } else { "s are" }
        ));
    }
    text.line(format_args!(
        "outputs in {}: orders.csv, orders.geojson, orders.gpkg, orders.json, report.html, cautions.txt",
        out.display()
    ));
    text.cautions(&cautions::standing_text(), folder.prescribes_herbicide());
    Ok(text.into_string())
}
