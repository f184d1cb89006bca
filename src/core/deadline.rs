//! The command's clock: one wall-clock deadline that `--time-limit-s` sets for a whole command
//! (reading layers, every solve, the work after the solve), started when the command starts and
//! handed to every search, so the limit bounds the command and not each solve.
//!
//! A command's searches stop [`OUTPUT_RESERVE`] of the limit early, keeping that time for the
//! plan's metrics and for writing the outputs. Steps that run one after another take shares of
//! what is left ([`Deadline::share`]), so time one step does not need passes to the next.
//!
//! # Units
//! Seconds of wall-clock time.

use std::time::{Duration, Instant};

/// Share of `--time-limit-s` kept back for the work after the last search (metrics, writing
/// the outputs).
pub const OUTPUT_RESERVE: f64 = 0.04;

/// A point in wall-clock time by which searches must stop, and the instant the command began.
#[derive(Debug, Clone, Copy)]
pub struct Deadline {
    started: Instant,
    /// When this search (or step) must stop. None: no limit (a limit too large to represent).
    end: Option<Instant>,
    /// When the command's last search must stop: `end` before any [`Deadline::share`].
    searches_end: Option<Instant>,
    /// When the whole command must be done: `searches_end` plus the output reserve.
    command_end: Option<Instant>,
}

impl Deadline {
    /// The searches' deadline of a command that started at `started` under `--time-limit-s
    /// limit_s`: the limit less [`OUTPUT_RESERVE`].
    pub fn for_command(started: Instant, limit_s: f64) -> Deadline {
        Deadline {
            command_end: Deadline::at(started, limit_s).end,
            ..Deadline::at(started, limit_s * (1.0 - OUTPUT_RESERVE))
        }
    }

    /// `seconds` from now, with no reserve (for a single search called as a library function).
    pub fn after(seconds: f64) -> Deadline {
        Deadline::at(Instant::now(), seconds)
    }

    /// No deadline at all.
    pub fn never() -> Deadline {
        Deadline {
            started: Instant::now(),
            end: None,
            searches_end: None,
            command_end: None,
        }
    }

    fn at(started: Instant, seconds: f64) -> Deadline {
        let end = Duration::try_from_secs_f64(seconds.max(0.0))
            .ok()
            .and_then(|d| started.checked_add(d));
        Deadline {
            started,
            end,
            searches_end: end,
            command_end: end,
        }
    }

    /// The deadline of the command's searches as a whole, whatever share this one is: a step
    /// may run past its share (taking time from the steps after it) but not past this.
    pub fn overall(&self) -> Deadline {
        Deadline {
            end: self.searches_end,
            ..*self
        }
    }

    /// The deadline for the metrics computed after the searches: half way from the searches'
    /// end to the command's end (the other half is for writing the outputs).
    pub fn for_outputs(&self) -> Deadline {
        let end = match (self.searches_end, self.command_end) {
            (Some(searches), Some(command)) => {
                Some(searches + command.saturating_duration_since(searches) / 2)
            }
            _ => self.command_end,
        };
        Deadline {
            end,
            searches_end: end,
            ..*self
        }
    }

    /// The same deadline with at least `seconds` kept between the end of the searches and the
    /// end of the command, for the work that follows them (the metrics and writing the outputs
    /// of a large landscape take longer than the standing reserve).
    pub fn keeping(&self, seconds: f64) -> Deadline {
        let (Some(command_end), Ok(keep)) = (
            self.command_end,
            Duration::try_from_secs_f64(seconds.max(0.0)),
        ) else {
            return *self;
        };
        let latest = command_end.checked_sub(keep).unwrap_or(self.started);
        Deadline {
            end: self.end.map(|e| e.min(latest)),
            searches_end: self.searches_end.map(|e| e.min(latest)),
            ..*self
        }
    }

