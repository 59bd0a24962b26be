//! The project's one plotting module: a [`Figure`] is plain data (series, markers, labels), drawn to SVG or
//! PNG with plotters. Nothing here knows about transforms; any stage builds a Figure and calls
//! [`write_plot`].
//!
//! Text uses DejaVu Sans, embedded through the `dejavu` crate and registered once with plotters, so no
//! system fonts are needed (licence notice in docs/THIRD-PARTY.md). PNG output does not rotate the y-axis
//! title (a plotters bitmap limitation); SVG does.

use super::layout::{
    layout, text_size, FigureLayout, PlacedLabel, Rect, BAND_PX, LEGEND_ROW_PX, PANEL_RIGHT_PX,
    PANEL_TOP_PX, SWATCH_PX, X_LABEL_AREA_PX, Y_LABEL_AREA_PX,
};
use super::style::{
    temperature_shade, AXIS_DESC_PX, BLACK, GREY, GRID, LABEL_PX, NOTE_PX, SERIES, TICK_PX,
    TITLE_PX,
};
use super::ReportError;
use crate::output::write_output;
use plotters::prelude::*;
use plotters::style::FontStyle;
use std::path::Path;
use std::sync::Once;

/// Font family name registered with plotters.
pub const FONT_FAMILY: &str = "sans-serif";
/// Default figure size, pixels.
pub const DEFAULT_SIZE: (u32, u32) = (1000, 560);

/// One line of data.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    pub name: String,
    pub x: Vec<f64>,
    pub y: Vec<f64>,
}

/// A vertical line at `x`, labelled (e.g. a connector position).
#[derive(Debug, Clone, PartialEq)]
pub struct Marker {
    pub x: f64,
    pub label: String,
}

/// A stretch of the line drawn as a band under the plot, shaded by its temperature.
#[derive(Debug, Clone, PartialEq)]
pub struct Band {
    pub start: f64,
    pub end: f64,
    /// The temperature the shade shows, K.
    pub kelvin: f64,
}

/// The line as built, drawn under the plot's axis: cables as bands, connectors and attenuators as named
/// ticks (their labels staggered, or thinned out into a note).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ChainStrip {
    pub bands: Vec<Band>,
    pub ticks: Vec<Marker>,
}

/// A second plot under the main one, sharing its x axis (the comparison's difference).
#[derive(Debug, Clone, PartialEq)]
pub struct Panel {
    pub y_label: String,
    pub series: Vec<Series>,
    /// Fixed y range; `None` = fitted to the data inside the x range.
    pub y_range: Option<(f64, f64)>,
}

/// A line plot.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub series: Vec<Series>,
    /// Grey vertical lines with labels over the plot.
    pub markers: Vec<Marker>,
    /// Findings: dark vertical lines whose labels are placed first, in this order (the most important
    /// first).
    pub findings: Vec<Marker>,
    /// Fixed y range; `None` = fitted to the data inside the x range.
    pub y_range: Option<(f64, f64)>,
    /// The x range drawn (the span); `None` = the data's.
    pub x_range: Option<(f64, f64)>,
    /// The line drawn under the axis.
    pub chain: Option<ChainStrip>,
    /// A panel under the main plot.
    pub lower: Option<Panel>,
    /// Lines of text under the plot (resolution, shade key, labels left out).
    pub notes: Vec<String>,
    pub size: (u32, u32),
    /// When a series has many more points than pixel columns, keep only each column's maximum (for
    /// magnitude plots, where deep nulls carry no information) instead of its minimum and maximum.
    pub max_envelope: bool,
}

impl Figure {
    pub fn new(
        title: impl Into<String>,
        x_label: impl Into<String>,
        y_label: impl Into<String>,
    ) -> Self {
        Figure {
            title: title.into(),
            x_label: x_label.into(),
            y_label: y_label.into(),
            series: Vec::new(),
            markers: Vec::new(),
            findings: Vec::new(),
            y_range: None,
            x_range: None,
            chain: None,
            lower: None,
            notes: Vec::new(),
            size: DEFAULT_SIZE,
            max_envelope: false,
        }
    }
}

/// Output format, chosen from the file extension.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PlotFormat {
    Svg,
    Png,
}

