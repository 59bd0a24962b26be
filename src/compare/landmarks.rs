//! Landmarks: events seen in both sweeps, chosen, paired and checked for consistency, and the alignment
//! fitted to them (the per-segment delay scale of `align`, on the line file's elements or, for a line of
//! unknown construction, on the stretches between landmarks).

use super::align::{AlignProblem, SegmentAlignment, LOSS_PRIOR_SIGMA_DB};
use super::analysis::SweepAnalysis;
use super::chain::{ChainView, Which};
use super::far_end::ALIAS_EDGE;
use super::place::{speed_at, LOCATION_FLOOR_CELLS};
use super::report::Alignment;
use super::sweep::db;

/// Amplitude signal-to-noise a landmark needs (30 dB: its peak then sits to a sixtieth of a cell; common
/// practice, no source).
pub const LANDMARK_SNR: f64 = 31.6;

/// Most landmarks used in all (common practice, no source).
pub const MAX_LANDMARKS: usize = 24;

/// Relative error of the modelled conductor loss the calibration allows for (surface resistance of real
/// conductors, warm and cold, known to about 30 %; common practice, no source).
pub const MODEL_LOSS_ERROR: f64 = 0.3;

/// Prior uncertainty of a segment's fitted loss change, dB, from its modelled round-trip losses in the two
/// sweeps' states (`loss[0]` baseline, `loss[1]` current; the flat part, an attenuator's, is known).
///
/// In one state the model is the same for both sweeps and cancels: what is left is drift,
/// [`LOSS_PRIOR_SIGMA_DB`]. Across a state change the conductors' surface resistance is known to about
/// [`MODEL_LOSS_ERROR`] in each state: the error of the change is that share of the larger of the cold-side
/// loss (the lesser of the two) and the modelled change itself. A single landmark behind the segment must
/// not be able to pass a changed joint off as a loss change the model cannot make.
pub fn loss_sigma_db(loss: &[super::chain::LossModel; 2], reference_hz: f64) -> f64 {
    let l: [f64; 2] = std::array::from_fn(|k| (loss[k].db(reference_hz) - loss[k].a_flat).abs());
    if (l[0] - l[1]).abs() <= 1e-9 * (1.0 + l[0]) {
        return LOSS_PRIOR_SIGMA_DB;
    }
    LOSS_PRIOR_SIGMA_DB.max(MODEL_LOSS_ERROR * l[0].min(l[1]).max((l[0] - l[1]).abs()))
}

/// Amplitude uncertainty of one landmark in the calibration of levels, dB: a cold connector's own reflection
/// moves by a dB or so as its parts contract (common practice, no source).
pub const AMPLITUDE_SIGMA_DB: f64 = 1.0;

/// Least separation of two landmarks, in resolution cells: closer ones disturb each other's peaks (common
/// practice, no source).
pub const LANDMARK_SEPARATION_CELLS: f64 = 4.0;

/// The pair (baseline index, current index) of events seen in both sweeps.
pub(super) type Pairs = Vec<(usize, usize)>;

/// Physical bounds of the change of a PTFE coax line's electrical length, current over baseline minus one,
/// from warm to cold: about -0.2 % to +1 % (contraction of the conductors against the rise of PTFE's
/// permittivity as it densifies; common practice, no source). Cold to warm is the inverse.
pub const WARM_TO_COLD_CHANGE: (f64, f64) = (-2e-3, 1e-2);

/// Widest warm -> cold change of electrical length the alignment lets one segment take, current over
/// baseline minus one: [`WARM_TO_COLD_CHANGE`] widened for cables whose dielectric and conductors depart from
/// the line model's (a PTFE that densifies twice as much as the model's gapped dielectric makes a 4 K
/// segment of copper 0.086-in coax +1.7 % longer, where the model says +0.4 %; one that densifies half as
/// much, -0.4 %: the nominal model of `line::physics` with its permittivity change scaled, as
/// tests/scenario perturbs it). The landmarks decide within it, so a cable outside the usual range is still
/// followed rather than misplaced by centimetres; the state inference keeps the narrower range, which is
/// what tells a cooldown from a warm-up.
pub const ALIGNMENT_WARM_TO_COLD_CHANGE: (f64, f64) = (-5e-3, 1.8e-2);

