//! `locate`: every discontinuity one sweep shows, placed on the line and explained.
//!
//! With a line file, the echoes the line is built to give (its connectors' small mismatches, its designed
//! open or short far end) are told apart from anomalies by locating the nominal line, simulated without
//! faults over the same band and in the same state ([`expected_echoes`], [`mark_expected`]; the grid in
//! `job::locate_network`); anomalies are ranked as `compare` ranks findings ([`rank_events`]).

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, Which};
use super::explain::*;
use super::place::{place, position_sigma, speed_at, where_text};
use super::report::*;
use super::run::plot_data;
use super::severity::Severity;
use super::sweep::{
    analyse_through, band_centre, db, no_line_file, shows_gain, sized, AnalysisConfig, PathGain,
    Sweep,
};
use super::CompareError;
use crate::line::Load;
use crate::transform::TraceEngine;

/// List every discontinuity one sweep shows, explained (`locate`).
pub fn locate(
    sweep: Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
) -> Result<LocateReport, CompareError> {
    locate_in(sweep, chain, cfg, true, &mut TraceEngine::new())
}

/// [`locate`] on `engine`'s transform plans and window coefficients (one engine for a sweep's state check,
/// its location and its nominal line's: the result does not depend on what the engine already holds).
/// Without `evidence`, the events carry no evidence curves (for a caller that reads only their places,
/// kinds and costs).
pub fn locate_in(
    sweep: Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    evidence: bool,
    engine: &mut TraceEngine,
) -> Result<LocateReport, CompareError> {
    let f = &sweep.network.freqs_hz;
    let (a, chain) = analysed(&sweep, chain, cfg, engine)?;
    let f_ref = cfg.reference_hz.unwrap_or_else(|| band_centre(f));
    let f_c = band_centre(f);
    let mut warnings = a.warnings.clone();
    let visible_end = chain.visible_end_m();
    // Where the line's far part may be folded back from beyond the record (a line longer than it).
    let folded = super::far_end::folded_until(&chain, &a, Which::Current);
    let mut events = Vec::new();
    for e in &a.events {
        let x = chain.position_of(e.delay_s, Which::Current, None);
        let speed = speed_at(&chain, x, Which::Current);
        let res_m = a.resolution_s * speed;
        let snr = a.snr(e.magnitude, e.delay_s);
        // Detected means seen, unless it lies behind a part reflection cannot see through (then it is a
        // multiple reflection or leakage, never the part's far side).
        let visible = !(chain.as_built && x > visible_end + res_m);
        let (fl, gl) = a.local_reflection(e.delay_s, x, &chain, Which::Current, engine)?;
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
        let folded_here = e.delay_s < folded;
        let severity = if folded_here {
            Severity::Info
        } else if matches!(kind, FaultKind::Open | FaultKind::Short) {
            Severity::Critical
        } else {
            Severity::from_drop_db(drop)
        };
        let p = place(&chain, x);
        let explanation = format!(
            "{}: {}, reflects {:.1} dB, costs {:.2} dB at {:.2} GHz{}{}",
            where_text(&chain, &p),
            describe_model(kind, &model),
            db(e.magnitude),
            drop,
            f_ref / 1e9,
            if e.ghost_of.is_some() {
                " (may be a multiple reflection of stronger events)"
            } else {
                ""
            },
            if !visible {
                " (not visible: not claimed)"
            } else if folded_here {
                " (may be the line's far part, folded back from beyond the sweep's alias-free range: not \
                 claimed)"
            } else {
                ""
            }
        );
        let evidence = if evidence {
            Evidence::new(&fl, &gl, &model, chain.impedance_ohm)
        } else {
            Evidence::default()
        };
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
            rank: None,
            expected: false,
            expected_reflection_db: None,
            evidence,
        });
    }
    if !a.scale_known {
        // An amplifier in the path and nothing to set the reflections' size by: where the events are is
        // known, what they cost is not.
        let capped = events
            .iter()
            .filter(|e| e.severity > Severity::Info)
            .count();
        for e in events.iter_mut().filter(|e| e.severity > Severity::Info) {
            e.severity = Severity::Info;
            e.power_drop_db = 0.0;
            e.explanation
                .push_str(super::sweep::GAIN_SCALE_UNKNOWN_NOTE);
        }
        warnings.push(super::sweep::gain_scale_unknown(capped));
    }
    warnings.extend(no_line_file(&chain));
    let resolution_m = a.resolution_s * speed_at(&chain, 0.0, Which::Current);
    let (not_visible, capped) = not_visible(&chain, &a, Which::Current, f_c);
    warnings.extend(capped_warning(&capped));
    Ok(LocateReport {
        line: chain.name.clone(),
        sweep: sweep.name.to_string(),
        state: sweep.state,
        state_basis: "given".to_string(),
        resolution_m,
        reference_hz: f_ref,
        events,
        not_visible,
        noise_rms: a.sigma,
        visibility: Vec::new(),
        connector_lengths: None,
        warnings,
        plot: plot_data(&chain, &[(&a, Which::Current, sweep.name)], &[]),
    })
}

