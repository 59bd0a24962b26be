//! What the comparator needs to know of the line, as plain data: the segments in order with their as-built
//! extent, their round-trip delay and loss in each of the two sweeps' states, and which of them reflection
//! cannot see past.
//!
//! A [`ChainView`] is built either from a line file's model (`from_line`, see the `line` module) or, for a
//! line of unknown construction, as one uniform segment with a velocity factor ([`ChainView::uniform`]).
//! Conventions: positions are as-built (warm) metres from the reference plane; delays are round-trip
//! seconds; losses are round-trip dB at frequency f modelled as `a_sqrt sqrt(f / 1 GHz) + a_lin f / 1 GHz +
//! a_flat` (conductor, dielectric and flat attenuator parts).

use crate::line::physics::NEPER_DB;
use crate::transform::C0_M_PER_S;
use num_complex::Complex64;
use serde::Serialize;

/// The kind of a segment, as the comparator treats it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SegmentKind {
    Cable,
    Connector,
    Attenuator,
    /// A part reflection cannot see through (isolator, amplifier) or the far end.
    Device,
    /// A stretch of a line of unknown construction.
    Uniform,
}

/// Round-trip loss model of a segment, dB: `a_sqrt sqrt(f/1GHz) + a_lin (f/1GHz) + a_flat`.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct LossModel {
    pub a_sqrt: f64,
    pub a_lin: f64,
    pub a_flat: f64,
}

impl LossModel {
    /// Round-trip loss at `f` Hz, dB.
    pub fn db(&self, f: f64) -> f64 {
        let g = f / 1e9;
        self.a_sqrt * g.max(0.0).sqrt() + self.a_lin * g + self.a_flat
    }

    /// Fit the model through round-trip losses `l1`, `l2` (dB) at `f1`, `f2` and a flat part `flat`.
    pub fn through(f1: f64, l1: f64, f2: f64, l2: f64, flat: f64) -> Self {
        let (g1, g2) = (f1 / 1e9, f2 / 1e9);
        let (y1, y2) = (l1 - flat, l2 - flat);
        // Solve [sqrt(g1) g1; sqrt(g2) g2] [a b]^T = [y1 y2]^T.
        let det = g1.sqrt() * g2 - g2.sqrt() * g1;
        if det.abs() < 1e-12 {
            return LossModel {
                a_sqrt: y1 / g1.sqrt().max(1e-12),
                a_lin: 0.0,
                a_flat: flat,
            };
        }
        LossModel {
            a_sqrt: (y1 * g2 - y2 * g1) / det,
            a_lin: (g1.sqrt() * y2 - g2.sqrt() * y1) / det,
            a_flat: flat,
        }
    }
}

/// One segment of the chain.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Segment {
    pub name: String,
    pub kind: SegmentKind,
    /// As-built start and end, m from the reference plane.
    pub start_m: f64,
    pub end_m: f64,
    /// Round-trip delay through the segment in the baseline and the current sweep's state, s.
    pub delay_s: [f64; 2],
    /// Round-trip loss in the baseline and current state.
    pub loss: [LossModel; 2],
    /// Centre-conductor radius at the segment's joints, m (for the axial-gap estimate).
    pub pin_radius_m: f64,
    /// Relative permittivity of the dielectric round the pin.
    pub eps_r: f64,
    /// A short description of where the segment is (stage names), for sentences.
    pub place: String,
    /// For a device: the load the line file gives it (what terminates the visible line).
    pub load: Option<crate::line::Load>,
    /// True when the segment is at one temperature in both sweeps' states (all of it at room temperature,
    /// or both sweeps in one state): nothing of it changes between the two sweeps.
    pub steady: bool,
    /// True when the segment's start is at one temperature in both states (a cable from the room-temperature
    /// flange down into the cryostat starts at room temperature and cools along its length: its impedance
    /// moves by a gradual taper that reflects nothing to speak of, so the joint in front of it stays as it
    /// was).
    pub steady_start: bool,
}

