//! The far end of the visible line in one sweep: which echo is the termination, whether it is an open or a
//! short (a total reflection), its polarity, and, for a line of unknown construction, the round-trip loss
//! law that the termination's echo shows (20 log10 |Gamma_loc(f)| = c - a_sqrt sqrt(f/1GHz) - a_lin f/1GHz).
//!
//! The termination is the comparator's most reliable landmark: it is the strongest late echo, it is there in
//! every sweep of the line, and what lies behind an open or short is only multiple reflections.
//!
//! Conventions: e^{+j omega t}; round-trip delays in s; the local reflection is the gated echo moved to its
//! own plane (see `analysis`), so an open reads near +1 and a short near -1 at the bottom of the band, less
//! the line's loss.

use super::analysis::{local_bins, SweepAnalysis, GATE_HALF_WIDTH_CELLS};
use super::chain::{ChainView, LossModel, Which};
use super::CompareError;
use crate::line::Load;
use crate::transform::{
    czt::{direct_sum, phasors},
    TraceEngine,
};
use num_complex::Complex64;

/// The termination is looked for among echoes no more than this far under the strongest echo, dB
/// (a lossy line's far open can read 15 dB under a near connector's echo at the top of the band; common
/// practice, no source).
pub const TERMINATION_WINDOW_DB: f64 = 20.0;

/// Share of the band, from its bottom, over which a termination's polarity is read (the loss and the
/// skin effect's excess phase are smallest there).
pub const POLARITY_BAND: f64 = 0.3;

/// Share of the band, from its bottom, whose mean reflection stands for the level towards zero frequency
/// when no loss law fits (common practice, no source).
pub const BOTTOM_BAND: f64 = 0.05;

/// Share of the alias-free time past which an echo may be folded from beyond it (the port's own echo
/// wrapping round the record, for one): nothing there is a landmark, a termination or a finding above info.
pub const ALIAS_EDGE: f64 = 0.9;

/// Error of the line model's round-trip delay to the visible end, relative: the thermal model and the
/// declared lengths (common practice, no source). With [`END_LOBE_CELLS`], how far from its predicted
/// delay the visible end's echo is looked for, and how far past it the line's own echoes may reach.
pub const END_DELAY_TOLERANCE: f64 = 0.015;

/// Resolution cells added to that: the echo's own main lobe (common practice, no source).
pub const END_LOBE_CELLS: f64 = 3.0;

/// Round-trip delay below which sweep `a`'s record may hold the line's own far part folded back from beyond
/// the alias-free time T: a line file whose visible end lies past T (give or take
/// [`END_DELAY_TOLERANCE`] and [`END_LOBE_CELLS`]) puts the echoes of its stretch from T on at delays from 0
/// to that reach less T (the band-pass record is periodic in T). Nothing there is a landmark, and nothing
/// there is a finding above info: a change may be the far part's, seen at the wrong place. Minus infinity
/// when the line fits in the record, and for a line of unknown construction (its length is not known), so
/// that no delay, not even the reference plane's echo read a hair before zero, lies below it.
pub fn folded_until(chain: &ChainView, a: &SweepAnalysis, which: Which) -> f64 {
    if !chain.as_built {
        return f64::NEG_INFINITY;
    }
    let t_end = chain.delay_to(chain.visible_end_m(), which, None);
    let reach = t_end * (1.0 + END_DELAY_TOLERANCE) + END_LOBE_CELLS * a.resolution_s;
    if reach > a.alias_free_s {
        reach - a.alias_free_s
    } else {
        f64::NEG_INFINITY
    }
}

/// [`folded_until`] for a pair: the larger of its baseline's and its current sweep's.
pub fn pair_folded_until(chain: &ChainView, b: &SweepAnalysis, c: &SweepAnalysis) -> f64 {
    folded_until(chain, b, Which::Baseline).max(folded_until(chain, c, Which::Current))
}

/// A termination found in one sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct Termination {
    /// Index of its echo in the analysis' events.
    pub event: usize,
    pub delay_s: f64,
    /// Band-pass magnitude of its echo (compensated where the chain has a model).
    pub magnitude: f64,
    /// Real part of the mean local reflection over the bottom of the band, over its magnitude: near +1 for
    /// an open, near -1 for a short.
    pub polarity: f64,
    /// |Gamma_loc| at the bottom of the band (what loss leaves of the termination's reflection).
    pub low_band_reflection: f64,
    /// True when it is an open or a short: the line file says so, or its reflection is total-like.
    pub total: bool,
    /// For a total termination: the round-trip loss its echo shows, dB (`LossModel` of the line up to it);
    /// `None` when the fit is not trustworthy.
    pub loss: Option<LossModel>,
}

