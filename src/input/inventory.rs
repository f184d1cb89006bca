//! The stand inventory CSV: `id,x,y,stems` plus optional site columns, read and checked row by
//! row into [`Stand`]s. Takes a path or bytes; gives stands in the file's order.
//!
//! # Units
//! x, y in the inventory's CRS as given (`--crs`; converted into the work CRS by the caller); stems as counts; `area_ha` in hectares.

use std::collections::HashMap;
use std::path::Path;

use crate::core::error::{Error, Result};
use crate::core::site::{Access, Herbicide};

/// One row of a stand inventory, already checked.
#[derive(Debug, Clone)]
pub struct Stand {
    pub id: String,
    pub x: f64,
    pub y: f64,
    pub stems: f64,
    pub area_ha: Option<f64>,
    pub access: Option<Access>,
    pub herbicide: Option<Herbicide>,
    pub cost_factor: Option<f64>,
    pub pressure: Option<f64>,
    pub suitability: Option<f64>,
    /// Parcel id, carried to plan.csv, orders and the contract.
    pub parcel: Option<String>,
    /// Who to call before entry (landowner or manager), carried to orders and the contract.
    pub contact: Option<String>,
    /// The stand's outline as WKT in the inventory's CRS (`outline` column, as `record` writes
    /// it), with its line for messages.
    pub outline_wkt: Option<(String, u64)>,
    /// The outline in the work CRS, filled in by the caller once the CRS is settled.
    pub outline: Option<geo::MultiPolygon<f64>>,
    /// Stems by size class, in the order of the classes the reader was given; `None` when the
    /// row gives only `stems` (the default mix applies).
    pub by_class: Option<Vec<f64>>,
}

/// Read and check a stand inventory CSV: `id,x,y,stems` plus optional `access`, `herbicide`,
/// `cost_factor`, `pressure`, `area_ha`, `suitability`, `parcel`, `contact`, `outline` (WKT polygon in the inventory's CRS). Column names are matched case-insensitively.
/// `classes` are the catalogue's size-class ids: columns of those names count stems by class
/// (`stems` may then be left out, or must equal their sum).
pub fn read_inventory(path: &Path, classes: &[String]) -> Result<Vec<Stand>> {
    let bytes = std::fs::read(path).map_err(|e| Error::io("read", path, e))?;
    parse_inventory_with(&bytes, &path.display().to_string(), classes)
}

/// Parse and check inventory CSV bytes without size classes; `origin` names the file in
/// messages.
pub fn parse_inventory(bytes: &[u8], origin: &str) -> Result<Vec<Stand>> {
    parse_inventory_with(bytes, origin, &[])
}

