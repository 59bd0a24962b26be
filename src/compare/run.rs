//! The comparator's procedure: analyse both sweeps, align them on shared landmarks, match their events,
//! decide what changed, explain each change with a lumped model, rank by what it costs.
//!
//! Decision rules (each a named constant below, documented in docs/method.md):
//! - a landmark is an event seen in both sweeps at the model's predicted place, at least
//!   [`LANDMARK_SNR`] above the noise, with an amplitude change under [`LANDMARK_MAX_CHANGE_DB`];
//! - an event changed when its reflection changed by [`CHANGE_DB`] or more, or (both sweeps in the same
//!   state) its phase turned by [`PHASE_CHANGE_DEG`] or more, or it is new: not in the baseline and at least
//!   [`CHANGE_DB`] above the baseline's response at that place;
//! - severity comes from the predicted drop of transmitted power (see `severity`), net of what the baseline
//!   already lost there; an open or short that appeared is `critical`.

use super::align::{AlignProblem, SegmentAlignment};
use super::analysis::{SweepAnalysis, MAX_COMPENSATION};
use super::chain::{ChainView, SegmentKind, Which};
use super::lumped::{gap_from_capacitance, ModelFit, ModelType};
use super::report::*;
use super::severity::{drop_db, mismatch_loss_db, Severity};
use super::CompareError;
use crate::transform::{TraceEngine, Window, C0_M_PER_S};
use crate::{Network, Warning};
use num_complex::Complex64;

/// Amplitude signal-to-noise a landmark needs (30 dB).
pub const LANDMARK_SNR: f64 = 31.6;
/// Largest amplitude change a landmark may show, dB; a larger one is a change, not a landmark.
pub const LANDMARK_MAX_CHANGE_DB: f64 = 3.0;
/// |Gamma| in mid-band from which a fitted resistance, inductance, shunt capacitance or step is read as an
/// open or a short (0.9: a 950 ohm series resistance, or a step to 2.6 ohm; common practice, no source).
pub const NEAR_TOTAL: f64 = 0.9;
/// On a line of unknown loss, a constant real reflection at least this strong is read as an open or short
/// whose value is the apparent |Gamma| (the rest is the line's loss).
pub const UNCOMPENSATED_TERMINATION: f64 = 0.3;
/// Landmarks used for the first, coarse match (the strongest).
pub const FIRST_PASS_LANDMARKS: usize = 6;
/// Most landmarks used in all.
pub const MAX_LANDMARKS: usize = 24;
/// Least separation of two landmarks, in resolution cells: closer ones disturb each other's peaks.
pub const LANDMARK_SEPARATION_CELLS: f64 = 4.0;
/// Change of reflection that counts as a change, dB. Cold connectors' own reflections move by a dB or two
/// as their parts contract (common practice, no source).
pub const CHANGE_DB: f64 = 3.0;
/// Phase turn that counts as a change when both sweeps are in the same state, degrees.
pub const PHASE_CHANGE_DEG: f64 = 90.0;
/// Largest relative change of electrical length the first landmark search allows, warm to cold: PTFE
/// lines change by a few tenths of a percent; 2 % leaves room for a wrong velocity factor.
pub const MAX_LENGTH_CHANGE: f64 = 0.02;
/// Relative tolerance of as-built lengths (0.2 %, a cut cable's length to a couple of millimetres a metre;
/// common practice, no source).
pub const LENGTH_TOLERANCE: f64 = 2e-3;
/// Fit error above which no lumped model is claimed and the finding's kind is `unknown`.
pub const MAX_FIT_ERROR: f64 = 0.5;
/// Floor of a position's standard uncertainty, in resolution cells: what sub-bin location can promise once
/// window asymmetry and a frequency-dependent reflection phase are allowed for (common practice, no source).
pub const LOCATION_FLOOR_CELLS: f64 = 0.02;

/// Standard uncertainty of a position (m): resolution over twice the amplitude SNR (the usual estimate for
/// locating a peak in noise), the model's residual delay, the alignment residual and the length tolerance,
/// added in quadrature, with a floor.
fn position_sigma(res_m: f64, snr: f64, delta_m: f64, align_m: f64, x: f64, as_built: bool) -> f64 {
    let length = if as_built { LENGTH_TOLERANCE * x } else { 0.0 };
    let align = if align_m.is_finite() { align_m } else { 0.0 };
    ((res_m / (2.0 * snr.max(1e-9))).powi(2)
        + (0.5 * delta_m).powi(2)
        + align.powi(2)
        + length.powi(2)
        + (LOCATION_FLOOR_CELLS * res_m).powi(2))
    .sqrt()
}

