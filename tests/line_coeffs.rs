//! The fast per-section coefficients against the direct telegrapher's evaluation, over every built-in
//! cable kind, temperatures across the cryostat and frequencies from 1 MHz to 40 GHz.

use coldtrace::line::catalogue;
use coldtrace::line::materials::PtfeModel;
use coldtrace::line::physics::SectionState;

#[test]
fn section_coefficients_match_the_direct_evaluation() {
    for name in [
        "cu-086",
        "cu-141",
        "ss-086",
        "cuni-086",
        "agcuni-086",
        "nbti-086",
        "cu-flex",
    ] {
        let kind = catalogue::built_in(name).unwrap();
        for ptfe in [PtfeModel::Free, PtfeModel::Filled, PtfeModel::Gapped] {
            for t in [0.015, 0.8, 3.5, 9.0, 45.0, 120.0, 295.0] {
                let st = SectionState::new(&kind, t, ptfe);
                let c = st.coeffs();
                for f in [0.0, 1e6, 2.7e8, 1e9, 5e9, 1.3e10, 2e10, 4e10] {
                    let (g0, z0) = st.gamma_z0(f);
                    let (g1, z1) = c.gamma_z0(f, f.sqrt());
                    let eg = (g0 - g1).norm() / g0.norm().max(1e-300);
                    let ez = (z0 - z1).norm() / z0.norm();
                    assert!(
                        (g0.norm() == 0.0 && g1.norm() == 0.0) || eg < 1e-12,
                        "{name} {t} K {f} Hz gamma {g0} vs {g1}"
                    );
                    assert!(ez < 1e-12, "{name} {t} K {f} Hz Z0 {z0} vs {z1}");
                }
            }
        }
    }
}

/// A seeded walk in [0, 1).
fn walk(seed: u64) -> impl FnMut() -> f64 {
    let mut x = seed;
    move || {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        (x >> 11) as f64 / (1u64 << 53) as f64
    }
}

#[test]
fn the_algebraic_root_is_the_principal_root() {
    use coldtrace::line::physics::principal_sqrt;
    use num_complex::Complex64;
    let mut next = walk(0x2545_F491_4F6C_DD1D);
    // Every quadrant and both axes, magnitudes from 1e-12 to 1e12 (gamma^2 of a cable from 1 MHz to
    // 40 GHz lies between about 1e-4 and 1e6 per square metre).
    let mut cases = vec![
        Complex64::new(4.0, 0.0),
        Complex64::new(-4.0, 0.0),
        Complex64::new(0.0, 2.0),
        Complex64::new(0.0, -2.0),
        Complex64::new(-4.0, -0.0),
        Complex64::new(0.0, 0.0),
    ];
    for _ in 0..20_000 {
        let mag = 10f64.powf(-12.0 + 24.0 * next());
        let angle = std::f64::consts::PI * (2.0 * next() - 1.0);
        cases.push(Complex64::from_polar(mag, angle));
    }
    for w in cases {
        let r = principal_sqrt(w);
        assert!(r.re >= 0.0, "{w}: {r}");
        // Its square is w (the definition), to a few ulps of |w|.
        assert!(
            (r * r - w).norm() <= 8.0 * f64::EPSILON * w.norm(),
            "{w}: {r} squared is {}",
            r * r
        );
        // And it is num-complex's polar root, to a few ulps of its size (but on the negative real axis,
        // where the two may take opposite signs of a zero real part's imaginary part).
        let p = w.sqrt();
        if w.im != 0.0 || w.re >= 0.0 {
            assert!(
                (r - p).norm() <= 8.0 * f64::EPSILON * p.norm(),
                "{w}: {r} vs {p}"
            );
        }
    }
}

#[test]
fn chain_matrix_from_its_parts_matches_cosh_sinh() {
    use coldtrace::line::abcd::Abcd;
    use num_complex::Complex64;
    let mut next = walk(0x9E37_79B9_7F4A_7C15);
    // Seeded walk over gamma l from 1e-9 to ~30 in magnitude, lossy and lossless.
    for _ in 0..2000 {
        let mag = 10f64.powf(-9.0 + 10.5 * next());
        let g = Complex64::new(mag * next() * 0.2, mag);
        let z0 = Complex64::new(20.0 + 60.0 * next(), -5.0 * next());
        let a = Abcd::line(z0, g, 1.0);
        let b = Abcd::line_parts(z0, z0.inv(), g, 1.0);
        for (p, q) in [(a.a, b.a), (a.b, b.b), (a.c, b.c), (a.d, b.d)] {
            let scale = p.norm().max(1.0);
            assert!((p - q).norm() < 1e-13 * scale, "gl {g}: {p} vs {q}");
        }
        // A line's chain matrix has a unit determinant (reciprocity: cosh^2 - sinh^2 = 1), AD - BC = 1.
        let det = b.a * b.d - b.b * b.c;
        assert!(
            (det - 1.0).norm() < 1e-12 * b.a.norm_sqr().max(1.0),
            "gl {g}: det {det}"
        );
    }
}

#[test]
fn a_sections_admittance_is_the_reciprocal_of_its_impedance_and_gamma_squared_is_z_y() {
    for name in ["cu-086", "ss-086", "nbti-086", "cu-flex"] {
        let kind = catalogue::built_in(name).unwrap();
        for t in [0.015, 3.5, 45.0, 295.0] {
            let st = SectionState::new(&kind, t, PtfeModel::Free);
            let c = st.coeffs();
            for f in [0.0, 1e6, 1e9, 2e10, 4e10] {
                let p = c.propagation(f, f.sqrt());
                assert!((p.z0 * p.y0 - 1.0).norm() < 1e-14, "{name} {t} K {f} Hz");
                assert!(p.gamma.re >= 0.0 && p.z0.re >= 0.0, "{name} {t} K {f} Hz");
            }
        }
    }
}
