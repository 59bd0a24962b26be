//! Figures of the commands' results: `trace` along the line, `locate`'s events, `compare`'s overlay with
//! its difference, each with the line drawn under the axis when a line file is given, and the span they
//! show by default.
//!
//! Conventions: x is one-way as-built distance from the reference plane, m; reflections are
//! 20 log10 |rho|, dB; temperatures K. The default span is the line's visible length (or, without a line
//! file, the farthest significant echo) plus a margin ([`default_span`]).

use super::plot::{Band, ChainStrip, Figure, Marker, Panel, Series};
use crate::compare::report::{CompareReport, FaultKind, LocateReport, PlotData};
use crate::compare::Severity;
use crate::line::{ElementKind, Line, State};
use crate::transform::{Mode, Trace};

/// The margin after the line's end in the default span, as a share of the end's distance (our choice: a
/// far end's echo and its window's skirt stay in view).
pub const SPAN_MARGIN_FRACTION: f64 = 0.1;
/// ... and at least this many resolution cells, so a short line keeps its far end's main lobe in view.
pub const SPAN_MARGIN_CELLS: f64 = 10.0;
/// Without a line file, an echo is significant when it stands this many dB over the trace's median (most
/// of a trace is noise, so its median is the noise floor; our choice)...
pub const SIGNIFICANT_ABOVE_MEDIAN_DB: f64 = 20.0;
/// ... and is within this many dB of the trace's strongest point (a window's far sidelobes stay below it;
/// our choice).
pub const SIGNIFICANT_BELOW_TOP_DB: f64 = 80.0;
/// The last share of a whole-range trace where the echoes near the reference plane fold back (the
/// window's skirt past the alias-free range): not searched for significant echoes.
pub const FOLD_BACK_SHARE: f64 = 0.05;
/// The depth a reflection plot shows under its strongest point, dB: deeper is the window's and the noise's.
pub const SHOWN_DEPTH_DB: f64 = 100.0;
/// The difference panel's y range grows to the largest difference in the span, at least this, dB...
pub const DIFFERENCE_MIN_DB: f64 = 3.0;
/// ... and at most this, dB (a change of a deep null is not worth the room).
pub const DIFFERENCE_MAX_DB: f64 = 40.0;
/// The impedance plot's y range, as multiples of the reference impedance: 0 to 4 Z0 (reflections up to
/// |rho| = 0.6; an open or short beyond the line would otherwise fill the range with 0 ohm and ~1e8 ohm).
pub const IMPEDANCE_MAX_FACTOR: f64 = 4.0;

/// Size of a figure with the chain strip, and of the comparison's with its difference panel, px.
pub const LINE_FIGURE_SIZE: (u32, u32) = (1000, 640);
pub const COMPARE_FIGURE_SIZE: (u32, u32) = (1000, 780);

/// The span shown when none is asked: from the reference plane to `end_m` plus a margin
/// ([`SPAN_MARGIN_FRACTION`], at least [`SPAN_MARGIN_CELLS`] resolution cells).
pub fn default_span(end_m: f64, resolution_m: f64) -> (f64, f64) {
    let cells = if resolution_m.is_finite() && resolution_m > 0.0 {
        SPAN_MARGIN_CELLS * resolution_m
    } else {
        0.0
    };
    let end = end_m.max(0.0);
    let margin = (SPAN_MARGIN_FRACTION * end).max(cells);
    (
        0.0,
        if end + margin > 0.0 {
            end + margin
        } else {
            1.0
        },
    )
}

