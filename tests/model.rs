//! The risk model and the spatially realistic Levins quantities against analytic cases and a
//! general-purpose dense symmetric eigen solver (nalgebra's `SymmetricEigen`).
//! Identities: methods notes §1 (Hanski & Ovaskainen 2000; two-patch and equal-patch values
//! derived there from the definition of M).

use hostcut::core::kernel::Kernel;
use hostcut::core::kernel::KernelKind;
use hostcut::model::graph::{PatchGraph, build_graph};
use hostcut::model::risk::RiskModel;
use nalgebra::DMatrix;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

fn exp_kernel(alpha: f64) -> Kernel {
    Kernel {
        kind: KernelKind::Exp,
        alpha_m: alpha,
    }
}

#[test]
fn two_patch_capacity_matches_the_analytic_value() {
    // Methods notes §1: two patches, A = (1, 4), f = e^-1 → lambda_M = A1 A2 f = 1.4715177647.
    // The model uses shares a = A / 5, and lambda scales with the square of the areas.
    let graph = build_graph(&[(0.0, 0.0), (300.0, 0.0)], exp_kernel(300.0), 0.001);
    let model = RiskModel::new(&[1.0, 4.0], &[1.0, 1.0], &graph);
    let cap = model.capacity(&[1.0, 1.0]);
    assert!(
        (cap.lambda * 25.0 - 1.4715177647).abs() < 1e-9,
        "lambda x 25 = {}",
        cap.lambda * 25.0
    );
    // x = (1, 1)/sqrt 2 for the 2x2 symmetric matrix with zero diagonal.
    assert!((cap.vector[0] - 0.5f64.sqrt()).abs() < 1e-9);
}

#[test]
fn equal_patches_at_equal_distance() {
    // Methods notes §1: n equal patches at equal mutual distance: lambda = (n - 1) A^2 f(d),
    // x_i = 1/sqrt n. In the plane that is the equilateral triangle (n = 3).
    let d = 250.0;
    let pts = [(0.0, 0.0), (d, 0.0), (d / 2.0, d * 3f64.sqrt() / 2.0)];
    let kernel = exp_kernel(200.0);
    let graph = build_graph(&pts, kernel, 0.001);
    assert_eq!(graph.edges.len(), 3);
    let model = RiskModel::new(&[5.0, 5.0, 5.0], &[1.0, 1.0, 1.0], &graph);
    let cap = model.capacity(&[1.0; 3]);
    let a = 1.0 / 3.0;
    let expected = 2.0 * a * a * kernel.value(d);
    assert!(
        (cap.lambda - expected).abs() < 1e-12 * expected.max(1.0),
        "{} vs {expected}",
        cap.lambda
    );
    for x in &cap.vector {
        assert!((x - 1.0 / 3f64.sqrt()).abs() < 1e-8);
    }
    // Methods notes §1: scaling every A by k multiplies lambda_M by k^2 (here r = k = 0.5).
    let half = model.capacity(&[0.5; 3]);
    assert!((half.lambda - 0.25 * cap.lambda).abs() < 1e-12);
    // Patch values lambda x_i^2 sum to lambda.
    let sum: f64 = cap.vector.iter().map(|x| cap.lambda * x * x).sum();
    assert!((sum - cap.lambda).abs() < 1e-12);
}

fn dense_m(model: &RiskModel, remaining: &[f64]) -> DMatrix<f64> {
    let n = model.len();
    let mut m = DMatrix::zeros(n, n);
    for l in &model.links {
        let v = l.kernel * model.share[l.a] * remaining[l.a] * model.share[l.b] * remaining[l.b];
        m[(l.a, l.b)] = v;
        m[(l.b, l.a)] = v;
    }
    m
}

fn random_landscape(seed: u64, n: usize) -> (RiskModel, PatchGraph) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let pts: Vec<(f64, f64)> = (0..n)
        .map(|_| (rng.gen_range(0.0..3000.0), rng.gen_range(0.0..3000.0)))
        .collect();
    let stems: Vec<f64> = (0..n).map(|_| rng.gen_range(1.0..1000.0)).collect();
    let pressure: Vec<f64> = (0..n).map(|_| rng.gen_range(1.0..5.0)).collect();
    let kind = if seed.is_multiple_of(2) {
        KernelKind::Exp
    } else {
        KernelKind::Cauchy
    };
    let graph = build_graph(
        &pts,
        Kernel {
            kind,
            alpha_m: rng.gen_range(150.0..400.0),
        },
        0.001,
    );
    (RiskModel::new(&stems, &pressure, &graph), graph)
}

#[test]
fn capacity_agrees_with_a_dense_symmetric_eigen_solver() {
    for seed in 0..12 {
        let n = 10 + (seed as usize) * 7;
        let (model, _) = random_landscape(seed, n);
        let mut rng = ChaCha8Rng::seed_from_u64(seed + 100);
        let remaining: Vec<f64> = (0..n)
            .map(|_| {
                if rng.gen_bool(0.3) {
                    rng.gen_range(0.0..1.0)
                } else {
                    1.0
                }
            })
            .collect();
        let eig = nalgebra::SymmetricEigen::new(dense_m(&model, &remaining));
        let reference = eig.eigenvalues.iter().cloned().fold(f64::MIN, f64::max);
        let cap = model.capacity(&remaining);
        assert!(
            (cap.lambda - reference).abs() <= 1e-8 * reference.abs().max(1e-30),
            "seed {seed}: {} vs nalgebra {reference}",
            cap.lambda
        );
    }
}

