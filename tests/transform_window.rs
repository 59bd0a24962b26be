//! Windows against published and reference-library values.

use coldtrace::transform::Window;

/// scipy.signal.windows (scipy 1.17.1, numpy 2.4.6), symmetric (sym=True, the default), computed offline:
/// `kaiser(11, 6)`, `hann(9)`, `hamming(9)`, `blackmanharris(9)`, `kaiser(8, 9)`.
const SCIPY_KAISER_11_6: [f64; 11] = [
    0.014873337104763207,
    0.11939845843903255,
    0.3390180566488852,
    0.6344902671476397,
    0.8954001841928597,
    1.0,
    0.8954001841928597,
    0.6344902671476397,
    0.3390180566488852,
    0.11939845843903255,
    0.014873337104763207,
];
const SCIPY_HANN_9: [f64; 9] = [
    0.0,
    0.14644660940672627,
    0.5,
    0.8535533905932737,
    1.0,
    0.8535533905932737,
    0.5,
    0.14644660940672627,
    0.0,
];
const SCIPY_HAMMING_9: [f64; 9] = [
    0.08000000000000007,
    0.21473088065418822,
    0.54,
    0.865269119345812,
    1.0,
    0.865269119345812,
    0.54,
    0.21473088065418822,
    0.08000000000000007,
];
const SCIPY_BLACKMANHARRIS_9: [f64; 9] = [
    6.0000000000001025e-05,
    0.021735837018679628,
    0.21747000000000008,
    0.6957641629813204,
    1.0,
    0.6957641629813204,
    0.21747000000000008,
    0.021735837018679628,
    6.0000000000001025e-05,
];
const SCIPY_KAISER_8_9: [f64; 8] = [
    0.000914420856691373,
    0.08079384429903876,
    0.4421998919234613,
    0.9166848479621093,
    0.9166848479621093,
    0.4421998919234613,
    0.08079384429903876,
    0.000914420856691373,
];

fn assert_close(got: &[f64], want: &[f64], tol: f64, what: &str) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        assert!((g - w).abs() <= tol, "{what}[{i}]: got {g}, scipy {w}");
    }
}

#[test]
fn coefficients_match_scipy() {
    let tol = 1e-13;
    assert_close(
        &Window::Kaiser { beta: 6.0 }.coefficients(11),
        &SCIPY_KAISER_11_6,
        tol,
        "kaiser(11,6)",
    );
    assert_close(
        &Window::Kaiser { beta: 9.0 }.coefficients(8),
        &SCIPY_KAISER_8_9,
        tol,
        "kaiser(8,9)",
    );
    assert_close(&Window::Hann.coefficients(9), &SCIPY_HANN_9, tol, "hann(9)");
    assert_close(
        &Window::Hamming.coefficients(9),
        &SCIPY_HAMMING_9,
        tol,
        "hamming(9)",
    );
    assert_close(
        &Window::BlackmanHarris4.coefficients(9),
        &SCIPY_BLACKMANHARRIS_9,
        tol,
        "blackmanharris(9)",
    );
    assert_eq!(Window::Rectangular.coefficients(5), vec![1.0; 5]);
    assert_eq!(Window::Hann.coefficients(1), vec![1.0]);
}

/// Figures of scipy's symmetric windows of length 1024, measured offline with numpy.fft.fft zero-padded 64x
/// (the same measurement definition: -6 dB full width with linear interpolation, highest sidelobe beyond the
/// first minimum) — scipy 1.17.1, numpy 2.4.6. (mainlobe_6db_bins, highest_sidelobe_db)
const SCIPY_FIGURES: [(Window, f64, f64); 7] = [
    (Window::Rectangular, 1.2049402945017649, -13.263647577714902),
    (Window::Hann, 1.9987874672606034, -31.468461563922055),
    (Window::Hamming, 1.8135597764119142, -42.674902732049574),
    (Window::BlackmanHarris4, 2.6646118483911, -92.01387665404565),
    (
        Window::Kaiser { beta: 6.0 },
        1.9530744783480944,
        -43.807237170498816,
    ),
    (
        Window::Kaiser { beta: 9.0 },
        2.337762125770843,
        -66.29881890820793,
    ),
    (
        Window::Kaiser { beta: 13.0 },
        2.773499776291621,
        -97.91676867497256,
    ),
];

