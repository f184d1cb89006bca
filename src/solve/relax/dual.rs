//! What the two dual bounds (`lagrangian`, `message_passing`) share: when to stop ([`Stop`]),
//! the prices on the budget and crew hours, and their search by bisection; and the developer
//! switch `HOSTCUT_RELAX_LOG` (DEVELOPERS.md).

/// When to stop iterating.
#[derive(Debug, Clone, Copy)]
pub struct Stop {
    /// Stop once (incumbent - bound) / incumbent is at most this.
    pub gap: f64,
    pub max_iterations: usize,
    pub time_limit_s: f64,
}

/// Prices on the budget and the crew hours for the dual bounds.
#[derive(Debug, Clone, Copy)]
pub(super) struct Prices {
    pub(super) budget: f64,
    pub(super) hours: f64,
}

/// `HOSTCUT_RELAX_LOG` set: print the bounds' progress on stderr (a developer switch, see
/// DEVELOPERS.md; it changes no result).
pub(super) fn log_enabled() -> bool {
    std::env::var_os("HOSTCUT_RELAX_LOG").is_some()
}

/// Find the prices that maximise a concave dual by bisection on the sign of its slope
/// (use - limit), the budget's price inside the hours' when crew hours bind. `try_at(p)`
/// evaluates the dual at p and returns (cost, hours) of its minimiser, or None to stop (out of
/// time, or the gap met).
pub(super) fn search_prices(
    budget: f64,
    hours_limit: Option<f64>,
    risk_before: f64,
    try_at: &dyn Fn(Prices) -> Option<(f64, f64)>,
) {
    // The least price (to a relative tolerance) at which use <= limit.
    fn bisect(
        limit: f64,
        scale: f64,
        tol: f64,
        f: &mut dyn FnMut(f64) -> Option<f64>,
    ) -> Option<f64> {
        if f(0.0)? <= limit {
            return Some(0.0);
        }
        let (mut lo, mut hi) = (0.0, scale);
        while f(hi)? > limit {
            lo = hi;
            hi *= 4.0;
            if hi > 1e300 {
                return None;
            }
        }
        while hi - lo > tol * hi {
            let mid = 0.5 * (lo + hi);
            if f(mid)? <= limit {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        Some(hi)
    }
    // Prices start at R per unit of the row's limit.
    let budget_scale = risk_before / budget.max(1e-12);
    let budget_price = |hours_price: f64, tol: f64| {
        bisect(budget, budget_scale, tol, &mut |v| {
            try_at(Prices {
                budget: v,
                hours: hours_price,
            })
            .map(|c| c.0)
        })
    };
    match hours_limit {
        None => {
            let _ = budget_price(0.0, 1e-6);
        }
        Some(h) => {
            let _ = bisect(h, risk_before / h.max(1e-12), 1e-4, &mut |nu| {
                let mu = budget_price(nu, 1e-4)?;
                try_at(Prices {
                    budget: mu,
                    hours: nu,
                })
                .map(|c| c.1)
            });
        }
    }
}
