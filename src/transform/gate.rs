//! Time gating: keep one part of the time response and return the sweep it alone would give.
//!
//! Method: the (unwindowed) sweep is zero-padded to `padding * N` (2-3-5 size) and inverse-transformed to a
//! periodic time response on 0..1/df (e^{+j}, unnormalised), multiplied by the gate shape (a window of the
//! family in [`Window`], stretched over the gate span), transformed back, and the first N bins are the gated
//! sweep on the original grid. Gating in time is a convolution in frequency, so near the band edges the
//! kernel runs off the measured band and the gated response comes back low (about 6 dB at the very edge).
//! Edge correction: divide by the gated response of a unit reflection at the gate centre (the same
//! convolution applied to a flat spectrum), which restores a reflection inside the gate to its true value
//! across the whole band. Renormalising gated data by the gated response of a unit spectrum is described in
//! J. Dunsmore, Handbook of Microwave Component Measurements, Wiley 2012, chapter on time-domain transforms
//! (from memory; section not verified).
//!
//! Work: the sweep's padded time response does not depend on the gate, so a [`GateSource`] keeps it for
//! every gate put on the same sweep; the gate shape is zero outside its span, so it is evaluated there
//! only; and the unit reflection's time response is a Dirichlet kernel, written in closed form on the span
//! (sum_{k<N} e^{j k theta} = e^{j (N-1) theta / 2} sin(N theta / 2) / sin(theta / 2), the geometric
//! series). A gate then costs two forward transforms (the gated sweep and the gated unit reflection).

use super::czt::{cis_cycles, fast_len, phasors, FftCache};
use super::plan::uniform_grid;
use super::{TransformError, Window};
use crate::Warning;
use num_complex::Complex64;
use std::f64::consts::PI;

/// A time gate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GatePlan {
    /// Gate start and stop, round-trip seconds.
    pub start_s: f64,
    pub stop_s: f64,
    pub shape: Window,
    /// Zero-padding factor of the transform (>= 1).
    pub padding: usize,
    /// Apply the edge correction (on by default).
    pub correct_edges: bool,
}

impl GatePlan {
    pub fn new(start_s: f64, stop_s: f64) -> Self {
        GatePlan {
            start_s,
            stop_s,
            shape: Window::Kaiser { beta: 6.0 },
            padding: 4,
            correct_edges: true,
        }
    }
}

/// A gated sweep on the original frequency grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Gated {
    pub values: Vec<Complex64>,
    pub warnings: Vec<Warning>,
}

/// Most padding a gate takes.
pub const MAX_GATE_PADDING: usize = 64;

/// One sweep ready to be gated any number of times: its uniform grid and its zero-padded periodic time
/// response (e^{+j}, unnormalised) for one padding factor.
#[derive(Debug, Clone)]
pub struct GateSource {
    step_hz: f64,
    /// Points of the sweep.
    points: usize,
    padding: usize,
    /// The padded time response, `fast_len(padding * points)` samples over 0..1/df.
    time: Vec<Complex64>,
}

impl GateSource {
    /// Transform `values` on `freqs` (a uniform grid) for gates of padding `padding`.
    pub fn new(
        freqs: &[f64],
        values: &[Complex64],
        padding: usize,
        cache: &mut FftCache,
    ) -> Result<Self, TransformError> {
        if freqs.len() != values.len() {
            return Err(TransformError::LengthMismatch {
                freqs: freqs.len(),
                values: values.len(),
            });
        }
        let grid = uniform_grid(freqs)?;
        if padding == 0 || padding > MAX_GATE_PADDING {
            return Err(TransformError::Invalid(format!(
                "gate padding {padding} is out of range; give 1 to {MAX_GATE_PADDING}"
            )));
        }
        let n = values.len();
        let mut time = values.to_vec();
        time.resize(fast_len(padding * n), Complex64::new(0.0, 0.0));
        cache.inverse_in_place(&mut time);
        Ok(GateSource {
            step_hz: grid.step_hz,
            points: n,
            padding,
            time,
        })
    }