impl Segment {
    /// Fraction of the segment lying before `x` (a segment of no length: all of it once `x` reaches it).
    pub fn covered(&self, x: f64) -> f64 {
        let len = self.end_m - self.start_m;
        if len <= 0.0 {
            if x >= self.end_m {
                1.0
            } else {
                0.0
            }
        } else {
            ((x - self.start_m) / len).clamp(0.0, 1.0)
        }
    }
}

/// The chain, as the comparator sees it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChainView {
    pub name: String,
    pub impedance_ohm: f64,
    pub segments: Vec<Segment>,
    /// True when built from a line file; false for a uniform line of unknown construction.
    pub as_built: bool,
    /// Frequency at which the segments' delays are group delays, Hz.
    pub delay_reference_hz: f64,
    /// The line file says its sweeps pass through gain (`Line::gain_in_path`): they are read as sweeps
    /// through an amplifier whether or not their power shows it.
    pub gain_in_path: bool,
}

/// Which sweep a quantity belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Which {
    Baseline = 0,
    Current = 1,
}

/// Pin radius assumed for a line of unknown construction: the 0.086-in class, 0.2555 mm (from memory).
pub const DEFAULT_PIN_RADIUS_M: f64 = 0.2555e-3;
/// Relative permittivity assumed round the pin of a line of unknown construction: solid PTFE, 2.03 (from
/// memory; 2.02-2.10 at room temperature).
pub const DEFAULT_EPS_R: f64 = 2.03;

impl ChainView {
    /// A line of unknown construction: one uniform segment of `length_m` with velocity factor `vf`, lossless.
    pub fn uniform(name: &str, vf: f64, length_m: f64, impedance_ohm: f64) -> Self {
        let delay = 2.0 * length_m / (C0_M_PER_S * vf);
        ChainView {
            name: name.to_string(),
            impedance_ohm,
            segments: vec![Segment {
                name: "line".into(),
                kind: SegmentKind::Uniform,
                start_m: 0.0,
                end_m: length_m,
                delay_s: [delay, delay],
                loss: [LossModel::default(); 2],
                pin_radius_m: DEFAULT_PIN_RADIUS_M,
                eps_r: DEFAULT_EPS_R,
                place: String::new(),
                load: None,
                steady: false,
                steady_start: false,
            }],
            as_built: false,
            delay_reference_hz: 5e9,
            gain_in_path: false,
        }
    }

    /// True when traces on this chain are loss-compensated: a line file's model, or a uniform line given a
    /// loss law (from its far end).
    pub fn compensates(&self) -> bool {
        self.as_built
            || self.segments.iter().any(|s| {
                s.loss
                    .iter()
                    .any(|l| l.a_sqrt != 0.0 || l.a_lin != 0.0 || l.a_flat != 0.0)
            })
    }

    /// As-built length up to the far end, m.
    pub fn length_m(&self) -> f64 {
        self.segments.last().map_or(0.0, |s| s.end_m)
    }

    /// Index of the first segment reflection cannot see past, if any.
    pub fn first_blocking(&self) -> Option<usize> {
        self.segments
            .iter()
            .position(|s| s.kind == SegmentKind::Device)
    }

    /// As-built distance where reflection stops seeing: the start of the first device, or the far end.
    pub fn visible_end_m(&self) -> f64 {
        self.first_blocking()
            .map_or(self.length_m(), |i| self.segments[i].start_m)
    }

    /// The segment containing `x` (the last one for positions beyond the end) and the offset inside it.
    pub fn segment_at(&self, x: f64) -> Option<(usize, f64)> {
        let i = self
            .segments
            .iter()
            .position(|s| x < s.end_m)
            .unwrap_or(self.segments.len().checked_sub(1)?);
        Some((i, x - self.segments[i].start_m))
    }

