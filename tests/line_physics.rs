//! Physics of the line model against textbook formulas, worked examples and handbook values.

use coldtrace::line::abcd::{reflection, Abcd};
use coldtrace::line::catalogue;
use coldtrace::line::fault::gap_capacitance;
use coldtrace::line::materials::{Material, PtfeModel, C0, ROOM_K};
use coldtrace::line::physics::{pozar_coax_loss, SectionState, NEPER_DB};
use num_complex::Complex64;
use std::f64::consts::PI;

fn c(re: f64, im: f64) -> Complex64 {
    Complex64::new(re, im)
}

/// Pozar, Microwave Engineering, 4th ed., eq. 2.44: Zin = Z0 (ZL + j Z0 tan(beta l)) / (Z0 + j ZL tan(beta l)).
fn zin_lossless(z0: f64, zl: Complex64, bl: f64) -> Complex64 {
    let t = c(0.0, bl.tan());
    z0 * (zl + z0 * t) / (z0 + zl * t)
}

#[test]
fn abcd_cascade_matches_the_terminated_line_formula() {
    // Many lengths and loads, a lossless line: the cascade of several pieces equals eq. 2.44.
    let z0 = 75.0;
    for k in 0..40 {
        let bl = 0.07 + 0.31 * k as f64;
        let zl = c(10.0 + 7.0 * k as f64, -30.0 + 2.5 * k as f64);
        let gamma = c(0.0, 1.0);
        let parts = [0.2, 0.5, 0.3];
        let m = parts.iter().fold(Abcd::IDENTITY, |m, p| {
            m.then(&Abcd::line(c(z0, 0.0), gamma, bl * p))
        });
        let zin = m.input_impedance(zl);
        let want = zin_lossless(z0, zl, bl);
        assert!((zin - want).norm() < 1e-9 * want.norm(), "{zin} vs {want}");
    }
}

#[test]
fn quarter_wave_transformer_pozar_example() {
    // Pozar 4th ed., sec. 2.5, Example 2.5 (from memory): match RL = 100 ohm to a 50 ohm line with a
    // quarter-wave section: Z1 = sqrt(50 * 100) = 70.71 ohm; Gamma = 0 at f0, and at 2 f0 (half wave) the
    // section is transparent: Gamma = (100 - 50) / (100 + 50) = 1/3.
    let z1 = (50.0f64 * 100.0).sqrt();
    assert!((z1 - 70.710_678).abs() < 1e-5);
    let q = Abcd::line(c(z1, 0.0), c(0.0, 1.0), PI / 2.0);
    let g0 = reflection(q.input_impedance(c(100.0, 0.0)), 50.0);
    assert!(g0.norm() < 1e-12, "{g0}");
    let h = Abcd::line(c(z1, 0.0), c(0.0, 1.0), PI);
    let g2 = reflection(h.input_impedance(c(100.0, 0.0)), 50.0);
    assert!((g2 - c(1.0 / 3.0, 0.0)).norm() < 1e-12, "{g2}");
}

#[test]
fn reflection_textbook_values() {
    // 75 ohm on 50: Gamma 0.2, return loss 13.98 dB; 100 ohm: 1/3, 9.54 dB (Gamma = (ZL - Z0)/(ZL + Z0),
    // Pozar eq. 2.35; values computed).
    let g = reflection(c(75.0, 0.0), 50.0).re;
    assert!((g - 0.2).abs() < 1e-12);
    assert!((-20.0 * g.log10() - 13.979_4).abs() < 1e-3);
    let g = reflection(c(100.0, 0.0), 50.0).re;
    assert!((-20.0 * g.log10() - 9.542_4).abs() < 1e-3);
}

