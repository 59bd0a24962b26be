//! A physics perturbation for the simulator: a simulated truth that differs from the nominal model the
//! analysis uses, so that the comparator can be tested against a world that is not its own model.
//!
//! Three factors, each neutral at 1:
//! - `permittivity_change_scale` k: the dielectric's effective permittivity at temperature T is
//!   er(T) = er_warm + k (er_nominal(T) - er_warm), where er_nominal(T) is the nominal model's value
//!   ([`SectionState::new`], which depends on the line's PTFE model) and er_warm its value at
//!   [`ROOM_K`]. Warm sections are unchanged by k.
//! - `contraction_scale` (1 + d): every material's integrated contraction from room temperature,
//!   (1 - L(T)/L_warm), is multiplied by it: the physical length and the radii of a cold section change;
//!   the permittivity stays the one given by the first factor (the three factors act independently).
//! - `surface_resistance_scale`: the conductors' surface impedance R_s + j X_s is multiplied by it at every
//!   temperature (the reactance follows the resistance, so the loss keeps its own internal-inductance phase
//!   and the model stays causal).
//!
//! Conventions: plain factors (1 = the nominal model), temperatures in kelvin. Only
//! [`simulate`](super::simulate()) applies a perturbation ([`super::SimConfig::perturbation`]); the position
//! map, the thermal change and visibility keep the nominal model, as the analysis does. With all three
//! factors at 1 the simulated sweep is bit for bit the nominal one (tests/simulate_perturbation.rs).

use super::catalogue::CableKind;
use super::materials::{PtfeModel, ROOM_K};
use super::physics::SectionState;
use super::LineError;
use serde::{Deserialize, Serialize};

/// How far the simulated truth departs from the nominal physics; see the module documentation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Perturbation {
    /// k: multiplier on the nominal model's warm -> cold change of the effective permittivity.
    pub permittivity_change_scale: f64,
    /// 1 + d: multiplier on every material's thermal contraction from room temperature.
    pub contraction_scale: f64,
    /// Multiplier on the conductors' surface impedance (resistance and, with it, reactance).
    pub surface_resistance_scale: f64,
}

impl Default for Perturbation {
    fn default() -> Self {
        Perturbation::NEUTRAL
    }
}

impl Perturbation {
    /// The nominal physics: every factor 1.
    pub const NEUTRAL: Perturbation = Perturbation {
        permittivity_change_scale: 1.0,
        contraction_scale: 1.0,
        surface_resistance_scale: 1.0,
    };

    /// True when every factor is exactly 1.
    pub fn is_neutral(&self) -> bool {
        *self == Perturbation::NEUTRAL
    }

    /// Every factor must be finite; the contraction and surface-resistance scales positive, the
    /// permittivity scale >= 0 (0 freezes the permittivity at its warm value).
    pub fn check(&self) -> Result<(), LineError> {
        let fields = [
            (
                "permittivity_change_scale",
                self.permittivity_change_scale,
                true,
            ),
            ("contraction_scale", self.contraction_scale, false),
            (
                "surface_resistance_scale",
                self.surface_resistance_scale,
                false,
            ),
        ];
        for (name, v, zero_ok) in fields {
            let ok = v.is_finite() && if zero_ok { v >= 0.0 } else { v > 0.0 };
            if !ok {
                return Err(LineError::Invalid(format!(
                    "perturbation {name} = {v} is not allowed: give a finite factor {} (1 is the nominal \
                     model)",
                    if zero_ok { ">= 0" } else { "> 0" }
                )));
            }
        }
        Ok(())
    }

