//! The resolved line: elements in order from the reference plane, with as-built positions, the stages
//! they sit at, and their temperatures warm and cold.
//!
//! Conventions: positions in as-built metres from the reference plane (start of the first element);
//! temperatures in kelvin; a cable's temperature varies linearly with as-built position between the
//! stages at its two ends. Warm means every element at [`ROOM_K`].

use super::catalogue::CableKind;
use super::materials::{PtfeModel, ROOM_K};
use serde::Serialize;
use std::path::PathBuf;

/// Which cooldown state a computation describes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum State {
    /// Everything at room temperature.
    Warm,
    /// Every stage at its cold temperature.
    Cold,
}

impl State {
    /// `warm` or `cold`.
    pub fn name(self) -> &'static str {
        match self {
            State::Warm => "warm",
            State::Cold => "cold",
        }
    }
}

impl std::str::FromStr for State {
    type Err = String;
    fn from_str(s: &str) -> Result<State, String> {
        match s.to_ascii_lowercase().as_str() {
            "warm" => Ok(State::Warm),
            "cold" => Ok(State::Cold),
            _ => Err(format!("unknown state '{s}': use 'warm' or 'cold'")),
        }
    }
}

/// A temperature stage of the cryostat.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Stage {
    pub name: String,
    /// Cold temperature, K.
    pub kelvin: f64,
}

/// The name of the built-in room-temperature stage.
pub const ROOM_STAGE: &str = "room";

/// What terminates the chain at a device.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "lowercase", tag = "type", content = "value")]
pub enum Load {
    /// Matched to the line's impedance.
    Match,
    Open,
    Short,
    /// A resistive load, ohm.
    Ohms(f64),
    /// A real reflection coefficient (from a stated return loss; sign positive).
    Reflection(f64),
}

/// The kind of an element and its own parameters.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "lowercase")]
pub enum ElementKind {
    Cable {
        cable: CableKind,
    },
    /// A connector pair, modelled as a short uniform section (`section`) at one stage.
    Connector {
        section: CableKind,
        /// Radius of the centre conductor ends that meet here, m (for pin-gap faults).
        pin_radius_m: f64,
    },
    /// A matched attenuator with a small delay (its body as a matched line of permittivity `er`).
    Attenuator {
        loss_db: f64,
        impedance_ohm: f64,
        er: f64,
    },
    /// The far end, or a part reflection cannot see through.
    Device {
        load: Load,
    },
}

/// One element of the chain.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Element {
    pub name: String,
    pub kind: ElementKind,
    /// As-built length, m. Under [`ConnectorLengths::InCables`] a cable's is its length as written less
    /// the connector sections carved from its ends.
    pub length_m: f64,
    /// As-built position of its start, m from the reference plane.
    pub start_m: f64,
    /// Stages at its two ends (equal for a connector, attenuator or device).
    pub from_stage: String,
    pub to_stage: String,
    /// Cold temperatures at its two ends, K.
    pub cold_from_k: f64,
    pub cold_to_k: f64,
    /// Line number in the line file (1-based; 0 when built in code).
    pub line_no: usize,
}

impl Element {
    /// Temperatures at its two ends in `state`, K.
    pub fn end_temperatures(&self, state: State) -> (f64, f64) {
        match state {
            State::Warm => (ROOM_K, ROOM_K),
            State::Cold => (self.cold_from_k, self.cold_to_k),
        }
    }

    /// Temperature at `offset_m` (as built) inside the element, K.
    pub fn temperature_at(&self, offset_m: f64, state: State) -> f64 {
        let (t0, t1) = self.end_temperatures(state);
        if self.length_m <= 0.0 {
            return t0;
        }
        let x = (offset_m / self.length_m).clamp(0.0, 1.0);
        t0 + (t1 - t0) * x
    }

    /// End position, m.
    pub fn end_m(&self) -> f64 {
        self.start_m + self.length_m
    }

    /// Its cross-section, for cables and connectors.
    pub fn section(&self) -> Option<&CableKind> {
        match &self.kind {
            ElementKind::Cable { cable } => Some(cable),
            ElementKind::Connector { section, .. } => Some(section),
            _ => None,
        }
    }

    pub fn kind_name(&self) -> &'static str {
        match self.kind {
            ElementKind::Cable { .. } => "cable",
            ElementKind::Connector { .. } => "connector",
            ElementKind::Attenuator { .. } => "attenuator",
            ElementKind::Device { .. } => "device",
        }
    }
}

