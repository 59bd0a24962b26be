//! How bad a finding is: mismatch loss, predicted power drop, and the severity scale.
//!
//! Severity is decided by the drop of transmitted power the finding's fitted model predicts, in dB, at the
//! report's reference frequency, and by its kind (an open or a short always cuts the line):
//!
//! | severity   | predicted drop of transmitted power                               |
//! |------------|-------------------------------------------------------------------|
//! | `info`     | below [`MINOR_DB`], or within the expected thermal change          |
//! | `minor`    | [`MINOR_DB`] to [`MAJOR_DB`]                                       |
//! | `major`    | [`MAJOR_DB`] to [`CRITICAL_DB`]                                    |
//! | `critical` | [`CRITICAL_DB`] or more, or an open or a short                     |
//!
//! The thresholds are the project's own choice for lines that feed cold amplifiers and qubits, where a
//! tenth of a dB is at the edge of what a power calibration notices and 3 dB halves the signal (common
//! practice, no source).

use serde::Serialize;

/// Predicted drop from which a finding is `minor`, dB.
pub const MINOR_DB: f64 = 0.1;
/// Predicted drop from which a finding is `major`, dB.
pub const MAJOR_DB: f64 = 1.0;
/// Predicted drop from which a finding is `critical`, dB (half the power).
pub const CRITICAL_DB: f64 = 3.0;

/// The four severities, ordered from harmless to line-cutting.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Severity {
    Info,
    Minor,
    Major,
    Critical,
}

impl Severity {
    /// Parse `info`, `minor`, `major` or `critical` (case-insensitive).
    pub fn parse(text: &str) -> Option<Severity> {
        match text.trim().to_ascii_lowercase().as_str() {
            "info" => Some(Severity::Info),
            "minor" => Some(Severity::Minor),
            "major" => Some(Severity::Major),
            "critical" => Some(Severity::Critical),
            _ => None,
        }
    }

    /// The severity of a predicted power drop of `drop_db` dB.
    pub fn from_drop_db(drop_db: f64) -> Severity {
        if drop_db >= CRITICAL_DB {
            Severity::Critical
        } else if drop_db >= MAJOR_DB {
            Severity::Major
        } else if drop_db >= MINOR_DB {
            Severity::Minor
        } else {
            Severity::Info
        }
    }

    pub fn name(self) -> &'static str {
        match self {
            Severity::Info => "info",
            Severity::Minor => "minor",
            Severity::Major => "major",
            Severity::Critical => "critical",
        }
    }
}

impl std::fmt::Display for Severity {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Mismatch loss of a reflection `|gamma|`, dB: -10 log10(1 - |Gamma|^2) (any microwave text, e.g. Pozar,
/// Microwave Engineering, 4th ed., sec. 2.3, from memory). Infinite for |Gamma| >= 1.
pub fn mismatch_loss_db(gamma_mag: f64) -> f64 {
    let t = 1.0 - gamma_mag * gamma_mag;
    if t <= 0.0 {
        f64::INFINITY
    } else {
        -10.0 * t.log10()
    }
}

/// A power ratio as a drop in dB (positive for a loss); infinite for a ratio of zero.
pub fn drop_db(power_ratio: f64) -> f64 {
    if power_ratio <= 0.0 {
        f64::INFINITY
    } else {
        -10.0 * power_ratio.log10()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mismatch_loss_check_values() {
        // 75 ohm on 50 ohm: |Gamma| = 0.2, mismatch loss 0.177 dB; 100 ohm: 1/3, 0.512 dB
        // (project domain notes, calc from -10 log10(1 - |G|^2)).
        assert!((mismatch_loss_db(0.2) - 0.177).abs() < 5e-4);
        assert!((mismatch_loss_db(1.0 / 3.0) - 0.512).abs() < 5e-4);
        assert_eq!(mismatch_loss_db(1.0), f64::INFINITY);
    }

    #[test]
    fn scale_is_ordered_and_parses() {
        assert!(Severity::Info < Severity::Minor && Severity::Major < Severity::Critical);
        assert_eq!(Severity::from_drop_db(0.05), Severity::Info);
        assert_eq!(Severity::from_drop_db(0.5), Severity::Minor);
        assert_eq!(Severity::from_drop_db(1.5), Severity::Major);
        assert_eq!(Severity::from_drop_db(f64::INFINITY), Severity::Critical);
        assert_eq!(Severity::parse("MAJOR"), Some(Severity::Major));
        assert_eq!(Severity::parse("severe"), None);
    }
}
