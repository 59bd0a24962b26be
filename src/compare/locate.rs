//! `locate`: every discontinuity one sweep shows, placed on the line and explained.

use super::chain::{ChainView, Which};
use super::explain::*;
use super::place::{place, position_sigma, speed_at, where_text};
use super::report::*;
use super::run::plot_data;
use super::severity::Severity;
use super::sweep::{analyse, band_centre, db, no_line_file, sized, AnalysisConfig, Sweep};
use super::CompareError;
use crate::transform::TraceEngine;

/// List every discontinuity one sweep shows, explained (`locate`).
pub fn locate(
    sweep: Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
) -> Result<LocateReport, CompareError> {
    let f = &sweep.network.freqs_hz;
    let chain = sized(chain, &[f]);
    let mut engine = TraceEngine::new();
    let mut a = analyse(&sweep, &chain, cfg, Which::Current, &mut engine)?;
    // Positions in the line file's terms: its joints pinned where the sweep shows them.
    let anchors = super::anchor::find(&chain, &a, Which::Current);
    let chain = if anchors.is_empty() {
        chain
    } else {
        let anchored = super::anchor::anchored(&chain, &anchors, Which::Current);
        if super::anchor::worth_reanalysing(&anchors, a.resolution_s) {
            a = analyse(&sweep, &anchored, cfg, Which::Current, &mut engine)?;
        }
        anchored
    };
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
        // Detected means seen, unless it lies behind a part reflection cannot see through (then it is a
        // multiple reflection or leakage, never the part's far side).
        let visible = !(chain.as_built && x > visible_end + res_m);
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