    /// Whether an echo at as-built `x` sees a steady line: every segment that starts at or before `x` is
    /// steady ([`Segment::steady`]), and every one that starts within `clear_m` behind it at least starts
    /// steady ([`Segment::steady_start`]): nothing in front of the echo, at its place, or within its reach
    /// behind it changes between the two sweeps. No attenuator may lie within `clear_m` either side: the
    /// compensation steps up by its loss there, and lifts a stronger neighbour's flank on the far side into
    /// what is read as the echo, where the two sweeps' pieces of compensation need not meet at one place.
    pub fn steady_to(&self, x: f64, clear_m: f64) -> bool {
        self.as_built
            && self.segments.iter().all(|s| {
                let near_attenuator = s.kind == SegmentKind::Attenuator
                    && s.end_m >= x - clear_m
                    && s.start_m <= x + clear_m;
                if near_attenuator {
                    false
                } else if s.start_m <= x {
                    s.steady
                } else if s.start_m <= x + clear_m {
                    s.steady || s.steady_start
                } else {
                    true
                }
            })
    }

    /// Fraction of each segment lying before `x`.
    pub fn cover(&self, x: f64) -> Vec<f64> {
        self.segments.iter().map(|s| s.covered(x)).collect()
    }

    /// Round-trip delay to `x` in sweep `which`, with per-segment scales (1 = the model's).
    pub fn delay_to(&self, x: f64, which: Which, scale: Option<&[f64]>) -> f64 {
        let mut d = 0.0;
        for (j, (s, c)) in self.segments.iter().map(|s| (s, s.covered(x))).enumerate() {
            d += c * s.delay_s[which as usize] * scale.map_or(1.0, |v| v[j]);
        }
        // Beyond the far end, continue at the speed of the last segment that has a length.
        if let (Some(end), Some((per_s_per_m, _))) = (
            self.segments.last().map(|s| s.end_m),
            self.tail_rate(which, scale),
        ) {
            if x > end {
                d += (x - end) * per_s_per_m;
            }
        }
        d
    }

    /// Round-trip delay per metre of the last segment with a length, in sweep `which` (and its index).
    fn tail_rate(&self, which: Which, scale: Option<&[f64]>) -> Option<(f64, usize)> {
        self.segments.iter().enumerate().rev().find_map(|(j, s)| {
            let len = s.end_m - s.start_m;
            let d = s.delay_s[which as usize] * scale.map_or(1.0, |v| v[j]);
            (len > 0.0 && d > 0.0).then(|| (d / len, j))
        })
    }

    /// As-built position of round-trip delay `t` in sweep `which` (inverse of [`Self::delay_to`]).
    pub fn position_of(&self, t: f64, which: Which, scale: Option<&[f64]>) -> f64 {
        let mut acc = 0.0;
        for (j, s) in self.segments.iter().enumerate() {
            let d = s.delay_s[which as usize] * scale.map_or(1.0, |v| v[j]);
            if t <= acc + d && d > 0.0 {
                return s.start_m + (s.end_m - s.start_m) * (t - acc) / d;
            }
            acc += d;
        }
        let end = match self.segments.last() {
            Some(l) => l.end_m,
            None => return 0.0,
        };
        match self.tail_rate(which, scale) {
            Some((per_m, _)) => end + (t - acc) / per_m,
            None => end,
        }
    }

    /// Round-trip loss model from the reference plane to `x` in sweep `which` (the flat part of an
    /// attenuator counts once `x` is past its middle).
    pub fn loss_model_to(&self, x: f64, which: Which) -> LossModel {
        let mut m = LossModel::default();
        for (s, c) in self.segments.iter().map(|s| (s, s.covered(x))) {
            let l = s.loss[which as usize];
            m.a_sqrt += c * l.a_sqrt;
            m.a_lin += c * l.a_lin;
            if c >= 0.5 {
                m.a_flat += l.a_flat;
            }
        }
        m
    }

