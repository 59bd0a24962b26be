//! One sweep, analysed: its band-pass trace over the visible line, the noise floor estimated from it, the
//! events found in it, and for any event the local reflection versus frequency (gated, moved to the event's
//! plane and loss-compensated with the line model) with its lumped-model fits.
//!
//! Conventions: e^{+j omega t}; the band-pass response is normalised so a lone reflection rho reads |rho|
//! (see `transform::bandpass`); delays are round-trip seconds; the local reflection of an event at delay d is
//! Gamma_loc(f) = Gamma_gated(f) e^{+j 2 pi f d} 10^{L(x, f)/20}, with L the model's round-trip loss to it.

use super::chain::{ghz_basis, ChainView, Which};
use super::detect::{find_events, noise_sigma, LobeShape, Peak};
use super::lumped::{fit_all, ModelFit, MAX_FIT_POINTS};
use super::CompareError;
use crate::transform::{
    bandpass::BandPassSpectrum,
    czt::{phasors, turned},
    gate::GateSource,
    uniform_grid, GatePlan, Grid, TraceEngine, Window,
};
use crate::Warning;
use num_complex::Complex64;
use std::sync::{Arc, OnceLock};

/// Points per resolution cell on the analysis grid (a fine grid makes the parabolic peak estimate a good
/// start for the exact refinement).
pub const POINTS_PER_RESOLUTION: f64 = 8.0;

/// The piece transforms' outputs are planned in multiples of this many (see `SweepAnalysis::new`).
pub const CHIRP_OUTPUT_QUANTUM: usize = 64;

/// Half-width of the gate put round an event to fit its lumped model, in resolution cells.
pub const GATE_HALF_WIDTH_CELLS: f64 = 2.5;

/// Zero-padding of the gates put on a sweep's echoes (local reflections, the far end's lag): twice the
/// sweep's points, so the gate's shape is sampled at half a bin of the record.
pub const ECHO_GATE_PADDING: usize = 2;

/// Share of the band dropped at each edge before a lumped fit, where the gate's edge correction leaves the
/// most error (common practice, no source).
pub const FIT_BAND_EDGE: f64 = 0.08;

/// The bins of a sweep of `n` points that local reflections keep: the band less [`FIT_BAND_EDGE`] of it at
/// each edge (at least one bin).
pub fn fit_band(n: usize) -> std::ops::Range<usize> {
    let skip = ((n as f64) * FIT_BAND_EDGE) as usize;
    skip..n.saturating_sub(skip).max(skip + 1).min(n)
}

/// Most frequencies a local reflection ([`SweepAnalysis::local_reflection`]) is read at: twice what a
/// lumped fit uses ([`MAX_FIT_POINTS`]). A gate 2 [`GATE_HALF_WIDTH_CELLS`] resolution cells wide leaves a
/// spectrum that varies over about the inverse of its width, 1/(5 w) of the band for a window w bins wide at
/// -6 dB (a twelfth for kaiser:9), so what is read from it, a fit, a mean level, a loss law, reads the same
/// from a few hundred of its bins as from every bin of a long sweep (docs/method.md, "Explanation: lumped
/// models").
pub const LOCAL_REFLECTION_POINTS: usize = 2 * MAX_FIT_POINTS;

/// The bins of a sweep of `n` points a local reflection is read at: the inner band ([`fit_band`]) every
/// `stride` bins from its first, at most [`LOCAL_REFLECTION_POINTS`] of them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LocalBins {
    pub first: usize,
    pub stride: usize,
    pub count: usize,
}

impl LocalBins {
    /// The sweep's bin of the `k`-th value.
    pub fn bin(&self, k: usize) -> usize {
        self.first + k * self.stride
    }
}

/// [`LocalBins`] for a sweep of `n` points.
pub fn local_bins(n: usize) -> LocalBins {
    let band = fit_band(n);
    let stride = band.len().div_ceil(LOCAL_REFLECTION_POINTS).max(1);
    LocalBins {
        first: band.start,
        stride,
        count: band.len().div_ceil(stride),
    }
}

/// The echo gates' plan from `start` to `stop` (round-trip s): the default shape, [`ECHO_GATE_PADDING`].
fn echo_gate_plan(start: f64, stop: f64) -> GatePlan {
    let mut plan = GatePlan::new(start, stop);
    plan.padding = ECHO_GATE_PADDING;
    plan
}

