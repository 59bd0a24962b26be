//! Placeholder: filled in by its issue.

/// Errors of this layer.
#[derive(Debug, thiserror::Error)]
pub enum TouchstoneError {
    #[error("{0}")]
    Invalid(String),
}
