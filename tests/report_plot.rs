//! Plots a person reads: the span, the line under the axis, labels that never collide, findings marked,
//! the y axis honest about compensation. Geometry is checked as data (`report::layout`), not by pixels;
//! every figure is also drawn, which checks (debug assertion in `plot.rs`) that plotters put the plot
//! where the layout placed the labels.

use coldtrace::line::file::read_file as read_line;
use coldtrace::line::Line;
use coldtrace::report::layout::{layout, FigureLayout, Rect};
use coldtrace::report::views::{
    compare_figure, default_span, difference, last_significant_m, locate_figure, trace_figure,
};
use coldtrace::report::{render_svg, ChainStrip, Figure, Marker, Series};
use coldtrace::transform::{run_trace, TraceConfig, TraceEngine, UniformLine};
#[path = "common/first_hour.rs"]
mod first_hour;
use first_hour::{demo_compare, demo_locate, sample};
use std::path::PathBuf;

fn line() -> Line {
    read_line(&sample("in-07.toml")).unwrap()
}

fn compare_report() -> coldtrace::compare::report::CompareReport {
    demo_compare()
}

/// No two of the rectangles share a pixel.
fn assert_apart(what: &str, rects: &[(String, Rect)]) {
    for (i, (a, ra)) in rects.iter().enumerate() {
        for (b, rb) in &rects[..i] {
            assert!(
                !ra.overlaps(rb),
                "{what}: '{a}' {ra:?} overlaps '{b}' {rb:?}"
            );
        }
    }
}

fn all_labels(lay: &FigureLayout) -> Vec<(String, Rect)> {
    lay.top_labels
        .iter()
        .chain(&lay.tick_labels)
        .map(|l| (l.text.clone(), l.rect))
        .collect()
}

#[test]
fn the_line_fills_the_plot() {
    let report = compare_report();
    let line = line();
    let fig = compare_figure(&report, Some(&line), None);
    let (x0, x1) = fig.x_range.expect("a span");
    // The demo line's visible length: its elements up to the sample input (the line file's lengths).
    let length = line.length_m();
    assert!((2.6..2.9).contains(&length), "demo line length {length}");
    assert_eq!(x0, 0.0);
    assert!(x1 >= length, "the span {x1} m cuts the line ({length} m)");
    assert!(
        length / (x1 - x0) > 0.85,
        "the line fills only {:.0} % of the plot",
        100.0 * length / (x1 - x0)
    );
    render_svg(&fig).unwrap();
}

#[test]
fn the_default_span_is_the_line_plus_a_margin() {
    // 10 % of 2.73 m is 0.273 m; ten cells of 28 mm are 0.28 m, the larger.
    let (a, b) = default_span(2.73, 0.028);
    assert_eq!(a, 0.0);
    assert!((b - 3.01).abs() < 1e-9, "{b}");
    // A long line: the 10 % margin wins.
    let (_, b) = default_span(20.0, 0.028);
    assert!((b - 22.0).abs() < 1e-9, "{b}");
}

#[test]
fn without_a_line_file_the_span_ends_after_the_last_echo() {
    // A noise floor at -100 dB over 0..50 m with echoes at 1 m (-10 dB) and 2.4 m (-60 dB), and the
    // fold-back of the first echo in the last 2 % of the range.
    let x: Vec<f64> = (0..5000).map(|i| i as f64 * 0.01).collect();
    let y: Vec<f64> = x
        .iter()
        .map(|&d| {
            if (d - 1.0).abs() < 0.02 {
                -10.0
            } else if (d - 2.4).abs() < 0.02 {
                -60.0
            } else if d > 49.0 {
                -50.0
            } else {
                -100.0
            }
        })
        .collect();
    let last = last_significant_m([(&x[..], &y[..])]).unwrap();
    assert!(
        (last - 2.41).abs() < 0.02,
        "last significant echo at {last} m"
    );
}

#[test]
fn labels_do_not_overlap() {
    let report = compare_report();
    let fig = compare_figure(&report, Some(&line()), None);
    let lay = layout(&fig).unwrap();
    assert!(!lay.tick_labels.is_empty() && !lay.top_labels.is_empty());
    assert_apart("labels", &all_labels(&lay));
    let whole = Rect::new(0, 0, lay.size.0, lay.size.1);
    for (text, r) in all_labels(&lay) {
        assert!(
            !r.overlaps(&lay.legend),
            "'{text}' {r:?} sits on the legend {:?}",
            lay.legend
        );
        assert!(!r.overlaps(&lay.title), "'{text}' sits on the title");
        assert!(whole.contains(&r), "'{text}' {r:?} is cut off");
    }
    for item in &lay.legend_items {
        assert!(
            lay.legend.contains(&item.rect),
            "{item:?} outside the legend"
        );
    }
    render_svg(&fig).unwrap();
}

