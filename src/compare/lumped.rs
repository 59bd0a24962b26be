//! Lumped models of a single discontinuity between two matched lines, and their fit to a measured,
//! de-embedded reflection versus frequency.
//!
//! Conventions: time dependence e^{+j omega t}; `z0` is the line's characteristic impedance (real, ohm);
//! every model gives the reflection coefficient seen from the source side with the far side matched:
//! a series impedance Z gives Gamma = Z / (2 Z0 + Z), a shunt admittance Y gives Gamma = -Y Z0 / (2 + Y Z0)
//! (circuit theory; e.g. Pozar, Microwave Engineering, 4th ed., sec. 4.4 two-port networks, from memory).
//! The fit allows a small residual delay `delta_s` (the position uncertainty of the gate centre), so the model
//! compared with the data is Gamma_model(f) e^{-j 2 pi f delta_s}.

use num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

pub use crate::line::fault::gap_capacitance;
use crate::numeric::brent_min;

/// The bracket left after 30 golden-section steps, relative to the first: 0.618^30 (the searches' tolerance,
/// relative to their bracket).
const GOLDEN_SHRINK_30: f64 = 5.4e-7;

/// The lumped models a finding can be explained by.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Hash)]
#[serde(rename_all = "kebab-case")]
pub enum ModelType {
    /// Series capacitance: the open centre-conductor joint of a pulled-back pin. Value in farads.
    SeriesCapacitance,
    /// Series resistance: a degraded contact. Value in ohms.
    SeriesResistance,
    /// Series inductance: a loose pin or an air gap round the pin. Value in henries.
    SeriesInductance,
    /// Shunt capacitance: a crushed (locally low-impedance) section. Value in farads.
    ShuntCapacitance,
    /// A step to another characteristic impedance. Value in ohms (the impedance after the step).
    ImpedanceStep,
    /// Total reflection with Gamma = +1.
    Open,
    /// Total reflection with Gamma = -1.
    Short,
}

impl ModelType {
    /// Every model, in the order they are tried.
    pub const ALL: [ModelType; 7] = [
        ModelType::SeriesCapacitance,
        ModelType::SeriesResistance,
        ModelType::SeriesInductance,
        ModelType::ShuntCapacitance,
        ModelType::ImpedanceStep,
        ModelType::Open,
        ModelType::Short,
    ];