    /// Round-trip loss from the reference plane to `x` at `f` Hz in sweep `which`, dB.
    pub fn loss_to_db(&self, x: f64, f: f64, which: Which) -> f64 {
        self.loss_model_to(x, which).db(f)
    }

    /// The factor that undoes a modelled round trip `m` (from [`Self::loss_model_to`]) at `f`: amplitude
    /// 10^{L/20} (at most
    /// `max_gain`) and the skin effect's excess phase. A conductor whose surface impedance is (1 + j) Rs
    /// adds as many radians of phase lag as it adds nepers of loss (e.g. Hall and Heck, Advanced Signal
    /// Integrity for High-Speed Digital Designs, Wiley 2009, on causal loss models), so the sqrt(f) part of
    /// the loss, A sqrt(f) nepers, lags the phase by A sqrt(f) rad. The part of that lag linear in f about
    /// the delay reference frequency is already in the segments' group delays, so only the rest is undone.
    pub fn compensation(&self, m: &LossModel, f: f64, max_gain: f64) -> Complex64 {
        let (ln_gain, phase) = self.compensation_exponent(m)(ghz_basis(f));
        Complex64::from_polar(ln_gain.exp().min(max_gain), phase)
    }

    /// The exponent of [`Self::compensation`] before its cap, as a function of frequency given by its
    /// [`ghz_basis`]: (L(f) / NEPER_DB, phi(f)), log-amplitude in nepers and phase in radians.
    fn compensation_exponent<'m>(
        &self,
        m: &'m LossModel,
    ) -> impl Fn((f64, f64)) -> (f64, f64) + 'm {
        let a_np = m.a_sqrt / NEPER_DB;
        let g_ref = (self.delay_reference_hz / 1e9).max(1e-9);
        // phi(g) = A sqrt(g); its tangent at g_ref has slope A / (2 sqrt(g_ref)).
        let slope = 1.0 / (2.0 * g_ref.sqrt());
        // L(f) as `LossModel::db` gives it, with the square root shared by both parts.
        move |(g, s)| {
            let gp = g.max(0.0);
            (
                (m.a_sqrt * s + m.a_lin * g + m.a_flat) / NEPER_DB,
                a_np * (s - gp * slope),
            )
        }
    }

    /// [`Self::compensation`] at every frequency of a sweep (ascending), given by their [`ghz_basis`] (worked
    /// out once for a sweep that is compensated many times), to a few parts in 1e15 of it.
    /// The factor is e^E with E = L(f) / NEPER_DB + j phi(f), whose real and imaginary parts are worked out
    /// exactly at every point; the exponential itself is carried from point to point as the previous one
    /// times e^{dE}, by a short Taylor series while the step dE is small ([`COMPENSATION_STEP`]), and taken
    /// afresh at every [`COMPENSATION_ANCHOR`]-th point and wherever the step is larger. Where the gain
    /// passes `max_gain` it is held there, as in [`Self::compensation`].
    pub fn compensation_over(
        &self,
        m: &LossModel,
        basis: &[(f64, f64)],
        max_gain: f64,
    ) -> Vec<Complex64> {
        const GROUP: usize = COMPENSATION_ANCHOR * PRODUCT_LANES;
        let ln_cap = max_gain.ln();
        let exponent = self.compensation_exponent(m);
        let mut out = Vec::with_capacity(basis.len());
        // Every COMPENSATION_ANCHOR-th point starts afresh, so the sweep is worked out in groups of
        // PRODUCT_LANES such blocks, each group in passes over small arrays of its own (no buffer as long
        // as the sweep but the output): the exponent's real and imaginary parts apart, so that the passes
        // over them vectorise; each point's step factor e^{dE} by the series (at every point, with no
        // branch); the exact value where it is taken afresh (a block's first point, and wherever the step
        // is large); the running products, the group's blocks carried at once, each step of each in its
        // own order (a single product waits on the latency of every multiplication); then the cap. The
        // arithmetic at each point is that of one pass point by point.
        let (mut e_re, mut e_im) = ([0.0; GROUP], [0.0; GROUP]);
        let mut z = [Complex64::new(0.0, 0.0); GROUP];
        let mut afresh = [false; GROUP];
        for group in basis.chunks(GROUP) {
            let n = group.len();
            for ((&b, re), im) in group.iter().zip(&mut e_re).zip(&mut e_im) {
                (*re, *im) = exponent(b);
            }
            for k in 1..n {
                let (a, b) = exp_small(e_re[k] - e_re[k - 1], e_im[k] - e_im[k - 1]);
                z[k] = Complex64::new(a, b);
            }
            for k in 0..n {
                let fresh = k % COMPENSATION_ANCHOR == 0 || {
                    let u = Complex64::new(e_re[k] - e_re[k - 1], e_im[k] - e_im[k - 1]);
                    u.norm_sqr() >= COMPENSATION_STEP * COMPENSATION_STEP
                };
                afresh[k] = fresh;
                if fresh {
                    z[k] = Complex64::from_polar(e_re[k].exp(), e_im[k]);
                }
            }
            for t in 1..COMPENSATION_ANCHOR {
                for j in 0..PRODUCT_LANES {
                    let k = j * COMPENSATION_ANCHOR + t;
                    if k < n && !afresh[k] {
                        z[k] = z[k - 1] * z[k];
                    }
                }
            }
            // Past the cap the factor's size is the cap: v's own size is e^re, so v / |v| times the
            // cap (a square root and a division where the exponential e^{ln_cap - re} cost more); the
            // exponential only where |v|^2 would not be a finite number.
            out.extend(z[..n].iter().zip(&e_re[..n]).map(|(&v, &re)| {
                if re <= ln_cap {
                    v
                } else {
                    let s = v.norm_sqr();
                    if s.is_finite() && s > 0.0 {
                        v * (max_gain / s.sqrt())
                    } else {
                        v * (ln_cap - re).exp()
                    }
                }
            }));
        }
        out
    }

    /// The amplitude of [`Self::compensation`]: 10^{L/20} at most `max_gain`, as e^{L / NEPER_DB} (one
    /// exponential where a power of ten takes about two).
    pub fn compensation_gain(m: &LossModel, f: f64, max_gain: f64) -> f64 {
        (m.db(f) / NEPER_DB).exp().min(max_gain)
    }

    /// The nearest connector to `x` and its distance from `x`, m.
    pub fn nearest_connector(&self, x: f64) -> Option<(&Segment, f64)> {
        self.segments
            .iter()
            .filter(|s| s.kind == SegmentKind::Connector)
            .map(|s| (s, (0.5 * (s.start_m + s.end_m) - x).abs()))
            .min_by(|a, b| a.1.total_cmp(&b.1))
    }
}