    /// Seconds from the command's start to the end of its searches (infinite without a limit).
    pub fn searches_s(&self) -> f64 {
        match self.searches_end {
            Some(end) => end.saturating_duration_since(self.started).as_secs_f64(),
            None => f64::INFINITY,
        }
    }

    /// Seconds left before the deadline (0 once it has passed; infinite without one).
    pub fn remaining_s(&self) -> f64 {
        match self.end {
            Some(end) => end.saturating_duration_since(Instant::now()).as_secs_f64(),
            None => f64::INFINITY,
        }
    }

    /// True once the deadline has passed.
    pub fn passed(&self) -> bool {
        self.end.is_some_and(|end| Instant::now() >= end)
    }

    /// Seconds since the command (or this deadline) started.
    pub fn elapsed_s(&self) -> f64 {
        self.started.elapsed().as_secs_f64()
    }

    /// The deadline of the next of `steps` steps still to run one after another: an equal share
    /// of the time left (the last step gets all of it). Never later than `self`.
    pub fn share(&self, steps: usize) -> Deadline {
        self.fraction(1.0 / steps.max(1) as f64)
    }

    /// A deadline `fraction` (0 to 1) of the time left from now. Never later than `self`.
    pub fn fraction(&self, fraction: f64) -> Deadline {
        let Some(end) = self.end else {
            return *self;
        };
        let now = Instant::now();
        let left = end.saturating_duration_since(now);
        let part = left.mul_f64(fraction.clamp(0.0, 1.0));
        Deadline {
            end: Some((now + part).min(end)),
            ..*self
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shares_split_the_time_left_and_never_pass_the_whole() {
        let whole = Deadline::after(100.0);
        let half = whole.share(2);
        assert!(half.remaining_s() <= 50.0 + 1e-3 && half.remaining_s() > 49.0);
        // A share ends no later than the whole (compared as instants, not as seconds left read
        // at two moments).
        assert!(whole.share(1).end <= whole.end);
        assert!(whole.fraction(2.0).end <= whole.end);
        assert!(!whole.passed());
        assert!(Deadline::after(0.0).passed());
        assert_eq!(Deadline::after(0.0).remaining_s(), 0.0);
    }

    #[test]
    fn keeping_time_for_large_outputs_moves_the_searches_end_earlier() {
        let d = Deadline::for_command(Instant::now(), 100.0);
        let kept = d.keeping(30.0);
        assert!(kept.remaining_s() <= 70.0 && kept.remaining_s() > 69.0);
        assert!(kept.share(2).overall().remaining_s() <= 70.0);
        assert!((kept.searches_s() - 70.0).abs() < 1e-6);
        // Less than the standing reserve changes nothing; more than the limit ends the searches.
        assert!((d.keeping(1.0).searches_s() - d.searches_s()).abs() < 1e-9);
        assert!(d.keeping(500.0).passed());
    }

    #[test]
    fn limits_too_large_to_represent_mean_no_deadline() {
        let d = Deadline::after(1e300);
        assert_eq!(d.remaining_s(), f64::INFINITY);
        assert!(!d.passed());
        assert_eq!(d.share(3).remaining_s(), f64::INFINITY);
        assert_eq!(Deadline::never().remaining_s(), f64::INFINITY);
    }

    #[test]
    fn a_command_keeps_its_reserve_for_the_outputs() {
        let d = Deadline::for_command(Instant::now(), 100.0);
        let left = d.remaining_s();
        assert!(
            left <= 100.0 * (1.0 - OUTPUT_RESERVE) && left > 95.0,
            "{left}"
        );
        // The metrics get the first half of the reserve, the outputs the second.
        let metrics = d.for_outputs().remaining_s();
        assert!(metrics <= 98.0 && metrics > 97.0, "{metrics}");
        assert!(d.share(4).for_outputs().remaining_s() > 97.0);
        let overall = d.share(4).overall().remaining_s();
        assert!(overall <= left && overall > 95.0, "{overall}");
    }
}
