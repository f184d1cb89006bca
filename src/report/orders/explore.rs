//! The overview map made explorable on screen: drag to pan, wheel or buttons to zoom, click a
//! treated patch for its details. One inline script and an inline JSON block; nothing is fetched.
//! In print the map is reset to its whole extent and the controls and details are hidden, so the
//! printed page is the static map.

use std::collections::BTreeMap;
use std::fmt::Write as _;

use crate::report::chart::escape;
use crate::report::format::money;

use super::Orders;
use super::svg::sheets_by_patch;

/// The script: pan and zoom by the SVG viewBox, details on click, reset before printing.
/// It marks the map `data-patches-shown="N"` with the treated patches it made clickable.
const SCRIPT: &str = r#"(function () {
  var svg = document.querySelector('#overview svg');
  var data = document.getElementById('patch-data');
  var box = document.getElementById('patch-details');
  if (!svg || !data || !box) return;
  var P = JSON.parse(data.textContent);
  var vb = svg.viewBox.baseVal;
  var whole = [vb.x, vb.y, vb.width, vb.height];
  function reset() { vb.x = whole[0]; vb.y = whole[1]; vb.width = whole[2]; vb.height = whole[3]; }
  function zoom(f, cx, cy) {
    var nw = Math.min(whole[2] * 1.5, Math.max(whole[2] / 40, vb.width * f));
    var k = nw / vb.width;
    vb.x = cx - (cx - vb.x) * k; vb.y = cy - (cy - vb.y) * k;
    vb.width = nw; vb.height = vb.height * k;
  }
  function toMap(e) {
    var r = svg.getBoundingClientRect();
    return [vb.x + (e.clientX - r.left) / r.width * vb.width, vb.y + (e.clientY - r.top) / r.height * vb.height];
  }
  var shown = {};
  svg.querySelectorAll('.patch[data-patch]').forEach(function (el) {
    var id = el.getAttribute('data-patch');
    if (!(id in P)) return;
    shown[id] = true;
    el.style.cursor = 'pointer';
    el.addEventListener('click', function () { box.textContent = P[id]; });
  });
  svg.setAttribute('data-patches-shown', String(Object.keys(shown).length));
  svg.addEventListener('wheel', function (e) {
    e.preventDefault();
    var m = toMap(e);
    zoom(e.deltaY < 0 ? 1 / 1.25 : 1.25, m[0], m[1]);
  }, { passive: false });
  var drag = null;
  svg.addEventListener('pointerdown', function (e) { drag = [e.clientX, e.clientY]; });
  window.addEventListener('pointerup', function () { drag = null; });
  svg.addEventListener('pointermove', function (e) {
    if (!drag) return;
    var r = svg.getBoundingClientRect();
    vb.x -= (e.clientX - drag[0]) / r.width * vb.width;
    vb.y -= (e.clientY - drag[1]) / r.height * vb.height;
    drag = [e.clientX, e.clientY];
  });
  document.querySelectorAll('[data-zoom]').forEach(function (b) {
    b.addEventListener('click', function () {
      var z = b.getAttribute('data-zoom');
      if (z === 'reset') { reset(); return; }
      zoom(z === 'in' ? 1 / 1.5 : 1.5, vb.x + vb.width / 2, vb.y + vb.height / 2);
    });
  });
  window.addEventListener('beforeprint', reset);
  document.getElementById('explore').hidden = false;
})();"#;

/// The controls, the details box, each treated patch's details (JSON) and the script.
pub(super) fn explorer(ctx: &Orders) -> String {
    let currency = ctx.folder.catalogue.currency.as_str();
    let sheets = sheets_by_patch(ctx);
    let details: BTreeMap<&str, String> = ctx
        .folder
        .planned
        .iter()
        .map(|p| {
            let on = match sheets.get(p.patch_id.as_str()) {
                Some(v) if !v.is_empty() => v
                    .iter()
                    .map(|d| format!("d{d}"))
                    .collect::<Vec<_>>()
                    .join(" "),
                _ => "not scheduled".to_string(),
            };
            let mut text = format!(
                "{}: priority {}, {}, {:.0} stems, {}, crew-day sheets {on}",
                p.patch_id,
                p.priority,
                p.method.replace('_', " "),
                p.stems,
                money(currency, p.cost)
            );
            if !p.cautions.is_empty() {
                let _ = write!(text, "; cautions {}", p.cautions.replace(';', " "));
            }
            if !p.site_notes.is_empty() {
                let _ = write!(text, "; site: {}", p.site_notes);
            }
            (p.patch_id.as_str(), text)
        })
        .collect();
    // Inside <script>, `</` must not appear: JSON allows `<\/`.
    let json = serde_json::to_string(&details)
        .unwrap_or_else(|_| "{}".into())
        .replace("</", "<\\/");
    let mut h = String::new();
    let _ = write!(
        h,
        "<div id=\"explore\" class=\"noprint small\" hidden><button type=\"button\" data-zoom=\"in\">zoom in</button> <button type=\"button\" data-zoom=\"out\">zoom out</button> <button type=\"button\" data-zoom=\"reset\">whole map</button> Drag to pan, wheel to zoom, click a treated patch for its details.<div id=\"patch-details\" class=\"details\">{}</div></div>",
        escape("No patch chosen yet.")
    );
    let _ = write!(
        h,
        "<script type=\"application/json\" id=\"patch-data\">{json}</script><script>{SCRIPT}</script>"
    );
    h
}
