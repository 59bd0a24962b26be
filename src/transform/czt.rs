//! Chirp-z zoom: the DFT sum evaluated on any uniform time grid, by Bluestein's convolution on rustfft.
//!
//! Evaluates `y_m = sum_{n=0}^{N-1} x_n exp(+j 2 pi df n (t0 + m dt))` for `m = 0..M-1` in O((N+M) log(N+M)).
//! Sign e^{+j}, no normalisation (callers divide by their window sum). Method: L. R. Rabiner, R. W. Schafer,
//! C. M. Rader, "The chirp z-transform algorithm", IEEE Trans. Audio Electroacoust. AU-17(2):86-92, 1969,
//! with Bluestein's identity n m = (n^2 + m^2 - (m - n)^2) / 2 (L. I. Bluestein, IEEE Trans. Audio
//! Electroacoust. AU-18(4):451-455, 1970): with A = e^{+j 2 pi df t0}, W = e^{+j 2 pi df dt},
//! `y_m = W^{m^2/2} sum_n (x_n A^n W^{n^2/2}) W^{-(m-n)^2/2}`, a linear convolution done by FFT of length
//! L >= N + M - 1 (rounded up to a 2-3-5 size).
//!
//! Phases are reduced to cycles in [0, 1) before `exp`, so large n^2 do not lose accuracy beyond what the
//! product `df dt n^2` itself carries (about 1e-16 of it).

use num_complex::Complex64;
use rustfft::{Fft, FftDirection, FftPlanner};
use std::collections::HashMap;
use std::f64::consts::PI;
use std::sync::{Arc, Mutex, OnceLock};

/// Points between exact re-anchorings of [`direct_sum`]'s recurrence: each product adds about one rounding
/// (1e-16), so 64 of them stay far under what a double carries.
pub const DIRECT_ANCHOR: usize = 64;

/// The phasors e^{+j 2 pi (f0 + k df) t} for k = 0, 1, 2, ...: a recurrence of one rotation e^{+j 2 pi df t}
/// per point, re-anchored exactly every [`DIRECT_ANCHOR`] points, so two sines and cosines per anchor
/// instead of one per point.
pub fn phasors(f0: f64, df: f64, t: f64) -> impl Iterator<Item = Complex64> {
    let rot = cis_cycles(df * t);
    let mut ph = Complex64::new(1.0, 0.0);
    (0usize..).map(move |k| {
        if k % DIRECT_ANCHOR == 0 {
            ph = cis_cycles((f0 + k as f64 * df) * t);
        }
        let out = ph;
        ph *= rot;
        out
    })
}

/// Independent phasor recurrences [`turned`] carries side by side: one alone waits on each product's
/// latency.
pub const TURN_LANES: usize = 4;

/// Calls `visit(lane, k, x_k e^{+j 2 pi (f0 + k df) t})` for every k, in increasing k: the
/// phasors as [`phasors`] makes them (anchored exactly at every [`DIRECT_ANCHOR`]-th point), carried in
/// [`TURN_LANES`] recurrences side by side, each stepping by e^{+j 2 pi TURN_LANES df t}; lane `k %
/// TURN_LANES` takes point k. The same phasors to a few roundings.
#[inline(always)]
pub fn turned(
    x: &[Complex64],
    f0: f64,
    df: f64,
    t: f64,
    mut visit: impl FnMut(usize, usize, Complex64),
) {
    const { assert!(DIRECT_ANCHOR % TURN_LANES == 0) };
    let rot = cis_cycles(df * t);
    let mut rot_lanes = Complex64::new(1.0, 0.0);
    for _ in 0..TURN_LANES {
        rot_lanes *= rot;
    }
    for (b, block) in x.chunks(DIRECT_ANCHOR).enumerate() {
        let k0 = b * DIRECT_ANCHOR;
        let mut ph = [cis_cycles((f0 + k0 as f64 * df) * t); TURN_LANES];
        for r in 1..TURN_LANES {
            ph[r] = ph[r - 1] * rot;
        }
        let lanes = block.chunks_exact(TURN_LANES);
        let rest = lanes.remainder();
        for (j, xs) in lanes.enumerate() {
            for r in 0..TURN_LANES {
                visit(r, k0 + j * TURN_LANES + r, xs[r] * ph[r]);
                ph[r] *= rot_lanes;
            }
        }
        let k_rest = k0 + block.len() - rest.len();
        for (r, xk) in rest.iter().enumerate() {
            visit(r, k_rest + r, xk * ph[r]);
        }
    }
}

