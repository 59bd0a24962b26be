//! Errors of the transform layer. Each message says what was wrong, where, and what fixes it.

/// Errors of the transform layer.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TransformError {
    /// A request that cannot be honoured, with the fix in the message.
    #[error("{0}")]
    Invalid(String),
    /// Frequencies and values differ in length.
    #[error("{freqs} frequencies but {values} values; give one value per frequency")]
    LengthMismatch { freqs: usize, values: usize },
    /// Too few points for any transform.
    #[error("the sweep has {points} point(s); a time-domain trace needs at least {needed}")]
    TooFewPoints { points: usize, needed: usize },
    /// A frequency or value that is not a finite number.
    #[error("point {index} (zero-based) is not a finite number; remove or re-measure that point")]
    NonFinite { index: usize },
    /// The frequency grid is not uniform (required by every transform here).
    #[error(
        "the frequency grid is not uniform: step {index} (zero-based) is {found_hz} Hz where {expected_hz} Hz \
         was expected; re-measure on a uniform (linear) sweep, or resample it onto a uniform grid first"
    )]
    NonUniformGrid {
        index: usize,
        expected_hz: f64,
        found_hz: f64,
    },
    /// Low-pass modes need f_k = k df; this grid is not harmonic.
    #[error(
        "low-pass needs a harmonic grid (f_k = k*df, starting at 0 or df): this sweep starts at {start_hz} Hz with \
         steps of {step_hz} Hz ({ratio:.4} steps above zero); use --mode band-pass, or pass --resample to \
         interpolate onto a harmonic grid (documented in docs/method.md), or re-measure starting at one step: \
         from {step_hz} Hz to {stop_hz} Hz in steps of {step_hz} Hz ({harmonics} points) is such a sweep"
    )]
    NotHarmonic {
        start_hz: f64,
        step_hz: f64,
        ratio: f64,
        /// The sweep's last frequency, and the points of a harmonic sweep of the same step up to it.
        stop_hz: f64,
        harmonics: u64,
    },
    /// A window name that is not known.
    #[error("unknown window '{text}': {reason}; allowed: rect, hann, hamming, blackman-harris, kaiser:BETA (e.g. kaiser:6)")]
    BadWindow { text: String, reason: String },
}