#[test]
fn lumped_series_and_shunt_reflections() {
    // Between matched lines: series Z gives Z / (2 Z0 + Z); shunt Y gives -Y Z0 / (2 + Y Z0) (circuit theory).
    let z0 = 50.0;
    for z in [c(2.0, 0.0), c(0.0, -300.0), c(10.0, 40.0)] {
        let g = reflection(Abcd::series(z).input_impedance(c(z0, 0.0)), z0);
        let want = z / (2.0 * z0 + z);
        assert!((g - want).norm() < 1e-12);
        let y = 1.0 / z;
        let g = reflection(Abcd::shunt(y).input_impedance(c(z0, 0.0)), z0);
        let want = -y * z0 / (2.0 + y * z0);
        assert!((g - want).norm() < 1e-12);
    }
}

#[test]
fn copper_141_loss_against_pozar_skin_effect_formula() {
    // Pozar 4th ed., sec. 2.7: alpha_c = Rs (1/a + 1/b) / (2 eta ln(b/a)), alpha_d = k tan(d) / 2.
    // Inputs: smooth copper rho 1.724e-8 ohm m, a 0.4555 mm, b 1.49 mm, er 2.03, tan d 2e-4.
    // Re-derived here (python3, same formula and inputs): 0.3537 dB/m at 1 GHz and 1.2958 dB/m at 10 GHz
    // (the project's check values 0.35 / 1.29 computed from the same inputs); 0.086-in (a 0.2555 mm,
    // b 0.838 mm): 0.6086 and 2.1018 dB/m (check values 0.61 / 2.10).
    let (a, b) = (0.4555e-3, 1.49e-3);
    let tot = |f: f64, a: f64, b: f64| {
        let (ac, ad) = pozar_coax_loss(f, a, b, 2.03, 2e-4, 1.724e-8);
        (ac + ad) * NEPER_DB
    };
    assert!(
        (tot(1e9, a, b) - 0.3537).abs() < 0.0005,
        "{}",
        tot(1e9, a, b)
    );
    assert!(
        (tot(10e9, a, b) - 1.2958).abs() < 0.0005,
        "{}",
        tot(10e9, a, b)
    );
    assert!((tot(1e9, 0.2555e-3, 0.838e-3) - 0.6086).abs() < 0.0005);
    assert!((tot(10e9, 0.2555e-3, 0.838e-3) - 2.1018).abs() < 0.0005);
    // The telegrapher model of the built-in cu-141 at room temperature (classical skin effect dominates
    // warm; copper at 295 K) agrees with the closed form within 1 %.
    let k = catalogue::built_in("cu-141").unwrap();
    let st = SectionState::new(&k, 293.0, PtfeModel::Gapped);
    for f in [1e9, 10e9] {
        let model = st.gamma_z0(f).0.re * NEPER_DB;
        let (ac, ad) = pozar_coax_loss(f, a, b, 2.03, 2e-4, Material::Copper.resistivity(293.0));
        let want = (ac + ad) * NEPER_DB;
        assert!((model - want).abs() < 0.01 * want, "{f}: {model} vs {want}");
    }
}

#[test]
fn skin_effect_brings_its_own_phase() {
    // With Zs = (1 + j) Rs the extra phase per metre equals the conductor attenuation (to first order).
    let k = catalogue::built_in("ss-086").unwrap();
    let st = SectionState::new(&k, ROOM_K, PtfeModel::Gapped);
    let f = 5e9;
    let g = st.gamma_z0(f).0;
    let lossless = 2.0 * PI * f * st.er_eff.sqrt() / C0;
    let ad = PI * f * st.er_eff.sqrt() * st.loss_tangent / C0;
    let ac = g.re - ad;
    assert!(
        ((g.im - lossless) - ac).abs() < 0.02 * ac,
        "{} vs {ac}",
        g.im - lossless
    );
}

#[test]
fn built_in_impedances_are_fifty_ohm() {
    for name in ["cu-086", "ss-086", "cuni-086", "nbti-086"] {
        let z = catalogue::built_in(name).unwrap().impedance_ohm();
        assert!((z - 50.0).abs() < 0.3, "{name}: {z}");
    }
    assert!((catalogue::built_in("cu-141").unwrap().impedance_ohm() - 50.0).abs() < 0.3);
}

