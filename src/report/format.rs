//! One formatter for the numbers and money every output shows, so a budget reads the same in the
//! terminal, the orders report, the curve and the contract.
//!
//! # House style
//! - **Money is the ISO code, a space, then the amount with thousands separators**: `USD 12,345`.
//!   No symbols: `$` alone does not say which dollar, and the catalogue's `currency` is a code.
//! - **Whole units** ([`money`]) wherever money is an overview or a choice between plans: run
//!   summaries on stdout (plan, program, orders), the orders report, the curve's justification
//!   and chart.
//! - **Cents** ([`money_cents`]) wherever money is billed: the contract's scope of work, its bid
//!   total and the record of completed work, which must add up to the cent.
//! - **Chart ticks** are plain numbers ([`thousands`]); the axis label names the currency.
//! - **Never `-0`**: a value that rounds to zero is shown as zero, without a sign ([`fixed`]).
//!
//! # Units
//! Money in the catalogue's currency (its `currency` code); cents are hundredths of it.

/// A number rounded to a whole with thousands separators: `1234567.4` → `1,234,567`.
pub fn thousands(v: f64) -> String {
    let rounded = v.round() as i64;
    let digits = rounded.unsigned_abs().to_string();
    let mut out = String::new();
    for (k, c) in digits.chars().enumerate() {
        if k > 0 && (digits.len() - k).is_multiple_of(3) {
            out.push(',');
        }
        out.push(c);
    }
    if rounded < 0 { format!("-{out}") } else { out }
}

/// `digits` decimals, never `-0.00` (an empty sum of f64 is -0.0, and tiny negatives round to
/// it).
pub fn fixed(v: f64, digits: usize) -> String {
    let text = format!("{v:.digits$}");
    match text.strip_prefix('-') {
        Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
        _ => text,
    }
}

/// Money in whole units: `money("USD", 12345.6)` → `USD 12,346`.
pub fn money(code: &str, amount: f64) -> String {
    format!("{} {}", code.trim(), thousands(amount))
}

/// Money to the cent: `money_cents("USD", 1234567)` → `USD 12,345.67`.
pub fn money_cents(code: &str, cents: i64) -> String {
    let sign = if cents < 0 { "-" } else { "" };
    let cents = cents.unsigned_abs();
    format!(
        "{} {sign}{}.{:02}",
        code.trim(),
        thousands((cents / 100) as f64),
        cents % 100
    )
}

/// A percentage with `digits` decimals and the sign: `percent(12.345, 1)` → `12.3%`.
pub fn percent(v: f64, digits: usize) -> String {
    format!("{}%", fixed(v, digits))
}

/// A share (a fraction, `0.064` = 6.4 %) as a percentage with two significant figures and a
/// space before the sign, for gaps a person reads: `0.0643` → `6.4 %`, `0.00012` → `0.012 %`;
/// below 0.01 % it is `< 0.01 %`, and zero is `0 %`.
pub fn share_percent(fraction: f64) -> String {
    let pct = 100.0 * fraction;
    if !pct.is_finite() {
        return "n/a".into();
    }
    if pct <= 0.0 {
        return "0 %".into();
    }
    if pct < 0.01 {
        return "< 0.01 %".into();
    }
    let magnitude = pct.log10().floor() as i32;
    let decimals = (1 - magnitude).max(0) as usize;
    let scale = 10f64.powi(1 - magnitude);
    let rounded = (pct * scale).round() / scale;
    format!("{} %", fixed(rounded, decimals))
}

/// The solver's status in plain words for a page a person reads: "best possible (proven)",
/// "proven within 0.1 % of the best possible" (stopped at the gap limit `gap_limit`), "best
/// found, within 6.4 % of the best possible" (stopped by time or by the search), or "no plan
/// fits the limits".
pub fn status_words(status: crate::solve::problem::Status, gap: f64, gap_limit: f64) -> String {
    use crate::solve::problem::Status;
    match status {
        Status::Optimal => "best possible (proven)".into(),
        // The limit the user set, as they set it (`--gap 0.001` → 0.1 %).
        Status::GapLimit => format!(
            "proven within {} % of the best possible",
            significant(100.0 * gap_limit.max(gap), 2)
        ),
        Status::TimeLimit | Status::NoImprovingMove => format!(
            "best found, within {} of the best possible",
            share_percent(gap)
        ),
        Status::Infeasible => "no plan fits the limits".into(),
    }
}

