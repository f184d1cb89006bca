//! Dispersal kernels: the family (a flag and scenario value) and k(d), written once for the graph,
//! the calibration likelihood and the synthetic landscapes.
//!
//! # Units
//! Distances and `alpha_m` in metres; k is dimensionless in [0, 1].

use clap::ValueEnum;

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum KernelKind {
    /// k(d) = exp(-d / alpha)
    Exp,
    /// k(d) = 1 / (1 + (d / alpha)^2)
    Cauchy,
}

impl KernelKind {
    /// The name used in flags and outputs.
    pub fn as_str(self) -> &'static str {
        match self {
            KernelKind::Exp => "exp",
            KernelKind::Cauchy => "cauchy",
        }
    }
}

/// A dispersal kernel k(d) with k(0) = 1.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Kernel {
    pub kind: KernelKind,
    pub alpha_m: f64,
}

impl Kernel {
    /// k(d): `exp` = exp(-d/alpha), `cauchy` = 1/(1+(d/alpha)^2).
    ///
    /// ```
    /// use hostcut::core::kernel::{Kernel, KernelKind};
    /// let k = Kernel { kind: KernelKind::Cauchy, alpha_m: 200.0 };
    /// assert_eq!(k.value(0.0), 1.0);
    /// assert!((k.value(200.0) - 0.5).abs() < 1e-15);
    /// assert!((k.value(k.cutoff(0.001)) - 0.001).abs() < 1e-12);
    /// ```
    pub fn value(&self, d: f64) -> f64 {
        let u = d / self.alpha_m;
        match self.kind {
            KernelKind::Exp => (-u).exp(),
            KernelKind::Cauchy => 1.0 / (1.0 + u * u),
        }
    }

    /// The distance at which k falls to `epsilon`: links are never longer.
    pub fn cutoff(&self, epsilon: f64) -> f64 {
        match self.kind {
            KernelKind::Exp => self.alpha_m * (1.0 / epsilon).ln(),
            KernelKind::Cauchy => self.alpha_m * (1.0 / epsilon - 1.0).max(0.0).sqrt(),
        }
    }
}