    /// The SI unit of the model's value.
    pub fn unit(self) -> &'static str {
        match self {
            ModelType::SeriesCapacitance | ModelType::ShuntCapacitance => "F",
            ModelType::SeriesResistance | ModelType::ImpedanceStep => "ohm",
            ModelType::SeriesInductance => "H",
            ModelType::Open | ModelType::Short => "",
        }
    }

    /// The model's stable name in JSON (`series-capacitance`, ...).
    pub fn name(self) -> &'static str {
        match self {
            ModelType::SeriesCapacitance => "series-capacitance",
            ModelType::SeriesResistance => "series-resistance",
            ModelType::SeriesInductance => "series-inductance",
            ModelType::ShuntCapacitance => "shunt-capacitance",
            ModelType::ImpedanceStep => "impedance-step",
            ModelType::Open => "open",
            ModelType::Short => "short",
        }
    }

    /// Search range of the model's value, SI. Wide enough for anything a cryostat joint does; `None` for the
    /// models without a value.
    fn range(self, z0: f64) -> Option<(f64, f64)> {
        match self {
            ModelType::SeriesCapacitance => Some((1e-16, 1e-10)),
            ModelType::ShuntCapacitance => Some((1e-16, 1e-10)),
            ModelType::SeriesInductance => Some((1e-13, 1e-7)),
            ModelType::SeriesResistance => Some((1e-3, 1e5)),
            // Impedance after a step: between Z0/20 and 20 Z0, searched on a log scale.
            ModelType::ImpedanceStep => Some((z0 / 20.0, z0 * 20.0)),
            ModelType::Open | ModelType::Short => None,
        }
    }

    /// For a model whose reflection is a real constant rho(value), increasing with the value (a series
    /// resistance, an impedance step), the value that reflects a given rho: circuit theory, the inverse of
    /// [`Self::gamma`]. `None` for the others.
    fn real_constant_inverse(self) -> Option<fn(f64, f64) -> f64> {
        match self {
            // rho = R / (2 Z0 + R)  =>  R = 2 Z0 rho / (1 - rho).
            ModelType::SeriesResistance => Some(|rho, z0| 2.0 * z0 * rho / (1.0 - rho)),
            // rho = (Z - Z0) / (Z + Z0)  =>  Z = Z0 (1 + rho) / (1 - rho).
            ModelType::ImpedanceStep => Some(|rho, z0| z0 * (1.0 + rho) / (1.0 - rho)),
            _ => None,
        }
    }

    /// Reflection of this model with value `value` at frequency `f` on a line of impedance `z0`.
    pub fn gamma(self, value: f64, f: f64, z0: f64) -> Complex64 {
        let w = 2.0 * PI * f;
        let series = |z: Complex64| z / (2.0 * z0 + z);
        match self {
            ModelType::SeriesCapacitance => {
                // Z = 1/(j w C)  =>  Gamma = 1 / (1 + j 2 w C Z0): an open at DC.
                Complex64::new(1.0, 0.0) / Complex64::new(1.0, 2.0 * w * value * z0)
            }
            ModelType::SeriesResistance => series(Complex64::new(value, 0.0)),
            ModelType::SeriesInductance => series(Complex64::new(0.0, w * value)),
            ModelType::ShuntCapacitance => {
                let yz = Complex64::new(0.0, w * value * z0);
                -yz / (2.0 + yz)
            }
            ModelType::ImpedanceStep => Complex64::new((value - z0) / (value + z0), 0.0),
            ModelType::Open => Complex64::new(1.0, 0.0),
            ModelType::Short => Complex64::new(-1.0, 0.0),
        }
    }

    /// Power transmission |S21|^2 past this discontinuity at `f` (the far side matched): what the line loses
    /// to it, by reflection and, for a resistance, by dissipation.
    pub fn transmission(self, value: f64, f: f64, z0: f64) -> f64 {
        let w = 2.0 * PI * f;
        let series = |z: Complex64| (2.0 * z0 / (2.0 * z0 + z)).norm_sqr();
        match self {
            ModelType::SeriesCapacitance => series(Complex64::new(
                0.0,
                -1.0 / (w * value).max(f64::MIN_POSITIVE),
            )),
            ModelType::SeriesResistance => series(Complex64::new(value, 0.0)),
            ModelType::SeriesInductance => series(Complex64::new(0.0, w * value)),
            ModelType::ShuntCapacitance => {
                let yz = Complex64::new(0.0, w * value * z0);
                (2.0 / (2.0 + yz)).norm_sqr()
            }
            // A lossless step passes 1 - |Gamma|^2 of the power.
            ModelType::ImpedanceStep => 1.0 - ((value - z0) / (value + z0)).powi(2),
            ModelType::Open | ModelType::Short => 0.0,
        }
    }
}

/// The best value of one model for one measured reflection.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ModelFit {
    #[serde(rename = "type")]
    pub model: ModelType,
    /// The model's value in SI (`unit`); 0 for open and short.
    pub value: f64,
    pub unit: &'static str,
    /// RMS of (measured - model) over RMS of measured, 0 = perfect.
    pub fit_error: f64,
    /// The residual delay the fit used, s (positive: the event is later than the gate centre).
    #[serde(skip)]
    pub delta_s: f64,
}

/// Fit every model to `gamma` measured at `freqs` (Hz) on a line of impedance `z0`, allowing a residual delay
/// of at most `max_delta_s`. Returns the fits sorted best first.
///
/// The residual delay is searched on a grid of 0.5 rad of phase at the top frequency, then refined by Brent's
/// method; at each delay, a series resistance's or an impedance step's value in closed form, a reactive
/// model's on a log grid then by Brent's method (on the grid, near the previous delay's best value once
/// there is one; while the delay is refined, near the best delay's value so far; over the whole range again
/// at the delay chosen).
pub fn fit_all(freqs: &[f64], gamma: &[Complex64], z0: f64, max_delta_s: f64) -> Vec<ModelFit> {
    assert_eq!(
        freqs.len(),
        gamma.len(),
        "fit_all: {} frequencies but {} values",
        freqs.len(),
        gamma.len()
    );
    let (f, g) = decimate(freqs, gamma, MAX_FIT_POINTS);
    let norm = (g.iter().map(|x| x.norm_sqr()).sum::<f64>() / g.len().max(1) as f64).sqrt();
    // One turner for every model: the steps of the decimated grid are found once.
    let turner = Turner::new(&f, &g);
    let grid = DelayGrid::new(&f, max_delta_s);
    // The delay grid is scanned once for all the models: the data turned back by a grid delay serve all
    // seven (each model's own sequence of searches is as if it scanned alone).
    let mut scans = [Scan::default(); ModelType::ALL.len()];
    let mut t = Vec::with_capacity(f.len());
    for i in 0..=2 * grid.n {
        let delta = grid.delay(i);
        turner.turn_into(delta, &mut t);
        for (s, &m) in scans.iter_mut().zip(&ModelType::ALL) {
            let (v, r) = best_value(m, &f, &t, z0, s.hint, grid.scout());
            s.hint = Some(v);
            if r < s.best.2 {
                s.best = (delta, v, r);
            }
        }
    }
    let mut fits: Vec<ModelFit> = ModelType::ALL
        .iter()
        .zip(scans)
        .map(|(&m, s)| fit_one(m, &turner, &grid, s.best, z0, norm, &mut t))
        .collect();
    fits.sort_by(|a, b| a.fit_error.total_cmp(&b.fit_error));
    fits
}

