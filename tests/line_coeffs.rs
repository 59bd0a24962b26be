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

#[test]
fn chain_matrix_from_one_exponential_matches_cosh_sinh() {
    use coldtrace::line::abcd::Abcd;
    use num_complex::Complex64;
    // Seeded walk over gamma l from 1e-9 to ~30 in magnitude, lossy and lossless.
    let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
    let mut next = || {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        (x >> 11) as f64 / (1u64 << 53) as f64
    };
    for _ in 0..2000 {
        let mag = 10f64.powf(-9.0 + 10.5 * next());
        let g = Complex64::new(mag * next() * 0.2, mag);
        let z0 = Complex64::new(20.0 + 60.0 * next(), -5.0 * next());
        let a = Abcd::line(z0, g, 1.0);
        let b = Abcd::line_from_exp(z0, g, 1.0);
        for (p, q) in [(a.a, b.a), (a.b, b.b), (a.c, b.c), (a.d, b.d)] {
            let scale = p.norm().max(1.0);
            assert!((p - q).norm() < 1e-13 * scale, "gl {g}: {p} vs {q}");
        }
    }
}
