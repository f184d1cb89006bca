//! The contract's and the record's files: bid_schedule.csv, completion_template.csv,
//! scope_of_work.md/.html and cautions.txt for `hostcut contract`; inventory.next.csv and
//! record_report.md for `hostcut record`; and both commands' stdout. What they hold is worked
//! out in `field::contract` (line items, the completion check, the season done).
//!
//! # Units
//! Money in the catalogue's currency, to the cent (billed money; house style in
//! `report::format`); stems as counts; areas computed in hectares and printed in the contract's
//! `--area-units` ([`AreaUnit`]: hectares or international acres).

use std::fmt::Write as _;
use std::path::Path;

use crate::core::cautions;
use crate::core::error::Result;
use crate::field::contract::{self, LineItem, PlanFolder, Season};
use crate::report::chart::{escape, thousands};
use crate::report::format::AreaUnit;
use crate::report::output::{self, Staging};

/// Contract money is billed money: to the cent (house style in `report::format`).
fn money(code: &str, cents: i64) -> String {
    crate::report::format::money_cents(code, cents)
}

/// `hostcut contract`'s files: the bid schedule, the completion template (in priority order),
/// the scope of work and the standing cautions; areas printed in `area_units`.
pub fn write_bid(
    staging: &Staging,
    folder: &PlanFolder,
    items: &[LineItem],
    area_units: AreaUnit,
) -> Result<()> {
    let total = total(items);
    // With size classes the bid has a line per method and size class, and says which.
    let by_size = items.iter().any(|i| !i.size_class.is_empty());
    let size_label = |id: &str| {
        folder
            .catalogue
            .size_classes
            .iter()
            .find(|c| c.id == id)
            .map(|c| format!(" - {}: {}", c.label, c.description))
            .unwrap_or_default()
    };
    let mut rows = Vec::new();
    for item in items {
        let method = folder.catalogue.method(item.method_id);
        rows.push(vec![
            item.number.to_string(),
            item.method.clone(),
            format!("{}{}", method.label, size_label(&item.size_class)),
            item.site_class.to_string(),
            item.patch_ids.len().to_string(),
            format!("{:.0}", item.stems.round() + 0.0),
            item.hectares
                .map(|h| format!("{:.2}", area_units.from_ha(h)))
                .unwrap_or_default(),
            "stem".into(),
            format!("{:.4}", item.cents as f64 / 100.0 / item.stems.max(1e-9)),
            format!("{:.2}", item.cents as f64 / 100.0),
            String::new(),
            String::new(),
        ]);
    }
    rows.push(vec![
        "TOTAL".into(),
        String::new(),
        String::new(),
        String::new(),
        folder.planned.len().to_string(),
        format!(
            "{:.0}",
            items.iter().map(|i| i.stems).sum::<f64>().round() + 0.0
        ),
        String::new(),
        String::new(),
        String::new(),
        format!("{:.2}", total as f64 / 100.0),
        String::new(),
        String::new(),
    ]);
    let header = [
        "item",
        "method",
        "description",
        "site_class",
        "patches",
        "stems",
        area_units.column(),
        "unit",
        "estimated_unit_price",
        "estimated_extended",
        "bid_unit_price",
        "bid_extended",
    ];
    // The size class column, after `method`, only when the catalogue has size classes.
    let mut header: Vec<&str> = header.to_vec();
    if by_size {
        header.insert(2, "size_class");
        for (row, item) in rows
            .iter_mut()
            .zip(items.iter().map(Some).chain(std::iter::once(None)))
        {
            row.insert(2, item.map(|i| i.size_class.clone()).unwrap_or_default());
        }
    }
    staging.write("bid_schedule.csv", output::csv_bytes(&header, &rows)?)?;

    let mut rows = Vec::new();
    for p in &folder.planned {
        rows.push(vec![
            p.patch_id.clone(),
            p.method.clone(),
            format!("{:.0}", p.stems.round() + 0.0),
            String::new(),
            String::new(),
            String::new(),
            String::new(),
            String::new(),
            String::new(),
            p.parcel.clone(),
            p.contact.clone(),
        ]);
    }
    let header = [
        "patch_id",
        "method",
        "planned_stems",
        "treated_stems",
        "date",
        "applicator_licence",
        "product_active_ingredient",
        "notes",
        "reason",
        "parcel",
        "contact",
    ];
    // With size classes, the planned prescription (what each class gets) follows `method`,
    // for the crew to read; `record` checks the row's method and stems as before.
    let mut header: Vec<&str> = header.to_vec();
    if by_size {
        header.insert(2, "planned_prescription");
        for (row, p) in rows.iter_mut().zip(&folder.planned) {
            row.insert(2, p.prescription_text(&folder.catalogue, 1.0));
        }
    }
    staging.write(
        "completion_template.csv",
        output::csv_bytes(&header, &rows)?,
    )?;

    let (md, html) = scope_of_work(folder, items, total, area_units);
    staging.write("scope_of_work.md", md)?;
    staging.write("scope_of_work.html", html)?;
    staging.write("cautions.txt", cautions::standing_text())
}