/// Most frequency points a fit uses; longer sweeps are decimated evenly (the models are smooth in f).
pub const MAX_FIT_POINTS: usize = 128;

fn decimate(freqs: &[f64], gamma: &[Complex64], max: usize) -> (Vec<f64>, Vec<Complex64>) {
    if freqs.len() <= max {
        return (freqs.to_vec(), gamma.to_vec());
    }
    let step = freqs.len() as f64 / max as f64;
    (0..max)
        .map(|i| {
            let k = ((i as f64 + 0.5) * step) as usize;
            (freqs[k], gamma[k])
        })
        .unzip()
}

/// Sum of |g_k e^{+j 2 pi f_k delta} - Gamma_model(f_k)|^2, with the data already turned back by the
/// residual delay (`turned`): the same as comparing the model turned forward, at one rotation per point
/// per delay instead of one per model evaluation.
///
/// Each model's reflection is written out in real arithmetic with one division per point (the same
/// formulas as [`ModelType::gamma`], multiplied through by the conjugate of the denominator), and summed in
/// four lanes so that the loop vectorises; the tests hold it to [`ModelType::gamma`].
fn residual(m: ModelType, value: f64, f: &[f64], turned: &[Complex64], z0: f64) -> f64 {
    let constant = |rho: f64| sum_squares(f, turned, |_| (rho, 0.0));
    match m {
        ModelType::SeriesCapacitance => {
            // Gamma = 1 / (1 + j b), b = 2 w C Z0: (1 - j b) / (1 + b^2).
            let a = 4.0 * PI * value * z0;
            sum_squares(f, turned, |fk| {
                let b = a * fk;
                let d = 1.0 / (1.0 + b * b);
                (d, -b * d)
            })
        }
        ModelType::SeriesInductance => {
            // Gamma = j x / (2 Z0 + j x), x = w L: (x^2 + j 2 Z0 x) / (4 Z0^2 + x^2).
            let a = 2.0 * PI * value;
            let four_z0_sq = 4.0 * z0 * z0;
            sum_squares(f, turned, |fk| {
                let x = a * fk;
                let d = 1.0 / (four_z0_sq + x * x);
                (x * x * d, 2.0 * z0 * x * d)
            })
        }
        ModelType::ShuntCapacitance => {
            // Gamma = -j y / (2 + j y), y = w C Z0: -(y^2 + j 2 y) / (4 + y^2).
            let a = 2.0 * PI * value * z0;
            sum_squares(f, turned, |fk| {
                let y = a * fk;
                let d = 1.0 / (4.0 + y * y);
                (-y * y * d, -2.0 * y * d)
            })
        }
        ModelType::SeriesResistance
        | ModelType::ImpedanceStep
        | ModelType::Open
        | ModelType::Short => constant(m.gamma(value, 0.0, z0).re),
    }
}

/// Sum over k of |t_k - gamma(f_k)|^2, gamma given as (re, im), in four interleaved partial sums.
#[inline(always)]
fn sum_squares(f: &[f64], t: &[Complex64], gamma: impl Fn(f64) -> (f64, f64)) -> f64 {
    let mut acc = [0.0f64; 4];
    let (f4, t4) = (f.chunks_exact(4), t.chunks_exact(4));
    let (f_rest, t_rest) = (f4.remainder(), t4.remainder());
    for (fc, tc) in f4.zip(t4) {
        for l in 0..4 {
            let (re, im) = gamma(fc[l]);
            let (dr, di) = (tc[l].re - re, tc[l].im - im);
            acc[l] += dr * dr + di * di;
        }
    }
    for (&fk, tk) in f_rest.iter().zip(t_rest) {
        let (re, im) = gamma(fk);
        let (dr, di) = (tk.re - re, tk.im - im);
        acc[0] += dr * dr + di * di;
    }
    (acc[0] + acc[1]) + (acc[2] + acc[3])
}

