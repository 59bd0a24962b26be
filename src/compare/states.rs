//! Which state (warm or cold) each sweep was taken in, read from the data: several independent signatures,
//! each scored against every hypothesis, the decision, its margin, and the hypotheses the data leave open.
//!
//! Signatures of a pair of sweeps (both read on uncompensated traces, so no model enters them):
//! - `delay-scale`: the current/baseline ratio of the round-trip delays of the echoes both sweeps show, by a
//!   bounded search and least squares. Cooling a PTFE line changes its electrical length by about -0.2 % to
//!   +1 % ([`WARM_TO_COLD_CHANGE`]); one state keeps it within [`SAME_STATE_DRIFT`]. Echoes behind an open
//!   or short far end (multiple reflections, which move with the termination) count only when the far end
//!   did not move against the line in front of it.
//! - `loss-ratio` (or `loss-slope` where the far end gives no scale): how the far open or short's echo
//!   changed across the band. Cold conductors lose less, and the conductor loss grows as sqrt(f), so the
//!   ratio current/baseline of that echo, in dB, rises with sqrt(f) when the current is colder; against the
//!   loss the baseline's own far end shows, it is the ratio of the two sweeps' conductor losses. A gain
//!   change of an amplifier in front (a level change of the whole trace) leaves the slope alone. Only an open
//!   or short far end of one kind in both sweeps that did not move against the line in front of it is read
//!   this way: a joint's own echo changes its shape with temperature, and a moved far end is another
//!   termination, whose echo has its own shape.
//!
//! Signature of one sweep against a line file (the model as a prior, with a generous width):
//! - `model-loss`: an open or short far end's loss against the warm and the cold model's. (The echo delays
//!   are not read against the model: an uncompensated, dispersive echo's band-pass peak sits a fraction of a
//!   percent off the model's group delay, as much as the warm-to-cold change itself.)
//!
//! Each signature gives, for each hypothesis, its misfit: how many of its own standard uncertainties the
//! measured value lies outside the interval that hypothesis allows (0 inside). Misfits add in quadrature;
//! the hypothesis of least total misfit wins; the margin is the square root of the difference between the
//! runner-up's total and the winner's. Hypotheses within [`OPEN_MARGIN`] of the winner stay open.

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, Which};
use super::difference::BEYOND_CELLS;
use super::far_end::{self, Termination};
use super::landmarks::{
    scale_search, strong_events, ScaleMatch, LANDMARK_SEPARATION_CELLS, MAX_LANDMARKS,
    SAME_STATE_DRIFT, WARM_TO_COLD_CHANGE,
};
use super::CompareError;
use crate::line::{Line, State};
use crate::transform::{TraceEngine, Window};
use crate::Network;
use serde::Serialize;

/// A hypothesis stays open while its total misfit is within this many standard uncertainties of the
/// winner's (the usual three-sigma rule; common practice, no source).
pub const OPEN_MARGIN: f64 = 3.0;

/// Misfit (in squared sigmas) by which a change of state must beat one state to be chosen: one state is
/// the simpler reading of two sweeps, so a change of state needs evidence of its own (one sigma's worth;
/// common practice, no source).
pub const STATE_CHANGE_PRIOR: f64 = 1.0;

/// Intervals of the conductor-loss ratio current/baseline that each pair hypothesis allows: cooling lowers
/// a line's conductor loss to between about 5 % (copper, high residual resistance ratio) and 92 % (stainless
/// steel) of its warm value; one state keeps it within 3 % (common practice, no source; docs/materials.md
/// gives the materials' resistivities).
pub const LOSS_RATIO_WARM_TO_COLD: (f64, f64) = (0.05, 0.92);
pub const LOSS_RATIO_SAME: (f64, f64) = (0.97, 1.03);

/// Least loss-slope change read as a change of state when no open or short gives the scale, dB per
/// sqrt(GHz) of the current/baseline ratio (0.05: 0.16 dB across 0-10 GHz; common practice, no source).
pub const LOSS_SLOPE_SAME: f64 = 0.05;

/// The four hypotheses of a pair's states.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Hypothesis {
    #[serde(rename = "warm->cold")]
    WarmCold,
    #[serde(rename = "cold->warm")]
    ColdWarm,
    #[serde(rename = "warm->warm")]
    WarmWarm,
    #[serde(rename = "cold->cold")]
    ColdCold,
}

impl Hypothesis {
    /// In order of preference on equal evidence: a cooldown, a warm-up, then one state, cold before warm
    /// (a line is usually compared across a thermal cycle, cold).
    pub const ALL: [Hypothesis; 4] = [
        Hypothesis::WarmCold,
        Hypothesis::ColdWarm,
        Hypothesis::ColdCold,
        Hypothesis::WarmWarm,
    ];

    /// (baseline, current).
    pub fn states(self) -> (State, State) {
        match self {
            Hypothesis::WarmCold => (State::Warm, State::Cold),
            Hypothesis::ColdWarm => (State::Cold, State::Warm),
            Hypothesis::WarmWarm => (State::Warm, State::Warm),
            Hypothesis::ColdCold => (State::Cold, State::Cold),
        }
    }