/// Largest change of electrical length between two sweeps in one state: a room-temperature cable drifting by
/// a couple of kelvin, a stage a few hundred millikelvin off (common practice, no source).
pub const SAME_STATE_DRIFT: f64 = 2e-4;

/// A delay scale and the events it pairs.
#[derive(Debug, Clone, PartialEq)]
pub struct ScaleMatch {
    /// Current over baseline round-trip delay, by least squares through the reference plane.
    pub scale: f64,
    /// Its standard uncertainty.
    pub sigma: f64,
    pub pairs: Pairs,
}

/// Baseline events fit to anchor a match: before the alias edge, not a likely multiple reflection, at least
/// [`LANDMARK_SNR`] above the noise; strongest first and at least `min_sep` (round-trip s) apart; at most
/// `max`; returned in order of delay.
pub(super) fn strong_events(a: &SweepAnalysis, min_sep: f64, max: usize) -> Vec<usize> {
    let set = candidates(a, min_sep, max);
    (0..a.events.len()).filter(|&i| set[i]).collect()
}

/// The scale `s` in `[lo, hi]` under which the most strong baseline events find a current event at
/// `s t_b` (within a third of a resolution cell), then refined by least squares over those pairs. `None`
/// when no event pairs.
pub(super) fn scale_search(
    b: &SweepAnalysis,
    c: &SweepAnalysis,
    strong: &[usize],
    (lo, hi): (f64, f64),
) -> Option<ScaleMatch> {
    let res = b.resolution_s.max(c.resolution_s);
    let t_far = strong
        .iter()
        .map(|&i| b.events[i].delay_s)
        .fold(0.0, f64::max);
    if strong.is_empty() || t_far <= 0.0 || c.events.is_empty() {
        return None;
    }
    let tol = res / 3.0;
    let cd: Vec<f64> = c.events.iter().map(|e| e.delay_s).collect();
    let nearest = |t: f64| -> (usize, f64) {
        let k = cd.partition_point(|&x| x < t);
        let mut best = (usize::MAX, f64::INFINITY);
        for j in [k.wrapping_sub(1), k] {
            if let Some(&x) = cd.get(j) {
                if (x - t).abs() < best.1 {
                    best = (j, (x - t).abs());
                }
            }
        }
        best
    };
    let score = |s: f64| -> f64 {
        strong
            .iter()
            .map(|&i| {
                let (_, miss) = nearest(s * b.events[i].delay_s);
                let u = miss / tol;
                (1.0 - u * u).max(0.0)
            })
            .sum()
    };
    let step = 0.1 * res / t_far;
    let n = (((hi - lo) / step).ceil() as usize).clamp(1, 100_000);
    let mut best = (f64::NEG_INFINITY, 1.0);
    for k in 0..=n {
        let s = lo + (hi - lo) * k as f64 / n as f64;
        // Ties go to the scale nearest 1 (the smaller change).
        let v = score(s) - 1e-9 * (s - 1.0).abs();
        if v > best.0 {
            best = (v, s);
        }
    }
    if best.0 <= 0.0 {
        return None;
    }
    let mut s = best.1;
    let mut pairs: Pairs = Vec::new();
    let mut sigma = f64::INFINITY;
    for _ in 0..3 {
        pairs = match_events(b, c, |t| s * t, |_| tol, |i, _| strong.contains(&i));
        if pairs.is_empty() {
            return None;
        }
        // Weighted least squares through the origin: each pair weighs by its delay precision.
        let (mut num, mut den) = (0.0, 0.0);
        for &(i, j) in &pairs {
            let (tb, tc) = (b.events[i].delay_s, c.events[j].delay_s);
            let w = 1.0 / pair_sigma(b, c, i, j).powi(2);
            num += w * tb * tc;
            den += w * tb * tb;
        }
        s = (num / den).clamp(lo, hi);
        sigma = 1.0 / den.sqrt();
        let chi2: f64 = pairs
            .iter()
            .map(|&(i, j)| {
                ((c.events[j].delay_s - s * b.events[i].delay_s) / pair_sigma(b, c, i, j)).powi(2)
            })
            .sum::<f64>();
        // An inflated scatter (the line does not scale uniformly) inflates the uncertainty.
        if pairs.len() > 1 {
            sigma *= (chi2 / (pairs.len() - 1) as f64).sqrt().max(1.0);
        }
    }
    Some(ScaleMatch {
        scale: s,
        sigma,
        pairs,
    })
}

