//! Building the comparator's [`ChainView`] from a line file's model, for the two sweeps' states.
//!
//! Each element's round-trip delay is twice the difference of the model's one-way group delay profile
//! (`line::position::DelayProfile`) across it; its round-trip loss is twice the attenuation integrated over
//! its temperature slices, evaluated at two frequencies of the sweep and fitted as a sqrt(f) plus f law
//! (conductor plus dielectric), with an attenuator's own loss as the flat part.

use super::chain::{ChainView, LossModel, Segment, SegmentKind};
use crate::line::materials::ROOM_K;
use crate::line::physics::{SectionState, NEPER_DB};

use crate::line::position::{slices, DelayProfile};
use crate::line::{Element, ElementKind, Line, State};

/// Round-trip loss of element `e` in `state` at each of the frequencies `f` (Hz), dB, without an
/// attenuator's flat part. Each temperature slice's state is worked out once for all the frequencies.
fn element_loss_db<const N: usize>(
    line: &Line,
    e: &Element,
    state: State,
    f: [f64; N],
) -> [f64; N] {
    let kind = match &e.kind {
        ElementKind::Cable { cable } => cable,
        ElementKind::Connector { section, .. } => section,
        _ => return [0.0; N],
    };
    let mut np = [0.0; N];
    for s in slices(e, state, 0.0, e.length_m) {
        let st = SectionState::new(kind, s.t_k, line.ptfe_model);
        for (acc, &fk) in np.iter_mut().zip(&f) {
            *acc += st.alpha_per_m(fk) * s.length_m;
        }
    }
    np.map(|v| 2.0 * v * NEPER_DB)
}

/// Largest difference from room temperature, K, at which an element's cold end counts as at room
/// temperature: a top-flange section is at the lab's temperature, a few kelvin either way (common practice,
/// no source).
pub const ROOM_TOLERANCE_K: f64 = 2.0;

/// Whether element `e` stays at room temperature when the line is cold (both its ends): a cooldown leaves
/// it as it was.
fn at_room(e: &Element) -> bool {
    (e.cold_from_k - ROOM_K).abs() <= ROOM_TOLERANCE_K
        && (e.cold_to_k - ROOM_K).abs() <= ROOM_TOLERANCE_K
}

fn stage_text(e: &Element) -> String {
    let pretty = |s: &str| -> String {
        match s {
            "room" => "room temperature".into(),
            other => other.to_string(),
        }
    };
    if e.from_stage == e.to_stage || e.to_stage.is_empty() {
        if e.from_stage.is_empty() {
            String::new()
        } else {
            format!("{} stage", pretty(&e.from_stage))
        }
    } else {
        format!("{} to {}", pretty(&e.from_stage), pretty(&e.to_stage))
    }
}

impl ChainView {
    /// The chain of `line` as seen by a baseline sweep in `baseline` state and a current sweep in `current`
    /// state, with losses fitted between `f_lo` and `f_hi` Hz and delays at `f_ref` Hz.
    pub fn from_line(
        line: &Line,
        baseline: State,
        current: State,
        f_lo: f64,
        f_hi: f64,
        f_ref: f64,
    ) -> Self {
        let profiles = [
            DelayProfile::new(line, baseline, f_ref),
            DelayProfile::new(line, current, f_ref),
        ];
        let states = [baseline, current];
        let (f1, f2) = (f_lo.max(1e6), f_hi.max(f_lo.max(1e6) * 1.5));
        let segments = line
            .elements
            .iter()
            .map(|e| {
                let delay = |k: usize| {
                    2.0 * (profiles[k].delay_s(e.end_m()) - profiles[k].delay_s(e.start_m))
                };
                let flat = match &e.kind {
                    ElementKind::Attenuator { loss_db, .. } => 2.0 * loss_db,
                    _ => 0.0,
                };
                let loss = |k: usize| {
                    let [l1, l2] = element_loss_db(line, e, states[k], [f1, f2]);
                    LossModel::through(f1, l1 + flat, f2, l2 + flat, flat)
                };
                let (kind, pin, eps) = match &e.kind {
                    ElementKind::Cable { cable } => {
                        (SegmentKind::Cable, cable.inner_radius_m, cable.er)
                    }
                    ElementKind::Connector {
                        section,
                        pin_radius_m,
                    } => (SegmentKind::Connector, *pin_radius_m, section.er),
                    ElementKind::Attenuator { er, .. } => (
                        SegmentKind::Attenuator,
                        super::chain::DEFAULT_PIN_RADIUS_M,
                        *er,
                    ),
                    ElementKind::Device { .. } => (
                        SegmentKind::Device,
                        super::chain::DEFAULT_PIN_RADIUS_M,
                        super::chain::DEFAULT_EPS_R,
                    ),
                };
                Segment {
                    name: e.name.clone(),
                    kind,
                    start_m: e.start_m,
                    end_m: e.end_m(),
                    delay_s: [delay(0), delay(1)],
                    loss: [loss(0), loss(1)],
                    pin_radius_m: pin,
                    eps_r: eps,
                    place: stage_text(e),
                    load: match &e.kind {
                        ElementKind::Device { load, .. } => Some(*load),
                        _ => None,
                    },
                    steady: baseline == current || at_room(e),
                    steady_start: baseline == current
                        || (e.cold_from_k - ROOM_K).abs() <= ROOM_TOLERANCE_K,
                }
            })
            .collect();
        ChainView {
            name: line.name.clone(),
            impedance_ohm: line.impedance_ohm,
            segments,
            as_built: true,
            delay_reference_hz: f_ref,
            gain_in_path: line.gain_in_path,
        }
    }
}
