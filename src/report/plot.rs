//! The project's one plotting module: a [`Figure`] is plain data (series, markers, labels), drawn to SVG or
//! PNG with plotters. Nothing here knows about transforms; any stage builds a Figure and calls
//! [`write_plot`].
//!
//! Text uses DejaVu Sans, embedded through the `dejavu` crate and registered once with plotters, so no
//! system fonts are needed (licence notice in docs/THIRD-PARTY.md). PNG output does not rotate the y-axis
//! title (a plotters bitmap limitation); SVG does.

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

/// A line plot.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub series: Vec<Series>,
    pub markers: Vec<Marker>,
    /// Fixed y range; `None` = fitted to the data.
    pub y_range: Option<(f64, f64)>,
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
            y_range: None,
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

fn register_font() {
    FONT.call_once(|| {
        // The embedded face is a valid TrueType font; failure would be a packaging bug.
        plotters::style::register_font(FONT_FAMILY, FontStyle::Normal, dejavu::sans::regular())
            .unwrap_or_else(|_| panic!("the embedded DejaVu Sans font could not be registered"));
    });
}

/// Series colours, chosen for contrast on white.
const PALETTE: [RGBColor; 6] = [
    RGBColor(31, 90, 160),
    RGBColor(200, 80, 30),
    RGBColor(40, 140, 70),
    RGBColor(140, 60, 160),
    RGBColor(120, 120, 120),
    RGBColor(180, 30, 60),
];

/// (x range, y range) of a figure.
type Ranges = ((f64, f64), (f64, f64));

fn ranges(fig: &Figure) -> Result<Ranges, ReportError> {
    let mut x = (f64::INFINITY, f64::NEG_INFINITY);
    let mut y = (f64::INFINITY, f64::NEG_INFINITY);
    for s in &fig.series {
        if s.x.len() != s.y.len() {
            return Err(ReportError::Invalid(format!(
                "series '{}' has {} x values but {} y values",
                s.name,
                s.x.len(),
                s.y.len()
            )));
        }
        for (&a, &b) in s.x.iter().zip(&s.y) {
            if a.is_finite() && b.is_finite() {
                x = (x.0.min(a), x.1.max(a));
                y = (y.0.min(b), y.1.max(b));
            }
        }
    }
    if !(x.0.is_finite() && x.1.is_finite()) {
        return Err(ReportError::Invalid(
            "the plot has no finite data points".to_string(),
        ));
    }
    if x.1 <= x.0 {
        x = (x.0 - 0.5, x.0 + 0.5);
    }
    let y = match fig.y_range {
        Some(r) if r.1 > r.0 => r,
        Some(r) => {
            return Err(ReportError::Invalid(format!(
                "y range {}..{} is empty",
                r.0, r.1
            )))
        }
        None if y.1 > y.0 => {
            let pad = 0.05 * (y.1 - y.0);
            (y.0 - pad, y.1 + pad)
        }
        None => (y.0 - 1.0, y.0 + 1.0),
    };
    Ok((x, y))
}

fn draw<DB: DrawingBackend>(
    root: DrawingArea<DB, plotters::coord::Shift>,
    fig: &Figure,
) -> Result<(), ReportError>
where
    DB::ErrorType: 'static,
{
    let e = |err: DrawingAreaErrorKind<DB::ErrorType>| ReportError::Draw(err.to_string());
    let ((x0, x1), (y0, y1)) = ranges(fig)?;
    root.fill(&WHITE).map_err(e)?;
    let mut chart = ChartBuilder::on(&root)
        .caption(&fig.title, (FONT_FAMILY, 22))
        .margin(14)
        .x_label_area_size(46)
        .y_label_area_size(70)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(e)?;
    chart
        .configure_mesh()
        .x_desc(&fig.x_label)
        .y_desc(&fig.y_label)
        .label_style((FONT_FAMILY, 14))
        .axis_desc_style((FONT_FAMILY, 16))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
        .map_err(e)?;
    for m in &fig.markers {
        if !(x0..=x1).contains(&m.x) {
            continue;
        }
        let style = ShapeStyle::from(&RGBColor(90, 90, 90)).stroke_width(1);
        chart
            .draw_series(LineSeries::new(vec![(m.x, y0), (m.x, y1)], style))
            .map_err(e)?;
        chart
            .draw_series(std::iter::once(Text::new(
                m.label.clone(),
                (m.x, y1),
                (FONT_FAMILY, 13).into_font().color(&RGBColor(60, 60, 60)),
            )))
            .map_err(e)?;
    }
    for (i, s) in fig.series.iter().enumerate() {
        let colour = PALETTE[i % PALETTE.len()];
        let points: Vec<(f64, f64)> =
            s.x.iter()
                .zip(&s.y)
                .filter(|(a, b)| a.is_finite() && b.is_finite())
                .map(|(&a, &b)| (a, b.clamp(y0, y1)))
                .collect();
        let points = envelope(points, (x0, x1), fig.size.0 as usize, fig.max_envelope);
        chart
            .draw_series(LineSeries::new(points, colour.stroke_width(2)))
            .map_err(e)?
            .label(s.name.clone())
            .legend(move |(x, y)| {
                PathElement::new(vec![(x, y), (x + 18, y)], colour.stroke_width(2))
            });
    }
    if fig.series.len() > 1 || fig.series.iter().any(|s| !s.name.is_empty()) {
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.85))
            .border_style(RGBColor(180, 180, 180))
            .label_font((FONT_FAMILY, 14))
            .position(SeriesLabelPosition::UpperRight)
            .draw()
            .map_err(e)?;
    }
    root.present().map_err(e)?;
    Ok(())
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