/// How a connector without its own `length_m` enters the chain's as-built lengths (the line file's
/// top-level `connector_lengths` key, docs/line-file.md).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ConnectorLengths {
    /// Cable lengths are measured end to end, connector bodies included, so a mated pair between two
    /// assemblies adds no length: its section (default 8 mm) is taken half from the end of the cable
    /// before it and half from the start of the cable after it (all from one side when only one
    /// neighbour is a cable), and its centre sits at the joint. The line file's default.
    #[default]
    InCables,
    /// Every connector adds its section length (default 8 mm) to the chain.
    Added,
}

impl ConnectorLengths {
    /// Every convention, in the order listed to users.
    pub const ALL: [ConnectorLengths; 2] = [ConnectorLengths::InCables, ConnectorLengths::Added];

    /// The name written in line files and reports: `in-cables` or `added`.
    pub fn name(self) -> &'static str {
        match self {
            ConnectorLengths::InCables => "in-cables",
            ConnectorLengths::Added => "added",
        }
    }

    /// The convention named `name` (as [`ConnectorLengths::name`] gives it, any case).
    pub fn parse(name: &str) -> Option<ConnectorLengths> {
        Self::ALL
            .into_iter()
            .find(|c| c.name().eq_ignore_ascii_case(name.trim()))
    }
}

/// A resolved line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Line {
    /// The line's identity, e.g. "north-fridge/in-07".
    pub name: String,
    /// Reference (system) impedance, ohm.
    pub impedance_ohm: f64,
    /// Stages, "room" first.
    pub stages: Vec<Stage>,
    pub elements: Vec<Element>,
    /// How PTFE follows the conductors on cooling.
    pub ptfe_model: PtfeModel,
    /// How connectors without their own length entered the as-built lengths: `InCables` (the line
    /// file's default), each such connector's section was carved out of the cables beside it and the
    /// chain is as long as the cables as written; `Added`, every connector added its length. Only
    /// bookkeeping: the elements' `start_m` and `length_m` already include its effect. [`Line::new`]
    /// takes the elements' lengths as given and says `Added`; the file reader says what the file chose.
    pub connector_lengths: ConnectorLengths,
    /// The line's sweeps pass through gain (an amplifier between the analyser's port and the line, as in
    /// a reflection measurement through a cold amplifier chain): their level says nothing of the line's
    /// reflections. The line file's top-level `gain_in_path` (default false); the comparator also finds
    /// gain in the data when a sweep returns more power than a passive line can.
    pub gain_in_path: bool,
    /// The file it came from, if any.
    pub source: Option<PathBuf>,
    /// Things in the file worth knowing that are not errors (filled in by the file reader).
    pub warnings: Vec<crate::Warning>,
}

impl Line {
    /// Build a line from elements whose `start_m` is filled in here (cumulative as-built lengths).
    pub fn new(
        name: &str,
        impedance_ohm: f64,
        stages: Vec<Stage>,
        mut elements: Vec<Element>,
    ) -> Line {
        let mut x = 0.0;
        for e in &mut elements {
            e.start_m = x;
            x += e.length_m;
        }
        Line {
            name: name.to_string(),
            impedance_ohm,
            stages,
            elements,
            ptfe_model: PtfeModel::Gapped,
            connector_lengths: ConnectorLengths::Added,
            gain_in_path: false,
            source: None,
            warnings: Vec::new(),
        }
    }

    /// Index of the first device (where reflection stops), if any.
    pub fn first_device(&self) -> Option<usize> {
        self.elements
            .iter()
            .position(|e| matches!(e.kind, ElementKind::Device { .. }))
    }

    /// The elements reflection can see: up to and including the first device.
    pub fn visible(&self) -> &[Element] {
        match self.first_device() {
            Some(i) => &self.elements[..=i],
            None => &self.elements,
        }
    }

    /// As-built length of what reflection can see, m.
    pub fn length_m(&self) -> f64 {
        self.visible().last().map(|e| e.end_m()).unwrap_or(0.0)
    }

    /// An element by name.
    pub fn element(&self, name: &str) -> Option<(usize, &Element)> {
        self.elements
            .iter()
            .enumerate()
            .find(|(_, e)| e.name == name)
    }

    /// Cold temperature of a stage.
    pub fn stage_kelvin(&self, name: &str) -> Option<f64> {
        self.stages
            .iter()
            .find(|s| s.name == name)
            .map(|s| s.kelvin)
    }
}