/// The estimated total of the line items, in cents.
pub fn total(items: &[LineItem]) -> i64 {
    items.iter().map(|i| i.cents).sum()
}

/// `hostcut contract`'s stdout: the line items, the estimate, the files and the standing
/// cautions.
pub fn bid_text(folder: &PlanFolder, items: &[LineItem], out: &Path) -> String {
    let mut text = format!(
        "hostcut contract: {} line items for {} patches, estimated {} (the plan's cost)\noutputs in {}: bid_schedule.csv, scope_of_work.md, scope_of_work.html, completion_template.csv\n\n",
        items.len(),
        folder.planned.len(),
        money(&folder.catalogue.currency, total(items)),
        out.display()
    );
    text.push_str(&cautions::standing_text());
    text
}

/// The scope of work as Markdown and HTML: the same sections.
pub fn scope_of_work(
    folder: &PlanFolder,
    items: &[contract::LineItem],
    total: i64,
    area_units: AreaUnit,
) -> (String, String) {
    let currency = &folder.catalogue.currency;
    let mut sections: Vec<(String, Vec<String>)> = Vec::new();
    sections.push((
        "The work".into(),
        vec![
            format!("Treat tree-of-heaven (Ailanthus altissima) on {} patches, in the line items below, by the methods named. The estimated total is {}; bidders price each line in bid_schedule.csv.", folder.planned.len(), money(currency, total)),
            "Cutting a live tree-of-heaven without a systemic treatment first is not acceptable work: it makes the tree sprout from the stump and sucker from the roots. Treated stems may be felled only 30 days or more after treatment.".into(),
        ],
    ));
    // Site rules first, where no bidder can miss them.
    let mut rules = Vec::new();
    let ids = |f: &dyn Fn(&contract::PlannedPatch) -> bool| {
        folder
            .planned
            .iter()
            .filter(|p| f(p))
            .map(|p| p.patch_id.clone())
            .collect::<Vec<_>>()
    };
    let no_herbicide = ids(&|p| p.no_herbicide());
    if !no_herbicide.is_empty() {
        rules.push(format!(
            "NO HERBICIDE ON THESE SITES: {}. Only the mechanical method planned; no herbicide may be brought onto them.",
            no_herbicide.join(", ")
        ));
    }
    for p in folder.planned.iter().filter(|p| p.restriction().is_some()) {
        rules.push(format!(
            "Restricted site {}: {}. Herbicide only under the site's conditions, confirmed in writing with the site manager before work; no drift-prone method.",
            p.patch_id,
            p.restriction().unwrap_or_default()
        ));
    }
    for p in folder.planned.iter().filter(|p| p.near_water().is_some()) {
        rules.push(format!(
            "Site {} is {}: only the method planned, with a product labelled for aquatic sites where herbicide is used, and the label's buffer from the water.",
            p.patch_id,
            p.near_water().unwrap_or_default()
        ));
    }
    let water_checked = folder.summary.site_rules.water_checked;
    if !water_checked {
        rules.push("No water layer was given when this plan was made: the contractor checks every site for streams, ponds, wells and wetlands before herbicide work and keeps the label's buffers.".into());
    }
    if !rules.is_empty() {
        sections.push(("Site rules".into(), rules));
    }
    for item in items {
        let method = folder.catalogue.method(item.method_id);
        let mut lines = vec![
            format!(
                "Work: {}{} on {} patches ({} stems{}), site class: {}.",
                method.label,
                folder
                    .catalogue
                    .size_classes
                    .iter()
                    .find(|c| c.id == item.size_class)
                    .map(|c| format!(", {} ({})", c.label.to_lowercase(), c.description))
                    .unwrap_or_default(),
                item.patch_ids.len(),
                thousands(item.stems),
                item.hectares
                    .map(|h| format!(", {:.1} {}", area_units.from_ha(h), area_units.symbol()))
                    .unwrap_or_default(),
                item.site_class
            ),
            format!("Patches: {}.", item.patch_ids.join(", ")),
            format!("Season window: {}.", contract::window(&method.months)),
            format!(
                "Performance standard, verified at the follow-up visit next season: at least {:.0}% of treated stems dead or leafless (the effectiveness the plan assumed for this method; source: {}).",
                method.effectiveness * 100.0,
                if method.source.is_empty() {
                    "the treatment catalogue"
                } else {
                    &method.source
                }
            ),
        ];
        match item.site_class {
            "restricted site" => lines.push("Restricted site: herbicide use only under the site's extra conditions (e.g. near a school, water supply or sensitive habitat); confirm them in writing with the site manager before work.".into()),
            "permission" => {
                lines.push("Landowner permission: obtain written permission from the owner or manager listed in the plan before entering; carry it on site.".into());
                for p in folder
                    .planned
                    .iter()
                    .filter(|p| item.patch_ids.contains(&p.patch_id) && !p.contact.is_empty())
                {
                    lines.push(format!(
                        "Patch {}{}: call {} before entry.",
                        p.patch_id,
                        if p.parcel.is_empty() {
                            String::new()
                        } else {
                            format!(" (parcel {})", p.parcel)
                        },
                        p.contact
                    ));
                }
            }
            _ => {}
        }
        let codes: std::collections::BTreeSet<&str> = folder
            .planned
            .iter()
            .filter(|p| item.patch_ids.contains(&p.patch_id))
            .flat_map(|p| p.cautions.split(';'))
            .filter(|c| !c.is_empty())
            .collect();
        for code in codes {
            if let Some(c) = cautions::lookup(code) {
                lines.push(format!("Caution [{}]: {}", c.code, c.text));
            }
        }
        sections.push((
            format!(
                "Line item {}: {} ({})",
                item.number, item.method, item.site_class
            ),
            lines,
        ));
    }
    sections.push((
        "Access, permission and quarantine duties".into(),
        vec![
            "Enter only the patches listed, by the access the plan gives; where a patch needs landowner permission, work starts only when it is in hand.".into(),
            "In a spotted lanternfly quarantine area, logs, stumps, brush and firewood are regulated articles: check the rules (and any permit or compliance agreement) before moving wood, brush or equipment out, and inspect vehicles before leaving a site.".into(),
            "Follow the product label, licensing rules, water buffers and drift precautions on every site; local codes and licensed practice override this scope.".into(),
        ],
    ));
    sections.push((
        "What the contractor reports back".into(),
        vec![
            "completion_template.csv filled in, one row per planned patch: treated_stems (blank if the patch was not done), date (YYYY-MM-DD), applicator_licence and product_active_ingredient for every herbicide treatment, and notes. A method other than the planned one is accepted only where it is eligible at the site (herbicide rule, water, restricted site), with the `method` changed and a `reason` given; stems above the plan's estimate by more than 25 % are refused until the count is confirmed. `hostcut record` checks it against the plan.".into(),
        ],
    ));
    let title = "Scope of work: tree-of-heaven treatment";
    let mut md = format!("# {title}\n\n");
    let mut html = format!(
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>{}</title><style>body{{font-family:Helvetica,Arial,sans-serif;max-width:60em;margin:2em auto;padding:0 1em;line-height:1.4}}</style></head><body>\n<h1>{}</h1>\n",
        escape(title),
        escape(title)
    );
    for (heading, lines) in &sections {
        let _ = writeln!(md, "## {heading}\n");
        let _ = writeln!(html, "<h2>{}</h2><ul>", escape(heading));
        for l in lines {
            let _ = writeln!(md, "- {l}");
            let _ = writeln!(html, "<li>{}</li>", escape(l));
        }
        md.push('\n');
        html.push_str("</ul>\n");
    }
    html.push_str("</body></html>\n");
    (md, html)
}

