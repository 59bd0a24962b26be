//! A finding's evidence: the gated local reflection at the finding against frequency, with the fitted
//! lumped model over it, for the shipped sample's J2 pin gap (`in-07-cold.s1p` against `in-07-warm.s1p`,
//! the cold sweep simulated with `J2:gap=15um`). Checked on the figure's numbers, not its pixels.

use coldtrace::compare::lumped::ModelType;
use coldtrace::compare::report::CompareReport;
use coldtrace::compare::{FaultKind, Severity};
use coldtrace::report::evidence::{compare_evidence, locate_evidence, MEASURED_NAME};
use coldtrace::report::render_svg;
#[path = "common/first_hour.rs"]
mod first_hour;
use first_hour::{demo_compare, demo_locate, sample};

fn compare_report() -> CompareReport {
    demo_compare()
}

/// RMS of (a - b) over RMS of a.
fn relative_misfit(a: &[f64], b: &[f64]) -> f64 {
    let num: f64 = a.iter().zip(b).map(|(x, y)| (x - y).powi(2)).sum();
    let den: f64 = a.iter().map(|x| x * x).sum();
    (num / den).sqrt()
}

#[test]
fn the_pin_gap_evidence_has_the_measurement_and_its_model_close_together() {
    let r = compare_report();
    let f = &r.findings[0];
    assert_eq!(
        (f.place.element.as_str(), f.kind),
        ("J2", FaultKind::PinGap)
    );
    assert!(f.severity > Severity::Info);
    assert_eq!(f.model.model, ModelType::SeriesCapacitance);
    let ev = &f.evidence;
    let n = ev.freqs_hz.len();
    assert!(n > 100, "{n} frequencies");
    assert_eq!((ev.measured.len(), ev.model.len()), (n, n));
    // The inner band of the sweep (0.5 to 10 GHz in the file's header).
    assert!(ev.freqs_hz[0] > 0.5e9 && ev.freqs_hz[n - 1] < 10e9);
    assert!(ev.freqs_hz.windows(2).all(|w| w[1] > w[0]));
    // The model is the series capacitance's reflection, Gamma = 1 / (1 + j 2 w C Z0) between matched lines
    // (Pozar, Microwave Engineering, 4th ed., sec. 4.4, from memory), written here independently.
    let c = f.model.value;
    for (fk, m) in ev.freqs_hz.iter().zip(&ev.model) {
        let x = 2.0 * 2.0 * std::f64::consts::PI * fk * c * 50.0;
        let want = 1.0 / (1.0 + x * x).sqrt();
        assert!(
            (m - want).abs() < 1e-9 * want.max(1.0),
            "{fk} Hz: {m} vs {want}"
        );
    }
    // A pin gap reflects more at low frequency (an open at DC): both curves fall across the band.
    assert!(ev.measured[0] > ev.measured[n - 1] && ev.model[0] > ev.model[n - 1]);
    // The model close to the measurement: the relative RMS misfit of the magnitudes is within the fit's
    // own complex misfit (the magnitude drops the phase's share) and under 10 % (a wrong model or value, or
    // a curve read at another place, misses by far more; our tolerance).
    let misfit = relative_misfit(&ev.measured, &ev.model);
    println!(
        "C = {c:e} F, fit_error {:.4}, |Gamma| misfit {misfit:.4}, measured {:.4}..{:.4}, model {:.4}..{:.4}",
        f.model.fit_error,
        ev.measured[0],
        ev.measured[n - 1],
        ev.model[0],
        ev.model[n - 1]
    );
    assert!(
        misfit <= f.model.fit_error + 1e-9,
        "{misfit} vs {}",
        f.model.fit_error
    );
    assert!(misfit < 0.1, "{misfit}");
    // Point by point in dB, at most 1 dB apart over the band (our tolerance).
    let worst_db = ev
        .measured
        .iter()
        .zip(&ev.model)
        .map(|(a, b)| (20.0 * (a / b).log10()).abs())
        .fold(0.0, f64::max);
    assert!(worst_db < 1.0, "{worst_db} dB");
}

#[test]
fn the_evidence_figure_is_labelled_by_element_and_kind() {
    let r = compare_report();
    let figs = compare_evidence(&r);
    let above = r
        .findings
        .iter()
        .filter(|f| f.severity > Severity::Info)
        .count();
    assert_eq!(
        figs.len(),
        above.min(coldtrace::report::evidence::MAX_EVIDENCE_FIGURES)
    );
    let e = &figs[0];
    assert_eq!(e.label, "#1 J2 pin-gap");
    assert!(
        e.figure.title.starts_with("#1 J2 pin-gap"),
        "{}",
        e.figure.title
    );
    assert!(
        e.figure.title.contains("in-07-cold.s1p (cold)"),
        "{}",
        e.figure.title
    );
    assert_eq!(e.figure.x_label, "frequency (GHz)");
    let names: Vec<&str> = e.figure.series.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names[0], MEASURED_NAME);
    assert!(
        names[1].starts_with("model: series-capacitance ") && names[1].contains("fF"),
        "{}",
        names[1]
    );
    // The figure's y values are the evidence in dB, x in GHz.
    let ev = &r.findings[0].evidence;
    assert!((e.figure.series[0].x[0] - ev.freqs_hz[0] / 1e9).abs() < 1e-12);
    assert!((e.figure.series[1].y[0] - 20.0 * ev.model[0].log10()).abs() < 1e-9);
    let svg = render_svg(&e.figure).unwrap();
    assert!(svg.contains("J2 pin-gap") && svg.contains("series-capacitance"));
}

#[test]
fn locate_draws_the_anomalys_evidence() {
    let r = demo_locate(sample("in-07-cold.s1p"));
    let figs = locate_evidence(&r);
    assert!(!figs.is_empty());
    assert!(figs[0].label.contains("J2 pin-gap"), "{}", figs[0].label);
    let e = r.events.iter().find(|e| e.rank == Some(1)).unwrap();
    assert!(relative_misfit(&e.evidence.measured, &e.evidence.model) < 0.1);
}
