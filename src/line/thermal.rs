//! The expected warm -> cold change of each element, and the differential contraction of PTFE against
//! the conductors (the mechanism that pulls centre pins and dielectric back from connectors).
//!
//! Conventions: lengths in m (pull-back in um where the field name says so), delays one-way at
//! [`REFERENCE_FREQUENCY_HZ`], losses in dB at that frequency (report edge), fractions plain (0.003 =
//! 0.3 %). Warm is [`ROOM_K`] everywhere; cold uses the stage temperatures.

use super::chain::{ElementKind, Line, State};
use super::materials::{C0, ROOM_K};
use super::physics::{SectionState, NEPER_DB};
use super::position::{slices, REFERENCE_FREQUENCY_HZ};
use serde::Serialize;

/// Pin-depth tolerance of a precision SMA interface, m: 0 to 0.076 mm (IEC 61169-15, as compiled
/// publicly).
pub const SMA_PIN_DEPTH_TOLERANCE_M: f64 = 76e-6;

/// Expected warm -> cold change of one element.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ThermalChange {
    pub element: String,
    pub kind: &'static str,
    /// As-built length, m.
    pub length_m: f64,
    /// Physical length cold minus warm, m (negative: it shrinks).
    pub length_change_m: f64,
    /// Length-weighted effective permittivity warm and cold (1 for attenuators' air-free body: its own er).
    pub er_warm: f64,
    pub er_cold: f64,
    /// One-way group delay warm and cold, s.
    pub delay_warm_s: f64,
    pub delay_cold_s: f64,
    /// (cold - warm) / warm delay.
    pub delay_change_fraction: f64,
    /// One-way loss warm and cold at the reference frequency, dB.
    pub loss_warm_db: f64,
    pub loss_cold_db: f64,
    pub reference_frequency_hz: f64,
}

/// Differential contraction of a cable's dielectric against its outer conductor on cooling.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PullBack {
    pub element: String,
    /// Integral over the cable of (dielectric contraction - outer-conductor contraction), um: how much
    /// shorter the dielectric would be than the tube if it slid freely.
    pub free_differential_um: f64,
    /// Expected pull-back at each end if the dielectric slides freely and symmetrically, um (an upper
    /// bound; friction and pre-conditioning by thermal cycling keep real values lower).
    pub pullback_each_end_um: f64,
    /// The tolerance compared against, um.
    pub tolerance_um: f64,
    /// pullback_each_end / tolerance: above 1, the pull-back can exceed the connector's pin-depth budget.
    pub risk_ratio: f64,
}

struct Summary {
    phys: f64,
    er: f64,
    delay: f64,
    loss_np: f64,
}

fn summarise(line: &Line, idx: usize, state: State, f_ref: f64) -> Summary {
    let e = &line.elements[idx];
    match &e.kind {
        ElementKind::Cable { cable: k } | ElementKind::Connector { section: k, .. } => {
            let mut s = Summary {
                phys: 0.0,
                er: 0.0,
                delay: 0.0,
                loss_np: 0.0,
            };
            for sl in slices(e, state, 0.0, e.length_m) {
                let st = SectionState::new(k, sl.t_k, line.ptfe_model);
                s.phys += sl.length_m * st.length_scale;
                s.er += sl.length_m * st.er_eff;
                s.delay += sl.length_m * st.group_delay_per_m(f_ref);
                s.loss_np += sl.length_m * st.alpha_per_m(f_ref);
            }
            if e.length_m > 0.0 {
                s.er /= e.length_m;
            }
            s
        }
        ElementKind::Attenuator { loss_db, er, .. } => Summary {
            phys: e.length_m,
            er: *er,
            delay: e.length_m * er.sqrt() / C0,
            loss_np: loss_db / NEPER_DB,
        },
        ElementKind::Device { .. } => Summary {
            phys: 0.0,
            er: 1.0,
            delay: 0.0,
            loss_np: 0.0,
        },
    }
}

impl Line {
    /// The expected warm -> cold change of every element, at [`REFERENCE_FREQUENCY_HZ`].
    pub fn thermal_changes(&self) -> Vec<ThermalChange> {
        self.thermal_changes_at(REFERENCE_FREQUENCY_HZ)
    }

    /// The expected warm -> cold change of every element at `f_ref`.
    pub fn thermal_changes_at(&self, f_ref: f64) -> Vec<ThermalChange> {
        (0..self.elements.len())
            .map(|i| {
                let e = &self.elements[i];
                let w = summarise(self, i, State::Warm, f_ref);
                let c = summarise(self, i, State::Cold, f_ref);
                ThermalChange {
                    element: e.name.clone(),
                    kind: e.kind_name(),
                    length_m: e.length_m,
                    length_change_m: c.phys - w.phys,
                    er_warm: w.er,
                    er_cold: c.er,
                    delay_warm_s: w.delay,
                    delay_cold_s: c.delay,
                    delay_change_fraction: if w.delay > 0.0 {
                        (c.delay - w.delay) / w.delay
                    } else {
                        0.0
                    },
                    loss_warm_db: w.loss_np * NEPER_DB,
                    loss_cold_db: c.loss_np * NEPER_DB,
                    reference_frequency_hz: f_ref,
                }
            })
            .collect()
    }

    /// Differential PTFE contraction risk of every cable, against the SMA pin-depth tolerance.
    pub fn pull_back(&self) -> Vec<PullBack> {
        self.elements
            .iter()
            .filter_map(|e| match &e.kind {
                ElementKind::Cable { cable } => Some((e, cable)),
                _ => None,
            })
            .map(|(e, k)| {
                let mut d = 0.0;
                for sl in slices(e, State::Cold, 0.0, e.length_m) {
                    let cd = k.dielectric.contraction(sl.t_k) - k.dielectric.contraction(ROOM_K);
                    let co = k.outer.contraction(sl.t_k) - k.outer.contraction(ROOM_K);
                    d += (cd - co) * sl.length_m;
                }
                let um = d * 1e6;
                let each = 0.5 * um;
                PullBack {
                    element: e.name.clone(),
                    free_differential_um: um,
                    pullback_each_end_um: each,
                    tolerance_um: SMA_PIN_DEPTH_TOLERANCE_M * 1e6,
                    risk_ratio: each / (SMA_PIN_DEPTH_TOLERANCE_M * 1e6),
                }
            })
            .collect()
    }
}