impl PlotFormat {
    pub fn from_path(path: &Path) -> Result<Self, ReportError> {
        match path
            .extension()
            .and_then(|e| e.to_str())
            .map(|e| e.to_ascii_lowercase())
            .as_deref()
        {
            Some("svg") => Ok(PlotFormat::Svg),
            Some("png") => Ok(PlotFormat::Png),
            _ => Err(ReportError::Invalid(format!(
                "{}: plots are written as .svg or .png; give a file name ending in one of those",
                path.display()
            ))),
        }
    }
}

static FONT: Once = Once::new();

/// Register the embedded face with plotters (once).
pub(crate) fn register_font() {
    FONT.call_once(|| {
        // The embedded face is a valid TrueType font; failure would be a packaging bug.
        plotters::style::register_font(FONT_FAMILY, FontStyle::Normal, dejavu::sans::regular())
            .unwrap_or_else(|_| panic!("the embedded DejaVu Sans font could not be registered"));
    });
}

/// (x range, y range) of a figure.
type Ranges = ((f64, f64), (f64, f64));

/// Finite (x, y) pairs of `series` inside `x_range` (all when `None`), checking the lengths.
fn finite_points<'a>(
    series: &'a [Series],
    x_range: Option<(f64, f64)>,
) -> Result<impl Iterator<Item = (f64, f64)> + 'a, ReportError> {
    for s in series {
        if s.x.len() != s.y.len() {
            return Err(ReportError::Invalid(format!(
                "series '{}' has {} x values but {} y values",
                s.name,
                s.x.len(),
                s.y.len()
            )));
        }
    }
    Ok(series
        .iter()
        .flat_map(|s| s.x.iter().copied().zip(s.y.iter().copied()))
        .filter(move |(a, b)| {
            a.is_finite() && b.is_finite() && x_range.map_or(true, |(x0, x1)| (x0..=x1).contains(a))
        }))
}

/// A y range fitted to `ys` (5 % padding), or the fixed one checked.
fn fit_y(fixed: Option<(f64, f64)>, ys: (f64, f64)) -> Result<(f64, f64), ReportError> {
    match fixed {
        Some(r) if r.1 > r.0 && r.0.is_finite() && r.1.is_finite() => Ok(r),
        Some(r) => Err(ReportError::Invalid(format!(
            "y range {}..{} is empty",
            r.0, r.1
        ))),
        None if ys.1 > ys.0 => {
            let pad = 0.05 * (ys.1 - ys.0);
            Ok((ys.0 - pad, ys.1 + pad))
        }
        None if ys.0.is_finite() => Ok((ys.0 - 1.0, ys.0 + 1.0)),
        None => Ok((-1.0, 1.0)),
    }
}

/// The figure's x range (its span, or its data's) and y range (fixed, or fitted to the data in the span).
pub(crate) fn ranges(fig: &Figure) -> Result<Ranges, ReportError> {
    let mut x = (f64::INFINITY, f64::NEG_INFINITY);
    let mut y = (f64::INFINITY, f64::NEG_INFINITY);
    for (a, b) in finite_points(&fig.series, fig.x_range)? {
        x = (x.0.min(a), x.1.max(a));
        y = (y.0.min(b), y.1.max(b));
    }
    if !(x.0.is_finite() && x.1.is_finite()) {
        return Err(ReportError::Invalid(match fig.x_range {
            Some((a, b)) => {
                let (lo, hi) = finite_points(&fig.series, None)?
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), (v, _)| {
                        (lo.min(v), hi.max(v))
                    });
                format!(
                    "the span {a} m..{b} m holds no point of the plot's data, which runs from {lo:.3} m to \
                     {hi:.3} m; give a --span inside it, e.g. --span {:.1}m..{:.1}m",
                    lo.max(0.0),
                    hi
                )
            }
            None => "the plot has no finite data points".to_string(),
        }));
    }
    if let Some((a, b)) = fig.x_range {
        if b.partial_cmp(&a) != Some(std::cmp::Ordering::Greater) {
            return Err(ReportError::Invalid(format!(
                "the span {a}..{b} is empty; give START..STOP with STOP > START, e.g. 0m..3m"
            )));
        }
        x = (a, b);
    }
    if x.1 <= x.0 {
        x = (x.0 - 0.5, x.0 + 0.5);
    }
    Ok((x, fit_y(fig.y_range, y)?))
}

