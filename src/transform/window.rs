//! Spectral windows (tapers) applied across the frequency record before a transform, and as gate shapes.
//!
//! Convention: windows are **symmetric** (`w[i] = w[N-1-i]`, evaluated at `u = i/(N-1)`), the same as
//! `scipy.signal.windows.*(N, sym=True)`. A sweep's record is a finite set of measured points with a centre,
//! not one period of a periodic signal, so the symmetric form keeps the taper's centre on the band centre
//! (and, for low-pass, exactly on DC). The peak value is 1 at the centre for odd N.
//!
//! Coefficients: Hann and Hamming as in Harris (1978), eqs. (27) and (30); 4-term Blackman-Harris with
//! Harris's -92 dB coefficients a0 = 0.35875, a1 = 0.48829, a2 = 0.14128, a3 = 0.01168 (F. J. Harris, "On the
//! use of windows for harmonic analysis with the discrete Fourier transform", Proc. IEEE 66(1):51-83, 1978,
//! section VI); Kaiser w(u) = I0(beta sqrt(1 - (2u - 1)^2)) / I0(beta) (J. F. Kaiser, 1974; Harris eq. (46)
//! with beta = pi alpha).
//!
//! [`Window::figures`] measures main-lobe width and highest sidelobe numerically from a zero-padded FFT of the
//! window, so the numbers printed are those of the taper actually used.

use super::TransformError;
use num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;
use std::sync::Mutex;

/// Harris (1978) 4-term Blackman-Harris coefficients (the -92 dB design).
pub const BLACKMAN_HARRIS_4: [f64; 4] = [0.35875, 0.48829, 0.14128, 0.01168];

/// Length used to measure window figures: long enough that figures match the large-N values of Harris's
/// Table 1 to about 0.01 bin and 0.1 dB.
pub const FIGURES_LENGTH: usize = 1024;
/// Zero-padding factor for measuring window figures (1/64 bin sampling of the spectrum, refined linearly).
pub const FIGURES_PADDING: usize = 64;
/// The -6 dB level as an amplitude ratio, 10^(-6/20).
const MINUS_6_DB: f64 = 0.501_187_233_627_272_3;

/// A spectral window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Window {
    Rectangular,
    Hann,
    Hamming,
    BlackmanHarris4,
    Kaiser { beta: f64 },
}

/// Measured figures of merit of a window.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WindowFigures {
    /// Full width of the main lobe at -6 dB, in DFT bins of the unpadded record.
    pub mainlobe_6db_bins: f64,
    /// Highest sidelobe relative to the main-lobe peak, dB (negative).
    pub highest_sidelobe_db: f64,
}

/// The window as it appears in results (`window` key of the trace JSON).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WindowInfo {
    pub name: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub beta: Option<f64>,
    #[serde(flatten)]
    pub figures: WindowFigures,
}

impl Window {
    /// Parse `rect`, `hann`, `hamming`, `blackman-harris` or `kaiser:BETA`.
    pub fn parse(text: &str) -> Result<Self, TransformError> {
        let t = text.trim().to_ascii_lowercase();
        let bad = |reason: &str| TransformError::BadWindow {
            text: text.to_string(),
            reason: reason.to_string(),
        };
        Ok(match t.as_str() {
            "rect" | "rectangular" | "none" => Window::Rectangular,
            "hann" | "hanning" => Window::Hann,
            "hamming" => Window::Hamming,
            "blackman-harris" | "blackmanharris" | "bh4" => Window::BlackmanHarris4,
            "kaiser" => return Err(bad("kaiser needs its beta, as kaiser:BETA")),
            _ => match t.strip_prefix("kaiser:") {
                Some(b) => {
                    let beta: f64 = b
                        .trim()
                        .parse()
                        .map_err(|_| bad("the part after 'kaiser:' is not a number"))?;
                    if !(beta.is_finite() && (0.0..=50.0).contains(&beta)) {
                        return Err(bad("kaiser beta must be between 0 and 50"));
                    }
                    Window::Kaiser { beta }
                }
                None => return Err(bad("not a window name")),
            },
        })
    }

