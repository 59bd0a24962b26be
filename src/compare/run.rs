//! The comparator's procedure: analyse both sweeps, align them on shared landmarks, match their events,
//! decide what changed, explain each change with a lumped model, rank by what it costs.
//!
//! Decision rules (each a named constant below, documented in docs/method.md):
//! - a landmark is an event seen in both sweeps at the model's predicted place, at least
//!   [`LANDMARK_SNR`](super::landmarks::LANDMARK_SNR) above the noise, with an amplitude change under [`LANDMARK_MAX_CHANGE_DB`](super::landmarks::LANDMARK_MAX_CHANGE_DB);
//! - an event changed when its reflection changed by [`CHANGE_DB`] or more, or (both sweeps in the same
//!   state) its phase turned by [`PHASE_CHANGE_DEG`] or more, or it is new: not in the baseline and at least
//!   [`CHANGE_DB`] above the baseline's response at that place;
//! - severity comes from the predicted drop of transmitted power (see `severity`), net of what the baseline
//!   already lost there; an open or short that appeared is `critical`.

use super::analysis::SweepAnalysis;
use super::chain::{ChainView, SegmentKind, Which};
use super::explain::*;
use super::landmarks::*;
use super::report::*;
use super::severity::{mismatch_loss_db, Severity};
use super::CompareError;
use crate::transform::{TraceEngine, Window, C0_M_PER_S};
use crate::{Network, Warning};
use num_complex::Complex64;

/// Change of reflection that counts as a change, dB. Cold connectors' own reflections move by a dB or two
/// as their parts contract (common practice, no source).
pub const CHANGE_DB: f64 = 3.0;

/// Phase turn that counts as a change when both sweeps are in the same state, degrees.
pub const PHASE_CHANGE_DEG: f64 = 90.0;

/// Relative tolerance of as-built lengths (0.2 %, a cut cable's length to a couple of millimetres a metre;
/// common practice, no source).
pub const LENGTH_TOLERANCE: f64 = 2e-3;

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

/// One sweep analysed on `chain` in `which` state, up to a little past the chain's far end.
pub(super) fn analyse(
    sweep: &Sweep,
    chain: &ChainView,
    cfg: &AnalysisConfig,
    which: Which,
    engine: &mut TraceEngine,
) -> Result<SweepAnalysis, CompareError> {
    let s = s11_of(sweep)?;
    let f = &sweep.network.freqs_hz;
    let res0 = super::analysis::lobe_shape(&cfg.window, f[f.len() - 1] - f[0]).1;
    SweepAnalysis::new(
        f,
        &s,
        &cfg.window,
        t_max(chain, which, res0),
        chain,
        which,
        engine,
    )
}

/// The warning every result of a line of unknown construction carries.
pub(super) fn no_line_file(chain: &ChainView) -> Option<Warning> {
    (!chain.as_built).then(|| {
        Warning::new(
            "no-line-file",
            "no line file: positions are metres of one uniform line and reflections are not loss-compensated",
            "pass --line LINE for as-built positions, element names and compensated reflections",
        )
    })
}

pub(super) fn s11_of(s: &Sweep) -> Result<Vec<Complex64>, CompareError> {
    if s.network.is_empty() {
        return Err(CompareError::Invalid(format!(
            "{}: the sweep has no points",
            s.name
        )));
    }
    Ok(s.network.s11())
}

/// Round-trip delay up to which a sweep is analysed: a little past the far end in its state.
pub(super) fn t_max(chain: &ChainView, which: Which, resolution_s: f64) -> f64 {
    let t = chain.delay_to(chain.length_m(), which, None);
    if chain.as_built {
        t * 1.02 + 6.0 * resolution_s
    } else {
        // A uniform line of unknown construction is sized to the alias-free range already.
        t
    }
}

/// A uniform chain long enough for the whole alias-free range of both sweeps.
pub(super) fn sized(chain: &ChainView, freqs: &[&[f64]]) -> ChainView {
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
pub(super) fn speed_at(chain: &ChainView, x: f64, which: Which) -> f64 {
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

pub(super) fn band_centre(freqs: &[f64]) -> f64 {
    0.5 * (freqs[0] + freqs[freqs.len() - 1])
}

pub(super) fn db(a: f64) -> f64 {
    20.0 * a.max(1e-20).log10()
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
    let chain = sized(
        chain,
        &[&baseline.network.freqs_hz, &current.network.freqs_hz],
    );
    let mut engine = TraceEngine::new();
    let fc = &current.network.freqs_hz;
    let b = analyse(&baseline, &chain, cfg, Which::Baseline, &mut engine)?;
    let c = analyse(&current, &chain, cfg, Which::Current, &mut engine)?;
    let f_ref = cfg.reference_hz.unwrap_or_else(|| band_centre(fc));
    let mut warnings: Vec<Warning> = b.warnings.iter().chain(&c.warnings).cloned().collect();
    warnings.extend(no_line_file(&chain));

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
    // A new open or short is as far as reflection now sees: nothing behind it is claimed.
    let wall = findings
        .iter()
        .filter(|f| {
            matches!(f.kind, FaultKind::Open | FaultKind::Short) && f.severity == Severity::Critical
        })
        .map(|f| {
            f.place.distance_m
                + f.uncertainty_m
                    .max(res_s * speed_at(&fit.chain, f.place.distance_m, Which::Current))
        })
        .fold(f64::INFINITY, f64::min);
    let before = findings.len();
    findings.retain(|f| f.place.distance_m <= wall);
    if findings.len() < before {
        warnings.push(Warning::new(
            "behind-open-or-short",
            format!(
                "{} change(s) behind the open or short at {} are not claimed: reflection cannot see past it",
                before - findings.len(),
                super::explain::metres(wall)
            ),
            "mend the open or short first, then sweep again",
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
    let (not_visible, capped) = not_visible(&chain, &c, Which::Current, f_c);
    warnings.extend(capped_warning(&capped));
    Ok(CompareReport {
        line: chain.name.clone(),
        baseline: baseline.name.to_string(),
        current: current.name.to_string(),
        states,
        resolution_m,
        reference_hz: f_ref,
        alignment: fitted.report.clone(),
        findings,
        not_visible,
        power,
        noise_rms: c.sigma,
        visibility: Vec::new(),
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
