//! The comparison as a pipeline of small stages with typed results:
//!
//! 1. **analyse** ([`analyse_pair`]): each sweep's compensated band-pass trace, noise floor and events, and
//!    each sweep's far end ([`far_end`]); on a line of unknown construction the loss law
//!    an open or short far end shows is what compensates the trace;
//! 2. **align** ([`align_pair`]): landmarks seen in both sweeps paired by a bounded search of the delay
//!    scale, then the per-segment delay scale (inside the physical bounds of the state change, the model as
//!    a prior) and the level and loss change fitted to them;
//! 3. **difference** ([`difference`]): every echo paired across the aligned sweeps, its
//!    change judged against the calibration and the shadow of changed joints in front of it;
//! 4. **explain** ([`explain_change`]): a lumped model, a fault kind, a range of costs and a sentence for
//!    each change;
//! 5. **rank**: by severity, then the worse plausible cost.
//!
//! Decision rules (named constants, documented in docs/method.md): a change counts when the strength of an
//! echo moved by [`CHANGE_DB`] beyond what the calibration explains, or (one state) its phase turned by
//! [`PHASE_CHANGE_DEG`] or its complex response changed by [`VECTOR_CHANGE`] of itself, or the trace rose by
//! [`FLANK_RISE_DB`] where no echo of its own formed; only changes on the visible line, in front of an open
//! or short far end, clear of the alias edge and not likely multiple reflections are reported above info;
//! the far end's own open or short, already one in the baseline, is never a new open or short.

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, SegmentKind, Which};
use super::difference::{self, Change, FarEnds, Zone};
pub use super::difference::{CHANGE_DB, FLANK_RISE_DB, PHASE_CHANGE_DEG, VECTOR_CHANGE};
use super::explain::*;
use super::far_end;
use super::landmarks::Fitted;
use super::landmarks::*;
use super::place::{place, position_sigma, speed_at, where_text};
use super::report::*;
use super::severity::{mismatch_loss_db, Severity};
use super::states::Hypothesis;
use super::sweep::{analyse_through, band_centre, db, no_line_file, shows_gain, sized, PathGain};
pub use super::sweep::{AnalysisConfig, Sweep};
use super::CompareError;
use crate::transform::TraceEngine;
use crate::{Network, Warning};

/// Significance given to a termination swapped for the other kind (an open for a short): the whole of the
/// far end's reflection changed sign, as large a change as an echo can show.
pub const KIND_FLIP_SIGNIFICANCE: f64 = 10.0;

/// Least move of the far end reported as a change, as an air-line length, m (a millimetre: the sub-bin
/// phase-slope estimate resolves a fraction of it; common practice, no source).
pub const FAR_END_MOVE_M: f64 = 1e-3;

/// How much the thermal delay scale of the stretch between the last landmark and the far end may differ
/// from what the landmarks in front of it show, across a change of state: half the width of
/// `landmarks::WARM_TO_COLD_CHANGE` (cables of other makes and materials contract and densify differently;
/// common practice, no source). A far end that moved by less than this share of the stretch, plus
/// [`FAR_END_MOVE_M`], is not known to have moved.
pub const STRETCH_SCALE_SPREAD: f64 = 0.006;

/// Stage 1's result: both sweeps analysed on the chain they were compensated with, and their far ends.
pub struct PairAnalysis {
    /// The chain as used (sized to the record for a line of unknown construction; with the loss law of its
    /// far end when one was measured).
    pub chain: ChainView,
    pub b: SweepAnalysis,
    pub c: SweepAnalysis,
    pub far: FarEnds,
    /// True when a line of unknown construction was compensated with the loss its far end shows.
    pub loss_from_far_end: bool,
    /// The line file's joints that the baseline showed and the chain was anchored on.
    pub anchors: Vec<JointAnchor>,
}

/// Stage 1: analyse both sweeps and find their far ends. On a line of unknown construction whose far end is
/// an open or short in both sweeps, each sweep's trace is compensated with the loss law its own far end
/// shows (spread evenly along the line), so the skin effect's dispersion no longer smears the echoes and
/// the two sweeps' levels are comparable.
pub fn analyse_pair(
    baseline: &Sweep,
    current: &Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    engine: &mut TraceEngine,
) -> Result<PairAnalysis, CompareError> {
    let mut chain = sized(
        chain,
        &[&baseline.network.freqs_hz, &current.network.freqs_hz],
    );
    // An amplifier that the line file declares, or that shows in one sweep of the line, is in both sweeps'
    // paths.
    let mut amplified = chain.gain_in_path || shows_gain(baseline)? || shows_gain(current)?;
    let analyse = |sweep: &Sweep,
                   chain: &ChainView,
                   which: Which,
                   engine: &mut TraceEngine,
                   amplified: bool| {
        super::sweep::analyse_found(sweep, chain, cfg, which, engine, amplified)
    };
    let mut b = analyse(baseline, &chain, Which::Baseline, engine, amplified)?;
    // The line file's joints pinned where the baseline shows them, and the baseline analysed again on them.
    let anchors = super::anchor::find(&chain, &b, Which::Baseline);
    let joints: Vec<JointAnchor> = anchors
        .iter()
        .map(|a| JointAnchor {
            element: a.element.clone(),
            position_m: a.position_m,
            shift_m: (a.observed_delay_s - a.model_delay_s)
                * speed_at(&chain, a.position_m, Which::Baseline),
        })
        .collect();
    if !anchors.is_empty() {
        chain = super::anchor::anchored(&chain, &anchors, Which::Baseline);
        if super::anchor::worth_reanalysing(&anchors, b.resolution_s) {
            // The anchors move delays, not losses: the pieces' compensations are the first analysis'.
            b = analyse_through(
                baseline,
                &chain,
                cfg,
                Which::Baseline,
                engine,
                PathGain::found(amplified),
                Some(&b),
            )?;
        }
    }
    let mut c = analyse(current, &chain, Which::Current, engine, amplified)?;
    // A well-matched line behind an amplifier may return less power than it is sent; its joints then read
    // as no passive joint reflects, in both sweeps (a fault changes one joint, or a few).
    if !amplified
        && joints_lifted(&b, &chain, Which::Baseline)
        && joints_lifted(&c, &chain, Which::Current)
    {
        amplified = true;
        b = analyse(baseline, &chain, Which::Baseline, engine, amplified)?;
        c = analyse(current, &chain, Which::Current, engine, amplified)?;
    }
    // Behind an amplifier, each sweep's own scale rests on echoes that may move between the sweeps (joints
    // within a cell of each other, a pad's step): the current sweep is scaled as the baseline is, times the
    // gain's change that the joints both show agree on.
    if let Some(gain) = amplified.then(|| pair_gain(&b, &c, &chain)).flatten() {
        c = analyse_through(
            current,
            &chain,
            cfg,
            Which::Current,
            engine,
            PathGain::Known {
                gain,
                scale_known: b.scale_known,
            },
            None,
        )?;
    }
    let mut far = FarEnds {
        baseline: far_end::find(&b, &chain, Which::Baseline, engine)?,
        current: far_end::find(&c, &chain, Which::Current, engine)?,
    };
    let mut loss_from_far_end = false;
    if !chain.as_built {
        // Only when both sweeps end on the same open or short at the same place: a gap fault reads as an open
        // towards DC too, and must not lend its shape to the line's loss.
        let same_place = |tb: &far_end::Termination, tc: &far_end::Termination| {
            (tb.delay_s - tc.delay_s).abs()
                <= 0.015 * tb.delay_s + 2.0 * b.resolution_s.max(c.resolution_s)
                && tb.polarity * tc.polarity > 0.0
        };
        if let (Some(tb), Some(tc)) = (&far.baseline, &far.current) {
            if let (Some(lb), Some(lc), true) = (tb.loss, tc.loss, same_place(tb, tc)) {
                let per = |l: super::chain::LossModel, t: f64, which: Which| {
                    let x = chain.position_of(t, which, None).max(1e-6);
                    let k = chain.length_m() / x;
                    super::chain::LossModel {
                        a_sqrt: l.a_sqrt * k,
                        a_lin: l.a_lin * k,
                        a_flat: 0.0,
                    }
                };
                let lossy = [
                    per(lb, tb.delay_s, Which::Baseline),
                    per(lc, tc.delay_s, Which::Current),
                ];
                chain.segments[0].loss = lossy;
                b = analyse(baseline, &chain, Which::Baseline, engine, amplified)?;
                c = analyse(current, &chain, Which::Current, engine, amplified)?;
                far = FarEnds {
                    baseline: far_end::find(&b, &chain, Which::Baseline, engine)?,
                    current: far_end::find(&c, &chain, Which::Current, engine)?,
                };
                loss_from_far_end = true;
            }
        }
    }
    Ok(PairAnalysis {
        chain,
        b,
        c,
        far,
        loss_from_far_end,
        anchors: joints,
    })
}