/// The y range of a lower panel.
pub(crate) fn panel_range(p: &Panel) -> Result<(f64, f64), ReportError> {
    let mut y = (f64::INFINITY, f64::NEG_INFINITY);
    for (_, b) in finite_points(&p.series, None)? {
        y = (y.0.min(b), y.1.max(b));
    }
    fit_y(p.y_range, y)
}

/// Draw one panel's axes and series inside `panel` (a pixel rectangle of the root); returns the pixel
/// rectangle plotters gave the data area, so the caller can check it against the layout.
#[allow(clippy::too_many_arguments)]
fn draw_panel<DB: DrawingBackend>(
    root: &DrawingArea<DB, plotters::coord::Shift>,
    panel: Rect,
    (x0, x1): (f64, f64),
    (y0, y1): (f64, f64),
    y_label: &str,
    series: &[Series],
    colours: &[RGBColor],
    max_envelope: bool,
    zero_line: bool,
) -> Result<Rect, ReportError>
where
    DB::ErrorType: 'static,
{
    let e = |err: DrawingAreaErrorKind<DB::ErrorType>| ReportError::Draw(err.to_string());
    let area = root.clone().shrink(
        (panel.x0, panel.y0),
        (panel.width() as u32, panel.height() as u32),
    );
    let mut chart = ChartBuilder::on(&area)
        .margin_top(PANEL_TOP_PX)
        .margin_right(PANEL_RIGHT_PX)
        .x_label_area_size(X_LABEL_AREA_PX)
        .y_label_area_size(Y_LABEL_AREA_PX)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(e)?;
    chart
        .configure_mesh()
        .y_desc(y_label)
        .label_style((FONT_FAMILY, TICK_PX))
        .axis_desc_style((FONT_FAMILY, AXIS_DESC_PX))
        .light_line_style(GRID)
        .draw()
        .map_err(e)?;
    if zero_line {
        chart
            .draw_series(LineSeries::new(
                vec![(x0, 0.0), (x1, 0.0)],
                ShapeStyle::from(&GREY).stroke_width(1),
            ))
            .map_err(e)?;
    }
    let width = panel.width().max(1) as usize;
    for (i, s) in series.iter().enumerate() {
        let colour = colours[i % colours.len()];
        let points: Vec<(f64, f64)> =
            s.x.iter()
                .zip(&s.y)
                .filter(|(a, b)| a.is_finite() && b.is_finite() && (x0..=x1).contains(*a))
                .map(|(&a, &b)| (a, b.clamp(y0, y1)))
                .collect();
        let points = envelope(points, (x0, x1), width, max_envelope);
        chart
            .draw_series(LineSeries::new(points, colour.stroke_width(2)))
            .map_err(e)?;
    }
    let (xs, ys) = chart.plotting_area().get_pixel_range();
    Ok(Rect::new(xs.start, ys.start, xs.end, ys.end))
}