/// W^{k^2/2} = e^{+j 2 pi a k^2 / 2} for k = 0..len: each the one before times e^{+j 2 pi a (k - 1/2)}, that
/// step itself carried by e^{+j 2 pi a} (the phase's first and second differences), both taken exactly at
/// every [`DIRECT_ANCHOR`]-th point, so that a chirp costs two sines and cosines per anchor, not one per
/// point; the phase reduced to a cycle where it is taken exactly, as [`cis_cycles`] does.
fn chirp_phasors(len: usize, a: f64) -> Vec<Complex64> {
    let second = cis_cycles(a);
    let mut out = Vec::with_capacity(len);
    let (mut c, mut step) = (Complex64::new(1.0, 0.0), Complex64::new(1.0, 0.0));
    for k in 0..len {
        let kf = k as f64;
        if k % DIRECT_ANCHOR == 0 {
            // The exact value and the step to the next point, e^{+j 2 pi a (k + 1/2)}.
            c = cis_cycles(0.5 * a * kf * kf);
            step = cis_cycles(a * (kf + 0.5));
        } else {
            c *= step;
            step *= second;
        }
        out.push(c);
    }
    out
}

/// The sum `sum_k x_k e^{+j 2 pi (f0 + k df) t}` at one time `t`, in O(N), with the phasors of [`turned`].
pub fn direct_sum(x: &[Complex64], f0: f64, df: f64, t: f64) -> Complex64 {
    let mut s = [Complex64::new(0.0, 0.0); TURN_LANES];
    turned(x, f0, df, t, |r, _, z| s[r] += z);
    (s[0] + s[1]) + (s[2] + s[3])
}

/// e^{+j 2 pi cycles}, with the phase reduced to [0, 1) cycles first.
pub fn cis_cycles(cycles: f64) -> Complex64 {
    let c = cycles - cycles.floor();
    Complex64::from_polar(1.0, 2.0 * PI * c)
}

/// The smallest length >= `n` whose only prime factors are 2, 3 and 5 (fast sizes for rustfft).
pub fn fast_len(n: usize) -> usize {
    smallest_len(n, |_, _| true)
}

/// A length >= `n` for a transform whose length is free (a linear convolution by FFT, which any length
/// of at least `n` computes alike): the smallest 2-3-5 size with at least three factors 2 and at most one
/// factor 5. rustfft 6.4 runs those fastest per point: timed on the development machine (docs/performance.md,
/// "FFT lengths") over every 2-3-5 size from 1600 to 8300, this choice costs on average 4 % more than the
/// best size within 35 % above `n`, where the smallest 2-3-5 size costs 15 % more (1875 = 3 5^4 takes
/// 9.6 us, 1920 = 2^7 3 5 takes 5.0 us).
pub fn convolution_len(n: usize) -> usize {
    smallest_len(n, |twos, fives| twos >= 3 && fives <= 1)
}

/// The smallest m >= n whose only prime factors are 2, 3 and 5 and whose counts of 2s and 5s pass `ok`.
fn smallest_len(n: usize, ok: impl Fn(u32, u32) -> bool) -> usize {
    let mut m = n.max(1);
    loop {
        let mut r = m;
        let mut count = [0u32; 3];
        for (c, p) in count.iter_mut().zip([2, 3, 5]) {
            while r % p == 0 {
                r /= p;
                *c += 1;
            }
        }
        if r == 1 && ok(count[0], count[2]) {
            return m;
        }
        m += 1;
    }
}

/// A prepared chirp-z evaluation for fixed sizes and grid (reusable across sweeps on the same grid).
pub struct ChirpZ {
    n: usize,
    m: usize,
    len: usize,
    /// The forward FFT of the convolution's length; the inverse is run through it (see [`inverse_by_forward`]).
    fwd: Arc<dyn Fft<f64>>,
    pre: Vec<Complex64>,
    filter_fft: Vec<Complex64>,
    post: Vec<Complex64>,
}

impl ChirpZ {
    /// Prepare for `n` inputs, `m` outputs, with `df_t0 = df * t0` and `df_dt = df * dt` (both in cycles).
    pub fn new(planner: &mut FftPlanner<f64>, n: usize, m: usize, df_t0: f64, df_dt: f64) -> Self {
        let len = Self::length(n, m);
        Self::with_plan(planner.plan_fft_forward(len), n, m, df_t0, df_dt)
    }

    /// The FFT length a chirp-z of `n` inputs and `m` outputs runs at.
    pub fn length(n: usize, m: usize) -> usize {
        assert!(
            n > 0 && m > 0,
            "ChirpZ: n = {n} and m = {m} must be positive"
        );
        convolution_len(n + m - 1)
    }

