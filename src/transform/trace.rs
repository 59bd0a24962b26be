//! Running a [`TracePlan`] on a sweep: the [`Trace`] result and the reusable [`TraceEngine`].

use super::bandpass::BandPassSpectrum;
use super::czt::FftCache;
use super::gate::GateSource;
use super::lowpass::LowPassSpectrum;
use super::peak::Peak;
use super::plan::{Mode, PlanCheck, TracePlan};
use super::window::WindowInfo;
use super::{DistanceMap, TransformError, Window};
use crate::Warning;
use num_complex::Complex64;
use serde::Serialize;
use std::sync::Arc;

/// Largest |rho| used in the impedance profile; beyond it Z0 (1 + rho)/(1 - rho) is clamped (an open reads
/// about 2e6 Z0 instead of infinity).
pub const IMPEDANCE_RHO_LIMIT: f64 = 0.999_999;

/// A time-domain trace. Its JSON (keys as named here) is a contract.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Trace {
    pub mode: Mode,
    /// One-way distance of each point, m.
    pub axis_m: Vec<f64>,
    /// Round-trip time of each point, s.
    pub time_s: Vec<f64>,
    /// dB (band-pass |h|), rho (impulse, step) or ohm (impedance).
    pub values: Vec<f64>,
    pub unit: &'static str,
    pub resolution_m: f64,
    pub alias_free_range_m: f64,
    pub window: WindowInfo,
    pub distance_map: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub velocity_factor: Option<f64>,
    /// Named places of the line the distance map follows (empty for a uniform line).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub landmarks: Vec<super::Landmark>,
    pub reference_ohm: f64,
    pub warnings: Vec<Warning>,
    /// Strongest peaks (filled by [`super::outcome::run_trace`]; empty from [`TraceEngine::trace`]).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub peaks: Vec<Peak>,
    /// Linear value of each point: |h| for band-pass, rho (signed) for impulse and step, the step's rho for
    /// impedance.
    #[serde(skip)]
    pub linear: Vec<f64>,
    /// Complex band-pass response h(t) (empty for low-pass modes).
    #[serde(skip)]
    pub complex: Vec<Complex64>,
}

/// Prepared spectrum for a plan (window, DC, resampling applied); evaluates at any time.
#[derive(Debug, Clone)]
pub enum Spectrum {
    BandPass(BandPassSpectrum),
    LowPass(LowPassSpectrum),
}

impl Spectrum {
    /// Prepare `values` on `freqs` for `plan` (checked by `check`).
    pub fn new(
        values: &[Complex64],
        plan: &TracePlan,
        check: &PlanCheck,
    ) -> Result<Self, TransformError> {
        let w = plan.window.coefficients(Self::window_len(check));
        Self::with_coefficients(values, plan, check, &w)
    }

    /// Number of window coefficients the plan needs: N (band-pass) or 2K + 1 (low-pass).
    pub fn window_len(check: &PlanCheck) -> usize {
        match check.harmonics {
            None => check.grid.points,
            Some(k) => 2 * k + 1,
        }
    }

    /// As [`Spectrum::new`] with the window's [`Spectrum::window_len`] coefficients given.
    pub fn with_coefficients(
        values: &[Complex64],
        plan: &TracePlan,
        check: &PlanCheck,
        w: &[f64],
    ) -> Result<Self, TransformError> {
        Ok(match check.harmonics {
            None => Spectrum::BandPass(BandPassSpectrum::with_coefficients(&check.grid, values, w)),
            Some(k) => Spectrum::LowPass(LowPassSpectrum::with_coefficients(
                &check.grid,
                values,
                k,
                check.resampled,
                plan.dc,
                w,
            )?),
        })
    }

    /// The linear value of `mode` at round-trip time `t` by direct summation.
    pub fn eval(&self, mode: Mode, t: f64) -> f64 {
        match (self, mode) {
            (Spectrum::BandPass(b), _) => b.eval(t).norm(),
            (Spectrum::LowPass(l), Mode::LowPassImpulse) => l.eval_impulse(t),
            (Spectrum::LowPass(l), _) => l.eval_step(t),
        }
    }
}

