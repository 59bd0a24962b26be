//! The comparator against lines simulated by physics written apart from its own model
//! (tests/independent/mod.rs: RLGC cables with Bloch-Grueneisen copper, lumped-ladder joints, drifting pads
//! and loads, a calibrated port's residual errors). A fixed-seed subset of the run that
//! `cargo run --release --example independent_accuracy` tabulates in docs/accuracy.md ("An independent
//! simulator"); the cases named here are those that once went wrong.
//!
//! The world itself is checked first against values from outside the project: the coax loss of
//! ../shared/DOMAIN.md sec. 2 (Pozar's formulas for smooth copper), the gap capacitances of its axisymmetric
//! solve, copper's resistivity by the International Annealed Copper Standard, and the pi-pad's design.

mod independent;

use coldtrace::line::State;
use independent::*;
use num_complex::Complex64;

fn line(j: &Judged, given: bool) -> String {
    let o = if given { &j.given } else { &j.inferred };
    format!(
        "[states {}] {}",
        if given { "given" } else { "inferred" },
        j.describe(o)
    )
}

/// Smooth 0.086-in copper coax, er 2.03, tan delta 2e-4, at room temperature: 0.61 dB/m at 1 GHz and
/// 2.10 dB/m at 10 GHz (../shared/DOMAIN.md sec. 2, computed from Pozar, Microwave Engineering, sec. 2.7).
#[test]
fn the_worlds_copper_coax_loses_what_the_textbook_formula_gives() {
    let coax = Coax {
        kind: "cu-086",
        a: A_086,
        z_ohm: 59.958 / 2.03f64.sqrt() * (0.838f64 / 0.2555).ln(),
        er_room: 2.03,
        tan_d: 2e-4,
        inner: Metal::Copper { rrr: 1e9 },
        outer: Metal::Copper { rrr: 1e9 },
        outer_factor: 1.0,
        rough_m: 0.0,
    };
    for (f, want) in [(1e9, 0.61), (10e9, 2.10)] {
        let m = coax.section_at(293.0, f, 1.0);
        // |S21| of a matched metre: e^{-alpha}; the chain's A = cosh(gamma l).
        let gamma = m.a.acosh();
        let db_per_m = 20.0 * gamma.re.abs() / std::f64::consts::LN_10;
        // The check values are rounded to 0.01 dB/m and take rho 1.72e-8 against the standard's 1.7241e-8.
        assert!(
            (db_per_m - want).abs() <= 0.015 * want + 0.005,
            "{f} Hz: {db_per_m} dB/m, want {want}"
        );
    }
}

/// Copper at 20 C is the International Annealed Copper Standard's 1/58 ohm mm^2/m; the Bloch-Grueneisen
/// phonon part falls below a tenth of it by 77 K (pure copper's ratio rho(77 K)/rho(293 K) is about 0.12,
/// from memory) and vanishes towards 4 K, where what is left is rho(293 K)/RRR.
#[test]
fn the_worlds_copper_follows_its_standard_and_bloch_grueneisen() {
    let cu = Metal::Copper { rrr: 1e9 };
    let r293 = cu.rho(293.0).unwrap();
    assert!((r293 - 1.7241e-8).abs() < 1e-11, "{r293}");
    let r77 = cu.rho(77.0).unwrap() / r293;
    assert!((0.10..0.15).contains(&r77), "{r77}");
    let dirty = Metal::Copper { rrr: 50.0 };
    let r4 = dirty.rho(4.0).unwrap();
    assert!((r4 / (1.7241e-8 / 50.0) - 1.0).abs() < 1e-3, "{r4}");
}

/// Kirchhoff's disc formula against DOMAIN.md's full-field check values for the 0.086-in pin in PTFE
/// (101 fF at 50 um, 56.7 fF at 100 um): DOMAIN.md puts it within about 6 % for gaps under 0.4 a; 7 % here
/// (it reads 6.3 % low at 50 um).
#[test]
fn the_worlds_pin_gap_matches_the_full_field_values() {
    for (g, want) in [(50e-6, 101e-15), (100e-6, 56.7e-15)] {
        let c = gap_capacitance(A_086, g);
        assert!((c / want - 1.0).abs() < 0.07, "{g}: {c} against {want}");
    }
}