    pub fn of(b: State, c: State) -> Hypothesis {
        match (b, c) {
            (State::Warm, State::Cold) => Hypothesis::WarmCold,
            (State::Cold, State::Warm) => Hypothesis::ColdWarm,
            (State::Warm, State::Warm) => Hypothesis::WarmWarm,
            (State::Cold, State::Cold) => Hypothesis::ColdCold,
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Hypothesis::WarmCold => "warm->cold",
            Hypothesis::ColdWarm => "cold->warm",
            Hypothesis::WarmWarm => "warm->warm",
            Hypothesis::ColdCold => "cold->cold",
        }
    }

    pub fn same_state(self) -> bool {
        matches!(self, Hypothesis::WarmWarm | Hypothesis::ColdCold)
    }
}

/// One signature and how well each hypothesis explains it. JSON: `states.signatures[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Signature {
    /// `delay-scale`, `loss-ratio`, `loss-slope` or `model-loss`.
    pub name: &'static str,
    /// Which sweep it reads: `pair`, `baseline` or `current`.
    pub sweep: &'static str,
    pub value: f64,
    pub sigma: f64,
    pub unit: &'static str,
    /// For each hypothesis (`warm->cold`, ...): how many sigmas the value lies outside what it allows.
    pub misfit: Vec<(Hypothesis, f64)>,
    pub note: String,
}

impl Signature {
    fn misfit_of(&self, h: Hypothesis) -> f64 {
        self.misfit
            .iter()
            .find(|(x, _)| *x == h)
            .map_or(0.0, |m| m.1)
    }
}

/// How far `v` lies outside `[lo, hi]`, in units of `sigma`.
fn outside(v: f64, (lo, hi): (f64, f64), sigma: f64) -> f64 {
    let d = if v < lo {
        lo - v
    } else if v > hi {
        v - hi
    } else {
        0.0
    };
    d / sigma.max(1e-300)
}

/// The decision on a pair's states.
#[derive(Debug, Clone, PartialEq)]
pub struct StateDecision {
    pub chosen: Hypothesis,
    pub signatures: Vec<Signature>,
    /// Standard uncertainties between the winner and the runner-up (infinite when nothing else is possible).
    pub margin: f64,
    /// Hypotheses the data leave open, the chosen one first.
    pub open: Vec<Hypothesis>,
    /// Total misfit of each hypothesis considered.
    pub totals: Vec<(Hypothesis, f64)>,
}

/// How many times the line file's round-trip delay to its visible end (its warm model; the cold line's
/// differs by about a per cent either way, `landmarks::WARM_TO_COLD_CHANGE`) the quick analyses read when
/// there is a line file: the far end's first multiple reflection at twice that delay, the window's skirt
/// behind it, and a line some tens of per cent longer than declared. Past that
/// the record holds only later multiples and noise, which a dense sweep (many points over a short line)
/// makes many times longer than the line (common practice, no source; as `job::NOMINAL_ALIAS_MARGIN`).
pub const QUICK_SPAN_LINES: f64 = 3.0;

/// Least span, in resolution cells of the band (one over its width), below which the quick analyses read
/// the whole record however short the line file's visible line (a device at its very start).
pub const QUICK_SPAN_MIN_CELLS: f64 = 10.0;

/// The line file's two models of a sweep's band in one chain: the baseline's side warm, the current's cold
/// (each side worked out from its own state alone), delays at the band centre.
pub fn line_models(line: &Line, lo: f64, hi: f64) -> ChainView {
    ChainView::from_line(line, State::Warm, State::Cold, lo, hi, 0.5 * (lo + hi))
}

/// The round-trip time the quick analyses read with a line file ([`QUICK_SPAN_LINES`] times its warm
/// delay to the visible end); `None` (the whole record) when that is under [`QUICK_SPAN_MIN_CELLS`].
pub fn quick_span(models: &ChainView, lo: f64, hi: f64) -> Option<f64> {
    let t_end = models.delay_to(models.visible_end_m(), Which::Baseline, None);
    let span = QUICK_SPAN_LINES * t_end;
    (span.is_finite() && span * (hi - lo) >= QUICK_SPAN_MIN_CELLS).then_some(span)
}

/// Both sweeps analysed as one uniform, uncompensated line over their common alias-free time, or up to
/// `span` (round trip, s; [`quick_span`]) where that is shorter.
pub(super) fn quick_analyses(
    b: &Network,
    c: &Network,
    span: Option<f64>,
    window: &Window,
    engine: &mut TraceEngine,
) -> Option<(SweepAnalysis, SweepAnalysis)> {
    let t = alias_free_s(b)
        .min(alias_free_s(c))
        .min(span.unwrap_or(f64::INFINITY));
    let ab = quick_analysis(b, t, Which::Baseline, window, engine)?;
    let ac = quick_analysis(c, t, Which::Current, window, engine)?;
    Some((ab, ac))
}

/// A sweep's alias-free round-trip time, s: (points - 1) over its span.
fn alias_free_s(n: &Network) -> f64 {
    (n.len() - 1) as f64 / (n.freqs_hz[n.len() - 1] - n.freqs_hz[0])
}

/// One sweep analysed as a uniform, uncompensated line up to round-trip delay `t`.
fn quick_analysis(
    n: &Network,
    t: f64,
    which: Which,
    window: &Window,
    engine: &mut TraceEngine,
) -> Option<SweepAnalysis> {
    let uni = ChainView::uniform("", 0.7, 1.0, 50.0);
    SweepAnalysis::new(&n.freqs_hz, &n.s11(), window, t, &uni, which, engine).ok()
}

