//! Property tests (proptest) on random landscapes: every optimiser plan is feasible (budget,
//! hours, eligibility), never leaves more risk than doing nothing, and more budget never raises
//! the optimal risk.

use hostcut::core::kernel::Kernel;
use hostcut::core::kernel::KernelKind;
use hostcut::input::treatments::{Choice, MethodId};
use hostcut::model::graph::build_graph;
use hostcut::model::risk::RiskModel;
use hostcut::solve::optimise::solve;
use hostcut::solve::problem::{Limits, Problem, Status};
use proptest::prelude::*;

#[derive(Debug, Clone)]
struct Landscape {
    points: Vec<(f64, f64)>,
    stems: Vec<f64>,
    pressure: Vec<f64>,
    /// Per patch: None = untreatable, else (factor, herbicide allowed).
    rules: Vec<Option<(f64, bool)>>,
    alpha: f64,
}

fn landscape() -> impl Strategy<Value = Landscape> {
    (3usize..9).prop_flat_map(|n| {
        (
            prop::collection::vec((0.0..1500.0f64, 0.0..1500.0f64), n),
            prop::collection::vec(5.0..500.0f64, n),
            prop::collection::vec(1.0..4.0f64, n),
            prop::collection::vec(
                prop::option::weighted(0.85, (0.8..1.5f64, any::<bool>())),
                n,
            ),
            100.0..600.0f64,
        )
            .prop_map(|(points, stems, pressure, rules, alpha)| Landscape {
                points,
                stems,
                pressure,
                rules,
                alpha,
            })
    })
}

fn choices(l: &Landscape) -> Vec<Vec<Choice>> {
    // Two herbicide methods and one without.
    let methods = [
        (0.92, 250.0, 4.5, 0.05, true),
        (0.7, 250.0, 1.8, 0.01, true),
        (0.6, 150.0, 2.0, 0.04, false),
    ];
    l.rules
        .iter()
        .zip(&l.stems)
        .map(|(rule, &s)| match rule {
            None => vec![],
            Some((factor, herbicide_ok)) => methods
                .iter()
                .enumerate()
                .filter(|(_, m)| *herbicide_ok || !m.4)
                .map(|(k, m)| {
                    Choice::single(
                        MethodId(k as u16),
                        (m.1 + m.2 * s) * factor,
                        m.3 * s,
                        1.0 - m.0,
                    )
                })
                .collect(),
        })
        .collect()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, .. ProptestConfig::default() })]

    #[test]
    fn plans_are_feasible_and_more_money_never_hurts(l in landscape(), budget in 0.0..4000.0f64, extra in 0.0..3000.0f64, hours in prop::option::of(1.0..40.0f64)) {
        let graph = build_graph(&l.points, Kernel { kind: KernelKind::Exp, alpha_m: l.alpha }, 0.001);
        let model = RiskModel::new(&l.stems, &l.pressure, &graph);
        let n = l.points.len();
        let make = |b: f64| Problem { model: &model, choices: choices(&l), budget: b, crew_hours: hours, required: vec![false; n], excluded: vec![false; n] };
        let small = make(budget);
        let large = make(budget + extra);
        let a = solve(&small, Limits::new(30.0, 0.0)).unwrap();
        let b = solve(&large, Limits::new(30.0, 0.0)).unwrap();
        for (p, s) in [(&small, &a), (&large, &b)] {
            prop_assert_eq!(s.status, Status::Optimal);
            prop_assert!(p.feasible(&s.assignment));
            // Eligibility: untreatable patches untreated; herbicide only where allowed.
            for i in 0..n {
                if let Some(o) = s.assignment[i] {
                    prop_assert!(l.rules[i].is_some());
                    let method = p.choices[i][o].method.0;
                    prop_assert!(l.rules[i].unwrap().1 || method == 2);
                }
            }
            prop_assert!(s.risk_after <= model.risk_before() * (1.0 + 1e-12));
        }
        prop_assert!(b.risk_after <= a.risk_after * (1.0 + 1e-9), "more budget raised the optimum: {} -> {}", a.risk_after, b.risk_after);
    }
}