/// Settings of a comparison or a location.
#[derive(Debug, Clone, PartialEq)]
pub struct AnalysisConfig {
    /// Window of the band-pass transform. Default Kaiser beta 9 (highest sidelobe about -66 dB, so a fault
    /// 20 dB under a strong neighbour stands well clear of its sidelobes).
    pub window: Window,
    /// Frequency at which power drops are quoted; default the band centre.
    pub reference_hz: Option<f64>,
    /// A measured drop of transmitted power to compare with what the findings explain, dB.
    pub observed_drop_db: Option<f64>,
}

impl Default for AnalysisConfig {
    fn default() -> Self {
        AnalysisConfig {
            window: Window::Kaiser { beta: 9.0 },
            reference_hz: None,
            observed_drop_db: None,
        }
    }
}

/// A named sweep.
#[derive(Debug, Clone, Copy)]
pub struct Sweep<'a> {
    pub name: &'a str,
    pub network: &'a Network,
    /// Its state's name, for reports (`warm`, `cold`, ...).
    pub state: &'static str,
}

fn s11_of(s: &Sweep) -> Result<Vec<Complex64>, CompareError> {
    if s.network.is_empty() {
        return Err(CompareError::Invalid(format!(
            "{}: the sweep has no points",
            s.name
        )));
    }
    Ok(s.network.s11())
}

/// Round-trip delay up to which a sweep is analysed: a little past the far end in its state.
fn t_max(chain: &ChainView, which: Which, resolution_s: f64) -> f64 {
    let t = chain.delay_to(chain.length_m(), which, None);
    if chain.as_built {
        t * 1.02 + 6.0 * resolution_s
    } else {
        // A uniform line of unknown construction is sized to the alias-free range already.
        t
    }
}

/// A uniform chain long enough for the whole alias-free range of both sweeps.
fn sized(chain: &ChainView, freqs: &[&[f64]]) -> ChainView {
    if chain.as_built {
        return chain.clone();
    }
    let seg = &chain.segments[0];
    let vf = 2.0 * (seg.end_m - seg.start_m) / (C0_M_PER_S * seg.delay_s[0]);
    let df = freqs
        .iter()
        .filter(|f| f.len() > 1)
        .map(|f| (f[f.len() - 1] - f[0]) / (f.len() - 1) as f64)
        .fold(0.0, f64::max);
    let len = if df > 0.0 {
        C0_M_PER_S * vf / (2.0 * df)
    } else {
        seg.end_m
    };
    ChainView::uniform(&chain.name, vf, len, chain.impedance_ohm)
}

/// Metres per round-trip second at as-built position `x` in sweep `which`.
fn speed_at(chain: &ChainView, x: f64, which: Which) -> f64 {
    match chain.segment_at(x) {
        Some((i, _)) => {
            let s = &chain.segments[i];
            let d = s.delay_s[which as usize];
            if d > 0.0 && s.end_m > s.start_m {
                (s.end_m - s.start_m) / d
            } else {
                C0_M_PER_S * 0.35
            }
        }
        None => C0_M_PER_S * 0.35,
    }
}

/// Where `x` is on `chain`.
pub fn place(chain: &ChainView, x: f64) -> Place {
    let (element, offset_m) = match chain.segment_at(x) {
        Some((i, off)) => (chain.segments[i].name.clone(), off),
        None => ("line".to_string(), x),
    };
    Place {
        distance_m: x,
        element,
        offset_m,
        nearest_connector: chain.nearest_connector(x).map(|(s, _)| s.name.clone()),
    }
}

fn band_centre(freqs: &[f64]) -> f64 {
    0.5 * (freqs[0] + freqs[freqs.len() - 1])
}

/// The pair (baseline index, current index) of events seen in both sweeps.
type Pairs = Vec<(usize, usize)>;

