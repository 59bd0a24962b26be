//! Fast paths against the naive DFT sum over many sizes and seeded random sweeps.

use coldtrace::transform::{trace, ChirpZ, FftCache, Mode, TracePlan, UniformLine, Window};
use num_complex::Complex64;
use std::f64::consts::PI;

/// SplitMix64 (S. Vigna, public-domain reference algorithm), for reproducible random inputs.
struct SplitMix64(u64);
impl SplitMix64 {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn range(&mut self, lo: usize, hi: usize) -> usize {
        lo + (self.next_u64() % (hi - lo + 1) as u64) as usize
    }
    fn complex(&mut self) -> Complex64 {
        Complex64::new(2.0 * self.uniform() - 1.0, 2.0 * self.uniform() - 1.0)
    }
}

/// The textbook sum, term by term with f64 sin/cos: y_m = sum_n x_n e^{+j 2 pi df n (t0 + m dt)}.
fn naive(x: &[Complex64], m: usize, df_t0: f64, df_dt: f64) -> Vec<Complex64> {
    (0..m)
        .map(|k| {
            x.iter()
                .enumerate()
                .map(|(n, v)| {
                    let ph = 2.0 * PI * (n as f64 * (df_t0 + k as f64 * df_dt));
                    v * Complex64::new(ph.cos(), ph.sin())
                })
                .sum()
        })
        .collect()
}

fn max_rel_err(got: &[Complex64], want: &[Complex64], scale: f64) -> f64 {
    got.iter()
        .zip(want)
        .map(|(g, w)| (g - w).norm() / scale)
        .fold(0.0, f64::max)
}

#[test]
fn chirp_z_equals_direct_sum_over_random_sizes() {
    let mut rng = SplitMix64(0x5EED_0001);
    let mut planner = rustfft::FftPlanner::new();
    for _ in 0..200 {
        let n = rng.range(1, 300);
        let m = rng.range(1, 300);
        // Spans from a tiny zoom to several alias periods.
        let df_dt = (rng.uniform() - 0.5) * 10f64.powf(-4.0 * rng.uniform()) * 2.0 / n as f64;
        let df_t0 = rng.uniform() * 3.0;
        let x: Vec<Complex64> = (0..n).map(|_| rng.complex()).collect();
        let scale: f64 = x.iter().map(|v| v.norm()).sum();
        let fast = ChirpZ::new(&mut planner, n, m, df_t0, df_dt).process(&x);
        let slow = naive(&x, m, df_t0, df_dt);
        let err = max_rel_err(&fast, &slow, scale);
        assert!(
            err < 1e-9,
            "n {n} m {m} df_dt {df_dt} df_t0 {df_t0}: error {err}"
        );
    }
}

#[test]
fn direct_sum_equals_the_naive_sum() {
    // The lanes and anchors of `direct_sum` (every length from 1 to 300, so every remainder of the lanes
    // and of the 64-point blocks, and a long sweep) against e^{+j 2 pi (f0 + k df) t} summed point by point.
    use coldtrace::transform::czt::direct_sum;
    let mut rng = SplitMix64(0x5EED_0004);
    for n in (1..300).chain([10001]) {
        let x: Vec<Complex64> = (0..n).map(|_| rng.complex()).collect();
        let (f0, df, t) = (
            rng.uniform() * 5e9,
            1e6 + rng.uniform() * 5e7,
            rng.uniform() * 2e-7,
        );
        let want: Complex64 = x
            .iter()
            .enumerate()
            .map(|(k, v)| {
                v * Complex64::from_polar(
                    1.0,
                    2.0 * std::f64::consts::PI * ((f0 + k as f64 * df) * t).fract(),
                )
            })
            .sum();
        let scale: f64 = x.iter().map(|v| v.norm()).sum();
        let got = direct_sum(&x, f0, df, t);
        assert!(
            (got - want).norm() / scale < 1e-12,
            "n {n}: {got} vs {want}"
        );
    }
}

#[test]
fn chirp_z_large_sweep_equals_direct_sum() {
    // A 10001-point sweep zoomed to 4096 bins, checked on every 64th output.
    let mut rng = SplitMix64(0x5EED_0002);
    let n = 10001;
    let m = 4096;
    let x: Vec<Complex64> = (0..n).map(|_| rng.complex()).collect();
    let scale: f64 = x.iter().map(|v| v.norm()).sum();
    let (df_t0, df_dt) = (0.123, 0.3 / m as f64);
    let mut cache = FftCache::new();
    let fast = cache.chirp_z(n, m, df_t0, df_dt).process(&x);
    for k in (0..m).step_by(64) {
        let want = naive(&x, 1, df_t0 + k as f64 * df_dt, 0.0)[0];
        assert!((fast[k] - want).norm() / scale < 1e-9, "bin {k}");
    }
}