/// The pair signatures from two uncompensated analyses.
pub(super) fn pair_signatures(
    ab: &SweepAnalysis,
    ac: &SweepAnalysis,
    engine: &mut TraceEngine,
) -> Result<Vec<Signature>, CompareError> {
    let mut out = Vec::new();
    let res = ab.resolution_s.max(ac.resolution_s);
    let strong = strong_events(ab, LANDMARK_SEPARATION_CELLS * res, MAX_LANDMARKS);
    let (w2c, c2w) = (
        (1.0 + WARM_TO_COLD_CHANGE.0, 1.0 + WARM_TO_COLD_CHANGE.1),
        (
            1.0 / (1.0 + WARM_TO_COLD_CHANGE.1),
            1.0 / (1.0 + WARM_TO_COLD_CHANGE.0),
        ),
    );
    let uni = ChainView::uniform("", 0.7, 1.0, 50.0);
    let tb = far_end::find(ab, &uni, Which::Baseline, engine)?;
    let tc = far_end::find(ac, &uni, Which::Current, engine)?;
    let bounds = (c2w.0 - 2e-3, w2c.1 + 2e-3);
    // Behind an open or short far end (of either sweep) live only multiple reflections. While the
    // termination stays they change as the line does, and the cooled stretch's change may show nowhere else
    // (a line whose front stays at room temperature); a termination that moved (an offset short for a flush
    // one, a pin pulled back) by d moves the n-th round trip by n d, which reads as a change of the whole
    // line's delay scale by d / t_far. So the line's change is first read in front of the far end; echoes
    // behind it join only when the far end did not move against the line in front of it.
    let wall = [&tb, &tc]
        .iter()
        .filter_map(|t| t.as_ref().filter(|t| t.total))
        .map(|t| t.delay_s + BEYOND_CELLS * res)
        .fold(f64::INFINITY, f64::min);
    let front: Vec<usize> = strong
        .iter()
        .copied()
        .filter(|&i| ab.events[i].delay_s <= wall)
        .collect();
    let m_front = scale_search(ab, ac, &front, bounds);
    let moved = match (&tb, &tc, &m_front) {
        (Some(b), Some(c), Some(m)) if b.total && c.total => {
            far_end_moved(ab, ac, &m.pairs, b, c, (c2w.0, w2c.1))
        }
        _ => false,
    };
    let m = if moved || front.len() == strong.len() {
        m_front
    } else {
        scale_search(ab, ac, &strong, bounds)
    };
    // The far echo's strength says something of the loss only if the same kind of termination ends
    // both sweeps (an open swapped for a short, or a load for an open, changes it by itself).
    // A joint's own reflection changes its shape with temperature (its parts contract, its
    // permittivity moves), so only an open or short far end is read this way.
    // A far end that moved against the line in front of it is another termination (an offset short
    // for a flush one, a pin pulled back): its echo's shape is the new termination's, not the line's loss.
    let same_end = match (&tb, &tc) {
        (Some(b), Some(c)) => b.total && c.total && b.polarity * c.polarity > 0.0 && !moved,
        _ => false,
    };
    if let Some(m) = &m {
        // The far end's own echo moves when the termination is swapped: the line's change is then read on
        // the other echoes when there are enough of them. The same open or short, unmoved, is a landmark
        // like any other, and the cleanest (a total reflection outweighs any joint beside it).
        let exclude = tb.as_ref().filter(|_| !same_end).map(|t| t.event);
        let (scale, sigma, used) = robust_scale(ab, ac, &m.pairs, exclude);
        let v = scale - 1.0;
        let sig = sigma.max(1e-7);
        let same = outside(v, (-SAME_STATE_DRIFT, SAME_STATE_DRIFT), sig);
        out.push(Signature {
            name: "delay-scale",
            sweep: "pair",
            value: v,
            sigma: sig,
            unit: "",
            misfit: vec![
                (
                    Hypothesis::WarmCold,
                    outside(v, (w2c.0 - 1.0, w2c.1 - 1.0), sig),
                ),
                (
                    Hypothesis::ColdWarm,
                    outside(v, (c2w.0 - 1.0, c2w.1 - 1.0), sig),
                ),
                (Hypothesis::WarmWarm, same),
                (Hypothesis::ColdCold, same),
            ],
            note: format!(
                "electrical length {:+.3} % over {used} echo(es) seen in both",
                100.0 * v,
            ),
        });
        if same_end {
            if let Some(sig) = loss_signature(ab, ac, m, tb.clone(), engine)? {
                out.push(sig);
            }
        }
    }
    Ok(out)
}

/// Whether the far end moved against the line in front of it: the stretch from the last landmark pair at
/// least [`LANDMARK_SEPARATION_CELLS`] in front of the baseline's far end (or from the reference plane) to
/// the far end changed its round-trip delay by more than a change of state allows (`bounds`: current over
/// baseline) plus three standard uncertainties of the four peaks' places ([`super::landmarks::pair_sigma`]).
fn far_end_moved(
    ab: &SweepAnalysis,
    ac: &SweepAnalysis,
    pairs: &[(usize, usize)],
    tb: &Termination,
    tc: &Termination,
    (lo, hi): (f64, f64),
) -> bool {
    let res = ab.resolution_s.max(ac.resolution_s);
    let last = pairs
        .iter()
        .copied()
        .filter(|&(i, j)| {
            i != tb.event
                && j != tc.event
                && ab.events[i].delay_s < tb.delay_s - LANDMARK_SEPARATION_CELLS * res
        })
        .max_by(|p, q| ab.events[p.0].delay_s.total_cmp(&ab.events[q.0].delay_s));
    let (t0b, t0c, s0) = last.map_or((0.0, 0.0, 0.0), |(i, j)| {
        (
            ab.events[i].delay_s,
            ac.events[j].delay_s,
            super::landmarks::pair_sigma(ab, ac, i, j),
        )
    });
    let (db, dc) = (tb.delay_s - t0b, tc.delay_s - t0c);
    let sigma = super::landmarks::pair_sigma(ab, ac, tb.event, tc.event).hypot(s0);
    let allowed = dc.clamp(lo * db, hi * db);
    (dc - allowed).abs() > 3.0 * sigma
}

