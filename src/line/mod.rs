//! The line as built: a chain of cables, connectors, attenuators and a far-end device across the stages
//! of a cryostat, its cryogenic physics (materials, propagation, warm -> cold change) and an exact forward
//! simulator.
//!
//! How the parts fit: [`file`](mod@file) reads a TOML line file and resolves it once into a [`Line`] ([`chain`]),
//! whose cables come from the [`catalogue`] or the file. [`materials`] gives material data against
//! temperature, [`physics`] turns a section of line at a temperature into its propagation constant and
//! characteristic impedance, [`abcd`] holds the 2x2 chain-matrix algebra, [`position`] maps delay to
//! as-built position, [`thermal`] reports the expected warm -> cold change, [`conduction`] gives a cable's
//! steady-state temperature profile between stages, [`names`] compares the names people write and
//! suggests the closest known one, [`quantity`] reads a quantity written with its unit (`"30 cm"`), [`fault`] parses and models
//! faults, [`simulate`](mod@simulate) cascades it all into a [`Network`](crate::Network) (optionally with
//! physics moved away from the nominal model by a [`Perturbation`], for testing the analysis against a
//! world that is not its own model), and
//! [`visibility`](mod@visibility) says what a sweep of a given noise floor can see of each element.
//!
//! Conventions used throughout this layer:
//! - Time dependence e^{+j omega t}; a section of length l multiplies a forward wave by e^{-gamma l},
//!   gamma = alpha + j beta with alpha, beta >= 0 for a passive line.
//! - SI units: Hz, s, m, ohm, K, F, H; attenuation in nepers inside, dB only at the edges (file keys
//!   ending in `_db`, reports).
//! - Positions are one-way, in as-built (room-temperature) metres from the reference plane, which is the
//!   start of the first element. A cold line keeps its as-built positions; only its delays change.
//! - Delays are one-way group delays at a reference frequency ([`position::REFERENCE_FREQUENCY_HZ`]
//!   unless stated); round-trip times are twice the one-way delay.

pub mod abcd;
pub mod catalogue;
pub mod chain;
pub mod conduction;
pub mod fault;
pub mod file;
pub mod materials;
pub mod names;
pub mod perturb;
pub mod physics;
pub mod position;
pub mod quantity;
pub mod rng;
pub mod simulate;
pub mod thermal;
pub mod visibility;

pub use chain::{ConnectorLengths, Element, ElementKind, Line, Load, Stage, State};
pub use fault::{Fault, FaultKind, FaultTarget};
pub use perturb::Perturbation;
pub use position::{LineMap, Place};
pub use simulate::{simulate, SimConfig};
pub use thermal::{PullBack, ThermalChange};
pub use visibility::{visibility, Visibility};

use std::path::PathBuf;

/// Errors of this layer.
#[derive(Debug, thiserror::Error)]
pub enum LineError {
    /// A line file that cannot be used; `line`/`column` are 1-based, 0 when unknown.
    #[error("{}:{line}:{column}: {}{message}", path.display(), key.as_ref().map(|k| format!("key '{k}': ")).unwrap_or_default())]
    File {
        path: PathBuf,
        line: usize,
        column: usize,
        key: Option<String>,
        message: String,
    },
    /// A fault specification that cannot be understood or placed.
    #[error("fault '{spec}': {message}\n  grammar: {}", fault::GRAMMAR)]
    Fault { spec: String, message: String },
    /// A request the line model cannot honour (the message says what fixes it).
    #[error("{0}")]
    Invalid(String),
}
