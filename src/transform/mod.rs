//! Frequency to time and distance: band-pass and low-pass traces, windows, chirp-z zoom, gating, peaks.
//!
//! Conventions (all submodules):
//! - Time dependence e^{+j omega t}: an echo of reflection rho at round-trip delay tau appears in the sweep
//!   as rho e^{-j 2 pi f tau}, and the time response is `h(t) = sum W_n G_n e^{+j 2 pi f_n t} / sum W_n`.
//! - Normalisation: by the window sum, so a single reflection rho at tau on a lossless matched line gives a
//!   band-pass peak |rho| and a low-pass impulse rho, whatever the window and padding; the low-pass step of
//!   it settles at rho.
//! - Time origin: the reference plane of the sweep; times are round trip, in seconds; distance is one-way,
//!   in metres, through a [`DistanceMap`]. dB only in band-pass `values` (20 log10 |h|).
//! - FFT: rustfft, forward e^{-j}, inverse e^{+j}, both unnormalised; lengths rounded up to 2-3-5 sizes.
//!
//! Flow: a [`TracePlan`] is checked against the grid ([`TracePlan::check`] gives the axis, resolution,
//! alias-free range and warnings), a [`Spectrum`] is prepared (window, DC estimate, optional resampling),
//! and a [`TraceEngine`] evaluates it on the axis by FFT (whole range) or chirp-z (a span), caching plans.

pub mod bandpass;
pub mod czt;
pub mod distance;
pub mod error;
pub mod gate;
pub mod lowpass;
pub mod outcome;
pub mod peak;
pub mod plan;
pub mod trace;
pub mod window;

pub use czt::{ChirpZ, FftCache};
pub use distance::{DistanceMap, Landmark, UniformLine, C0_M_PER_S, DEFAULT_VELOCITY_FACTOR};
pub use error::TransformError;
pub use gate::{gate, gate_with, GatePlan, Gated};
pub use outcome::{run_trace, TraceConfig, TraceOutcome};
pub use peak::{find_peaks, refine_peak, Peak};
pub use plan::{uniform_grid, DcMethod, Grid, Mode, PlanCheck, TimeAxis, TracePlan};
pub use trace::{
    classify_step, impedance_from_rho, trace, Spectrum, StepFeature, Trace, TraceEngine,
};
pub use window::{Window, WindowFigures, WindowInfo};