#[test]
fn a_crowded_chain_staggers_its_labels_or_thins_them_out() {
    // Twelve connectors 2 cm apart on a 3 m axis: 2 cm is about 6 px, far less than a label.
    let mut fig = Figure::new("crowded", "distance (m)", "|reflection| (dB)");
    fig.series.push(Series {
        name: "trace".into(),
        x: vec![0.0, 3.0],
        y: vec![-40.0, -20.0],
    });
    let ticks: Vec<Marker> = (0..12)
        .map(|i| Marker {
            x: 1.0 + 0.02 * i as f64,
            label: format!("J{i}"),
        })
        .collect();
    fig.chain = Some(ChainStrip {
        bands: Vec::new(),
        ticks: ticks.clone(),
    });
    fig.size = (1000, 640);
    let lay = layout(&fig).unwrap();
    assert_apart("tick labels", &all_labels(&lay));
    // Every connector is either labelled or named in the note.
    let note = lay
        .notes
        .iter()
        .map(|n| n.0.clone())
        .collect::<Vec<_>>()
        .join(" ");
    for t in &ticks {
        let shown = lay.tick_labels.iter().any(|l| l.text == t.label);
        assert!(
            shown || note.contains(&t.label),
            "{} is neither labelled nor listed",
            t.label
        );
    }
    assert!(lay.tick_labels.iter().any(|l| l.row > 0), "no staggering");
    assert!(!lay.thinned.is_empty(), "nothing thinned out");
    let svg = render_svg(&fig).unwrap();
    assert!(svg.contains("not labelled for want of room"));
}

#[test]
fn the_finding_is_marked() {
    let report = compare_report();
    let fig = compare_figure(&report, Some(&line()), None);
    let first = &report.findings[0];
    assert_eq!(first.place.element, "J2", "the demo's opened joint");
    let lay = layout(&fig).unwrap();
    let label = lay
        .top_labels
        .iter()
        .find(|l| l.text == "#1 J2 pin-gap")
        .expect("the first finding's label");
    assert_eq!(label.x, first.place.distance_m);
    // The label sits over its place: its box spans the finding's pixel column.
    assert!(label.rect.x0 <= label.x_px && label.x_px <= label.rect.x1);
    assert_eq!(label.x_px, lay.x_px(first.place.distance_m));
    let svg = render_svg(&fig).unwrap();
    assert!(svg.contains("#1 J2 pin-gap"));
}

#[test]
fn the_title_names_the_files_and_states_not_the_paths() {
    let report = compare_report();
    let fig = compare_figure(&report, Some(&line()), None);
    assert_eq!(
        fig.title,
        "north-fridge/in-07: in-07-cold.s1p (cold) against in-07-warm.s1p (warm)"
    );
    assert_eq!(fig.series[0].name, "baseline in-07-warm.s1p (warm)");
    assert!(!fig.title.contains("sample-sweeps"));
}

#[test]
fn the_difference_panel_is_current_less_baseline() {
    let report = compare_report();
    let fig = compare_figure(&report, Some(&line()), None);
    let lower = fig.lower.as_ref().expect("a difference panel");
    assert!(lower.y_label.contains("current - baseline"));
    // At J2 the cold sweep's echo is tens of dB stronger (the opened joint).
    let (x, d) = (&lower.series[0].x, &lower.series[0].y);
    let at = x
        .iter()
        .position(|&v| (v - report.findings[0].place.distance_m).abs() < 0.01)
        .unwrap();
    assert!(d[at] > 20.0, "difference at J2: {} dB", d[at]);
    // Two equal traces differ by nothing; one 6 dB up by 6 dB everywhere (held at the floor first).
    let bx = [0.0, 1.0, 2.0];
    let (_, z) = difference(
        &bx,
        &[-10.0, -20.0, -30.0],
        &bx,
        &[-10.0, -20.0, -30.0],
        -100.0,
    );
    assert!(z.iter().all(|v| *v == 0.0));
    let (_, six) = difference(
        &bx,
        &[-10.0, -20.0, -30.0],
        &bx,
        &[-4.0, -14.0, -24.0],
        -100.0,
    );
    assert!(six.iter().all(|v| (v - 6.0).abs() < 1e-12));
}

#[test]
fn the_y_axis_says_compensated_only_when_something_was() {
    let sweep = sample("in-07-cold.s1p");
    let ts = coldtrace::touchstone::read_file(&sweep).unwrap();
    let mut engine = TraceEngine::new();
    let map = UniformLine::new(0.695).unwrap();
    let outcome = run_trace(
        &mut engine,
        &ts.network.freqs_hz,
        &ts.network.s11(),
        &TraceConfig::default(),
        &map,
    )
    .unwrap();
    let fig = trace_figure(&outcome.trace, "t", None, false);
    assert!(!fig.y_label.contains("compensated"), "{}", fig.y_label);

    let located = demo_locate(sweep.clone());
    let fig = locate_figure(&located, Some(&line()), None);
    assert!(fig.y_label.contains("loss-compensated"), "{}", fig.y_label);
}