    /// The gate's samples for `plan`: each (m, w) with the shape's weight w != 0 at sample m of the padded
    /// record, after checking the plan against the record; and the warnings the plan earns.
    fn samples(&self, plan: &GatePlan) -> Result<(Vec<GateSample>, Vec<Warning>), TransformError> {
        let period = 1.0 / self.step_hz;
        if !(plan.start_s >= 0.0 && plan.stop_s > plan.start_s && plan.stop_s <= period) {
            return Err(TransformError::Invalid(format!(
                "gate {:.6e} s..{:.6e} s must satisfy 0 <= start < stop <= {:.6e} s (the alias-free time 1/df); \
                 give a gate inside the alias-free range",
                plan.start_s, plan.stop_s, period
            )));
        }
        if plan.padding != self.padding {
            return Err(TransformError::Invalid(format!(
                "gate padding {} differs from the {} the sweep was prepared for; prepare it again",
                plan.padding, self.padding
            )));
        }
        let len = self.time.len();
        let dt = period / len as f64;
        let width = plan.stop_s - plan.start_s;
        // Every m whose place falls in [start, stop] (the shape is 0 outside), with a sample of margin
        // either side so that rounding at the ends cannot drop one.
        let first = ((plan.start_s / dt).floor() as usize).saturating_sub(1);
        let last = ((plan.stop_s / dt).ceil() as usize + 1).min(len - 1);
        let weights: Vec<GateSample> = (first..=last)
            .map(|m| (m, plan.shape.value((m as f64 * dt - plan.start_s) / width)))
            .filter(|&(_, w)| w != 0.0)
            .collect();
        let mut warnings = Vec::new();
        let resolution =
            plan.shape.figures().mainlobe_6db_bins / (self.step_hz * self.points as f64);
        if width < 2.0 * resolution {
            warnings.push(Warning::new(
                "gate-narrow",
                format!(
                    "the gate ({width:.4e} s) is narrower than twice the resolution ({resolution:.4e} s); it cuts \
                     into the response it keeps"
                ),
                "widen the gate, or measure over a wider band",
            ));
        }
        Ok((weights, warnings))
    }

    /// The unit reflection at the gate's centre, as the padded record holds it at sample `m`: the
    /// Dirichlet kernel of the sweep's points.
    fn unit_time(&self, plan: &GatePlan, m: usize) -> Complex64 {
        let centre = 0.5 * (plan.start_s + plan.stop_s);
        dirichlet(
            self.points,
            m as f64 / self.time.len() as f64 - self.step_hz * centre,
        )
    }

    /// The sweep gated by `plan` (whose padding must be this source's).
    pub fn gate(&self, plan: &GatePlan, cache: &mut FftCache) -> Result<Gated, TransformError> {
        let (weights, warnings) = self.samples(plan)?;
        let n = self.points;
        let len = self.time.len();
        let mut gated = back_to_sweep(&weights, |m| self.time[m], len, n, cache);
        if plan.correct_edges {
            let unit_gated = back_to_sweep(&weights, |m| self.unit_time(plan, m), len, n, cache);
            let centre = 0.5 * (plan.start_s + plan.stop_s);
            // The unit reflection at the centre, e^{-j 2 pi k df centre}.
            for ((g, u), ug) in gated
                .iter_mut()
                .zip(phasors(0.0, self.step_hz, -centre))
                .zip(&unit_gated)
            {
                *g *= u / ug;
            }
        }
        Ok(Gated {
            values: gated,
            warnings,
        })
    }

    /// [`Self::gate`]'s values at the bins `bins` only, by direct sums over the gate's samples: for a few
    /// bins far less work than the transforms, and the same values to rounding.
    pub fn gate_bins(
        &self,
        plan: &GatePlan,
        bins: std::ops::Range<usize>,
    ) -> Result<Vec<Complex64>, TransformError> {
        let bins = bins.start.min(self.points)..bins.end.min(self.points);
        self.gate_every(plan, bins.start, 1, bins.len())
    }