/// Reflection that the best joint of a passive line does not reach (`joints_lifted`): 0.1, from which an
/// echo is a component's (`difference::COMPONENT_REFLECTION`). A connector pair of 48-53 ohm reflects under
/// 0.03, and 15 fF of shunt capacitance 0.05 at 20 GHz (omega C Z0 / 2; circuit theory).
pub const LIFTED_JOINT_REFLECTION: f64 = super::difference::COMPONENT_REFLECTION;

/// Whether sweep `a` (analysed as a passive line's on `chain` in state `which`) shows every joint of the
/// line file it sees (all but one where it sees more than two: [`super::sweep::joint_floor`]), at least
/// [`super::sweep::MIN_SCALE_JOINTS`] of them, at [`LIFTED_JOINT_REFLECTION`] or more. When both sweeps
/// of a pair do, an amplifier lies in the path, though neither returns more power than a passive line may
/// (a well-matched line). One bad joint, or a few, leave the best ones where they were.
fn joints_lifted(a: &SweepAnalysis, chain: &ChainView, which: Which) -> bool {
    super::sweep::joint_floor(a, chain, which).is_some_and(|m| m >= LIFTED_JOINT_REFLECTION)
}

/// Least signal-to-noise ratio (amplitude) of a joint's echo, in both sweeps, for its change to count
/// towards the gain's change between them ([`pair_gain`]): 20 dB (common practice, no source).
pub const PAIR_GAIN_JOINT_SNR: f64 = 10.0;

/// How far apart, dB, the two sweeps' own scales may leave the joints they both show (the median change)
/// before the current sweep's scale is set from the baseline's ([`pair_gain`]): half of what the
/// alignment takes in as a level change (`align::MAX_LANDMARK_AMPLITUDE_DB`), so that the fitted level is
/// left to what the landmarks and the loss calibration share.
pub const PAIR_SCALE_DISAGREEMENT_DB: f64 = 0.5 * super::align::MAX_LANDMARK_AMPLITUDE_DB;

/// How close to the joints' median change, dB, most of them must lie for it to be the gain's
/// ([`pair_gain`]): as far as a component's own echo may move on cooling
/// ([`super::difference::COMPONENT_CHANGE_DB`]).
pub const PAIR_GAIN_AGREEMENT_DB: f64 = super::difference::COMPONENT_CHANGE_DB;

/// The round-trip gain (linear) in the current sweep's path, set by the baseline's, where the two sweeps'
/// own scales disagree: the baseline's gain times the median change, as swept, of the line file's joints
/// that both sweeps show clear of the ends and the compensation's cap, [`PAIR_GAIN_JOINT_SNR`] over the
/// noise in each ([`super::sweep::joint_level_pairs`]), at least three of them
/// ([`super::align::MIN_LEVEL_LANDMARKS`], as for a level the alignment fits: a majority can outvote one).
/// A healthy joint keeps its reflection through a cooldown (the compensation takes the cables' loss
/// change out), so what they share is the gain's change, and a changed joint or two are outvoted. `None`
/// where a sweep was read without gain, too few joints show, no more than half of them lie within
/// [`PAIR_GAIN_AGREEMENT_DB`] of their median change, or the sweeps' own scales leave the joints within
/// [`PAIR_SCALE_DISAGREEMENT_DB`] of each other (the alignment's level fit takes that).
fn pair_gain(b: &SweepAnalysis, c: &SweepAnalysis, chain: &ChainView) -> Option<f64> {
    // Both sweeps read through gain; the current's own gain is the one corrected.
    b.path_gain_db?;
    let gc = c.path_gain_db?;
    let mut change: Vec<f64> = super::sweep::joint_level_pairs(b, c, chain)
        .into_iter()
        .filter(|p| p.3 >= PAIR_GAIN_JOINT_SNR)
        .map(|(_, mb, mc, _)| db(mc / mb.max(1e-300)))
        .collect();
    if change.len() < super::align::MIN_LEVEL_LANDMARKS {
        return None;
    }
    let scaled = crate::numeric::median(&mut change);
    // Most of the joints must share the change: under a map that puts the current sweep's joints where
    // they are not (a wrong pair of states), each reads whatever lies there and they scatter.
    let agree = change
        .iter()
        .filter(|c| (*c - scaled).abs() <= PAIR_GAIN_AGREEMENT_DB)
        .count();
    if 2 * agree <= change.len() {
        return None;
    }
    // As swept, each joint changed by its scaled change plus the scales' difference: the baseline's gain
    // plus the joints' median change as swept is the current sweep's own gain plus their scaled median.
    (scaled.abs() > PAIR_SCALE_DISAGREEMENT_DB).then(|| 10f64.powf((gc + scaled) / 20.0))
}