/// Holds FFT and chirp-z plans; reuse one engine for every sweep on the same grid.
#[derive(Debug, Default)]
pub struct TraceEngine {
    cache: FftCache,
    windows: Vec<(Window, usize, Arc<Vec<f64>>)>,
    spare_real: Vec<Vec<f64>>,
    spare_complex: Vec<Vec<Complex64>>,
    /// Sweeps prepared for gating (their frequencies, values and padding, and the prepared source), most
    /// recent last: a sweep analysed several times (a comparison's state check and its analyses) is
    /// transformed once.
    gate_sources: Vec<GateSourceEntry>,
}

/// A sweep prepared for gating, with what it was prepared from (compared in full on every look-up: a few
/// microseconds where the transform costs a hundred times that).
type GateSourceEntry = (Vec<f64>, Vec<Complex64>, usize, Arc<GateSource>);

/// Most prepared gate sources an engine keeps (a pair's two sweeps, with room for a survey worker's next
/// pair); past it the oldest is dropped, so the memory stays bounded.
const MAX_CACHED_GATE_SOURCES: usize = 4;

/// Most spare buffers an engine keeps from recycled traces.
const MAX_SPARE: usize = 8;

/// Most window coefficient sets an engine keeps (one engine may serve a whole fleet of sweeps on many
/// grids: the cache starts afresh when full, so its memory stays bounded).
const MAX_CACHED_WINDOWS: usize = 16;

impl TraceEngine {
    pub fn new() -> Self {
        Self::default()
    }

    /// Hand back a trace no longer needed: its buffers are reused by the next [`TraceEngine::trace`], which
    /// saves the page faults of fresh large allocations when many sweeps are traced in a loop.
    pub fn recycle(&mut self, trace: Trace) {
        for v in [trace.axis_m, trace.time_s, trace.values, trace.linear] {
            if self.spare_real.len() < MAX_SPARE && v.capacity() > 0 {
                self.spare_real.push(v);
            }
        }
        if self.spare_complex.len() < MAX_SPARE && trace.complex.capacity() > 0 {
            self.spare_complex.push(trace.complex);
        }
    }

    fn take_real(&mut self) -> Vec<f64> {
        let mut v = self.spare_real.pop().unwrap_or_default();
        v.clear();
        v
    }

    /// Window coefficients, computed once per window and length.
    pub fn window_coefficients(&mut self, window: &Window, n: usize) -> Arc<Vec<f64>> {
        if let Some((_, _, w)) = self.windows.iter().find(|(w, m, _)| w == window && *m == n) {
            return w.clone();
        }
        let w = Arc::new(window.coefficients(n));
        if self.windows.len() >= MAX_CACHED_WINDOWS {
            self.windows.clear();
        }
        self.windows.push((*window, n, w.clone()));
        w
    }

    /// `values` on `freqs` prepared for gates of padding `padding` ([`GateSource::new`]), from this engine
    /// when the same sweep (the same frequencies and values, bit for bit) was prepared before.
    pub fn gate_source(
        &mut self,
        freqs: &[f64],
        values: &[Complex64],
        padding: usize,
    ) -> Result<Arc<GateSource>, TransformError> {
        let same = |(f, v, p, _): &GateSourceEntry| {
            *p == padding
                && f.len() == freqs.len()
                && v.len() == values.len()
                && f.iter().zip(freqs).all(|(a, b)| a.to_bits() == b.to_bits())
                && v.iter().zip(values).all(|(a, b)| {
                    a.re.to_bits() == b.re.to_bits() && a.im.to_bits() == b.im.to_bits()
                })
        };
        if let Some(e) = self.gate_sources.iter().find(|e| same(e)) {
            return Ok(e.3.clone());
        }
        let source = Arc::new(GateSource::new(freqs, values, padding, &mut self.cache)?);
        if self.gate_sources.len() >= MAX_CACHED_GATE_SOURCES {
            self.gate_sources.remove(0);
        }
        self.gate_sources
            .push((freqs.to_vec(), values.to_vec(), padding, source.clone()));
        Ok(source)
    }

    /// The FFT cache (shared with gating).
    pub fn cache(&mut self) -> &mut FftCache {
        &mut self.cache
    }

