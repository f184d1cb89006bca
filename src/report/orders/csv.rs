//! orders.csv: one row per stop, in crew-day and visiting order, with the site's rules and the
//! instructions in words.

use crate::core::error::Result;
use crate::field::orders;

use super::{Orders, f2, stop_lonlats};

pub(super) fn orders_csv(ctx: &Orders) -> Result<Vec<u8>> {
    let lonlats = stop_lonlats(ctx)?;
    let mut w = crate::core::csv_cells::Writer::new();
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
        "return_hours",
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
    ];
    w.row(header)?;
    for (d, ll) in ctx.schedule.days.iter().zip(&lonlats) {
        let n = d.stops.len();
        for (k, (s, (lon, lat))) in d.stops.iter().zip(ll).enumerate() {
            let p = &ctx.folder.planned[s.row];
            let ins = orders::instructions(ctx.folder, s, d.date);
            w.row([
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
                format!("{:.1}", s.stems),
                f2(s.work_hours),
                f2(s.travel_hours),
                if k + 1 == n {
                    f2(d.return_hours)
                } else {
                    f2(0.0)
                },
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
            ])?;
        }
    }
    w.into_bytes()
}