/// Bounds of each segment's delay scale under hypothesis `h` (across a change of state,
/// [`ALIGNMENT_WARM_TO_COLD_CHANGE`]).
pub fn scale_bounds(h: Hypothesis) -> (f64, f64) {
    let (lo, hi) = ALIGNMENT_WARM_TO_COLD_CHANGE;
    match h {
        Hypothesis::WarmCold => (1.0 + lo, 1.0 + hi),
        Hypothesis::ColdWarm => (1.0 / (1.0 + hi), 1.0 / (1.0 + lo)),
        // One state: each segment may drift a little more than the line as a whole.
        Hypothesis::WarmWarm | Hypothesis::ColdCold => {
            (1.0 - 5.0 * SAME_STATE_DRIFT, 1.0 + 5.0 * SAME_STATE_DRIFT)
        }
    }
}

/// The landmarks among `candidates` (pairs of strong echoes): none at a termination that changed kind, none
/// behind an open or short far end or a part reflection cannot see through, none at or behind an echo that
/// changed more than a level or loss change explains, none where the line's far part may fold back from
/// beyond the record; of the rest, the longest chain whose stretches change their delays within `bounds`.
fn keep_landmarks(pa: &PairAnalysis, candidates: &Pairs, bounds: (f64, f64)) -> Pairs {
    let (b, c) = (&pa.b, &pa.c);
    let res = b.resolution_s.max(c.resolution_s);
    // A termination swapped for another kind moves its echo by itself: no landmark there.
    let swapped = match (&pa.far.baseline, &pa.far.current) {
        (Some(tb), Some(tc)) => {
            (tb.total != tc.total || tb.polarity * tc.polarity < 0.0).then_some(tb.event)
        }
        _ => None,
    };
    // Nothing behind an open or short far end is a landmark: only multiple reflections live there.
    let wall = [&pa.far.baseline, &pa.far.current]
        .iter()
        .filter_map(|t| {
            t.as_ref()
                .filter(|t| t.total)
                .map(|t| t.delay_s + 1.5 * res)
        })
        .fold(f64::INFINITY, f64::min);
    // Nor anything behind a part reflection cannot see through.
    let device = if pa.chain.as_built {
        pa.chain
            .delay_to(pa.chain.visible_end_m(), Which::Baseline, None)
            * 1.02
            + res
    } else {
        f64::INFINITY
    };
    // Nor an echo where the line's far part may be folded back from beyond the record: it is not where it
    // seems, and its change says nothing of what lies behind it.
    let folded = super::far_end::pair_folded_until(&pa.chain, &pa.b, &pa.c);
    // Nor an echo that changed more than a level or loss change can explain (its own joint changed),
    // nor anything behind it: a changed joint's transmission phase delays every echo behind it.
    let changed_at = candidates
        .iter()
        .filter(|&&(i, _)| b.events[i].delay_s >= folded)
        .filter(|&&(i, j)| {
            (db(c.events[j].magnitude) - db(b.events[i].magnitude)).abs()
                > crate::compare::align::MAX_LANDMARK_AMPLITUDE_DB
        })
        .map(|&(i, _)| b.events[i].delay_s)
        .fold(f64::INFINITY, f64::min);
    let kept: Pairs = candidates
        .iter()
        .copied()
        .filter(|p| {
            let t = b.events[p.0].delay_s;
            Some(p.0) != swapped && t <= wall && t <= device && t < changed_at && t >= folded
        })
        .collect();
    // Per-landmark delay uncertainty: a tenth of a cell covers a peak at 30 dB SNR and more.
    consistent(&kept, b, c, bounds, 0.1 * res)
}

/// Stage 2: pair landmarks by a bounded search of the delay scale and fit the alignment and the level
/// calibration to them. Warnings go to `warnings`.
pub fn align_pair(
    pa: &PairAnalysis,
    h: Hypothesis,
    f_ref: f64,
    warnings: &mut Vec<Warning>,
) -> Fitted {
    let (b, c) = (&pa.b, &pa.c);
    let res = b.resolution_s.max(c.resolution_s);
    let bounds = scale_bounds(h);
    // Echoes where the line's far part may fold back do not vote for the scale: they move with the whole
    // line's change, not with the stretch they seem to lie in.
    let folded = super::far_end::pair_folded_until(&pa.chain, &pa.b, &pa.c);
    let mut strong = strong_events(b, LANDMARK_SEPARATION_CELLS * res, MAX_LANDMARKS);
    strong.retain(|&i| b.events[i].delay_s >= folded);
    // The search runs relative to the model's own prediction of the change where the chain has one.
    let model_scale = {
        let t0 = pa
            .chain
            .delay_to(pa.chain.visible_end_m(), Which::Baseline, None);
        let t1 = pa
            .chain
            .delay_to(pa.chain.visible_end_m(), Which::Current, None);
        if t0 > 0.0 && pa.chain.as_built {
            t1 / t0
        } else {
            1.0
        }
    };
    let widen = 2e-3;
    let found = scale_search(b, c, &strong, (bounds.0 - widen, bounds.1 + widen));
    let mut chain = pa.chain.clone();
    let mut pairs = match &found {
        Some(m) => {
            if !chain.as_built {
                // The uniform line's prior is the scale the search found.
                let s = m.scale.clamp(bounds.0, bounds.1);
                chain.segments[0].delay_s[1] = chain.segments[0].delay_s[0] * s;
            }
            if m.scale < bounds.0 - 3.0 * m.sigma || m.scale > bounds.1 + 3.0 * m.sigma {
                warnings.push(Warning::new(
                    "states-contradicted",
                    format!(
                        "the echoes' delays changed by {:+.3} % (model {:+.3} %), outside what {} allows \
                         ({:+.2} % to {:+.2} %)",
                        100.0 * (m.scale - 1.0),
                        100.0 * (model_scale - 1.0),
                        h.name(),
                        100.0 * (bounds.0 - 1.0),
                        100.0 * (bounds.1 - 1.0)
                    ),
                    "check the states given (--baseline-state, --current-state), or leave them out to have them inferred",
                ));
            }
            keep_landmarks(pa, &m.pairs, (bounds.0 - widen, bounds.1 + widen))
        }
        None => Vec::new(),
    };
    if pairs.is_empty() {
        warnings.push(Warning::new(
            "no-landmarks",
            "no landmark was seen in both sweeps; the model's predicted change is used unrefined",
            "check that both sweeps are of the same line and cover the same band",
        ));
    }
    let device_end = pa
        .far
        .baseline
        .as_ref()
        .filter(|t| !t.total)
        .map(|t| t.event);
    let mut fit = fit_alignment(&chain, b, c, &pairs, f_ref, bounds, device_end);
    // The search paired echoes under one scale of the whole line; a line whose warm part keeps its length
    // while its cold part shrinks pairs fewer that way. Pair every strong echo again on the fitted map.
    if chain.as_built && !pairs.is_empty() {
        let tol = res / 3.0;
        let on_map = |t: f64| {
            fit.chain.delay_to(
                fit.chain.position_of(t, Which::Baseline, None),
                Which::Current,
                None,
            )
        };
        let again = match_events(b, c, on_map, |_| tol, |i, _| strong.contains(&i));
        let again = keep_landmarks(pa, &again, (bounds.0 - widen, bounds.1 + widen));
        if again.len() > pairs.len() {
            pairs = again;
            fit = fit_alignment(&chain, b, c, &pairs, f_ref, bounds, device_end);
        }
    }
    fit.far_end_prediction = far_end_prediction(pa, &chain, &pairs, f_ref, bounds);
    fit
}

