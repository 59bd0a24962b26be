//! The trace plan: what to compute (mode, window, span, step, padding, DC method), built once and shared by
//! the warm and the cold sweep of a line. [`TracePlan::check`] validates a plan against a frequency grid and
//! works out the time axis, resolution and alias-free range without running any transform.
//!
//! Resolution (two-event, -6 dB main-lobe width of the window): band-pass `k6 / B` with B = f_max - f_min
//! (plus one step, the record's width), low-pass `k6 / (2 f_max)`, both as round-trip times mapped to metres by
//! the [`DistanceMap`]. Alias-free range: round-trip time `1 / df` (the response is periodic in time with that
//! period), i.e. `c0 vf / (2 df)` one way on a uniform line.

use super::czt::fast_len;
use super::{DistanceMap, TransformError, Window};
use crate::limits::short_number;
use crate::Warning;
use serde::Serialize;

/// Relative tolerance on frequency steps for a grid to count as uniform. Touchstone files print about 10
/// significant digits, so steps jitter by ~1e-7 relative; 1e-4 of a step costs at most 2 pi 1e-4 rad of phase
/// at the alias-free limit (common practice, no source).
pub const UNIFORM_TOLERANCE: f64 = 1e-4;
/// Tolerance on `f_start / df` being an integer (0 or 1) for a harmonic grid.
pub const HARMONIC_TOLERANCE: f64 = 1e-3;
/// Largest number of output points a plan may ask for ([`crate::limits::MAX_TRACE_POINTS`]).
pub const MAX_POINTS: usize = crate::limits::MAX_TRACE_POINTS;
/// Default output step with a span and no step: this fraction of the resolution.
pub const DEFAULT_STEP_FRACTION: f64 = 0.1;
/// A step finer than this fraction of the resolution earns a "finer than needed" warning.
pub const FINE_STEP_FRACTION: f64 = 1e-3;
/// Most low-end points (besides DC) that resampling may fill by extrapolation.
pub const MAX_LOW_FILL: usize = 2;

/// What the trace shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Mode {
    /// Complex envelope of the reflection, magnitude in dB; any uniform grid.
    BandPass,
    /// Real impulse response (reflection coefficient with sign); harmonic grid.
    LowPassImpulse,
    /// Real step response (reflection coefficient with sign); harmonic grid.
    LowPassStep,
    /// Impedance profile Z0 (1 + rho) / (1 - rho) from the step; harmonic grid.
    Impedance,
}

impl Mode {
    pub fn parse(text: &str) -> Result<Self, TransformError> {
        Ok(match text.trim().to_ascii_lowercase().as_str() {
            "band-pass" | "bandpass" => Mode::BandPass,
            "low-pass-impulse" | "impulse" => Mode::LowPassImpulse,
            "low-pass-step" | "step" => Mode::LowPassStep,
            "impedance" => Mode::Impedance,
            _ => {
                return Err(TransformError::Invalid(format!(
                    "unknown mode '{text}'; allowed: band-pass, low-pass-impulse, low-pass-step, impedance"
                )))
            }
        })
    }
    pub fn name(&self) -> &'static str {
        match self {
            Mode::BandPass => "band-pass",
            Mode::LowPassImpulse => "low-pass-impulse",
            Mode::LowPassStep => "low-pass-step",
            Mode::Impedance => "impedance",
        }
    }
    pub fn is_low_pass(&self) -> bool {
        !matches!(self, Mode::BandPass)
    }
    /// Unit of `Trace::values`.
    pub fn unit(&self) -> &'static str {
        match self {
            Mode::BandPass => "dB",
            Mode::LowPassImpulse | Mode::LowPassStep => "rho",
            Mode::Impedance => "ohm",
        }
    }
}

/// How the low-pass modes obtain Gamma(0), which no analyzer measures.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum DcMethod {
    /// From the two lowest points with the lowest-order model Hermitian symmetry allows: Re G(f) = a + b f^2
    /// (even), Im G(0) = 0. A measured point at f = 0 is used as is (real part).
    EvenQuadratic,
    /// A known value, e.g. from a DC resistance reading R: (R - Z0)/(R + Z0).
    Fixed(f64),
}

/// A trace plan. See the module docs.
#[derive(Debug, Clone, PartialEq)]
pub struct TracePlan {
    pub mode: Mode,
    pub window: Window,
    /// Distance span (one-way, m); `None` = the whole alias-free range by FFT.
    pub span_m: Option<(f64, f64)>,
    /// Output step in metres for a span; `None` = a tenth of the resolution.
    pub step_m: Option<f64>,
    /// Zero-padding factor of the whole-range FFT path (>= 1); the FFT length is rounded up to a 2-3-5 size.
    pub padding: usize,
    pub dc: DcMethod,
    /// Low-pass only: interpolate a non-harmonic grid onto a harmonic one (with a warning).
    pub resample: bool,
    /// Reference impedance for the impedance profile, ohm.
    pub reference_ohm: f64,
}