/// Least-squares delay scale through the reference plane over `pairs` (less the pair of baseline event
/// `exclude` when at least two others remain), each pair weighed by its delay precision, pairs more than
/// three standard uncertainties off dropped one at a time. (scale, sigma, pairs used).
fn robust_scale(
    ab: &SweepAnalysis,
    ac: &SweepAnalysis,
    pairs: &[(usize, usize)],
    exclude: Option<usize>,
) -> (f64, f64, usize) {
    let mut use_: Vec<(usize, usize)> = pairs.to_vec();
    if use_.iter().filter(|p| Some(p.0) != exclude).count() >= 2 {
        use_.retain(|p| Some(p.0) != exclude);
    }
    // How many landmarks far enough down the line to weigh there are to begin with (before any is dropped
    // as an outlier).
    let weighing = |v: &[(usize, usize)]| {
        let t_far = v
            .iter()
            .map(|&(i, _)| ab.events[i].delay_s)
            .fold(0.0f64, f64::max);
        let n = v
            .iter()
            .filter(|&&(i, _)| ab.events[i].delay_s >= LEVER_SHARE * t_far)
            .count();
        (n, t_far)
    };
    let (weighing_at_first, _) = weighing(&use_);
    loop {
        let (mut num, mut den) = (0.0, 0.0);
        for &(i, j) in &use_ {
            let w = 1.0 / super::landmarks::pair_sigma(ab, ac, i, j).powi(2);
            num += w * ab.events[i].delay_s * ac.events[j].delay_s;
            den += w * ab.events[i].delay_s.powi(2);
        }
        if den <= 0.0 {
            return (1.0, f64::INFINITY, 0);
        }
        let s = num / den;
        let z: Vec<f64> = use_
            .iter()
            .map(|&(i, j)| {
                ((ac.events[j].delay_s - s * ab.events[i].delay_s)
                    / super::landmarks::pair_sigma(ab, ac, i, j))
                .abs()
            })
            .collect();
        let n = use_.len();
        let chi2: f64 = z.iter().map(|v| v * v).sum();
        let (k, zmax) =
            z.iter()
                .copied()
                .enumerate()
                .fold((0, 0.0), |a, (k, v)| if v > a.1 { (k, v) } else { a });
        if zmax > 3.0 && n > 2 {
            use_.remove(k);
            continue;
        }
        let infl = if n > 1 {
            (chi2 / (n - 1) as f64).sqrt().max(1.0)
        } else {
            1.0
        };
        // A line that shows one echo far enough down it to weigh: nothing checks that echo's place, and an
        // echo may be two joints within a cell or two (a connector either side of an attenuator, a joint
        // beside a component) whose shares of the peak move with the state. Its place is then known to
        // [`LONE_LANDMARK_CELLS`] of a cell in each sweep, not to its noise. (Where several weighed and
        // the others were dropped as outliers, they disagreed with it by more than their noise, and the
        // spread is already in the scale's uncertainty.)
        let (weighing_now, t_far) = weighing(&use_);
        let mut sigma = infl / den.sqrt();
        if weighing_at_first < 2 && weighing_now < 2 && t_far > 0.0 {
            let res = ab.resolution_s.max(ac.resolution_s);
            sigma = sigma.max(std::f64::consts::SQRT_2 * LONE_LANDMARK_CELLS * res / t_far);
        }
        return (s, sigma, n);
    }
}

/// Share of the farthest landmark's delay from which a landmark weighs in the delay scale: one nearer the
/// reference plane moves by too little with the line's change to check the farthest (project choice, no
/// source).
pub const LEVER_SHARE: f64 = 1.0 / 3.0;

/// How well a lone weighing landmark's place is known in each sweep, in resolution cells, when no other
/// landmark checks it (see `robust_scale`): a quarter of a cell, the shift of a peak made of two joints a
/// cell apart when their shares change by a few dB (common practice, no source).
pub const LONE_LANDMARK_CELLS: f64 = 0.25;

/// Fit y = a + b sqrt(g) (g = f / 1 GHz) by least squares; (b, sigma_b).
fn sqrt_slope(freqs: &[f64], y: &[f64]) -> Option<(f64, f64)> {
    let n = freqs.len();
    if n < 8 {
        return None;
    }
    let x: Vec<f64> = freqs.iter().map(|f| (f / 1e9).max(0.0).sqrt()).collect();
    let mx = x.iter().sum::<f64>() / n as f64;
    let my = y.iter().sum::<f64>() / n as f64;
    let sxx: f64 = x.iter().map(|v| (v - mx).powi(2)).sum();
    if sxx <= 0.0 {
        return None;
    }
    let b = x
        .iter()
        .zip(y)
        .map(|(a, v)| (a - mx) * (v - my))
        .sum::<f64>()
        / sxx;
    let a = my - b * mx;
    let rss: f64 = x.iter().zip(y).map(|(u, v)| (v - a - b * u).powi(2)).sum();
    // Neighbouring points of a gated response are correlated over about a gate's worth of band: count the
    // independent ones as the number of resolution cells the gate spans across the band, about 10.
    let dof = (n as f64).clamp(3.0, 10.0);
    let sigma = (rss / (n as f64 - 2.0).max(1.0) / sxx * n as f64 / dof).sqrt();
    Some((b, sigma))
}