/// What the landmarks in front of an open or short far end (the same in both sweeps) predict for its echo,
/// fitted without the far end's own amplitude, on a line file's chain. `None` without such a far end, or
/// without a landmark in front of it whose amplitude pins the level (an amplifier's gain change moves every
/// echo alike, and with no echo in front of the far end it cannot be told from a change there).
fn far_end_prediction(
    pa: &PairAnalysis,
    chain: &ChainView,
    pairs: &Pairs,
    f_ref: f64,
    bounds: (f64, f64),
) -> Option<FarEndPrediction> {
    let (b, c) = (&pa.b, &pa.c);
    let tb = pa.far.baseline.as_ref()?;
    if !chain.as_built || !pa.far.same_total() {
        return None;
    }
    let res = b.resolution_s.max(c.resolution_s);
    // Amplitude landmarks clear of the far end's main lobe.
    let front: Vec<f64> = pairs
        .iter()
        .filter(|&&(i, j)| {
            i != tb.event
                && b.events[i].delay_s < tb.delay_s - LANDMARK_SEPARATION_CELLS * res
                && (db(c.events[j].magnitude) - db(b.events[i].magnitude)).abs()
                    <= crate::compare::align::MAX_LANDMARK_AMPLITUDE_DB
        })
        .map(|&(i, _)| chain.position_of(b.events[i].delay_s, Which::Baseline, None))
        .collect();
    let last = front.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !last.is_finite() {
        return None;
    }
    let free = fit_alignment(chain, b, c, pairs, f_ref, bounds, Some(tb.event));
    let x = free.chain.position_of(tb.delay_s, Which::Baseline, None);
    Some(FarEndPrediction {
        x,
        expected_db: free.expected_change_db(x),
        sigma_db: loss_sigma_between(&free.chain, last, x, f_ref),
        loss_db: free.chain.loss_to_db(x, f_ref, Which::Current),
    })
}