/// Standard uncertainty of the delay difference of a pair, s: each peak placed to its resolution over twice
/// its amplitude SNR, with a floor of a hundredth of a cell (window asymmetry, frequency-dependent phase).
pub(super) fn pair_sigma(b: &SweepAnalysis, c: &SweepAnalysis, i: usize, j: usize) -> f64 {
    let one = |a: &SweepAnalysis, e: &crate::compare::detect::Peak| {
        let s = a.resolution_s / (2.0 * a.snr(e.magnitude, e.delay_s).max(1.0));
        (s * s + (0.01 * a.resolution_s).powi(2)).sqrt()
    };
    let (sb, sc) = (one(b, &b.events[i]), one(c, &c.events[j]));
    (sb * sb + sc * sc).sqrt()
}

/// Match baseline events to current events by predicted current delay, nearest first, keeping order.
pub(super) fn match_events(
    b: &SweepAnalysis,
    c: &SweepAnalysis,
    predict: impl Fn(f64) -> f64,
    tol: impl Fn(f64) -> f64,
    accept: impl Fn(usize, usize) -> bool,
) -> Pairs {
    let mut cand: Vec<(f64, usize, usize)> = Vec::new();
    for (i, eb) in b.events.iter().enumerate() {
        let p = predict(eb.delay_s);
        for (j, ec) in c.events.iter().enumerate() {
            let miss = (ec.delay_s - p).abs();
            if miss <= tol(p) && accept(i, j) {
                cand.push((miss, i, j));
            }
        }
    }
    cand.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut used_b = vec![false; b.events.len()];
    let mut used_c = vec![false; c.events.len()];
    let mut pairs: Pairs = Vec::new();
    for (_, i, j) in cand {
        if used_b[i] || used_c[j] {
            continue;
        }
        // Keep the order along the line: no crossing pairs.
        if pairs.iter().any(|&(pi, pj)| (pi < i) != (pj < j)) {
            continue;
        }
        used_b[i] = true;
        used_c[j] = true;
        pairs.push((i, j));
    }
    pairs.sort();
    pairs
}

/// The largest subset of landmark pairs, in order, in which every stretch between consecutive landmarks
/// (and from the reference plane to the first) changes its delay by a ratio inside `bounds` (the physical
/// limits of the state change), widened by what the landmarks' own delay uncertainty `sigma_s` allows: a
/// longest-chain search over the pairs (dynamic programming), so one wrong pairing cannot bend the fit.
pub(super) fn consistent(
    pairs: &Pairs,
    b: &SweepAnalysis,
    c: &SweepAnalysis,
    (lo, hi): (f64, f64),
    sigma_s: f64,
) -> Pairs {
    let n = pairs.len();
    let db_ = |k: usize| {
        if k == 0 {
            0.0
        } else {
            b.events[pairs[k - 1].0].delay_s
        }
    };
    let dc_ = |k: usize| {
        if k == 0 {
            0.0
        } else {
            c.events[pairs[k - 1].1].delay_s
        }
    };
    let ok = |j: usize, k: usize| {
        let (tb, tc) = (db_(k) - db_(j), dc_(k) - dc_(j));
        let slack = 3.0 * std::f64::consts::SQRT_2 * sigma_s / tb.max(1e-18);
        tb > 0.0 && tc >= (lo - slack) * tb && tc <= (hi + slack) * tb
    };
    // best[k]: most landmarks in a consistent chain ending at k (0 = the reference plane).
    let mut best = vec![0usize; n + 1];
    let mut prev = vec![usize::MAX; n + 1];
    for k in 1..=n {
        best[k] = 0;
        for j in 0..k {
            if (j == 0 || best[j] > 0) && ok(j, k) && best[j] + 1 > best[k] {
                best[k] = best[j] + 1;
                prev[k] = j;
            }
        }
    }
    let mut end = (1..=n).max_by_key(|&k| (best[k], k)).unwrap_or(0);
    let mut out = Vec::new();
    while end > 0 && best[end] > 0 {
        out.push(pairs[end - 1]);
        end = prev[end];
    }
    out.reverse();
    out
}

