//! What a sweep can see along a line: for each element, the round-trip loss to it and the smallest
//! |rho| there that stands out of the sweep's noise floor.
//!
//! Conventions: distance is one-way, as-built metres from the reference plane; an element's place is its
//! centre for a connector (where connector faults sit, [`super::fault`]) and its start for a cable, an
//! attenuator or a device (its first discontinuity; a reflection at an attenuator's input does not pass
//! through it). Losses are in nepers inside and in dB (20 log10 of amplitude) in the result, taken at the
//! band centre (f_first + f_last) / 2. `noise_rms` is the RMS noise magnitude of the uncompensated
//! band-pass trace in the units where a lone reflection rho reads |rho| there. Mismatch losses of earlier
//! reflections are neglected (second order in rho).

use super::chain::{Element, ElementKind, Line, State};
use super::physics::{SectionState, NEPER_DB};
use super::position::{slices, LineMap};
use super::LineError;
use crate::compare::detect::NOISE_SIGMAS;
use serde::Serialize;

/// What the sweep can see of one element. Its JSON (keys as named here) is a contract.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Visibility {
    /// Element name as in the line file.
    pub element: String,
    /// Its place (see the module conventions), as-built m.
    pub distance_m: f64,
    /// Round-trip loss from the reference plane to that place at the band centre, dB (>= 0); `None`
    /// behind a device (nothing passes). A reflection there reads slightly above -loss in the band-pass
    /// trace, since conductor loss grows as ~sqrt(f) and the window averages over the band (about 1 dB
    /// for 19 dB of cable loss over 0.5-10 GHz; tests/line_visibility.rs).
    pub round_trip_loss_db: Option<f64>,
    /// Smallest |rho| there that reaches [`NOISE_SIGMAS`] noise RMS in the trace:
    /// NOISE_SIGMAS * noise_rms * 10^(loss / 20). `None` when not visible for another reason.
    pub min_visible_rho: Option<f64>,
    pub visible: bool,
    /// Why not visible, when it is not.
    pub reason: Option<String>,
}

/// One-way attenuation from the start of `e` to `offset_m` inside it (`whole`: through all of it), in
/// `state` at `f_hz`, Np. A matched attenuator's body is lossless inside for this purpose: its loss applies
/// once the wave has passed through it.
fn element_loss_np(
    line: &Line,
    e: &Element,
    state: State,
    offset_m: f64,
    whole: bool,
    f_hz: f64,
) -> f64 {
    match &e.kind {
        ElementKind::Cable { cable: k } | ElementKind::Connector { section: k, .. } => {
            let to = if whole {
                e.length_m
            } else {
                offset_m.clamp(0.0, e.length_m)
            };
            slices(e, state, 0.0, to)
                .iter()
                .map(|s| {
                    SectionState::new(k, s.t_k, line.ptfe_model).alpha_per_m(f_hz) * s.length_m
                })
                .sum()
        }
        ElementKind::Attenuator { loss_db, .. } if whole => loss_db / NEPER_DB,
        ElementKind::Attenuator { .. } | ElementKind::Device { .. } => 0.0,
    }
}

fn place_offset(e: &Element) -> f64 {
    match e.kind {
        ElementKind::Connector { .. } => 0.5 * e.length_m,
        _ => 0.0,
    }
}