/// Parse and check inventory CSV bytes, with the catalogue's size-class ids `classes`.
pub fn parse_inventory_with(bytes: &[u8], origin: &str, classes: &[String]) -> Result<Vec<Stand>> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let mut reader = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .from_reader(bytes);
    let file = origin;
    let headers: Vec<String> = reader
        .headers()
        .map_err(|e| {
            Error::input(format!(
                "inventory `{file}`: cannot read the header line ({e})"
            ))
        })?
        .iter()
        .map(|h| h.to_ascii_lowercase())
        .collect();
    let column = |name: &str| headers.iter().position(|h| h == name);
    // Size-class columns: (class index, column).
    let class_columns: Vec<(usize, usize)> = classes
        .iter()
        .enumerate()
        .filter_map(|(k, id)| column(&id.to_ascii_lowercase()).map(|c| (k, c)))
        .collect();
    // A column one or two letters off a size class or a known column (`saplngs`) is a typo,
    // not an extra column: read as unknown, its stems would vanish without a word.
    const KNOWN: [&str; 13] = [
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
        "parcel",
        "contact",
        "outline",
    ];
    let wanted: Vec<String> = KNOWN
        .iter()
        .map(|k| k.to_string())
        .chain(classes.iter().map(|c| c.to_ascii_lowercase()))
        .collect();
    for h in &headers {
        if h.len() < 4 || wanted.contains(h) {
            continue;
        }
        if let Some(near) = wanted
            .iter()
            .find(|w| w.len() >= 4 && edit_distance(h, w) <= 2)
        {
            return Err(Error::input_with_hint(
                format!(
                    "inventory `{file}`: column `{h}` is not one hostcut reads; did you mean `{near}`?"
                ),
                format!(
                    "rename the column `{near}` (size classes: {}), or give it a name further from it if it is a column of your own",
                    classes.join(", ")
                ),
            ));
        }
    }
    let mut missing = Vec::new();
    for name in ["id", "x", "y", "stems"] {
        if name == "stems" && !class_columns.is_empty() {
            continue;
        }
        if column(name).is_none() {
            missing.push(name);
        }
    }
    if !missing.is_empty() {
        let hint = if headers.len() == 1 && headers[0].contains(';') {
            "the file looks semicolon-separated; save it as comma-separated CSV"
        } else {
            "the first line must name the columns: id,x,y,stems (optional: access,herbicide,cost_factor,pressure,area_ha,suitability,parcel,contact, and stems by size class)"
        };
        return Err(Error::input_with_hint(
            format!(
                "inventory `{file}`: missing required column(s) {} (found: {})",
                missing.join(", "),
                headers.join(", ")
            ),
            hint,
        ));
    }
    let (ci, cx, cy, cs) = (
        column("id").unwrap_or(0),
        column("x").unwrap_or(0),
        column("y").unwrap_or(0),
        column("stems"),
    );
    let csuit = column("suitability");
    let (cparcel, ccontact, coutline) = (column("parcel"), column("contact"), column("outline"));
    let (ca, ch, cc, cp, car) = (
        column("access"),
        column("herbicide"),
        column("cost_factor"),
        column("pressure"),
        column("area_ha"),
    );
    let mut stands = Vec::new();
    let mut seen: HashMap<String, u64> = HashMap::new();
    for record in reader.records() {
        let record = record.map_err(|e| {
            let line = e.position().map(|p| format!(", line {}", p.line())).unwrap_or_default();
            if matches!(e.kind(), csv::ErrorKind::Utf8 { .. }) {
                return Error::input_with_hint(
                    format!("inventory `{file}`{line}: text that is not UTF-8 (an export in a legacy encoding such as Windows-1252)"),
                    "save the file as UTF-8 (in a spreadsheet: Save As, CSV UTF-8) and run again",
                );
            }
            Error::input_with_hint(format!("inventory `{file}`{line}: malformed CSV ({e})"), "every row needs the same number of fields as the header; quote fields that contain commas")
        })?;
        let line = record.position().map(|p| p.line()).unwrap_or(0);
        let get = |c: usize| crate::core::csv_cells::restore(record.get(c).unwrap_or(""));
        let number = |c: usize, name: &str, allow_negative: bool| -> Result<f64> {
            let text = get(c);
            let value: f64 = text.parse().map_err(|_| {
                Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}, column `{name}`: `{text}` is not a number"
                    ),
                    "use plain numbers with a dot for decimals and no thousands separators",
                )
            })?;
            if !value.is_finite() || (!allow_negative && value < 0.0) {
                return Err(Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}, column `{name}`: `{text}` must be a finite number{}",
                        if allow_negative { "" } else { " 0 or more" }
                    ),
                    "fix the value in the inventory",
                ));
            }
            Ok(value)
        };
        let id = get(ci).to_string();
        if id.is_empty() {
            return Err(Error::input(format!(
                "inventory `{file}`, line {line}: empty id"
            )));
        }
        if let Some(c) = id.chars().find(|c| c.is_control() && *c != '\t') {
            return Err(Error::input_with_hint(
                format!(
                    "inventory `{file}`, line {line}, column `id`: the id holds a control character (U+{:04X})",
                    c as u32
                ),
                "ids are printed on work orders and maps: use letters, digits and punctuation",
            ));
        }
        if let Some(first) = seen.insert(id.clone(), line) {
            return Err(Error::input_with_hint(
                format!(
                    "inventory `{file}`, line {line}: duplicate id `{id}` (first on line {first})"
                ),
                "every stand needs its own id",
            ));
        }
        let optional_text = |c: Option<usize>| c.map(get).filter(|t| !t.is_empty());
        let access = match optional_text(ca) {
            None => None,
            Some(t) => Some(Access::parse(t).ok_or_else(|| {
                Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}, column `access`: unknown value `{t}`"
                    ),
                    "use open, permission or denied",
                )
            })?),
        };
        let herbicide = match optional_text(ch) {
            None => None,
            Some(t) => Some(Herbicide::parse(t).ok_or_else(|| {
                Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}, column `herbicide`: unknown value `{t}`"
                    ),
                    "use allowed, restricted or prohibited",
                )
            })?),
        };
        let cost_factor = match cc.filter(|&c| !get(c).is_empty()) {
            None => None,
            Some(c) => {
                let v = number(c, "cost_factor", false)?;
                if v <= 0.0 {
                    return Err(Error::input(format!(
                        "inventory `{file}`, line {line}, column `cost_factor`: must be above 0, got {v}"
                    )));
                }
                Some(v)
            }
        };
        let pressure = match cp.filter(|&c| !get(c).is_empty()) {
            None => None,
            Some(c) => Some(number(c, "pressure", false)?),
        };
        let area_ha = match car.filter(|&c| !get(c).is_empty()) {
            None => None,
            Some(c) => Some(number(c, "area_ha", false)?),
        };
        let suitability = match csuit.filter(|&c| !get(c).is_empty()) {
            None => None,
            Some(c) => {
                let v = number(c, "suitability", false)?;
                if v > 1.0 {
                    return Err(Error::input_with_hint(
                        format!(
                            "inventory `{file}`, line {line}, column `suitability`: {v} is above 1"
                        ),
                        "suitability runs from 0 (the insect cannot establish) to 1 (fully suitable)",
                    ));
                }
                Some(v)
            }
        };
        let given_stems = match cs.filter(|&c| !get(c).is_empty() || class_columns.is_empty()) {
            None => None,
            Some(c) => Some(number(c, "stems", false)?),
        };
        let by_class = if class_columns.iter().any(|&(_, c)| !get(c).is_empty()) {
            let mut counts = vec![0.0; classes.len()];
            for &(k, c) in &class_columns {
                if !get(c).is_empty() {
                    counts[k] = number(c, &classes[k], false)?;
                }
            }
            Some(counts)
        } else {
            None
        };
        let stems = match (&by_class, given_stems) {
            (Some(counts), Some(total)) => {
                let sum: f64 = counts.iter().sum();
                // Counts are whole stems; half a stem either way is rounding in the source.
                if (sum - total).abs() > 0.5 {
                    return Err(Error::input_with_hint(
                        format!(
                            "inventory `{file}`, line {line}: the stems by size class ({}) sum to {sum}, but `stems` is {total}",
                            class_columns
                                .iter()
                                .map(|&(k, _)| format!("{} {}", classes[k], counts[k]))
                                .collect::<Vec<_>>()
                                .join(", ")
                        ),
                        "fix the counts, or leave `stems` empty so the classes' sum is used",
                    ));
                }
                total
            }
            (Some(counts), None) => counts.iter().sum(),
            (None, Some(total)) => total,
            (None, None) => {
                return Err(Error::input_with_hint(
                    format!(
                        "inventory `{file}`, line {line}: no stems (neither `stems` nor a size class column holds a count)"
                    ),
                    format!(
                        "give `stems` or the stems by class ({})",
                        classes.join(", ")
                    ),
                ));
            }
        };
        stands.push(Stand {
            x: number(cx, "x", true)?,
            y: number(cy, "y", true)?,
            stems,
            by_class,
            id,
            area_ha,
            access,
            herbicide,
            cost_factor,
            pressure,
            suitability,
            parcel: optional_text(cparcel).map(str::to_string),
            contact: optional_text(ccontact).map(str::to_string),
            outline_wkt: optional_text(coutline).map(|t| (t.to_string(), line)),
            outline: None,
        });
    }
    if stands.is_empty() {
        return Err(Error::input_with_hint(
            format!("inventory `{file}` has a header but no stands"),
            "add one row per stand below the header",
        ));
    }
    Ok(stands)
}

/// Levenshtein distance between two short strings (column names).
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diagonal = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let above = row[j + 1];
            row[j + 1] = (diagonal + usize::from(ca != cb))
                .min(above + 1)
                .min(row[j] + 1);
            diagonal = above;
        }
    }
    row[b.len()]
}