/// Stage 4: explain one change as a finding (with the curves of its evidence plot where `evidence`).
#[allow(clippy::too_many_arguments)]
pub fn explain_change(
    ch: &Change,
    pa: &PairAnalysis,
    fit: &Fitted,
    same_state: bool,
    f_ref: f64,
    extra_significance: f64,
    evidence: bool,
    engine: &mut TraceEngine,
) -> Result<Finding, CompareError> {
    // An echo in the line's steady part is judged, and costed, as in one state.
    let same_state = ch.one_state(same_state);
    let (chain, c) = (&pa.chain, &pa.c);
    let res_s = pa.b.resolution_s.max(c.resolution_s);
    let speed = speed_at(&fit.chain, ch.x, Which::Current);
    let res_m = res_s * speed;
    let (fl, gl) = c.local_reflection(ch.d_c, ch.x, chain, Which::Current, engine)?;
    let fits = c.fit_local(&fl, &gl, chain.impedance_ohm);
    // The model's residual delay moves the event to where the model puts it.
    let delta = if fits[0].fit_error <= MAX_FIT_ERROR {
        fits[0].delta_s
    } else {
        0.0
    };
    let x = fit.chain.position_of(ch.d_c + delta, Which::Current, None);
    let sigma_x = position_sigma(
        res_m,
        ch.snr,
        delta * speed,
        fit.report.residual_m,
        fit.report
            .landmarks_m
            .iter()
            .chain(std::iter::once(&0.0))
            .map(|l| (x - l).abs())
            .fold(f64::INFINITY, f64::min),
        chain.as_built,
    );
    let (mut kind, model, best) = classify(
        &fits,
        chain,
        x,
        (2.0 * sigma_x).max(res_m),
        (fl[0], fl[fl.len() - 1]),
    );
    let (drop_c, ml) = costs(best, &fl, &gl, chain.impedance_ohm, f_ref);
    let evidence = if evidence {
        Evidence::new(&fl, &gl, &model, chain.impedance_ohm)
    } else {
        Evidence::default()
    };
    // With no model, the echo's strength as the trace shows it: the same measure the baseline's level is.
    let drop_c = if best.is_none() {
        mismatch_loss_db(ch.mag_c.min(0.999))
    } else {
        drop_c
    };
    let (lo_c, hi_c) = cost_range(kind, best, drop_c, chain.impedance_ohm, f_ref);
    let change_db = ch.excess_db;
    let rising = ch.raw_change_db > ch.expected_db.1;
    // What the baseline already lost at this place, by the same reading of its reflection.
    // Read the same way: a contact's cost against the contact the baseline's reflection would have been,
    // a step's against a step.
    let gb = ch.base_level.min(0.999);
    let (drop_b_lo, drop_b_hi) = if matches!(kind, FaultKind::Contact | FaultKind::ImpedanceStep) {
        let step = mismatch_loss_db(gb);
        let contact = -20.0 * (1.0 - gb).log10();
        (step.min(contact), step.max(contact))
    } else {
        let m = mismatch_loss_db(gb);
        (m, m)
    };
    let net = |d: f64, b: f64| if rising { (d - b).max(0.0) } else { 0.0 };
    let (mut lo, mut hi) = (net(lo_c, drop_b_lo), net(hi_c, drop_b_hi));
    if same_state {
        // One state: the reflection's complex change is comparable, and what appeared is the difference.
        let added = match ch.base {
            Some((_, gb)) => (ch.gamma_c - gb).norm(),
            None => (ch.mag_c - ch.base_level).max(0.0),
        };
        let floor = mismatch_loss_db(added.min(0.999));
        lo = lo.max(floor);
        hi = hi.max(floor);
    }
    let total_kind = matches!(kind, FaultKind::Open | FaultKind::Short);
    let mut severity = Severity::from_drop_db(hi);
    if total_kind && !ch.was_total && (rising || ch.complex_significance(same_state) >= 1.0) {
        severity = Severity::Critical;
    }
    if ch.was_total {
        // The far end was an open or short already: the line was cut there before; no power is newly lost.
        severity = Severity::Info;
        lo = 0.0;
        hi = 0.0;
    }
    if let Some(d) = ch.far_level_db {
        // The far end's own joint changed: its echo moved beyond every loss change the model allows. One
        // pass to the termination lost half of what the round trip lost beyond the line: at least the part
        // beyond the interval, at most the whole change beyond the prediction.
        if d < 0.0 {
            kind = FaultKind::Contact;
            lo = 0.5 * ch.excess_db.abs();
            hi = (0.5 * d.abs()).max(lo);
            severity = Severity::from_drop_db(hi);
        } else {
            kind = FaultKind::Unknown;
        }
    }
    if let Some(fall) = ch.blocks_far_end {
        // What the far end lost behind it went through this joint twice: one pass lost at least half of
        // that fall (a lower bound: the far end may have fallen into the noise).
        lo = lo.max(0.5 * fall);
        hi = hi.max(lo);
        severity = severity.max(Severity::from_drop_db(hi));
    }
    if !rising && ch.base.is_none() {
        kind = FaultKind::Unknown;
    }
    if !ch.claimable() {
        severity = Severity::Info;
    }
    let p = place(chain, x);
    let what = if let Some(d) = ch.far_level_db {
        format!(
            "the far end's echo {} by {:.1} dB more than the line's loss change explains: the joint at the \
             termination changed (a series resistance or a partly open pin)",
            if d < 0.0 { "fell" } else { "rose" },
            ch.excess_db.abs()
        )
    } else if let Some(fall) = ch.blocks_far_end {
        format!(
            "{}; the far end's echo vanished behind it (fell {fall:.1} dB beyond the line's loss change): \
             this joint now reflects what used to reach the far end",
            describe_model(kind, &model)
        )
    } else if !rising {
        format!(
            "reflection fell by {:.1} dB ({})",
            -change_db,
            describe_model(kind, &model)
        )
    } else if ch.was_total {
        format!(
            "the far end's termination changed ({})",
            describe_model(kind, &model)
        )
    } else {
        describe_model(kind, &model)
    };
    let cost = if (hi - lo).abs() > 0.01 {
        format!("costs {lo:.2} to {hi:.2} dB")
    } else {
        format!("costs {hi:.2} dB")
    };
    let note = match ch.zone {
        _ if ch.ghost => " (may be a multiple reflection of stronger events)",
        Zone::BeyondFarEnd => " (behind the far end's open or short: a multiple reflection)",
        Zone::AliasEdge => " (at the end of the record, where echoes from beyond it fold back)",
        Zone::Folded => {
            " (where the line's far part, beyond the sweep's alias-free range, folds back onto its start)"
        }
        Zone::BehindDevice => " (behind a part reflection cannot see through)",
        Zone::Line => "",
    };
    let explanation = format!(
        "{}: {}, {cost} at {:.2} GHz{note}",
        where_text(chain, &p),
        what,
        f_ref / 1e9,
    );
    Ok(Finding {
        rank: 0,
        place: p,
        kind,
        severity,
        reflection_db: db(ch.mag_c),
        change_db,
        measured_change_db: ch.raw_change_db,
        expected_change_db: [ch.expected_db.0, ch.expected_db.1],
        phase_change_deg: ch.phase_deg,
        mismatch_loss_db: ml,
        power_drop_db: hi,
        power_drop_range_db: [lo, hi],
        uncertainty_m: 2.0 * sigma_x,
        confidence: confidence(ch.snr, model.fit_error),
        model,
        likely_ghost: ch.ghost,
        changed_reflection: if ch.phases_compare(same_state) {
            ch.vector_change()
                * ch.base_level
                * 10f64.powf(0.5 * (ch.expected_db.0 + ch.expected_db.1) / 20.0)
        } else {
            ch.mag_c * (1.0 - 10f64.powf(-change_db / 20.0)).abs()
        },
        significance: (ch.excess_db.abs() / ch.threshold_db(same_state))
            .max(ch.complex_significance(same_state))
            .max(extra_significance),
        zone: if ch.same_termination || ch.was_total {
            "far-end"
        } else if ch.ghost && ch.zone == Zone::Line {
            "line"
        } else {
            match ch.zone {
                Zone::Line => "line",
                Zone::BeyondFarEnd => "beyond-far-end",
                Zone::AliasEdge => "alias-edge",
                Zone::Folded => "folded",
                Zone::BehindDevice => "behind-device",
            }
        },
        explanation,
        evidence,
    })
}

/// A discontinuity that appeared in front of the far end delays it: its transmission turns by up to
/// asin |G| each way (a lossless step or reactance of reflection G; circuit theory, as in `lumped`). When the
/// changes in front of the far end can turn it by the `turn_rad` (at the frequency power drops are quoted
/// at) its move shows, the move is theirs: the far end keeps its finding but no longer ranks by it.
fn explain_far_end_move(findings: &mut [Finding], turn_rad: f64) {
    let Some(end_at) = findings
        .iter()
        .find(|f| f.zone == "far-end")
        .map(|f| f.place.distance_m)
    else {
        return;
    };
    let in_front: f64 = findings
        .iter()
        .filter(|f| f.zone == "line" && !f.likely_ghost && f.significance >= 1.0)
        .filter(|f| f.place.distance_m < end_at - f.uncertainty_m)
        .map(|f| 2.0 * f.changed_reflection.min(1.0).asin())
        .sum();
    if in_front >= turn_rad {
        for f in findings.iter_mut().filter(|f| f.zone == "far-end") {
            f.changed_reflection = 0.0;
            f.explanation
                .push_str(" (the changes in front of it delay it by as much)");
        }
    }
}

/// The reflection that changed when an echo of strength `m` moved by `dt` round trip, at `f_ref`:
/// m |e^{j 2 pi f_ref dt} - 1|; a termination swapped for the other kind (`kind_flip`) changed by 2 m.
fn moved_reflection(m: f64, dt: f64, kind_flip: bool, f_ref: f64) -> f64 {
    if kind_flip {
        return 2.0 * m;
    }
    m * (num_complex::Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI * f_ref * dt) - 1.0)
        .norm()
}