/// Frequencies (Hz) and a value at each.
type Spectrum = (Vec<f64>, Vec<f64>);

/// Ratio current/baseline of an echo's local reflection, in dB, against frequency.
fn ratio_db(
    ab: &SweepAnalysis,
    ac: &SweepAnalysis,
    i: usize,
    j: usize,
    engine: &mut TraceEngine,
) -> Result<Option<Spectrum>, CompareError> {
    let uni = ChainView::uniform("", 0.7, 1.0, 50.0);
    let (fb, gb) = ab.local_reflection(ab.events[i].delay_s, 0.0, &uni, Which::Baseline, engine)?;
    let (fc, gc) = ac.local_reflection(ac.events[j].delay_s, 0.0, &uni, Which::Current, engine)?;
    if fb.len() != fc.len() || fb.is_empty() {
        return Ok(None);
    }
    let y: Vec<f64> = gb
        .iter()
        .zip(&gc)
        .map(|(b, c)| crate::numeric::power_db(c.norm_sqr().max(1e-24) / b.norm_sqr().max(1e-24)))
        .collect();
    Ok(Some((fb, y)))
}

/// The loss signature of the open or short far end `term` (the baseline's), paired in both sweeps: its
/// echo's current/baseline ratio against sqrt(f), as a ratio of conductor losses where the baseline's own
/// loss law gives the scale (`loss-ratio`), else as a slope (`loss-slope`). `None` when it did not pair.
fn loss_signature(
    ab: &SweepAnalysis,
    ac: &SweepAnalysis,
    m: &ScaleMatch,
    term: Option<Termination>,
    engine: &mut TraceEngine,
) -> Result<Option<Signature>, CompareError> {
    // The far echo: the baseline's open or short far end, paired. One that did not pair under the line's
    // scale moved: another termination ends the current sweep (an offset short for a flush one, a pin pulled
    // back), and its echo's shape says nothing of the line's loss; nor does a joint's in front of it, whose
    // shape changes with temperature by itself.
    let Some((i_far, j_far)) = term
        .as_ref()
        .and_then(|t| m.pairs.iter().find(|p| p.0 == t.event).copied())
    else {
        return Ok(None);
    };
    let Some((f, y_far)) = ratio_db(ab, ac, i_far, j_far, engine)? else {
        return Ok(None);
    };
    let Some((b, sb)) = sqrt_slope(&f, &y_far) else {
        return Ok(None);
    };
    // A level change in front of the line (an amplifier's gain) moves every echo alike and leaves the slope
    // alone; a joint's own echo changes its shape with temperature, so no near echo is subtracted.
    let sb = sb.max(1e-3);
    // The baseline's own loss law at an open or short far end sets the scale.
    let term = term.filter(|t: &Termination| t.event == i_far && t.total);
    let near_text = "";
    // How much the ratio rose from the bottom to the middle of the band, against how much loss the
    // baseline's own far end shows over the same stretch of band.
    let (g_lo, g_mid) = ((f[0] / 1e9).max(0.0), (f[f.len() / 2] / 1e9).max(0.0));
    let span = g_mid.sqrt() - g_lo.sqrt();
    let dl_b = term
        .and_then(|t| t.loss)
        .map(|l| l.db(f[f.len() / 2]) - l.db(f[0]));
    if let Some(dl) = dl_b.filter(|&d| span > 0.0 && d > 3.0 * sb * span) {
        // Conductor loss ratio current/baseline: what the ratio gained is the loss that went away.
        let q = 1.0 - b * span / dl;
        let sq = sb * span / dl;
        let inv = (
            1.0 / LOSS_RATIO_WARM_TO_COLD.1,
            1.0 / LOSS_RATIO_WARM_TO_COLD.0,
        );
        let same = outside(q, LOSS_RATIO_SAME, sq);
        return Ok(Some(Signature {
            name: "loss-ratio",
            sweep: "pair",
            value: q,
            sigma: sq,
            unit: "",
            misfit: vec![
                (Hypothesis::WarmCold, outside(q, LOSS_RATIO_WARM_TO_COLD, sq)),
                (Hypothesis::ColdWarm, outside(q, inv, sq)),
                (Hypothesis::WarmWarm, same),
                (Hypothesis::ColdCold, same),
            ],
            note: format!(
                "the far open or short loses {:.0} % of what it lost in the baseline across the lower half of \
                 the band ({dl:.1} dB then{near_text})",
                100.0 * q,
            ),
        }));
    }
    let same = outside(b, (-LOSS_SLOPE_SAME, LOSS_SLOPE_SAME), sb);
    Ok(Some(Signature {
        name: "loss-slope",
        sweep: "pair",
        value: b,
        sigma: sb,
        unit: "dB/sqrt(GHz)",
        misfit: vec![
            (
                Hypothesis::WarmCold,
                outside(b, (LOSS_SLOPE_SAME, f64::INFINITY), sb),
            ),
            (
                Hypothesis::ColdWarm,
                outside(b, (f64::NEG_INFINITY, -LOSS_SLOPE_SAME), sb),
            ),
            (Hypothesis::WarmWarm, same),
            (Hypothesis::ColdCold, same),
        ],
        note: format!("the far echo's strength changed by {b:+.2} dB per sqrt(GHz){near_text}"),
    }))
}