#[test]
fn risk_matches_its_definition_and_shares_sum_to_one() {
    // R = sum_i pi_i a_i^2 r_i^2 + sum_{i<j linked} (pi_i + pi_j) a_i a_j k_ij r_i r_j, evaluated
    // here by a plain double loop over all pairs with the kernel cut at epsilon.
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    let n = 40;
    let pts: Vec<(f64, f64)> = (0..n)
        .map(|_| (rng.gen_range(0.0..2000.0), rng.gen_range(0.0..2000.0)))
        .collect();
    let stems: Vec<f64> = (0..n).map(|_| rng.gen_range(1.0..100.0)).collect();
    let pressure: Vec<f64> = (0..n).map(|_| rng.gen_range(1.0..4.0)).collect();
    let kernel = exp_kernel(250.0);
    let graph = build_graph(&pts, kernel, 0.001);
    let model = RiskModel::new(&stems, &pressure, &graph);
    let remaining: Vec<f64> = (0..n).map(|_| rng.gen_range(0.0..1.0)).collect();
    let total: f64 = stems.iter().sum();
    let a: Vec<f64> = stems.iter().map(|s| s / total).collect();
    let mut direct = 0.0;
    let mut links = 0;
    for i in 0..n {
        direct += pressure[i] * a[i] * a[i] * remaining[i] * remaining[i];
        for j in i + 1..n {
            let d = ((pts[i].0 - pts[j].0).powi(2) + (pts[i].1 - pts[j].1).powi(2)).sqrt();
            let k = kernel.value(d);
            if k >= 0.001 {
                links += 1;
                direct +=
                    (pressure[i] + pressure[j]) * a[i] * a[j] * k * remaining[i] * remaining[j];
            }
        }
    }
    assert_eq!(
        graph.edges.len(),
        links,
        "the R-tree must find exactly the pairs within the cutoff"
    );
    assert!((model.risk(&remaining) - direct).abs() < 1e-14);
    let shares: f64 = model.risk_shares().iter().sum();
    assert!((shares - 1.0).abs() < 1e-12);
}

#[test]
fn establishment_is_a_fixed_point_of_its_equation() {
    let (model, _) = random_landscape(4, 30);
    let ones = vec![1.0; 30];
    let lambda = model.capacity(&ones).lambda;
    let delta = model.delta(lambda, 2.0);
    let iota = 0.01;
    let p = model.establishment(&ones, delta, iota);
    // p_i = u_i / (u_i + delta), u_i = a_i (sum_j k_ij a_j p_j + iota pi_i).
    let mut s = vec![0.0; 30];
    for l in &model.links {
        s[l.a] += l.kernel * model.share[l.b] * p[l.b];
        s[l.b] += l.kernel * model.share[l.a] * p[l.a];
    }
    for i in 0..30 {
        let u = model.share[i] * (s[i] + iota * model.pressure[i]);
        assert!((p[i] - u / (u + delta)).abs() < 1e-10);
        assert!((0.0..=1.0).contains(&p[i]));
    }
    // Treatment can only lower establishment.
    let treated: Vec<f64> = (0..30)
        .map(|i| if i % 3 == 0 { 0.1 } else { 1.0 })
        .collect();
    let q = model.establishment(&treated, delta, iota);
    assert!(q.iter().zip(&p).all(|(a, b)| *a <= *b + 1e-12));
}

#[test]
fn kernel_values_and_cutoffs() {
    let e = exp_kernel(200.0);
    assert!((e.value(200.0) - (-1.0f64).exp()).abs() < 1e-15);
    assert!((e.value(e.cutoff(0.001)) - 0.001).abs() < 1e-12);
    let c = Kernel {
        kind: KernelKind::Cauchy,
        alpha_m: 200.0,
    };
    assert!((c.value(200.0) - 0.5).abs() < 1e-15);
    assert!((c.value(c.cutoff(0.001)) - 0.001).abs() < 1e-12);
}

#[test]
fn links_to_a_patch_without_host_leave_the_model() {
    // A patch with no host (suitability 0 or 0 stems) has share 0: its links weigh 0 in R and
    // in M (methods notes §1), so the model leaves them out and R is unchanged.
    let graph = build_graph(
        &[(0.0, 0.0), (100.0, 0.0), (200.0, 0.0)],
        exp_kernel(300.0),
        0.001,
    );
    assert_eq!(graph.edges.len(), 3);
    let model = RiskModel::new(&[1.0, 0.0, 3.0], &[1.0, 1.0, 1.0], &graph);
    assert_eq!(model.links.len(), 1);
    assert_eq!((model.links[0].a, model.links[0].b), (0, 2));
    assert!(model.adjacency[1].is_empty());
    assert_eq!(model.adjacency[0], vec![(2, 0)]);
    // R by hand: own terms a^2 (pi = 1) plus the one link 2 a0 a2 k(200).
    let (a0, a2) = (0.25, 0.75);
    let expected = a0 * a0 + a2 * a2 + 2.0 * a0 * a2 * (-200.0f64 / 300.0).exp();
    assert!((model.risk_before() - expected).abs() < 1e-15);
}