fn draw<DB: DrawingBackend>(
    root: DrawingArea<DB, plotters::coord::Shift>,
    fig: &Figure,
) -> Result<FigureLayout, ReportError>
where
    DB::ErrorType: 'static,
{
    let e = |err: DrawingAreaErrorKind<DB::ErrorType>| ReportError::Draw(err.to_string());
    let lay = layout(fig)?;
    let text = |_: &str, px: u32, colour: RGBColor| (FONT_FAMILY, px).into_font().color(&colour);
    root.fill(&WHITE).map_err(e)?;
    // Title, centred.
    let (tw, _) = text_size(&fig.title, TITLE_PX);
    root.draw(&Text::new(
        fig.title.clone(),
        ((lay.title.x0 + lay.title.x1 - tw) / 2, lay.title.y0 + 4),
        text(&fig.title, TITLE_PX, BLACK),
    ))
    .map_err(e)?;
    // Legend row(s).
    for item in &lay.legend_items {
        let colour = SERIES[item.series % SERIES.len()];
        let y = item.rect.y0 + LEGEND_ROW_PX / 2;
        root.draw(&PathElement::new(
            vec![(item.rect.x0, y), (item.rect.x0 + SWATCH_PX - 6, y)],
            colour.stroke_width(3),
        ))
        .map_err(e)?;
        root.draw(&Text::new(
            item.text.clone(),
            (item.rect.x0 + SWATCH_PX, item.rect.y0 + 3),
            text(&item.text, LABEL_PX, BLACK),
        ))
        .map_err(e)?;
    }
    let plot = draw_panel(
        &root,
        lay.main_panel,
        lay.x_range,
        lay.y_range,
        &fig.y_label,
        &fig.series,
        &SERIES,
        fig.max_envelope,
        false,
    )?;
    debug_assert_eq!(plot, lay.main_plot, "plotters placed the plot elsewhere");
    // Marker and finding lines, then their labels in rows at the top of the plot.
    let vline = |x_px: i32, y0: i32, y1: i32, colour: RGBColor, dashed: bool| {
        let mut pts = Vec::new();
        if dashed {
            let mut y = y0;
            while y < y1 {
                pts.push(vec![(x_px, y), (x_px, (y + 5).min(y1))]);
                y += 9;
            }
        } else {
            pts.push(vec![(x_px, y0), (x_px, y1)]);
        }
        pts.into_iter()
            .map(move |p| PathElement::new(p, ShapeStyle::from(&colour).stroke_width(1)))
    };
    let labelled = |x: f64| lay.top_labels.iter().find(|l| l.x == x);
    for (marks, colour, dashed) in [(&fig.markers, GREY, true), (&fig.findings, BLACK, false)] {
        for m in marks
            .iter()
            .filter(|m| (lay.x_range.0..=lay.x_range.1).contains(&m.x))
        {
            let x_px = lay.x_px(m.x);
            let top = labelled(m.x).map(|l| l.rect.y1).unwrap_or(lay.main_plot.y0);
            for p in vline(x_px, top, lay.main_plot.y1, colour, dashed) {
                root.draw(&p).map_err(e)?;
            }
        }
    }
    let is_finding = |l: &PlacedLabel| fig.findings.iter().any(|f| f.x == l.x && f.label == l.text);
    for l in &lay.top_labels {
        let colour = if is_finding(l) { BLACK } else { GREY };
        root.draw(&Rectangle::new(
            [(l.rect.x0 - 2, l.rect.y0), (l.rect.x1 + 2, l.rect.y1)],
            WHITE.mix(0.85).filled(),
        ))
        .map_err(e)?;
        root.draw(&Text::new(
            l.text.clone(),
            (l.rect.x0, l.rect.y0 + 1),
            text(&l.text, LABEL_PX, colour),
        ))
        .map_err(e)?;
    }
    if let (Some(panel), Some(p), Some(yr)) = (&fig.lower, lay.lower_panel, lay.lower_y_range) {
        draw_panel(
            &root,
            p,
            lay.x_range,
            yr,
            &panel.y_label,
            &panel.series,
            &[BLACK],
            false,
            true,
        )?;
        for f in fig
            .findings
            .iter()
            .filter(|m| (lay.x_range.0..=lay.x_range.1).contains(&m.x))
        {
            let lp = lay.lower_plot.unwrap_or(p);
            for seg in vline(lay.x_px(f.x), lp.y0, lp.y1, BLACK, false) {
                root.draw(&seg).map_err(e)?;
            }
        }
    }
    if let (Some(chain), Some(strip)) = (&fig.chain, lay.strip) {
        let band_y = (strip.y0 + 2, strip.y0 + 2 + BAND_PX);
        for b in &chain.bands {
            let (a, c) = (b.start.max(lay.x_range.0), b.end.min(lay.x_range.1));
            if c <= a {
                continue;
            }
            root.draw(&Rectangle::new(
                [(lay.x_px(a), band_y.0), (lay.x_px(c), band_y.1)],
                temperature_shade(b.kelvin).filled(),
            ))
            .map_err(e)?;
        }
        for t in chain
            .ticks
            .iter()
            .filter(|t| (lay.x_range.0..=lay.x_range.1).contains(&t.x))
        {
            let x_px = lay.x_px(t.x);
            let bottom = lay
                .tick_labels
                .iter()
                .find(|l| l.x == t.x && l.text == t.label)
                .map(|l| l.rect.y0)
                .unwrap_or(band_y.1 + 4);
            root.draw(&PathElement::new(
                vec![(x_px, band_y.0 - 3), (x_px, bottom)],
                ShapeStyle::from(&BLACK).stroke_width(2),
            ))
            .map_err(e)?;
        }
        for l in &lay.tick_labels {
            // A tick from a lower row may pass behind a label of an upper row: the label stays readable.
            root.draw(&Rectangle::new(
                [(l.rect.x0 - 2, l.rect.y0), (l.rect.x1 + 2, l.rect.y1)],
                WHITE.filled(),
            ))
            .map_err(e)?;
            root.draw(&Text::new(
                l.text.clone(),
                (l.rect.x0, l.rect.y0 + 1),
                text(&l.text, LABEL_PX, BLACK),
            ))
            .map_err(e)?;
        }
    }
    for (n, r) in &lay.notes {
        root.draw(&Text::new(
            n.clone(),
            (r.x0 + Y_LABEL_AREA_PX, r.y0 + 2),
            text(n, NOTE_PX, GREY),
        ))
        .map_err(e)?;
    }
    let (dw, _) = text_size(&fig.x_label, AXIS_DESC_PX);
    root.draw(&Text::new(
        fig.x_label.clone(),
        (
            (lay.main_plot.x0 + lay.main_plot.x1 - dw) / 2,
            lay.x_desc.y0 + 3,
        ),
        text(&fig.x_label, AXIS_DESC_PX, BLACK),
    ))
    .map_err(e)?;
    root.present().map_err(e)?;
    Ok(lay)
}

