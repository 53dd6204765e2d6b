//! Closed forms of the model-only sums of the sine fits (Σcos², Σt·cos·sin, Σt²·sin², ...), so that a
//! fit pass over the data needs only the four data sums Σy·cos, Σy·sin, Σt·y·cos, Σt·y·sin.
//!
//! With the centred index t = n − (N−1)/2 the index is symmetric about 0, so every odd sum vanishes
//! and the rest are the Dirichlet kernel D(θ) = Σ_t cos(θt) = sin(Nθ/2)/sin(θ/2) and its first two
//! derivatives at θ = ω and θ = 2ω (cos² = (1 + cos 2ωt)/2 and so on).

use super::sums::reduced_product;
use super::Centred;
use nalgebra::{Matrix4, Vector4};
use std::f64::consts::{PI, TAU};

/// Σ_t cos(2πφt), Σ_t t·sin(2πφt) and Σ_t t²·cos(2πφt) over the centred index of N samples.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Kernel {
    pub cos: f64,
    pub t_sin: f64,
    pub t2_cos: f64,
}

/// The kernel sums at φ cycles per sample, 0 ≤ φ ≤ 1.
pub(crate) fn kernel(samples: usize, phi: f64) -> Kernel {
    let n = samples as f64;
    let t2 = n * (n * n - 1.0) / 12.0;
    // sin(πφ) from the nearer end of [0, 1], so that it keeps its relative precision when small.
    let x = phi.min(1.0 - phi);
    let h = (PI * x).sin();
    let cu = if phi <= 0.5 {
        (PI * x).cos()
    } else {
        -(PI * x).cos()
    };
    if h < 1e-300 {
        // φ = 0: every cos is 1. φ = 1: cos(2πt) = (−1)^(N−1) over the half-integer or integer t.
        let sign = if phi <= 0.5 || samples % 2 == 1 {
            1.0
        } else {
            -1.0
        };
        return Kernel {
            cos: sign * n,
            t_sin: 0.0,
            t2_cos: sign * t2,
        };
    }
    // sin(Nπφ) and cos(Nπφ) with the phase reduced exactly: Nπφ = 2π·(φ·N/2).
    let (g, gc) = (TAU * reduced_product(phi, n / 2.0)).sin_cos();
    // D = g/h with u = πφ; derivatives by u, then d/dθ = (1/2)·d/du.
    let d = g / h;
    let du = (n * gc * h - g * cu) / (h * h);
    let duu = g * (1.0 - n * n) / h - 2.0 * cu * du / h;
    Kernel {
        cos: d,
        t_sin: -du / 2.0,
        t2_cos: -duu / 4.0,
    }
}

/// The model-only sums at one frequency: everything of the Gauss-Newton normal equations that does not
/// involve the data.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct ModelSums {
    pub n: f64,
    /// Σcos², Σsin², Σcos (Σsin and Σcos·sin vanish).
    pub cc: f64,
    pub ss: f64,
    pub c: f64,
    /// Σt·sin, Σt·cos·sin (Σt·cos, Σt·cos², Σt·sin² vanish).
    pub ts: f64,
    pub tcs: f64,
    /// Σt²·cos², Σt²·sin² (Σt²·cos·sin vanishes).
    pub ttcc: f64,
    pub ttss: f64,
}

impl ModelSums {
    /// The sums for N samples at `cycles_per_sample` (0 < f < 0.5).
    pub fn new(samples: usize, cycles_per_sample: f64) -> ModelSums {
        let n = samples as f64;
        let t2 = n * (n * n - 1.0) / 12.0;
        let k1 = kernel(samples, cycles_per_sample);
        let k2 = kernel(samples, 2.0 * cycles_per_sample);
        ModelSums {
            n,
            cc: (n + k2.cos) / 2.0,
            ss: (n - k2.cos) / 2.0,
            c: k1.cos,
            ts: k1.t_sin,
            tcs: k2.t_sin / 2.0,
            ttcc: (t2 + k2.t2_cos) / 2.0,
            ttss: (t2 - k2.t2_cos) / 2.0,
        }
    }

    /// JᵀJ of the columns (cos, sin, 1, ∂/∂ω) at the model `p`; ∂/∂ω = t·(b·cos − a·sin).
    pub fn normal_matrix(&self, p: &Centred) -> Matrix4<f64> {
        let (a, b) = (p.a, p.b);
        let cd = -a * self.tcs;
        let sd = b * self.tcs;
        let d = -a * self.ts;
        let dd = b * b * self.ttcc + a * a * self.ttss;
        Matrix4::new(
            self.cc, 0.0, self.c, cd, //
            0.0, self.ss, 0.0, sd, //
            self.c, 0.0, self.n, d, //
            cd, sd, d, dd,
        )
    }