/// Match baseline events to current events by predicted current delay, nearest first, keeping order.
fn match_events(
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
/// (and from the reference plane to the first) changes its delay by no more than [`MAX_LENGTH_CHANGE`]
/// against the model's prediction, plus what the landmarks' own uncertainty `sigma_s` allows: a
/// longest-chain search over the pairs (dynamic programming), so one wrong pairing cannot bend the fit.
fn consistent(
    pairs: &Pairs,
    b: &SweepAnalysis,
    c: &SweepAnalysis,
    predict: impl Fn(f64) -> f64,
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
        let tp = predict(db_(k)) - predict(db_(j));
        tb > 0.0 && tp > 0.0 && ((tc - tp) / tp).abs() <= MAX_LENGTH_CHANGE + 3.0 * sigma_s / tp
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
fn candidates(b: &SweepAnalysis, min_sep: f64, max: usize) -> Vec<bool> {
    let mut order: Vec<usize> = (0..b.events.len())
        .filter(|&i| b.snr(b.events[i].magnitude, b.events[i].delay_s) >= LANDMARK_SNR)
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

fn db(a: f64) -> f64 {
    20.0 * a.max(1e-20).log10()
}

/// The fitted alignment: the chain the fit ran on (split at landmarks for a uniform line) and its scales.
struct Fitted {
    chain: ChainView,
    report: Alignment,
}

fn fit_alignment(
    chain: &ChainView,
    b: &SweepAnalysis,
    c: &SweepAnalysis,
    pairs: &Pairs,
    reference_hz: f64,
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
                s.delay_s[1] / s.delay_s[0]
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
            (sb * sb + sc * sc).sqrt()
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
        prior_loss_db: prior_loss,
        cover: cover.clone(),
        current_delay_s: pairs.iter().map(|&(_, j)| c.events[j].delay_s).collect(),
        amplitude_change_db: pairs
            .iter()
            .map(|&(i, j)| db(c.events[j].magnitude) - db(b.events[i].magnitude))
            .collect(),
        sigma_s,
        sigma_db: 0.5,
    };
    // Baseline delays of the landmarks against the model: a per-segment correction of the model's baseline
    // delays by the same solve (prior 1), so the current scale is relative to what the baseline measured.
    let base = AlignProblem {
        tau: tau.clone(),
        prior_scale: vec![1.0; n],
        prior_loss_db: vec![0.0; n],
        cover: cover.clone(),
        current_delay_s: pairs.iter().map(|&(i, _)| b.events[i].delay_s).collect(),
        amplitude_change_db: vec![0.0; pairs.len()],
        sigma_s,
        sigma_db: 1.0,
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
            loss_change_db: sol.loss_change_db[j],
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
        },
    }
}

/// A uniform chain split at landmark positions into segments named by their extent.
fn split_uniform(chain: &ChainView, xs: &[f64]) -> ChainView {
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
            s.name = format!("{:.3}..{:.3} m", w[0], w[1]);
            s
        })
        .collect();
    out
}

/// Classify the best fit into a fault kind and summary.
fn classify(
    fits: &[ModelFit],
    chain: &ChainView,
    x: f64,
    near_tol_m: f64,
    (f_lo, f_hi): (f64, f64),
) -> (FaultKind, ModelSummary, Option<ModelFit>) {
    let best = fits[0];
    let seg = chain.segment_at(x).map(|(i, _)| &chain.segments[i]);
    let (pin, eps) = seg.map_or(
        (
            super::chain::DEFAULT_PIN_RADIUS_M,
            super::chain::DEFAULT_EPS_R,
        ),
        |s| (s.pin_radius_m, s.eps_r),
    );
    let mut summary = ModelSummary {
        model: best.model,
        value: best.value,
        unit: best.unit,
        fit_error: best.fit_error,
        gap_m: None,
    };
    if best.fit_error > MAX_FIT_ERROR {
        return (FaultKind::Unknown, summary, None);
    }
    let at_connector = chain
        .nearest_connector(x)
        .is_some_and(|(_, d)| d <= near_tol_m)
        || seg.is_some_and(|s| s.kind == SegmentKind::Connector);
    // Seen through a line of unknown loss, an open or a short reads as a strong constant real reflection
    // below 1: take a strong one for the termination it most likely is (a step of coax impedance that far,
    // to 93 or 27 ohm, is rare; common practice, no source).
    if !chain.as_built
        && matches!(
            best.model,
            ModelType::ImpedanceStep | ModelType::SeriesResistance
        )
    {
        let g = best.model.gamma(best.value, 1e9, chain.impedance_ohm).re;
        if g.abs() >= UNCOMPENSATED_TERMINATION {
            let model = if g > 0.0 {
                ModelType::Open
            } else {
                ModelType::Short
            };
            summary.model = model;
            summary.value = g.abs();
            summary.unit = "";
            let kind = if g > 0.0 {
                FaultKind::Open
            } else {
                FaultKind::Short
            };
            return (kind, summary, None);
        }
    }
    // A model whose reflection is nearly total in mid-band is read as what it amounts to: an open or a short.
    let g_mid = best
        .model
        .gamma(best.value, 0.5 * (f_lo + f_hi), chain.impedance_ohm);
    if best.model != ModelType::SeriesCapacitance && g_mid.norm() >= NEAR_TOTAL {
        let open = g_mid.re > 0.0;
        summary.model = if open {
            ModelType::Open
        } else {
            ModelType::Short
        };
        summary.value = 0.0;
        summary.unit = "";
        let m = if open {
            ModelType::Open
        } else {
            ModelType::Short
        };
        let fit = fits.iter().find(|f| f.model == m).copied();
        return (
            if open {
                FaultKind::Open
            } else {
                FaultKind::Short
            },
            summary,
            fit,
        );
    }
    let kind = match best.model {
        ModelType::SeriesCapacitance => {
            summary.gap_m = gap_from_capacitance(best.value, pin, eps);
            FaultKind::PinGap
        }
        ModelType::SeriesResistance | ModelType::ImpedanceStep => {
            // Both reflect a constant real Gamma; where there is a joint, a resistance is the likelier cause.
            let step = fits
                .iter()
                .find(|f| f.model == ModelType::ImpedanceStep)
                .copied();
            let res = fits
                .iter()
                .find(|f| f.model == ModelType::SeriesResistance)
                .copied();
            match (at_connector, res, step) {
                (true, Some(r), _) if r.fit_error <= best.fit_error * 1.05 + 1e-9 => {
                    summary = ModelSummary {
                        model: r.model,
                        value: r.value,
                        unit: r.unit,
                        fit_error: r.fit_error,
                        gap_m: None,
                    };
                    return (FaultKind::Contact, summary, Some(r));
                }
                (_, _, Some(s)) if s.fit_error <= best.fit_error * 1.05 + 1e-9 => {
                    summary = ModelSummary {
                        model: s.model,
                        value: s.value,
                        unit: s.unit,
                        fit_error: s.fit_error,
                        gap_m: None,
                    };
                    return (FaultKind::ImpedanceStep, summary, Some(s));
                }
                _ => FaultKind::Contact,
            }
        }
        ModelType::ShuntCapacitance => FaultKind::Crush,
        ModelType::SeriesInductance => FaultKind::Unknown,
        ModelType::Open => FaultKind::Open,
        ModelType::Short => FaultKind::Short,
    };
    (kind, summary, Some(best))
}

