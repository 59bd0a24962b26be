//! One sweep, analysed: its band-pass trace over the visible line, the noise floor estimated from it, the
//! events found in it, and for any event the local reflection versus frequency (gated, moved to the event's
//! plane and loss-compensated with the line model) with its lumped-model fits.
//!
//! Conventions: e^{+j omega t}; the band-pass response is normalised so a lone reflection rho reads |rho|
//! (see `transform::bandpass`); delays are round-trip seconds; the local reflection of an event at delay d is
//! Gamma_loc(f) = Gamma_gated(f) e^{+j 2 pi f d} 10^{L(x, f)/20}, with L the model's round-trip loss to it.

use super::chain::{ChainView, Which};
use super::detect::{find_events, noise_sigma, LobeShape, Peak};
use super::lumped::{fit_all, ModelFit};
use super::CompareError;
use crate::transform::{
    bandpass::BandPassSpectrum, gate_with, uniform_grid, DistanceMap, GatePlan, Grid, Mode,
    TraceEngine, TracePlan, Window,
};
use crate::Warning;
use num_complex::Complex64;

/// Points per resolution cell on the analysis grid (a fine grid makes the parabolic peak estimate a good
/// start for the exact refinement).
pub const POINTS_PER_RESOLUTION: f64 = 8.0;

/// Half-width of the gate put round an event to fit its lumped model, in resolution cells.
pub const GATE_HALF_WIDTH_CELLS: f64 = 2.5;

/// Share of the band dropped at each edge before a lumped fit, where the gate's edge correction leaves the
/// most error (common practice, no source).
pub const FIT_BAND_EDGE: f64 = 0.08;

/// One sweep's analysis.
#[derive(Debug, Clone)]
pub struct SweepAnalysis {
    pub freqs: Vec<f64>,
    pub s11: Vec<Complex64>,
    pub grid: Grid,
    pub spectrum: BandPassSpectrum,
    /// Round-trip delay of the first analysis point and the spacing, s.
    pub t0: f64,
    pub dt: f64,
    /// |h| on the analysis grid (linear).
    pub mag: Vec<f64>,
    /// Noise RMS magnitude of the trace.
    pub sigma: f64,
    pub events: Vec<Peak>,
    /// Two-event resolution, round-trip s.
    pub resolution_s: f64,
    /// Alias-free round-trip time 1/df, s.
    pub alias_free_s: f64,
    pub warnings: Vec<Warning>,
}

/// The window's shape as the detector needs it.
pub fn lobe_shape(window: &Window, bandwidth_hz: f64) -> (LobeShape, f64) {
    let fig = window.figures();
    let resolution_s = fig.mainlobe_6db_bins / bandwidth_hz;
    (
        LobeShape {
            main_lobe_half_s: resolution_s,
            sidelobe_db: fig.highest_sidelobe_db,
        },
        resolution_s,
    )
}

impl SweepAnalysis {
    /// Analyse S11 `s11` on `freqs` up to round-trip delay `t_max` (clipped to the alias-free time).
    pub fn new(
        freqs: &[f64],
        s11: &[Complex64],
        window: &Window,
        t_max: f64,
        engine: &mut TraceEngine,
    ) -> Result<Self, CompareError> {
        let grid = uniform_grid(freqs).map_err(CompareError::Transform)?;
        let bandwidth = grid.step_hz * grid.points as f64;
        let (lobe, resolution_s) = lobe_shape(window, bandwidth);
        let alias_free_s = 1.0 / grid.step_hz;
        let mut warnings = Vec::new();
        let t_max = if t_max > alias_free_s {
            warnings.push(Warning::new(
                "beyond-alias-free-range",
                format!(
                    "the line's far end ({:.3} ns round trip) lies beyond the sweep's alias-free time ({:.3} ns)",
                    t_max * 1e9,
                    alias_free_s * 1e9
                ),
                "sweep with more points (a smaller frequency step) to see the whole line",
            ));
            alias_free_s
        } else {
            t_max
        };
        // The engine's span is in metres of a map: use a unit map so metres are round-trip seconds.
        let unit = SecondsMap;
        let step = resolution_s / POINTS_PER_RESOLUTION;
        let plan = TracePlan {
            mode: Mode::BandPass,
            window: *window,
            span_m: Some((0.0, t_max.max(step * 4.0))),
            step_m: Some(step),
            ..TracePlan::default()
        };
        let trace = engine
            .trace(freqs, s11, &plan, &unit)
            .map_err(CompareError::Transform)?;
        let spectrum = BandPassSpectrum::new(&grid, s11, window);
        let t0 = trace.time_s.first().copied().unwrap_or(0.0);
        let dt = if trace.time_s.len() > 1 {
            trace.time_s[1] - trace.time_s[0]
        } else {
            step
        };
        let mag = trace.linear;
        let sigma = noise_sigma(&mag);
        let mut events = find_events(&mag, t0, dt, lobe, sigma);
        for e in &mut events {
            let (d, m) = refine_exact(&spectrum, e.delay_s, dt);
            e.delay_s = d;
            e.magnitude = m;
        }
        Ok(SweepAnalysis {
            freqs: freqs.to_vec(),
            s11: s11.to_vec(),
            grid,
            spectrum,
            t0,
            dt,
            mag,
            sigma,
            events,
            resolution_s,
            alias_free_s,
            warnings,
        })
    }