    /// The perturbed state of a section of `kind` at `t_k`. With neutral factors this is
    /// [`SectionState::new`] bit for bit.
    pub fn section(&self, kind: &CableKind, t_k: f64, ptfe: PtfeModel) -> SectionState {
        let mut st = SectionState::with_contraction_scale(kind, t_k, ptfe, self.contraction_scale);
        // The permittivity follows the nominal contraction, scaled about its warm value by k.
        let nominal_er = if self.contraction_scale == 1.0 {
            st.er_eff
        } else {
            SectionState::new(kind, t_k, ptfe).er_eff
        };
        st.er_eff = if self.permittivity_change_scale == 1.0 {
            nominal_er
        } else {
            let er_warm = SectionState::new(kind, ROOM_K, ptfe).er_eff;
            er_warm + self.permittivity_change_scale * (nominal_er - er_warm)
        };
        st.conductor_scale *= self.surface_resistance_scale;
        st
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::line::catalogue;

    fn kinds() -> Vec<CableKind> {
        let mut v: Vec<CableKind> = catalogue::BUILT_IN
            .iter()
            .map(|n| catalogue::built_in(n).unwrap())
            .collect();
        v.push(catalogue::built_in("ss-086").unwrap().with_impedance(48.5));
        v
    }

    const TEMPS: [f64; 9] = [0.015, 0.8, 3.5, 9.0, 45.0, 77.0, 150.0, 293.0, 295.0];
    const MODELS: [PtfeModel; 3] = [PtfeModel::Gapped, PtfeModel::Free, PtfeModel::Filled];

    fn bits(s: &SectionState) -> Vec<u64> {
        [
            s.t_k,
            s.length_scale,
            s.inner_radius_m,
            s.outer_radius_m,
            s.er_eff,
            s.loss_tangent,
            s.conductor_scale,
        ]
        .iter()
        .map(|x| x.to_bits())
        .collect()
    }

    #[test]
    fn neutral_factors_give_the_nominal_state_bit_for_bit() {
        for k in kinds() {
            for t in TEMPS {
                for m in MODELS {
                    let a = SectionState::new(&k, t, m);
                    let b = Perturbation::NEUTRAL.section(&k, t, m);
                    assert_eq!(bits(&a), bits(&b), "{} {t} K {m:?}", k.name);
                }
            }
        }
    }

    #[test]
    fn permittivity_change_scales_about_the_warm_value() {
        // er(T) = er_warm + k (er_nominal(T) - er_warm), the definition, for k = 0.5 and 2.
        for k in kinds() {
            for m in MODELS {
                let warm = SectionState::new(&k, ROOM_K, m).er_eff;
                let cold = SectionState::new(&k, 3.5, m).er_eff;
                for scale in [0.5, 2.0] {
                    let p = Perturbation {
                        permittivity_change_scale: scale,
                        ..Perturbation::NEUTRAL
                    };
                    let got = p.section(&k, 3.5, m).er_eff;
                    let want = warm + scale * (cold - warm);
                    assert!(
                        (got - want).abs() < 1e-14,
                        "{} {m:?}: {got} vs {want}",
                        k.name
                    );
                    // Warm is untouched.
                    assert_eq!(p.section(&k, ROOM_K, m).er_eff, warm);
                }
            }
        }
    }

    #[test]
    fn contraction_scale_multiplies_the_length_change() {
        // length_scale = 1 - contraction of the outer conductor; the contraction times 1.2.
        for k in kinds() {
            let nominal = 1.0 - SectionState::new(&k, 3.5, PtfeModel::Gapped).length_scale;
            let p = Perturbation {
                contraction_scale: 1.2,
                ..Perturbation::NEUTRAL
            };
            let st = p.section(&k, 3.5, PtfeModel::Gapped);
            assert!(nominal > 1e-3, "{} contracts {nominal}", k.name);
            assert!(
                ((1.0 - st.length_scale) - 1.2 * nominal).abs() < 1e-15,
                "{}",
                k.name
            );
            // The permittivity is the nominal one: the factors act independently.
            let er = SectionState::new(&k, 3.5, PtfeModel::Gapped).er_eff;
            assert_eq!(st.er_eff, er);
        }
    }

    #[test]
    fn surface_resistance_scale_multiplies_the_conductor_loss() {
        // At 5 GHz on copper the conductor term dominates the series resistance R' linearly.
        let k = catalogue::built_in("cu-086").unwrap();
        let p = Perturbation {
            surface_resistance_scale: 1.3,
            ..Perturbation::NEUTRAL
        };
        for t in [3.5, ROOM_K] {
            let (z0, _) = SectionState::new(&k, t, PtfeModel::Gapped).zy(5e9);
            let (z1, _) = p.section(&k, t, PtfeModel::Gapped).zy(5e9);
            assert!(
                (z1.re / z0.re - 1.3).abs() < 1e-12,
                "{t} K: {} {}",
                z0.re,
                z1.re
            );
        }
    }

    #[test]
    fn bad_factors_are_refused() {
        assert!(Perturbation::NEUTRAL.check().is_ok());
        for p in [
            Perturbation {
                contraction_scale: 0.0,
                ..Perturbation::NEUTRAL
            },
            Perturbation {
                surface_resistance_scale: f64::NAN,
                ..Perturbation::NEUTRAL
            },
            Perturbation {
                permittivity_change_scale: -0.1,
                ..Perturbation::NEUTRAL
            },
        ] {
            let e = p.check().unwrap_err().to_string();
            assert!(e.contains("perturbation"), "{e}");
        }
    }
}
