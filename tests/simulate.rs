//! The forward simulator against closed forms, and its reproducibility.

use coldtrace::line::abcd::{reflection, Abcd};
use coldtrace::line::catalogue;
use coldtrace::line::materials::PtfeModel;
use coldtrace::line::physics::SectionState;
use coldtrace::line::{
    simulate, Element, ElementKind, Fault, Line, LineError, Load, SimConfig, Stage, State,
};
use num_complex::Complex64;
use std::path::Path;

fn el(name: &str, kind: ElementKind, len: f64) -> Element {
    Element {
        name: name.into(),
        kind,
        length_m: len,
        start_m: 0.0,
        from_stage: "room".into(),
        to_stage: "room".into(),
        cold_from_k: 295.0,
        cold_to_k: 295.0,
        line_no: 0,
    }
}

fn stages() -> Vec<Stage> {
    vec![Stage {
        name: "room".into(),
        kelvin: 295.0,
    }]
}

fn one_cable(load: Load, len: f64) -> Line {
    let k = catalogue::built_in("cu-086").unwrap();
    Line::new(
        "t",
        50.0,
        stages(),
        vec![
            el("c", ElementKind::Cable { cable: k }, len),
            el("end", ElementKind::Device { load }, 0.0),
        ],
    )
}

fn demo() -> Line {
    coldtrace::line::file::read_file(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/line/north-fridge-in-07.toml"),
    )
    .unwrap()
}

#[test]
fn load_at_end_of_line_matches_the_direct_formula() {
    // Gamma_in = Gamma_L e^{-2 gamma l} referred through Z0 of the line, exactly:
    // Zin = Z0 (ZL + Z0 tanh(gamma l)) / (Z0 + ZL tanh(gamma l)) (Pozar 4th ed., eq. 2.91, lossy line).
    let len = 0.437;
    let line = one_cable(Load::Ohms(75.0), len);
    let cfg = SimConfig::linear(State::Warm, 0.3e9, 12e9, 57);
    let net = simulate(&line, &cfg).unwrap();
    let k = catalogue::built_in("cu-086").unwrap();
    let st = SectionState::new(&k, 295.0, PtfeModel::Gapped);
    for (f, g) in net.freqs_hz.iter().zip(&net.s) {
        let (gamma, z0) = st.gamma_z0(*f);
        let t = (gamma * len * st.length_scale).tanh();
        let zl = Complex64::new(75.0, 0.0);
        let zin = z0 * (zl + z0 * t) / (z0 + zl * t);
        let want = reflection(zin, 50.0);
        assert!((g - want).norm() < 1e-12, "{f}: {g} vs {want}");
    }
}

#[test]
fn lumped_faults_on_a_matched_line_reflect_as_circuit_theory_says() {
    // A fault between matched sections: series Z -> Z/(2 Z0 + Z), shunt Y -> -Y Z0/(2 + Y Z0), referred to
    // the port through the line before it (|.| unchanged on a near-lossless copper line apart from loss).
    let k = catalogue::built_in("cu-086").unwrap().with_impedance(50.0);
    let line = Line::new(
        "t",
        50.0,
        stages(),
        vec![
            el("a", ElementKind::Cable { cable: k.clone() }, 0.2),
            el(
                "J",
                ElementKind::Connector {
                    section: k.clone(),
                    pin_radius_m: k.inner_radius_m,
                },
                0.01,
            ),
            el("b", ElementKind::Cable { cable: k.clone() }, 0.2),
            el("end", ElementKind::Device { load: Load::Match }, 0.0),
        ],
    );
    let f = 3e9;
    let mut cfg = SimConfig::linear(State::Warm, f, f, 1);
    let st = SectionState::new(&k, 295.0, PtfeModel::Gapped);
    let (gamma, z0) = st.gamma_z0(f);
    let before = (-2.0 * gamma * 0.205 * st.length_scale).exp();
    let w = 2.0 * std::f64::consts::PI * f;
    let j = Complex64::new(0.0, 1.0);
    let cases: Vec<(&str, Complex64)> = vec![
        ("J:contact=2ohm", {
            let z = Complex64::new(2.0, 0.0);
            z / (2.0 * z0 + z)
        }),
        ("J:gap=30fF", {
            let z = 1.0 / (j * w * 30e-15);
            z / (2.0 * z0 + z)
        }),
        ("J:inductance=0.5nH", {
            let z = j * w * 0.5e-9;
            z / (2.0 * z0 + z)
        }),
        ("J:shunt=50fF", {
            let y = j * w * 50e-15;
            -y * z0 / (2.0 + y * z0)
        }),
        ("J:short", Complex64::new(-1.0, 0.0)),
        ("J:open", Complex64::new(1.0, 0.0)),
    ];
    for (spec, local) in cases {
        cfg.faults = vec![Fault::parse(spec).unwrap()];
        let g = simulate(&line, &cfg).unwrap().s[0];
        let want = local * before;
        assert!(
            (g - want).norm() < 2e-3 * (1.0 + want.norm()),
            "{spec}: {g} vs {want}"
        );
    }
}

