//! Progress bars on long stages (raster labelling, optimising, budget curves), drawn on
//! stderr only when it is a terminal and the command is not `--quiet`; pipes, files and CI
//! logs get the plain stage lines alone. The choice is the command's
//! [`crate::core::printer::Printer`]'s, handed down explicitly: commands make bars through the
//! printer, and a stage that is given no printer (the raster labeller in `input::patches`)
//! takes a [`Bars`] parameter. There is no process-wide switch.

use std::time::Duration;

use indicatif::{ProgressBar, ProgressStyle};

/// Whether a stage draws its bars: the printer's choice
/// ([`crate::core::printer::Printer::bars`]), passed to the stages that draw one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Bars {
    /// No bars: not a terminal, `--quiet`, or a library caller (tests, the bench's stages).
    Hidden,
    /// Bars on stderr (a terminal).
    Drawn,
}

impl Bars {
    /// A bar over `len` steps of `unit` (e.g. "rows", "budgets"), drawn when [`Bars::Drawn`].
    pub fn bar(self, what: &str, len: u64, unit: &str) -> Stage {
        Stage::bar_if(self == Bars::Drawn, what, len, unit)
    }

    /// A spinner with the time spent, drawn when [`Bars::Drawn`].
    pub fn spinner(self, what: &str) -> Stage {
        Stage::spinner_if(self == Bars::Drawn, what)
    }
}

/// A bar or spinner that draws only when enabled; cleared when finished or dropped.
pub struct Stage(Option<ProgressBar>);

impl Stage {
    /// A bar over `len` steps of `unit` (e.g. "rows", "budgets"), drawn when `draw`.
    fn bar_if(draw: bool, what: &str, len: u64, unit: &str) -> Stage {
        if !draw {
            return Stage(None);
        }
        let bar = ProgressBar::new(len);
        let template = format!(
            "{{msg}} [{{bar:30}}] {{pos}}/{{len}} {unit} ({{elapsed}}, about {{eta}} left)"
        );
        if let Ok(style) = ProgressStyle::with_template(&template) {
            bar.set_style(style.progress_chars("=> "));
        }
        bar.set_message(what.to_string());
        Stage(Some(bar))
    }

    /// A spinner with the time spent, for a stage without countable steps (a time-limited
    /// solve), drawn when `draw`.
    fn spinner_if(draw: bool, what: &str) -> Stage {
        if !draw {
            return Stage(None);
        }
        let bar = ProgressBar::new_spinner();
        if let Ok(style) = ProgressStyle::with_template("{spinner} {msg} ({elapsed})") {
            bar.set_style(style);
        }
        bar.set_message(what.to_string());
        bar.tick();
        bar.enable_steady_tick(Duration::from_millis(200));
        Stage(Some(bar))
    }

    /// Whether anything is drawn.
    pub fn is_drawn(&self) -> bool {
        self.0.is_some()
    }

    pub fn set(&self, position: u64) {
        if let Some(b) = &self.0 {
            b.set_position(position);
        }
    }

    pub fn inc(&self, steps: u64) {
        if let Some(b) = &self.0 {
            b.inc(steps);
        }
    }
}

impl Drop for Stage {
    fn drop(&mut self) {
        if let Some(b) = &self.0 {
            b.finish_and_clear();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stages_are_silent_when_disabled() {
        let s = Bars::Hidden.bar("labelling", 10, "rows");
        s.set(5);
        s.inc(1);
        assert!(s.0.is_none());
        assert!(Bars::Hidden.spinner("optimising").0.is_none());
    }
}
