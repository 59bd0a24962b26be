//! Delay <-> as-built position along the chain, and what lies at a position.
//!
//! Conventions: distance is one-way, in as-built (room-temperature) metres from the reference plane (the
//! start of the first element), warm or cold; only the delays change on cooling. Delay is the one-way
//! group delay d(beta l)/d(omega) at a reference frequency, including the skin-effect internal-inductance
//! phase; round-trip time is twice the one-way delay. Inside an element the delay is piecewise linear over
//! its temperature slices; before the reference plane and past the end the nearest slope is extended.

use super::chain::{Element, ElementKind, Line, State};
use super::materials::C0;
use super::physics::SectionState;
use serde::Serialize;

/// Reference frequency for group delay, Hz: mid-band of the usual 0.5-10 GHz sweep (our choice, documented
/// in docs/line-file.md). Group delay of a lossy line changes with frequency through the skin-effect term;
/// callers with another band pass their own.
pub const REFERENCE_FREQUENCY_HZ: f64 = 5e9;

/// Largest temperature step inside one slice of a cable, K. A 295 K -> 45 K cable becomes 50 slices;
/// halving this changes the delay of the demo line by < 1e-6 relative (checked in tests/line_position.rs).
pub const SLICE_DT_K: f64 = 5.0;
/// Most slices per element.
pub const MAX_SLICES: usize = 200;

/// A slice of an element: as-built offset of its start, as-built length, and its temperature (midpoint).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Slice {
    pub offset_m: f64,
    pub length_m: f64,
    pub t_k: f64,
}

/// Slices of the part [from_m, to_m] (offsets inside `e`) of an element in `state`.
pub fn slices(e: &Element, state: State, from_m: f64, to_m: f64) -> Vec<Slice> {
    let len = (to_m - from_m).max(0.0);
    let t0 = e.temperature_at(from_m, state);
    let t1 = e.temperature_at(to_m, state);
    let n = (((t1 - t0).abs() / SLICE_DT_K).ceil() as usize).clamp(1, MAX_SLICES);
    let h = len / n as f64;
    (0..n)
        .map(|i| {
            let off = from_m + h * i as f64;
            Slice {
                offset_m: off,
                length_m: h,
                t_k: e.temperature_at(off + 0.5 * h, state),
            }
        })
        .collect()
}

/// Cumulative one-way delay at as-built positions.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DelayProfile {
    pub state: State,
    pub reference_frequency_hz: f64,
    /// (position m, one-way delay s), increasing.
    pub knots: Vec<(f64, f64)>,
}

impl DelayProfile {
    /// Profile of what reflection can see on `line`.
    pub fn new(line: &Line, state: State, f_ref: f64) -> DelayProfile {
        let mut knots = vec![(0.0, 0.0)];
        let mut tau = 0.0;
        for e in line.visible() {
            match &e.kind {
                ElementKind::Cable { cable: k } | ElementKind::Connector { section: k, .. } => {
                    for s in slices(e, state, 0.0, e.length_m) {
                        let st = SectionState::new(k, s.t_k, line.ptfe_model);
                        tau += st.group_delay_per_m(f_ref) * s.length_m;
                        knots.push((e.start_m + s.offset_m + s.length_m, tau));
                    }
                }
                ElementKind::Attenuator { er, .. } => {
                    tau += e.length_m * er.sqrt() / C0;
                    knots.push((e.end_m(), tau));
                }
                ElementKind::Device { .. } => {}
            }
        }
        knots.dedup_by(|b, a| (b.0 - a.0).abs() < 1e-15);
        DelayProfile {
            state,
            reference_frequency_hz: f_ref,
            knots,
        }
    }

    /// One-way delay to `distance_m`, s.
    pub fn delay_s(&self, distance_m: f64) -> f64 {
        let k = &self.knots;
        if k.len() < 2 {
            return distance_m / C0;
        }
        let seg = if distance_m <= k[0].0 {
            0
        } else {
            k.windows(2)
                .position(|w| distance_m <= w[1].0)
                .unwrap_or(k.len() - 2)
        };
        let ((x0, y0), (x1, y1)) = (k[seg], k[seg + 1]);
        y0 + (y1 - y0) * (distance_m - x0) / (x1 - x0)
    }

    /// As-built distance reached after one-way delay `delay_s`, m.
    pub fn distance_m(&self, delay_s: f64) -> f64 {
        let k = &self.knots;
        if k.len() < 2 {
            return delay_s * C0;
        }
        let seg = if delay_s <= k[0].1 {
            0
        } else {
            k.windows(2)
                .position(|w| delay_s <= w[1].1)
                .unwrap_or(k.len() - 2)
        };
        let ((x0, y0), (x1, y1)) = (k[seg], k[seg + 1]);
        x0 + (x1 - x0) * (delay_s - y0) / (y1 - y0)
    }
}

