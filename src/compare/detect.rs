//! Finding events in a band-pass magnitude trace: a noise floor made from the data itself, masks under the
//! window sidelobes of strong neighbours, sub-bin peak positions, and a flag on likely multiple-reflection
//! ghosts.
//!
//! Conventions: the trace is `|h(t_i)|` (linear, normalised so a lone reflection rho reads |rho|) on a
//! uniform grid of round-trip delays `t_i` (s). Positions in metres come from the caller's distance map.

use serde::Serialize;

/// Detection threshold above the noise floor, in units of the noise's RMS magnitude. For complex Gaussian
/// noise |h| is Rayleigh distributed, P(|h| > k sigma) = exp(-k^2): k = 4.5 gives 1.6e-9 per bin, so a
/// 10^4-bin trace shows a false event about once in 60 000 traces (Rayleigh tail; any probability text).
pub const NOISE_SIGMAS: f64 = 4.5;

/// Quantile of the trace magnitudes used to estimate the noise (the lower quarter: robust to events and
/// their sidelobes filling up to about half the trace).
pub const NOISE_QUANTILE: f64 = 0.25;

/// Extra margin kept above a strong neighbour's highest window sidelobe, dB: the sidelobe envelope is a bound
/// only for an isolated, noise-free echo (common practice, no source).
pub const SIDELOBE_MARGIN_DB: f64 = 6.0;

/// An estimated noise floor: the RMS magnitude `sigma` of noise in the trace.
///
/// For Rayleigh-distributed |h| with E|h|^2 = sigma^2 the quantile q sits at sigma sqrt(-ln(1 - q)), so
/// sigma = Q_q / sqrt(-ln(1 - q)).
pub fn noise_sigma(mag: &[f64]) -> f64 {
    if mag.is_empty() {
        return 0.0;
    }
    let mut v: Vec<f64> = mag.iter().copied().filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return 0.0;
    }
    let k = ((v.len() - 1) as f64 * NOISE_QUANTILE).round() as usize;
    let (_, q, _) = v.select_nth_unstable_by(k, |a, b| a.total_cmp(b));
    *q / (-(1.0 - NOISE_QUANTILE).ln()).sqrt()
}

/// What the detector needs to know of the window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LobeShape {
    /// Half-width of the main lobe round a peak inside which no second event is claimed, round-trip s.
    pub main_lobe_half_s: f64,
    /// Highest sidelobe relative to the peak, dB (negative).
    pub sidelobe_db: f64,
}

/// A local maximum accepted as an event.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Peak {
    /// Bin index of the maximum.
    pub index: usize,
    /// Sub-bin round-trip delay, s.
    pub delay_s: f64,
    /// Peak magnitude (linear, sub-bin estimate).
    pub magnitude: f64,
    /// The threshold it passed (linear).
    pub threshold: f64,
    /// Set when the event sits where a multiple reflection of stronger events would land.
    pub ghost_of: Option<(usize, usize)>,
}

/// Find events in `mag` sampled at delays `t0 + i dt`: local maxima above `NOISE_SIGMAS` noise RMS and above
/// the sidelobe masks of every stronger accepted event. Returned in order of delay.
///
/// `gain[i]` is the amplitude gain loss compensation applied at bin `i` (all ones for an uncompensated
/// trace); thresholds are compared in the uncompensated domain, `mag[i] / gain[i]`, where the noise
/// (`sigma`, uncompensated) is the same everywhere and a neighbour's sidelobes keep their raw level.
pub fn find_events(
    mag: &[f64],
    gain: &[f64],
    t0: f64,
    dt: f64,
    lobe: LobeShape,
    sigma: f64,
) -> Vec<Peak> {
    assert_eq!(
        mag.len(),
        gain.len(),
        "find_events: {} values but {} gains",
        mag.len(),
        gain.len()
    );
    let floor = NOISE_SIGMAS * sigma;
    let raw: Vec<f64> = mag
        .iter()
        .zip(gain)
        .map(|(m, g)| m / g.max(1e-300))
        .collect();
    let local_max = |v: &[f64], i: usize| {
        let left = if i == 0 { f64::NEG_INFINITY } else { v[i - 1] };
        let right = v.get(i + 1).copied().unwrap_or(f64::NEG_INFINITY);
        v[i] >= left && v[i] > right
    };
    // A peak of what the analyzer measured, or of the compensated trace. Where the compensation steps up (an
    // attenuator) an echo just in front of the step is no maximum of the compensated trace, whose flank
    // behind the step is lifted above it; the measured trace keeps the echo's own peak.
    let mut cands: Vec<usize> = (0..mag.len())
        .filter(|&i| raw[i] > floor && (local_max(&raw, i) || local_max(mag, i)))
        .collect();
    // Strongest first in the uncompensated domain: precedence between neighbours is decided by what the
    // analyzer measured, not by how much a neighbour was lifted.
    cands.sort_by(|&a, &b| raw[b].total_cmp(&raw[a]));
    let side = 10f64.powf((lobe.sidelobe_db + SIDELOBE_MARGIN_DB) / 20.0);
    let mut accepted: Vec<Peak> = Vec::new();
    let mut accepted_raw: Vec<f64> = Vec::new();
    for i in cands {
        // Placed on the measured trace where it peaks (the shape of an echo is the window's there), on the
        // compensated one otherwise.
        let peak_raw = local_max(&raw, i);
        let (delay, m_raw) = if peak_raw {
            refine(&raw, i, t0, dt)
        } else {
            let (d, m) = refine(mag, i, t0, dt);
            (d, m / gain[i].max(1e-300))
        };
        let m = m_raw * gain[i];
        let mut threshold = floor;
        let mut masked = false;
        // A peak of the compensated trace only (the measured one still falls there) is a stronger echo's
        // flank lifted by a step of the compensation, unless it stands clear of that echo's main lobe by as
        // much again.
        let reach = if peak_raw {
            lobe.main_lobe_half_s
        } else {
            2.0 * lobe.main_lobe_half_s
        };
        for (p, &p_raw) in accepted.iter().zip(&accepted_raw) {
            if (delay - p.delay_s).abs() < reach {
                masked = true;
                break;
            }
            threshold = threshold.max(p_raw * side);
        }
        if !masked && m_raw > threshold {
            accepted.push(Peak {
                index: i,
                delay_s: delay,
                magnitude: m,
                threshold: threshold * gain[i],
                ghost_of: None,
            });
            accepted_raw.push(m_raw);
        }
    }
    accepted.sort_by(|a, b| a.delay_s.total_cmp(&b.delay_s));
    flag_ghosts(&mut accepted, lobe.main_lobe_half_s);
    accepted
}

