//! Band-pass time response on any uniform grid f_n = f0 + n df:
//! `h(t) = sum_n W_n G_n e^{+j 2 pi f_n t} / sum_n W_n`.
//!
//! Normalisation: a single reflection rho at round-trip delay tau, G_n = rho e^{-j 2 pi f_n tau}, gives
//! h(tau) = rho exactly, whatever the window and the padding; the band-pass peak is |rho|. The envelope has no
//! sign (the carrier phase e^{j 2 pi f0 t} is kept in the complex value).

use super::czt::{cis_cycles, direct_sum, FftCache};
use super::plan::{Grid, TimeAxis};
use super::Window;
use num_complex::Complex64;

/// A windowed, normalised band-pass spectrum ready to be evaluated at any time.
#[derive(Debug, Clone)]
pub struct BandPassSpectrum {
    pub start_hz: f64,
    pub step_hz: f64,
    /// W_n G_n / sum W.
    pub weighted: Vec<Complex64>,
}

impl BandPassSpectrum {
    pub fn new(grid: &Grid, values: &[Complex64], window: &Window) -> Self {
        Self::with_coefficients(grid, values, &window.coefficients(values.len()))
    }

    /// As [`BandPassSpectrum::new`] with the window's `values.len()` coefficients given.
    pub fn with_coefficients(grid: &Grid, values: &[Complex64], w: &[f64]) -> Self {
        assert_eq!(
            w.len(),
            values.len(),
            "window length {} for {} values",
            w.len(),
            values.len()
        );
        let sum: f64 = w.iter().sum();
        let weighted = values
            .iter()
            .zip(w)
            .map(|(g, &wn)| g * (wn / sum))
            .collect();
        BandPassSpectrum {
            start_hz: grid.start_hz,
            step_hz: grid.step_hz,
            weighted,
        }
    }

    /// h(t) by the direct sum (O(N)); used for sub-bin refinement.
    pub fn eval(&self, t: f64) -> Complex64 {
        direct_sum(&self.weighted, self.start_hz, self.step_hz, t)
    }

    /// h(t) and its first two time derivatives with the carrier at the band's centre taken out:
    /// `[g, g', g'']` for `g(t) = h(t) e^{-j 2 pi f_c t}` (so |g| = |h|), in one O(N) pass over the
    /// phasors of [`super::czt::turned`]. Sub-bin peak refinement steps on these (Newton on |h|^2).
    pub fn eval_derivatives(&self, t: f64) -> [Complex64; 3] {
        use super::czt::{turned, TURN_LANES};
        let n = self.weighted.len();
        let fc = self.start_hz + 0.5 * (n.saturating_sub(1)) as f64 * self.step_hz;
        let two_pi = 2.0 * std::f64::consts::PI;
        // With z_k = x_k e^{j 2 pi f_k t} and w_k = 2 pi (f_k - f_c): g = sum z, g' = j sum w z and
        // g'' = -sum w^2 z (d/dt multiplies by j w each time), before the carrier is taken out.
        let (w0, dw) = (two_pi * (self.start_hz - fc), two_pi * self.step_hz);
        let zero = Complex64::new(0.0, 0.0);
        let (mut s0, mut s1, mut s2) = ([zero; TURN_LANES], [zero; TURN_LANES], [zero; TURN_LANES]);
        turned(&self.weighted, self.start_hz, self.step_hz, t, |r, k, z| {
            let w = w0 + k as f64 * dw;
            let wz = z * w;
            s0[r] += z;
            s1[r] += wz;
            s2[r] += wz * w;
        });
        let sum = |s: [Complex64; TURN_LANES]| (s[0] + s[1]) + (s[2] + s[3]);
        let (a, b, c) = (sum(s0), sum(s1), sum(s2));
        let carrier = cis_cycles(-fc * t);
        [
            a * carrier,
            Complex64::new(-b.im, b.re) * carrier,
            -c * carrier,
        ]
    }

    /// h(t) on a time axis: FFT for the whole range, chirp-z for a span.
    pub fn on_axis(&self, axis: &TimeAxis, cache: &mut FftCache) -> Vec<Complex64> {
        self.on_axis_into(axis, cache, Vec::new())
    }

    /// As [`BandPassSpectrum::on_axis`], reusing `buf`'s allocation for the whole-range FFT.
    pub fn on_axis_into(
        &self,
        axis: &TimeAxis,
        cache: &mut FftCache,
        mut buf: Vec<Complex64>,
    ) -> Vec<Complex64> {
        let n = self.weighted.len();
        let mut out = match axis.fft_len {
            Some(len) => {
                buf.clear();
                buf.resize(len, Complex64::new(0.0, 0.0));
                buf[..n].copy_from_slice(&self.weighted);
                cache.inverse_in_place(&mut buf);
                buf
            }
            None => {
                let plan = cache.chirp_z(
                    n,
                    axis.points,
                    self.step_hz * axis.start_s,
                    self.step_hz * axis.step_s,
                );
                cache.apply(&plan, &self.weighted)
            }
        };
        // Carrier e^{+j 2 pi f0 t_m} by recurrence, re-anchored every 64 points (saves a sin/cos per point).
        let rot = cis_cycles(self.start_hz * axis.step_s);
        let mut carrier = Complex64::new(1.0, 0.0);
        for (m, v) in out.iter_mut().enumerate() {
            if m % 64 == 0 {
                carrier = cis_cycles(self.start_hz * (axis.start_s + m as f64 * axis.step_s));
            }
            *v *= carrier;
            carrier *= rot;
        }
        out
    }
}
