//! A finding's evidence as a figure: the gated local reflection the comparator read at the finding's
//! place, against frequency, with the fitted lumped model's reflection over it (`compare::evidence`).
//! One small figure per finding above info (per anomaly of `locate`), the most important first, at most
//! [`MAX_EVIDENCE_FIGURES`].
//!
//! Conventions: x is frequency in GHz; y is 20 log10 |Gamma|, dB, of the local reflection moved to the
//! event's plane (loss-compensated when the trace was).

use super::plot::{Figure, Series};
use super::views::{file_name, place_label};
use crate::compare::report::{CompareReport, Evidence, LocateReport, ModelSummary, Place};
use crate::compare::{FaultKind, Severity};

/// Size of an evidence figure, px: small, several to a page.
pub const EVIDENCE_FIGURE_SIZE: (u32, u32) = (640, 380);
/// The most evidence figures a report draws (the first findings by rank; the table lists them all).
pub const MAX_EVIDENCE_FIGURES: usize = 4;
/// The most an evidence plot shows under its strongest point, dB (a fit's misfit beyond it is noise)...
pub const EVIDENCE_DEPTH_DB: f64 = 40.0;
/// ... and the least range it shows, dB, so a flat curve is not blown up to fill the plot (our choice).
pub const EVIDENCE_MIN_RANGE_DB: f64 = 6.0;

/// The series names of an evidence figure, measured first.
pub const MEASURED_NAME: &str = "measured (gated at the finding)";

/// One evidence figure and what it is of (`#1 J2 pin-gap`).
#[derive(Debug, Clone, PartialEq)]
pub struct EvidenceFigure {
    pub label: String,
    pub figure: Figure,
}

/// A value with an SI prefix, three significant figures (`12.3 fF`, `0.84 ohm`).
pub fn si_text(value: f64, unit: &str) -> String {
    if unit.is_empty() || value == 0.0 || !value.is_finite() {
        return format!("{value:.3}{}{unit}", if unit.is_empty() { "" } else { " " });
    }
    const PREFIXES: [(f64, &str); 9] = [
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "u"),
        (1e-9, "n"),
        (1e-12, "p"),
        (1e-15, "f"),
    ];
    let (scale, p) = PREFIXES
        .iter()
        .find(|(s, _)| value.abs() >= *s)
        .copied()
        .unwrap_or((1e-15, "f"));
    let v = value / scale;
    let digits = if v.abs() >= 100.0 {
        0
    } else if v.abs() >= 10.0 {
        1
    } else {
        2
    };
    format!("{v:.digits$} {p}{unit}")
}

/// The model as the legend names it: `model: series-capacitance 12.3 fF (misfit 4 %)`.
pub fn model_name(m: &ModelSummary) -> String {
    let value = if m.unit.is_empty() {
        if m.value > 0.0 && m.value < 1.0 {
            format!(" |rho| {:.3}", m.value)
        } else {
            String::new()
        }
    } else {
        format!(" {}", si_text(m.value, m.unit))
    };
    format!(
        "model: {}{value} (misfit {:.0} %)",
        m.model.name(),
        100.0 * m.fit_error
    )
}

/// The label of a finding or event: rank, element (or distance) and kind.
pub fn evidence_label(rank: usize, place: &Place, kind: FaultKind) -> String {
    format!("#{rank} {} {}", place_label(place), kind.name())
}

/// The evidence figure of one finding: `sweep` names the sweep (and its state) it was read in.
pub fn evidence_figure(label: &str, sweep: &str, ev: &Evidence, model: &ModelSummary) -> Figure {
    let ghz: Vec<f64> = ev.freqs_hz.iter().map(|f| f / 1e9).collect();
    let db = |v: &[f64]| -> Vec<f64> { v.iter().map(|g| 20.0 * g.log10()).collect() };
    let mut fig = Figure::new(
        format!("{label}: local reflection in {sweep}"),
        "frequency (GHz)",
        "|local reflection| (dB)",
    );
    fig.size = EVIDENCE_FIGURE_SIZE;
    fig.series = vec![
        Series {
            name: MEASURED_NAME.to_string(),
            x: ghz.clone(),
            y: db(&ev.measured),
        },
        Series {
            name: model_name(model),
            x: ghz,
            y: db(&ev.model),
        },
    ];
    let (lo, hi) = fig
        .series
        .iter()
        .flat_map(|s| s.y.iter().copied())
        .filter(|v| v.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(v), b.max(v))
        });
    if hi.is_finite() {
        let lo = lo.max(hi - EVIDENCE_DEPTH_DB);
        let pad = 0.5 * (EVIDENCE_MIN_RANGE_DB - (hi - lo)).max(0.0) + 0.5;
        fig.y_range = Some((lo - pad, hi + pad));
    }
    fig
}

/// The evidence figures of a comparison: its findings above info, by rank.
pub fn compare_evidence(r: &CompareReport) -> Vec<EvidenceFigure> {
    let sweep = format!("{} ({})", file_name(&r.current), r.states.current);
    r.findings
        .iter()
        .filter(|f| f.severity > Severity::Info && !f.evidence.is_empty())
        .take(MAX_EVIDENCE_FIGURES)
        .map(|f| {
            let label = evidence_label(f.rank, &f.place, f.kind);
            EvidenceFigure {
                figure: evidence_figure(&label, &sweep, &f.evidence, &f.model),
                label,
            }
        })
        .collect()
}

/// The evidence figures of one sweep's reading: its ranked anomalies above info that are seen, by rank.
pub fn locate_evidence(r: &LocateReport) -> Vec<EvidenceFigure> {
    let sweep = format!("{} ({})", file_name(&r.sweep), r.state);
    let mut ranked: Vec<(usize, _)> = r
        .events
        .iter()
        .filter(|e| e.visible && e.severity > Severity::Info && !e.evidence.is_empty())
        .filter_map(|e| e.rank.map(|k| (k, e)))
        .collect();
    ranked.sort_by_key(|(k, _)| *k);
    ranked
        .into_iter()
        .take(MAX_EVIDENCE_FIGURES)
        .map(|(k, e)| {
            let label = evidence_label(k, &e.place, e.kind);
            EvidenceFigure {
                figure: evidence_figure(&label, &sweep, &e.evidence, &e.model),
                label,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_carry_their_prefix() {
        assert_eq!(si_text(1.234e-14, "F"), "12.3 fF");
        assert_eq!(si_text(0.84, "ohm"), "840 mohm");
        assert_eq!(si_text(75.0, "ohm"), "75.0 ohm");
        assert_eq!(si_text(3.2e-10, "H"), "320 pH");
    }
}