/// Predicted power drop at `f_ref` and band-averaged mismatch loss of a fitted model (or, with no model,
/// of the measured local reflection `g_meas`).
fn costs(
    model: Option<ModelFit>,
    freqs: &[f64],
    g_meas: &[Complex64],
    z0: f64,
    f_ref: f64,
) -> (f64, f64) {
    match model {
        Some(m) => {
            let ml = freqs
                .iter()
                .map(|&f| mismatch_loss_db(m.model.gamma(m.value, f, z0).norm()).min(60.0))
                .sum::<f64>()
                / freqs.len().max(1) as f64;
            (
                drop_db(m.model.transmission(m.value, f_ref, z0)).min(60.0),
                ml,
            )
        }
        None => {
            let ml = g_meas
                .iter()
                .map(|g| mismatch_loss_db(g.norm().min(0.999)).min(60.0))
                .sum::<f64>()
                / g_meas.len().max(1) as f64;
            (ml, ml)
        }
    }
}

/// A short sentence describing a value of a model.
fn describe_model(kind: FaultKind, m: &ModelSummary) -> String {
    match (kind, m.model) {
        (FaultKind::PinGap, _) => match m.gap_m {
            Some(g) => format!(
                "centre pin gap, about {:.0} um ({:.1} fF)",
                g * 1e6,
                m.value * 1e15
            ),
            None => format!(
                "centre pin gap, wider than the pin radius ({:.1} fF)",
                m.value * 1e15
            ),
        },
        (FaultKind::Contact, _) => format!("contact resistance, about {:.2} ohm", m.value),
        (FaultKind::Crush, _) => format!(
            "crushed section, about {:.0} fF of shunt capacitance",
            m.value * 1e15
        ),
        (FaultKind::ImpedanceStep, _) => format!("impedance step to about {:.1} ohm", m.value),
        (FaultKind::Open, _) => "open circuit".to_string(),
        (FaultKind::Short, _) => "short circuit".to_string(),
        (FaultKind::Unknown, ModelType::SeriesInductance) if m.fit_error <= MAX_FIT_ERROR => {
            format!(
                "inductive discontinuity (loose pin or air gap round the pin), about {:.0} pH",
                m.value * 1e12
            )
        }
        (FaultKind::Unknown, _) => "a discontinuity no lumped model explains".to_string(),
    }
}