/// Baseline events fit to be landmarks: at least [`LANDMARK_SNR`] above the noise, and, strongest first,
/// at least `min_sep` (round-trip s) from every stronger one chosen; at most `max` of them.
pub(super) fn candidates(b: &SweepAnalysis, min_sep: f64, max: usize) -> Vec<bool> {
    // Echoes near the end of the alias-free time may be folded from beyond it: no landmark there.
    let edge = ALIAS_EDGE * b.alias_free_s;
    let mut order: Vec<usize> = (0..b.events.len())
        .filter(|&i| {
            b.events[i].delay_s < edge
                && b.events[i].ghost_of.is_none()
                && b.snr(b.events[i].magnitude, b.events[i].delay_s) >= LANDMARK_SNR
        })
        .collect();
    order.sort_by(|&x, &y| b.events[y].magnitude.total_cmp(&b.events[x].magnitude));
    let mut chosen: Vec<usize> = Vec::new();
    for i in order {
        if chosen.len() >= max {
            break;
        }
        if chosen
            .iter()
            .all(|&k| (b.events[k].delay_s - b.events[i].delay_s).abs() >= min_sep)
        {
            chosen.push(i);
        }
    }
    let mut set = vec![false; b.events.len()];
    for i in chosen {
        set[i] = true;
    }
    set
}

/// The fitted alignment: the chain the fit ran on (split at landmarks for a uniform line), its scales, and
/// the amplitude calibration (level and per-segment loss change).
pub struct Fitted {
    pub chain: ChainView,
    pub report: Alignment,
    /// Each segment's loss change beyond what the compensation already undid, dB (the model's error).
    pub residual_loss_db: Vec<f64>,
    /// Each landmark's measured round-trip delay in the baseline and the current sweep, s.
    pub landmark_delays_s: Vec<(f64, f64)>,
    /// What the landmarks in front of an open or short far end predict for its echo's change, when the far
    /// end's own amplitude is left out of the calibration (see [`FarEndPrediction`]).
    pub far_end_prediction: Option<FarEndPrediction>,
}

/// The change of an open or short far end's echo that the landmarks in front of it predict, fitted without
/// the far end's own amplitude: a far end whose echo moved well beyond it changed itself (a lossy joint or a
/// partly open pin at the termination), which no loss change of the line can explain.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FarEndPrediction {
    /// As-built place of the far end, m.
    pub x: f64,
    /// Predicted change of its echo's strength, current over baseline, dB.
    pub expected_db: f64,
    /// Standard uncertainty of the prediction from the loss the landmarks do not pin: the segments behind the
    /// last amplitude landmark in front of the far end, at their own prior widths ([`loss_sigma_db`]), added
    /// linearly (one conductor's surface resistance errs alike along a cable), dB.
    pub sigma_db: f64,
    /// The line file's round-trip loss to the far end in the current sweep's state at the reference
    /// frequency, dB: what bounds its echo's change when both sweeps are in one state.
    pub loss_db: f64,
}

