//! Reports for people: plots and the HTML report (text and JSON are printed by the commands from the
//! result structs).
//!
//! `plot.rs` draws a [`Figure`] (plain data: series, markers, findings, the chain strip, a lower panel,
//! notes) to SVG or PNG; `layout.rs` decides every position in pixels first, as plain data; `style.rs` holds
//! the colour-blind-safe palette and the temperature shade; `views.rs` turns the results of `trace`,
//! `locate` and `compare` (and a line file) into figures, with the default span; `evidence.rs` draws a
//! finding's local reflection against frequency with its fitted model; `html.rs` writes the
//! self-contained HTML report of `compare` and `locate` (`--report FILE.html`), `fleet.rs` that of `survey`, `history.rs` that of a line's history (`history show --report`).

pub mod evidence;
pub mod fleet;
pub mod history;
pub mod html;
pub mod layout;
pub mod plot;
pub mod style;
pub mod views;

pub use plot::{
    plot_bytes, render_png, render_svg, write_plot, Band, ChainStrip, Figure, Marker, Panel,
    PlotFormat, Series,
};

/// Errors of this layer.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    #[error("{0}")]
    Invalid(String),
    /// The plotting backend failed.
    #[error("drawing the plot failed: {0}")]
    Draw(String),
}
