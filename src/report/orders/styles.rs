//! Layer styles stored inside orders.gpkg, so a desktop GIS opens the layers styled: a
//! `layer_styles` table (the columns desktop GIS tools read from a GeoPackage: `f_table_catalog`,
//! `f_table_schema`, `f_table_name`, `f_geometry_column`, `styleName`, `styleQML`, `styleSLD`,
//! `useAsDefault`, `description`, `owner`, `ui`; common practice, from memory) with one row per
//! layer whose `styleSLD` holds an OGC Styled Layer Descriptor 1.1 / Symbology Encoding 1.1
//! document (an open OGC standard). `styleQML` is left empty: no tool-specific format is written.
//!
//! The colours are the report's: patches by method (the maps' palette), untreated grey, not
//! eligible white, a treated patch no road reaches outlined red; stops black with their stop
//! number; routes by crew (the label colours of the maps).

use crate::input::gis::Property;

use super::Orders;
use super::svg::crew_colour;

/// Escape text for XML.
fn xml(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

fn document(layer: &str, title: &str, rules: &str) -> String {
    format!(
        r#"<?xml version="1.0" encoding="UTF-8"?>
<StyledLayerDescriptor version="1.1.0" xmlns="http://www.opengis.net/sld" xmlns:se="http://www.opengis.net/se" xmlns:ogc="http://www.opengis.net/ogc" xmlns:xlink="http://www.w3.org/1999/xlink" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance" xsi:schemaLocation="http://www.opengis.net/sld http://schemas.opengis.net/sld/1.1.0/StyledLayerDescriptor.xsd">
 <NamedLayer>
  <se:Name>{layer}</se:Name>
  <UserStyle>
   <se:Name>{layer}</se:Name>
   <se:Description><se:Title>{title}</se:Title></se:Description>
   <se:FeatureTypeStyle>
{rules}   </se:FeatureTypeStyle>
  </UserStyle>
 </NamedLayer>
</StyledLayerDescriptor>
"#
    )
}

fn equals(field: &str, value: &str) -> String {
    format!(
        "<ogc:Filter><ogc:PropertyIsEqualTo><ogc:PropertyName>{field}</ogc:PropertyName><ogc:Literal>{}</ogc:Literal></ogc:PropertyIsEqualTo></ogc:Filter>",
        xml(value)
    )
}

fn fill_stroke(fill: &str, stroke: &str, width: f64) -> String {
    format!(
        r#"<se:Fill><se:SvgParameter name="fill">{fill}</se:SvgParameter></se:Fill><se:Stroke><se:SvgParameter name="stroke">{stroke}</se:SvgParameter><se:SvgParameter name="stroke-width">{width}</se:SvgParameter></se:Stroke>"#
    )
}

/// A polygon symbolizer, or a circle marker for point patches.
fn symbolizer(polygons: bool, fill: &str, stroke: &str, width: f64) -> String {
    if polygons {
        format!(
            "<se:PolygonSymbolizer>{}</se:PolygonSymbolizer>",
            fill_stroke(fill, stroke, width)
        )
    } else {
        format!(
            "<se:PointSymbolizer><se:Graphic><se:Mark><se:WellKnownName>circle</se:WellKnownName>{}</se:Mark><se:Size>10</se:Size></se:Graphic></se:PointSymbolizer>",
            fill_stroke(fill, stroke, width)
        )
    }
}

fn rule(name: &str, filter: &str, symbolizers: &str) -> String {
    format!(
        "    <se:Rule><se:Name>{n}</se:Name><se:Description><se:Title>{n}</se:Title></se:Description>{filter}{symbolizers}</se:Rule>\n",
        n = xml(name)
    )
}

fn label(field: &str, colour: &str) -> String {
    format!(
        r#"<se:TextSymbolizer><se:Label><ogc:PropertyName>{field}</ogc:PropertyName></se:Label><se:Font><se:SvgParameter name="font-family">Sans Serif</se:SvgParameter><se:SvgParameter name="font-size">11</se:SvgParameter><se:SvgParameter name="font-weight">bold</se:SvgParameter></se:Font><se:Halo><se:Radius>1.5</se:Radius><se:Fill><se:SvgParameter name="fill">#ffffff</se:SvgParameter></se:Fill></se:Halo><se:Fill><se:SvgParameter name="fill">{colour}</se:SvgParameter></se:Fill></se:TextSymbolizer>"#
    )
}

/// One SLD document per layer of orders.gpkg: (layer, title, SLD).
pub(super) fn layer_styles(
    ctx: &Orders,
    polygons: bool,
    statuses: &[&str],
) -> Vec<(&'static str, String, String)> {
    // Patches: treated by method, then the other statuses.
    let mut rules = String::new();
    let mut methods: Vec<(&String, &&str)> = ctx.colours.iter().collect();
    methods.sort();
    for (method, colour) in methods {
        rules.push_str(&rule(
            &format!("treat: {method}"),
            &format!(
                "<ogc:Filter><ogc:And><ogc:PropertyIsEqualTo><ogc:PropertyName>status</ogc:PropertyName><ogc:Literal>treat</ogc:Literal></ogc:PropertyIsEqualTo><ogc:PropertyIsEqualTo><ogc:PropertyName>method</ogc:PropertyName><ogc:Literal>{}</ogc:Literal></ogc:PropertyIsEqualTo></ogc:And></ogc:Filter>",
                xml(method)
            ),
            &format!("{}{}", symbolizer(polygons, colour, "#333333", 0.6), label("priority", "#111111")),
        ));
    }
    for status in statuses {
        let (fill, stroke, width) = match *status {
            "untreated" => (super::UNTREATED, "#666666", 0.4),
            "not eligible" => (super::NOT_ELIGIBLE, "#666666", 0.4),
            _ => ("#ffffff", "#d00000", 1.6),
        };
        rules.push_str(&rule(
            status,
            &equals("status", status),
            &symbolizer(polygons, fill, stroke, width),
        ));
    }
    let patches = document("patches", "Patches by plan status and method", &rules);

    let stops = document(
        "stops",
        "Stops, numbered in the day's order",
        &rule(
            "stop",
            "",
            &format!(
                "<se:PointSymbolizer><se:Graphic><se:Mark><se:WellKnownName>circle</se:WellKnownName>{}</se:Mark><se:Size>7</se:Size></se:Graphic></se:PointSymbolizer>{}",
                fill_stroke("#111111", "#ffffff", 1.0),
                label("stop", "#111111")
            ),
        ),
    );

    let mut crews: Vec<usize> = ctx.schedule.days.iter().filter_map(|d| d.crew).collect();
    crews.sort_unstable();
    crews.dedup();
    let mut rules = String::new();
    let line = |colour: &str| {
        format!(
            r#"<se:LineSymbolizer><se:Stroke><se:SvgParameter name="stroke">{colour}</se:SvgParameter><se:SvgParameter name="stroke-width">2</se:SvgParameter><se:SvgParameter name="stroke-linejoin">round</se:SvgParameter></se:Stroke></se:LineSymbolizer>"#
        )
    };
    for crew in crews {
        rules.push_str(&rule(
            &format!("crew {crew}"),
            &equals("crew", &crew.to_string()),
            &line(crew_colour(Some(crew))),
        ));
    }
    rules.push_str(&rule(
        "not scheduled",
        &equals("crew", "0"),
        &line(crew_colour(None)),
    ));
    let routes = document("routes", "Day routes by crew", &rules);
    let parts = document(
        "parts",
        "Parts of split patches, one strip per crew-day",
        &rule(
            "part",
            "",
            &format!(
                "{}{}",
                symbolizer(true, "#9ecae1", "#000000", 1.2),
                label("part_of", "#111111")
            ),
        ),
    );
    vec![
        (
            "parts",
            "Parts of split patches, one strip per crew-day".into(),
            parts,
        ),
        (
            "patches",
            "Patches by plan status and method".into(),
            patches,
        ),
        ("stops", "Stops, numbered in the day's order".into(), stops),
        ("routes", "Day routes by crew".into(), routes),
    ]
}

/// The `layer_styles` table's fields and one row per layer, every row the default style of its
/// layer (geometry column `geom`, GDAL's GeoPackage default).
pub(super) fn table(
    styles: Vec<(&'static str, String, String)>,
) -> (Vec<(&'static str, Property)>, Vec<Vec<Property>>) {
    let t = |s: &str| Property::Text(s.to_string());
    let fields = vec![
        ("f_table_catalog", t("")),
        ("f_table_schema", t("")),
        ("f_table_name", t("")),
        ("f_geometry_column", t("")),
        ("styleName", t("")),
        ("styleQML", t("")),
        ("styleSLD", t("")),
        ("useAsDefault", Property::Integer(0)),
        ("description", t("")),
        ("owner", t("")),
        ("ui", t("")),
    ];
    let rows = styles
        .into_iter()
        .map(|(layer, title, sld)| {
            vec![
                t(""),
                t(""),
                t(layer),
                t("geom"),
                t(&format!("hostcut {layer}")),
                t(""),
                Property::Text(sld),
                Property::Integer(1),
                t(&format!("{title} (OGC SLD 1.1, written by hostcut orders)")),
                t("hostcut"),
                t(""),
            ]
        })
        .collect();
    (fields, rows)
}