    /// [`Self::new`] with its forward FFT plan given (of [`Self::length`]`(n, m)` points), so that a planner
    /// shared between threads is held only while it plans. The convolution's inverse transform runs through
    /// the same plan ([`inverse_by_forward`]).
    pub fn with_plan(fwd: Arc<dyn Fft<f64>>, n: usize, m: usize, df_t0: f64, df_dt: f64) -> Self {
        let len = Self::length(n, m);
        assert!(
            fwd.len() == len && fwd.fft_direction() == FftDirection::Forward,
            "ChirpZ::with_plan: a plan of {} points ({:?}) for a forward length of {len}",
            fwd.len(),
            fwd.fft_direction()
        );
        // W^{k^2/2} = e^{+j 2 pi df_dt k^2 / 2}, worked out once for every k the plan uses.
        let chirp = chirp_phasors(n.max(m), df_dt);
        // A^i = e^{+j 2 pi df_t0 i} (exactly 1 for a transform from t0 = 0, as `cis_cycles(0)` gives it).
        let start = |i: usize| {
            if df_t0 == 0.0 {
                Complex64::new(1.0, 0.0)
            } else {
                cis_cycles(df_t0 * i as f64)
            }
        };
        let pre = (0..n).map(|i| start(i) * chirp[i]).collect();
        let post = chirp[..m].to_vec();
        let mut filter = vec![Complex64::new(0.0, 0.0); len];
        for (v, c) in filter.iter_mut().zip(&chirp[..m]) {
            *v = c.conj();
        }
        for k in 1..n {
            filter[len - k] = chirp[k].conj();
        }
        fwd.process(&mut filter);
        let scale = 1.0 / len as f64;
        for v in &mut filter {
            *v *= scale;
        }
        ChirpZ {
            n,
            m,
            len,
            fwd,
            pre,
            filter_fft: filter,
            post,
        }
    }

    /// Number of outputs.
    pub fn outputs(&self) -> usize {
        self.m
    }

    /// Evaluate for `x` (length `n`); returns `m` values.
    pub fn process(&self, x: &[Complex64]) -> Vec<Complex64> {
        self.process_with_scratch(x, &mut Vec::new())
    }

    /// [`ChirpZ::process`] with the FFTs' working space in `scratch` (grown as needed and kept by the
    /// caller: [`FftCache::apply`] keeps one for every transform it runs), so that a loop of evaluations
    /// allocates and clears only its outputs.
    pub fn process_with_scratch(
        &self,
        x: &[Complex64],
        scratch: &mut Vec<Complex64>,
    ) -> Vec<Complex64> {
        assert_eq!(
            x.len(),
            self.n,
            "ChirpZ::process: expected {} inputs, got {}",
            self.n,
            x.len()
        );
        let mut buf: Vec<Complex64> = Vec::with_capacity(self.len);
        buf.extend(x.iter().zip(&self.pre).map(|(&xi, &p)| xi * p));
        buf.resize(self.len, Complex64::new(0.0, 0.0));
        let need = self.fwd.get_inplace_scratch_len();
        if scratch.len() < need {
            scratch.resize(need, Complex64::new(0.0, 0.0));
        }
        self.fwd
            .process_with_scratch(&mut buf, &mut scratch[..need]);
        // The inverse transform of the product as conj(F(conj(product))) (see `inverse_by_forward`), its two
        // conjugations folded into the product and the post-chirp.
        for (b, &f) in buf.iter_mut().zip(&self.filter_fft) {
            *b = (*b * f).conj();
        }
        self.fwd
            .process_with_scratch(&mut buf, &mut scratch[..need]);
        buf.truncate(self.m);
        for (b, &p) in buf.iter_mut().zip(&self.post) {
            *b = b.conj() * p;
        }
        buf
    }
}

/// The inverse FFT (e^{+j}, unnormalised) of `buf` in place, through a forward plan `fwd` of its length:
/// conj(F(conj(x))). Conjugation is exact and commutes with every operation of a transform (a product's
/// and a sum's conjugate are the products and sums of the conjugates, rounded alike), and rustfft's
/// inverse plans use the conjugates of the forward twiddles, so the result is bit for bit that of
/// rustfft's inverse plan from a planner in the same state (held so in
/// `inverse_through_the_forward_plan_is_rustffts_inverse_bit_for_bit`); each length is planned, and its
/// twiddles worked out, once instead of once a direction.
pub fn inverse_by_forward(fwd: &dyn Fft<f64>, buf: &mut [Complex64], scratch: &mut [Complex64]) {
    for v in buf.iter_mut() {
        *v = v.conj();
    }
    fwd.process_with_scratch(buf, scratch);
    for v in buf.iter_mut() {
        *v = v.conj();
    }
}

type ChirpKey = (usize, usize, u64, u64);

/// The process's one FFT planner: every [`FftCache`] (one per trace engine; a comparison makes several, a
/// survey one per line) takes its plans from it, so each length's twiddles are worked out once per process.
/// rustfft's planner keeps what it planned, one entry per length (and lengths are few: the 2-3-5 sizes of
/// [`fast_len`]).
fn shared_planner() -> &'static Mutex<FftPlanner<f64>> {
    static PLANNER: OnceLock<Mutex<FftPlanner<f64>>> = OnceLock::new();
    PLANNER.get_or_init(|| Mutex::new(FftPlanner::new()))
}