/// Standard uncertainty of the loss change between as-built `from` and `to` on `chain` at `reference_hz`,
/// dB: across a change of state, each segment's modelled error times the share of it that lies in between,
/// added linearly (one conductor's surface resistance errs alike along a cable): [`MODEL_LOSS_ERROR`] of the
/// larger of its cold-side conductor loss and its modelled change (as [`loss_sigma_db`]), and
/// [`super::difference::ATTENUATOR_LOSS_ERROR`] of an attenuator's flat loss; in one state (one model for
/// both sweeps) nothing. Drift, [`LOSS_PRIOR_SIGMA_DB`], adds in quadrature.
pub fn loss_sigma_between(chain: &ChainView, from: f64, to: f64, reference_hz: f64) -> f64 {
    let (a, b) = (chain.cover(from), chain.cover(to));
    let model: f64 = chain
        .segments
        .iter()
        .zip(a.iter().zip(&b))
        .map(|(s, (ca, cb))| {
            let l: [f64; 2] =
                std::array::from_fn(|k| (s.loss[k].db(reference_hz) - s.loss[k].a_flat).abs());
            let one_model = (l[0] - l[1]).abs() <= 1e-9 * (1.0 + l[0])
                && (s.loss[0].a_flat - s.loss[1].a_flat).abs() <= 1e-9 * (1.0 + s.loss[0].a_flat);
            if one_model {
                return 0.0;
            }
            let part = MODEL_LOSS_ERROR * l[0].min(l[1]).max((l[0] - l[1]).abs())
                + super::difference::ATTENUATOR_LOSS_ERROR
                    * s.loss[0].a_flat.abs().max(s.loss[1].a_flat.abs());
            (cb - ca).max(0.0) * part
        })
        .sum();
    model.hypot(LOSS_PRIOR_SIGMA_DB)
}

impl Fitted {
    /// The change of an unchanged echo's strength at as-built `x` that the calibration expects, current over
    /// baseline, dB: the level change less the loss change in front of it.
    pub fn expected_change_db(&self, x: f64) -> f64 {
        let cover = self.chain.cover(x);
        self.report.level_change_db
            - self
                .residual_loss_db
                .iter()
                .zip(cover)
                .map(|(l, c)| c * l)
                .sum::<f64>()
    }
}

