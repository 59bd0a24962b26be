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
    /// [`super::czt::phasors`]. Sub-bin peak refinement steps on these (Newton on |h|^2).
    pub fn eval_derivatives(&self, t: f64) -> [Complex64; 3] {
        let n = self.weighted.len();
        let fc = self.start_hz + 0.5 * (n.saturating_sub(1)) as f64 * self.step_hz;
        let mut s = [Complex64::new(0.0, 0.0); 3];
        for (k, (x, p)) in self
            .weighted
            .iter()
            .zip(super::czt::phasors(self.start_hz, self.step_hz, t))
            .enumerate()
        {
            let w = 2.0 * std::f64::consts::PI * (self.start_hz + k as f64 * self.step_hz - fc);
            let z = x * p;
            // d/dt multiplies by j w each time.
            let z1 = Complex64::new(-z.im * w, z.re * w);
            s[0] += z;
            s[1] += z1;
            s[2] += Complex64::new(-z1.im * w, z1.re * w);
        }
        let carrier = cis_cycles(-fc * t);
        [s[0] * carrier, s[1] * carrier, s[2] * carrier]
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