/// `hostcut record`'s files: next season's inventory (inventory.next.csv, read by `plan
/// --inventory`) and record_report.md, planned against done.
pub fn write_season(staging: &Staging, folder: &PlanFolder, season: &Season) -> Result<()> {
    let rows: Vec<Vec<String>> = season
        .next
        .iter()
        .map(|n| {
            let p = n.patch;
            vec![
                p.patch_id.clone(),
                format!("{}", p.x),
                format!("{}", p.y),
                format!("{:.1}", n.stems),
                p.access.clone(),
                p.herbicide.clone(),
                format!("{}", p.cost_factor),
                format!("{}", p.pressure),
                p.area_ha.map(|a| format!("{a}")).unwrap_or_default(),
                p.suitability.map(|s| format!("{s}")).unwrap_or_default(),
                n.follow_up_due.clone(),
                p.parcel.clone(),
                p.contact.clone(),
                p.corridors.clone(),
                n.outline.clone(),
            ]
        })
        .collect();
    let header = [
        "id",
        "x",
        "y",
        "stems",
        "access",
        "herbicide",
        "cost_factor",
        "pressure",
        "area_ha",
        "suitability",
        "follow_up_due",
        "parcel",
        "contact",
        "corridors",
        "outline",
    ];
    staging.write("inventory.next.csv", output::csv_bytes(&header, &rows)?)?;
    staging.write("record_report.md", record_report(folder, season))
}

