//! Where everything of a figure goes, in pixels, as plain data: the title, the legend row, the main plot,
//! the difference panel, the chain strip, the labels and the notes. [`layout`] decides it all before
//! anything is drawn, so the rules (labels never overlap one another or the legend; the plot's x range is
//! the span) are tested on numbers, not pixels.
//!
//! Pixel y grows downwards; a [`Rect`] is `x0 <= x < x1`, `y0 <= y < y1`.

use super::plot::{Figure, FONT_FAMILY};
use super::style::LABEL_PX;
use super::ReportError;
use plotters::style::IntoFont;

/// Space around the whole figure, px.
pub const OUTER_PX: i32 = 10;
/// Height of the title row, px.
pub const TITLE_ROW_PX: i32 = 30;
/// Height of one legend row, px.
pub const LEGEND_ROW_PX: i32 = 20;
/// Width of a legend item's colour swatch and the gap after it, px.
pub const SWATCH_PX: i32 = 22;
/// Gap between legend items, px.
pub const LEGEND_GAP_PX: i32 = 18;
/// Room left of a plot for the y tick labels and the y description, px.
pub const Y_LABEL_AREA_PX: i32 = 74;
/// Room under a plot for the x tick labels, px.
pub const X_LABEL_AREA_PX: i32 = 24;
/// Space above a plot's area inside its panel, px, and right of it.
pub const PANEL_TOP_PX: i32 = 6;
pub const PANEL_RIGHT_PX: i32 = 16;
/// Height of one row of labels, px.
pub const ROW_PX: i32 = 17;
/// Least horizontal gap between two labels in a row, px.
pub const LABEL_GAP_PX: i32 = 6;
/// Rows of finding labels over the plot, and of tick labels under the chain, before labels are thinned
/// out (listed in a note instead).
pub const MAX_LABEL_ROWS: usize = 3;
/// Height of the chain's bands, px.
pub const BAND_PX: i32 = 14;
/// Height of the difference panel as a share of what the plots get.
pub const LOWER_SHARE: f64 = 0.3;
/// Height of one note line and of the x description under everything, px.
pub const NOTE_ROW_PX: i32 = 18;
pub const X_DESC_ROW_PX: i32 = 22;

/// A pixel rectangle.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Rect {
    pub x0: i32,
    pub y0: i32,
    pub x1: i32,
    pub y1: i32,
}

impl Rect {
    pub fn new(x0: i32, y0: i32, x1: i32, y1: i32) -> Rect {
        Rect { x0, y0, x1, y1 }
    }
    pub fn width(&self) -> i32 {
        self.x1 - self.x0
    }
    pub fn height(&self) -> i32 {
        self.y1 - self.y0
    }
    /// True when the two share any pixel.
    pub fn overlaps(&self, o: &Rect) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }
    /// True when `o` lies wholly inside.
    pub fn contains(&self, o: &Rect) -> bool {
        o.x0 >= self.x0 && o.x1 <= self.x1 && o.y0 >= self.y0 && o.y1 <= self.y1
    }
}

/// A label given its place.
#[derive(Debug, Clone, PartialEq)]
pub struct PlacedLabel {
    pub text: String,
    /// The data x it belongs to, and its pixel column.
    pub x: f64,
    pub x_px: i32,
    /// Its row (0 nearest its anchor) and its box.
    pub row: usize,
    pub rect: Rect,
}

/// A legend item: the colour's index in the series and where its text goes.
#[derive(Debug, Clone, PartialEq)]
pub struct LegendItem {
    pub series: usize,
    pub text: String,
    pub rect: Rect,
}