/// The far end of both sweeps and how far it moved beyond what the line in front of it explains.
/// `same_state`: both sweeps in one state, so the line in front did not change.
fn far_end_report(
    pa: &PairAnalysis,
    fit: &Fitted,
    same_state: bool,
    engine: &mut TraceEngine,
) -> Result<Option<FarEndReport>, CompareError> {
    let (Some(tb), Some(tc)) = (&pa.far.baseline, &pa.far.current) else {
        return Ok(None);
    };
    let kind = |t: &far_end::Termination| {
        if !t.total {
            "other"
        } else if t.polarity > 0.0 {
            "open"
        } else {
            "short"
        }
    };
    let xb = fit.chain.position_of(tb.delay_s, Which::Baseline, None);
    let xc = fit.chain.position_of(tc.delay_s, Which::Current, None);
    // One kind of termination (the same polarity): its move is the far end's.
    // The baseline's round-trip delay from the last landmark in front of the far end to it (across a change
    // of state: its own thermal change is inferred, not measured).
    let mut stretch = 0.0;
    let delay_change_s = if tb.polarity * tc.polarity > 0.0
        && tb.polarity.abs() >= 0.5
        && tc.polarity.abs() >= 0.5
    {
        // How much later the current echo lies than the baseline's: the lag that lines the two echoes up.
        let lag = far_end::echo_lag(&pa.b, &pa.c, tb.delay_s, tc.delay_s, engine)?
            .unwrap_or(tc.delay_s - tb.delay_s);
        // Less the line's own change in front of it. In one state the line did not change (within
        // `SAME_STATE_DRIFT`), and an anchor at a landmark would only add that landmark's own peak error.
        // Across a change of state: the change at the last landmark well in front of the far end (measured),
        // and behind it the stretch to the far end changing as the line in front of it did (the least-squares
        // scale of the landmarks in front, through the last one). The far end's own pair never enters: a
        // termination that moved by less than the pairing tolerance is a landmark of the alignment, and the
        // fitted scale of the last stretch would swallow its move.
        let line_change = if same_state {
            0.0
        } else {
            let res = pa.b.resolution_s.max(pa.c.resolution_s);
            let front: Vec<(f64, f64)> = fit
                .landmark_delays_s
                .iter()
                .copied()
                .filter(|(tb_l, _)| *tb_l < tb.delay_s - 2.0 * res)
                .collect();
            let last = front.iter().copied().max_by(|p, q| p.0.total_cmp(&q.0));
            stretch = tb.delay_s - last.map_or(0.0, |p| p.0);
            match last {
                Some((tb_l, tc_l)) => {
                    let (num, den) = front.iter().filter(|p| p.0 < tb_l).fold(
                        (0.0, 0.0),
                        |(n, d), &(b_l, c_l)| {
                            (n + (b_l - tb_l) * (c_l - tc_l), d + (b_l - tb_l).powi(2))
                        },
                    );
                    if den > 0.0 {
                        (tc_l - tb_l) + (num / den - 1.0) * (tb.delay_s - tb_l)
                    } else {
                        // One landmark in front: the alignment's own map of the stretch behind it.
                        let xl = fit.chain.position_of(tb_l, Which::Baseline, None);
                        (tc_l - fit.chain.delay_to(xl, Which::Current, None))
                            + fit.chain.delay_to(xb, Which::Current, None)
                            - tb.delay_s
                    }
                }
                // No landmark in front: the alignment's own map of the line.
                None => fit.chain.delay_to(xb, Which::Current, None) - tb.delay_s,
            }
        };
        Some(lag - line_change)
    } else {
        None
    };
    Ok(Some(FarEndReport {
        baseline_m: xb,
        current_m: xc,
        baseline_kind: kind(tb),
        current_kind: kind(tc),
        delay_change_s,
        move_tolerance_s: 2.0 * FAR_END_MOVE_M / crate::transform::C0_M_PER_S
            + STRETCH_SCALE_SPREAD * stretch,
    }))
}

/// Stage 5: rank findings by severity, then the worse plausible cost, then the size of the change.
pub fn rank(findings: &mut [Finding]) {
    // What lies on the visible line (or is the far end itself) ranks before what lies beyond it.
    let on_line = |f: &Finding| matches!(f.zone, "line" | "far-end") && !f.likely_ghost;
    // Among changes that cost nothing (info), the cost is noise: the size of the change decides.
    let cost = |f: &Finding| {
        if f.severity > Severity::Info {
            f.power_drop_db
        } else {
            0.0
        }
    };
    // Among those, the reflection that appeared or vanished beyond the calibration, in amplitude: a large
    // change of a faint echo matters less than a small change of a strong one.
    let amplitude = |f: &Finding| {
        if f.severity > Severity::Info {
            0.0
        } else {
            f.changed_reflection
        }
    };
    findings.sort_by(|a, b| {
        on_line(b)
            .cmp(&on_line(a))
            .then(b.severity.cmp(&a.severity))
            .then(cost(b).total_cmp(&cost(a)))
            .then(amplitude(b).total_cmp(&amplitude(a)))
            .then(b.significance.total_cmp(&a.significance))
            .then(b.confidence.total_cmp(&a.confidence))
    });
    for (k, f) in findings.iter_mut().enumerate() {
        f.rank = k + 1;
    }
}

/// How much of a comparison to work out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Detail {
    /// Everything: every change explained, the plot's traces.
    Full,
    /// Every finding as [`Detail::Full`] gives it, without what only plots draw: no traces and no
    /// evidence curves (each finding's `evidence` left empty). What a fleet survey keeps of a line.
    Findings,
    /// Only the findings above info, in full, and what they depend on: changes that can only be noted
    /// (info) are not explained and no plot is made. What another open hypothesis is run for
    /// (`job::compare_networks` keeps above info only what every hypothesis finds).
    AboveInfo,
}

/// Compare `baseline` with `current` on `chain` (whose per-segment delays and losses are for the two sweeps'
/// states, in that order) under hypothesis `h` (the states the chain was built for; one of those the data
/// leave open). `states` is what the report says of the states: the one decision for every hypothesis run.
pub fn compare(
    baseline: Sweep,
    current: Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    h: Hypothesis,
    states: StateReport,
) -> Result<CompareReport, CompareError> {
    compare_in(
        baseline,
        current,
        chain,
        cfg,
        h,
        states,
        Detail::Full,
        &mut TraceEngine::new(),
    )
}