fn where_text(chain: &ChainView, p: &Place) -> String {
    let seg = chain.segments.iter().find(|s| s.name == p.element);
    let place = seg.map(|s| s.place.as_str()).filter(|s| !s.is_empty());
    let name = match &p.nearest_connector {
        Some(c)
            if chain
                .nearest_connector(p.distance_m)
                .is_some_and(|(_, d)| d < 0.02) =>
        {
            c.clone()
        }
        _ if chain.as_built => format!("{} +{:.3} m", p.element, p.offset_m),
        _ => "line".to_string(),
    };
    match place {
        Some(pl) => format!("{name} at {:.3} m ({pl})", p.distance_m),
        None => format!("{name} at {:.3} m", p.distance_m),
    }
}

/// Elements reflection cannot see: behind the first device, past the alias-free range, or behind more
/// round-trip loss than compensation may undo.
fn not_visible(chain: &ChainView, a: &SweepAnalysis, which: Which, f_c: f64) -> Vec<NotVisible> {
    let mut out = Vec::new();
    let block = chain.first_blocking();
    let cap_db = 20.0 * MAX_COMPENSATION.log10();
    for (i, s) in chain.segments.iter().enumerate() {
        if !chain.as_built {
            break;
        }
        let reason = if block.is_some_and(|b| i > b) {
            Some(format!(
                "behind '{}', which reflection cannot see through",
                chain.segments[block.unwrap()].name
            ))
        } else if chain.delay_to(s.start_m, which, None) > a.alias_free_s {
            Some("beyond the sweep's alias-free range".to_string())
        } else {
            let l = chain.loss_to_db(s.start_m, f_c, which);
            (l > cap_db).then(|| {
                format!(
                    "round-trip loss to it {l:.1} dB exceeds the {cap_db:.0} dB compensation cap"
                )
            })
        };
        if let Some(reason) = reason {
            out.push(NotVisible {
                element: s.name.clone(),
                reason,
            });
        }
    }
    out
}

fn confidence(snr: f64, fit_error: f64) -> f64 {
    let s = 1.0 - (-snr / 10.0).exp();
    (s * (1.0 - fit_error.min(1.0))).clamp(0.0, 1.0)
}