impl Default for TracePlan {
    fn default() -> Self {
        TracePlan {
            mode: Mode::BandPass,
            window: Window::Kaiser { beta: 6.0 },
            span_m: None,
            step_m: None,
            padding: 8,
            dc: DcMethod::EvenQuadratic,
            resample: false,
            reference_ohm: 50.0,
        }
    }
}

/// A uniform frequency grid f_n = start + n step.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Grid {
    pub start_hz: f64,
    pub step_hz: f64,
    pub points: usize,
}

impl Grid {
    pub fn stop_hz(&self) -> f64 {
        self.start_hz + self.step_hz * (self.points - 1) as f64
    }
    /// `start / step`, the number of steps between DC and the first point.
    pub fn start_ratio(&self) -> f64 {
        self.start_hz / self.step_hz
    }
}

/// Check that `freqs` is finite, strictly increasing and uniform; return the grid.
pub fn uniform_grid(freqs: &[f64]) -> Result<Grid, TransformError> {
    if freqs.len() < 2 {
        return Err(TransformError::TooFewPoints {
            points: freqs.len(),
            needed: 2,
        });
    }
    if let Some(index) = freqs.iter().position(|f| !f.is_finite() || *f < 0.0) {
        return Err(TransformError::NonFinite { index });
    }
    let n = freqs.len();
    let step = (freqs[n - 1] - freqs[0]) / (n - 1) as f64;
    for (index, w) in freqs.windows(2).enumerate() {
        let d = w[1] - w[0];
        if step.is_nan() || step <= 0.0 || (d - step).abs() > UNIFORM_TOLERANCE * step {
            return Err(TransformError::NonUniformGrid {
                index,
                expected_hz: step,
                found_hz: d,
            });
        }
    }
    Ok(Grid {
        start_hz: freqs[0],
        step_hz: step,
        points: n,
    })
}

/// The output time axis of a plan: uniform in round-trip time.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TimeAxis {
    pub start_s: f64,
    pub step_s: f64,
    pub points: usize,
    /// FFT length for the whole-range path; `None` for a chirp-z zoom.
    pub fft_len: Option<usize>,
}

/// What [`TracePlan::check`] found: the grid, axis, resolution and range, and warnings.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlanCheck {
    pub grid: Grid,
    pub axis: TimeAxis,
    /// Two-event resolution, one-way metres.
    pub resolution_m: f64,
    /// Round-trip time of the resolution, s.
    pub resolution_s: f64,
    /// One-way alias-free range, m.
    pub alias_free_range_m: f64,
    /// Low-pass: highest harmonic index K (f_max = K df) of the grid used.
    pub harmonics: Option<usize>,
    /// Low-pass: whether the sweep will be resampled onto a harmonic grid.
    pub resampled: bool,
    pub warnings: Vec<Warning>,
}

