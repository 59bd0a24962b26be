//! Low-pass impulse and step responses on a harmonic grid f_k = k df, k = 0..K.
//!
//! Gamma(0) is estimated (see [`super::DcMethod`]); the spectrum is extended to negative frequencies by
//! Hermitian symmetry G(-f) = conj G(f), so the responses are real and keep their sign. The window is the
//! symmetric window of length 2K + 1 centred on DC (W_0 = 1).
//!
//! Impulse: `h(t) = sum_{k=-K}^{K} W_k G_k e^{+j 2 pi k df t} / sum_k W_k`; a reflection rho at delay tau
//! gives h(tau) = rho exactly.
//! Step: the exact integral from t = 0 of the band-limited impulse density `df sum_k W_k G_k e^{...}`:
//! `s(t) = W_0 G_0 df t + 2 Re sum_{k=1}^{K} W_k G_k (e^{+j 2 pi k df t} - 1) / (j 2 pi k)`; a reflection rho
//! at tau steps from 0 to rho (W_0 = 1) near tau.
//!
//! DC estimate (even quadratic): Hermitian symmetry makes Re G even and Im G odd in f, so the lowest-order
//! model through the two lowest points f1 < f2 is Re G = a + b f^2, Im G(0) = 0:
//! `a = (f2^2 Re G1 - f1^2 Re G2) / (f2^2 - f1^2)`. Extrapolating Gamma(0) from the lowest measured points
//! goes back to Hines and Stinehelfer (IEEE T-MTT 22(3):276-282, 1974; from memory as to the exact form used
//! there); the even-polynomial form follows from the symmetry. Missing low points k >= 1 after resampling are
//! filled with the same model, Im G = c f + d f^3 (odd).
//!
//! Resampling (only when asked): each point of f_k = k df', df' = f_max / round(f_max / df), is interpolated
//! between its two measured neighbours in polar form: magnitude linearly, phase along the shorter arc
//! (exact for one echo whose phase turns less than pi per measured step, i.e. inside half the alias-free
//! range; close for a dominant echo). Points below the first measured frequency use the low-end model
//! above. A warning is always attached.

use super::czt::{direct_sum, FftCache};
use super::plan::{DcMethod, Grid, TimeAxis};
use super::{TransformError, Window};
use num_complex::Complex64;
use std::f64::consts::PI;

/// A harmonic one-sided spectrum (k = 0..K) with its window, ready to evaluate.
#[derive(Debug, Clone)]
pub struct LowPassSpectrum {
    pub step_hz: f64,
    /// G_k for k = 0..=K (G_0 real).
    pub gamma: Vec<Complex64>,
    /// W_k for k = 0..=K (W_0 = 1).
    pub window: Vec<f64>,
    /// sum_{k=-K}^{K} W_k.
    pub window_sum: f64,
}

/// The two lowest points give the even-quadratic Re and odd-cubic Im low-end model.
fn low_end_model(f1: f64, g1: Complex64, f2: f64, g2: Complex64) -> impl Fn(f64) -> Complex64 {
    let d2 = f2 * f2 - f1 * f1;
    let b = (g2.re - g1.re) / d2;
    let a = g1.re - b * f1 * f1;
    let d = (g2.im / f2 - g1.im / f1) / d2;
    let c = g1.im / f1 - d * f1 * f1;
    move |f| Complex64::new(a + b * f * f, c * f + d * f * f * f)
}

impl LowPassSpectrum {
    /// Build from a sweep on `grid` with `harmonics` = K (from the plan check).
    pub fn new(
        grid: &Grid,
        values: &[Complex64],
        harmonics: usize,
        resample: bool,
        dc: DcMethod,
        window: &Window,
    ) -> Result<Self, TransformError> {
        let full = window.coefficients(2 * harmonics + 1);
        Self::with_coefficients(grid, values, harmonics, resample, dc, &full)
    }

    /// As [`LowPassSpectrum::new`] with the window's `2 K + 1` symmetric coefficients given.
    pub fn with_coefficients(
        grid: &Grid,
        values: &[Complex64],
        harmonics: usize,
        resample: bool,
        dc: DcMethod,
        full: &[f64],
    ) -> Result<Self, TransformError> {
        assert_eq!(
            full.len(),
            2 * harmonics + 1,
            "window length {} for K = {harmonics}",
            full.len()
        );
        let k_max = harmonics;
        let (df, mut gamma, measured_dc) = if !resample {
            let df = grid.step_hz;
            let k0 = grid.start_ratio().round() as usize;
            let mut g = vec![Complex64::new(0.0, 0.0); k0];
            g.extend_from_slice(values);
            g.truncate(k_max + 1);
            (df, g, k0 == 0)
        } else {
            let df = grid.stop_hz() / k_max as f64;
            let mut g = vec![Complex64::new(0.0, 0.0); k_max + 1];
            for (k, gk) in g.iter_mut().enumerate().skip(1) {
                let f = k as f64 * df;
                if f >= grid.start_hz * (1.0 - 1e-12) {
                    let x =
                        ((f - grid.start_hz) / grid.step_hz).clamp(0.0, (grid.points - 1) as f64);
                    let i = (x.floor() as usize).min(grid.points - 2);
                    let u = x - i as f64;
                    *gk = interpolate_polar(values[i], values[i + 1], u);
                }
            }
            (df, g, false)
        };
        // Fill DC (and, after resampling, the missing low points) from the two lowest real points.
        let first = gamma
            .iter()
            .enumerate()
            .skip(1)
            .position(|(k, _)| k as f64 * df >= grid.start_hz * (1.0 - 1e-12))
            .map(|p| p + 1)
            .unwrap_or(1);
        if first + 1 > k_max {
            return Err(TransformError::TooFewPoints {
                points: k_max,
                needed: 2,
            });
        }
        let model = low_end_model(
            first as f64 * df,
            gamma[first],
            (first + 1) as f64 * df,
            gamma[first + 1],
        );
        for (k, g) in gamma.iter_mut().enumerate().take(first).skip(1) {
            *g = model(k as f64 * df);
        }
        gamma[0] = match dc {
            DcMethod::Fixed(v) => Complex64::new(v, 0.0),
            DcMethod::EvenQuadratic if measured_dc => Complex64::new(values[0].re, 0.0),
            DcMethod::EvenQuadratic => Complex64::new(model(0.0).re, 0.0),
        };
        let w: Vec<f64> = full[k_max..].to_vec();
        let window_sum = w[0] + 2.0 * w[1..].iter().sum::<f64>();
        Ok(LowPassSpectrum {
            step_hz: df,
            gamma,
            window: w,
            window_sum,
        })
    }