/// Turns data back by a residual delay: multiplies g_k by e^{+j 2 pi f_k delta}. Where consecutive
/// frequencies step by one of at most [`TURN_STEP_SIZES`] sizes (a uniform sweep, evenly decimated), by a
/// recurrence, one rotation per step size and a complex product per point, re-anchored exactly every
/// [`TURN_ANCHOR`] points so that rounding cannot accumulate; otherwise one sine and cosine per point.
struct Turner<'a> {
    f: &'a [f64],
    g: &'a [Complex64],
    /// The distinct step sizes, Hz, and which one leads from each point to the next.
    steps: Option<(Vec<f64>, Vec<u8>)>,
}

/// Most distinct frequency steps the recurrence handles (decimation of a uniform grid leaves two).
const TURN_STEP_SIZES: usize = 4;

/// Points between exact re-anchorings of the recurrence (each product adds about one rounding, 1e-16).
const TURN_ANCHOR: usize = 32;

impl<'a> Turner<'a> {
    fn new(f: &'a [f64], g: &'a [Complex64]) -> Self {
        let mut sizes: Vec<f64> = Vec::new();
        let mut which = Vec::with_capacity(f.len());
        let mut ok = true;
        for w in f.windows(2) {
            let d = w[1] - w[0];
            // Steps equal to within the rounding of the frequencies themselves are one step.
            let tol = 1e-9 * d.abs().max(f64::MIN_POSITIVE);
            match sizes.iter().position(|&s| (s - d).abs() <= tol) {
                Some(i) => which.push(i as u8),
                None if sizes.len() < TURN_STEP_SIZES => {
                    which.push(sizes.len() as u8);
                    sizes.push(d);
                }
                None => {
                    ok = false;
                    break;
                }
            }
        }
        Turner {
            f,
            g,
            steps: ok.then_some((sizes, which)),
        }
    }

    /// The data turned back by a residual delay `delta`, into `out` (cleared first). Block by block of
    /// [`TURN_ANCHOR`] points: each block's first point exactly, the others by the recurrence.
    fn turn_into(&self, delta: f64, out: &mut Vec<Complex64>) {
        let exact = |fk: f64| Complex64::from_polar(1.0, 2.0 * PI * fk * delta);
        out.clear();
        let Some((sizes, which)) = &self.steps else {
            out.extend(turn(self.f, self.g, delta));
            return;
        };
        let mut rot = [Complex64::new(1.0, 0.0); TURN_STEP_SIZES];
        for (r, &s) in rot.iter_mut().zip(sizes) {
            *r = exact(s);
        }
        out.resize(self.g.len(), Complex64::new(0.0, 0.0));
        for (c, ((fb, gb), ob)) in self
            .f
            .chunks(TURN_ANCHOR)
            .zip(self.g.chunks(TURN_ANCHOR))
            .zip(out.chunks_mut(TURN_ANCHOR))
            .enumerate()
        {
            // The steps leading to this block's points after its first (`which` holds the step after
            // each point but the last).
            let steps = &which[c * TURN_ANCHOR..];
            let mut ph = exact(fb[0]);
            ob[0] = gb[0] * ph;
            for ((o, &gk), &w) in ob[1..].iter_mut().zip(&gb[1..]).zip(steps) {
                ph *= rot[usize::from(w) % TURN_STEP_SIZES];
                *o = gk * ph;
            }
        }
    }
}

/// The data turned back by a residual delay `delta`, one sine and cosine per point.
fn turn(f: &[f64], g: &[Complex64], delta: f64) -> Vec<Complex64> {
    f.iter()
        .zip(g)
        .map(|(&fk, &gk)| gk * Complex64::from_polar(1.0, 2.0 * PI * fk * delta))
        .collect()
}

