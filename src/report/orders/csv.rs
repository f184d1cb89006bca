//! orders.csv: one row per stop, in crew-day and visiting order, with the site's rules and the
//! instructions in words; `travel_model` on every row says how travel was found (`road network`
//! or `straight line`). Treated patches no road reaches come last, with no crew, day or stop and
//! instructions that begin `NOT SCHEDULED`.

use crate::core::error::Result;
use crate::field::orders;

use super::{Orders, f2, stop_lonlats};

pub(super) fn orders_csv(ctx: &Orders) -> Result<Vec<u8>> {
    let lonlats = stop_lonlats(ctx)?;
    let mut w = crate::core::csv_cells::Writer::new();
    // With size classes, a `prescription` column after `method` says which stems get which
    // method at the stop.
    let classes = ctx
        .folder
        .planned
        .iter()
        .any(|p| !p.prescription.is_empty());
    let header = [
        "crew",
        "day",
        "date",
        "weekday",
        "stop",
        "patch_id",
        "part",
        "method",
        "stems",
        "est_hours",
        "travel_hours",
        "travel_km",
        "return_hours",
        "return_km",
        "x",
        "y",
        "lon",
        "lat",
        "parcel",
        "contact",
        "access",
        "herbicide",
        "cautions",
        "site_notes",
        "fell_after",
        "follow_up",
        "instructions",
        "travel_model",
    ];
    let header: Vec<&str> = header
        .iter()
        .flat_map(|&h| {
            if h == "method" && classes {
                vec![h, "prescription"]
            } else {
                vec![h]
            }
        })
        .collect();
    w.row(header)?;
    for (d, ll) in ctx.schedule.days.iter().zip(&lonlats) {
        let n = d.stops.len();
        for (k, (s, (lon, lat))) in d.stops.iter().zip(ll).enumerate() {
            let p = &ctx.folder.planned[s.row];
            let ins = orders::instructions(ctx.folder, s, d.date);
            let mut cells = vec![
                d.crew.map(|c| c.to_string()).unwrap_or_default(),
                d.day.to_string(),
                d.date.map(|x| x.to_string()).unwrap_or_default(),
                d.date
                    .map(|x| x.weekday_name().to_string())
                    .unwrap_or_default(),
                (k + 1).to_string(),
                s.patch_id.clone(),
                format!("{}/{}", s.part, s.parts),
                s.method.clone(),
            ];
            if classes {
                cells.push(s.prescription.clone());
            }
            cells.extend([
                format!("{:.0}", s.stems.round() + 0.0),
                f2(s.work_hours),
                f2(s.travel_hours),
                f2(s.travel_km),
                if k + 1 == n {
                    f2(d.return_hours)
                } else {
                    f2(0.0)
                },
                if k + 1 == n { f2(d.return_km) } else { f2(0.0) },
                f2(s.x),
                f2(s.y),
                format!("{lon:.7}"),
                format!("{lat:.7}"),
                p.parcel.clone(),
                p.contact.clone(),
                p.access.clone(),
                p.herbicide.clone(),
                p.cautions.clone(),
                p.site_notes.clone(),
                ins.fell_after.map(|x| x.to_string()).unwrap_or_default(),
                ins.follow_up.unwrap_or_default(),
                ins.text,
                ctx.schedule.travel_model.to_string(),
            ]);
            w.row(cells)?;
        }
    }
    let to = crate::input::gis::ToLonLat::new(&ctx.crs)?;
    for u in &ctx.schedule.unreached {
        let p = &ctx.folder.planned[u.row];
        let (lon, lat) = to.points(&[(p.x, p.y)])?[0];
        let mut cells = vec![
            String::new(),
            String::new(),
            String::new(),
            String::new(),
            String::new(),
            p.patch_id.clone(),
            "1/1".to_string(),
            p.method.clone(),
        ];
        if classes {
            cells.push(p.prescription_text(&ctx.folder.catalogue, 1.0));
        }
        cells.extend([
            // Whole stems, as on every scheduled row.
            format!("{:.0}", p.stems.round() + 0.0),
            f2(p.crew_hours),
            String::new(),
            String::new(),
            String::new(),
            String::new(),
            f2(p.x),
            f2(p.y),
            format!("{lon:.7}"),
            format!("{lat:.7}"),
            p.parcel.clone(),
            p.contact.clone(),
            p.access.clone(),
            p.herbicide.clone(),
            p.cautions.clone(),
            p.site_notes.clone(),
            String::new(),
            String::new(),
            format!(
                "NOT SCHEDULED: no road from the depot reaches this patch ({}). Add the missing road to the road layer or plan its access separately. Site cautions still apply: {}",
                u.reason,
                if p.cautions.is_empty() { "none recorded" } else { p.cautions.as_str() }
            ),
            ctx.schedule.travel_model.to_string(),
        ]);
        w.row(cells)?;
    }
    w.into_bytes()
}