/// The load the line file puts at the visible end, if any.
fn known_load(chain: &ChainView) -> Option<Load> {
    let i = chain.first_blocking()?;
    chain.segments[i].load
}

/// Find the termination of the visible line in sweep `a` (analysed on `chain` in state `which`).
///
/// With a line file, the echo nearest the visible end's predicted delay (give or take the thermal model's
/// error), strongest first; it is total when the line file's load is an open or a short, or when its echo
/// reads as one. On a line of unknown construction, among the echoes within [`TERMINATION_WINDOW_DB`] of
/// the strongest: the one whose reflection at the bottom of the band ([`BOTTOM_BAND`], where the line loses
/// least) is largest; it is the termination only if it is an open or a short: its level extrapolated to
/// zero frequency along its own loss law, or its level at the bottom of the band, reaches [`TOTAL_AT_DC`].
/// Behind an open or short there are only multiple reflections, so the latest strong echo is not the
/// termination.
pub fn find(
    a: &SweepAnalysis,
    chain: &ChainView,
    which: Which,
    engine: &mut TraceEngine,
) -> Result<Option<Termination>, CompareError> {
    let edge = ALIAS_EDGE * a.alias_free_s;
    let raw = |i: usize| a.events[i].magnitude / a.gain_at(a.events[i].delay_s);
    let strongest = (0..a.events.len())
        .filter(|&i| a.events[i].delay_s < edge)
        .map(raw)
        .fold(0.0, f64::max);
    if strongest <= 0.0 {
        return Ok(None);
    }
    let floor = strongest * 10f64.powf(-TERMINATION_WINDOW_DB / 20.0);
    let candidates: Vec<usize> = if chain.as_built {
        let x_end = chain.visible_end_m();
        let t_end = chain.delay_to(x_end, which, None);
        let tol = END_DELAY_TOLERANCE * t_end + END_LOBE_CELLS * a.resolution_s;
        (0..a.events.len())
            .filter(|&i| (a.events[i].delay_s - t_end).abs() <= tol && a.events[i].delay_s < edge)
            .max_by(|&x, &y| raw(x).total_cmp(&raw(y)))
            .into_iter()
            .collect()
    } else {
        (0..a.events.len())
            .filter(|&i| {
                a.events[i].delay_s < edge && a.events[i].ghost_of.is_none() && raw(i) >= floor
            })
            .collect()
    };
    // Ranked by what the bottom of the band shows (where the line loses least): an extrapolation along a
    // loss law can flatter an echo whose level only falls with frequency. Only the one chosen is read
    // further (its polarity and loss law).
    // The bottom of the band: the first `n_bottom` points of a local reflection of `len`; its mean level.
    let n_bottom = |len: usize| ((len as f64 * BOTTOM_BAND).ceil() as usize).clamp(1, len);
    let bottom_of = |g: &[Complex64], n: usize| {
        20.0 * (g[..n].iter().map(|v| v.norm()).sum::<f64>() / n as f64)
            .max(1e-12)
            .log10()
    };
    // Several candidates are ranked on the bottom of the band alone, gated there by direct sums; only the
    // one chosen is gated whole.
    let chosen = if candidates.len() > 1 {
        let points = n_bottom(local_bins(a.freqs.len()).count);
        let mut best: Option<(f64, usize)> = None;
        for &i in &candidates {
            let e = a.events[i];
            let x = chain.position_of(e.delay_s, which, None);
            let (_, g) = a.local_reflection_low(e.delay_s, x, chain, which, engine, points)?;
            let bottom = bottom_of(&g, g.len());
            if best.map_or(true, |(b, _)| bottom > b) {
                best = Some((bottom, i));
            }
        }
        best.map(|(_, i)| i)
    } else {
        candidates.first().copied()
    };
    let Some(i) = chosen else {
        return Ok(None);
    };
    let (f, g) = {
        let e = a.events[i];
        let x = chain.position_of(e.delay_s, which, None);
        a.local_reflection(e.delay_s, x, chain, which, engine)?
    };
    // Where the loss law does not fit (an offset short's air line ripples), the bottom of the band, where
    // the line loses least, says it.
    let bottom = bottom_of(&g, n_bottom(g.len()));
    let e = a.events[i];
    let n_low = ((f.len() as f64 * POLARITY_BAND).ceil() as usize).clamp(1, f.len());
    let mean = g[..n_low].iter().sum::<Complex64>() / n_low as f64;
    let low = g[..n_low].iter().map(|v| v.norm()).sum::<f64>() / n_low as f64;
    let polarity = if mean.norm() > 0.0 {
        mean.re / mean.norm()
    } else {
        0.0
    };
    let fit = fit_loss(&f, &g);
    let at_dc = fit.map_or(bottom, |(_, c)| c.max(bottom));
    let total = match known_load(chain) {
        Some(Load::Open) | Some(Load::Short) => true,
        Some(_) => false,
        None => at_dc >= TOTAL_AT_DC && polarity.abs() >= 0.5,
    };
    let t = Termination {
        event: i,
        delay_s: e.delay_s,
        magnitude: e.magnitude,
        polarity,
        low_band_reflection: low,
        total,
        loss: if total { fit.map(|(l, _)| l) } else { None },
    };
    Ok((chain.as_built || t.total).then_some(t))
}

