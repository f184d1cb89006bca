//! Progress bars on long stages (raster labelling, optimising, budget curves), drawn on
//! stderr only when it is a terminal and the command is not `--quiet`; pipes, files and CI
//! logs get the plain stage lines alone. Commands make bars through their
//! [`crate::core::printer::Printer`]; the process-wide switch below serves only the stages
//! not yet handed a printer (the raster labeller in `input::patches`).

use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

use indicatif::{ProgressBar, ProgressStyle};

static ENABLED: AtomicBool = AtomicBool::new(false);

/// Turn bars on or off for the stages without a printer; set once from the command's printer
/// ([`crate::core::printer::Printer::install`]).
pub fn set_bars(on: bool) {
    ENABLED.store(on, Ordering::Relaxed);
}

pub fn enabled() -> bool {
    ENABLED.load(Ordering::Relaxed)
}

/// A bar or spinner that draws only when enabled; cleared when finished or dropped.
pub struct Stage(Option<ProgressBar>);

impl Stage {
    /// A bar over `len` steps of `unit` (e.g. "rows", "budgets").
    pub fn bar(what: &str, len: u64, unit: &str) -> Stage {
        Stage::bar_if(enabled(), what, len, unit)
    }

    /// As [`Stage::bar`], drawn when `draw` (the printer's choice).
    pub fn bar_if(draw: bool, what: &str, len: u64, unit: &str) -> Stage {
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

    /// A spinner with the time spent, for a stage without countable steps (a time-limited solve).
    pub fn spinner(what: &str) -> Stage {
        Stage::spinner_if(enabled(), what)
    }

    /// As [`Stage::spinner`], drawn when `draw` (the printer's choice).
    pub fn spinner_if(draw: bool, what: &str) -> Stage {
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
        set_bars(false);
        assert!(!enabled());
        let s = Stage::bar("labelling", 10, "rows");
        s.set(5);
        s.inc(1);
        assert!(s.0.is_none());
        assert!(Stage::spinner("optimising").0.is_none());
    }
}