#[test]
fn locate_marks_its_events() {
    let located = demo_locate(sample("in-07-cold.s1p"));
    let fig = locate_figure(&located, Some(&line()), None);
    assert!(
        fig.findings.iter().any(|m| m.label == "J2 pin-gap"),
        "{:?}",
        fig.findings
    );
    // The worst event is labelled first.
    assert_eq!(fig.findings[0].label, "J2 pin-gap");
}

#[test]
fn trace_along_the_line_shows_the_chain_and_the_resolution() {
    let line = line();
    let ts = coldtrace::touchstone::read_file(&sample("in-07-cold.s1p")).unwrap();
    let map = coldtrace::line::LineMap::new(&line, coldtrace::line::State::Cold);
    let outcome = run_trace(
        &mut TraceEngine::new(),
        &ts.network.freqs_hz,
        &ts.network.s11(),
        &TraceConfig::default(),
        &map,
    )
    .unwrap();
    // The whole-range trace reaches far past the line (its alias-free range).
    assert!(outcome.trace.alias_free_range_m > 5.0 * line.length_m());
    let fig = trace_figure(&outcome.trace, "t", Some(&line), false);
    let (_, x1) = fig.x_range.unwrap();
    assert!(line.length_m() / x1 > 0.85, "span {x1} m");
    let chain = fig.chain.as_ref().unwrap();
    let names: Vec<&str> = chain.ticks.iter().map(|t| t.label.as_str()).collect();
    assert!(
        names.contains(&"J2") && names.contains(&"A4 20 dB"),
        "{names:?}"
    );
    // Cables are bands, colder further down the line.
    assert!(chain.bands.first().unwrap().kelvin > chain.bands.last().unwrap().kelvin);
    assert!(fig.notes[0].starts_with("resolution "), "{:?}", fig.notes);
    let lay = layout(&fig).unwrap();
    assert_apart("labels", &all_labels(&lay));
    render_svg(&fig).unwrap();
}

#[test]
fn an_asked_span_is_the_axis() {
    let report = compare_report();
    let fig = compare_figure(&report, Some(&line()), Some((1.5, 2.0)));
    assert_eq!(fig.x_range, Some((1.5, 2.0)));
    let lay = layout(&fig).unwrap();
    assert_eq!(lay.x_range, (1.5, 2.0));
    // Only what lies in the span is labelled.
    assert!(lay.tick_labels.iter().all(|l| (1.5..=2.0).contains(&l.x)));
    render_svg(&fig).unwrap();
}

#[test]
fn the_impedance_profile_keeps_a_sane_range() {
    // 300 harmonic points to 3 GHz; a 20 ohm load 2.2 m down a 50 ohm line (tests/data/transform/README.md).
    let path =
        PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/data/transform/in-07-load-1.5m.s1p");
    let ts = coldtrace::touchstone::read_file(&path).unwrap();
    let config = TraceConfig {
        plan: coldtrace::transform::TracePlan {
            mode: coldtrace::transform::Mode::Impedance,
            ..Default::default()
        },
        ..TraceConfig::default()
    };
    let outcome = run_trace(
        &mut TraceEngine::new(),
        &ts.network.freqs_hz,
        &ts.network.s11(),
        &config,
        &UniformLine::new(0.695).unwrap(),
    )
    .unwrap();
    let fig = trace_figure(&outcome.trace, "impedance", None, false);
    // 0 to 4 Z0: the line (50 ohm) and the load (20 ohm) in view, an open's 1e8 ohm not stretching it.
    assert_eq!(fig.y_range, Some((0.0, 200.0)));
    assert!(fig
        .notes
        .iter()
        .any(|n| n.contains("from the low-pass step")));
    let lay = layout(&fig).unwrap();
    assert!(lay.y_range.0 == 0.0 && lay.y_range.1 >= 200.0);
    render_svg(&fig).unwrap();
}

#[test]
fn a_grid_without_a_low_pass_step_says_what_sweep_would_have_one() {
    let m = UniformLine::new(0.695).unwrap();
    // 100 points from 0.5 GHz in 10 MHz steps: 50 steps above zero, not harmonic.
    let offset: Vec<f64> = (0..100).map(|i| 0.5e9 + i as f64 * 1e7).collect();
    let plan = coldtrace::transform::TracePlan {
        mode: coldtrace::transform::Mode::Impedance,
        ..Default::default()
    };
    let e = plan.check(&offset, &m).unwrap_err().to_string();
    // The same step from one step up to the last frequency, 1.49 GHz: 149 points.
    assert!(
        e.contains("from 10000000 Hz to 1490000000 Hz in steps of 10000000 Hz (149 points)"),
        "{e}"
    );
}