/// Fit the alignment of `pairs` on `chain`, each segment's delay scale kept inside `bounds`.
pub(super) fn fit_alignment(
    chain: &ChainView,
    b: &SweepAnalysis,
    c: &SweepAnalysis,
    pairs: &Pairs,
    reference_hz: f64,
    bounds: (f64, f64),
    no_amplitude: Option<usize>,
) -> Fitted {
    let xs: Vec<f64> = pairs
        .iter()
        .map(|&(i, _)| chain.position_of(b.events[i].delay_s, Which::Baseline, None))
        .collect();
    let work = if chain.as_built {
        chain.clone()
    } else {
        split_uniform(chain, &xs)
    };
    let n = work.segments.len();
    let tau: Vec<f64> = work.segments.iter().map(|s| s.delay_s[0]).collect();
    let prior_scale: Vec<f64> = work
        .segments
        .iter()
        .map(|s| {
            if s.delay_s[0] > 0.0 {
                (s.delay_s[1] / s.delay_s[0]).clamp(bounds.0, bounds.1)
            } else {
                1.0
            }
        })
        .collect();
    let prior_loss: Vec<f64> = work
        .segments
        .iter()
        .map(|s| s.loss[1].db(reference_hz) - s.loss[0].db(reference_hz))
        .collect();
    // The baseline delays of landmarks are measured, not the model's: scale the model's baseline delays so
    // each landmark sits where the baseline saw it (this absorbs as-built length error).
    let cover: Vec<Vec<f64>> = xs.iter().map(|&x| work.cover(x)).collect();
    let sig: Vec<f64> = pairs
        .iter()
        .map(|&(i, j)| {
            let sb = b.resolution_s / (2.0 * b.snr(b.events[i].magnitude, b.events[i].delay_s));
            let sc = c.resolution_s / (2.0 * c.snr(c.events[j].magnitude, c.events[j].delay_s));
            // However strong the echo, its peak is placed no better than the floor of a located position
            // (the window's asymmetry and a reflection's own phase slope): an echo a few millimetres from the
            // reference plane must not set the scale of the whole cable in front of the next landmark.
            let floor = LOCATION_FLOOR_CELLS * b.resolution_s.max(c.resolution_s);
            (sb * sb + sc * sc + floor * floor).sqrt()
        })
        .collect();
    let sigma_s = if sig.is_empty() {
        b.resolution_s
    } else {
        (sig.iter().map(|s| s * s).sum::<f64>() / sig.len() as f64)
            .sqrt()
            .max(1e-15)
    };
    let problem = AlignProblem {
        tau: tau.clone(),
        prior_scale: prior_scale.clone(),
        // The traces are already compensated with each state's modelled loss: what is left to fit is the
        // model's error, whose prior is zero and whose size grows with the loss modelled (surface resistance
        // known to about 30 %).
        prior_loss_db: vec![0.0; n],
        loss_sigma_db: work
            .segments
            .iter()
            .map(|s| loss_sigma_db(&s.loss, reference_hz))
            .collect(),
        cover: cover.clone(),
        current_delay_s: pairs.iter().map(|&(_, j)| c.events[j].delay_s).collect(),
        // A landmark whose level is not the line's (a device's echo at the far end, whose level a fault at
        // the last joint changes) times the delays only.
        amplitude_change_db: pairs
            .iter()
            .map(|&(i, j)| {
                if Some(i) == no_amplitude {
                    f64::NAN
                } else {
                    db(c.events[j].magnitude) - db(b.events[i].magnitude)
                }
            })
            .collect(),
        sigma_s,
        sigma_db: AMPLITUDE_SIGMA_DB,
        bounds: Some(bounds),
        level_free: gain_in_path(b) || gain_in_path(c),
    };
    // Baseline delays of the landmarks against the model: a per-segment correction of the model's baseline
    // delays by the same solve (prior 1), so the current scale is relative to what the baseline measured.
    let base = AlignProblem {
        tau: tau.clone(),
        prior_scale: vec![1.0; n],
        prior_loss_db: vec![0.0; n],
        loss_sigma_db: Vec::new(),
        cover: cover.clone(),
        current_delay_s: pairs.iter().map(|&(i, _)| b.events[i].delay_s).collect(),
        amplitude_change_db: vec![0.0; pairs.len()],
        sigma_s,
        sigma_db: 1.0,
        bounds: None,
        level_free: false,
    }
    .solve();
    let mut corrected = work.clone();
    for (s, k) in corrected.segments.iter_mut().zip(&base.scale) {
        s.delay_s[0] *= k;
        s.delay_s[1] *= k;
    }
    let problem = AlignProblem {
        tau: corrected.segments.iter().map(|s| s.delay_s[0]).collect(),
        ..problem
    };
    let sol = problem.solve();
    // Residual in metres, with each landmark's own position uncertainty.
    let mut acc = 0.0;
    for (k, &x) in xs.iter().enumerate() {
        let v = speed_at(&corrected, x, Which::Current);
        acc += (sol.residual_s[k] * v).powi(2) + (sig[k] * v).powi(2);
    }
    let residual_m = if xs.is_empty() {
        f64::NAN
    } else {
        (acc / xs.len() as f64).sqrt()
    };
    let far = pairs
        .last()
        .map(|&(i, j)| c.events[j].delay_s / b.events[i].delay_s - 1.0);
    let segments = corrected
        .segments
        .iter()
        .enumerate()
        .map(|(j, s)| SegmentAlignment {
            element: s.name.clone(),
            delay_scale: sol.scale[j],
            loss_change_db: prior_loss[j] + sol.loss_change_db[j],
            start_m: s.start_m,
            end_m: s.end_m,
            baseline_delay_s: s.delay_s[0],
            constrained: sol.constrained[j],
        })
        .collect();
    // The map used from here: baseline delays as measured, current delays = baseline x fitted scale.
    let mut chain_fit = corrected;
    for (s, k) in chain_fit.segments.iter_mut().zip(&sol.scale) {
        s.delay_s[1] = s.delay_s[0] * k;
    }
    Fitted {
        chain: chain_fit,
        report: Alignment {
            residual_m,
            segments,
            landmarks_m: xs,
            electrical_length_change: far.unwrap_or(0.0),
            level_change_db: sol.level_db,
            anchors: Vec::new(),
        },
        residual_loss_db: sol.loss_change_db.clone(),
        landmark_delays_s: pairs
            .iter()
            .map(|&(i, j)| (b.events[i].delay_s, c.events[j].delay_s))
            .collect(),
        far_end_prediction: None,
    }
}