    /// [`Self::gate`]'s values at the `count` bins `first`, `first + stride`, ... (those below the sweep's
    /// point count), by direct sums over the gate's samples, as [`Self::gate_bins`]: a gated sweep read on
    /// a coarser grid than it was measured on costs the gate's samples times the bins read, where the
    /// transforms cost the padded record's length times its logarithm, twice.
    pub fn gate_every(
        &self,
        plan: &GatePlan,
        first: usize,
        stride: usize,
        count: usize,
    ) -> Result<Vec<Complex64>, TransformError> {
        let (weights, _) = self.samples(plan)?;
        let len = self.time.len();
        let stride = stride.max(1);
        let count = if first >= self.points {
            0
        } else {
            count.min((self.points - 1 - first) / stride + 1)
        };
        // Each bin's value is a polynomial in its rotation z_k = e^{-j 2 pi k / len} over the gate's
        // consecutive samples m = m0, m0 + 1, ...: sum_i x_{m0+i} z_k^i, times z_k^{m0}. Horner's rule from
        // the last sample down, every bin at once (a multiply-add per bin and sample, bins side by side in
        // separate real and imaginary arrays so that the pass vectorises), the sweep's samples and the unit
        // reflection's together.
        let (m0, m1) = match (weights.first(), weights.last()) {
            (Some(a), Some(b)) => (a.0, b.0),
            _ => return Ok(vec![Complex64::new(0.0, 0.0); count]),
        };
        let bin = |i: usize| first + i * stride;
        let (zr, zi): (Vec<f64>, Vec<f64>) = (0..count)
            .map(|i| {
                let z = cis_cycles(-((bin(i) % len) as f64) / len as f64);
                (z.re, z.im)
            })
            .unzip();
        let edges = plan.correct_edges;
        let mut w_at = vec![0.0; m1 - m0 + 1];
        for &(m, w) in &weights {
            w_at[m - m0] = w;
        }
        let (mut ar, mut ai) = (vec![0.0; count], vec![0.0; count]);
        let (mut ur, mut ui) = (vec![0.0; count], vec![0.0; count]);
        for m in (m0..=m1).rev() {
            let w = w_at[m - m0];
            let x = self.time[m] * w;
            let u = if edges {
                self.unit_time(plan, m) * w
            } else {
                Complex64::new(0.0, 0.0)
            };
            horner_step(&mut ar, &mut ai, &zr, &zi, x);
            if edges {
                horner_step(&mut ur, &mut ui, &zr, &zi, u);
            }
        }
        let s = 1.0 / len as f64;
        let centre = 0.5 * (plan.start_s + plan.stop_s);
        Ok((0..count)
            .map(|i| {
                let k = bin(i);
                // z_k^{m0} exactly, and the normalisation.
                let lead = cis_cycles(-(((k * m0) % len) as f64) / len as f64) * s;
                let g = Complex64::new(ar[i], ai[i]) * lead;
                if edges {
                    let ug = Complex64::new(ur[i], ui[i]) * lead;
                    g * cis_cycles(-(k as f64) * self.step_hz * centre) / ug
                } else {
                    g
                }
            })
            .collect())
    }
}

/// One step of Horner's rule at every bin: a_i <- a_i z_i + x, the complex numbers in separate real and
/// imaginary arrays.
#[inline]
fn horner_step(ar: &mut [f64], ai: &mut [f64], zr: &[f64], zi: &[f64], x: Complex64) {
    for (((r, i), &a), &b) in ar.iter_mut().zip(ai.iter_mut()).zip(zr).zip(zi) {
        let (pr, pi) = (*r * a - *i * b, *r * b + *i * a);
        *r = pr + x.re;
        *i = pi + x.im;
    }
}

/// One sample of a gate: its index in the padded record and the gate shape's weight there.
type GateSample = (usize, f64);

/// The first `n` bins of the forward transform of a time response that is `time(m) w` at the gate's
/// samples `(m, w)` and zero elsewhere, over `len` samples, normalised by `len`.
fn back_to_sweep(
    weights: &[GateSample],
    time: impl Fn(usize) -> Complex64,
    len: usize,
    n: usize,
    cache: &mut FftCache,
) -> Vec<Complex64> {
    let mut buf = vec![Complex64::new(0.0, 0.0); len];
    for &(m, w) in weights {
        buf[m] = time(m) * w;
    }
    cache.forward_in_place(&mut buf);
    let s = 1.0 / len as f64;
    buf.truncate(n);
    buf.iter_mut().for_each(|b| *b *= s);
    buf
}

/// sum_{k=0}^{n-1} e^{+j 2 pi k x}: the periodic time response (unnormalised) of a flat n-point spectrum,
/// in closed form e^{j (n-1) theta / 2} sin(n theta / 2) / sin(theta / 2) with theta = 2 pi x, x reduced to
/// the nearest whole number of cycles first (the sum has period 1 in x).
pub fn dirichlet(n: usize, x: f64) -> Complex64 {
    let r = x - x.round();
    let half = PI * r;
    let s = half.sin();
    let nf = n as f64;
    let amplitude = if s.abs() < 1e-300 {
        nf
    } else {
        (nf * half).sin() / s
    };
    Complex64::from_polar(amplitude, (nf - 1.0) * half)
}

/// Gate `values` on `freqs` with `plan`, reusing `cache`'s FFT plans.
pub fn gate_with(
    freqs: &[f64],
    values: &[Complex64],
    plan: &GatePlan,
    cache: &mut FftCache,
) -> Result<Gated, TransformError> {
    GateSource::new(freqs, values, plan.padding, cache)?.gate(plan, cache)
}

/// Gate `values` on `freqs` with `plan` (fresh FFT plans).
pub fn gate(freqs: &[f64], values: &[Complex64], plan: &GatePlan) -> Result<Gated, TransformError> {
    gate_with(freqs, values, plan, &mut FftCache::new())
}