#[test]
fn crush_and_step_match_a_hand_built_cascade() {
    let k = catalogue::built_in("cu-086").unwrap();
    let line = one_cable(Load::Match, 0.5);
    let mut cfg = SimConfig::linear(State::Warm, 1e9, 9e9, 9);
    cfg.faults = vec![
        Fault::parse("c@0.1m:crush=40ohm,8mm").unwrap(),
        Fault::parse("c@0.3m:step=60ohm").unwrap(),
    ];
    let net = simulate(&line, &cfg).unwrap();
    let sec = |kind: &catalogue::CableKind, len: f64, f: f64| {
        let st = SectionState::new(kind, 295.0, PtfeModel::Gapped);
        let (g, z0) = st.gamma_z0(f);
        Abcd::line(z0, g, len * st.length_scale)
    };
    for (f, s) in net.freqs_hz.iter().zip(&net.s) {
        let m = sec(&k, 0.1, *f)
            .then(&sec(&k.with_impedance(40.0), 0.008, *f))
            .then(&sec(&k, 0.192, *f))
            .then(&sec(&k.with_impedance(60.0), 0.2, *f));
        let want = reflection(m.input_impedance(Complex64::new(50.0, 0.0)), 50.0);
        assert!((s - want).norm() < 1e-12, "{f}: {s} vs {want}");
    }
}

#[test]
fn noise_is_seeded_and_has_the_asked_power() {
    let line = demo();
    let mut cfg = SimConfig::linear(State::Cold, 0.5e9, 10e9, 2001);
    let clean = simulate(&line, &cfg).unwrap();
    cfg.noise_db = Some(-40.0);
    cfg.seed = 42;
    let a = simulate(&line, &cfg).unwrap();
    let b = simulate(&line, &cfg).unwrap();
    assert_eq!(a.s, b.s, "same seed, same sweep");
    cfg.seed = 43;
    let c = simulate(&line, &cfg).unwrap();
    assert_ne!(a.s, c.s);
    let p: f64 =
        a.s.iter()
            .zip(&clean.s)
            .map(|(x, y)| (x - y).norm_sqr())
            .sum::<f64>()
            / a.len() as f64;
    let db = 10.0 * p.log10();
    assert!((db + 40.0).abs() < 0.3, "noise power {db} dB");
}

#[test]
fn attenuator_hides_what_lies_beyond_by_twice_its_loss() {
    // An open behind a matched 20 dB attenuator reads 40 dB down (plus line loss); DOMAIN sec. 2 / circuit theory.
    let line = Line::new(
        "t",
        50.0,
        stages(),
        vec![
            el(
                "A",
                ElementKind::Attenuator {
                    loss_db: 20.0,
                    impedance_ohm: 50.0,
                    er: 2.03,
                },
                0.02,
            ),
            el("end", ElementKind::Device { load: Load::Open }, 0.0),
        ],
    );
    let net = simulate(&line, &SimConfig::linear(State::Warm, 1e9, 5e9, 5)).unwrap();
    for g in &net.s {
        assert!((20.0 * g.norm().log10() + 40.0).abs() < 1e-9, "{g}");
    }
}