/// Signatures of one sweep against the line model: its echo delays and, with an open or short far end, its
/// loss law, each against the warm and the cold model, as `models` holds them ([`line_models`] on the
/// sweep's band). `sweep` names the sweep (`baseline`/`current`).
pub(super) fn model_signatures(
    a: &SweepAnalysis,
    models: &ChainView,
    sweep: &'static str,
    engine: &mut TraceEngine,
) -> Result<Vec<Signature>, CompareError> {
    let mut out = Vec::new();
    let (warm, cold) = (Which::Baseline, Which::Current);
    // The echo delays are not read against the models: the band-pass peak of an uncompensated, dispersive
    // echo sits a fraction of a percent off the model's group delay, as much as the warm-to-cold change
    // itself, so it cannot vote.
    // Loss: an open or short far end, against each model's round-trip loss law to it.
    if let Some(t) = far_end::find(a, models, warm, engine)?.filter(|t| t.total) {
        let x = models.position_of(t.delay_s, warm, None);
        let uni = ChainView::uniform("", 0.7, 1.0, 50.0);
        let (f, g) = a.local_reflection(t.delay_s, x, &uni, Which::Baseline, engine)?;
        if let Some((meas, _)) = far_end::fit_loss(&f, &g) {
            let fm = f[f.len() / 2];
            let l_meas = meas.db(fm);
            let (l_w, l_c) = (
                conductor_loss_db(models, fm, warm),
                conductor_loss_db(models, fm, cold),
            );
            if l_w > 0.5 && l_c > 0.0 {
                // Compare in the log domain: the model's losses are known to about 30 %.
                let v = (l_meas.max(1e-3) / l_w).ln();
                let sig = 0.3f64.max(1.0 / l_w.max(1.0));
                let r = (l_c / l_w).ln();
                out.push(single(
                    "model-loss",
                    sweep,
                    v,
                    sig,
                    "ln",
                    outside(v, (-0.3, 0.3), sig),
                    outside(v, (r - 0.3, r + 0.3), sig),
                    format!(
                        "the far end shows {l_meas:.1} dB round trip at {:.2} GHz; the warm model {l_w:.1} dB, \
                         the cold {l_c:.1} dB",
                        fm / 1e9
                    ),
                ));
            }
        }
    }
    Ok(out)
}

/// Round-trip conductor loss of one side (`which`) of `chain` to its visible end at `f`, dB: the modelled
/// loss less the attenuators' flat part, in the state that side was built for.
fn conductor_loss_db(chain: &ChainView, f: f64, which: Which) -> f64 {
    let end = chain.visible_end_m();
    chain.loss_to_db(end, f, which) - chain.loss_model_to(end, which).a_flat
}

/// Factor by which the line model's ratio of cold to warm conductor loss may be off either way when the
/// `loss-ratio` signature is checked against it: each state's loss known to [`super::landmarks::
/// MODEL_LOSS_ERROR`] (30 %), so the ratio to (1 + 0.3) / (1 - 0.3) = 1.86.
pub const MODEL_RATIO_FACTOR: f64 = 1.857_142_857_142_857;

/// Check the `loss-ratio` signature against what the line model allows under each hypothesis: the ratio
/// of the model's cold to warm conductor loss to the far end (`cold_over_warm`), off by up to
/// [`MODEL_RATIO_FACTOR`] either way, within the signature's own physical interval. When the measured
/// ratio lies more than [`OPEN_MARGIN`] standard uncertainties outside what every hypothesis allows, no
/// state explains the far echo's change: the termination's own joint changed (a series resistance or a
/// partly open pin there reshapes the echo), and the signature no longer votes. Its note says so.
/// Otherwise a change of state's interval is widened up to the model's (never past 1: cooling never raises
/// a conductor's loss), where the model's ratio lies above the materials' own bound: a line of cupronickel,
/// or one mostly at room temperature, loses nearly as much cold as warm, and its far echo's ratio near 1
/// is no sign of one state.
pub fn check_loss_ratio(signatures: &mut [Signature], cold_over_warm: f64) {
    if !(cold_over_warm.is_finite() && cold_over_warm > 0.0) {
        return;
    }
    for s in signatures.iter_mut().filter(|s| s.name == "loss-ratio") {
        let (lo, hi) = (
            cold_over_warm / MODEL_RATIO_FACTOR,
            cold_over_warm * MODEL_RATIO_FACTOR,
        );
        // Cooling never raises a conductor's loss; a line whose conductors barely change (cupronickel) or
        // that stays mostly at room temperature keeps a ratio near 1, above the materials' own bound,
        // as far as its model (and the model's error) allows.
        let top = LOSS_RATIO_WARM_TO_COLD.1.max(hi.min(1.0));
        let w2c = (lo.max(LOSS_RATIO_WARM_TO_COLD.0), hi.min(top));
        let c2w = (
            (1.0 / hi).max(1.0 / top),
            (1.0 / lo).min(1.0 / LOSS_RATIO_WARM_TO_COLD.0),
        );
        let model_misfit = |(a, b): (f64, f64)| {
            if a > b {
                f64::INFINITY
            } else {
                outside(s.value, (a, b), s.sigma)
            }
        };
        let least = [w2c, c2w, LOSS_RATIO_SAME]
            .into_iter()
            .map(model_misfit)
            .fold(f64::INFINITY, f64::min);
        if least <= OPEN_MARGIN {
            // A change of state is read against the materials' bounds, widened to the model's ratio.
            let (q, sq) = (s.value, s.sigma);
            for m in s.misfit.iter_mut() {
                let wide = match m.0 {
                    Hypothesis::WarmCold => outside(q, (LOSS_RATIO_WARM_TO_COLD.0, top), sq),
                    Hypothesis::ColdWarm => {
                        outside(q, (1.0 / top, 1.0 / LOSS_RATIO_WARM_TO_COLD.0), sq)
                    }
                    _ => continue,
                };
                m.1 = m.1.min(wide);
            }
        } else {
            for m in s.misfit.iter_mut() {
                m.1 = 0.0;
            }
            s.note.push_str(&format!(
                "; no state explains it (the line model allows {:.0}-{:.0} % warm -> cold): the far end's \
                 own joint may have changed, so it does not vote",
                100.0 * w2c.0,
                100.0 * w2c.1
            ));
        }
    }
}

