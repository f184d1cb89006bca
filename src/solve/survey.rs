//! The survey allocation as a multiple-choice knapsack (issue 24): at each site at most one
//! option (a method and a number of visits), the options' hours within the survey hours, the
//! expected finds as large as possible.
//!
//! ```text
//! maximise   sum_i sum_o v_io x_io
//! subject to sum_o x_io <= 1            for every site i
//!            sum_i sum_o h_io x_io <= H
//!            x_io in {0, 1}
//! ```
//!
//! Solved exactly by HiGHS. The model is written as a minimisation of -sum v x (so an MPS file of
//! it reads the same in any solver); the result is turned back. The gap is
//! (bound - found) / bound, with the bound HiGHS's proven upper bound on the expected finds.
//!
//! # Units
//! Hours; values in expected populations found (optionally host-weighted).

use crate::core::deadline::Deadline;
use crate::core::error::{Error, Result};
use crate::solve::problem::{OPTIMAL_GAP, Status};

/// One option of one site.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SurveyOption {
    /// v_io: expected finds (weighted) if chosen.
    pub value: f64,
    /// h_io: hours it takes.
    pub hours: f64,
}

/// The knapsack: per site its options, and the hours.
#[derive(Debug, Clone, PartialEq)]
pub struct Knapsack {
    pub options: Vec<Vec<SurveyOption>>,
    pub hours: f64,
}

/// The chosen option per site, its value and hours, and how sure.
#[derive(Debug, Clone, PartialEq)]
pub struct Chosen {
    pub choice: Vec<Option<usize>>,
    pub value: f64,
    pub hours: f64,
    pub status: Status,
    /// Proven upper bound on the value.
    pub bound: f64,
    /// (bound - value) / bound; 0 when the bound is 0.
    pub gap: f64,
}

/// The options of one site that are not dominated (another takes no more hours and finds at
/// least as much, and is better in one): their indices, fewest hours first. Dropping them never
/// changes the optimum.
pub fn undominated(options: &[SurveyOption]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..options.len()).collect();
    order.sort_by(|&a, &b| {
        options[a]
            .hours
            .total_cmp(&options[b].hours)
            .then(options[b].value.total_cmp(&options[a].value))
            .then(a.cmp(&b))
    });
    let mut keep = Vec::new();
    let mut best = f64::NEG_INFINITY;
    for i in order {
        if options[i].value > best {
            best = options[i].value;
            keep.push(i);
        }
    }
    keep
}

impl Knapsack {
    /// Value and hours of a choice.
    pub fn evaluate(&self, choice: &[Option<usize>]) -> (f64, f64) {
        let mut v = 0.0;
        let mut h = 0.0;
        for (i, c) in choice.iter().enumerate() {
            if let Some(o) = c {
                v += self.options[i][*o].value;
                h += self.options[i][*o].hours;
            }
        }
        (v, h)
    }

    /// The HiGHS model (minimise -value) and, per site, the column of each option.
    fn build(&self) -> (highs::Model, Vec<Vec<usize>>) {
        let mut pb = highs::RowProblem::default();
        let mut cols = Vec::with_capacity(self.options.len());
        let mut handles = Vec::with_capacity(self.options.len());
        let mut next = 0usize;
        for site in &self.options {
            let mut c = Vec::with_capacity(site.len());
            let mut h = Vec::with_capacity(site.len());
            for o in site {
                h.push(pb.add_integer_column(-o.value, 0.0..=1.0));
                c.push(next);
                next += 1;
            }
            cols.push(c);
            handles.push(h);
        }
        for h in &handles {
            if h.len() > 1 {
                let row: Vec<_> = h.iter().map(|&c| (c, 1.0)).collect();
                pb.add_row(..=1.0, &row);
            }
        }
        let row: Vec<_> = handles
            .iter()
            .zip(&self.options)
            .flat_map(|(h, site)| h.iter().zip(site).map(|(&c, o)| (c, o.hours)))
            .collect();
        pb.add_row(..=self.hours, &row);
        (pb.optimise(highs::Sense::Minimise), cols)
    }

    /// Solve exactly with HiGHS (relative gap [`OPTIMAL_GAP`], the solver's tolerance) by the
    /// deadline.
    pub fn solve(&self, deadline: &Deadline) -> Result<Chosen> {
        let n = self.options.len();
        if n == 0 || self.options.iter().all(|o| o.is_empty()) {
            return Ok(Chosen {
                choice: vec![None; n],
                value: 0.0,
                hours: 0.0,
                status: Status::Optimal,
                bound: 0.0,
                gap: 0.0,
            });
        }
        let (mut model, cols) = self.build();
        let log = std::env::var_os("HOSTCUT_SOLVER_LOG").is_some();
        model.set_option("output_flag", log);
        model.set_option("log_to_console", log);
        model.set_option("mip_rel_gap", OPTIMAL_GAP);
        model.set_option("mip_abs_gap", 1e-9);
        model.set_option("random_seed", 0);
        model.set_option("threads", 2);
        model.set_option("time_limit", deadline.remaining_s().clamp(0.01, 1e9));
        let solved = model
            .try_solve()
            .map_err(|e| Error::Internal(format!("HiGHS failed: {e:?}")))?;
        use highs::HighsModelStatus as S;
        let status = match solved.status() {
            S::Optimal => Status::Optimal,
            S::ReachedTimeLimit => Status::TimeLimit,
            other => {
                return Err(Error::Internal(format!(
                    "HiGHS ended the survey knapsack with status {other:?}"
                )));
            }
        };
        let mut choice = vec![None; n];
        if solved.primal_solution_status() == highs::HighsSolutionStatus::Feasible {
            let values = solved.get_solution();
            let values = values.columns();
            for (i, c) in cols.iter().enumerate() {
                for (o, &col) in c.iter().enumerate() {
                    if values[col] > 0.5 {
                        choice[i] = Some(o);
                    }
                }
            }
        }
        let (value, hours) = self.evaluate(&choice);
        // HiGHS's dual bound is on the minimised -value.
        let bound = solved
            .double_info_value(c"mip_dual_bound")
            .ok()
            .filter(|b| b.is_finite())
            .map(|b| -b)
            .unwrap_or(f64::INFINITY)
            .max(value);
        let gap = if bound > 0.0 {
            ((bound - value) / bound).max(0.0)
        } else {
            0.0
        };
        Ok(Chosen {
            choice,
            value,
            hours,
            status,
            bound,
            gap,
        })
    }

    /// Write the model as an MPS file through HiGHS's own writer (for checks by other solvers).
    pub fn write_mps(&self, path: &std::path::Path) -> Result<()> {
        let (mut model, _) = self.build();
        model.set_option("output_flag", false);
        model.set_option("write_model_to_file", true);
        model.set_option(
            "write_model_file",
            path.to_string_lossy().into_owned().as_str(),
        );
        model.set_option("time_limit", 0.0);
        let _ = model.try_solve();
        if !path.is_file() {
            return Err(Error::Internal(format!(
                "HiGHS did not write `{}`",
                path.display()
            )));
        }
        Ok(())
    }
}