/// The farthest distance where a trace (dB) stands [`SIGNIFICANT_ABOVE_MEDIAN_DB`] over its median and
/// within [`SIGNIFICANT_BELOW_TOP_DB`] of its strongest point, among all `traces`, leaving out each
/// trace's last [`FOLD_BACK_SHARE`].
pub fn last_significant_m<'a>(
    traces: impl IntoIterator<Item = (&'a [f64], &'a [f64])>,
) -> Option<f64> {
    let mut last: Option<f64> = None;
    for (x, y) in traces {
        let mut finite: Vec<f64> = y.iter().copied().filter(|v| v.is_finite()).collect();
        if finite.is_empty() {
            continue;
        }
        finite.sort_by(f64::total_cmp);
        let (median, top) = (finite[finite.len() / 2], finite[finite.len() - 1]);
        let threshold = (median + SIGNIFICANT_ABOVE_MEDIAN_DB).max(top - SIGNIFICANT_BELOW_TOP_DB);
        let (lo, hi) = x
            .iter()
            .filter(|v| v.is_finite())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                (a.min(v), b.max(v))
            });
        let edge = hi - FOLD_BACK_SHARE * (hi - lo);
        let far = x
            .iter()
            .zip(y)
            .filter(|(a, b)| a.is_finite() && **a <= edge && **b >= threshold)
            .map(|(a, _)| *a)
            .fold(f64::NEG_INFINITY, f64::max);
        if far.is_finite() {
            last = Some(last.map_or(far, |l: f64| l.max(far)));
        }
    }
    last
}

/// The span to draw: the one asked for, else the line's visible length plus a margin, else the farthest
/// significant echo plus a margin; never past the data (a trace computed over less is not padded).
pub fn span_for(
    asked: Option<(f64, f64)>,
    line: Option<&Line>,
    data: &PlotData,
    resolution_m: f64,
) -> Option<(f64, f64)> {
    if asked.is_some() {
        return asked;
    }
    let end = match line {
        Some(l) if l.length_m() > 0.0 => l.length_m(),
        _ => last_significant_m(data.traces.iter().map(|t| (&t.1[..], &t.2[..])))?,
    };
    let (a, b) = default_span(end, resolution_m);
    let data_end = data
        .traces
        .iter()
        .flat_map(|t| t.1.iter().copied())
        .filter(|v| v.is_finite())
        .fold(f64::NEG_INFINITY, f64::max);
    Some((
        a,
        if data_end.is_finite() {
            b.min(data_end)
        } else {
            b
        },
    ))
}

/// The line as built for the strip under a plot: cables and connectors as bands shaded by their cold
/// temperature (the middle's), connectors, attenuators and devices as named ticks.
pub fn chain_strip(line: &Line) -> ChainStrip {
    let mut strip = ChainStrip::default();
    for e in line.visible() {
        if e.length_m > 0.0 && !matches!(e.kind, ElementKind::Device { .. }) {
            strip.bands.push(Band {
                start: e.start_m,
                end: e.end_m(),
                kelvin: e.temperature_at(0.5 * e.length_m, State::Cold),
            });
        }
        let label = match &e.kind {
            ElementKind::Cable { .. } => continue,
            ElementKind::Attenuator { loss_db, .. } => format!("{} {} dB", e.name, loss_db),
            _ => e.name.clone(),
        };
        strip.ticks.push(Marker {
            x: e.start_m + 0.5 * e.length_m,
            label,
        });
    }
    strip
}

/// The note that explains the strip's shades, with the line's coldest and warmest temperatures.
fn shade_note(line: &Line) -> String {
    let temps: Vec<f64> = line
        .visible()
        .iter()
        .map(|e| e.temperature_at(0.5 * e.length_m, State::Cold))
        .collect();
    let cold = temps.iter().copied().fold(f64::INFINITY, f64::min);
    let warm = temps.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    format!(
        "under the axis: the line as built, bands shaded by cold temperature (light {} to dark {}), ticks at \
         connectors and attenuators",
        kelvin_text(warm),
        kelvin_text(cold)
    )
}

/// A temperature for a label: mK under 1 K.
pub fn kelvin_text(k: f64) -> String {
    if k < 1.0 {
        format!("{:.0} mK", k * 1e3)
    } else {
        format!("{k:.0} K")
    }
}