/// sum_k (w_k G_k)^2 over a sweep's frequencies (given by their [`ghz_basis`]), G_k the amplitude of
/// [`ChainView::compensation`] for `m` at f_k held at `max_gain` ([`ChainView::compensation_gain`]): what a
/// window-weighted RMS gain is made of.
///
/// G_k^2 = e^{2 L(f_k) / NEPER_DB} is carried from point to point as the previous one times e^{2 dL / NEPER_DB}
/// by a short Taylor series while that step is small ([`COMPENSATION_STEP`]), and taken afresh at every
/// [`COMPENSATION_ANCHOR`]-th point, wherever the step is larger and after a point past the cap (where G_k is
/// the cap itself): the same scheme as [`ChainView::compensation_over`], to a few parts in 1e15 of the sum
/// the exponential at every point gives.
pub fn weighted_power(m: &LossModel, basis: &[(f64, f64)], w: &[f64], max_gain: f64) -> f64 {
    const GROUP: usize = COMPENSATION_ANCHOR * PRODUCT_LANES;
    // Well past the cap's exponent the exponential is not needed: the factor is the cap.
    let past_cap = max_gain.ln() * (1.0 + 1e-9) + 1e-9;
    let cap2 = max_gain * max_gain;
    let mut sum = 0.0;
    // In groups of PRODUCT_LANES blocks of COMPENSATION_ANCHOR points, each group in passes over small
    // arrays (as in `compensation_over`): the exponents 2x, each point's step factor by the series (at
    // every point, with no branch), then the blocks' running products carried at once.
    let (mut x2, mut step) = ([0.0; GROUP], [0.0; GROUP]);
    for (basis, w) in basis.chunks(GROUP).zip(w.chunks(GROUP)) {
        let n = basis.len().min(w.len());
        for (&(g, root), x) in basis.iter().zip(&mut x2) {
            *x = 2.0 * ((m.a_sqrt * root + m.a_lin * g + m.a_flat) / NEPER_DB);
        }
        for k in 1..n {
            step[k] = exp_small_real(x2[k] - x2[k - 1]);
        }
        let mut e2 = [0.0; PRODUCT_LANES];
        // A full group under the cap whose steps are all small (most of them): every point but the
        // blocks' first carried by the series, with nothing to check point by point. The same operations,
        // in the same order, as the general loop below takes there.
        let smooth = n == GROUP
            && x2.iter().all(|&x| x <= 2.0 * past_cap)
            && x2
                .windows(2)
                .all(|d| (d[1] - d[0]).abs() < COMPENSATION_STEP);
        if smooth {
            for t in 0..COMPENSATION_ANCHOR {
                for (j, e) in e2.iter_mut().enumerate() {
                    let k = j * COMPENSATION_ANCHOR + t;
                    *e = if t > 0 { *e * step[k] } else { x2[k].exp() };
                    sum += w[k] * w[k] * e.min(cap2);
                }
            }
            continue;
        }
        for t in 0..COMPENSATION_ANCHOR {
            for (j, e) in e2.iter_mut().enumerate() {
                let k = j * COMPENSATION_ANCHOR + t;
                if k >= n {
                    continue;
                }
                if x2[k] > 2.0 * past_cap {
                    // Held at the cap; the point after is taken afresh.
                    *e = f64::NAN;
                    sum += w[k] * w[k] * cap2;
                    continue;
                }
                *e = if t > 0 && !e.is_nan() && (x2[k] - x2[k - 1]).abs() < COMPENSATION_STEP {
                    *e * step[k]
                } else {
                    x2[k].exp()
                };
                sum += w[k] * w[k] * e.min(cap2);
            }
        }
    }
    sum
}

