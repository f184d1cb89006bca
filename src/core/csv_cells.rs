//! CSV cells a spreadsheet cannot execute: every CSV the tool writes goes through [`Writer`],
//! and every CSV of the tool's own it reads back goes through [`restore`].
//!
//! The rule (README, "CSV files"): a text cell that begins with `=`, `+`, `-`, `@`, a tab or a
//! carriage return — the characters with which a spreadsheet starts a formula (OWASP, "CSV
//! Injection", from memory) — is written with an apostrophe in front, which spreadsheets show
//! as text. A cell that already begins with an apostrophe gets one more, so the rule can be
//! undone exactly. Numbers as the tool writes them (`-0.5`, `1e-7`, `-12`) are left as they
//! are: a spreadsheet reads them as numbers, never as formulas.
//!
//! Reading back, a leading apostrophe followed by one of those characters (or by another
//! apostrophe) is dropped, so ids survive a round trip (plan → orders → record → next season)
//! exactly.

use std::borrow::Cow;

use crate::core::error::{Error, Result};

/// The characters with which a spreadsheet starts a formula (or hides one behind whitespace).
const TRIGGERS: [char; 6] = ['=', '+', '-', '@', '\t', '\r'];

/// True for a plain decimal number as the tool writes it: an optional minus, digits with an
/// optional fraction, an optional exponent. `+1`, `-inf`, `-1+2` are not.
fn is_plain_number(cell: &str) -> bool {
    let body = cell.strip_prefix('-').unwrap_or(cell);
    let (mantissa, exponent) = match body.find(['e', 'E']) {
        Some(at) => (&body[..at], Some(&body[at + 1..])),
        None => (body, None),
    };
    let (whole, fraction) = match mantissa.split_once('.') {
        Some((w, f)) => (w, Some(f)),
        None => (mantissa, None),
    };
    let digits = |s: &str| s.bytes().all(|b| b.is_ascii_digit());
    let mantissa_ok = digits(whole)
        && fraction.is_none_or(digits)
        && !(whole.is_empty() && fraction.is_none_or(str::is_empty));
    let exponent_ok = exponent.is_none_or(|e| {
        let e = e.strip_prefix(['-', '+']).unwrap_or(e);
        !e.is_empty() && digits(e)
    });
    mantissa_ok && exponent_ok
}

/// The cell as written: an apostrophe in front of a text cell a spreadsheet would execute (or
/// of one that already starts with an apostrophe); everything else unchanged.
pub fn neutralise(cell: &str) -> Cow<'_, str> {
    let first = cell.chars().next();
    let risky = first.is_some_and(|c| TRIGGERS.contains(&c)) && !is_plain_number(cell);
    if risky || first == Some('\'') {
        Cow::Owned(format!("'{cell}"))
    } else {
        Cow::Borrowed(cell)
    }
}

/// The original value of a cell [`neutralise`] wrote: one leading apostrophe is dropped when
/// what follows begins with a formula character or another apostrophe.
pub fn restore(cell: &str) -> &str {
    match cell.strip_prefix('\'') {
        Some(rest)
            if rest
                .chars()
                .next()
                .is_some_and(|c| c == '\'' || TRIGGERS.contains(&c)) =>
        {
            rest
        }
        _ => cell,
    }
}

/// A record with every field [`restore`]d.
pub fn restored(record: &csv::StringRecord) -> csv::StringRecord {
    record.iter().map(restore).collect()
}

/// A CSV writer into memory whose every cell is [`neutralise`]d.
pub struct Writer {
    inner: csv::Writer<Vec<u8>>,
}

impl Default for Writer {
    fn default() -> Self {
        Writer::new()
    }
}

impl Writer {
    pub fn new() -> Writer {
        Writer {
            inner: csv::Writer::from_writer(Vec::new()),
        }
    }

    /// Write one row.
    pub fn row<I, T>(&mut self, cells: I) -> Result<()>
    where
        I: IntoIterator<Item = T>,
        T: AsRef<str>,
    {
        let cells: Vec<String> = cells
            .into_iter()
            .map(|c| neutralise(c.as_ref()).into_owned())
            .collect();
        self.inner
            .write_record(&cells)
            .map_err(|e| Error::Internal(format!("csv: {e}")))
    }

    /// The file's bytes.
    pub fn into_bytes(self) -> Result<Vec<u8>> {
        self.inner
            .into_inner()
            .map_err(|e| Error::Internal(format!("csv: {e}")))
    }
}

/// A CSV file's bytes: the header row, then the rows, every cell neutralised.
pub fn bytes(header: &[&str], rows: &[Vec<String>]) -> Result<Vec<u8>> {
    let mut w = Writer::new();
    w.row(header)?;
    for r in rows {
        w.row(r)?;
    }
    w.into_bytes()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formula_cells_get_an_apostrophe_and_numbers_do_not() {
        // The trigger characters: OWASP "CSV Injection" (from memory).
        for (cell, written) in [
            ("=HYPERLINK(\"x\")", "'=HYPERLINK(\"x\")"),
            ("+1", "'+1"),
            ("-cmd", "'-cmd"),
            ("@SUM(A1)", "'@SUM(A1)"),
            ("\t=1", "'\t=1"),
            ("\r=1", "'\r=1"),
            ("-1+2", "'-1+2"),
            ("-inf", "'-inf"),
            ("'quoted", "''quoted"),
            ("-0.5", "-0.5"),
            ("-12", "-12"),
            ("1e-7", "1e-7"),
            ("-2.5E+3", "-2.5E+3"),
            ("P0001", "P0001"),
            ("a=b", "a=b"),
            ("", ""),
        ] {
            assert_eq!(neutralise(cell), written, "{cell:?}");
            assert_eq!(restore(&neutralise(cell)), cell, "{cell:?}");
        }
    }

    #[test]
    fn restoring_leaves_other_apostrophes_alone() {
        assert_eq!(restore("'abc"), "'abc");
        assert_eq!(restore("it's"), "it's");
        assert_eq!(restore("''x"), "'x");
        assert_eq!(restore("'"), "'");
    }

    #[test]
    fn plain_numbers() {
        for n in [
            "0",
            "-0",
            "12.5",
            ".5",
            "-.5",
            "5.",
            "1e9",
            "1E-9",
            "-3.25e+10",
        ] {
            assert!(is_plain_number(n), "{n}");
        }
        for t in [
            "", "-", ".", "-.", "+1", "1e", "1e+", "--1", "1-1", "inf", "NaN", "0x10", "1,5",
        ] {
            assert!(!is_plain_number(t), "{t}");
        }
    }
}