    /// The name used in text and JSON.
    pub fn name(&self) -> &'static str {
        match self {
            Window::Rectangular => "rect",
            Window::Hann => "hann",
            Window::Hamming => "hamming",
            Window::BlackmanHarris4 => "blackman-harris",
            Window::Kaiser { .. } => "kaiser",
        }
    }

    /// The value at `u` in [0, 1] (0 and 1 are the ends, 0.5 the centre); 0 outside.
    pub fn value(&self, u: f64) -> f64 {
        if !(0.0..=1.0).contains(&u) {
            return 0.0;
        }
        let c = |k: f64| (2.0 * PI * k * u).cos();
        match *self {
            Window::Rectangular => 1.0,
            Window::Hann => 0.5 - 0.5 * c(1.0),
            Window::Hamming => 0.54 - 0.46 * c(1.0),
            Window::BlackmanHarris4 => {
                let [a0, a1, a2, a3] = BLACKMAN_HARRIS_4;
                a0 - a1 * c(1.0) + a2 * c(2.0) - a3 * c(3.0)
            }
            Window::Kaiser { beta } => {
                let r = 2.0 * u - 1.0;
                bessel_i0(beta * (1.0 - r * r).max(0.0).sqrt()) / bessel_i0(beta)
            }
        }
    }

    /// `n` symmetric coefficients.
    pub fn coefficients(&self, n: usize) -> Vec<f64> {
        match (n, *self) {
            (0, _) => Vec::new(),
            (1, _) => vec![1.0],
            (_, Window::Kaiser { beta }) => {
                // Same formula as `value`, with I0(beta) computed once.
                let norm = 1.0 / bessel_i0(beta);
                (0..n)
                    .map(|i| {
                        let r = 2.0 * i as f64 / (n - 1) as f64 - 1.0;
                        bessel_i0(beta * (1.0 - r * r).max(0.0).sqrt()) * norm
                    })
                    .collect()
            }
            _ => (0..n)
                .map(|i| self.value(i as f64 / (n - 1) as f64))
                .collect(),
        }
    }

    /// Main-lobe width (-6 dB, bins) and highest sidelobe (dB), measured from a zero-padded FFT of
    /// [`FIGURES_LENGTH`] coefficients. Looked up for the windows of [`TABULATED_FIGURES`]; measured once
    /// per other window and remembered (a 64k-point FFT each).
    pub fn figures(&self) -> WindowFigures {
        if let Some((_, f)) = TABULATED_FIGURES.iter().find(|(w, _)| w == self) {
            return *f;
        }
        static MEMO: Mutex<Vec<(Window, WindowFigures)>> = Mutex::new(Vec::new());
        let mut memo = MEMO.lock().unwrap_or_else(|e| e.into_inner());
        if let Some((_, f)) = memo.iter().find(|(w, _)| w == self) {
            return *f;
        }
        let f = measure_figures(&self.coefficients(FIGURES_LENGTH), FIGURES_PADDING);
        memo.push((*self, f));
        f
    }

    /// Name, beta and figures, for results.
    pub fn info(&self) -> WindowInfo {
        WindowInfo {
            name: self.name(),
            beta: match *self {
                Window::Kaiser { beta } => Some(beta),
                _ => None,
            },
            figures: self.figures(),
        }
    }

    /// A label such as `kaiser:6` (parseable by [`Window::parse`]).
    pub fn label(&self) -> String {
        match *self {
            Window::Kaiser { beta } => format!("kaiser:{beta}"),
            w => w.name().to_string(),
        }
    }
}