/// The line model's ratio of cold to warm round-trip conductor loss to the far end, at the band centre, from
/// the line's two models of a sweep's band ([`line_models`]).
pub fn model_cold_over_warm(models: &ChainView) -> Option<f64> {
    let f = models.delay_reference_hz;
    let (l_w, l_c) = (
        conductor_loss_db(models, f, Which::Baseline),
        conductor_loss_db(models, f, Which::Current),
    );
    (l_w > 0.0 && l_c > 0.0).then(|| l_c / l_w)
}

/// A single-sweep signature, its misfits spread over the pair hypotheses by the state they give that sweep.
#[allow(clippy::too_many_arguments)]
fn single(
    name: &'static str,
    sweep: &'static str,
    value: f64,
    sigma: f64,
    unit: &'static str,
    warm: f64,
    cold: f64,
    note: String,
) -> Signature {
    let misfit = Hypothesis::ALL
        .iter()
        .map(|&h| {
            let (b, c) = h.states();
            let s = if sweep == "baseline" { b } else { c };
            (h, if s == State::Warm { warm } else { cold })
        })
        .collect();
    Signature {
        name,
        sweep,
        value,
        sigma,
        unit,
        misfit,
        note,
    }
}

/// Decide among `allowed` hypotheses from `signatures`.
pub fn decide(signatures: Vec<Signature>, allowed: &[Hypothesis]) -> StateDecision {
    let totals: Vec<(Hypothesis, f64)> = allowed
        .iter()
        .map(|&h| {
            (
                h,
                signatures
                    .iter()
                    .map(|s| s.misfit_of(h).powi(2))
                    .sum::<f64>(),
            )
        })
        .collect();
    // One state is the simpler reading: a change of state pays STATE_CHANGE_PRIOR.
    let totals: Vec<(Hypothesis, f64)> = totals
        .into_iter()
        .map(|(h, t)| {
            (
                h,
                t + if h.same_state() {
                    0.0
                } else {
                    STATE_CHANGE_PRIOR
                },
            )
        })
        .collect();
    let best = totals
        .iter()
        .copied()
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .unwrap_or((allowed[0], 0.0));
    let runner = totals
        .iter()
        .filter(|t| t.0 != best.0)
        .map(|t| t.1)
        .fold(f64::INFINITY, f64::min);
    let margin = (runner - best.1).max(0.0).sqrt();
    let mut open = vec![best.0];
    for &(h, t) in &totals {
        if h != best.0 && (t - best.1).max(0.0).sqrt() < OPEN_MARGIN {
            open.push(h);
        }
    }
    StateDecision {
        chosen: best.0,
        signatures,
        margin,
        open,
        totals,
    }
}

impl StateDecision {
    /// A sentence: the decision, its margin and what stays open.
    pub fn basis(&self) -> String {
        let mut s = format!("inferred {}", self.chosen.name());
        if self.margin.is_finite() {
            s.push_str(&format!(" with a margin of {:.1} sigma", self.margin));
        }
        let strongest = self
            .signatures
            .iter()
            .map(|g| {
                let own = g.misfit_of(self.chosen);
                let other = g
                    .misfit
                    .iter()
                    .filter(|(h, _)| *h != self.chosen)
                    .map(|m| m.1)
                    .fold(f64::INFINITY, f64::min);
                (other - own, g)
            })
            .max_by(|a, b| a.0.total_cmp(&b.0));
        if let Some((_, g)) = strongest {
            s.push_str(&format!(": {}", g.note));
        }
        if self.open.len() > 1 {
            let others: Vec<&str> = self.open[1..].iter().map(|h| h.name()).collect();
            s.push_str(&format!(
                "; the data also allow {}, so only changes seen under every one of these are reported",
                others.join(", ")
            ));
        }
        s
    }
}

/// A single sweep's state from the line model (`locate` without `--state`): the `model-loss` signature of
/// its far end, when the line file ends in an open or short. Returns the state (cold when nothing tells),
/// a sentence, and the margin in standard uncertainties (`None` when no signature could be read).
pub fn decide_single(
    n: &Network,
    line: &Line,
    window: &Window,
) -> Result<(State, String, Option<f64>), CompareError> {
    decide_single_in(n, line, window, &mut TraceEngine::new())
}

