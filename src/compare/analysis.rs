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
    bandpass::BandPassSpectrum, gate_with, uniform_grid, GatePlan, Grid, TimeAxis, TraceEngine,
    Window,
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

/// A stretch of the analysis grid with its own compensation: the spectrum moved through the modelled chain
/// up to the stretch's start.
#[derive(Debug, Clone)]
pub struct Piece {
    /// First bin of the stretch on the analysis grid, and one past its last.
    pub bins: (usize, usize),
    /// As-built position the compensation is for, m.
    pub x_m: f64,
    /// Compensated, windowed, normalised spectrum.
    pub spectrum: BandPassSpectrum,
    /// Window-weighted RMS amplitude gain of the compensation (noise grows by this much).
    pub gain: f64,
}

/// One sweep's analysis.
#[derive(Debug, Clone)]
pub struct SweepAnalysis {
    pub freqs: Vec<f64>,
    pub s11: Vec<Complex64>,
    pub grid: Grid,
    /// Round-trip delay of the first analysis point and the spacing, s.
    pub t0: f64,
    pub dt: f64,
    /// |h| on the analysis grid (linear, loss-compensated where the chain has a model).
    pub mag: Vec<f64>,
    /// Amplitude gain of the compensation at each bin.
    pub gain: Vec<f64>,
    pub pieces: Vec<Piece>,
    /// Noise RMS magnitude of the uncompensated trace.
    pub sigma: f64,
    pub events: Vec<Peak>,
    /// Two-event resolution, round-trip s.
    pub resolution_s: f64,
    /// Alias-free round-trip time 1/df, s.
    pub alias_free_s: f64,
    /// Largest amplitude gain the compensation applied (linear).
    pub max_gain: f64,
    pub warnings: Vec<Warning>,
}

/// The window's shape as the detector needs it, and the resolution (round-trip s) over `bandwidth_hz`.
/// No second event is claimed within 1.3 times the -6 dB width of a stronger one: that covers the main lobe
/// to its first null for the windows offered (Kaiser beta 9: null at 3.03 bins, -6 dB width 2.34 bins;
/// Hann: 2.0 and 2.0; rectangular: 1.0 and 1.21; Harris 1978, Table 1 and eq. for the Kaiser null).
pub fn lobe_shape(window: &Window, bandwidth_hz: f64) -> (LobeShape, f64) {
    let fig = window.figures();
    let resolution_s = fig.mainlobe_6db_bins / bandwidth_hz;
    (
        LobeShape {
            main_lobe_half_s: 1.3 * resolution_s,
            sidelobe_db: fig.highest_sidelobe_db,
        },
        resolution_s,
    )
}

/// Longest stretch of line one compensation serves, m: within it the loss it leaves uncompensated stays a
/// small fraction of a dB for the cables in the catalogue (common practice, no source).
pub const PIECE_MAX_M: f64 = 0.1;