/// Visibility of every element of `line` in `state` for a sweep on `freqs` (Hz, uniform grid, as the
/// band-pass trace needs) whose band-pass trace has noise RMS `noise_rms`.
///
/// Not visible: elements after the first device (reflection stops there), elements at or past the
/// alias-free range (round-trip time >= 1 / df: their echoes fold onto nearer ones), and elements where
/// even a full reflection (|rho| = 1) would stay below the detection threshold.
pub fn visibility(
    line: &Line,
    state: State,
    freqs: &[f64],
    noise_rms: f64,
) -> Result<Vec<Visibility>, LineError> {
    if freqs.len() < 2 {
        return Err(LineError::Invalid(format!(
            "visibility needs a sweep of at least 2 frequencies, got {}; give the sweep's frequency list",
            freqs.len()
        )));
    }
    let (f0, f1) = (freqs[0], freqs[freqs.len() - 1]);
    if !(f0.is_finite() && f1.is_finite() && f1 > f0 && f0 >= 0.0) {
        return Err(LineError::Invalid(format!(
            "visibility needs increasing frequencies >= 0 Hz, got {f0} Hz .. {f1} Hz"
        )));
    }
    if !(noise_rms.is_finite() && noise_rms >= 0.0) {
        return Err(LineError::Invalid(format!(
            "noise RMS {noise_rms} is not a magnitude; give a finite value >= 0 (the trace's noise RMS, \
             in the units where a lone reflection rho reads |rho|)"
        )));
    }
    let f_c = 0.5 * (f0 + f1);
    let df = (f1 - f0) / (freqs.len() - 1) as f64;
    let period_s = 1.0 / df;
    let threshold = NOISE_SIGMAS * noise_rms;
    let map = LineMap::new(line, state);
    let device = line.first_device();

    let mut out = Vec::with_capacity(line.elements.len());
    let mut loss_np = 0.0; // one-way, to the start of the current element
    for (i, e) in line.elements.iter().enumerate() {
        let off = place_offset(e);
        let x = e.start_m + off;
        if let Some(d) = device.filter(|&d| i > d) {
            let dev = &line.elements[d];
            out.push(Visibility {
                element: e.name.clone(),
                distance_m: x,
                round_trip_loss_db: None,
                min_visible_rho: None,
                visible: false,
                reason: Some(format!(
                    "behind the device '{}' at {:.4} m: reflection stops there",
                    dev.name, dev.start_m
                )),
            });
            continue;
        }
        let loss_db = 2.0 * (loss_np + element_loss_np(line, e, state, off, false, f_c)) * NEPER_DB;
        let rt = map.round_trip_s(x);
        let min_rho = threshold * 10f64.powf(loss_db / 20.0);
        let (visible, reason, min_visible_rho) = if rt >= period_s {
            (
                false,
                Some(format!(
                    "past the alias-free range: round trip {:.3} ns >= 1/df = {:.3} ns (df {:.0} Hz); \
                     a finer frequency step reaches it",
                    rt * 1e9,
                    period_s * 1e9,
                    df
                )),
                None,
            )
        } else if min_rho > 1.0 {
            (
                false,
                Some(format!(
                    "below the noise floor: even a full reflection reads {:.3e}, under {NOISE_SIGMAS} \
                     noise RMS ({threshold:.3e}) after {loss_db:.1} dB round-trip loss",
                    10f64.powf(-loss_db / 20.0)
                )),
                Some(min_rho),
            )
        } else {
            (true, None, Some(min_rho))
        };
        out.push(Visibility {
            element: e.name.clone(),
            distance_m: x,
            round_trip_loss_db: Some(loss_db),
            min_visible_rho,
            visible,
            reason,
        });
        loss_np += element_loss_np(line, e, state, e.length_m, true, f_c);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::line::catalogue;
    use crate::line::chain::{Load, Stage};

    fn el(name: &str, kind: ElementKind, length_m: f64) -> Element {
        Element {
            name: name.into(),
            kind,
            length_m,
            start_m: 0.0,
            from_stage: "room".into(),
            to_stage: "room".into(),
            cold_from_k: 295.0,
            cold_to_k: 295.0,
            line_no: 0,
        }
    }

    fn atten(name: &str, db: f64) -> Element {
        el(
            name,
            ElementKind::Attenuator {
                loss_db: db,
                impedance_ohm: 50.0,
                er: 1.0,
            },
            0.0,
        )
    }

    fn device(name: &str) -> Element {
        el(name, ElementKind::Device { load: Load::Open }, 0.0)
    }

    fn room() -> Vec<Stage> {
        vec![Stage {
            name: "room".into(),
            kelvin: 295.0,
        }]
    }

    fn freqs(n: usize, f0: f64, f1: f64) -> Vec<f64> {
        (0..n)
            .map(|i| f0 + (f1 - f0) * i as f64 / (n - 1) as f64)
            .collect()
    }

    #[test]
    fn a_matched_10_db_attenuator_hides_what_follows_by_20_db() {
        // Zero-length, lossless around it: round trip through 10 dB is 20 dB, so the smallest visible
        // rho behind it is 10x larger (analytic: 10^(20/20)).
        let line = Line::new(
            "t",
            50.0,
            room(),
            vec![atten("A1", 3.0), atten("A2", 10.0), device("end")],
        );
        let v = visibility(&line, State::Warm, &freqs(101, 1e9, 2e9), 1e-4).unwrap();
        assert_eq!(v.len(), 3);
        let thr = NOISE_SIGMAS * 1e-4;
        assert!((v[0].round_trip_loss_db.unwrap()).abs() < 1e-12);
        assert!((v[0].min_visible_rho.unwrap() - thr).abs() < 1e-15);
        assert!((v[1].round_trip_loss_db.unwrap() - 6.0).abs() < 1e-12);
        assert!((v[2].round_trip_loss_db.unwrap() - 26.0).abs() < 1e-12);
        let ratio = v[2].min_visible_rho.unwrap() / v[1].min_visible_rho.unwrap();
        assert!((ratio - 10.0).abs() < 1e-9, "ratio {ratio}");
        assert!(v.iter().all(|x| x.visible && x.reason.is_none()));
    }

    #[test]
    fn cable_loss_matches_the_section_attenuation() {
        // One metre of cable: the device's round-trip loss is 2 * alpha * 1 m at the band centre.
        let kind = catalogue::built_in("cu-flex").unwrap();
        let line = Line::new(
            "t",
            50.0,
            room(),
            vec![
                el(
                    "c",
                    ElementKind::Cable {
                        cable: kind.clone(),
                    },
                    1.0,
                ),
                device("end"),
            ],
        );
        let v = visibility(&line, State::Warm, &freqs(201, 1e9, 3e9), 1e-5).unwrap();
        let alpha = SectionState::new(&kind, 295.0, line.ptfe_model).alpha_per_m(2e9);
        let want = 2.0 * alpha * NEPER_DB;
        assert!(want > 0.1, "{want}");
        assert!((v[1].round_trip_loss_db.unwrap() - want).abs() < 1e-9 * want);
        assert_eq!(v[0].round_trip_loss_db, Some(0.0));
    }

    #[test]
    fn behind_a_device_nothing_is_visible() {
        let line = Line::new(
            "t",
            50.0,
            room(),
            vec![atten("A1", 1.0), device("amp"), atten("A2", 1.0)],
        );
        let v = visibility(&line, State::Cold, &freqs(11, 1e9, 2e9), 1e-4).unwrap();
        assert!(v[0].visible && v[1].visible);
        assert!(!v[2].visible);
        assert!(v[2]
            .reason
            .as_deref()
            .unwrap()
            .contains("behind the device 'amp'"));
        assert_eq!(v[2].min_visible_rho, None);
    }

    #[test]
    fn past_the_alias_free_range_is_not_visible() {
        // df = 100 MHz: alias-free round trip 10 ns, i.e. 1.499 m one way in vacuum (er 1 attenuator
        // bodies; c0 exact, SI). An element starting at 1.6 m is past it, one at 1.4 m is not.
        let mut a = atten("A1", 0.0);
        a.length_m = 1.4;
        let mut b = atten("A2", 0.0);
        b.length_m = 0.2;
        let line = Line::new("t", 50.0, room(), vec![a, b, device("end")]);
        let v = visibility(&line, State::Warm, &freqs(11, 1e9, 2e9), 1e-4).unwrap();
        assert!(v[1].visible, "{:?}", v[1]);
        assert!(!v[2].visible);
        assert!(v[2].reason.as_deref().unwrap().contains("alias-free"));
    }

    #[test]
    fn a_full_reflection_under_the_noise_is_not_visible() {
        // 60 dB one way = 120 dB round trip; noise 1e-5: threshold 4.5e-5 * 1e6 = 45 > 1.
        let line = Line::new("t", 50.0, room(), vec![atten("A1", 60.0), device("end")]);
        let v = visibility(&line, State::Warm, &freqs(11, 1e9, 2e9), 1e-5).unwrap();
        assert!(!v[1].visible);
        assert!((v[1].min_visible_rho.unwrap() - 45.0).abs() < 1e-9);
        assert!(v[1].reason.as_deref().unwrap().contains("noise"));
    }

    #[test]
    fn bad_inputs_are_refused() {
        let line = Line::new("t", 50.0, room(), vec![device("end")]);
        assert!(visibility(&line, State::Warm, &[1e9], 1e-4).is_err());
        assert!(visibility(&line, State::Warm, &[2e9, 1e9], 1e-4).is_err());
        assert!(visibility(&line, State::Warm, &[1e9, 2e9], f64::NAN).is_err());
        assert!(visibility(&line, State::Warm, &[1e9, 2e9], -1.0).is_err());
    }
}