#[test]
fn figures_match_scipy_measurement() {
    for (w, width, sidelobe) in SCIPY_FIGURES {
        let f = w.figures();
        assert!(
            (f.mainlobe_6db_bins - width).abs() < 1e-6,
            "{w:?}: width {} vs {width}",
            f.mainlobe_6db_bins
        );
        assert!(
            (f.highest_sidelobe_db - sidelobe).abs() < 1e-3,
            "{w:?}: sidelobe {} vs {sidelobe}",
            f.highest_sidelobe_db
        );
    }
}

/// F. J. Harris, Proc. IEEE 66(1):51-83, 1978, Table 1 (values from memory): highest sidelobe (dB) and
/// 6-dB bandwidth (bins). Harris tabulates rounded figures of DFT-even windows; the 4-term Blackman-Harris
/// 6-dB width there (2.72) sits 0.06 bin above the value re-computed for a symmetric N = 1024 window, so the
/// width tolerance is 0.07 bin and the sidelobe tolerance 1 dB.
const HARRIS_TABLE_1: [(Window, f64, f64); 4] = [
    (Window::Rectangular, 1.21, -13.0),
    (Window::Hann, 2.00, -32.0),
    (Window::Hamming, 1.81, -43.0),
    (Window::BlackmanHarris4, 2.72, -92.0),
];

#[test]
fn figures_match_harris_table_1() {
    for (w, width, sidelobe) in HARRIS_TABLE_1 {
        let f = w.figures();
        assert!(
            (f.mainlobe_6db_bins - width).abs() < 0.07,
            "{w:?}: width {}",
            f.mainlobe_6db_bins
        );
        assert!(
            (f.highest_sidelobe_db - sidelobe).abs() < 1.0,
            "{w:?}: sidelobe {}",
            f.highest_sidelobe_db
        );
    }
}

#[test]
fn parse_names_and_errors() {
    assert_eq!(
        Window::parse("kaiser:6").unwrap(),
        Window::Kaiser { beta: 6.0 }
    );
    assert_eq!(Window::parse("Hann").unwrap(), Window::Hann);
    assert_eq!(Window::parse("hamming").unwrap(), Window::Hamming);
    assert_eq!(
        Window::parse("blackman-harris").unwrap(),
        Window::BlackmanHarris4
    );
    assert_eq!(Window::parse("rect").unwrap(), Window::Rectangular);
    for bad in ["kaiser", "kaiser:x", "kaiser:-1", "gauss", ""] {
        let msg = Window::parse(bad).unwrap_err().to_string();
        assert!(
            msg.contains("allowed: rect, hann, hamming, blackman-harris, kaiser:BETA"),
            "{msg}"
        );
    }
    assert_eq!(
        Window::parse(&Window::Kaiser { beta: 7.5 }.label()).unwrap(),
        Window::Kaiser { beta: 7.5 }
    );
}

/// I0 against scipy.special.i0e (scipy 1.17.1, computed offline): e^{-1} I0(1) = 0.46575960759364043,
/// e^{-5} I0(5) = 0.18354081260932834 (the same as Abramowitz and Stegun, 1964, Table 9.8, to its 10 digits);
/// I0(0) = 1 by definition.
#[test]
fn bessel_i0_table_values() {
    use coldtrace::transform::window::bessel_i0;
    assert_eq!(bessel_i0(0.0), 1.0);
    assert!(((-1.0f64).exp() * bessel_i0(1.0) - 0.46575960759364043).abs() < 1e-14);
    assert!(((-5.0f64).exp() * bessel_i0(5.0) - 0.18354081260932834).abs() < 1e-14);
}

proptest::proptest! {
    #[test]
    fn parse_never_panics(s in "\\PC{0,20}") {
        let _ = Window::parse(&s);
    }
}
