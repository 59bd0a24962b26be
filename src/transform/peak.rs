//! Peaks of a trace and their sub-bin location.
//!
//! [`find_peaks`] lists local maxima of |value| (band-pass |h|, impulse |rho|; for step and impedance traces,
//! of the step's slope |d rho / dx|) above a floor, strongest first, each first placed by parabolic
//! interpolation of the log magnitude over the three bins around it. [`refine_peak`] then maximises the
//! response itself, evaluated by direct summation at any time, by golden-section search within one bin on
//! either side, to [`REFINE_TOLERANCE`] of a bin: a single reflection is placed to far better than the bin
//! spacing (the direct sum is exact, so the only limits are the window's symmetry and rounding).

use super::plan::Mode;
use super::trace::{to_db, Spectrum, Trace};
use serde::Serialize;

/// Golden-section stop, as a fraction of the bin spacing.
pub const REFINE_TOLERANCE: f64 = 1e-7;

/// A peak of a trace.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Peak {
    pub distance_m: f64,
    pub time_s: f64,
    /// Linear value at the peak: |h| (band-pass), signed rho (impulse), slope in rho per m (step modes).
    pub value: f64,
    /// 20 log10 |value| (band-pass and impulse).
    pub db: f64,
    /// Index of the nearest bin.
    pub index: usize,
}

fn feature(trace: &Trace) -> Vec<f64> {
    match trace.mode {
        Mode::BandPass | Mode::LowPassImpulse => trace.linear.iter().map(|v| v.abs()).collect(),
        Mode::LowPassStep | Mode::Impedance => {
            let n = trace.linear.len();
            (0..n)
                .map(|i| {
                    let (a, b) = (i.saturating_sub(1), (i + 1).min(n - 1));
                    let dx = trace.axis_m[b] - trace.axis_m[a];
                    if dx > 0.0 {
                        ((trace.linear[b] - trace.linear[a]) / dx).abs()
                    } else {
                        0.0
                    }
                })
                .collect()
        }
    }
}

/// Local maxima at most `below_max_db` dB under the largest, strongest first, at most `max_count`.
pub fn find_peaks(trace: &Trace, below_max_db: f64, max_count: usize) -> Vec<Peak> {
    let f = feature(trace);
    let n = f.len();
    if n < 3 {
        return Vec::new();
    }
    let top = f.iter().cloned().fold(0.0_f64, f64::max);
    if top <= 0.0 {
        return Vec::new();
    }
    let floor = top * 10f64.powf(-below_max_db.abs() / 20.0);
    let mut peaks: Vec<Peak> = (1..n - 1)
        .filter(|&i| f[i] >= floor && f[i] > f[i - 1] && f[i] >= f[i + 1])
        .map(|i| {
            let (a, b, c) = (to_db(f[i - 1]), to_db(f[i]), to_db(f[i + 1]));
            let den = a - 2.0 * b + c;
            let p = if den.abs() > 0.0 {
                (0.5 * (a - c) / den).clamp(-0.5, 0.5)
            } else {
                0.0
            };
            let lerp = |v: &[f64]| {
                v[i] + p * if p >= 0.0 {
                    v[i + 1] - v[i]
                } else {
                    v[i] - v[i - 1]
                }
            };
            let value = match trace.mode {
                Mode::LowPassImpulse => trace.linear[i],
                _ => f[i],
            };
            Peak {
                distance_m: lerp(&trace.axis_m),
                time_s: lerp(&trace.time_s),
                value,
                db: to_db(value),
                index: i,
            }
        })
        .collect();
    peaks.sort_by(|x, y| y.value.abs().total_cmp(&x.value.abs()));
    peaks.truncate(max_count);
    peaks
}

/// Refine `peak` of `trace` (band-pass or impulse) on the prepared spectrum it came from, using
/// `distance_of` to map the refined round-trip time to metres. Step-mode peaks are returned unchanged.
pub fn refine_peak(
    trace: &Trace,
    spectrum: &Spectrum,
    peak: &Peak,
    distance_of: &dyn Fn(f64) -> f64,
) -> Peak {
    if !matches!(trace.mode, Mode::BandPass | Mode::LowPassImpulse) || trace.time_s.len() < 2 {
        return *peak;
    }
    let dt = trace.time_s[1] - trace.time_s[0];
    let t_bin = trace.time_s[peak.index];
    let score = |t: f64| spectrum.eval(trace.mode, t).abs();
    let t =
        crate::numeric::golden_min(t_bin - dt, t_bin + dt, REFINE_TOLERANCE * dt, |t| -score(t));
    let value = spectrum.eval(trace.mode, t);
    Peak {
        distance_m: distance_of(t),
        time_s: t,
        value,
        db: to_db(value),
        index: peak.index,
    }
}