/// Whether an amplifier lies in sweep `a`'s path (`super::sweep::shows_gain` of it or of the other sweep
/// of its pair).
pub fn gain_in_path(a: &SweepAnalysis) -> bool {
    a.path_gain_db.is_some()
}

/// A uniform chain split at landmark positions into segments named by their extent.
pub(super) fn split_uniform(chain: &ChainView, xs: &[f64]) -> ChainView {
    let seg = &chain.segments[0];
    let len = seg.end_m - seg.start_m;
    let mut cuts: Vec<f64> = xs
        .iter()
        .copied()
        .filter(|&x| x > 0.0 && x < seg.end_m)
        .collect();
    cuts.sort_by(|a, b| a.total_cmp(b));
    cuts.dedup_by(|a, b| (*a - *b).abs() < 1e-6);
    let mut edges = vec![seg.start_m];
    edges.extend(cuts);
    edges.push(seg.end_m);
    let mut out = chain.clone();
    out.segments = edges
        .windows(2)
        .map(|w| {
            let mut s = seg.clone();
            s.start_m = w[0];
            s.end_m = w[1];
            let f = (w[1] - w[0]) / len;
            s.delay_s = [seg.delay_s[0] * f, seg.delay_s[1] * f];
            s.loss = seg.loss.map(|l| super::chain::LossModel {
                a_sqrt: l.a_sqrt * f,
                a_lin: l.a_lin * f,
                a_flat: l.a_flat * f,
            });
            s.name = format!("{:.3}..{:.3} m", w[0], w[1]);
            s
        })
        .collect();
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::chain::LossModel;

    fn sqrt_loss(db_at_1ghz: f64) -> LossModel {
        LossModel {
            a_sqrt: db_at_1ghz,
            a_lin: 0.0,
            a_flat: 0.0,
        }
    }

    #[test]
    fn one_state_leaves_only_drift_to_the_loss_fit() {
        // The same model in both sweeps cancels, however lossy the segment.
        let m = sqrt_loss(10.0);
        assert_eq!(loss_sigma_db(&[m, m], 4e9), LOSS_PRIOR_SIGMA_DB);
    }

    #[test]
    fn a_state_change_allows_the_models_error_of_the_cold_loss_or_the_change() {
        // At 4 GHz: 2 dB/sqrt(GHz) warm reads 4 dB, 1 dB/sqrt(GHz) cold 2 dB; the change (2 dB) and the cold
        // loss (2 dB) are alike: 0.3 x 2 = 0.6 dB.
        let s = loss_sigma_db(&[sqrt_loss(2.0), sqrt_loss(1.0)], 4e9);
        assert!((s - 0.6).abs() < 1e-12, "{s}");
        // Copper-like: the cold loss a fifth of the warm (10 and 2 dB): the change (8 dB) rules, 2.4 dB.
        let s = loss_sigma_db(&[sqrt_loss(5.0), sqrt_loss(1.0)], 4e9);
        assert!((s - 2.4).abs() < 1e-12, "{s}");
        // A flat part (an attenuator's) is known and adds nothing; a tiny loss keeps the floor.
        let flat = LossModel {
            a_flat: 20.0,
            ..sqrt_loss(0.01)
        };
        assert_eq!(
            loss_sigma_db(&[flat, sqrt_loss(0.02)], 4e9),
            LOSS_PRIOR_SIGMA_DB
        );
    }
}