#[test]
fn two_port_is_reciprocal_and_passive() {
    let line = demo();
    let mut cfg = SimConfig::linear(State::Cold, 0.5e9, 10e9, 101);
    cfg.two_port = true;
    let net = simulate(&line, &cfg).unwrap();
    assert_eq!(net.ports, 2);
    for k in 0..net.len() {
        let (s11, s12, s21) = (net.at(k, 0, 0), net.at(k, 0, 1), net.at(k, 1, 0));
        assert!((s12 - s21).norm() < 1e-9 * (1.0 + s21.norm()));
        assert!(s11.norm_sqr() + s21.norm_sqr() <= 1.0 + 1e-9);
        // 20 dB attenuator in the chain.
        assert!(20.0 * s21.norm().log10() < -20.0);
    }
}

#[test]
fn fault_errors_name_the_spec_and_show_the_grammar() {
    for bad in [
        "J2",
        "J2:gap",
        "J2:gap=30",
        "J2:wobble=3",
        "x@-1m:open",
        "J2:crush=40ohm",
    ] {
        let e = Fault::parse(bad).unwrap_err();
        let s = e.to_string();
        assert!(s.contains(bad) && s.contains("grammar"), "{s}");
    }
    let line = demo();
    let mut cfg = SimConfig::linear(State::Warm, 1e9, 2e9, 3);
    for (spec, needle) in [
        ("J9:open", "no element named 'J9'"),
        ("room to 50K:open", "give an offset"),
        ("room to 50K@2m:open", "past the end"),
    ] {
        cfg.faults = vec![Fault::parse(spec).unwrap()];
        match simulate(&line, &cfg) {
            Err(e @ LineError::Fault { .. }) => assert!(e.to_string().contains(needle), "{e}"),
            other => panic!("{spec}: {other:?}"),
        }
    }
}

#[test]
fn gap_given_as_length_uses_the_pin_radius() {
    let mut f = Fault::parse("J2:gap=50um").unwrap();
    f.resolve(&demo()).unwrap();
    match f.kind {
        // 0.086-in pin (a = 0.2555 mm) in PTFE: about 101 fF at 50 um (field-solution check value).
        coldtrace::line::FaultKind::Gap { farad } => {
            assert!((farad - 101e-15).abs() < 7e-15, "{farad}")
        }
        k => panic!("{k:?}"),
    }
}

#[test]
fn cascade_matches_a_naive_walk_on_the_demo_line() {
    // The block cascade against a plain per-frequency walk over elements and slices (the bench's naive path,
    // written again here), warm and cold.
    use coldtrace::line::position::slices;
    let line = demo();
    for state in [State::Warm, State::Cold] {
        let cfg = SimConfig::linear(state, 0.2e9, 12e9, 23);
        let net = simulate(&line, &cfg).unwrap();
        for (f, g) in cfg.freqs_hz.iter().zip(&net.s) {
            let mut m = Abcd::IDENTITY;
            for e in line.visible() {
                match &e.kind {
                    ElementKind::Cable { cable: k } | ElementKind::Connector { section: k, .. } => {
                        for s in slices(e, state, 0.0, e.length_m) {
                            let st = SectionState::new(k, s.t_k, line.ptfe_model);
                            let (gm, z0) = st.gamma_z0(*f);
                            m = m.then(&Abcd::line(z0, gm, s.length_m * st.length_scale));
                        }
                    }
                    ElementKind::Attenuator { loss_db, .. } => {
                        let t = 10f64.powf(-loss_db / 20.0)
                            * Complex64::from_polar(
                                1.0,
                                -2.0 * std::f64::consts::PI * f * e.length_m * 2.03f64.sqrt()
                                    / coldtrace::line::materials::C0,
                            );
                        let z = Complex64::new(0.0, 0.0);
                        m = m.then(&Abcd::from_s([z, t, t, z], 50.0));
                    }
                    ElementKind::Device { .. } => {}
                }
            }
            let want = reflection(m.input_impedance_open(), 50.0);
            assert!((g - want).norm() < 1e-12, "{state:?} {f}: {g} vs {want}");
        }
    }
}