/// A distance for a label: mm under 1 m... the resolution is millimetres.
pub fn mm_text(m: f64) -> String {
    format!("{:.1} mm", m * 1e3)
}

/// A place for a label: its element, or its distance on a line of unknown construction.
pub fn place_label(p: &crate::compare::report::Place) -> String {
    if p.element == "line" {
        format!("{:.2} m", p.distance_m)
    } else {
        p.element.clone()
    }
}

/// The last part of a path as written (`a/b/c.s1p` -> `c.s1p`).
pub fn file_name(path: &str) -> String {
    std::path::Path::new(path)
        .file_name()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| path.to_string())
}

/// The y axis of a reflection plot: "loss-compensated" only when something was compensated.
pub fn reflection_label(compensated: bool) -> &'static str {
    if compensated {
        "|reflection| (dB, loss-compensated)"
    } else {
        "|reflection| (dB)"
    }
}

/// The x axis of every plot along a line file's line, and of one without a line file.
pub const DISTANCE_LABEL: &str = "distance from the reference plane (m, as built)";
pub const UNIFORM_DISTANCE_LABEL: &str =
    "distance from the reference plane (m, one velocity factor)";

/// The y range of a reflection plot: [`SHOWN_DEPTH_DB`] under the strongest point inside the span.
fn reflection_range(series: &[Series], span: Option<(f64, f64)>) -> Option<(f64, f64)> {
    let top = series
        .iter()
        .flat_map(|s| s.x.iter().zip(&s.y))
        .filter(|(x, y)| y.is_finite() && span.map_or(true, |(a, b)| (a..=b).contains(*x)))
        .map(|(_, y)| *y)
        .fold(f64::NEG_INFINITY, f64::max);
    top.is_finite().then_some((top - SHOWN_DEPTH_DB, top + 3.0))
}

/// A figure of reflection traces in as-built metres, with the line under the axis when there is one.
fn along_line(title: String, data: &PlotData, line: Option<&Line>, compensated: bool) -> Figure {
    let x_label = if line.is_some() {
        DISTANCE_LABEL
    } else {
        UNIFORM_DISTANCE_LABEL
    };
    let mut fig = Figure::new(title, x_label, reflection_label(compensated));
    fig.max_envelope = true;
    fig.series = data
        .traces
        .iter()
        .map(|(name, x, y)| Series {
            name: name.clone(),
            x: x.clone(),
            y: y.clone(),
        })
        .collect();
    if let Some(l) = line {
        fig.chain = Some(chain_strip(l));
        fig.notes.push(shade_note(l));
        fig.size = LINE_FIGURE_SIZE;
    } else {
        // Without a line file the chain's marks (if any) stay markers over the plot.
        fig.markers = data
            .marks
            .iter()
            .map(|(x, l)| Marker {
                x: *x,
                label: l.clone(),
            })
            .collect();
    }
    fig
}

/// `locate`'s figure: the sweep's trace, its events above info (or stronger than -40 dB, as in the table)
/// marked and labelled by element and kind, the line under the axis.
pub fn locate_figure(
    report: &LocateReport,
    line: Option<&Line>,
    span: Option<(f64, f64)>,
) -> Figure {
    let compensated = line.is_some()
        || report
            .events
            .iter()
            .any(|e| matches!(e.kind, FaultKind::Open | FaultKind::Short));
    let title = match line {
        Some(_) => format!(
            "{}: {} ({})",
            report.line,
            file_name(&report.sweep),
            report.state
        ),
        None => format!("{} ({})", file_name(&report.sweep), report.state),
    };
    let data = PlotData {
        traces: report
            .plot
            .traces
            .iter()
            .map(|(n, x, y)| {
                (
                    format!("{} ({})", file_name(n), report.state),
                    x.clone(),
                    y.clone(),
                )
            })
            .collect(),
        marks: report.plot.marks.clone(),
    };
    let mut fig = along_line(title, &data, line, compensated);
    fig.x_range = span_for(span, line, &report.plot, report.resolution_m);
    let mut events: Vec<_> = report
        .events
        .iter()
        .filter(|e| e.visible && (e.severity > Severity::Info || e.reflection_db > -40.0))
        .collect();
    events.sort_by(|a, b| {
        b.severity
            .cmp(&a.severity)
            .then(b.reflection_db.total_cmp(&a.reflection_db))
    });
    fig.findings = events
        .iter()
        .map(|e| Marker {
            x: e.place.distance_m,
            label: format!("{} {}", place_label(&e.place), e.kind.name()),
        })
        .collect();
    fig.y_range = reflection_range(&fig.series, fig.x_range);
    fig.notes.insert(
        0,
        format!(
            "resolution {} (two events apart)",
            mm_text(report.resolution_m)
        ),
    );
    fig
}

