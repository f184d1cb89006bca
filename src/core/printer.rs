//! One printer for every command: quiet, normal, or normal with progress bars on a terminal.
//!
//! stdout carries the results: a command gathers them in a [`Text`] and the binary prints it at
//! the end. Under `--quiet` stdout holds only the cautions block, and only when the command's
//! output prescribes herbicide ([`Text::cautions`]); the result lines ([`Text::line`]) are
//! dropped, and the warnings among them ([`Text::warning`]: a stand NOT SCHEDULED, an empty or
//! infeasible plan) go to stderr instead. Errors are on stderr always (`main.rs`). stderr also
//! carries progress lines ([`Printer::progress`], silenced by `--quiet`), notes and warnings
//! ([`Printer::note`], said even under `--quiet` because they change what was planned) and bars
//! ([`Printer::bar`], drawn only on a terminal).

use std::fmt::{Display, Write as _};
use std::io::IsTerminal;

use crate::core::progress::{Bars, Stage};

/// How a command talks to the person running it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Printer {
    /// `--quiet`: errors, warnings (stderr) and the cautions block (stdout) only.
    Quiet,
    /// Progress lines on stderr, no bars (stderr is a pipe, a file or a CI log, or
    /// `HOSTCUT_NO_PROGRESS` is set).
    Normal,
    /// Progress lines and bars: stderr is a terminal.
    Progress,
}

impl Printer {
    /// The printer for a command run with or without `--quiet`; bars when stderr is a terminal
    /// and `HOSTCUT_NO_PROGRESS` is unset.
    pub fn new(quiet: bool) -> Printer {
        if quiet {
            Printer::Quiet
        } else if std::io::stderr().is_terminal()
            && std::env::var_os("HOSTCUT_NO_PROGRESS").is_none()
        {
            Printer::Progress
        } else {
            Printer::Normal
        }
    }

    /// Whether bars are drawn, for the stages handed a [`Bars`] rather than a printer (the
    /// raster labeller in `input::patches`).
    pub fn bars(self) -> Bars {
        if self == Printer::Progress {
            Bars::Drawn
        } else {
            Bars::Hidden
        }
    }

    pub fn is_quiet(self) -> bool {
        self == Printer::Quiet
    }

    /// A progress line on stderr, unless `--quiet`.
    pub fn progress(self, message: &str) {
        if !self.is_quiet() {
            eprintln!("{message}");
        }
    }

    /// A note or warning on stderr, said even under `--quiet` (the text carries its own
    /// `note:` / `warning:`).
    pub fn note(self, message: impl Display) {
        note(message);
    }

    /// A bar over `len` steps of `unit`, drawn only on a terminal.
    pub fn bar(self, what: &str, len: u64, unit: &str) -> Stage {
        self.bars().bar(what, len, unit)
    }

    /// A spinner with the time spent, drawn only on a terminal.
    pub fn spinner(self, what: &str) -> Stage {
        self.bars().spinner(what)
    }

    /// The progress lines as a callback, for library stages that take one.
    pub fn progress_fn(self) -> impl Fn(&str) {
        move |message: &str| self.progress(message)
    }

    /// An empty stdout text for this printer.
    pub fn text(self) -> Text {
        Text {
            text: String::new(),
            quiet: self.is_quiet(),
        }
    }
}

/// A note or warning on stderr, for the stages handed a progress callback rather than a
/// printer: notes are said under every printer, `--quiet` included.
pub fn note(message: impl Display) {
    eprintln!("{message}");
}

/// A command's stdout, gathered line by line.
#[derive(Debug, Clone)]
pub struct Text {
    text: String,
    quiet: bool,
}

impl Text {
    /// A result line, dropped under `--quiet` (the files the command writes hold the results).
    pub fn line(&mut self, line: impl Display) {
        if !self.quiet {
            let _ = writeln!(self.text, "{line}");
        }
    }

    /// Result lines as they are (each ending in a newline), dropped under `--quiet`.
    pub fn lines(&mut self, text: &str) {
        if !self.quiet {
            self.text.push_str(text);
        }
    }

    /// A warning a user must see (a stand NOT SCHEDULED, an empty plan): on stdout among the
    /// results, on stderr under `--quiet`.
    pub fn warning(&mut self, line: impl Display) {
        if self.quiet {
            note(line);
        } else {
            let _ = writeln!(self.text, "{line}");
        }
    }

    /// The cautions block, after a blank line: always without `--quiet`; under `--quiet` only
    /// when the command's output prescribes herbicide (`herbicide`), so that a quiet run's
    /// stdout is the cautions block or nothing.
    pub fn cautions(&mut self, block: &str, herbicide: bool) {
        if self.quiet && !herbicide {
            return;
        }
        if !self.quiet {
            self.text.push('\n');
        }
        self.text.push_str(block);
    }

    pub fn into_string(self) -> String {
        self.text
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quiet_text_keeps_only_the_cautions_of_herbicide_work() {
        // Issue 22: "`--quiet` prints only errors and the cautions block".
        let mut t = Printer::Quiet.text();
        t.line(format_args!("result {}", 1));
        t.lines("more\n");
        t.warning("warning: to stderr");
        t.cautions("CAUTIONS\n", true);
        assert_eq!(t.into_string(), "CAUTIONS\n");
        let mut t = Printer::Quiet.text();
        t.line("result");
        t.cautions("CAUTIONS\n", false);
        assert_eq!(t.into_string(), "");
        let mut t = Printer::Normal.text();
        t.line("header");
        t.warning("warning: here");
        t.cautions("CAUTIONS\n", false);
        assert_eq!(t.into_string(), "header\nwarning: here\n\nCAUTIONS\n");
    }

    #[test]
    fn bars_are_not_drawn_off_a_terminal() {
        assert!(!Printer::Quiet.bar("labelling", 10, "rows").is_drawn());
        assert!(!Printer::Normal.spinner("optimising").is_drawn());
    }
}