/// A number for a CSV or JSON a person may open: `digits` significant figures, plain decimal
/// notation (no exponent, no 17-digit tails), never `-0`; empty for NaN.
pub fn significant(v: f64, digits: usize) -> String {
    if !v.is_finite() {
        return String::new();
    }
    if v == 0.0 {
        return "0".into();
    }
    let magnitude = v.abs().log10().floor() as i32;
    let decimals = (digits as i32 - 1 - magnitude).clamp(0, 15) as usize;
    let text = fixed(v, decimals);
    let text = if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    };
    if text == "-0" { "0".into() } else { text }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Two significant figures and "< 0.01 %" are issue 22's wording (common practice for
    // reporting optimality gaps to non-specialists).
    #[test]
    fn shares_in_two_significant_figures() {
        assert_eq!(share_percent(0.0643), "6.4 %");
        assert_eq!(share_percent(0.00012), "0.012 %");
        assert_eq!(share_percent(0.00007), "< 0.01 %");
        assert_eq!(share_percent(0.001), "0.10 %");
        assert_eq!(share_percent(0.123), "12 %");
        assert_eq!(share_percent(0.0), "0 %");
        assert_eq!(significant(8326.751052631584, 6), "8326.75");
        assert_eq!(significant(1.238485920343866e-16, 4), "0");
        assert_eq!(significant(0.11205446569760989, 6), "0.112054");
        assert_eq!(significant(-0.0, 3), "0");
        use crate::solve::problem::Status;
        assert_eq!(
            status_words(Status::GapLimit, 0.00007, 0.001),
            "proven within 0.1 % of the best possible"
        );
        assert_eq!(
            status_words(Status::TimeLimit, 0.0643, 0.001),
            "best found, within 6.4 % of the best possible"
        );
    }

    // Expected strings are the house style above (common practice: ISO 4217 code before the
    // amount, comma thousands separators as in en-US/en-CA).
    #[test]
    fn money_in_whole_units_and_cents() {
        assert_eq!(money("USD", 12345.6), "USD 12,346");
        assert_eq!(money("CAD", 1000.0), "CAD 1,000");
        assert_eq!(money("EUR", 0.0), "EUR 0");
        assert_eq!(money_cents("CAD", 100_000), "CAD 1,000.00");
        assert_eq!(money_cents("USD", 1_234_567), "USD 12,345.67");
        assert_eq!(money_cents("USD", -5), "USD -0.05");
        assert_eq!(money_cents("USD", 0), "USD 0.00");
    }

    #[test]
    fn no_negative_zero() {
        assert_eq!(fixed(-0.0, 2), "0.00");
        assert_eq!(fixed(-0.001, 2), "0.00");
        assert_eq!(fixed(-0.01, 2), "-0.01");
        assert_eq!(percent(-0.0, 1), "0.0%");
        assert_eq!(thousands(-0.4), "0");
        assert_eq!(money("USD", -0.2), "USD 0");
    }

    #[test]
    fn thousands_separators() {
        assert_eq!(thousands(1234567.4), "1,234,567");
        assert_eq!(thousands(999.0), "999");
        assert_eq!(thousands(-45000.0), "-45,000");
    }
}

/// Hectares in one international acre: 0.40468564224 (NIST Handbook 44, Appendix C: 1 acre =
/// 4,046.856 422 4 m²).
pub const HECTARES_PER_ACRE: f64 = 0.404_685_642_24;

/// The unit printed areas are shown in (`--area-units`); computed areas stay in hectares.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum AreaUnit {
    #[default]
    Hectares,
    Acres,
}

