//! Explaining one change: which lumped model and fault kind it is, what it costs, how sure its position
//! is, and the sentence a person reads; and which elements reflection cannot see.

use super::analysis::{SweepAnalysis, MAX_COMPENSATION};
use super::chain::{ChainView, SegmentKind, Which};
use super::lumped::{gap_from_capacitance, ModelFit, ModelType};
use super::report::*;
use super::severity::{drop_db, mismatch_loss_db};
use num_complex::Complex64;

/// |Gamma| in mid-band from which a fitted resistance, inductance, shunt capacitance or step is read as an
/// open or a short (0.9: a 950 ohm series resistance, or a step to 2.6 ohm; common practice, no source).
pub const NEAR_TOTAL: f64 = 0.9;

/// On a line of unknown loss, a constant real reflection at least this strong is read as an open or short
/// whose value is the apparent |Gamma| (the rest is the line's loss).
pub const UNCOMPENSATED_TERMINATION: f64 = 0.3;

/// Fit error above which no lumped model is claimed and the finding's kind is `unknown`.
pub const MAX_FIT_ERROR: f64 = 0.5;

/// Classify the best fit into a fault kind and summary.
pub(super) fn classify(
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

/// The range of power drops at `f_ref` that a real, frequency-flat reflection of a fit allows: a series
/// resistance (which dissipates as well as reflects) and an impedance step (which only reflects) give the
/// same |Gamma| and differ tenfold in cost, so a finding carries both. Other kinds: their own cost.
pub(super) fn cost_range(
    kind: FaultKind,
    model: Option<ModelFit>,
    own_drop_db: f64,
    z0: f64,
    f_ref: f64,
) -> (f64, f64) {
    let Some(m) = model else {
        return (own_drop_db, own_drop_db);
    };
    match kind {
        FaultKind::Contact | FaultKind::ImpedanceStep => {
            let g = m.model.gamma(m.value, f_ref, z0).re;
            if g.abs() >= 0.999 {
                return (own_drop_db, own_drop_db);
            }
            // The resistance and the step that give this Gamma.
            let r = 2.0 * z0 * g / (1.0 - g);
            let z = z0 * (1.0 + g) / (1.0 - g);
            let contact = if r > 0.0 {
                drop_db(ModelType::SeriesResistance.transmission(r, f_ref, z0))
            } else {
                own_drop_db
            };
            let step = drop_db(ModelType::ImpedanceStep.transmission(z, f_ref, z0));
            let (lo, hi) = (contact.min(step), contact.max(step));
            (lo.min(own_drop_db), hi.max(own_drop_db))
        }
        _ => (own_drop_db, own_drop_db),
    }
}

/// Predicted power drop at `f_ref` and band-averaged mismatch loss of a fitted model (or, with no model,
/// of the measured local reflection `g_meas`).
pub(super) fn costs(
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
            // No model: the median of the measured |Gamma| over the band (robust to the band edges, where
            // compensation lifts noise most), read as a lossless mismatch.
            let mut m: Vec<f64> = g_meas.iter().map(|g| g.norm()).collect();
            m.sort_by(|a, b| a.total_cmp(b));
            let med = m.get(m.len() / 2).copied().unwrap_or(0.0).min(0.99);
            let ml = mismatch_loss_db(med);
            (ml, ml)
        }
    }
}

/// A short sentence describing a value of a model.
pub(super) fn describe_model(kind: FaultKind, m: &ModelSummary) -> String {
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

/// Elements reflection cannot see: behind the first device, past the alias-free range, or so far behind
/// loss that even a total reflection there would stay under the detection threshold. Elements behind more
/// loss than compensation may undo are still seen, but their levels read low: `capped` lists them.
pub(super) fn not_visible(
    chain: &ChainView,
    a: &SweepAnalysis,
    which: Which,
    f_c: f64,
) -> (Vec<NotVisible>, Vec<String>) {
    let mut out = Vec::new();
    let mut capped = Vec::new();
    let block = chain.first_blocking();
    let cap_db = 20.0 * MAX_COMPENSATION.log10();
    for (i, s) in chain.segments.iter().enumerate() {
        if !chain.as_built {
            break;
        }
        let l = chain.loss_to_db(s.start_m, f_c, which);
        let threshold = super::detect::NOISE_SIGMAS * a.sigma * 10f64.powf(l / 20.0);
        let reason = if let Some(b) = block.filter(|&b| i > b) {
            Some(format!(
                "behind '{}', which reflection cannot see through",
                chain.segments[b].name
            ))
        } else if chain.delay_to(s.start_m, which, None) > a.alias_free_s {
            Some("beyond the sweep's alias-free range".to_string())
        } else if threshold >= 1.0 {
            Some(format!(
                "round-trip loss to it {l:.1} dB puts even a total reflection under the noise"
            ))
        } else {
            if l > cap_db {
                capped.push(s.name.clone());
            }
            None
        };
        if let Some(reason) = reason {
            out.push(NotVisible {
                element: s.name.clone(),
                reason,
            });
        }
    }
    (out, capped)
}

/// The warning for elements behind more loss than compensation undoes.
pub(super) fn capped_warning(capped: &[String]) -> Option<crate::Warning> {
    (!capped.is_empty()).then(|| {
        crate::Warning::new(
            "compensation-capped",
            format!(
                "behind more than {:.0} dB of round-trip loss, compensation stops at that gain: reflections in {} \
                 read lower than they are",
                20.0 * MAX_COMPENSATION.log10(),
                capped.join(", ")
            ),
            "read levels there as lower bounds, or sweep from the other end of the line",
        )
    })
}

pub(super) fn confidence(snr: f64, fit_error: f64) -> f64 {
    let s = 1.0 - (-snr / 10.0).exp();
    (s * (1.0 - fit_error.min(1.0))).clamp(0.0, 1.0)
}