    /// Run `plan` on the sweep (`freqs` in Hz, `values` = S11), with distances from `map`.
    pub fn trace(
        &mut self,
        freqs: &[f64],
        values: &[Complex64],
        plan: &TracePlan,
        map: &dyn DistanceMap,
    ) -> Result<Trace, TransformError> {
        if freqs.len() != values.len() {
            return Err(TransformError::LengthMismatch {
                freqs: freqs.len(),
                values: values.len(),
            });
        }
        if let Some(index) = values
            .iter()
            .position(|v| !(v.re.is_finite() && v.im.is_finite()))
        {
            return Err(TransformError::NonFinite { index });
        }
        let check = plan.check(freqs, map)?;
        let mut warnings = check.warnings.clone();
        let w = self.window_coefficients(&plan.window, Spectrum::window_len(&check));
        let spectrum = Spectrum::with_coefficients(values, plan, &check, &w)?;
        let axis = &check.axis;
        let mut time_s = self.take_real();
        time_s.extend((0..axis.points).map(|m| axis.start_s + m as f64 * axis.step_s));
        let mut axis_m = self.take_real();
        axis_m.extend(time_s.iter().map(|&t| map.distance_m(t)));
        let mut values_out = self.take_real();
        let (linear, complex) = match &spectrum {
            Spectrum::BandPass(b) => {
                let buf = self.spare_complex.pop().unwrap_or_default();
                let mut h = b.on_axis_into(axis, &mut self.cache, buf);
                h.truncate(axis.points);
                let mut linear = self.take_real();
                linear.extend(h.iter().map(|z| z.norm_sqr().sqrt()));
                (linear, h)
            }
            Spectrum::LowPass(l) => {
                let v = match plan.mode {
                    Mode::LowPassImpulse => l.impulse_on_axis(axis, &mut self.cache),
                    _ => l.step_on_axis(axis, &mut self.cache),
                };
                (v, Vec::new())
            }
        };
        match plan.mode {
            Mode::BandPass => {
                values_out.extend(complex.iter().map(|z| power_to_db(z.norm_sqr())));
            }
            Mode::LowPassImpulse | Mode::LowPassStep => values_out.extend_from_slice(&linear),
            Mode::Impedance => {
                let mut clamped = 0usize;
                values_out.extend(linear.iter().map(|&r| {
                    if r.abs() > IMPEDANCE_RHO_LIMIT {
                        clamped += 1;
                    }
                    impedance_from_rho(r, plan.reference_ohm)
                }));
                if clamped > 0 {
                    warnings.push(Warning::new(
                        "impedance-clamped",
                        format!(
                            "{clamped} point(s) have |rho| near 1 (an open or short); their impedance is \
                             clamped at |rho| = {IMPEDANCE_RHO_LIMIT}"
                        ),
                        "read those points as open (high) or short (low), or view --mode low-pass-step",
                    ));
                }
            }
        }
        Ok(Trace {
            mode: plan.mode,
            axis_m,
            time_s,
            values: values_out,
            unit: plan.mode.unit(),
            resolution_m: check.resolution_m,
            alias_free_range_m: check.alias_free_range_m,
            window: plan.window.info(),
            distance_map: map.describe(),
            velocity_factor: map.velocity_factor(),
            landmarks: map.landmarks(),
            reference_ohm: plan.reference_ohm,
            warnings,
            peaks: Vec::new(),
            linear,
            complex,
        })
    }
}

/// Run `plan` once with a fresh engine. Prefer a [`TraceEngine`] for several sweeps on one grid.
pub fn trace(
    freqs: &[f64],
    values: &[Complex64],
    plan: &TracePlan,
    map: &dyn DistanceMap,
) -> Result<Trace, TransformError> {
    TraceEngine::new().trace(freqs, values, plan, map)
}

/// Floor for dB conversion of a zero magnitude.
pub const DB_FLOOR: f64 = -400.0;

/// 20 log10 |a|, floored at [`DB_FLOOR`].
pub fn to_db(a: f64) -> f64 {
    (20.0 * a.abs().log10()).max(DB_FLOOR)
}