/// Figures of the windows with fixed parameters and of the Kaiser windows the commands use by default
/// (beta 6 for traces, 9 for the comparator), exactly as [`measure_figures`] gives them for
/// [`FIGURES_LENGTH`] coefficients padded [`FIGURES_PADDING`] times; the test
/// `tabulated_figures_are_the_measured_ones` measures them again. They agree with Harris (1978), Table 1,
/// where it lists the window (rectangular 1.21 bins and -13 dB, Hann 2.00 and -32, Hamming 1.81 and -43).
pub const TABULATED_FIGURES: [(Window, WindowFigures); 6] = [
    (
        Window::Rectangular,
        figures(1.204_940_294_501_764_7, -13.263_647_577_714_902),
    ),
    (
        Window::Hann,
        figures(1.998_787_467_260_603_4, -31.468_461_563_922_062),
    ),
    (
        Window::Hamming,
        figures(1.813_559_776_411_914_2, -42.674_902_732_049_59),
    ),
    (
        Window::BlackmanHarris4,
        figures(2.664_611_848_391_099_4, -92.013_876_654_044_18),
    ),
    (
        Window::Kaiser { beta: 6.0 },
        figures(1.953_074_478_348_094_4, -43.807_237_170_498_794),
    ),
    (
        Window::Kaiser { beta: 9.0 },
        figures(2.337_762_125_770_843, -66.298_818_908_207_75),
    ),
];

const fn figures(mainlobe_6db_bins: f64, highest_sidelobe_db: f64) -> WindowFigures {
    WindowFigures {
        mainlobe_6db_bins,
        highest_sidelobe_db,
    }
}

/// Measure figures of `w` from an FFT zero-padded to `padding` times its length.
pub fn measure_figures(w: &[f64], padding: usize) -> WindowFigures {
    let n = w.len();
    let len = n * padding;
    let mut buf: Vec<Complex64> = w.iter().map(|&x| Complex64::new(x, 0.0)).collect();
    buf.resize(len, Complex64::new(0.0, 0.0));
    rustfft::FftPlanner::new()
        .plan_fft_forward(len)
        .process(&mut buf);
    let peak = buf[0].norm();
    let mag: Vec<f64> = buf[..len / 2].iter().map(|z| z.norm() / peak).collect();
    // Half width at -6 dB, linear interpolation between spectrum samples.
    let k = mag
        .iter()
        .position(|&m| m < MINUS_6_DB)
        .unwrap_or(len / 2 - 1);
    let (a, b) = (mag[k - 1], mag[k]);
    let half = (k - 1) as f64 + (a - MINUS_6_DB) / (a - b);
    // First null: first local minimum; highest sidelobe: largest value beyond it.
    let mut i = 1;
    while i + 1 < mag.len() && mag[i + 1] < mag[i] {
        i += 1;
    }
    let sidelobe = mag[i..].iter().cloned().fold(0.0_f64, f64::max);
    WindowFigures {
        mainlobe_6db_bins: 2.0 * half / padding as f64,
        highest_sidelobe_db: 20.0 * sidelobe.log10(),
    }
}

/// Modified Bessel function of the first kind, order 0, by its power series sum_k ((x/2)^k / k!)^2
/// (Abramowitz and Stegun, Handbook of Mathematical Functions, 1964, eq. 9.6.12); converges for all x, and
/// to full double precision in a few dozen terms for x <= 50.
pub fn bessel_i0(x: f64) -> f64 {
    let q = x * x / 4.0;
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut k = 1.0;
    while term > sum * 1e-17 {
        term *= q / (k * k);
        sum += term;
        k += 1.0;
    }
    sum
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tabulated_figures_are_the_measured_ones() {
        for (w, f) in TABULATED_FIGURES {
            let measured = measure_figures(&w.coefficients(FIGURES_LENGTH), FIGURES_PADDING);
            assert_eq!(measured, f, "{w:?}");
            assert_eq!(w.figures(), f);
        }
        // A window not in the table is measured.
        let w = Window::Kaiser { beta: 7.5 };
        assert_eq!(
            w.figures(),
            measure_figures(&w.coefficients(FIGURES_LENGTH), FIGURES_PADDING)
        );
    }
}