/// record_report.md: planned against done, and how to plan next season from it.
fn record_report(folder: &PlanFolder, season: &Season) -> String {
    let currency = &folder.catalogue.currency;
    let mut report = String::from("# Planned and done\n\n| | planned | done |\n|---|---|---|\n");
    let _ = writeln!(
        report,
        "| patches | {} | {} |",
        season.planned_patches, season.done_patches
    );
    let _ = writeln!(
        report,
        "| stems treated | {} | {} |",
        thousands(season.planned_stems),
        thousands(season.treated_stems)
    );
    let _ = writeln!(
        report,
        "| cost (estimate; done is pro rata by stems) | {} | {} |",
        money(currency, season.planned_cents),
        money(currency, season.done_cents)
    );
    let _ = writeln!(
        report,
        "\nAbout {} stems removed at the effectiveness the plan assumed; {} patches were not treated. Follow-up visits are due at the start of each method's window next season (inventory.next.csv, `follow_up_due`).",
        thousands(season.removed_stems),
        season.planned_patches - season.done_patches
    );
    let _ = writeln!(
        report,
        "\nPlan next season from it: `hostcut plan --inventory inventory.next.csv --crs {} --budget AMOUNT --out NEXT` (the `pressure` column keeps this season's corridor and detection pressure; delete it to recompute from layers).",
        if folder.crs.is_empty() {
            "EPSG:NNNN".to_string()
        } else if folder.crs.contains(' ') {
            format!("'{}'", folder.crs)
        } else {
            folder.crs.clone()
        }
    );
    if !season.substituted.is_empty() {
        report.push_str("\n## Methods other than planned\n\n| patch | planned | used | reason |\n|---|---|---|---|\n");
        for d in &season.substituted {
            let _ = writeln!(
                report,
                "| {} | {} | {} | {} |",
                d.patch_id,
                d.substituted_for.as_deref().unwrap_or_default(),
                d.method,
                d.reason.replace('|', "/")
            );
        }
    }
    if !season.warnings.is_empty() {
        report.push_str("\n## Warnings\n\n");
        for w in season.warnings {
            let _ = writeln!(report, "- {w}");
        }
    }
    report
}

/// `hostcut record`'s stdout.
pub fn season_text(season: &Season, out: &Path) -> String {
    format!(
        "hostcut record: {} of {} planned patches done, {} stems treated{}\noutputs in {}: inventory.next.csv, record_report.md\n",
        season.done_patches,
        season.planned_patches,
        thousands(season.treated_stems),
        if season.warnings.is_empty() {
            String::new()
        } else {
            format!(
                " ({} warning(s), in record_report.md)",
                season.warnings.len()
            )
        },
        out.display()
    )
}