/// The best value of model `m` for data already turned back by the residual delay (`t`), and its residual.
///
/// A series resistance and an impedance step reflect a real constant rho(value), monotone in the value: the
/// residual sum |t_k - rho|^2 is a parabola in rho, least at the mean of Re t_k, so the value is that rho,
/// held to the model's range, mapped back. The reactive models are searched on a log grid of
/// [`VALUE_GRID_CELLS`] cells over their range, then by Brent's method within the best cell's neighbours.
///
/// `shrink` is the Brent search's tolerance relative to its bracket ([`GOLDEN_SHRINK_30`] for a value
/// that is kept, [`SCOUT_SHRINK`] while the delay grid is only scouted).
fn best_value(
    m: ModelType,
    f: &[f64],
    t: &[Complex64],
    z0: f64,
    hint: Option<f64>,
    shrink: f64,
) -> (f64, f64) {
    let Some((lo, hi)) = m.range(z0) else {
        return (0.0, residual(m, 0.0, f, t, z0));
    };
    if let Some(inverse) = m.real_constant_inverse() {
        let mean = t.iter().map(|z| z.re).sum::<f64>() / t.len().max(1) as f64;
        let (rho_lo, rho_hi) = (m.gamma(lo, 0.0, z0).re, m.gamma(hi, 0.0, z0).re);
        let value = inverse(mean.clamp(rho_lo, rho_hi), z0).clamp(lo, hi);
        return (value, residual(m, value, f, t, z0));
    }
    let (llo, lhi) = (lo.ln(), hi.ln());
    let cell = (lhi - llo) / VALUE_GRID_CELLS as f64;
    let search = |a: f64, b: f64| {
        brent_min(a, b, 0.5 * shrink * (b - a), |x| {
            residual(m, x.exp(), f, t, z0)
        })
    };
    // Near a neighbouring delay's best value, the minimum is where it was give or take a little: searched
    // within HINT_CELLS grid cells of it, unless it lies on that bracket's edge (then it moved further,
    // and the whole range is searched).
    if let Some(h) = hint.filter(|&h| h > 0.0) {
        let centre = h.ln().clamp(llo, lhi);
        let (a, b) = (
            (centre - HINT_CELLS * cell).max(llo),
            (centre + HINT_CELLS * cell).min(lhi),
        );
        let (x, r) = search(a, b);
        let edge = 0.01 * cell;
        if (x - a > edge || a <= llo) && (b - x > edge || b >= lhi) {
            return (x.exp(), r);
        }
    }
    let at = |i: usize| llo + cell * i as f64;
    let mut bi = 0;
    let mut br = f64::INFINITY;
    for i in 0..=VALUE_GRID_CELLS {
        let r = residual(m, at(i).exp(), f, t, z0);
        if r < br {
            br = r;
            bi = i;
        }
    }
    let (x, r) = search(at(bi.saturating_sub(1)), at((bi + 1).min(VALUE_GRID_CELLS)));
    if r < br {
        (x.exp(), r)
    } else {
        (at(bi).exp(), br)
    }
}

/// Tolerance of a reactive value's search, relative to its bracket, while the delay grid is only scouted
/// for the start of the search over the delay: the grid's best need only lie in the right basin, which that
/// search then settles to [`GOLDEN_SHRINK_30`] (a tenth of a percent of a bracket of two grid cells of the
/// log value is 0.2 % of the value).
const SCOUT_SHRINK: f64 = 1e-3;

/// Half-width, in cells of the coarse grid, of the bracket a reactive model's value is searched in near a
/// neighbouring delay's best value: the residual delays a fit tries are a small fraction of a resolution
/// cell apart, and the best value moves little between them.
const HINT_CELLS: f64 = 1.0;

/// Cells of the coarse log grid a reactive model's value is first searched on: 16 over its six decades,
/// so that the residual is unimodal within the best cell and its neighbours.
pub const VALUE_GRID_CELLS: usize = 16;

/// The grid of residual delays every model's fit first scans: 0.5 rad of phase at the top frequency per
/// step, over -`max_delta`..`max_delta` (at most 400 steps either way; the delay 0 alone when `max_delta`
/// is under a step).
struct DelayGrid {
    step: f64,
    n: usize,
    max_delta: f64,
}

impl DelayGrid {
    fn new(f: &[f64], max_delta: f64) -> Self {
        let fmax = f.iter().cloned().fold(0.0, f64::max).max(1.0);
        let step = 0.5 / (2.0 * PI * fmax);
        let n = ((max_delta / step).ceil() as usize).clamp(0, 400);
        DelayGrid { step, n, max_delta }
    }

    /// The `i`-th delay of the grid (`i` in 0..=2n).
    fn delay(&self, i: usize) -> f64 {
        if self.n == 0 {
            0.0
        } else {
            -self.max_delta + self.max_delta * i as f64 / self.n as f64
        }
    }

    /// The value searches' tolerance on the grid: where a search over the delay follows, the grid only
    /// scouts for its start.
    fn scout(&self) -> f64 {
        if self.n > 0 {
            SCOUT_SHRINK
        } else {
            GOLDEN_SHRINK_30
        }
    }
}

/// One model's scan of the delay grid: (delay, value, residual) of the best so far, and the value the next
/// delay's search starts from (the previous delay's best).
#[derive(Clone, Copy)]
struct Scan {
    best: (f64, f64, f64),
    hint: Option<f64>,
}

impl Default for Scan {
    fn default() -> Self {
        Scan {
            best: (0.0, 0.0, f64::INFINITY),
            hint: None,
        }
    }
}