/// Every position of a figure.
#[derive(Debug, Clone, PartialEq)]
pub struct FigureLayout {
    pub size: (i32, i32),
    pub title: Rect,
    /// The legend's box (empty height when there is no legend) and its items.
    pub legend: Rect,
    pub legend_items: Vec<LegendItem>,
    /// The main plot's panel (axes included) and its data area.
    pub main_panel: Rect,
    pub main_plot: Rect,
    pub lower_panel: Option<Rect>,
    pub lower_plot: Option<Rect>,
    /// The chain strip: bands and ticks at its top, tick labels in rows under them.
    pub strip: Option<Rect>,
    /// Labels of findings and markers, in rows at the top of the main plot.
    pub top_labels: Vec<PlacedLabel>,
    /// Labels of the chain's ticks, in rows under the bands.
    pub tick_labels: Vec<PlacedLabel>,
    /// Labels left out for want of room (each still listed in `notes`).
    pub thinned: Vec<String>,
    /// Note lines under the strip, and where they go.
    pub notes: Vec<(String, Rect)>,
    /// The x description's row.
    pub x_desc: Rect,
    /// Data ranges of the main plot (y with room for its label rows) and of the lower panel.
    pub x_range: (f64, f64),
    pub y_range: (f64, f64),
    pub lower_y_range: Option<(f64, f64)>,
}

impl FigureLayout {
    /// Pixel column of data `x` in the plots (all panels share it).
    pub fn x_px(&self, x: f64) -> i32 {
        x_to_px(x, self.x_range, self.main_plot)
    }
}

fn x_to_px(x: f64, (x0, x1): (f64, f64), plot: Rect) -> i32 {
    let f = ((x - x0) / (x1 - x0)).clamp(0.0, 1.0);
    plot.x0 + (f * (plot.width() - 1) as f64).round() as i32
}

/// Width and height of `text` in the embedded font at `px`, pixels (measured with the font itself; an
/// estimate of 0.62 em a character if the font cannot measure).
pub fn text_size(text: &str, px: u32) -> (i32, i32) {
    super::plot::register_font();
    match (FONT_FAMILY, px).into_font().box_size(text) {
        Ok((w, h)) => (w as i32, h as i32),
        Err(_) => (
            (0.62 * px as f64 * text.chars().count() as f64).ceil() as i32,
            px as i32,
        ),
    }
}

/// A label's row and horizontal extent, px, as [`stagger`] places it.
#[derive(Debug, Clone, PartialEq)]
pub struct Slot {
    pub x: f64,
    pub x_px: i32,
    pub row: usize,
    pub left: i32,
    pub right: i32,
    pub text: String,
}

impl Slot {
    /// The placed label, its row `row_y0` pixels down.
    fn at(self, row_y0: i32) -> PlacedLabel {
        let y = row_y0 + ROW_PX * self.row as i32;
        PlacedLabel {
            rect: Rect::new(self.left, y, self.right, y + ROW_PX - 2),
            text: self.text,
            x: self.x,
            x_px: self.x_px,
            row: self.row,
        }
    }
}

/// Place labels in rows, each centred on its pixel column (moved inside `bounds` when it would stick
/// out), in the order given (the most important first): a label takes the first of `max_rows` rows where
/// it keeps [`LABEL_GAP_PX`] from every label already there; one that fits in none is left out and
/// returned in the second list. Rows are numbered from 0; the caller turns a row into a height.
pub fn stagger(
    items: &[(f64, i32, String)],
    bounds: (i32, i32),
    max_rows: usize,
    font_px: u32,
) -> (Vec<Slot>, Vec<String>) {
    let mut rows: Vec<Vec<(i32, i32)>> = vec![Vec::new(); max_rows];
    let mut placed = Vec::new();
    let mut left_out = Vec::new();
    for (x, x_px, text) in items {
        let (w, _) = text_size(text, font_px);
        let mut l = x_px - w / 2;
        l = l.min(bounds.1 - w).max(bounds.0);
        let r = l + w;
        let row = rows.iter().position(|row| {
            row.iter()
                .all(|&(a, b)| r + LABEL_GAP_PX <= a || b + LABEL_GAP_PX <= l)
        });
        match row {
            Some(k) => {
                rows[k].push((l, r));
                placed.push(Slot {
                    x: *x,
                    x_px: *x_px,
                    row: k,
                    left: l,
                    right: r,
                    text: text.clone(),
                });
            }
            None => left_out.push(text.clone()),
        }
    }
    (placed, left_out)
}