    /// Jᵀr from the data sums [Σy, Σy·cos, Σy·sin, Σt·y·cos, Σt·y·sin] at the model `p`: each residual
    /// sum is the data sum minus the model's own, which the closed forms give.
    pub fn gradient_from_data(&self, p: &Centred, data: &[f64; 5]) -> Vector4<f64> {
        let (a, b, c0) = (p.a, p.b, p.c);
        let [y1, yc, ys, ytc, yts] = *data;
        let rc = yc - a * self.cc - c0 * self.c;
        let rs = ys - b * self.ss;
        let r = y1 - a * self.c - c0 * self.n;
        let rtc = ytc - b * self.tcs;
        let rts = yts - a * self.tcs - c0 * self.ts;
        Vector4::new(rc, rs, r, b * rtc - a * rts)
    }
}

/// The Gauss-Newton step from JᵀJ `m` and Jᵀr `g` (a, b, c, ω in rad/sample), or `None` when the system
/// is singular. Jacobi scaling keeps Cholesky accurate although the ω column is ~N·A larger than the
/// others.
pub(crate) fn solve_step(m: &Matrix4<f64>, g: &Vector4<f64>) -> Option<Vector4<f64>> {
    let scale = Vector4::from_fn(|i, _| 1.0 / m[(i, i)].sqrt());
    if scale.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let ms = Matrix4::from_fn(|i, j| m[(i, j)] * scale[i] * scale[j]);
    let gs = g.component_mul(&scale);
    let step = ms.cholesky()?.solve(&gs).component_mul(&scale);
    step.iter().all(|v| v.is_finite()).then_some(step)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Slow, obvious reference: the sums taken term by term over the centred index.
    fn direct(samples: usize, phi: f64) -> Kernel {
        let centre = (samples as f64 - 1.0) / 2.0;
        let mut k = Kernel {
            cos: 0.0,
            t_sin: 0.0,
            t2_cos: 0.0,
        };
        for i in 0..samples {
            let t = i as f64 - centre;
            let (s, c) = (TAU * phi * t).sin_cos();
            k.cos += c;
            k.t_sin += t * s;
            k.t2_cos += t * t * c;
        }
        k
    }

    #[test]
    fn kernel_matches_direct_sums() {
        for &n in &[64usize, 65, 1000, 4097, 65536] {
            let nf = n as f64;
            let t2 = nf * (nf * nf - 1.0) / 12.0;
            let scale1 = nf * nf;
            for &phi in &[
                0.0,
                1.0 / nf,
                2.5 / nf,
                0.123456,
                0.25,
                0.5,
                0.77,
                1.0 - 1.0 / nf,
                1.0 - 3.3 / nf,
                1.0,
            ] {
                let got = kernel(n, phi);
                let want = direct(n, phi);
                assert!((got.cos - want.cos).abs() < 1e-9 * nf, "n={n} φ={phi} cos");
                assert!(
                    (got.t_sin - want.t_sin).abs() < 1e-9 * scale1,
                    "n={n} φ={phi} t_sin {} vs {}",
                    got.t_sin,
                    want.t_sin
                );
                assert!(
                    (got.t2_cos - want.t2_cos).abs() < 1e-9 * t2,
                    "n={n} φ={phi} t2_cos {} vs {}",
                    got.t2_cos,
                    want.t2_cos
                );
            }
        }
    }

    // The normal matrix from the closed forms must equal JᵀJ built column by column (dense reference).
    #[test]
    fn normal_matrix_matches_dense_jacobian() {
        let n = 777;
        let p = Centred {
            a: 1200.0,
            b: -350.0,
            c: 4.0,
            cycles_per_sample: 0.0917,
        };
        let centre = (n as f64 - 1.0) / 2.0;
        let mut m = Matrix4::<f64>::zeros();
        for i in 0..n {
            let t = i as f64 - centre;
            let (s, c) = (TAU * p.cycles_per_sample * t).sin_cos();
            let j = Vector4::new(c, s, 1.0, t * (p.b * c - p.a * s));
            m += j * j.transpose();
        }
        let got = ModelSums::new(n, p.cycles_per_sample).normal_matrix(&p);
        for r in 0..4 {
            for c in 0..4 {
                let tol = 1e-10 * (m[(r, r)] * m[(c, c)]).sqrt();
                assert!(
                    (got[(r, c)] - m[(r, c)]).abs() < tol,
                    "({r},{c}) {} vs {}",
                    got[(r, c)],
                    m[(r, c)]
                );
            }
        }
    }
}