/// Model `m`'s fit from the best of its scan of `grid` (`best`: delay, value, residual): the delay refined
/// by Brent's method round it, then the value at the delay chosen searched over the whole range. `buf` is
/// working space for the turned data.
fn fit_one(
    m: ModelType,
    turner: &Turner,
    grid: &DelayGrid,
    mut best: (f64, f64, f64),
    z0: f64,
    norm: f64,
    buf: &mut Vec<Complex64>,
) -> ModelFit {
    let f = turner.f;
    let (n, step) = (grid.n, grid.step);
    let buf = std::cell::RefCell::new(buf);
    let at_delay = |delta: f64, hint: Option<f64>, shrink: f64| {
        let mut t = buf.borrow_mut();
        turner.turn_into(delta, &mut t);
        best_value(m, f, &t, z0, hint, shrink)
    };
    if n > 0 {
        // Each delay's value is searched near the best delay's so far (the delays tried close in on one
        // another, and so do their values), and the best delay tried is kept with its value.
        let least = std::cell::Cell::new(best);
        let (d, r) = brent_min(
            best.0 - step,
            best.0 + step,
            0.5 * GOLDEN_SHRINK_30 * 2.0 * step,
            |d| {
                let (v, r) = at_delay(d, Some(least.get().1), GOLDEN_SHRINK_30);
                if r < least.get().2 {
                    least.set((d, v, r));
                }
                r
            },
        );
        let kept = least.get();
        if r < best.2 {
            best = if kept.0 == d && kept.2 == r {
                kept
            } else {
                let (v, r) = at_delay(d, Some(kept.1), GOLDEN_SHRINK_30);
                (d, v, r)
            };
        }
    }
    // The value at the delay chosen, searched over the whole range: what the hints found is kept only if
    // nothing better lies elsewhere.
    let (v, r) = at_delay(best.0, None, GOLDEN_SHRINK_30);
    if r < best.2 {
        best = (best.0, v, r);
    }
    let rms = (best.2 / f.len().max(1) as f64).sqrt();
    ModelFit {
        model: m,
        value: best.1,
        unit: m.unit(),
        fit_error: if norm > 0.0 { rms / norm } else { 0.0 },
        delta_s: best.0,
    }
}