/// A frequency `f` (Hz) as the loss models take it: (f in GHz, the square root of that, or 0 below zero).
pub fn ghz_basis(f: f64) -> (f64, f64) {
    let g = f / 1e9;
    (g, g.max(0.0).sqrt())
}

/// Largest step of the compensation's exponent between neighbouring frequencies that
/// [`ChainView::compensation_over`] carries by a Taylor series (the series to sixth order leaves
/// 0.02^7 / 7! = 2.5e-16 of the step's factor); a larger step is taken afresh.
pub const COMPENSATION_STEP: f64 = 0.02;

/// Points between exact exponentials in [`ChainView::compensation_over`] (each carried step adds about one
/// rounding, 1e-16).
pub const COMPENSATION_ANCHOR: usize = 32;

/// Blocks of [`COMPENSATION_ANCHOR`] points whose running products [`ChainView::compensation_over`] carries
/// at once.
const PRODUCT_LANES: usize = 4;

/// 1/n! for n = 0..=6: the coefficients of the short Taylor series of [`exp_small`] and [`exp_small_real`].
const INV_FACTORIAL: [f64; 7] = [
    1.0,
    1.0,
    1.0 / 2.0,
    1.0 / 6.0,
    1.0 / 24.0,
    1.0 / 120.0,
    1.0 / 720.0,
];