#[test]
fn contraction_against_ekin_table() {
    // Integrated linear contraction 293 K -> 4 K and -> 77 K, percent: NIST fits as tabulated in Ekin,
    // Experimental Techniques for Low-Temperature Measurements (Oxford 2006), appendix A6 (from memory
    // except copper, whose NIST fit is integrated here).
    let cases = [
        (Material::Copper, 0.326, 0.304),
        (Material::Stainless304, 0.300, 0.280),
        (Material::BerylliumCopper, 0.317, 0.296),
        (Material::Aluminium6061, 0.415, 0.389),
        (Material::Ptfe, 2.13, 1.94),
    ];
    for (m, c4, c77) in cases {
        assert!((m.contraction(4.0) * 100.0 - c4).abs() < 0.002, "{m:?} 4 K");
        assert!(
            (m.contraction(77.0) * 100.0 - c77).abs() < 0.002,
            "{m:?} 77 K"
        );
        // Monotonic on cooling.
        let mut last = -1.0;
        for t in (4..=293).rev().step_by(7) {
            let x = m.contraction(t as f64);
            assert!(x >= last - 1e-12, "{m:?} at {t} K");
            last = x;
        }
    }
}

#[test]
fn anomalous_skin_effect_limits_the_cold_gain() {
    // Copper Rs(293 K) / Rs(4 K) only about 4-7 at 1-10 GHz (Reuter-Sondheimer; Chambers 1952), and in the
    // extreme anomalous regime X / R -> sqrt(3), R ~ f^(2/3).
    for (f, lo, hi) in [(1e9, 4.0, 7.0), (10e9, 3.5, 7.0)] {
        let r = Material::Copper.surface_impedance(f, 293.0).0
            / Material::Copper.surface_impedance(f, 4.0).0;
        assert!(r > lo && r < hi, "{f}: ratio {r}");
    }
    let (r1, x1) = Material::Copper.surface_impedance(10e9, 4.0);
    // RRR 30 at 10 GHz sits between the regimes: 1 < X/R < sqrt(3).
    assert!(x1 / r1 > 1.3 && x1 / r1 < 3f64.sqrt(), "{}", x1 / r1);
    // Stainless barely changes: resistivity 7.2e-7 -> 5.0e-7 gives Rs ratio sqrt(0.694) = 0.833.
    let s = Material::Stainless304.surface_impedance(5e9, 4.0).0
        / Material::Stainless304.surface_impedance(5e9, 293.0).0;
    assert!((s - 0.833).abs() < 0.005, "{s}");
    // NbTi below Tc: dielectric-limited line; far lower than its normal state.
    let n = Material::Nbti.surface_impedance(5e9, 4.0).0
        / Material::Nbti.surface_impedance(5e9, 10.0).0;
    assert!(n < 0.1, "{n}");
}

#[test]
fn gap_capacitance_against_field_solution_values() {
    // Axial gap between 0.2555 mm radius pin ends in PTFE (er 2.03): full-solution check values 414 fF at
    // 10 um, 101 fF at 50 um, 56.7 fF at 100 um (axisymmetric Laplace solve computed for the project);
    // Kirchhoff's formula is within ~6 % for g < 0.4 a.
    for (g, want) in [(10e-6, 414e-15), (50e-6, 101e-15), (100e-6, 56.7e-15)] {
        let c = gap_capacitance(0.2555e-3, g, 2.03);
        assert!((c - want).abs() < 0.07 * want, "{g}: {c} vs {want}");
    }
}

#[test]
fn ptfe_models_bracket_each_other() {
    let k = catalogue::built_in("cu-086").unwrap();
    let er = |m| SectionState::new(&k, 4.0, m).er_eff;
    let (free, filled, gapped) = (
        er(PtfeModel::Free),
        er(PtfeModel::Filled),
        er(PtfeModel::Gapped),
    );
    assert!(free > gapped && gapped > filled, "{free} {gapped} {filled}");
    // Free contraction raises er by about 4-5 % (Clausius-Mossotti, 2.13 % linear contraction).
    assert!((free / k.er - 1.0 - 0.044).abs() < 0.005, "{}", free / k.er);
}