/// Lay out `fig` (its x range and the y range with room for the labels are decided here).
pub fn layout(fig: &Figure) -> Result<FigureLayout, ReportError> {
    let (w, h) = (fig.size.0 as i32, fig.size.1 as i32);
    let ((x0, x1), (y0, y1)) = super::plot::ranges(fig)?;
    let title = Rect::new(OUTER_PX, OUTER_PX, w - OUTER_PX, OUTER_PX + TITLE_ROW_PX);

    // Legend: its own rows under the title, outside every plot, so no label can sit on it.
    let mut legend_items = Vec::new();
    let named: Vec<(usize, &str)> = fig
        .series
        .iter()
        .enumerate()
        .filter(|(_, s)| !s.name.is_empty())
        .map(|(i, s)| (i, s.name.as_str()))
        .collect();
    let (mut lx, mut ly) = (OUTER_PX + Y_LABEL_AREA_PX, title.y1);
    let mut legend_rows = 0;
    for (i, name) in named {
        let (tw, _) = text_size(name, LABEL_PX);
        if legend_rows == 0 {
            legend_rows = 1;
        } else if lx + SWATCH_PX + tw > w - OUTER_PX {
            lx = OUTER_PX + Y_LABEL_AREA_PX;
            ly += LEGEND_ROW_PX;
            legend_rows += 1;
        }
        legend_items.push(LegendItem {
            series: i,
            text: name.to_string(),
            rect: Rect::new(lx, ly, lx + SWATCH_PX + tw, ly + LEGEND_ROW_PX),
        });
        lx += SWATCH_PX + tw + LEGEND_GAP_PX;
    }
    let legend = Rect::new(
        OUTER_PX,
        title.y1,
        w - OUTER_PX,
        title.y1 + legend_rows * LEGEND_ROW_PX,
    );

    // Bottom up: the x description, the notes (filled in below), the strip.
    let x_desc = Rect::new(
        OUTER_PX,
        h - OUTER_PX - X_DESC_ROW_PX,
        w - OUTER_PX,
        h - OUTER_PX,
    );
    let plot_x = (OUTER_PX + Y_LABEL_AREA_PX, w - OUTER_PX - PANEL_RIGHT_PX);
    let span_px = Rect::new(plot_x.0, 0, plot_x.1, 0);
    let to_px = |x: f64| x_to_px(x, (x0, x1), span_px);

    // Tick labels of the chain, in x order.
    let mut thinned = Vec::new();
    let mut tick_labels = Vec::new();
    let mut tick_rows = 0;
    if let Some(chain) = &fig.chain {
        let items: Vec<(f64, i32, String)> = chain
            .ticks
            .iter()
            .filter(|t| (x0..=x1).contains(&t.x))
            .map(|t| (t.x, to_px(t.x), t.label.clone()))
            .collect();
        let (placed, out) = stagger(&items, plot_x, MAX_LABEL_ROWS, LABEL_PX);
        tick_rows = placed.iter().map(|p| p.row + 1).max().unwrap_or(0) as i32;
        thinned.extend(out);
        tick_labels = placed;
    }
    // Labels over the main plot: findings first (in their order), then markers.
    let top_items: Vec<(f64, i32, String)> = fig
        .findings
        .iter()
        .chain(&fig.markers)
        .filter(|m| (x0..=x1).contains(&m.x))
        .map(|m| (m.x, to_px(m.x), m.label.clone()))
        .collect();
    let (top_placed, out) = stagger(&top_items, plot_x, MAX_LABEL_ROWS, LABEL_PX);
    thinned.extend(out);
    let top_rows = top_placed.iter().map(|p| p.row + 1).max().unwrap_or(0) as i32;

    let mut notes: Vec<String> = fig.notes.clone();
    if !thinned.is_empty() {
        notes.push(format!(
            "not labelled for want of room: {}",
            thinned.join(", ")
        ));
    }
    let notes_top = x_desc.y0 - NOTE_ROW_PX * notes.len() as i32;
    let notes: Vec<(String, Rect)> = notes
        .into_iter()
        .enumerate()
        .map(|(i, n)| {
            let y = notes_top + NOTE_ROW_PX * i as i32;
            (n, Rect::new(OUTER_PX, y, w - OUTER_PX, y + NOTE_ROW_PX))
        })
        .collect();
    let strip = fig.chain.as_ref().map(|_| {
        let height = BAND_PX + 8 + ROW_PX * tick_rows.max(1);
        Rect::new(OUTER_PX, notes_top - height, w - OUTER_PX, notes_top)
    });
    let plots_bottom = strip.map(|s| s.y0).unwrap_or(notes_top);
    let plots_top = legend.y1 + 4;
    let available = plots_bottom - plots_top;
    if available < 120 {
        return Err(ReportError::Invalid(format!(
            "a figure of {w} x {h} pixels leaves {available} pixels for its plots; make it taller"
        )));
    }
    let lower_h = if fig.lower.is_some() {
        (available as f64 * LOWER_SHARE).round() as i32
    } else {
        0
    };
    let main_panel = Rect::new(OUTER_PX, plots_top, w - OUTER_PX, plots_bottom - lower_h);
    let inner = |p: Rect| {
        Rect::new(
            p.x0 + Y_LABEL_AREA_PX,
            p.y0 + PANEL_TOP_PX,
            p.x1 - PANEL_RIGHT_PX,
            p.y1 - X_LABEL_AREA_PX,
        )
    };
    let main_plot = inner(main_panel);
    let lower_panel = fig
        .lower
        .as_ref()
        .map(|_| Rect::new(OUTER_PX, main_panel.y1, w - OUTER_PX, plots_bottom));
    let lower_plot = lower_panel.map(inner);

    let top_labels = top_placed
        .into_iter()
        .map(|p| p.at(main_plot.y0 + 2))
        .collect();
    let tick_labels = match strip {
        Some(s) => tick_labels
            .into_iter()
            .map(|p| p.at(s.y0 + BAND_PX + 6))
            .collect(),
        None => Vec::new(),
    };
    // Room at the top of the y range for the label rows, so no label covers the data's top.
    let label_px = if top_rows > 0 {
        top_rows * ROW_PX + 4
    } else {
        0
    };
    let f = (label_px as f64 / main_plot.height().max(1) as f64).min(0.6);
    let y1 = if f > 0.0 {
        (y1 - f * y0) / (1.0 - f)
    } else {
        y1
    };
    let lower_y_range = match &fig.lower {
        Some(p) => Some(super::plot::panel_range(p)?),
        None => None,
    };
    Ok(FigureLayout {
        size: (w, h),
        title,
        legend,
        legend_items,
        main_panel,
        main_plot,
        lower_panel,
        lower_plot,
        strip,
        top_labels,
        tick_labels,
        thinned,
        notes,
        x_desc,
        x_range: (x0, x1),
        y_range: (y0, y1),
        lower_y_range,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_that_share_a_place_go_to_separate_rows() {
        let items: Vec<(f64, i32, String)> = ["J2", "J3", "A4"]
            .iter()
            .enumerate()
            .map(|(i, t)| (i as f64, 300 + i as i32, t.to_string()))
            .collect();
        let (placed, out) = stagger(&items, (0, 1000), 3, 13);
        assert!(out.is_empty());
        let rows: Vec<usize> = placed.iter().map(|p| p.row).collect();
        assert_eq!(rows, vec![0, 1, 2]);
    }

    #[test]
    fn labels_beyond_the_rows_are_thinned_out_not_stacked() {
        let items: Vec<(f64, i32, String)> = (0..5)
            .map(|i| (i as f64, 500, format!("connector {i}")))
            .collect();
        let (placed, out) = stagger(&items, (0, 1000), 3, 13);
        assert_eq!(placed.len(), 3);
        assert_eq!(out, vec!["connector 3", "connector 4"]);
    }

    #[test]
    fn a_label_at_the_edge_stays_inside() {
        let items = vec![(0.0, 2, "feedthrough".to_string())];
        let (placed, _) = stagger(&items, (50, 900), 1, 13);
        assert_eq!(placed[0].left, 50, "moved right to the plot's left edge");
    }

    #[test]
    fn text_is_measured_with_the_font() {
        let (a, _) = text_size("J2", 13);
        let (b, _) = text_size("feedthrough", 13);
        assert!(a > 5 && b > 3 * a, "widths {a} and {b}");
    }
}
