//! The comparator: align a baseline and a current sweep of one line, detect what changed, rank it by what it
//! costs, and explain it with a lumped model; and, for a single sweep, list and explain every event.
//!
//! Submodules: [`chain`] (the line as the comparator sees it), [`analysis`] (one sweep: trace, noise, events,
//! local reflections), [`align`] (per-segment delay scale and loss change from landmarks), [`detect`] (noise
//! floor, sidelobe masks, ghosts), [`lumped`] (models of one discontinuity and their fit), [`evidence`] (a finding's local
//! reflection and its model's, for its plot), [`severity`]
//! (mismatch loss, power drop, the severity scale), [`run`] (the procedure), [`report`] (the results).

pub mod align;
pub mod analysis;
pub mod anchor;
pub mod chain;
pub mod detect;
pub mod difference;
pub mod evidence;
pub mod explain;
pub mod far_end;
pub mod from_line;
pub mod job;
pub mod landmarks;
pub mod locate;
pub mod lumped;
pub mod place;
pub mod report;
pub mod run;
pub mod severity;
pub mod states;
pub mod sweep;
pub mod text;

pub use chain::{ChainView, LossModel, Segment, SegmentKind};
pub use locate::locate;
pub use report::{CompareReport, FaultKind, Finding, LocateReport};
pub use run::compare;
pub use severity::Severity;
pub use sweep::{AnalysisConfig, Sweep};

/// Errors of the comparator.
#[derive(Debug, thiserror::Error)]
pub enum CompareError {
    /// A request that cannot be honoured, with the fix in the message.
    #[error("{0}")]
    Invalid(String),
    /// The time-domain stage refused a sweep.
    #[error(transparent)]
    Transform(#[from] crate::transform::TransformError),
}
