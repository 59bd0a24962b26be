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

use super::czt::{cis_cycles, fast_len, FftCache};
use super::plan::uniform_grid;
use super::{TransformError, Window};
use crate::Warning;
use num_complex::Complex64;

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

fn gate_once(
    values: &[Complex64],
    weights: &[f64],
    len: usize,
    cache: &mut FftCache,
) -> Vec<Complex64> {
    let mut buf = values.to_vec();
    buf.resize(len, Complex64::new(0.0, 0.0));
    cache.inverse_in_place(&mut buf);
    for (b, w) in buf.iter_mut().zip(weights) {
        *b *= *w;
    }
    cache.forward_in_place(&mut buf);
    let s = 1.0 / len as f64;
    buf.truncate(values.len());
    buf.iter_mut().for_each(|b| *b *= s);
    buf
}

/// Gate `values` on `freqs` with `plan`, reusing `cache`'s FFT plans.
pub fn gate_with(
    freqs: &[f64],
    values: &[Complex64],
    plan: &GatePlan,
    cache: &mut FftCache,
) -> Result<Gated, TransformError> {
    if freqs.len() != values.len() {
        return Err(TransformError::LengthMismatch {
            freqs: freqs.len(),
            values: values.len(),
        });
    }
    let grid = uniform_grid(freqs)?;
    let period = 1.0 / grid.step_hz;
    if !(plan.start_s >= 0.0 && plan.stop_s > plan.start_s && plan.stop_s <= period) {
        return Err(TransformError::Invalid(format!(
            "gate {:.6e} s..{:.6e} s must satisfy 0 <= start < stop <= {:.6e} s (the alias-free time 1/df); \
             give a gate inside the alias-free range",
            plan.start_s, plan.stop_s, period
        )));
    }
    if plan.padding == 0 || plan.padding > 64 {
        return Err(TransformError::Invalid(format!(
            "gate padding {} is out of range; give 1 to 64",
            plan.padding
        )));
    }
    let n = values.len();
    let len = fast_len(plan.padding * n);
    let dt = period / len as f64;
    let width = plan.stop_s - plan.start_s;
    let weights: Vec<f64> = (0..len)
        .map(|m| plan.shape.value((m as f64 * dt - plan.start_s) / width))
        .collect();
    let mut warnings = Vec::new();
    let resolution = plan.shape.figures().mainlobe_6db_bins / (grid.step_hz * n as f64);
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
    let mut gated = gate_once(values, &weights, len, cache);
    if plan.correct_edges {
        let centre = 0.5 * (plan.start_s + plan.stop_s);
        let unit: Vec<Complex64> = (0..n)
            .map(|k| cis_cycles(-(k as f64) * grid.step_hz * centre))
            .collect();
        let unit_gated = gate_once(&unit, &weights, len, cache);
        for ((g, u), ug) in gated.iter_mut().zip(&unit).zip(&unit_gated) {
            *g *= u / ug;
        }
    }
    Ok(Gated {
        values: gated,
        warnings,
    })
}

/// Gate `values` on `freqs` with `plan` (fresh FFT plans).
pub fn gate(freqs: &[f64], values: &[Complex64], plan: &GatePlan) -> Result<Gated, TransformError> {
    gate_with(freqs, values, plan, &mut FftCache::new())
}