/// A stretch of the analysis grid with its own compensation: the spectrum moved through the modelled chain
/// up to the stretch's start.
#[derive(Debug, Clone)]
pub struct Piece {
    /// First bin of the stretch on the analysis grid, and one past its last.
    pub bins: (usize, usize),
    /// Compensated, windowed, normalised spectrum.
    pub spectrum: BandPassSpectrum,
    /// Window-weighted RMS amplitude gain of the compensation (noise grows by this much).
    pub gain: f64,
    /// What the compensation undid: the modelled round trip and the chain's delay reference frequency, Hz
    /// (`None` where nothing is compensated). A second analysis of the same sweep takes the piece's
    /// spectrum from the first where these are the same ([`SweepAnalysis::again`]).
    pub undone: Option<(super::chain::LossModel, f64)>,
}

/// Whether two pieces' compensations are the same, bit for bit.
fn same_undone(
    a: &Option<(super::chain::LossModel, f64)>,
    b: &Option<(super::chain::LossModel, f64)>,
) -> bool {
    let bits = |u: &Option<(super::chain::LossModel, f64)>| {
        u.map(|(m, r)| [m.a_sqrt, m.a_lin, m.a_flat, r].map(f64::to_bits))
    };
    bits(a) == bits(b)
}

/// One sweep's analysis.
#[derive(Debug, Clone)]
pub struct SweepAnalysis {
    pub freqs: Vec<f64>,
    /// The sweep as analysed (read only: its echo gates keep its time response once made).
    pub s11: Vec<Complex64>,
    pub grid: Grid,
    /// Spacing of the analysis grid, which starts at zero delay, s.
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
    pub warnings: Vec<Warning>,
    /// The window's coefficients over the sweep (for the compensation's band-weighted gain).
    pub window_w: Vec<f64>,
    /// Each frequency in GHz and its square root, as [`super::chain::LossModel::db`] takes them (worked out
    /// once for the compensation's band-weighted gains).
    ghz: Vec<(f64, f64)>,
    /// With an amplifier in the sweep's path (this sweep or the other of its pair returned more power
    /// than it was sent): the gain the sweep was scaled down by before the analysis, dB. `None` for a passive line.
    pub path_gain_db: Option<f64>,
    /// False when an amplifier in the path leaves the absolute size of the sweep's reflections unknown (no
    /// open or short end and too few of the line file's joints to set it): costs read from them mean nothing.
    pub scale_known: bool,
    /// The sweep's padded time response for its echo gates ([`ECHO_GATE_PADDING`]), made at the first gate.
    gates: OnceLock<Arc<GateSource>>,
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

/// Step at which the growth of the modelled loss is checked along a segment, m.
pub const PIECE_MAX_M: f64 = 0.05;
/// Growth of the compensation applied (the round-trip loss up to the cap) across one piece at any frequency
/// of the band, dB: at the top of the band until the cap stops it there, lower in the band after. Each
/// piece is compensated to its middle, so at most 0.75 dB is left undone or overdone at its ends; event
/// levels are then rescaled to their own position (common practice, no source).
pub const PIECE_MAX_DB: f64 = 1.5;
/// Frequencies, evenly spread over the band from its first to its last, at which the growth of the
/// compensation is checked for piece boundaries: the loss grows fastest at the top of the band until the cap
/// stops it there, then fastest at the highest frequency not yet capped.
pub const PIECE_PROBES: usize = 9;

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
        Self::again(freqs, s11, window, t_max, chain, which, engine, None)
    }

    /// [`Self::new`], after an analysis `prior` of the same sweep (on a chain whose delays were since
    /// moved, say): each piece whose compensation is the same as one of `prior`'s takes that piece's
    /// compensated spectrum and gain instead of working them out again, and its trace too where it starts
    /// at the same bin and the transforms' plan is the same. The result is the same, bit for bit.
    #[allow(clippy::too_many_arguments)]
    pub fn again(
        freqs: &[f64],
        s11: &[Complex64],
        window: &Window,
        t_max: f64,
        chain: &ChainView,
        which: Which,
        engine: &mut TraceEngine,
        prior: Option<&SweepAnalysis>,
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
        let w = engine.window_coefficients(window, freqs.len());
        let w2: f64 = w.iter().map(|x| x * x).sum();
        // The frequencies as the loss models take them, for every piece's compensation.
        let ghz: Vec<(f64, f64)> = freqs.iter().map(|&f| ghz_basis(f)).collect();

        // Piece boundaries: where the compensation a place needs has grown by PIECE_MAX_DB at some frequency
        // of the band since the piece began, checked at PIECE_MAX_M steps and at every segment end. The
        // compensation applied is the modelled round-trip loss up to the cap: once the top of the band is
        // capped, the lower frequencies still grow, and a piece that stopped there would leave a reflection
        // further on short of its capped compensation by all the loss in between (behind a 17 dB pad and
        // warm niobium-titanium, 12 dB short at the band centre, where the comparator reckons with none).
        // No pieces once the whole band is capped.
        let cap_db = 20.0 * MAX_COMPENSATION.log10();
        let probes: [f64; PIECE_PROBES] = std::array::from_fn(|k| {
            freqs[0] + (freqs[freqs.len() - 1] - freqs[0]) * k as f64 / (PIECE_PROBES - 1) as f64
        });
        let applied = |x: f64| probes.map(|f| chain.loss_to_db(x, f, which).min(cap_db));
        let mut xs = vec![0.0];
        if chain.compensates() {
            let mut last = applied(0.0);
            'segments: for seg in &chain.segments {
                if seg.start_m >= chain.visible_end_m() {
                    break;
                }
                let n = ((seg.end_m - seg.start_m) / PIECE_MAX_M).ceil().max(1.0) as usize;
                for k in 1..=n {
                    if last[0] >= cap_db {
                        break 'segments;
                    }
                    let x = seg.start_m + (seg.end_m - seg.start_m) * k as f64 / n as f64;
                    // A line's loss grows with frequency, and grows fastest at the top of the band: until
                    // the top is capped, it alone decides.
                    let top = chain.loss_to_db(x, probes[PIECE_PROBES - 1], which);
                    let grew = if top < cap_db {
                        top - last[PIECE_PROBES - 1] > PIECE_MAX_DB
                    } else {
                        let now = applied(x);
                        now.iter().zip(&last).any(|(a, b)| a - b > PIECE_MAX_DB)
                    };
                    if grew {
                        xs.push(x);
                        last = applied(x);
                    }
                }
            }
        }
        let mut pieces = Vec::new();
        let w_sum: f64 = w.iter().sum();
        let same_sweep = prior
            .filter(|p| p.freqs == freqs && p.s11 == s11 && p.window_w[..] == w[..] && p.dt == dt);
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
            // Compensate to the middle of the piece, so what is left undone is at most half a piece either way.
            let x_mid = match xs.get(k + 1) {
                Some(&x1) => 0.5 * (x + x1),
                None => x,
            };
            let model = chain.loss_model_to(x_mid, which);
            let undone = chain
                .compensates()
                .then_some((model, chain.delay_reference_hz));
            // The prior analysis' piece of the same compensation, when it analysed the same sweep.
            let kept =
                same_sweep.and_then(|p| p.pieces.iter().find(|q| same_undone(&q.undone, &undone)));
            let (weighted, gain) = match kept {
                Some(q) => (q.spectrum.weighted.clone(), q.gain),
                None => {
                    let comp: Vec<Complex64> = match undone {
                        Some(_) => chain.compensation_over(&model, &ghz, MAX_COMPENSATION),
                        None => vec![Complex64::new(1.0, 0.0); freqs.len()],
                    };
                    let gain = (w
                        .iter()
                        .zip(&comp)
                        .map(|(wn, c)| wn * wn * c.norm_sqr())
                        .sum::<f64>()
                        / w2)
                        .sqrt();
                    let weighted: Vec<Complex64> = s11
                        .iter()
                        .zip(&comp)
                        .zip(w.iter())
                        .map(|((g, c), wn)| g * c * (wn / w_sum))
                        .collect();
                    (weighted, gain)
                }
            };
            let spectrum = BandPassSpectrum {
                start_hz: grid.start_hz,
                step_hz: grid.step_hz,
                weighted,
            };
            pieces.push(Piece {
                bins: (first, last),
                spectrum,
                gain,
                undone,
            });
        }
        let mut mag = vec![0.0; points];
        let mut gain = vec![1.0; points];
        // One chirp-z plan serves every piece: a piece starting at t_s is the same transform of the spectrum
        // turned by e^{+j 2 pi k df t_s}, so only the plan for t0 = 0 and the longest piece is built.
        // Rounded up to a whole number of CHIRP_OUTPUT_QUANTUM outputs, so that sweeps of one grid whose
        // lines differ a little in length share the plan (the outputs past a piece's end are not read).
        let longest_of = |ps: &[Piece]| {
            ps.iter()
                .map(|p| p.bins.1 - p.bins.0)
                .max()
                .unwrap_or(0)
                .next_multiple_of(CHIRP_OUTPUT_QUANTUM)
        };
        let longest = longest_of(&pieces);
        if longest > 0 {
            let plan = engine
                .cache()
                .chirp_z(freqs.len(), longest, 0.0, grid.step_hz * dt);
            // A piece that the prior analysis of the same sweep transformed alike (the same compensation
            // from the same first bin, on a plan of as many outputs) and at least as far: its trace is
            // the prior's.
            let transformed = same_sweep.filter(|a| longest_of(&a.pieces) == longest);
            for p in &pieces {
                let done = transformed.filter(|a| {
                    a.pieces.iter().any(|q| {
                        same_undone(&q.undone, &p.undone)
                            && q.bins.0 == p.bins.0
                            && q.bins.1 >= p.bins.1
                    })
                });
                if let Some(a) = done {
                    mag[p.bins.0..p.bins.1].copy_from_slice(&a.mag[p.bins.0..p.bins.1]);
                    gain[p.bins.0..p.bins.1].fill(p.gain);
                    continue;
                }
                let t_s = p.bins.0 as f64 * dt;
                let mut shifted = Vec::with_capacity(p.spectrum.weighted.len());
                turned(&p.spectrum.weighted, 0.0, grid.step_hz, t_s, |_, _, z| {
                    shifted.push(z)
                });
                let h = engine.cache().apply(&plan, &shifted);
                // |h| needs no carrier e^{+j 2 pi f0 t}: it has unit modulus. (As the root of the squared
                // modulus: a trace's values are far from over- and underflow, where `hypot` earns its cost.)
                for (i, v) in (p.bins.0..p.bins.1).zip(h) {
                    mag[i] = v.norm_sqr().sqrt();
                    gain[i] = p.gain;
                }
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
            dt,
            mag,
            gain,
            pieces,
            sigma,
            events: Vec::new(),
            resolution_s,
            alias_free_s,
            warnings,
            window_w: w.to_vec(),
            ghz,
            path_gain_db: None,
            scale_known: true,
            gates: OnceLock::new(),
        };
        for e in &mut events {
            let piece = out.piece_at(e.delay_s);
            let (d, m) = refine_exact(&out.pieces[piece].spectrum, e.delay_s, dt);
            e.delay_s = d;
            // The piece's compensation holds for its middle: rescale to the event's own position.
            let exact = if chain.compensates() {
                out.weighted_gain(
                    &chain.loss_model_to(chain.position_of(d, which, None), which),
                    &w,
                )
            } else {
                1.0
            };
            e.magnitude = m * exact / out.pieces[piece].gain;
        }
        out.events = events;
        Ok(out)
    }

    /// Window-weighted RMS gain by which compensation lifts a reflection at as-built `x` (1 where nothing is
    /// compensated).
    pub fn level_gain(&self, chain: &ChainView, x: f64, which: Which) -> f64 {
        if !chain.compensates() {
            return 1.0;
        }
        self.weighted_gain(&chain.loss_model_to(x, which), &self.window_w)
    }

    /// Window-weighted RMS gain of the compensation for a loss model `m` (how much a reflection there is
    /// lifted, on average over the band as the window weighs it).
    fn weighted_gain(&self, m: &super::chain::LossModel, w: &[f64]) -> f64 {
        let w2: f64 = w.iter().map(|x| x * x).sum();
        (super::chain::weighted_power(m, &self.ghz, w, MAX_COMPENSATION) / w2).sqrt()
    }

    /// Index of the piece whose stretch holds delay `t`.
    pub fn piece_at(&self, t: f64) -> usize {
        let bin = (t / self.dt).round().max(0.0) as usize;
        self.pieces
            .iter()
            .position(|p| bin < p.bins.1)
            .unwrap_or(self.pieces.len().saturating_sub(1))
    }

    /// Amplitude gain of the compensation at delay `t` (1 where nothing is compensated).
    pub fn gain_at(&self, t: f64) -> f64 {
        self.pieces[self.piece_at(t)].gain
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
    /// part of the band ([`fit_band`]) read every few bins ([`local_bins`]): gated, moved to the event's
    /// plane and compensated for `chain`'s modelled loss and dispersion in sweep `which`. Returns
    /// (frequencies, Gamma_loc).
    pub fn local_reflection(
        &self,
        d: f64,
        x: f64,
        chain: &ChainView,
        which: Which,
        engine: &mut TraceEngine,
    ) -> Result<(Vec<f64>, Vec<Complex64>), CompareError> {
        self.local_reflection_low(d, x, chain, which, engine, usize::MAX)
    }

    /// The first `points` values of [`Self::local_reflection`] (the bottom of its band; all of it for
    /// `usize::MAX`). Every value is gated by a direct sum over the gate's samples at its own bin: the same
    /// values as the transforms give, to rounding, for the bins read only.
    pub fn local_reflection_low(
        &self,
        d: f64,
        x: f64,
        chain: &ChainView,
        which: Which,
        engine: &mut TraceEngine,
        points: usize,
    ) -> Result<(Vec<f64>, Vec<Complex64>), CompareError> {
        let half = GATE_HALF_WIDTH_CELLS * self.resolution_s;
        // A gate inside the record whatever `d` is: an echo at the very end of the alias-free time (the port's
        // own echo wrapping round) gets a gate that ends at the record's end.
        let width = (2.0 * half).min(self.alias_free_s);
        let start = (d - half).clamp(0.0, (self.alias_free_s - width).max(0.0));
        let stop = (start + width).min(self.alias_free_s);
        let n = self.freqs.len();
        let bins = local_bins(n);
        let gated = self.echo_gate_local(start, stop, points, engine)?;
        let count = gated.len();
        let f: Vec<f64> = (0..count).map(|k| self.freqs[bins.bin(k)]).collect();
        let comp = if chain.compensates() {
            let ghz: Vec<(f64, f64)> = (0..count).map(|k| self.ghz[bins.bin(k)]).collect();
            chain.compensation_over(&chain.loss_model_to(x, which), &ghz, MAX_COMPENSATION)
        } else {
            vec![Complex64::new(1.0, 0.0); f.len()]
        };
        // The move to the event's plane, e^{+j 2 pi f d}, on the uniform grid read every `stride` bins.
        let df = (self.freqs[n - 1] - self.freqs[0]) / (n - 1).max(1) as f64;
        let g: Vec<Complex64> = gated
            .iter()
            .zip(&comp)
            .zip(phasors(f[0], df * bins.stride as f64, d))
            .map(|((v, c), p)| v * c * p)
            .collect();
        Ok((f, g))
    }

    /// The sweep's padded time response for its echo gates, transformed at the first gate.
    fn gate_source(&self, engine: &mut TraceEngine) -> Result<&GateSource, CompareError> {
        if let Some(s) = self.gates.get() {
            return Ok(s);
        }
        let s = engine
            .gate_source(&self.freqs, &self.s11, ECHO_GATE_PADDING)
            .map_err(CompareError::Transform)?;
        Ok(self.gates.get_or_init(|| s))
    }

    /// The sweep gated from `start` to `stop` (round-trip s) with the echo gates' shape and padding
    /// ([`ECHO_GATE_PADDING`]), edge-corrected, read at the first `points` of the local reflections' bins
    /// ([`local_bins`]; all of them for `usize::MAX`): each value a direct sum over the gate's samples, the
    /// sweep's time response transformed once for all its gates.
    pub fn echo_gate_local(
        &self,
        start: f64,
        stop: f64,
        points: usize,
        engine: &mut TraceEngine,
    ) -> Result<Vec<Complex64>, CompareError> {
        let bins = local_bins(self.freqs.len());
        let count = bins.count.min(points);
        self.gate_source(engine)?
            .gate_every(&echo_gate_plan(start, stop), bins.first, bins.stride, count)
            .map_err(CompareError::Transform)
    }

    /// Lumped-model fits of a local reflection (from [`Self::local_reflection`]), best first.
    pub fn fit_local(&self, freqs: &[f64], gamma: &[Complex64], z0: f64) -> Vec<ModelFit> {
        fit_all(freqs, gamma, z0, FIT_MAX_DELAY_CELLS * self.resolution_s)
    }
}