/// [`decide_single`] on `engine`'s plans (the engine that then locates the sweep: its gates are prepared
/// once for both).
pub fn decide_single_in(
    n: &Network,
    line: &Line,
    window: &Window,
    engine: &mut TraceEngine,
) -> Result<(State, String, Option<f64>), CompareError> {
    let (lo, hi) = (n.freqs_hz[0], n.freqs_hz[n.len() - 1]);
    let models = line_models(line, lo, hi);
    let span = quick_span(&models, lo, hi);
    let t = alias_free_s(n).min(span.unwrap_or(f64::INFINITY));
    let Some(a) = quick_analysis(n, t, Which::Baseline, window, engine) else {
        return Ok((State::Cold, "no echo was found; taken as cold".into(), None));
    };
    let sigs = model_signatures(&a, &models, "current", engine)?;
    if sigs.is_empty() {
        return Ok((
            State::Cold,
            "the line file gives no open or short far end to read the loss at; taken as cold"
                .into(),
            None,
        ));
    }
    let d = decide(sigs, &[Hypothesis::ColdCold, Hypothesis::WarmWarm]);
    let state = d.chosen.states().1;
    let note = d
        .signatures
        .first()
        .map_or(String::new(), |g| g.note.clone());
    Ok((
        state,
        format!(
            "inferred {} with a margin of {:.1} sigma: {note}",
            state.name(),
            d.margin
        ),
        Some(d.margin),
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn loss_ratio(value: f64, sigma: f64) -> Signature {
        Signature {
            name: "loss-ratio",
            sweep: "pair",
            value,
            sigma,
            unit: "",
            misfit: vec![
                (
                    Hypothesis::WarmCold,
                    outside(value, LOSS_RATIO_WARM_TO_COLD, sigma),
                ),
                (Hypothesis::ColdWarm, 1.0),
                (Hypothesis::WarmWarm, 2.0),
                (Hypothesis::ColdCold, 2.0),
            ],
            note: String::new(),
        }
    }

    #[test]
    fn a_loss_ratio_no_state_of_the_model_allows_does_not_vote() {
        // The model: cold loses 72 % of warm. A warm-up allows 1 / (0.72 x 1.86) = 0.75 up to
        // 1 / (0.72 / 1.86) = 2.58; the far echo losing 333 % +/- 4 % is outside everything.
        let mut s = vec![loss_ratio(3.33, 0.04)];
        check_loss_ratio(&mut s, 0.72);
        assert!(s[0].misfit.iter().all(|m| m.1 == 0.0), "{:?}", s[0]);
        assert!(s[0].note.contains("no state explains it"), "{}", s[0].note);
    }

    #[test]
    fn a_loss_ratio_the_model_allows_keeps_its_vote() {
        // A cooldown's 0.5 lies inside 0.39-1 for the same model (1.86 x 0.72 is past 1): its vote stands.
        let mut s = vec![loss_ratio(0.5, 0.04)];
        let before = s[0].misfit.clone();
        check_loss_ratio(&mut s, 0.72);
        assert_eq!(s[0].misfit, before);
        assert!(s[0].note.is_empty());
        // 2.0 lies inside a warm-up's 0.75-2.58: it votes, against a cooldown from 1 (25 sigma, not the
        // materials' 27 from 0.92).
        let mut s = vec![loss_ratio(2.0, 0.04)];
        check_loss_ratio(&mut s, 0.72);
        assert!(s[0].note.is_empty());
        let w2c = s[0].misfit[0];
        assert_eq!(w2c.0, Hypothesis::WarmCold);
        assert!((w2c.1 - 25.0).abs() < 1e-9, "{w2c:?}");
    }

    #[test]
    fn a_cooldown_reaches_up_to_the_models_ratio_never_past_one() {
        // Out-of-sample seed 43000121: copper at room temperature and cupronickel at 50 K; the model says
        // cold loses 98 % of warm (x 1.86 is past 1), the far echo lost 98.7 % +/- 0.036 %: a cooldown
        // allows it (0.53-1) as one state does, so the signature no longer outvotes the electrical length.
        let cooldown_misfit = |s: &[Signature]| {
            s[0].misfit
                .iter()
                .find(|m| m.0 == Hypothesis::WarmCold)
                .unwrap()
                .1
        };
        let mut s = vec![loss_ratio(0.987, 0.00036)];
        check_loss_ratio(&mut s, 0.98);
        assert_eq!(cooldown_misfit(&s), 0.0);
        // Never past 1: a cooldown that raised the loss by 2 % is no cooldown.
        let mut s = vec![loss_ratio(1.02, 0.001)];
        check_loss_ratio(&mut s, 0.98);
        let w2c = cooldown_misfit(&s);
        assert!((w2c - 20.0).abs() < 1e-9, "{w2c}");
        // A copper line's model (cold loses 30 % of warm; x 1.86 = 0.56) keeps the materials' 0.92.
        let mut s = vec![loss_ratio(0.987, 0.00036)];
        let before = s[0].misfit.clone();
        check_loss_ratio(&mut s, 0.3);
        assert_eq!(s[0].misfit, before);
        // The 72 % model of the tests above: x 1.86 = 1.34, so a cooldown reaches 1.
        let mut s = vec![loss_ratio(1.0, 0.04)];
        check_loss_ratio(&mut s, 0.72);
        assert_eq!(s[0].misfit[0], (Hypothesis::WarmCold, 0.0));
    }
}