/// e^u for |u| at most [`COMPENSATION_STEP`], u = `re` + j `im`: its Taylor series to sixth order,
/// sum_{n<=6} u^n / n!, by Horner's rule on the coefficients 1/n! (no division), in real arithmetic (the
/// products and sums of complex arithmetic written out, so that a loop over points vectorises). As (re, im).
#[inline(always)]
fn exp_small(re: f64, im: f64) -> (f64, f64) {
    let (mut pr, mut pi) = (INV_FACTORIAL[6], 0.0);
    for &c in INV_FACTORIAL[..6].iter().rev() {
        (pr, pi) = (pr * re - pi * im + c, pr * im + pi * re);
    }
    (pr, pi)
}

/// e^u for real |u| at most [`COMPENSATION_STEP`]: [`exp_small`]'s series on the real axis.
#[inline(always)]
fn exp_small_real(u: f64) -> f64 {
    INV_FACTORIAL[..6]
        .iter()
        .rev()
        .fold(INV_FACTORIAL[6], |p, &c| p * u + c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn weighted_power_is_the_sum_of_capped_exponentials() {
        // Against the exponential at every point (the definition), on a sweep from 10 MHz and one from
        // 0.5 GHz, for losses that stay under the cap, cross it inside the band, and pass it at once.
        for (f0, n) in [(10e6, 2001), (0.5e9, 1601)] {
            let f: Vec<f64> = (0..n)
                .map(|k| f0 + k as f64 * 9.5e9 / (n - 1) as f64)
                .collect();
            let basis: Vec<(f64, f64)> = f.iter().map(|&fk| ghz_basis(fk)).collect();
            let w: Vec<f64> = (0..n)
                .map(|k| 0.5 - 0.5 * (2.0 * std::f64::consts::PI * k as f64 / (n - 1) as f64).cos())
                .collect();
            for (a_sqrt, a_lin, a_flat) in [
                (3.0, 0.2, 0.0),
                (14.0, 1.0, 6.0),
                (25.0, 0.5, 20.0),
                (400.0, 0.0, 0.0),
            ] {
                let m = LossModel {
                    a_sqrt,
                    a_lin,
                    a_flat,
                };
                let fast = weighted_power(&m, &basis, &w, 100.0);
                let exact: f64 = f
                    .iter()
                    .zip(&w)
                    .map(|(&fk, wn)| (wn * ChainView::compensation_gain(&m, fk, 100.0)).powi(2))
                    .sum();
                assert!(
                    (fast - exact).abs() <= 1e-13 * exact,
                    "{a_sqrt} dB/sqrt(GHz) from {f0} Hz: {fast} vs {exact}"
                );
            }
        }
    }

    fn two_segments() -> ChainView {
        let mut c = ChainView::uniform("t", 0.7, 1.0, 50.0);
        let mut s2 = c.segments[0].clone();
        s2.name = "second".into();
        s2.start_m = 1.0;
        s2.end_m = 1.5;
        s2.delay_s = [2.0 * 0.5 / (C0_M_PER_S * 0.8); 2];
        c.segments.push(s2);
        c
    }

    /// A built chain of (kind, start, end, steady, steady_start) segments.
    fn built(parts: &[(SegmentKind, f64, f64, bool, bool)]) -> ChainView {
        let mut c = ChainView::uniform("t", 0.7, 1.0, 50.0);
        let proto = c.segments[0].clone();
        c.segments = parts
            .iter()
            .map(|&(kind, start_m, end_m, steady, steady_start)| Segment {
                kind,
                start_m,
                end_m,
                steady,
                steady_start,
                ..proto.clone()
            })
            .collect();
        c.as_built = true;
        c
    }

    #[test]
    fn steady_part_ends_where_something_cools_within_reach() {
        use SegmentKind::*;
        // Room cable, room joint J1 (0.500 m), room cable, room joint J2 (0.808 m), a cable from room down
        // to 50 K, a cold joint J3 (1.416 m), then a room joint, an attenuator and a room joint after it.
        let c = built(&[
            (Cable, 0.0, 0.496, true, true),
            (Connector, 0.496, 0.504, true, true),
            (Cable, 0.504, 0.804, true, true),
            (Connector, 0.804, 0.812, true, true),
            (Cable, 0.812, 1.412, false, true),
            (Connector, 1.412, 1.420, false, false),
        ]);
        let clear = 0.06;
        assert!(c.steady_to(0.500, clear));
        // J2: the cable behind it cools, but starts at room temperature (a taper).
        assert!(c.steady_to(0.808, clear));
        // Inside the cooling cable, or at the cold joint: not steady.
        assert!(!c.steady_to(1.0, clear));
        assert!(!c.steady_to(1.416, clear));
        // A cold joint within reach behind: not steady.
        assert!(!c.steady_to(0.808, 0.7));
        // An attenuator within reach either side: not steady (its compensation step lifts a neighbour).
        let a = built(&[
            (Cable, 0.0, 0.5, true, true),
            (Connector, 0.5, 0.508, true, true),
            (Attenuator, 0.508, 0.528, true, true),
            (Connector, 0.528, 0.536, true, true),
            (Cable, 0.536, 1.5, true, true),
        ]);
        assert!(!a.steady_to(0.504, clear));
        assert!(!a.steady_to(0.532, clear));
        assert!(a.steady_to(0.3, clear));
        assert!(a.steady_to(1.0, clear));
        // A line of unknown construction: nothing is known to be steady.
        assert!(!ChainView::uniform("u", 0.7, 1.0, 50.0).steady_to(0.1, clear));
    }

    #[test]
    fn compensation_over_a_grid_is_the_pointwise_factor() {
        let c = two_segments();
        let f: Vec<f64> = (0..2001).map(|k| 10e6 + k as f64 * 9.995e6).collect();
        for (a_sqrt, a_lin, a_flat) in [(6.0, 0.4, 0.0), (60.0, 3.0, 20.0), (400.0, 0.0, 0.0)] {
            let m = LossModel {
                a_sqrt,
                a_lin,
                a_flat,
            };
            let basis: Vec<(f64, f64)> = f.iter().map(|&fk| ghz_basis(fk)).collect();
            let fast = c.compensation_over(&m, &basis, 100.0);
            for (k, (&fk, z)) in f.iter().zip(&fast).enumerate() {
                let exact = c.compensation(&m, fk, 100.0);
                assert!(
                    (z - exact).norm() <= 1e-13 * exact.norm(),
                    "{a_sqrt} dB/sqrt(GHz), point {k}: {z} vs {exact}"
                );
            }
        }
    }

    #[test]
    fn delay_and_position_are_inverse_across_segments() {
        let c = two_segments();
        for &x in &[0.0, 0.3, 1.0, 1.2, 1.5, 1.9] {
            let t = c.delay_to(x, Which::Baseline, None);
            let back = c.position_of(t, Which::Baseline, None);
            assert!((back - x).abs() < 1e-12, "{x} -> {t} -> {back}");
        }
        // 1 m at vf 0.7 plus 0.2 m at vf 0.8, round trip.
        let t = c.delay_to(1.2, Which::Current, None);
        let want = 2.0 * (1.0 / 0.7 + 0.2 / 0.8) / C0_M_PER_S;
        assert!((t - want).abs() < 1e-18);
    }

    #[test]
    fn loss_model_through_two_points() {
        let m = LossModel::through(1e9, 1.0, 9e9, 3.0 + 0.5 * 9.0, 0.0);
        assert!((m.db(1e9) - 1.0).abs() < 1e-12 && (m.db(9e9) - 7.5).abs() < 1e-12);
    }
}