/// Thin a long series to the minimum and maximum in each of about `columns` x buckets (kept in x order),
/// so a 100 000-point trace draws as its true envelope instead of a smear of overlapping segments.
fn envelope(
    points: Vec<(f64, f64)>,
    (x0, x1): (f64, f64),
    columns: usize,
    max_only: bool,
) -> Vec<(f64, f64)> {
    if points.len() <= 4 * columns || columns == 0 {
        return points;
    }
    let width = (x1 - x0) / columns as f64;
    let mut out = Vec::with_capacity(2 * columns + 2);
    let mut bucket = usize::MAX;
    let (mut lo, mut hi) = ((0.0, f64::INFINITY), (0.0, f64::NEG_INFINITY));
    let flush = |out: &mut Vec<(f64, f64)>, lo: (f64, f64), hi: (f64, f64)| {
        if lo.1.is_finite() {
            if max_only {
                out.push(hi);
            } else if lo.0 <= hi.0 {
                out.extend([lo, hi]);
            } else {
                out.extend([hi, lo]);
            }
        }
    };
    for p in points {
        let b = ((p.0 - x0) / width).floor().max(0.0) as usize;
        if b != bucket {
            flush(&mut out, lo, hi);
            bucket = b;
            lo = p;
            hi = p;
        } else {
            if p.1 < lo.1 {
                lo = p;
            }
            if p.1 > hi.1 {
                hi = p;
            }
        }
    }
    flush(&mut out, lo, hi);
    out
}

/// Draw `fig` as an SVG document.
pub fn render_svg(fig: &Figure) -> Result<String, ReportError> {
    register_font();
    let mut text = String::new();
    {
        let root = SVGBackend::with_string(&mut text, fig.size).into_drawing_area();
        draw(root, fig)?;
    }
    Ok(text)
}

/// Draw `fig` as PNG bytes.
pub fn render_png(fig: &Figure) -> Result<Vec<u8>, ReportError> {
    register_font();
    let (w, h) = fig.size;
    let mut rgb = vec![0u8; (w * h * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut rgb, (w, h)).into_drawing_area();
        draw(root, fig)?;
    }
    let mut out = Vec::new();
    {
        let mut enc = png::Encoder::new(&mut out, w, h);
        enc.set_color(png::ColorType::Rgb);
        enc.set_depth(png::BitDepth::Eight);
        let mut writer = enc
            .write_header()
            .map_err(|err| ReportError::Draw(err.to_string()))?;
        writer
            .write_image_data(&rgb)
            .map_err(|err| ReportError::Draw(err.to_string()))?;
    }
    Ok(out)
}

/// Write `fig` to `path` as SVG or PNG (by extension) through [`write_output`]: an existing file is
/// replaced only with `overwrite`, an input never.
pub fn write_plot(
    path: &Path,
    fig: &Figure,
    overwrite: bool,
    inputs: &[&Path],
) -> crate::Result<()> {
    write_output(path, &plot_bytes(path, fig)?, overwrite, inputs)
}

/// `fig` rendered as the file `path` asks for: SVG or PNG by extension. For a command that renders every
/// output before it writes any.
pub fn plot_bytes(path: &Path, fig: &Figure) -> crate::Result<Vec<u8>> {
    Ok(match PlotFormat::from_path(path)? {
        PlotFormat::Svg => render_svg(fig)?.into_bytes(),
        PlotFormat::Png => render_png(fig)?,
    })
}