/// A 20 dB pi-pad from the design equations passes -20 dB and is matched (circuit theory).
#[test]
fn the_worlds_pad_is_the_pad_it_was_designed_to_be() {
    let m = pad_chain(20.0, [0.0; 3]);
    let z0 = Complex64::new(Z_REF, 0.0);
    let s21 = 2.0 / (m.a + m.b / z0 + m.c * z0 + m.d);
    assert!((20.0 * s21.norm().log10() + 20.0).abs() < 1e-9, "{s21}");
    let zin = m.input(Some(z0));
    assert!((zin - z0).norm() < 1e-9, "{zin}");
}

#[test]
fn the_world_is_reproducible_from_its_seed() {
    let a = Scene::generate(7, Case::Fault);
    let b = Scene::generate(7, Case::Fault);
    assert_eq!(a.line_text, b.line_text);
    assert_eq!(a.fault, b.fault);
    let (na, ca) = a.sweeps();
    let (nb, cb) = b.sweeps();
    assert_eq!((na.s, ca.s), (nb.s, cb.s));
    assert_eq!(a.current.state, State::Cold);
}

/// Healthy cooldowns and cold repeats raise nothing above info, states inferred and given. Among them the
/// lines that once did: a matched load whose echo (0.032, its lead inductance) rose 6 dB on cooling
/// (`cooldown:20000010`), a 20 dB pad whose own mismatch, compensated by the pad's loss it never passed,
/// read as a -7 dB echo that moved 29 dB (`cooldown:20000014`, `cooldown:20000266`; as an open, critical,
/// while the far end behind it stayed: `cooldown:40000286`, `cooldown:40000270`), and a cupronickel line
/// whose loss barely moves on cooling, inferred as one state (`cooldown:30000290`), and a joint beside a 10 dB
/// pad whose echo, overlapping the pad's own, peaked in front of the pad's loss step warm and behind it
/// cold, read as a minor crush 20 dB up (`cooldown:10000193`).
#[test]
fn healthy_lines_of_the_other_world_raise_nothing_above_info() {
    let mut cases: Vec<(u64, Case)> = vec![
        (20_000_010, Case::Cooldown),
        (20_000_014, Case::Cooldown),
        (20_000_266, Case::Cooldown),
        (30_000_290, Case::Cooldown),
        (40_000_270, Case::Cooldown),
        (40_000_286, Case::Cooldown),
        (10_000_193, Case::Cooldown),
    ];
    cases.extend((0..6).map(|i| (10_000_000 + i, Case::Cooldown)));
    cases.extend((0..3).map(|i| (11_000_000 + i, Case::Repeat)));
    let mut bad = Vec::new();
    for (seed, case) in cases {
        let j = judge(Scene::generate(seed, case));
        for given in [false, true] {
            let o = if given { &j.given } else { &j.inferred };
            if !o.alarms.is_empty() || o.error.is_some() {
                bad.push(line(&j, given));
            }
        }
    }
    assert!(bad.is_empty(), "{}", bad.join("\n"));
}

/// Faults of the other world are ranked first at their element, states inferred and given: a crush, an
/// open, a pin gap, contacts at the feedthrough and at a cold joint. And a contact of the joint in front of
/// a short, both sweeps cold (`fault:12000027`): told the states, the far end's fall is its joint's change.
#[test]
fn faults_of_the_other_world_are_ranked_first_at_their_element() {
    let mut bad = Vec::new();
    for seed in [12_000_000, 12_000_001, 12_000_003, 12_000_004, 12_000_008] {
        let j = judge(Scene::generate(seed, Case::Fault));
        assert!(
            j.level_db.unwrap() >= VISIBLE_LEVEL_DB,
            "{}",
            line(&j, true)
        );
        for given in [false, true] {
            if !j.right(if given { &j.given } else { &j.inferred }) {
                bad.push(line(&j, given));
            }
        }
    }
    let j = judge(Scene::generate(12_000_027, Case::Fault));
    if !j.right(&j.given) || !j.given.alarms.iter().any(|a| a.contains("contact")) {
        bad.push(line(&j, true));
    }
    assert!(bad.is_empty(), "{}", bad.join("\n"));
}
