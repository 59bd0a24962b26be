//! Reports: plots now (text and JSON are printed by the commands from the result structs).

pub mod plot;

pub use plot::{
    plot_bytes, render_png, render_svg, write_plot, Figure, Marker, PlotFormat, Series,
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