    /// Complex band-pass response at delay `t` (exact sum).
    pub fn h(&self, t: f64) -> Complex64 {
        self.spectrum.eval(t)
    }

    /// Signal-to-noise ratio (amplitude) of a magnitude `m` in this trace.
    pub fn snr(&self, m: f64) -> f64 {
        if self.sigma > 0.0 {
            m / self.sigma
        } else {
            1e6
        }
    }

    /// The local reflection of an event at delay `d` (as-built position `x`), versus frequency, on the inner
    /// part of the band: gated, moved to the event's plane and loss-compensated by `chain`'s model of sweep
    /// `which`. Returns (frequencies, Gamma_loc).
    pub fn local_reflection(
        &self,
        d: f64,
        x: f64,
        chain: &ChainView,
        which: Which,
        engine: &mut TraceEngine,
    ) -> Result<(Vec<f64>, Vec<Complex64>), CompareError> {
        let half = GATE_HALF_WIDTH_CELLS * self.resolution_s;
        let start = (d - half).max(0.0);
        let stop = (d + half).min(self.alias_free_s);
        let mut plan = GatePlan::new(start, stop);
        plan.padding = 2;
        let gated = gate_with(&self.freqs, &self.s11, &plan, engine.cache())
            .map_err(CompareError::Transform)?;
        let n = self.freqs.len();
        let skip = ((n as f64) * FIT_BAND_EDGE) as usize;
        let range = skip..n.saturating_sub(skip).max(skip + 1).min(n);
        let f: Vec<f64> = self.freqs[range.clone()].to_vec();
        let g: Vec<Complex64> = range
            .map(|k| {
                let fk = self.freqs[k];
                let comp = 10f64
                    .powf(chain.loss_to_db(x, fk, which) / 20.0)
                    .min(MAX_COMPENSATION);
                gated.values[k] * Complex64::from_polar(comp, 2.0 * std::f64::consts::PI * fk * d)
            })
            .collect();
        Ok((f, g))
    }

    /// Lumped-model fits of the event at delay `d`, position `x`, best first.
    pub fn fit_event(
        &self,
        d: f64,
        x: f64,
        chain: &ChainView,
        which: Which,
        engine: &mut TraceEngine,
    ) -> Result<Vec<ModelFit>, CompareError> {
        let (f, g) = self.local_reflection(d, x, chain, which, engine)?;
        Ok(fit_all(
            &f,
            &g,
            chain.impedance_ohm,
            0.5 * self.resolution_s,
        ))
    }
}

/// Largest amplitude gain loss compensation may apply (40 dB): beyond it, noise would be lifted to look like
/// signal. Elements needing more are reported as not visible.
pub const MAX_COMPENSATION: f64 = 100.0;

/// Sub-bin refinement on the exact response: golden-section search for the maximum of |h(t)| within one
/// analysis step of the grid estimate.
pub fn refine_exact(spectrum: &BandPassSpectrum, t: f64, dt: f64) -> (f64, f64) {
    let (mut a, mut b) = (t - dt, t + dt);
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let f = |x: f64| -spectrum.eval(x).norm();
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..40 {
        if fc < fd {
            b = d;
            d = c;
            fd = fc;
            c = b - r * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + r * (b - a);
            fd = f(d);
        }
    }
    let tm = 0.5 * (a + b);
    (tm, spectrum.eval(tm).norm())
}

/// A distance map whose "metres" are round-trip seconds, for asking the trace engine for a time span.
struct SecondsMap;

impl DistanceMap for SecondsMap {
    fn distance_m(&self, round_trip_s: f64) -> f64 {
        round_trip_s
    }
    fn round_trip_s(&self, distance_m: f64) -> f64 {
        distance_m
    }
    fn describe(&self) -> String {
        "round-trip seconds".into()
    }
}