/// [`compare`], working out as much as `detail` asks (with [`Detail::AboveInfo`] its findings above info are
/// those of [`compare`], field for field but their ranks, and it holds no plot), on `engine`'s transform
/// plans and window coefficients: one engine kept across the comparisons of many pairs on one grid (a fleet
/// survey's worker) builds each plan once. The result does not depend on what the engine already holds.
#[allow(clippy::too_many_arguments)]
pub fn compare_in(
    baseline: Sweep,
    current: Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    h: Hypothesis,
    states: StateReport,
    detail: Detail,
    engine: &mut TraceEngine,
) -> Result<CompareReport, CompareError> {
    let fc = &current.network.freqs_hz;
    let f_ref = cfg.reference_hz.unwrap_or_else(|| band_centre(fc));

    let pa = analyse_pair(&baseline, &current, chain, cfg, engine)?;
    let mut warnings: Vec<Warning> =
        pa.b.warnings
            .iter()
            .chain(&pa.c.warnings)
            .cloned()
            .collect();
    warnings.extend(no_line_file(&pa.chain));
    if pa.loss_from_far_end {
        warnings.push(Warning::new(
            "loss-from-far-end",
            "no line file: each sweep is compensated with the loss law its own open or short far end shows, \
             spread evenly along the line",
            "pass --line LINE for the line's own loss and dispersion",
        ));
    }

    let mut fit = align_pair(&pa, h, f_ref, &mut warnings);
    fit.report.anchors = pa.anchors.clone();
    let changes = difference::changes(
        &difference::Inputs {
            chain: &pa.chain,
            b: &pa.b,
            c: &pa.c,
            fit: &fit,
            far: &pa.far,
            anchors_m: &pa.anchors.iter().map(|a| a.position_m).collect::<Vec<_>>(),
            same_state: h.same_state(),
            states_given: !states.inferred,
        },
        engine,
    );
    let same_state = h.same_state();
    let far_end = far_end_report(&pa, &fit, same_state, engine)?;
    let judged = judge_changes(
        &changes,
        &pa,
        &fit,
        far_end.as_ref(),
        same_state,
        f_ref,
        detail,
        engine,
    )?;
    let mut findings = judged.findings;
    if judged.behind > 0 {
        warnings.push(Warning::new(
            "events-behind-device",
            format!(
                "{} event(s) lie behind a part reflection cannot see through; none is claimed",
                judged.behind
            ),
            "sweep from the other end of the line, or through the device's own port",
        ));
    }
    let res_s = pa.b.resolution_s.max(pa.c.resolution_s);
    warnings.extend(claim_up_to_wall(
        &mut findings,
        &fit.chain,
        res_s,
        judged.blocker_at,
    ));
    if !(pa.b.scale_known && pa.c.scale_known) {
        warnings.push(nothing_above_info(&mut findings));
    }
    if !judged.kind_flip {
        if let Some(dt) = far_end.as_ref().and_then(|f| f.delay_change_s) {
            explain_far_end_move(&mut findings, 2.0 * std::f64::consts::PI * f_ref * dt.abs());
        }
    }
    rank(&mut findings);
    let power = power_check(
        baseline.network,
        current.network,
        cfg.observed_drop_db,
        &findings,
    );
    let resolution_m = res_s * speed_at(&fit.chain, 0.0, Which::Current);
    let (not_visible, capped) = not_visible(&pa.chain, &pa.c, Which::Current, band_centre(fc));
    warnings.extend(capped_warning(&capped));
    let report = CompareReport {
        line: pa.chain.name.clone(),
        baseline: baseline.name.to_string(),
        current: current.name.to_string(),
        states,
        resolution_m,
        reference_hz: f_ref,
        alignment: {
            // The sweeps were read scaled down by the gain in their paths: the level change as swept.
            let mut a = fit.report.clone();
            a.level_change_db +=
                pa.c.path_gain_db.unwrap_or(0.0) - pa.b.path_gain_db.unwrap_or(0.0);
            a
        },
        findings,
        not_visible,
        power,
        noise_rms: pa.c.sigma,
        visibility: Vec::new(),
        far_end,
        connector_lengths: None,
        warnings,
        plot: PlotData::default(),
    };
    Ok(match detail {
        Detail::Full => report.with_plot(
            &fit.chain,
            &[
                (&pa.b, Which::Baseline, baseline.name),
                (&pa.c, Which::Current, current.name),
            ],
        ),
        Detail::Findings | Detail::AboveInfo => report,
    })
}

/// What the judging stage made of the changes: the findings (unranked), how many changes lay behind a
/// device, where the echo that now blocks the line was found, and whether the termination swapped kind.
struct Judged {
    findings: Vec<Finding>,
    behind: usize,
    blocker_at: f64,
    kind_flip: bool,
}

/// Stage: judge and explain each change. A change counts when it passes its own rule
/// ([`Change::changed`]) or is the far end's move or swap; one that can only be noted is explained at info.
/// With [`Detail::AboveInfo`], what can only be info is not explained at all.
#[allow(clippy::too_many_arguments)]
fn judge_changes(
    changes: &[Change],
    pa: &PairAnalysis,
    fit: &Fitted,
    far_end: Option<&FarEndReport>,
    same_state: bool,
    f_ref: f64,
    detail: Detail,
    engine: &mut TraceEngine,
) -> Result<Judged, CompareError> {
    // The far end moved (a termination swapped for a longer one, a pin pulled back at the last joint).
    let move_ratio = far_end.map_or(0.0, |f| {
        f.delay_change_s
            .map_or(0.0, |d| d.abs() / f.move_tolerance_s.max(1e-18))
    });
    let moved = move_ratio >= 1.0;
    // The termination swapped for the other kind (an open for a short).
    let kind_flip = match (&pa.far.baseline, &pa.far.current) {
        (Some(tb), Some(tc)) => tb.total && tc.total && tb.polarity * tc.polarity < 0.0,
        _ => false,
    };
    let mut findings = Vec::new();
    let mut behind = 0usize;
    // Where the echo that now blocks the line (the far end vanished behind it) was found.
    let mut blocker_at = f64::INFINITY;
    for ch in changes {
        let at_end = ch.same_termination || ch.was_total;
        let end_change = at_end && (moved || kind_flip);
        let noted_only = !(ch.changed(same_state) || end_change) && ch.noted(same_state);
        if !(ch.changed(same_state) || end_change || noted_only) {
            continue;
        }
        if ch.zone == Zone::BehindDevice {
            behind += 1;
            continue;
        }
        // Read as info whatever its explanation says (below).
        if detail == Detail::AboveInfo
            && (noted_only || ch.within_device_drift(same_state) || ch.within_pad_drift(same_state))
        {
            continue;
        }
        let extra = if at_end {
            move_ratio.max(if kind_flip {
                KIND_FLIP_SIGNIFICANCE
            } else {
                0.0
            })
        } else {
            0.0
        };
        let mut f = explain_change(
            ch,
            pa,
            fit,
            same_state,
            f_ref,
            extra,
            detail != Detail::Findings,
            engine,
        )?;
        if noted_only {
            // Too small to count: reported, never above info.
            f.severity = Severity::Info;
            f.explanation.push_str(if ch.one_state(same_state) {
                " (a small change, below what counts as one; follow it in the history)"
            } else {
                " (within what a component's own cooling makes of its echo; a fault at the joint in front of \
                 it would look alike: compare two sweeps taken in one state, or follow it in the history)"
            });
        } else if ch.within_device_drift(same_state) {
            f.severity = Severity::Info;
            f.explanation.push_str(
                " (the device's own echo, within what its cooling makes of it: a load's resistance and the \
                 cable's impedance move)",
            );
        } else if ch.within_pad_drift(same_state) {
            f.severity = Severity::Info;
            f.explanation.push_str(
                " (at the attenuator's resistive element: read in front of its loss, within what its cooling \
                 makes of its match, as its resistors' values and the impedance of the cables beside it move)",
            );
        }
        if at_end && (moved || kind_flip) {
            // The move beyond what the line in front explains (its tolerance), as every change is taken
            // beyond the interval the calibration explains.
            let dt = far_end.map_or(0.0, |e| {
                let d = e.delay_change_s.unwrap_or(0.0);
                d.signum() * (d.abs() - e.move_tolerance_s).max(0.0)
            });
            f.changed_reflection = f
                .changed_reflection
                .max(moved_reflection(ch.mag_c, dt, kind_flip, f_ref));
        }
        if ch.blocks_far_end.is_some() && f.severity == Severity::Critical {
            blocker_at = blocker_at.min(f.place.distance_m);
        }
        findings.push(f);
    }
    Ok(Judged {
        findings,
        behind,
        blocker_at,
        kind_flip,
    })
}