    /// Coefficients c_k with impulse h(t) = 2 Re sum c_k e^{+j 2 pi k df t}.
    fn impulse_coefficients(&self) -> Vec<Complex64> {
        let s = 1.0 / self.window_sum;
        let mut c: Vec<Complex64> = self
            .gamma
            .iter()
            .zip(&self.window)
            .map(|(g, w)| g * (w * s))
            .collect();
        c[0] *= 0.5;
        c
    }

    /// Coefficients c_k with s(t) = G_0 W_0 df t + 2 Re sum c_k (e^{+j 2 pi k df t} - 1).
    fn step_coefficients(&self) -> Vec<Complex64> {
        let mut c: Vec<Complex64> = self
            .gamma
            .iter()
            .zip(&self.window)
            .enumerate()
            .map(|(k, (g, w))| g * *w / Complex64::new(0.0, 2.0 * PI * k as f64))
            .collect();
        c[0] = Complex64::new(0.0, 0.0);
        c
    }

    fn step_offset(&self, c: &[Complex64]) -> f64 {
        2.0 * c.iter().map(|z| z.re).sum::<f64>()
    }

    fn dc_slope(&self) -> f64 {
        self.gamma[0].re * self.window[0] * self.step_hz
    }

    /// Impulse at `t` by the direct sum.
    pub fn eval_impulse(&self, t: f64) -> f64 {
        2.0 * direct(&self.impulse_coefficients(), self.step_hz, t).re
    }

    /// Step at `t` by the direct sum.
    pub fn eval_step(&self, t: f64) -> f64 {
        let c = self.step_coefficients();
        self.dc_slope() * t + 2.0 * direct(&c, self.step_hz, t).re - self.step_offset(&c)
    }

    /// Impulse (rho per sample of the lobe peak) on an axis.
    pub fn impulse_on_axis(&self, axis: &TimeAxis, cache: &mut FftCache) -> Vec<f64> {
        let c = self.impulse_coefficients();
        evaluate(&c, self.step_hz, axis, cache)
            .into_iter()
            .map(|z| 2.0 * z.re)
            .collect()
    }

    /// Step (rho) on an axis.
    pub fn step_on_axis(&self, axis: &TimeAxis, cache: &mut FftCache) -> Vec<f64> {
        let c = self.step_coefficients();
        let off = self.step_offset(&c);
        let slope = self.dc_slope();
        evaluate(&c, self.step_hz, axis, cache)
            .into_iter()
            .enumerate()
            .map(|(m, z)| slope * (axis.start_s + m as f64 * axis.step_s) + 2.0 * z.re - off)
            .collect()
    }
}

/// Between `a` and `b` at fraction `u`: magnitude linearly, phase along the shorter arc from `a` to `b`.
/// Exact for a single echo whose phase turns less than pi per step.
pub fn interpolate_polar(a: Complex64, b: Complex64, u: f64) -> Complex64 {
    if a.norm() == 0.0 || b.norm() == 0.0 {
        return a * (1.0 - u) + b * u;
    }
    let turn = (b / a).arg();
    Complex64::from_polar(a.norm() * (1.0 - u) + b.norm() * u, a.arg() + u * turn)
}

fn direct(c: &[Complex64], df: f64, t: f64) -> Complex64 {
    direct_sum(c, 0.0, df, t)
}

fn evaluate(c: &[Complex64], df: f64, axis: &TimeAxis, cache: &mut FftCache) -> Vec<Complex64> {
    match axis.fft_len {
        Some(len) => {
            let mut buf = c.to_vec();
            buf.resize(len, Complex64::new(0.0, 0.0));
            cache.inverse_in_place(&mut buf);
            buf.truncate(axis.points);
            buf
        }
        None => {
            let plan = cache.chirp_z(c.len(), axis.points, df * axis.start_s, df * axis.step_s);
            cache.apply(&plan, c)
        }
    }
}