/// Largest residual delay a lumped fit may take, in resolution cells: the peak is already placed to a small
/// fraction of a cell, and what remains is the discontinuity's own phase slope (2 Z0 C for a gap: 30 ps for
/// 300 fF on 50 ohm).
pub const FIT_MAX_DELAY_CELLS: f64 = 0.15;

/// Largest amplitude gain loss compensation may apply (40 dB): beyond it, noise would be lifted to look like
/// signal. Elements needing more are reported as not visible.
pub const MAX_COMPENSATION: f64 = 100.0;

/// Newton step, in analysis-grid bins, after which [`refine_exact`] takes no second step. Near a simple
/// maximum Newton's method converges quadratically: what a step leaves is of the order of its square over
/// the main lobe's width (eight bins), about 1e-5 of a bin after a step of a hundredth (a fraction of a
/// femtosecond on the bench's grids), where a second pass over the spectrum would only confirm it. On the
/// survey bench, dropping the second step there moved positions by at most 2 nm and every figure in dB by
/// under 1e-8 dB; most first steps from the grid's parabola are between a thousandth and a hundredth of a
/// bin (of the survey bench's 1190 placements, 12 % skip the second pass at a thousandth, 76 % at a
/// hundredth).
pub const SETTLED_STEP_BINS: f64 = 1e-2;