impl TracePlan {
    /// Validate this plan for `freqs` and work out the output axis.
    pub fn check(&self, freqs: &[f64], map: &dyn DistanceMap) -> Result<PlanCheck, TransformError> {
        if self.padding == 0 || self.padding > 64 {
            return Err(TransformError::Invalid(format!(
                "padding {} is out of range; give a zero-padding factor from 1 to 64",
                self.padding
            )));
        }
        if !(self.reference_ohm > 0.0 && self.reference_ohm.is_finite()) {
            return Err(TransformError::Invalid(format!(
                "reference impedance {} ohm must be positive",
                self.reference_ohm
            )));
        }
        let grid = uniform_grid(freqs)?;
        let mut warnings = Vec::new();
        let k6 = self.window.figures().mainlobe_6db_bins;
        let (resolution_s, harmonics, resampled, period_s) = if self.mode.is_low_pass() {
            let ratio = grid.start_ratio();
            let k0 = ratio.round();
            let harmonic = (ratio - k0).abs() < HARMONIC_TOLERANCE && k0 <= 1.0;
            let (k_max, df, resampled) = if harmonic {
                let df = grid.step_hz;
                ((grid.stop_hz() / df).round() as usize, df, false)
            } else if self.resample {
                let k = (grid.stop_hz() / grid.step_hz).round().max(1.0) as usize;
                let df = grid.stop_hz() / k as f64;
                let missing = (grid.start_hz / df).ceil() as usize;
                if missing > MAX_LOW_FILL + 1 {
                    return Err(TransformError::Invalid(format!(
                        "cannot resample for low-pass: the sweep starts at {} Hz, {} steps above zero, and only \
                         {} missing low points may be extrapolated; use --mode band-pass, or re-measure from \
                         one step ({:.6e} Hz) upwards",
                        grid.start_hz, missing, MAX_LOW_FILL, df
                    )));
                }
                warnings.push(Warning::new(
                    "resampled-grid",
                    format!(
                        "the sweep ({} points from {} Hz, step {} Hz) was interpolated (polar, between neighbours) onto a harmonic \
                         grid of {k} points, step {df} Hz; {} low point(s) were extrapolated",
                        grid.points,
                        grid.start_hz,
                        grid.step_hz,
                        missing.saturating_sub(1)
                    ),
                    "measure on a harmonic grid (start = step) to avoid interpolation",
                ));
                (k, df, true)
            } else {
                return Err(TransformError::NotHarmonic {
                    start_hz: grid.start_hz,
                    step_hz: grid.step_hz,
                    ratio,
                    stop_hz: grid.stop_hz(),
                    harmonics: (grid.stop_hz() / grid.step_hz)
                        .round()
                        .clamp(1.0, u64::MAX as f64) as u64,
                });
            };
            if k_max < 2 {
                return Err(TransformError::TooFewPoints {
                    points: k_max,
                    needed: 2,
                });
            }
            let f_max = k_max as f64 * df;
            (k6 / (2.0 * f_max), Some(k_max), resampled, 1.0 / df)
        } else {
            let bandwidth = grid.step_hz * grid.points as f64;
            (k6 / bandwidth, None, false, 1.0 / grid.step_hz)
        };
        let alias_free_range_m = map.distance_m(period_s);
        let resolution_m = map.distance_m(resolution_s) - map.distance_m(0.0);
        // A grid of absurd steps (1e-300 Hz, say) puts the time axis past the largest float.
        if !(alias_free_range_m.is_finite() && resolution_m.is_finite() && resolution_m > 0.0) {
            return Err(TransformError::Invalid(format!(
                "the sweep's grid (step {} Hz over {} points) gives a time axis that is not finite; \
                 check the frequencies and their unit",
                short_number(grid.step_hz),
                grid.points
            )));
        }
        let axis = match self.span_m {
            None => {
                let base = match harmonics {
                    Some(k) => 2 * k + 1,
                    None => grid.points,
                };
                let len = self
                    .padding
                    .checked_mul(base)
                    .filter(|&n| n <= crate::limits::MAX_FFT_POINTS)
                    .map(fast_len)
                    .ok_or_else(|| {
                        TransformError::Invalid(format!(
                            "{base} points padded {} times exceed the {} points of the largest FFT \
                             (docs/limits.md); give a smaller --padding or a sweep with fewer points",
                            self.padding,
                            crate::limits::MAX_FFT_POINTS
                        ))
                    })?;
                TimeAxis {
                    start_s: 0.0,
                    step_s: period_s / len as f64,
                    points: len,
                    fft_len: Some(len),
                }
            }
            Some((x0, x1)) => {
                if !(x0.is_finite() && x1.is_finite() && x1 > x0) {
                    return Err(TransformError::Invalid(format!(
                        "span {x0} m..{x1} m is empty; give START..STOP with STOP > START, e.g. 0m..3m"
                    )));
                }
                let step = self.step_m.unwrap_or(resolution_m * DEFAULT_STEP_FRACTION);
                if !(step > 0.0 && step.is_finite()) {
                    return Err(TransformError::Invalid(format!(
                        "step {step} m must be positive, e.g. 1mm"
                    )));
                }
                // Counted in floating point first (finite span and step: never NaN), so a huge span over a
                // fine step cannot wrap a usize.
                let count = ((x1 - x0) / step).floor() + 1.0;
                if count > MAX_POINTS as f64 {
                    return Err(TransformError::Invalid(format!(
                        "span {} m..{} m at step {} m needs {count:.3e} points (at most {MAX_POINTS}, \
                         docs/limits.md); give a coarser --step or a shorter --span",
                        short_number(x0),
                        short_number(x1),
                        short_number(step)
                    )));
                }
                let points = count as usize;
                if x1 > alias_free_range_m || x0 < 0.0 {
                    warnings.push(Warning::new(
                        "span-past-alias-free-range",
                        format!(
                            "the span {x0} m..{x1} m leaves the alias-free range 0..{alias_free_range_m:.4} m \
                             (set by the frequency step {} Hz); echoes there are aliases of nearer ones",
                            grid.step_hz
                        ),
                        "shorten the span, or re-measure with more points over the same band",
                    ));
                }
                if self.step_m.is_some() && step > resolution_m {
                    warnings.push(Warning::new(
                        "step-coarser-than-resolution",
                        format!(
                            "the step {step} m is coarser than the resolution {resolution_m:.4e} m; narrow \
                             features can fall between points"
                        ),
                        format!("use --step {:.3e}m or finer", resolution_m * DEFAULT_STEP_FRACTION),
                    ));
                }
                if step < resolution_m * FINE_STEP_FRACTION {
                    warnings.push(Warning::new(
                        "step-finer-than-needed",
                        format!(
                            "the step {step} m is below a thousandth of the resolution {resolution_m:.4e} m; \
                             it adds points but no detail"
                        ),
                        format!("use --step {:.3e}m", resolution_m * DEFAULT_STEP_FRACTION),
                    ));
                }
                let t0 = map.round_trip_s(x0);
                let t1 = map.round_trip_s(x0 + step);
                TimeAxis {
                    start_s: t0,
                    step_s: t1 - t0,
                    points,
                    fft_len: None,
                }
            }
        };
        Ok(PlanCheck {
            grid,
            axis,
            resolution_m,
            resolution_s,
            alias_free_range_m,
            harmonics,
            resampled,
            warnings,
        })
    }
}