/// The sweep analysed on `chain`, and `chain` with its joints pinned where the sweep shows them (the
/// positions in the line file's terms): the analysis again on the pinned chain where they moved enough.
fn analysed(
    sweep: &Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    engine: &mut TraceEngine,
) -> Result<(SweepAnalysis, ChainView), CompareError> {
    let chain = sized(chain, &[&sweep.network.freqs_hz]);
    let amplified = chain.gain_in_path || shows_gain(sweep)?;
    let mut a = analyse_through(
        sweep,
        &chain,
        cfg,
        Which::Current,
        engine,
        PathGain::found(amplified),
        None,
    )?;
    let anchors = super::anchor::find(&chain, &a, Which::Current);
    if anchors.is_empty() {
        return Ok((a, chain));
    }
    let anchored = super::anchor::anchored(&chain, &anchors, Which::Current);
    if super::anchor::worth_reanalysing(&anchors, a.resolution_s) {
        // The anchors move delays, not losses: the pieces' compensations are the first analysis' (the
        // same result as a fresh analysis, bit for bit; `SweepAnalysis::again`).
        a = analyse_through(
            sweep,
            &anchored,
            cfg,
            Which::Current,
            engine,
            PathGain::found(amplified),
            Some(&a),
        )?;
    }
    Ok((a, anchored))
}

/// An echo the line file expects: one event of its nominal line's simulated sweep ([`expected_echoes`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExpectedEcho {
    /// As-built distance from the port, m.
    pub distance_m: f64,
    /// Its 95 % interval's half-width, m.
    pub uncertainty_m: f64,
    /// Its loss-compensated reflection, dB.
    pub reflection_db: f64,
    /// The open or short the line file ends in, for the echo of that end; `None` for every other echo.
    pub termination: Option<FaultKind>,
}

/// The echoes the nominal line's simulated sweep shows, located as [`locate_in`] locates a sweep's events
/// but without their lumped fits: where and how strong each is, from its peak, and which one is the open
/// or short the line file ends in (read from the file, the echo nearest the visible end within its
/// interval or a resolution cell). That is all [`mark_expected`] reads; the fits, about 60 % of locating
/// the demo line's six nominal echoes, would only move each place by a fraction of a cell and name kinds
/// the file states.
pub fn expected_echoes(
    sweep: Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    engine: &mut TraceEngine,
) -> Result<Vec<ExpectedEcho>, CompareError> {
    let (a, chain) = analysed(&sweep, chain, cfg, engine)?;
    let end = chain.visible_end_m();
    let load = chain.first_blocking().and_then(|i| chain.segments[i].load);
    let end_kind = match load {
        Some(Load::Open) => Some(FaultKind::Open),
        Some(Load::Short) => Some(FaultKind::Short),
        _ => None,
    };
    let mut echoes: Vec<ExpectedEcho> = a
        .events
        .iter()
        .map(|e| {
            let x = chain.position_of(e.delay_s, Which::Current, None);
            let res_m = a.resolution_s * speed_at(&chain, x, Which::Current);
            let snr = a.snr(e.magnitude, e.delay_s);
            let sigma_x = position_sigma(res_m, snr, 0.0, f64::NAN, x, chain.as_built);
            ExpectedEcho {
                distance_m: x,
                uncertainty_m: 2.0 * sigma_x,
                reflection_db: db(e.magnitude),
                termination: None,
            }
        })
        .collect();
    if let Some(kind) = end_kind {
        let res_m = a.resolution_s * speed_at(&chain, end, Which::Current);
        let nearest = echoes
            .iter_mut()
            .filter(|n| (n.distance_m - end).abs() <= n.uncertainty_m.max(res_m))
            .min_by(|p, q| {
                (p.distance_m - end)
                    .abs()
                    .total_cmp(&(q.distance_m - end).abs())
            });
        if let Some(n) = nearest {
            n.termination = Some(kind);
        }
    }
    Ok(echoes)
}

