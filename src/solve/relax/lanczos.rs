//! The smallest eigenvalue of a sparse symmetric matrix by Lanczos with full
//! reorthogonalisation (Lanczos 1950, from memory), and the tridiagonal eigenproblem it reduces
//! to; the convex reformulation's shift per component comes from it (see `convex`).

/// The smallest eigenvalue of a symmetric sparse matrix (diagonal `diag`, off-diagonal entries
/// (i, j, v) each listed once) as (Ritz value, residual norm ||A y - theta y||), by Lanczos
/// with full reorthogonalisation from a fixed pseudo-random start.
pub fn smallest_eigenvalue(diag: &[f64], off: &[(usize, usize, f64)]) -> (f64, f64) {
    let n = diag.len();
    if n == 0 {
        return (0.0, 0.0);
    }
    if n == 1 {
        return (diag[0], 0.0);
    }
    let multiply = |v: &[f64], out: &mut [f64]| {
        for i in 0..n {
            out[i] = diag[i] * v[i];
        }
        for &(i, j, a) in off {
            out[i] += a * v[j];
            out[j] += a * v[i];
        }
    };
    let max_steps = n.min(400);
    let mut rng = crate::core::rng::SplitMix::new(0x5eed);
    let mut v: Vec<f64> = (0..n).map(|_| rng.unit() - 0.5).collect();
    let norm = dot(&v, &v).sqrt();
    v.iter_mut().for_each(|x| *x /= norm);
    let mut basis: Vec<Vec<f64>> = vec![v];
    let (mut alpha, mut beta): (Vec<f64>, Vec<f64>) = (Vec::new(), Vec::new());
    let mut w = vec![0.0; n];
    loop {
        let k = basis.len() - 1;
        multiply(&basis[k], &mut w);
        let a = dot(&w, &basis[k]);
        alpha.push(a);
        // Full reorthogonalisation, twice ("twice is enough").
        for _ in 0..2 {
            for q in &basis {
                let c = dot(&w, q);
                w.iter_mut().zip(q).for_each(|(x, y)| *x -= c * y);
            }
        }
        let b = dot(&w, &w).sqrt();
        let steps = alpha.len();
        let check = steps == max_steps || b <= 1e-12 || steps % 10 == 0;
        if check {
            let theta = tridiagonal_smallest(&alpha, &beta);
            let y = tridiagonal_vector(&alpha, &beta, theta);
            let residual = b * y.last().copied().unwrap_or(0.0).abs();
            if steps == max_steps || b <= 1e-12 || residual <= 1e-9 {
                if residual > 1e-9 && steps == max_steps {
                    // Not converged: compute the true residual of the Ritz vector.
                    let mut ritz = vec![0.0; n];
                    for (c, q) in y.iter().zip(&basis) {
                        ritz.iter_mut().zip(q).for_each(|(x, v)| *x += c * v);
                    }
                    let mut out = vec![0.0; n];
                    multiply(&ritz, &mut out);
                    let r = out
                        .iter()
                        .zip(&ritz)
                        .map(|(o, x)| (o - theta * x).powi(2))
                        .sum::<f64>()
                        .sqrt();
                    return (theta, r);
                }
                return (theta, residual);
            }
        }
        beta.push(b);
        let next: Vec<f64> = w.iter().map(|x| x / b).collect();
        basis.push(next);
    }
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Smallest eigenvalue of the symmetric tridiagonal matrix (diagonal `a`, off-diagonal `b`)
/// by Sturm-sequence bisection to machine precision.
fn tridiagonal_smallest(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len();
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for i in 0..n {
        let r = if i > 0 { b[i - 1].abs() } else { 0.0 } + if i < n - 1 { b[i].abs() } else { 0.0 };
        lo = lo.min(a[i] - r);
        hi = hi.max(a[i] + r);
    }
    // Number of eigenvalues below x.
    let below = |x: f64| {
        let mut count = 0;
        let mut d = 1.0;
        for i in 0..n {
            let off = if i > 0 { b[i - 1] * b[i - 1] } else { 0.0 };
            d = a[i] - x - if i > 0 { off / d } else { 0.0 };
            if d == 0.0 {
                d = -1e-300;
            }
            if d < 0.0 {
                count += 1;
            }
        }
        count
    };
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mid <= lo || mid >= hi {
            break;
        }
        if below(mid) >= 1 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    lo
}

/// Unit eigenvector of the tridiagonal matrix for eigenvalue `theta`, by inverse iteration.
fn tridiagonal_vector(a: &[f64], b: &[f64], theta: f64) -> Vec<f64> {
    let n = a.len();
    let scale = a.iter().chain(b).fold(1e-300_f64, |m, x| m.max(x.abs()));
    let shift = theta - 1e-10 * scale;
    let mut y = vec![1.0; n];
    for _ in 0..3 {
        // Solve (T - shift I) z = y by the Thomas algorithm (no pivoting; the shift keeps the
        // matrix positive definite up to rounding).
        let mut c = vec![0.0; n];
        let mut d = vec![0.0; n];
        let mut denom = a[0] - shift;
        if denom.abs() < 1e-300 {
            denom = 1e-300;
        }
        c[0] = if n > 1 { b[0] / denom } else { 0.0 };
        d[0] = y[0] / denom;
        for i in 1..n {
            let mut m = a[i] - shift - b[i - 1] * c[i - 1];
            if m.abs() < 1e-300 {
                m = 1e-300;
            }
            c[i] = if i < n - 1 { b[i] / m } else { 0.0 };
            d[i] = (y[i] - b[i - 1] * d[i - 1]) / m;
        }
        let mut z = vec![0.0; n];
        z[n - 1] = d[n - 1];
        for i in (0..n - 1).rev() {
            z[i] = d[i] - c[i] * z[i + 1];
        }
        let norm = dot(&z, &z).sqrt();
        if !norm.is_finite() || norm == 0.0 {
            break;
        }
        y = z.iter().map(|v| v / norm).collect();
    }
    y
}