/// Parabolic interpolation of the peak at bin `i` on the magnitude: sub-bin delay and height.
fn refine(mag: &[f64], i: usize, t0: f64, dt: f64) -> (f64, f64) {
    if i == 0 || i + 1 >= mag.len() {
        return (t0 + i as f64 * dt, mag[i]);
    }
    let (a, b, c) = (mag[i - 1], mag[i], mag[i + 1]);
    let den = a - 2.0 * b + c;
    if den >= 0.0 {
        return (t0 + i as f64 * dt, b);
    }
    let p = (0.5 * (a - c) / den).clamp(-0.5, 0.5);
    (t0 + (i as f64 + p) * dt, b - 0.25 * (a - c) * p)
}

/// Largest reflection a ghost's source pair is assumed to bounce off at the reference plane (an uncorrected
/// analyzer port, about -10 dB source match at worst; common practice, no source).
pub const PORT_REFLECTION: f64 = 0.3;

/// Mark events that sit where the double bounce between two stronger events lands (round-trip delay
/// 2 t_j - t_i for i before j, with the reference plane as i = port) and are no more than 10 dB above the
/// predicted ghost amplitude |rho_i| |rho_j|^2.
fn flag_ghosts(events: &mut [Peak], tol_s: f64) {
    let n = events.len();
    for k in 0..n {
        let (tk, ak) = (events[k].delay_s, events[k].magnitude);
        let mut ghost = None;
        'pairs: for j in 0..k {
            let aj = events[j].magnitude;
            if aj <= ak {
                continue;
            }
            // Bounce between the port and event j.
            if (2.0 * events[j].delay_s - tk).abs() < tol_s
                && ak <= 10f64.sqrt() * PORT_REFLECTION * aj * aj
            {
                ghost = Some((usize::MAX, j));
                break;
            }
            for i in 0..j {
                let ai = events[i].magnitude;
                let tg = 2.0 * events[j].delay_s - events[i].delay_s;
                if ai > ak && (tg - tk).abs() < tol_s && ak <= 10f64.sqrt() * ai * aj * aj {
                    ghost = Some((i, j));
                    break 'pairs;
                }
            }
        }
        events[k].ghost_of = ghost;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Deterministic complex Gaussian noise (SplitMix64 + Box-Muller), for the tests only.
    fn noise(n: usize, sigma: f64, seed: u64) -> Vec<f64> {
        let mut s = seed;
        let mut next = || {
            s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = s;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
        };
        (0..n)
            .map(|_| {
                let (u1, u2) = (next().max(1e-300), next());
                let r = (-2.0 * u1.ln()).sqrt() * sigma / 2f64.sqrt();
                let (a, b) = (
                    r * (2.0 * std::f64::consts::PI * u2).cos(),
                    r * (2.0 * std::f64::consts::PI * u2).sin(),
                );
                (a * a + b * b).sqrt()
            })
            .collect()
    }

    #[test]
    fn noise_sigma_of_pure_rayleigh_noise() {
        let m = noise(20000, 1e-4, 7);
        let s = noise_sigma(&m);
        assert!((s / 1e-4 - 1.0).abs() < 0.05, "{s}");
    }

    #[test]
    fn finds_two_echoes_and_nothing_in_noise() {
        let n = 4000;
        let mut m = noise(n, 1e-4, 11);
        // Two echoes with a Gaussian-like main lobe 6 bins wide.
        for (c, a) in [(1000.0, 0.3), (1400.0, 0.03)] {
            for (i, v) in m.iter_mut().enumerate() {
                let x = (i as f64 - c) / 2.0;
                *v += a * (-x * x).exp();
            }
        }
        let lobe = LobeShape {
            main_lobe_half_s: 5.0,
            sidelobe_db: -44.0,
        };
        let sigma = noise_sigma(&m);
        let ev = find_events(&m, &vec![1.0; m.len()], 0.0, 1.0, lobe, sigma);
        assert_eq!(ev.len(), 2, "{ev:?}");
        assert!((ev[0].delay_s - 1000.0).abs() < 0.2 && (ev[1].delay_s - 1400.0).abs() < 0.2);
    }

    #[test]
    fn double_bounce_is_flagged() {
        let lobe = LobeShape {
            main_lobe_half_s: 5.0,
            sidelobe_db: -60.0,
        };
        let mut m = vec![0.0; 3000];
        for (c, a) in [(500usize, 0.5), (1000, 0.5), (1500, 0.5 * 0.5 * 0.5)] {
            m[c] = a;
            m[c - 1] = a * 0.5;
            m[c + 1] = a * 0.5;
        }
        let ev = find_events(&m, &vec![1.0; m.len()], 0.0, 1.0, lobe, 1e-6);
        assert_eq!(ev.len(), 3);
        assert_eq!(ev[2].ghost_of, Some((0, 1)));
        assert_eq!(ev[0].ghost_of, None);
    }
}