/// The axial gap whose capacitance (by [`gap_capacitance`], the parallel-plate-plus-fringing estimate) is
/// `c`, found by bisection on a log scale.
/// Returns `None` when `c` is below what the formula gives for a gap of one pin radius (the formula's range
/// ends there; such a joint reads as an open).
pub fn gap_from_capacitance(c: f64, pin_radius_m: f64, eps_r: f64) -> Option<f64> {
    let (mut lo, mut hi) = (1e-9_f64, pin_radius_m);
    if !(c.is_finite() && c > 0.0) || gap_capacitance(pin_radius_m, hi, eps_r) > c {
        return None;
    }
    for _ in 0..200 {
        let mid = (lo * hi).sqrt();
        if gap_capacitance(pin_radius_m, mid, eps_r) > c {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some((lo * hi).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sweep() -> Vec<f64> {
        (0..801).map(|k| 0.5e9 + k as f64 * 11.875e6).collect()
    }

    #[test]
    fn series_formulas_match_circuit_theory() {
        // Series R of 2 Z0 reflects 2/4 = 0.5 (Gamma = Z / (2 Z0 + Z); circuit theory).
        let g = ModelType::SeriesResistance.gamma(100.0, 1e9, 50.0);
        assert!((g.re - 0.5).abs() < 1e-15 && g.im.abs() < 1e-15);
        // Impedance step 50 -> 75 ohm: Gamma 0.2 (DOMAIN check: 75 on 50 gives 0.2; calc).
        let g = ModelType::ImpedanceStep.gamma(75.0, 1e9, 50.0);
        assert!((g.re - 0.2).abs() < 1e-15);
        // Reflection plus transmission of a lossless series reactance: |G|^2 + |T|^2 = 1.
        for m in [
            ModelType::SeriesCapacitance,
            ModelType::SeriesInductance,
            ModelType::ShuntCapacitance,
        ] {
            for &(v, f) in &[(30e-15, 6e9), (0.3e-9, 2e9), (200e-15, 9e9)] {
                let s = m.gamma(v, f, 50.0).norm_sqr() + m.transmission(v, f, 50.0);
                assert!((s - 1.0).abs() < 1e-12, "{m:?} {v} {f}: {s}");
            }
        }
    }

    #[test]
    fn each_model_recovers_its_own_value_and_wins() {
        let f = sweep();
        let cases = [
            (ModelType::SeriesCapacitance, 40e-15),
            (ModelType::SeriesResistance, 3.0),
            (ModelType::SeriesInductance, 0.4e-9),
            (ModelType::ShuntCapacitance, 150e-15),
            (ModelType::ImpedanceStep, 62.0),
            (ModelType::Open, 0.0),
            (ModelType::Short, 0.0),
        ];
        let delay = 3e-12;
        for (m, v) in cases {
            let g: Vec<Complex64> = f
                .iter()
                .map(|&fk| {
                    m.gamma(v, fk, 50.0) * Complex64::from_polar(1.0, -2.0 * PI * fk * delay)
                })
                .collect();
            let fits = fit_all(&f, &g, 50.0, 20e-12);
            // A series resistance and a step to a higher impedance both reflect a constant real Gamma: from
            // one reflection they are the same fit, told apart only by where they are (see `classify`).
            let best = fits.iter().find(|x| x.model == m).unwrap();
            assert!(
                best.fit_error <= fits[0].fit_error + 1e-4,
                "{m:?}: {:?}",
                fits[0]
            );
            if v != 0.0 {
                assert!(
                    (best.value - v).abs() / v < 1e-3,
                    "{m:?}: {} vs {v}",
                    best.value
                );
            }
            assert!(fits[0].fit_error < 1e-3, "{m:?}: {}", fits[0].fit_error);
        }
    }

    /// The residual straight from [`ModelType::gamma`], in complex arithmetic.
    fn residual_by_gamma(m: ModelType, value: f64, f: &[f64], t: &[Complex64]) -> f64 {
        f.iter()
            .zip(t)
            .map(|(&fk, &gk)| (gk - m.gamma(value, fk, 50.0)).norm_sqr())
            .sum()
    }

    #[test]
    fn residual_in_real_arithmetic_is_the_complex_formula() {
        let f: Vec<f64> = (0..131).map(|k| 0.3e9 + k as f64 * 91e6).collect();
        let t = noise(131, 0.3, 9);
        for (m, v) in [
            (ModelType::SeriesCapacitance, 37e-15),
            (ModelType::SeriesInductance, 0.7e-9),
            (ModelType::ShuntCapacitance, 120e-15),
            (ModelType::SeriesResistance, 6.0),
            (ModelType::ImpedanceStep, 44.0),
            (ModelType::Open, 0.0),
            (ModelType::Short, 0.0),
        ] {
            let (fast, plain) = (
                residual(m, v, &f, &t, 50.0),
                residual_by_gamma(m, v, &f, &t),
            );
            assert!(
                (fast - plain).abs() <= 1e-13 * plain,
                "{m:?}: {fast} vs {plain}"
            );
        }
    }

    /// The plain search the fit is checked against: golden section everywhere (value on the log grid's best
    /// cell and its neighbours, then the residual delay), every model the same way.
    fn reference_fit(m: ModelType, f: &[f64], g: &[Complex64], max_delta: f64) -> (f64, f64) {
        use crate::numeric::golden_min;
        let z0 = 50.0;
        let value_at = |t: &[Complex64]| -> (f64, f64) {
            let Some((lo, hi)) = m.range(z0) else {
                return (0.0, residual_by_gamma(m, 0.0, f, t));
            };
            let (llo, lhi) = (lo.ln(), hi.ln());
            let at = |i: usize| llo + (lhi - llo) * i as f64 / VALUE_GRID_CELLS as f64;
            let bi = (0..=VALUE_GRID_CELLS)
                .min_by(|&i, &j| {
                    residual_by_gamma(m, at(i).exp(), f, t).total_cmp(&residual_by_gamma(
                        m,
                        at(j).exp(),
                        f,
                        t,
                    ))
                })
                .unwrap();
            let (a, b) = (at(bi.saturating_sub(1)), at((bi + 1).min(VALUE_GRID_CELLS)));
            let x = golden_min(a, b, 1e-12 * (b - a), |x| {
                residual_by_gamma(m, x.exp(), f, t)
            });
            (x.exp(), residual_by_gamma(m, x.exp(), f, t))
        };
        let fmax = f.iter().cloned().fold(0.0, f64::max);
        let step = 0.5 / (2.0 * PI * fmax);
        let n = (max_delta / step).ceil() as usize;
        let d0 = (0..=2 * n)
            .map(|i| -max_delta + max_delta * i as f64 / n as f64)
            .min_by(|&p, &q| {
                value_at(&turn(f, g, p))
                    .1
                    .total_cmp(&value_at(&turn(f, g, q)).1)
            })
            .unwrap();
        let d = golden_min(d0 - step, d0 + step, 1e-12 * step, |d| {
            value_at(&turn(f, g, d)).1
        });
        let (v, r) = value_at(&turn(f, g, d));
        (v, (r / f.len() as f64).sqrt())
    }

    /// Complex Gaussian noise of RMS magnitude `sigma`, from the simulator's seeded generator.
    fn noise(n: usize, sigma: f64, seed: u64) -> Vec<Complex64> {
        let mut rng = crate::line::rng::Rng::new(seed);
        (0..n)
            .map(|_| {
                let (a, b) = rng.normal_pair();
                Complex64::new(a, b) * (sigma / 2f64.sqrt())
            })
            .collect()
    }

    /// The turner's recurrence (one rotation per step size, re-anchored every `TURN_ANCHOR` points) is the
    /// rotation taken afresh at every point, to rounding: on a uniform sweep, on its even decimation (two
    /// step sizes), and on a grid of irregular steps (the per-point fallback, exactly).
    #[test]
    fn turned_data_are_the_rotation_at_every_point() {
        let uniform = sweep();
        let (decimated, _) = decimate(&uniform, &noise(uniform.len(), 1.0, 3), MAX_FIT_POINTS);
        let irregular: Vec<f64> = (0..200).map(|k| 1e9 + (k * k) as f64 * 1.5e5).collect();
        for f in [uniform, decimated, irregular] {
            let g = noise(f.len(), 0.3, 11);
            let turner = Turner::new(&f, &g);
            let mut got = Vec::new();
            for delta in [-3.1e-11, -1e-12, 0.0, 2.5e-12, 4.4e-11] {
                turner.turn_into(delta, &mut got);
                let want = turn(&f, &g, delta);
                assert_eq!(got.len(), want.len());
                for (k, (a, b)) in got.iter().zip(&want).enumerate() {
                    assert!(
                        (a - b).norm() <= 1e-14 * b.norm().max(1e-300),
                        "{} points, delay {delta:e}, point {k}: {a} against {b}",
                        f.len()
                    );
                }
            }
        }
    }

    #[test]
    fn fast_fit_agrees_with_the_plain_search_on_noisy_data() {
        // Every model's fit to reflections of every kind, with noise at a tenth of the reflection and a
        // residual delay: the closed forms and Brent's method land where golden section everywhere does.
        let f: Vec<f64> = (0..128).map(|k| 1e9 + k as f64 * 70e6).collect();
        let truths = [
            (ModelType::SeriesCapacitance, 25e-15),
            (ModelType::SeriesResistance, 4.0),
            (ModelType::ShuntCapacitance, 90e-15),
            (ModelType::ImpedanceStep, 41.0),
            (ModelType::SeriesInductance, 0.2e-9),
        ];
        let max_delta = 20e-12;
        for (k, (truth, v)) in truths.into_iter().enumerate() {
            let clean: Vec<Complex64> = f
                .iter()
                .map(|&fk| {
                    truth.gamma(v, fk, 50.0) * Complex64::from_polar(1.0, -2.0 * PI * fk * 4e-12)
                })
                .collect();
            let level = (clean.iter().map(|z| z.norm_sqr()).sum::<f64>() / 128.0).sqrt();
            let g: Vec<Complex64> = clean
                .iter()
                .zip(noise(128, 0.1 * level, k as u64 + 1))
                .map(|(a, b)| a + b)
                .collect();
            let fits = fit_all(&f, &g, 50.0, max_delta);
            for fit in &fits {
                let (v_ref, rms_ref) = reference_fit(fit.model, &f, &g, max_delta);
                let rms = fit.fit_error * level_of(&g);
                assert!(
                    (rms - rms_ref).abs() <= 1e-6 * rms_ref,
                    "{truth:?} data, {:?}: rms {rms} vs {rms_ref}",
                    fit.model
                );
                if v_ref != 0.0 {
                    assert!(
                        (fit.value - v_ref).abs() <= 1e-3 * v_ref,
                        "{truth:?} data, {:?}: {} vs {v_ref}",
                        fit.model,
                        fit.value
                    );
                }
            }
        }
    }

    fn level_of(g: &[Complex64]) -> f64 {
        (g.iter().map(|z| z.norm_sqr()).sum::<f64>() / g.len() as f64).sqrt()
    }

    #[test]
    fn gap_capacitance_against_field_solution_values() {
        // Full-field check values for 0.086-in PTFE cable, a = 0.2555 mm, er 2.03 (axisymmetric Laplace solve,
        // project domain notes, calc): 414 fF at 10 um, 101 fF at 50 um. The formula claims about 6 %.
        let a = 0.2555e-3;
        for &(g, c_ref) in &[(10e-6, 414e-15), (50e-6, 101e-15)] {
            let c = gap_capacitance(a, g, 2.03);
            // "About 6 %": 4 % at 10 um, 6.3 % at 50 um here.
            assert!((c - c_ref).abs() / c_ref < 0.07, "gap {g}: {c} vs {c_ref}");
            let back = gap_from_capacitance(c, a, 2.03).unwrap();
            assert!((back - g).abs() / g < 1e-9);
        }
        assert!(gap_from_capacitance(1e-18, a, 2.03).is_none());
    }
}