/// Compare `baseline` with `current` on `chain` (whose per-segment delays and losses are for the two sweeps'
/// states, in that order).
pub fn compare(
    baseline: Sweep,
    current: Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    states: StateReport,
) -> Result<CompareReport, CompareError> {
    let sb = s11_of(&baseline)?;
    let sc = s11_of(&current)?;
    let chain = sized(
        chain,
        &[&baseline.network.freqs_hz, &current.network.freqs_hz],
    );
    let mut engine = TraceEngine::new();
    let fb = &baseline.network.freqs_hz;
    let fc = &current.network.freqs_hz;
    let res0 = super::analysis::lobe_shape(&cfg.window, fb[fb.len() - 1] - fb[0]).1;
    let b = SweepAnalysis::new(
        fb,
        &sb,
        &cfg.window,
        t_max(&chain, Which::Baseline, res0),
        &chain,
        Which::Baseline,
        &mut engine,
    )?;
    let c = SweepAnalysis::new(
        fc,
        &sc,
        &cfg.window,
        t_max(&chain, Which::Current, res0),
        &chain,
        Which::Current,
        &mut engine,
    )?;
    let f_ref = cfg.reference_hz.unwrap_or_else(|| band_centre(fc));
    let mut warnings: Vec<Warning> = b.warnings.iter().chain(&c.warnings).cloned().collect();
    if !chain.as_built {
        warnings.push(Warning::new(
            "no-line-file",
            "no line file: positions are metres of one uniform line and reflections are not loss-compensated",
            "pass --line LINE for as-built positions, element names and compensated reflections",
        ));
    }

    // Landmarks: strong, well separated events, near where the model puts them, not much changed.
    let res_max = b.resolution_s.max(c.resolution_s);
    let first = candidates(
        &b,
        LANDMARK_SEPARATION_CELLS * res_max,
        FIRST_PASS_LANDMARKS,
    );
    let all = candidates(&b, LANDMARK_SEPARATION_CELLS * res_max, MAX_LANDMARKS);
    let steady = |set: &[bool]| {
        let set = set.to_vec();
        let (b, c) = (&b, &c);
        move |i: usize, j: usize| {
            let (eb, ec) = (&b.events[i], &c.events[j]);
            set[i]
                && c.snr(ec.magnitude, ec.delay_s) >= LANDMARK_SNR
                && (db(ec.magnitude) - db(eb.magnitude)).abs() < LANDMARK_MAX_CHANGE_DB
        }
    };
    let predict0 = |d: f64| {
        chain.delay_to(
            chain.position_of(d, Which::Baseline, None),
            Which::Current,
            None,
        )
    };
    let tol0 = |p: f64| MAX_LENGTH_CHANGE * p + 2.0 * res_max;
    let sigma_pair = 0.1 * res_max;
    let mut pairs = consistent(
        &match_events(&b, &c, predict0, tol0, steady(&first)),
        &b,
        &c,
        predict0,
        sigma_pair,
    );
    let mut fitted = fit_alignment(&chain, &b, &c, &pairs, f_ref);
    // Second pass: every candidate, predicted with the first fit, within half a resolution cell.
    {
        let fit = &fitted;
        let predict = |d: f64| {
            fit.chain.delay_to(
                fit.chain.position_of(d, Which::Baseline, None),
                Which::Current,
                None,
            )
        };
        let again = consistent(
            &match_events(&b, &c, predict, |_| 0.5 * res_max, steady(&all)),
            &b,
            &c,
            predict0,
            sigma_pair,
        );
        if again.len() >= pairs.len() {
            pairs = again;
        }
    }
    if !pairs.is_empty() {
        fitted = fit_alignment(&chain, &b, &c, &pairs, f_ref);
    } else {
        warnings.push(Warning::new(
            "no-landmarks",
            "no landmark was seen in both sweeps; the model's predicted change is used unrefined",
            "check that both sweeps are of the same line and cover the same band",
        ));
    }
    let fit = &fitted;
    let same_state = states.baseline == states.current;

    // All events, matched in the baseline's as-built frame.
    let res_s = b.resolution_s.max(c.resolution_s);
    let to_x_b = |d: f64| fit.chain.position_of(d, Which::Baseline, None);
    let to_x_c = |d: f64| fit.chain.position_of(d, Which::Current, None);
    let all_pairs = match_events(
        &b,
        &c,
        |d| fit.chain.delay_to(to_x_b(d), Which::Current, None),
        |_| 1.0 * res_s,
        |_, _| true,
    );
    let f_c = band_centre(fc);
    let visible_end = chain.visible_end_m();
    let mut findings: Vec<Finding> = Vec::new();
    let mut behind = 0usize;
    let mut consider = |x: f64,
                        d_c: f64,
                        mag_c: f64,
                        gamma_c: Complex64,
                        base: Option<(f64, Complex64)>,
                        ghost: bool,
                        engine: &mut TraceEngine|
     -> Result<(), CompareError> {
        let speed = speed_at(&fit.chain, x, Which::Current);
        let res_m = res_s * speed;
        if chain.as_built && x > visible_end + res_m {
            behind += 1;
            return Ok(());
        }
        let refl = mag_c;
        let (change_db, phase_deg, base_refl) = match base {
            Some((mag_b, gamma_b)) => {
                let rb = mag_b;
                let ph = (gamma_c / gamma_b).arg().to_degrees();
                (db(refl) - db(rb), ph, rb)
            }
            None => {
                let d_b = fit.chain.delay_to(x, Which::Baseline, None);
                let rb = b
                    .h(d_b)
                    .norm()
                    .max(super::detect::NOISE_SIGMAS * b.sigma_at(d_b));
                (db(refl) - db(rb), 0.0, rb)
            }
        };
        let changed = change_db.abs() >= CHANGE_DB
            || (same_state
                && base.is_some()
                && phase_deg.abs() >= PHASE_CHANGE_DEG
                && c.snr(mag_c, d_c) > 10.0);
        if !changed {
            return Ok(());
        }
        let snr = c.snr(mag_c, d_c);
        let (fl, gl) = c.local_reflection(d_c, x, &chain, Which::Current, engine)?;
        let fits = c.fit_local(&fl, &gl, chain.impedance_ohm);
        // The model's residual delay moves the event to where the model puts it.
        let delta = if fits[0].fit_error <= MAX_FIT_ERROR {
            fits[0].delta_s
        } else {
            0.0
        };
        let x = to_x_c(d_c + delta);
        let sigma_x = position_sigma(
            res_m,
            snr,
            delta * speed,
            fit.report.residual_m,
            x,
            chain.as_built,
        );
        let (mut kind, model, best) = classify(
            &fits,
            &chain,
            x,
            (2.0 * sigma_x).max(res_m),
            (fl[0], fl[fl.len() - 1]),
        );
        let (drop_c, ml) = costs(best, &fl, &gl, chain.impedance_ohm, f_ref);
        let drop_b = mismatch_loss_db(base_refl.min(0.999));
        let mut net_drop = if change_db > 0.0 {
            (drop_c - drop_b).max(0.0)
        } else {
            0.0
        };
        // Both sweeps in one state: the reflection's complex change is comparable, and what appeared is
        // the difference, Gamma_c - Gamma_b (an open that became a short changes by 2 |Gamma|).
        if same_state {
            let added = match base {
                Some((_, gamma_b)) => (gamma_c - gamma_b).norm(),
                None => (refl - base_refl).max(0.0),
            };
            net_drop = net_drop.max(mismatch_loss_db(added.min(0.999)));
        }
        let mut severity = Severity::from_drop_db(net_drop);
        if (change_db > 0.0 || (same_state && phase_deg.abs() >= PHASE_CHANGE_DEG))
            && matches!(kind, FaultKind::Open | FaultKind::Short)
        {
            severity = Severity::Critical;
        }
        if change_db < 0.0 {
            kind = if base.is_some() {
                kind
            } else {
                FaultKind::Unknown
            };
        }
        let p = place(&chain, x);
        let what = if change_db < 0.0 {
            format!(
                "reflection fell by {:.1} dB ({})",
                -change_db,
                describe_model(kind, &model)
            )
        } else {
            describe_model(kind, &model)
        };
        let explanation = format!(
            "{}: {}, costs {:.2} dB at {:.2} GHz{}",
            where_text(&chain, &p),
            what,
            net_drop,
            f_ref / 1e9,
            if ghost {
                " (may be a multiple reflection of stronger events)"
            } else {
                ""
            }
        );
        findings.push(Finding {
            rank: 0,
            place: p,
            kind,
            severity,
            reflection_db: db(refl),
            change_db,
            phase_change_deg: phase_deg,
            mismatch_loss_db: ml,
            power_drop_db: net_drop,
            uncertainty_m: 2.0 * sigma_x,
            confidence: confidence(snr, model.fit_error),
            model,
            likely_ghost: ghost,
            explanation,
        });
        Ok(())
    };
    let matched_c: Vec<Option<usize>> = (0..c.events.len())
        .map(|j| all_pairs.iter().find(|p| p.1 == j).map(|p| p.0))
        .collect();
    for (j, ec) in c.events.iter().enumerate() {
        let x = to_x_c(ec.delay_s);
        let base = matched_c[j].map(|i| (b.events[i].magnitude, b.h(b.events[i].delay_s)));
        consider(
            x,
            ec.delay_s,
            ec.magnitude,
            c.h(ec.delay_s),
            base,
            ec.ghost_of.is_some(),
            &mut engine,
        )?;
    }
    // Baseline events with no partner: the reflection there fell.
    for (i, eb) in b.events.iter().enumerate() {
        if all_pairs.iter().any(|p| p.0 == i) {
            continue;
        }
        let x = to_x_b(eb.delay_s);
        let d_c = fit.chain.delay_to(x, Which::Current, None);
        let hc = c.h(d_c);
        let mag_c = hc.norm().max(super::detect::NOISE_SIGMAS * c.sigma_at(d_c));
        consider(
            x,
            d_c,
            mag_c,
            hc,
            Some((eb.magnitude, b.h(eb.delay_s))),
            eb.ghost_of.is_some(),
            &mut engine,
        )?;
    }
    if behind > 0 {
        warnings.push(Warning::new(
            "events-behind-device",
            format!("{behind} event(s) lie behind a part reflection cannot see through; none is claimed"),
            "sweep from the other end of the line, or through the device's own port",
        ));
    }
    findings.sort_by(|a, b| {
        b.power_drop_db
            .total_cmp(&a.power_drop_db)
            .then(b.severity.cmp(&a.severity))
            .then(b.confidence.total_cmp(&a.confidence))
    });
    for (k, f) in findings.iter_mut().enumerate() {
        f.rank = k + 1;
    }
    let power = power_check(
        baseline.network,
        current.network,
        cfg.observed_drop_db,
        &findings,
    );
    let resolution_m = res_s * speed_at(&fit.chain, 0.0, Which::Current);
    Ok(CompareReport {
        line: chain.name.clone(),
        baseline: baseline.name.to_string(),
        current: current.name.to_string(),
        states,
        resolution_m,
        reference_hz: f_ref,
        alignment: fitted.report.clone(),
        findings,
        not_visible: not_visible(&chain, &c, Which::Current, f_c),
        power,
        warnings,
        plot: PlotData::default(),
    }
    .with_plot(
        &fit.chain,
        &[
            (&b, Which::Baseline, baseline.name),
            (&c, Which::Current, current.name),
        ],
    ))
}