/// `compare`'s figure: baseline and current overlaid after alignment (both in as-built metres), their
/// difference (current less baseline, dB) in a panel below, the findings above info marked and labelled by
/// rank, element and kind, the states in the title.
pub fn compare_figure(
    report: &CompareReport,
    line: Option<&Line>,
    span: Option<(f64, f64)>,
) -> Figure {
    let compensated = line.is_some()
        || report
            .far_end
            .as_ref()
            .is_some_and(|f| f.current_kind != "other" && f.baseline_kind != "other");
    let (b, c) = (file_name(&report.baseline), file_name(&report.current));
    let states = &report.states;
    let pair = format!(
        "{} ({}) against {} ({})",
        c, states.current, b, states.baseline
    );
    let title = match line {
        Some(_) => format!("{}: {pair}", report.line),
        None => pair,
    };
    let names = [
        format!("baseline {} ({})", b, states.baseline),
        format!("current {} ({})", c, states.current),
    ];
    let data = PlotData {
        traces: report
            .plot
            .traces
            .iter()
            .zip(names)
            .map(|((_, x, y), n)| (n, x.clone(), y.clone()))
            .collect(),
        marks: report.plot.marks.clone(),
    };
    let mut fig = along_line(title, &data, line, compensated);
    fig.size = COMPARE_FIGURE_SIZE;
    fig.x_range = span_for(span, line, &report.plot, report.resolution_m);
    fig.y_range = reflection_range(&fig.series, fig.x_range);
    fig.findings = report
        .findings
        .iter()
        .filter(|f| f.severity > Severity::Info)
        .map(|f| Marker {
            x: f.place.distance_m,
            label: format!("#{} {} {}", f.rank, place_label(&f.place), f.kind.name()),
        })
        .collect();
    if let [(_, bx, by), (_, cx, cy), ..] = &report.plot.traces[..] {
        let floor = fig.y_range.map(|r| r.0).unwrap_or(f64::NEG_INFINITY);
        let (x, d) = difference(bx, by, cx, cy, floor);
        let biggest = x
            .iter()
            .zip(&d)
            .filter(|(x, v)| {
                v.is_finite() && fig.x_range.map_or(true, |(a, b)| (a..=b).contains(*x))
            })
            .map(|(_, v)| v.abs())
            .fold(0.0, f64::max);
        let half = (1.1 * biggest).clamp(DIFFERENCE_MIN_DB, DIFFERENCE_MAX_DB);
        fig.lower = Some(Panel {
            y_label: "current - baseline (dB)".into(),
            series: vec![Series {
                name: String::new(),
                x,
                y: d,
            }],
            y_range: Some((-half, half)),
        });
    }
    fig.notes.insert(
        0,
        format!(
            "resolution {} (two events apart, the coarser sweep); {}; lower panel: current less baseline",
            mm_text(report.resolution_m),
            if report.alignment.landmarks_m.is_empty() {
                "no landmark seen in both sweeps".to_string()
            } else {
                format!("alignment residual {}", mm_text(report.alignment.residual_m))
            }
        ),
    );
    fig
}