/// An echo whose reflection, extrapolated to zero frequency along its fitted loss law, is at least this
/// strong is an open or a short (-6 dB, |Gamma| = 0.5: a joint's reflection vanishes towards DC, a
/// termination's does not; common practice, no source).
pub const TOTAL_AT_DC: f64 = -6.0;

/// Fit 20 log10 |Gamma(f)| = c - a_sqrt sqrt(g) - a_lin g (g = f / 1 GHz) by least squares, with both loss
/// terms non-negative. The loss law and `c` (the level extrapolated to zero frequency, dB); `None` when
/// the echo is too weak or too ragged for the fit to mean a line's loss.
pub fn fit_loss(freqs: &[f64], gamma: &[num_complex::Complex64]) -> Option<(LossModel, f64)> {
    let pts: Vec<(f64, f64)> = freqs
        .iter()
        .zip(gamma)
        .map(|(&f, g)| (f, g.norm_sqr()))
        .filter(|&(_, p)| p > 1e-12)
        .map(|(f, p)| ((f / 1e9).max(0.0), crate::numeric::power_db(p)))
        .collect();
    if pts.len() < 8 {
        return None;
    }
    // Columns: 1, -sqrt(g), -g. The augmented normal equations of all three columns accumulated point by
    // point in one pass, as `least_squares` would (`sums[i][j]`, right-hand sides in `sums[i][3]`); a fit
    // on two of the columns takes its equations from them (the same sums, in the same order).
    let mut sums = [[0.0f64; 4]; 3];
    for &(g, y) in &pts {
        let row = [1.0, -g.sqrt(), -g];
        for i in 0..3 {
            if row[i] == 0.0 {
                continue;
            }
            for j in i..3 {
                sums[i][j] += row[i] * row[j];
            }
            sums[i][3] += row[i] * y;
        }
    }
    let solve = |cols: &[usize]| -> Option<Vec<f64>> {
        let a = cols
            .iter()
            .map(|&i| {
                let mut r: Vec<f64> = cols.iter().map(|&j| sums[i.min(j)][i.max(j)]).collect();
                r.push(sums[i][3]);
                r
            })
            .collect();
        super::align::solve_normal(a)
    };
    let mut p = solve(&[0, 1, 2])?;
    let model = if p[1] >= 0.0 && p[2] >= 0.0 {
        LossModel {
            a_sqrt: p[1],
            a_lin: p[2],
            a_flat: 0.0,
        }
    } else if p[1] < 0.0 {
        p = solve(&[0, 2])?;
        LossModel {
            a_sqrt: 0.0,
            a_lin: p[1].max(0.0),
            a_flat: 0.0,
        }
    } else {
        p = solve(&[0, 1])?;
        LossModel {
            a_sqrt: p[1].max(0.0),
            a_lin: 0.0,
            a_flat: 0.0,
        }
    };
    // A termination's echo whose level swings by more than a few dB about the loss law is not a plain open or
    // short behind a smooth line: do not take its shape for the line's loss.
    let c = p[0];
    let rms = (pts
        .iter()
        .map(|&(g, y)| (y - (c - model.db(g * 1e9))).powi(2))
        .sum::<f64>()
        / pts.len() as f64)
        .sqrt();
    (rms <= MAX_LOSS_FIT_RMS_DB).then_some((model, c))
}

/// Largest RMS misfit of a termination's level about the fitted loss law for the law to be used, dB
/// (common practice, no source).
pub const MAX_LOSS_FIT_RMS_DB: f64 = 3.0;

/// Search span of [`echo_lag`] on either side of the two echoes' peak difference, in resolution cells: the
/// peaks are each placed to a small fraction of a cell, so the lag lies well inside (no source given).
pub const LAG_SEARCH_CELLS: f64 = 1.0;