/// What lies at a position along the line.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Place {
    /// Name of the element containing the position (the first or last element outside the line).
    pub element: String,
    pub element_index: usize,
    /// As-built offset inside that element, m (negative before the reference plane, past its length
    /// beyond the end).
    pub offset_m: f64,
    /// The nearest named connector, if the line has any.
    pub nearest_connector: Option<String>,
    /// As-built distance from the position to that connector's centre, m (always >= 0).
    pub nearest_connector_distance_m: Option<f64>,
}

impl Line {
    /// Round-trip time to `distance_m` (as built) in `state`, at [`REFERENCE_FREQUENCY_HZ`], s.
    pub fn round_trip_s(&self, distance_m: f64, state: State) -> f64 {
        2.0 * DelayProfile::new(self, state, REFERENCE_FREQUENCY_HZ).delay_s(distance_m)
    }

    /// As-built distance of an echo arriving after `round_trip_s` in `state`, m.
    pub fn distance_m(&self, round_trip_s: f64, state: State) -> f64 {
        DelayProfile::new(self, state, REFERENCE_FREQUENCY_HZ).distance_m(0.5 * round_trip_s)
    }

    /// The element, offset and nearest connector at as-built `distance_m`.
    pub fn where_is(&self, distance_m: f64) -> Place {
        let vis = self.visible();
        let idx = if vis.is_empty() {
            0
        } else {
            vis.iter()
                .position(|e| distance_m < e.end_m())
                .unwrap_or(vis.len() - 1)
        };
        let (element, offset_m) = match vis.get(idx) {
            Some(e) => (e.name.clone(), distance_m - e.start_m),
            None => (String::new(), distance_m),
        };
        let nearest = self
            .elements
            .iter()
            .filter(|e| matches!(e.kind, ElementKind::Connector { .. }))
            .map(|e| (e, (distance_m - (e.start_m + 0.5 * e.length_m)).abs()))
            .min_by(|a, b| a.1.total_cmp(&b.1));
        Place {
            element,
            element_index: idx,
            offset_m,
            nearest_connector: nearest.map(|(e, _)| e.name.clone()),
            nearest_connector_distance_m: nearest.map(|(_, d)| d),
        }
    }
}

impl crate::transform::DistanceMap for LineMap<'_> {
    fn distance_m(&self, round_trip_s: f64) -> f64 {
        LineMap::distance_m(self, round_trip_s)
    }
    fn round_trip_s(&self, distance_m: f64) -> f64 {
        LineMap::round_trip_s(self, distance_m)
    }
    fn describe(&self) -> String {
        LineMap::describe(self)
    }
    /// Every connector and attenuator (at its centre) and the first device (at its start, where
    /// reflection stops), among the elements reflection can see.
    fn landmarks(&self) -> Vec<crate::transform::Landmark> {
        self.line
            .visible()
            .iter()
            .filter(|e| !matches!(e.kind, ElementKind::Cable { .. }))
            .map(|e| {
                let x = match e.kind {
                    ElementKind::Device { .. } => e.start_m,
                    _ => e.start_m + 0.5 * e.length_m,
                };
                crate::transform::Landmark {
                    name: e.name.clone(),
                    kind: e.kind_name().to_string(),
                    distance_m: x,
                    round_trip_s: LineMap::round_trip_s(self, x),
                }
            })
            .collect()
    }
}

/// A line in one state as a delay <-> distance map (for the time-domain layer's distance axis).
#[derive(Debug, Clone)]
pub struct LineMap<'a> {
    pub line: &'a Line,
    pub profile: DelayProfile,
}

impl<'a> LineMap<'a> {
    pub fn new(line: &'a Line, state: State) -> LineMap<'a> {
        Self::at_frequency(line, state, REFERENCE_FREQUENCY_HZ)
    }

    pub fn at_frequency(line: &'a Line, state: State, f_ref: f64) -> LineMap<'a> {
        LineMap {
            line,
            profile: DelayProfile::new(line, state, f_ref),
        }
    }

    /// As-built distance of an echo at `round_trip_s`, m.
    pub fn distance_m(&self, round_trip_s: f64) -> f64 {
        self.profile.distance_m(0.5 * round_trip_s)
    }

    /// Round-trip time to as-built `distance_m`, s.
    pub fn round_trip_s(&self, distance_m: f64) -> f64 {
        2.0 * self.profile.delay_s(distance_m)
    }

    /// One line describing the map.
    pub fn describe(&self) -> String {
        let state = match self.profile.state {
            State::Warm => "warm",
            State::Cold => "cold",
        };
        format!(
            "line '{}' ({state}), as-built metres, {} elements over {:.4} m, round trip {:.4} ns to the end, group delay at {:.3} GHz",
            self.line.name,
            self.line.visible().len(),
            self.line.length_m(),
            self.round_trip_s(self.line.length_m()) * 1e9,
            self.profile.reference_frequency_hz / 1e9
        )
    }
}