/// 10 log10 |h|^2 (= 20 log10 |h|), floored at [`DB_FLOOR`] (to 1e-13 dB).
///
/// Computed without a libm call (the whole-range trace converts ~10^5 points): p = 2^e m with m in
/// [sqrt(1/2), sqrt(2)), ln m = 2 atanh(s) = 2 (s + s^3/3 + s^5/5 + ...), s = (m - 1)/(m + 1), |s| < 0.1716
/// (Abramowitz and Stegun, Handbook of Mathematical Functions, 1964, eq. 4.1.27). Nine terms leave a
/// truncation error below 0.1716^19/19 ~ 1e-16, so the result matches `10 * p.log10()` to ~1e-13 dB.
pub fn power_to_db(p: f64) -> f64 {
    const DB_PER_NEPER_POWER: f64 = 10.0 / std::f64::consts::LN_10;
    /// |h|^2 at the dB floor: 10^(DB_FLOOR / 10).
    const FLOOR_POWER: f64 = 1e-40;
    if !p.is_finite() {
        return if p == f64::INFINITY { p } else { DB_FLOOR };
    }
    // Branch-free below this point, so the conversion loop vectorises.
    let p = p.max(FLOOR_POWER);
    let bits = p.to_bits();
    let e = ((bits >> 52) & 0x7ff) as i64 - 1023;
    let m = f64::from_bits((bits & 0x000f_ffff_ffff_ffff) | 0x3ff0_0000_0000_0000);
    let big = m > std::f64::consts::SQRT_2;
    let m = if big { m * 0.5 } else { m };
    let e = e + big as i64;
    let s = (m - 1.0) / (m + 1.0);
    let s2 = s * s;
    let series = 1.0
        + s2 * (1.0 / 3.0
            + s2 * (1.0 / 5.0
                + s2 * (1.0 / 7.0
                    + s2 * (1.0 / 9.0
                        + s2 * (1.0 / 11.0
                            + s2 * (1.0 / 13.0 + s2 * (1.0 / 15.0 + s2 * (1.0 / 17.0))))))));
    let ln = e as f64 * std::f64::consts::LN_2 + 2.0 * s * series;
    DB_PER_NEPER_POWER * ln
}

/// Z0 (1 + rho) / (1 - rho), with |rho| clamped at [`IMPEDANCE_RHO_LIMIT`].
pub fn impedance_from_rho(rho: f64, z0: f64) -> f64 {
    let r = rho.clamp(-IMPEDANCE_RHO_LIMIT, IMPEDANCE_RHO_LIMIT);
    z0 * (1.0 + r) / (1.0 - r)
}

/// What a feature of the low-pass step means.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum StepFeature {
    /// The step rises and stays up: the line beyond is of higher impedance (or a series resistance; a series
    /// capacitance, e.g. a gap, rises towards +1 with tau = 2 Z0 C).
    HigherImpedance,
    /// The step falls and stays down: lower impedance beyond (or a shunt resistance).
    LowerImpedance,
    /// A bump up that returns: series inductance (or a short high-impedance section), inductive.
    Inductive,
    /// A dip that returns: shunt capacitance (or a short low-impedance section), capacitive.
    Capacitive,
}

/// Classify a step feature from the step level before it, its largest excursion from that level (signed,
/// rho) and the level after it. A lasting change larger than `threshold` (rho) is a step in impedance;
/// otherwise the sign of the excursion tells inductive (up) from capacitive (down). Signatures from the
/// reflection of series and shunt elements between matched lines, Gamma = Z/(2 Z0 + Z) and
/// Gamma = -Y Z0/(2 + Y Z0) (circuit theory; e.g. Pozar, Microwave Engineering, 4th ed., ch. 4). `None`
/// when nothing exceeds the threshold.
pub fn classify_step(
    before: f64,
    excursion: f64,
    after: f64,
    threshold: f64,
) -> Option<StepFeature> {
    let lasting = after - before;
    if lasting.abs() > threshold {
        Some(if lasting > 0.0 {
            StepFeature::HigherImpedance
        } else {
            StepFeature::LowerImpedance
        })
    } else if excursion.abs() > threshold {
        Some(if excursion > 0.0 {
            StepFeature::Inductive
        } else {
            StepFeature::Capacitive
        })
    } else {
        None
    }
}