/// How much later (s, round trip; negative: earlier) the current sweep's far-end echo lies than the
/// baseline's, near the peaks' own difference `tc - tb`: the lag that best lines the two echoes up.
///
/// Both raw sweeps are gated with one gate, from [`GATE_HALF_WIDTH_CELLS`] before the earlier echo to as far
/// behind the later one (the gate a single echo is read through, widened by the move), on the inner band
/// ([`super::analysis::FIT_BAND_EDGE`] dropped at each edge, where the gate's edge correction leaves the
/// most error) read every few bins as a local reflection is ([`local_bins`]), and the lag is the maximum
/// of the magnitude of their cross-correlation `|sum_k Gc(f_k) conj(Gb(f_k)) e^{+j 2 pi f_k tau}|` within
/// [`LAG_SEARCH_CELLS`] of `tc - tb`, placed by a grid of a sixty-fourth of a cell and three rounds of a
/// three-point parabola.
///
/// Why this reading: what lies in front of the far end (a connector's or a switch's echo a cell or so in
/// front of the termination) is the same in both sweeps, and one gate weighs it alike in both, where a gate
/// centred on each sweep's own echo weighs it differently when the echo moved; the cross-correlation needs
/// no phase unwrapping and weighs each frequency by the two echoes' own strength (unwindowed), so the top of
/// the band, where the line's loss leaves little, counts least. On the real campaign's offset shorts (5 to
/// 30 mm of air line against a flush short, 48 pairs, docs/accuracy-real.md), this reading lies within
/// 0.8 mm of the air lines; the phase slope of the ratio of two own-gated echoes over the lower half of the
/// band read up to 1.3 mm long, and over the whole band up to 2.6 mm off. What it cannot undo: an echo
/// within a cell in front of the termination is unresolved from it in both sweeps and pulls the lag, by up
/// to about 0.65 mm for |rho| 0.2 over a 20 GHz band on generated sweeps (docs/method.md).
///
/// `None` when the sweeps' grids differ, the gate does not fit the record, or the best lag lies on the
/// search's edge (no clear maximum).
pub fn echo_lag(
    b: &SweepAnalysis,
    c: &SweepAnalysis,
    tb: f64,
    tc: f64,
    engine: &mut TraceEngine,
) -> Result<Option<f64>, CompareError> {
    if b.freqs != c.freqs || b.freqs.len() < 16 {
        return Ok(None);
    }
    let res = b.resolution_s.max(c.resolution_s);
    let period = b.alias_free_s.min(c.alias_free_s);
    let half = GATE_HALF_WIDTH_CELLS * res;
    let start = (tb.min(tc) - half).max(0.0);
    let stop = (tb.max(tc) + half).min(period);
    if stop <= start {
        return Ok(None);
    }
    // Both gated at the local reflections' bins (the inner band every few bins): the cross-correlation
    // summed over them is the whole band's, with copies of it a record's length over the stride apart, far
    // beyond the gate's span.
    let gb = b.echo_gate_local(start, stop, usize::MAX, engine)?;
    let gc = c.echo_gate_local(start, stop, usize::MAX, engine)?;
    let bins = local_bins(b.freqs.len());
    // Frequencies relative to the first kept one: a common phase factor leaves the magnitude alone and the
    // products stay small.
    // The grid is uniform (every sweep analysed is): the sum is evaluated by recurrence.
    let (f0, f1) = (b.freqs[bins.bin(0)], b.freqs[bins.bin(bins.count - 1)]);
    let df = (f1 - f0) / (bins.count - 1).max(1) as f64;
    let terms: Vec<Complex64> = gc.iter().zip(&gb).map(|(c, b)| c * b.conj()).collect();
    let corr = |tau: f64| -> f64 { direct_sum(&terms, 0.0, df, tau).norm() };
    let guess = tc - tb;
    let span = LAG_SEARCH_CELLS * res;
    let step = res / 64.0;
    let steps = (2.0 * span / step).round() as usize;
    // The scan's values in one chirp-z transform (the sums at guess - span + k step, k = 0..=steps). The
    // scan's start is moved into the terms, so the plan depends on the grid and the step alone and is
    // built once per engine.
    let t0 = guess - span;
    let moved: Vec<Complex64> = terms
        .iter()
        .zip(phasors(0.0, df, t0))
        .map(|(z, p)| z * p)
        .collect();
    let plan = engine
        .cache()
        .chirp_z(moved.len(), steps + 1, 0.0, df * step);
    let scan = engine.cache().apply(&plan, &moved);
    let (mut best_k, mut best_v) = (0usize, f64::NEG_INFINITY);
    for (k, v) in scan.iter().enumerate() {
        if v.norm() > best_v {
            (best_k, best_v) = (k, v.norm());
        }
    }
    let best_v = corr(t0 + best_k as f64 * step);
    if best_k == 0 || best_k == steps {
        return Ok(None);
    }
    let mut tau = guess - span + best_k as f64 * step;
    let mut mid = best_v;
    for h in [step / 2.0, step / 8.0, step / 32.0] {
        let (a, z) = (corr(tau - h), corr(tau + h));
        let den = a - 2.0 * mid + z;
        if den < 0.0 {
            tau += (0.5 * (a - z) / den).clamp(-1.0, 1.0) * h;
            mid = corr(tau);
        }
    }
    Ok(Some(tau))
}