/// Traces in as-built metres and the chain's marks, for a plot.
fn plot_data(
    chain: &ChainView,
    sweeps: &[(&SweepAnalysis, Which, &str)],
    extra: &[(f64, String)],
) -> PlotData {
    let traces = sweeps
        .iter()
        .map(|(a, which, name)| {
            let x: Vec<f64> = (0..a.mag.len())
                .map(|i| chain.position_of(a.t0 + i as f64 * a.dt, *which, None))
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

/// List every discontinuity one sweep shows, explained (`locate`).
pub fn locate(
    sweep: Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
) -> Result<LocateReport, CompareError> {
    let s = s11_of(&sweep)?;
    let f = &sweep.network.freqs_hz;
    let chain = sized(chain, &[f]);
    let mut engine = TraceEngine::new();
    let res0 = super::analysis::lobe_shape(&cfg.window, f[f.len() - 1] - f[0]).1;
    let a = SweepAnalysis::new(
        f,
        &s,
        &cfg.window,
        t_max(&chain, Which::Current, res0),
        &chain,
        Which::Current,
        &mut engine,
    )?;
    let f_ref = cfg.reference_hz.unwrap_or_else(|| band_centre(f));
    let f_c = band_centre(f);
    let mut warnings = a.warnings.clone();
    let visible_end = chain.visible_end_m();
    let mut events = Vec::new();
    for e in &a.events {
        let x = chain.position_of(e.delay_s, Which::Current, None);
        let speed = speed_at(&chain, x, Which::Current);
        let res_m = a.resolution_s * speed;
        let snr = a.snr(e.magnitude, e.delay_s);
        let comp = 10f64.powf(chain.loss_to_db(x, f_c, Which::Current) / 20.0);
        let visible = !(chain.as_built && x > visible_end + res_m) && comp <= MAX_COMPENSATION;
        let (fl, gl) = a.local_reflection(e.delay_s, x, &chain, Which::Current, &mut engine)?;
        let fits = a.fit_local(&fl, &gl, chain.impedance_ohm);
        let delta = if fits[0].fit_error <= MAX_FIT_ERROR {
            fits[0].delta_s
        } else {
            0.0
        };
        let x = chain.position_of(e.delay_s + delta, Which::Current, None);
        let sigma_x = position_sigma(res_m, snr, delta * speed, f64::NAN, x, chain.as_built);
        let (kind, model, best) = classify(
            &fits,
            &chain,
            x,
            (2.0 * sigma_x).max(res_m),
            (fl[0], fl[fl.len() - 1]),
        );
        let (drop, ml) = costs(best, &fl, &gl, chain.impedance_ohm, f_ref);
        let severity = if matches!(kind, FaultKind::Open | FaultKind::Short) {
            Severity::Critical
        } else {
            Severity::from_drop_db(drop)
        };
        let p = place(&chain, x);
        let explanation = format!(
            "{}: {}, costs {:.2} dB at {:.2} GHz{}{}",
            where_text(&chain, &p),
            describe_model(kind, &model),
            drop,
            f_ref / 1e9,
            if e.ghost_of.is_some() {
                " (may be a multiple reflection of stronger events)"
            } else {
                ""
            },
            if visible {
                ""
            } else {
                " (not visible: not claimed)"
            }
        );
        events.push(Event {
            place: p,
            kind,
            severity,
            reflection_db: db(e.magnitude),
            mismatch_loss_db: ml,
            power_drop_db: drop,
            uncertainty_m: 2.0 * sigma_x,
            confidence: confidence(snr, model.fit_error),
            model,
            likely_ghost: e.ghost_of.is_some(),
            visible,
            explanation,
        });
    }
    if !chain.as_built {
        warnings.push(Warning::new(
            "no-line-file",
            "no line file: positions are metres of one uniform line and reflections are not loss-compensated",
            "pass --line LINE for as-built positions, element names and compensated reflections",
        ));
    }
    let resolution_m = a.resolution_s * speed_at(&chain, 0.0, Which::Current);
    Ok(LocateReport {
        line: chain.name.clone(),
        sweep: sweep.name.to_string(),
        state: sweep.state,
        resolution_m,
        reference_hz: f_ref,
        events,
        not_visible: not_visible(&chain, &a, Which::Current, f_c),
        warnings,
        plot: plot_data(&chain, &[(&a, Which::Current, sweep.name)], &[]),
    })
}