/// Stage: a new open or short is as far as reflection now sees, and nothing behind it is claimed. So is a
/// pin gap that reflects as much as `explain` reads an open from (a pulled-back pin of a few fF is an open
/// across the band), and a joint that now blocks the line, its far end vanished behind it (found at
/// `blocker_at`). Returns the warning that says what was dropped, if anything was.
fn claim_up_to_wall(
    findings: &mut Vec<Finding>,
    chain: &ChainView,
    res_s: f64,
    blocker_at: f64,
) -> Option<Warning> {
    let total_db = db(difference::SHADOW_MAX_REFLECTION);
    let wall = findings
        .iter()
        .filter(|f| {
            f.severity == Severity::Critical
                && (matches!(f.kind, FaultKind::Open | FaultKind::Short)
                    || (f.kind == FaultKind::PinGap && f.reflection_db >= total_db)
                    || f.place.distance_m == blocker_at)
        })
        .map(|f| {
            f.place.distance_m
                + f.uncertainty_m
                    .max(res_s * speed_at(chain, f.place.distance_m, Which::Current))
        })
        .fold(f64::INFINITY, f64::min);
    let before = findings.len();
    findings.retain(|f| f.place.distance_m <= wall);
    (findings.len() < before).then(|| {
        Warning::new(
            "behind-open-or-short",
            format!(
                "{} change(s) behind the open or short at {} are not claimed: reflection cannot see past it",
                before - findings.len(),
                super::place::metres(wall)
            ),
            "mend the open or short first, then sweep again",
        )
    })
}

/// Stage, for an amplifier in the path with nothing to set the reflections' size by: what changed is known,
/// what it costs is not, so nothing is claimed above info. Returns the warning that says so.
fn nothing_above_info(findings: &mut [Finding]) -> Warning {
    let capped = findings
        .iter()
        .filter(|f| f.severity > Severity::Info)
        .count();
    for f in findings.iter_mut().filter(|f| f.severity > Severity::Info) {
        f.severity = Severity::Info;
        f.power_drop_range_db[0] = 0.0;
        f.power_drop_db = 0.0;
        f.explanation
            .push_str(super::sweep::GAIN_SCALE_UNKNOWN_NOTE);
    }
    super::sweep::gain_scale_unknown(capped)
}

/// Traces in as-built metres and the chain's marks, for a plot.
pub(super) fn plot_data(
    chain: &ChainView,
    sweeps: &[(&SweepAnalysis, Which, &str)],
    extra: &[(f64, String)],
) -> PlotData {
    let traces = sweeps
        .iter()
        .map(|(a, which, name)| {
            let x: Vec<f64> = (0..a.mag.len())
                .map(|i| chain.position_of(i as f64 * a.dt, *which, None))
                .collect();
            let y: Vec<f64> = a.mag.iter().map(|&m| db(m)).collect();
            (name.to_string(), x, y)
        })
        .collect();
    let mut marks: Vec<(f64, String)> = if chain.as_built {
        chain
            .segments
            .iter()
            .filter(|s| s.kind != SegmentKind::Cable)
            .map(|s| (0.5 * (s.start_m + s.end_m), s.name.clone()))
            .collect()
    } else {
        Vec::new()
    };
    marks.extend(extra.iter().cloned());
    PlotData { traces, marks }
}

impl CompareReport {
    fn with_plot(mut self, chain: &ChainView, sweeps: &[(&SweepAnalysis, Which, &str)]) -> Self {
        let extra: Vec<(f64, String)> = self
            .findings
            .iter()
            .filter(|f| f.severity > Severity::Info)
            .map(|f| (f.place.distance_m, format!("#{}", f.rank)))
            .collect();
        self.plot = plot_data(chain, sweeps, &extra);
        self
    }
}

/// Observed drop of |S21|^2 (band average, dB) when both sweeps have it, or the given one.
fn power_check(
    b: &Network,
    c: &Network,
    given: Option<f64>,
    findings: &[Finding],
) -> Option<PowerCheck> {
    let explained: f64 = findings
        .iter()
        .map(|f| f.power_drop_db)
        .filter(|d| d.is_finite())
        .sum();
    let (observed, source) = match given {
        Some(g) => (g, "given"),
        None if b.ports >= 2 && c.ports >= 2 && b.freqs_hz == c.freqs_hz => {
            let mean = |n: &Network| {
                n.param(1, 0).iter().map(|s| s.norm_sqr()).sum::<f64>() / n.len() as f64
            };
            (10.0 * (mean(b) / mean(c).max(1e-30)).log10(), "s21")
        }
        None => return None,
    };
    Some(PowerCheck {
        observed_drop_db: observed,
        source,
        explained_drop_db: explained,
        unexplained_db: observed - explained,
    })
}