impl SweepAnalysis {
    /// Analyse S11 `s11` on `freqs` up to round-trip delay `t_max` (clipped to the alias-free time), with
    /// the loss and dispersion of `chain` in sweep `which`'s state undone piece by piece.
    pub fn new(
        freqs: &[f64],
        s11: &[Complex64],
        window: &Window,
        t_max: f64,
        chain: &ChainView,
        which: Which,
        engine: &mut TraceEngine,
    ) -> Result<Self, CompareError> {
        if freqs.len() != s11.len() {
            return Err(CompareError::Transform(
                crate::transform::TransformError::LengthMismatch {
                    freqs: freqs.len(),
                    values: s11.len(),
                },
            ));
        }
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
        let dt = resolution_s / POINTS_PER_RESOLUTION;
        let points = ((t_max / dt).ceil() as usize).max(4);
        let w = window.coefficients(freqs.len());
        let w2: f64 = w.iter().map(|x| x * x).sum();

        // Piece boundaries: segment ends and at most PIECE_MAX_M apart, up to the visible end.
        let mut xs = vec![0.0];
        if chain.as_built {
            for seg in &chain.segments {
                if seg.start_m >= chain.visible_end_m() {
                    break;
                }
                let n = ((seg.end_m - seg.start_m) / PIECE_MAX_M).ceil().max(1.0) as usize;
                for k in 1..=n {
                    xs.push(seg.start_m + (seg.end_m - seg.start_m) * k as f64 / n as f64);
                }
            }
            xs.pop();
        }
        let mut pieces = Vec::new();
        let mut max_gain: f64 = 1.0;
        for (k, &x) in xs.iter().enumerate() {
            let first = if k == 0 {
                0
            } else {
                (chain.delay_to(x, which, None) / dt).ceil() as usize
            };
            let last = match xs.get(k + 1) {
                Some(&x1) => (chain.delay_to(x1, which, None) / dt).ceil() as usize,
                None => points,
            }
            .min(points);
            if last <= first {
                continue;
            }
            let comp: Vec<Complex64> = if chain.as_built {
                freqs
                    .iter()
                    .map(|&f| chain.compensation(x, which, f, MAX_COMPENSATION))
                    .collect()
            } else {
                vec![Complex64::new(1.0, 0.0); freqs.len()]
            };
            let gain = (w
                .iter()
                .zip(&comp)
                .map(|(wn, c)| wn * wn * c.norm_sqr())
                .sum::<f64>()
                / w2)
                .sqrt();
            max_gain = max_gain.max(comp.iter().map(|c| c.norm()).fold(0.0, f64::max));
            let values: Vec<Complex64> = s11.iter().zip(&comp).map(|(g, c)| g * c).collect();
            let spectrum = BandPassSpectrum::new(&grid, &values, window);
            pieces.push(Piece {
                bins: (first, last),
                x_m: x,
                spectrum,
                gain,
            });
        }
        let mut mag = vec![0.0; points];
        let mut gain = vec![1.0; points];
        for p in &pieces {
            let axis = TimeAxis {
                start_s: p.bins.0 as f64 * dt,
                step_s: dt,
                points: p.bins.1 - p.bins.0,
                fft_len: None,
            };
            let h = p.spectrum.on_axis(&axis, engine.cache());
            for (i, v) in (p.bins.0..p.bins.1).zip(h) {
                mag[i] = v.norm();
                gain[i] = p.gain;
            }
        }
        // Noise from the uncompensated domain, where it is the same everywhere.
        let raw: Vec<f64> = mag.iter().zip(&gain).map(|(m, g)| m / g).collect();
        let sigma = noise_sigma(&raw);
        let mut events = find_events(&mag, &gain, 0.0, dt, lobe, sigma);
        let mut out = SweepAnalysis {
            freqs: freqs.to_vec(),
            s11: s11.to_vec(),
            grid,
            t0: 0.0,
            dt,
            mag,
            gain,
            pieces,
            sigma,
            events: Vec::new(),
            resolution_s,
            alias_free_s,
            max_gain,
            warnings,
        };
        for e in &mut events {
            let piece = out.piece_at(e.delay_s);
            let (d, m) = refine_exact(&out.pieces[piece].spectrum, e.delay_s, dt);
            e.delay_s = d;
            e.magnitude = m;
        }
        out.events = events;
        Ok(out)
    }

    /// Index of the piece whose stretch holds delay `t`.
    pub fn piece_at(&self, t: f64) -> usize {
        let bin = (t / self.dt).round().max(0.0) as usize;
        self.pieces
            .iter()
            .position(|p| bin < p.bins.1)
            .unwrap_or(self.pieces.len().saturating_sub(1))
    }

    /// Compensated complex band-pass response at delay `t` (exact sum).
    pub fn h(&self, t: f64) -> Complex64 {
        self.pieces[self.piece_at(t)].spectrum.eval(t)
    }

    /// Noise RMS of the compensated trace at delay `t`.
    pub fn sigma_at(&self, t: f64) -> f64 {
        self.sigma * self.pieces[self.piece_at(t)].gain
    }

    /// Signal-to-noise ratio (amplitude) of a compensated magnitude `m` at delay `t`.
    pub fn snr(&self, m: f64, t: f64) -> f64 {
        let s = self.sigma_at(t);
        if s > 0.0 {
            m / s
        } else {
            1e6
        }
    }

    /// The local reflection of an event at delay `d` (as-built position `x`), versus frequency, on the inner
    /// part of the band: gated, moved to the event's plane and compensated for `chain`'s modelled loss and
    /// dispersion in sweep `which`. Returns (frequencies, Gamma_loc).
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
                let comp = if chain.as_built {
                    chain.compensation(x, which, fk, MAX_COMPENSATION)
                } else {
                    Complex64::new(1.0, 0.0)
                };
                gated.values[k]
                    * comp
                    * Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI * fk * d)
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