/// How much stronger than the nominal line's own echo at the same place an event may read and still be the
/// echo the line file expects, dB: a connector's mismatch differs from pair to pair and from mating to
/// mating by a few dB (common practice, no source). A fault at a joint that reads within it cannot be told
/// from the joint by one sweep; `compare` against an earlier sweep can.
pub const EXPECTED_MARGIN_DB: f64 = 6.0;

/// Mark the events the line file expects: those the nominal line's events (`nominal`, located on the
/// nominal line's simulated sweep) show at the same place (within the larger of either's 95 % interval and
/// `resolution_m`), at most [`EXPECTED_MARGIN_DB`] weaker, and not an open where the nominal line has a
/// short (its designed termination) or the reverse. Expected events become `info`: their cost is the
/// design's, not a fault's.
pub fn mark_expected(events: &mut [Event], nominal: &[ExpectedEcho], resolution_m: f64) {
    for e in events.iter_mut() {
        let twin = nominal
            .iter()
            .filter(|n| {
                let tol = e.uncertainty_m.max(n.uncertainty_m).max(resolution_m);
                (n.distance_m - e.place.distance_m).abs() <= tol
            })
            .max_by(|a, b| a.reflection_db.total_cmp(&b.reflection_db));
        let Some(n) = twin else { continue };
        e.expected_reflection_db = Some(n.reflection_db);
        // An open where the design has a short, or a short where it has an open, is never the design;
        // a termination that reads weaker than designed (shadowed by a fault before it) still is.
        let terminations = [FaultKind::Open, FaultKind::Short];
        let swapped = n
            .termination
            .is_some_and(|k| terminations.contains(&e.kind) && k != e.kind);
        if !swapped && e.reflection_db <= n.reflection_db + EXPECTED_MARGIN_DB {
            e.expected = true;
            e.severity = Severity::Info;
            e.explanation.push_str(&format!(
                " (an echo the line file expects: its nominal line reads {:.1} dB here)",
                n.reflection_db
            ));
        }
    }
}

/// Rank the anomalies as `compare` ranks findings: what is visible and not a likely ghost first, then by
/// severity, predicted drop and reflection; ranks 1, 2, ... without gaps. Expected echoes get none. The
/// events keep their order along the line.
pub fn rank_events(events: &mut [Event]) {
    let mut order: Vec<usize> = (0..events.len()).filter(|&i| !events[i].expected).collect();
    let claimed = |e: &Event| e.visible && !e.likely_ghost;
    order.sort_by(|&i, &j| {
        let (a, b) = (&events[i], &events[j]);
        claimed(b)
            .cmp(&claimed(a))
            .then(b.severity.cmp(&a.severity))
            .then(b.power_drop_db.total_cmp(&a.power_drop_db))
            .then(b.reflection_db.total_cmp(&a.reflection_db))
    });
    for e in events.iter_mut() {
        e.rank = None;
    }
    for (k, &i) in order.iter().enumerate() {
        events[i].rank = Some(k + 1);
    }
}
