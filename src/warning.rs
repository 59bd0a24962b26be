//! Typed warnings: things that are not errors but that the user should know, each with a fix.

use serde::Serialize;

/// A warning attached to a result. Serialized into every `--json` output under `warnings`.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Warning {
    /// A short stable identifier, kebab-case (for example `missing-option-line`).
    pub kind: String,
    /// What was noticed, in a sentence.
    pub message: String,
    /// File and line the warning is about, when it is about a file (`path:line`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub location: Option<String>,
    /// What the user can do about it.
    pub fix: String,
}

impl Warning {
    pub fn new(kind: &str, message: impl Into<String>, fix: impl Into<String>) -> Self {
        Warning {
            kind: kind.to_string(),
            message: message.into(),
            location: None,
            fix: fix.into(),
        }
    }

    /// The same warning, located at `location` (`path:line`).
    pub fn at(mut self, location: impl Into<String>) -> Self {
        self.location = Some(location.into());
        self
    }
}

impl std::fmt::Display for Warning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        if let Some(loc) = &self.location {
            write!(f, "{loc}: ")?;
        }
        write!(f, "{} ({})", self.message, self.fix)
    }
}