/// Current less baseline, dB, on the baseline's points (the current trace interpolated linearly), each
/// held at `floor` first so that two noise nulls do not draw as a change.
pub fn difference(
    bx: &[f64],
    by: &[f64],
    cx: &[f64],
    cy: &[f64],
    floor: f64,
) -> (Vec<f64>, Vec<f64>) {
    let mut x = Vec::with_capacity(bx.len());
    let mut d = Vec::with_capacity(bx.len());
    let sorted = cx.windows(2).all(|w| w[0] <= w[1]);
    if !sorted || cx.len() < 2 {
        return (x, d);
    }
    for (&xb, &yb) in bx.iter().zip(by) {
        if !(xb >= cx[0] && xb <= cx[cx.len() - 1] && yb.is_finite()) {
            continue;
        }
        let i = cx.partition_point(|&v| v < xb).clamp(1, cx.len() - 1);
        let (x0, x1) = (cx[i - 1], cx[i]);
        let t = if x1 > x0 { (xb - x0) / (x1 - x0) } else { 0.0 };
        let yc = cy[i - 1].max(floor) + t * (cy[i].max(floor) - cy[i - 1].max(floor));
        x.push(xb);
        d.push(yc - yb.max(floor));
    }
    (x, d)
}

/// `trace`'s figure: the trace along the line (as-built metres with a line file), its resolution, the line
/// under the axis; the default span when none was asked (`span_asked`); an impedance profile in a range
/// that shows the line (0 to [`IMPEDANCE_MAX_FACTOR`] Z0).
pub fn trace_figure(trace: &Trace, title: &str, line: Option<&Line>, span_asked: bool) -> Figure {
    let mut fig = trace.figure(title);
    fig.x_label = if line.is_some() {
        DISTANCE_LABEL
    } else {
        UNIFORM_DISTANCE_LABEL
    }
    .to_string();
    if trace.mode == Mode::BandPass {
        // Nothing is compensated in a trace: the y axis says so by not saying it.
        fig.y_label = reflection_label(false).to_string();
    }
    if let Some(l) = line {
        fig.markers.clear();
        fig.chain = Some(chain_strip(l));
        fig.notes.push(shade_note(l));
        fig.size = LINE_FIGURE_SIZE;
    }
    if !span_asked {
        let end = match (line, trace.mode) {
            (Some(l), _) if l.length_m() > 0.0 => Some(l.length_m()),
            (_, Mode::BandPass) => last_significant_m([(&trace.axis_m[..], &trace.values[..])]),
            _ => trace
                .peaks
                .iter()
                .map(|p| p.distance_m)
                .fold(None, |a: Option<f64>, d| Some(a.map_or(d, |a| a.max(d)))),
        };
        if let Some(end) = end {
            let (a, b) = default_span(end, trace.resolution_m);
            let data_end = trace.axis_m.last().copied().unwrap_or(b);
            fig.x_range = Some((
                a.max(trace.axis_m.first().copied().unwrap_or(a)),
                b.min(data_end),
            ));
        }
    }
    match trace.mode {
        Mode::BandPass => fig.y_range = reflection_range(&fig.series, fig.x_range),
        Mode::Impedance => {
            fig.y_range = Some((0.0, IMPEDANCE_MAX_FACTOR * trace.reference_ohm));
            fig.notes.push(format!(
                "impedance from the low-pass step, drawn from 0 to {:.0} ohm (values beyond are held at the edge)",
                IMPEDANCE_MAX_FACTOR * trace.reference_ohm
            ));
        }
        _ => {}
    }
    fig.notes.insert(
        0,
        format!(
            "resolution {} (two events apart), window {}",
            mm_text(trace.resolution_m),
            match trace.window.beta {
                Some(b) => format!("{} (beta {b})", trace.window.name),
                None => trace.window.name.to_string(),
            }
        ),
    );
    fig
}