impl AreaUnit {
    /// `ha` or `ac` as `--area-units` takes them.
    pub fn parse(text: &str) -> Option<AreaUnit> {
        match text.trim().to_ascii_lowercase().as_str() {
            "ha" | "hectares" => Some(AreaUnit::Hectares),
            "ac" | "acres" => Some(AreaUnit::Acres),
            _ => None,
        }
    }

    /// An area given in hectares, in this unit.
    pub fn from_ha(self, ha: f64) -> f64 {
        match self {
            AreaUnit::Hectares => ha,
            AreaUnit::Acres => ha / HECTARES_PER_ACRE,
        }
    }

    /// The short symbol: `ha` or `ac`.
    pub fn symbol(self) -> &'static str {
        match self {
            AreaUnit::Hectares => "ha",
            AreaUnit::Acres => "ac",
        }
    }

    /// The column name for a table: `hectares` or `acres`.
    pub fn column(self) -> &'static str {
        match self {
            AreaUnit::Hectares => "hectares",
            AreaUnit::Acres => "acres",
        }
    }
}

/// Metres in one international foot: 0.3048 exactly (NIST Handbook 44, Appendix C); one mile is
/// 5,280 feet, 1,609.344 m. A US survey foot differs by 2 parts per million, far below what a
/// printed walk or drive shows.
pub const METRES_PER_FOOT: f64 = 0.3048;
pub const METRES_PER_MILE: f64 = 1609.344;

/// The unit printed distances are shown in: metres and kilometres, or feet and miles when the
/// inventory's CRS was in feet. Computed distances stay in metres and the CSV columns keep their
/// metric units.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DistanceUnit {
    #[default]
    Metric,
    Feet,
}

impl DistanceUnit {
    /// Feet and miles when `linear_units` (a CRS's unit name, e.g. `US survey foot`) is a foot.
    pub fn of_input(linear_units: Option<&str>) -> DistanceUnit {
        match linear_units {
            Some(u) if u.to_ascii_lowercase().contains("foot") || u.contains("feet") => {
                DistanceUnit::Feet
            }
            _ => DistanceUnit::Metric,
        }
    }

    /// A short distance (a walk), given in metres: `850 m` or `2,789 ft`.
    pub fn short(self, metres: f64) -> String {
        match self {
            DistanceUnit::Metric => format!("{} m", thousands(metres)),
            DistanceUnit::Feet => format!("{} ft", thousands(metres / METRES_PER_FOOT)),
        }
    }

    /// A drive, given in kilometres: `12.3 km` or `7.6 mi`.
    pub fn long(self, km: f64) -> String {
        match self {
            DistanceUnit::Metric => format!("{} km", fixed(km, 1)),
            DistanceUnit::Feet => format!("{} mi", fixed(km * 1000.0 / METRES_PER_MILE, 1)),
        }
    }

    /// The long unit's symbol, for a table header: `km` or `mi`.
    pub fn long_symbol(self) -> &'static str {
        match self {
            DistanceUnit::Metric => "km",
            DistanceUnit::Feet => "mi",
        }
    }

    /// The long unit's value, given in kilometres.
    pub fn long_value(self, km: f64) -> f64 {
        match self {
            DistanceUnit::Metric => km,
            DistanceUnit::Feet => km * 1000.0 / METRES_PER_MILE,
        }
    }
}

#[cfg(test)]
mod distance_tests {
    use super::*;

    #[test]
    fn feet_and_miles_from_metres() {
        // 1 mile = 1.609344 km and 1 ft = 0.3048 m exactly (NIST Handbook 44, Appendix C).
        assert_eq!(DistanceUnit::Feet.long(1.609344), "1.0 mi");
        assert_eq!(DistanceUnit::Feet.short(304.8), "1,000 ft");
        assert_eq!(DistanceUnit::Metric.long(12.34), "12.3 km");
        assert_eq!(
            DistanceUnit::of_input(Some("US survey foot")),
            DistanceUnit::Feet
        );
        assert_eq!(DistanceUnit::of_input(None), DistanceUnit::Metric);
    }
}