/// Most prepared chirp-z evaluations a cache keeps. One cache may serve a whole fleet of lines (each on its
/// own grid and span): it starts afresh when full, so its memory stays bounded (a plan holds a few
/// transform-length buffers, tens of kB at a few thousand points).
pub const MAX_CACHED_CHIRPS: usize = 64;

/// A cache of FFT plans (from the process's one planner) and of prepared chirp-z evaluations, shared by
/// every trace on the same grid (warm and cold sweeps of one line reuse every plan).
#[derive(Default)]
pub struct FftCache {
    /// Plans taken from the shared planner, by length and direction (true: inverse).
    ffts: HashMap<(usize, bool), Arc<dyn Fft<f64>>>,
    chirps: HashMap<ChirpKey, Arc<ChirpZ>>,
    scratch: Vec<Complex64>,
}

impl std::fmt::Debug for FftCache {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "FftCache({} chirp-z plans)", self.chirps.len())
    }
}

impl FftCache {
    pub fn new() -> Self {
        Self::default()
    }

    /// The plan for an FFT of `len` points (`inverse`: e^{+j}), from this cache or the shared planner.
    fn plan(&mut self, len: usize, inverse: bool) -> Arc<dyn Fft<f64>> {
        self.ffts
            .entry((len, inverse))
            .or_insert_with(|| {
                let mut planner = shared_planner().lock().unwrap_or_else(|e| e.into_inner());
                if inverse {
                    planner.plan_fft_inverse(len)
                } else {
                    planner.plan_fft_forward(len)
                }
            })
            .clone()
    }

    /// The prepared chirp-z for these sizes and grid, built once.
    pub fn chirp_z(&mut self, n: usize, m: usize, df_t0: f64, df_dt: f64) -> Arc<ChirpZ> {
        let key = (n, m, df_t0.to_bits(), df_dt.to_bits());
        if let Some(c) = self.chirps.get(&key) {
            return c.clone();
        }
        // The plans come from this cache (the shared planner is locked only to plan a new length); the
        // chirps and the filter's transform are worked out unlocked.
        let len = ChirpZ::length(n, m);
        let c = Arc::new(ChirpZ::with_plan(self.plan(len, false), n, m, df_t0, df_dt));
        if self.chirps.len() >= MAX_CACHED_CHIRPS {
            self.chirps.clear();
        }
        self.chirps.insert(key, c.clone());
        c
    }

    /// Run the prepared chirp-z `c` on `x` with this cache's scratch buffer (see
    /// [`ChirpZ::process_with_scratch`]).
    pub fn apply(&mut self, c: &ChirpZ, x: &[Complex64]) -> Vec<Complex64> {
        c.process_with_scratch(x, &mut self.scratch)
    }

    /// In-place inverse FFT (e^{+j}, unnormalised) of `buf`, reusing one scratch buffer across calls: run
    /// through the forward plan of the length ([`inverse_by_forward`]), so that a length used both ways is
    /// planned once.
    pub fn inverse_in_place(&mut self, buf: &mut [Complex64]) {
        let fft = self.plan(buf.len(), false);
        inverse_by_forward(fft.as_ref(), buf, self.scratch_for(fft.as_ref()));
    }

    /// In-place forward FFT (e^{-j}, unnormalised) of `buf`, reusing one scratch buffer across calls.
    pub fn forward_in_place(&mut self, buf: &mut [Complex64]) {
        let fft = self.plan(buf.len(), false);
        self.run(&fft, buf);
    }

    fn run(&mut self, fft: &Arc<dyn Fft<f64>>, buf: &mut [Complex64]) {
        fft.process_with_scratch(buf, self.scratch_for(fft.as_ref()));
    }

    /// This cache's scratch buffer, grown to what `fft` needs in place.
    fn scratch_for(&mut self, fft: &dyn Fft<f64>) -> &mut [Complex64] {
        let need = fft.get_inplace_scratch_len();
        if self.scratch.len() < need {
            self.scratch.resize(need, Complex64::new(0.0, 0.0));
        }
        &mut self.scratch[..need]
    }

    /// An inverse FFT (e^{+j}, unnormalised) of length `len`.
    pub fn inverse(&mut self, len: usize) -> Arc<dyn Fft<f64>> {
        self.plan(len, true)
    }

    /// A forward FFT (e^{-j}, unnormalised) of length `len`.
    pub fn forward(&mut self, len: usize) -> Arc<dyn Fft<f64>> {
        self.plan(len, false)
    }
}