/// The whole-range FFT path and the span (chirp-z) path of `trace` against h(t) summed naively.
#[test]
fn band_pass_trace_equals_naive_sum() {
    let mut rng = SplitMix64(0x5EED_0003);
    let map = UniformLine::new(0.7).unwrap();
    for case in 0..30 {
        let n = rng.range(2, 400);
        let f0 = rng.uniform() * 5e9;
        let df = 1e6 + rng.uniform() * 5e7;
        let freqs: Vec<f64> = (0..n).map(|i| f0 + i as f64 * df).collect();
        let values: Vec<Complex64> = (0..n).map(|_| rng.complex()).collect();
        let window = [
            Window::Rectangular,
            Window::Hann,
            Window::Kaiser { beta: 6.0 },
        ][case % 3];
        let w = window.coefficients(n);
        let wsum: f64 = w.iter().sum();
        let span = if case % 2 == 0 {
            None
        } else {
            let x0 = rng.uniform() * 2.0;
            Some((x0, x0 + 0.1 + rng.uniform()))
        };
        let plan = TracePlan {
            mode: Mode::BandPass,
            window,
            span_m: span,
            step_m: span.map(|_| 0.001 + rng.uniform() * 0.01),
            padding: rng.range(1, 8),
            ..TracePlan::default()
        };
        let tr = trace(&freqs, &values, &plan, &map).unwrap();
        assert_eq!(tr.complex.len(), tr.time_s.len());
        let scale: f64 = values
            .iter()
            .zip(&w)
            .map(|(v, wn)| v.norm() * wn)
            .sum::<f64>()
            / wsum;
        for k in (0..tr.time_s.len()).step_by(7) {
            let t = tr.time_s[k];
            let want: Complex64 = freqs
                .iter()
                .zip(&values)
                .zip(&w)
                .map(|((f, v), wn)| {
                    let ph = 2.0 * PI * f * t;
                    v * *wn * Complex64::new(ph.cos(), ph.sin())
                })
                .sum::<Complex64>()
                / wsum;
            let err = (tr.complex[k] - want).norm() / scale;
            assert!(err < 1e-9, "case {case} n {n} bin {k}: error {err}");
            assert!(
                (tr.values[k] - 20.0 * want.norm().log10()).abs() < 1e-6 || want.norm() < 1e-12
            );
        }
    }
}

#[test]
fn convolution_lengths_are_the_smallest_of_their_kind() {
    // Each length is a 2-3-5 size of at least n with at least three 2s and at most one 5, and no smaller
    // length is (checked by counting factors from n up). Worked values: 1850 -> 1920 (2^7 3 5; 1875 = 3 5^4
    // is passed over), 7079 -> 7680 (2^9 3 5), 4096 stays.
    use coldtrace::transform::czt::convolution_len;
    let kind = |m: usize| {
        let mut r = m;
        let mut count = [0u32; 3];
        for (c, p) in count.iter_mut().zip([2usize, 3, 5]) {
            while r % p == 0 {
                r /= p;
                *c += 1;
            }
        }
        r == 1 && count[0] >= 3 && count[2] <= 1
    };
    for n in (1..5000).chain([7079, 20011]) {
        let m = convolution_len(n);
        assert!(m >= n && kind(m), "{n} -> {m}");
        assert!((n..m).all(|k| !kind(k)), "{n} -> {m}: a smaller one exists");
    }
    assert_eq!(convolution_len(1850), 1920);
    assert_eq!(convolution_len(7079), 7680);
    assert_eq!(convolution_len(4096), 4096);
}

/// The inverse transform run through a forward plan (conj(F(conj(x))), `czt::inverse_by_forward`) is
/// rustfft's own inverse bit for bit, at lengths of every kind the transforms use: powers of two, 2-3-5
/// lengths with and without a 5, and primes (which rustfft plans by other algorithms).
#[test]
fn inverse_through_the_forward_plan_is_rustffts_inverse_bit_for_bit() {
    let mut rng = SplitMix64(0x1f2e_3d4c);
    let mut planner = rustfft::FftPlanner::<f64>::new();
    for len in [
        1, 2, 8, 100, 1601, 3200, 3240, 4096, 6480, 8000, 8192, 9973, 20250, 81000,
    ] {
        let x: Vec<Complex64> = (0..len).map(|_| rng.complex()).collect();
        let mut want = x.clone();
        planner.plan_fft_inverse(len).process(&mut want);
        let fwd = planner.plan_fft_forward(len);
        let mut got = x.clone();
        let mut scratch = vec![Complex64::new(0.0, 0.0); fwd.get_inplace_scratch_len()];
        coldtrace::transform::czt::inverse_by_forward(fwd.as_ref(), &mut got, &mut scratch);
        for (k, (g, w)) in got.iter().zip(&want).enumerate() {
            assert!(
                g.re.to_bits() == w.re.to_bits() && g.im.to_bits() == w.im.to_bits(),
                "length {len}, bin {k}: {g} through the forward plan, {w} by the inverse plan"
            );
        }
        // And through the cache, as the transforms call it. Its plans come from the process's shared
        // planner, whose recipe for a length may differ with what it planned before (other tests run
        // beside this one): the same transform to rounding.
        let mut cached = x.clone();
        FftCache::new().inverse_in_place(&mut cached);
        let scale = want.iter().map(|w| w.norm()).fold(0.0, f64::max);
        let err = max_rel_err(&cached, &want, scale);
        assert!(
            err < 1e-13,
            "length {len}: FftCache::inverse_in_place off by {err:e}"
        );
    }
}
