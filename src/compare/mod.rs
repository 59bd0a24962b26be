//! The comparator: align a baseline and a current sweep of one line, detect what changed, rank it by what it
//! costs, and explain it with a lumped model.
//!
//! Submodules: [`align`] (per-segment delay scale and loss change from landmarks), [`detect`] (noise floor,
//! sidelobe masks, ghosts), [`lumped`] (models of one discontinuity and their fit), [`severity`] (mismatch
//! loss, power drop, the severity scale).

pub mod align;
pub mod detect;
pub mod lumped;
pub mod severity;

pub use severity::Severity;

/// Errors of the comparator.
#[derive(Debug, thiserror::Error)]
pub enum CompareError {
    #[error("{0}")]
    Invalid(String),
}