/// Sub-bin refinement on the exact response: Newton steps on |h|^2 from the grid's estimate, each on h and
/// its first two derivatives from one pass over the spectrum ([`BandPassSpectrum::eval_derivatives`]);
/// the peak's height from the second-order expansion at the last pass. Near its top the main lobe is
/// smooth and nearly quadratic, so from within a bin two steps place the peak to far under a femtosecond,
/// and one does where it moves the estimate by at most [`SETTLED_STEP_BINS`]. Where a step would not land
/// on a maximum within a bin (a shoulder, noise), [`refine_by_parabolas`] takes over.
pub fn refine_exact(spectrum: &BandPassSpectrum, t: f64, dt: f64) -> (f64, f64) {
    let mut tm = t;
    let mut height = 0.0;
    for _ in 0..2 {
        let [g0, g1, g2] = spectrum.eval_derivatives(tm);
        // f = |g|^2, f' = 2 Re(conj(g) g'), f'' = 2 (|g'|^2 + Re(conj(g) g'')).
        let f0 = g0.norm_sqr();
        let f1 = 2.0 * (g0.conj() * g1).re;
        let f2 = 2.0 * (g1.norm_sqr() + (g0.conj() * g2).re);
        let step = if f2 < 0.0 { -f1 / f2 } else { f64::INFINITY };
        // (A NaN or infinite step fails the first test.)
        if !step.is_finite() || step.abs() > dt || (tm + step - t).abs() > dt {
            return refine_by_parabolas(spectrum, t, dt);
        }
        tm += step;
        height = (f0 + f1 * step + 0.5 * f2 * step * step).max(0.0).sqrt();
        if step.abs() <= SETTLED_STEP_BINS * dt {
            break;
        }
    }
    (tm, height)
}

/// Sub-bin refinement by parabolas: the vertex of a parabola through |h| at three exact samples round the
/// estimate, twice, with the spacing shrunk from a quarter to a thirty-second of the grid step (seven
/// evaluations of the direct sum); it steps towards the larger side where the samples do not bracket a
/// maximum.
pub fn refine_by_parabolas(spectrum: &BandPassSpectrum, t: f64, dt: f64) -> (f64, f64) {
    let mut tm = t;
    let mut mid = spectrum.eval(tm).norm();
    for h in [dt / 4.0, dt / 32.0] {
        let (a, c) = (spectrum.eval(tm - h).norm(), spectrum.eval(tm + h).norm());
        let den = a - 2.0 * mid + c;
        if den < 0.0 {
            let p = (0.5 * (a - c) / den).clamp(-1.0, 1.0);
            tm += p * h;
            mid = spectrum.eval(tm).norm();
        } else if a > mid || c > mid {
            // Not yet bracketing a maximum: step towards the larger side.
            tm += if c > a { h } else { -h };
            mid = spectrum.eval(tm).norm();
        }
    }
    (tm, mid)
}
