//! Alignment of two traces of one line: a per-segment delay scale fitted to landmarks seen in both.
//!
//! The line is cut into segments (the line file's elements, or, for a line of unknown construction, the
//! intervals between landmarks). Segment `j` has a reference round-trip delay `tau_j` (s) in the baseline
//! sweep and a prior scale `p_j` (the line model's predicted current/baseline delay ratio; 1 when nothing is
//! known). A landmark `k` at as-built position `x_k` covers the fraction `a_kj` of segment `j` (1 for every
//! segment wholly before it, a fraction for the one it sits in, 0 after), so the model of its delay in the
//! current sweep is `sum_j a_kj tau_j s_j`.
//!
//! The scales minimise, by linear least squares with a ridge towards the prior,
//!
//! `sum_k (d_k - sum_j a_kj tau_j s_j)^2 / sigma^2 + sum_j (tau_j (s_j - p_j))^2 / (rho tau_tot)^2`
//!
//! where `d_k` is the measured round-trip delay of landmark `k` in the current sweep, `sigma` the delay
//! uncertainty of one landmark and `rho` the prior's relative uncertainty ([`PRIOR_RELATIVE_SIGMA`]).
//! Landmarks dominate wherever there are any; a segment no landmark constrains keeps the model's scale.
//! The same solve, with amplitude ratios in dB in place of delays, gives each segment's loss change.

use serde::Serialize;

/// Relative uncertainty of the line model's predicted delay scale (0.5 %): cryogenic contraction and
/// permittivity figures are good to a fraction of their own size, which is itself a fraction of a percent
/// (common practice, no source).
pub const PRIOR_RELATIVE_SIGMA: f64 = 5e-3;

/// One segment's alignment result. JSON contract: `alignment.segments[]` of the compare report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SegmentAlignment {
    /// The element's name, or `a..b m` for a segment between two landmarks.
    pub element: String,
    /// Current/baseline round-trip delay ratio of this segment.
    pub delay_scale: f64,
    /// Change of the segment's round-trip loss, current minus baseline, dB (negative: less loss now).
    pub loss_change_db: f64,
    /// As-built extent of the segment, m.
    pub start_m: f64,
    pub end_m: f64,
    /// Round-trip delay through the segment in the baseline sweep, s.
    pub baseline_delay_s: f64,
    /// True when at least one landmark constrains the segment; false when the value is the model's.
    pub constrained: bool,
}

/// The linear problem: segments and landmarks.
#[derive(Debug, Clone)]
pub struct AlignProblem {
    /// Baseline round-trip delay of each segment, s.
    pub tau: Vec<f64>,
    /// Prior delay scale of each segment.
    pub prior_scale: Vec<f64>,
    /// Prior round-trip loss change of each segment, dB.
    pub prior_loss_db: Vec<f64>,
    /// Landmarks: for each, the fraction of every segment before it (`cover[k][j]`), its current delay (s)
    /// and its amplitude change, current over baseline, dB.
    pub cover: Vec<Vec<f64>>,
    pub current_delay_s: Vec<f64>,
    pub amplitude_change_db: Vec<f64>,
    /// Delay uncertainty of one landmark, s.
    pub sigma_s: f64,
    /// Amplitude uncertainty of one landmark, dB.
    pub sigma_db: f64,
}

/// The solved alignment.
#[derive(Debug, Clone, PartialEq)]
pub struct AlignSolution {
    pub scale: Vec<f64>,
    pub loss_change_db: Vec<f64>,
    pub constrained: Vec<bool>,
    /// RMS of the landmarks' delay residuals, s.
    pub residual_rms_s: f64,
    /// Each landmark's residual, s (measured minus fitted).
    pub residual_s: Vec<f64>,
}

impl AlignProblem {
    /// Solve both least-squares problems.
    pub fn solve(&self) -> AlignSolution {
        let n = self.tau.len();
        let tau_tot: f64 = self.tau.iter().sum::<f64>().max(f64::MIN_POSITIVE);
        // Delay: unknowns s_j, rows a_kj tau_j / sigma against d_k / sigma; ridge rows tau_j/(rho tau_tot).
        let w_d = 1.0 / self.sigma_s.max(1e-18);
        let w_p = 1.0 / (PRIOR_RELATIVE_SIGMA * tau_tot);
        let mut rows: Vec<(Vec<f64>, f64)> = Vec::new();
        for (k, cover) in self.cover.iter().enumerate() {
            let row: Vec<f64> = (0..n).map(|j| cover[j] * self.tau[j] * w_d).collect();
            rows.push((row, self.current_delay_s[k] * w_d));
        }
        for j in 0..n {
            // A segment of no delay (a device's plane) still gets its prior, so the system stays regular.
            let t = self.tau[j].max(1e-6 * tau_tot);
            let mut row = vec![0.0; n];
            row[j] = t * w_p;
            rows.push((row, self.prior_scale[j] * t * w_p));
        }
        let scale = least_squares(n, &rows).unwrap_or_else(|| self.prior_scale.clone());

        // Loss: unknowns L_j (dB, round trip); a landmark's amplitude falls by the loss before it.
        let w_a = 1.0 / self.sigma_db.max(1e-6);
        let w_l = 1.0 / 0.5; // prior loss change known to about 0.5 dB per segment (common practice, no source)
        let mut rows: Vec<(Vec<f64>, f64)> = Vec::new();
        for (k, cover) in self.cover.iter().enumerate() {
            let row: Vec<f64> = (0..n).map(|j| -cover[j] * w_a).collect();
            rows.push((row, self.amplitude_change_db[k] * w_a));
        }
        for j in 0..n {
            let mut row = vec![0.0; n];
            row[j] = w_l;
            rows.push((row, self.prior_loss_db[j] * w_l));
        }
        let loss = least_squares(n, &rows).unwrap_or_else(|| self.prior_loss_db.clone());

        let residual_s: Vec<f64> = self
            .cover
            .iter()
            .enumerate()
            .map(|(k, cover)| {
                let fit: f64 = (0..n).map(|j| cover[j] * self.tau[j] * scale[j]).sum();
                self.current_delay_s[k] - fit
            })
            .collect();
        let residual_rms_s = if residual_s.is_empty() {
            0.0
        } else {
            (residual_s.iter().map(|r| r * r).sum::<f64>() / residual_s.len() as f64).sqrt()
        };
        let constrained = (0..n)
            .map(|j| self.cover.iter().any(|c| c[j] > 0.0))
            .collect();
        AlignSolution {
            scale,
            loss_change_db: loss,
            constrained,
            residual_rms_s,
            residual_s,
        }
    }
}

/// Solve the overdetermined system `rows` (each a coefficient row and its right-hand side) in the least
/// squares sense through the normal equations, by Gaussian elimination with partial pivoting. `None` when
/// the normal matrix is singular.
pub fn least_squares(n: usize, rows: &[(Vec<f64>, f64)]) -> Option<Vec<f64>> {
    let mut a = vec![vec![0.0; n + 1]; n];
    for (row, rhs) in rows {
        for i in 0..n {
            if row[i] == 0.0 {
                continue;
            }
            for j in 0..n {
                a[i][j] += row[i] * row[j];
            }
            a[i][n] += row[i] * rhs;
        }
    }
    for col in 0..n {
        let piv = (col..n).max_by(|&x, &y| a[x][col].abs().total_cmp(&a[y][col].abs()))?;
        if a[piv][col].abs() < 1e-300 {
            return None;
        }
        a.swap(col, piv);
        for r in 0..n {
            if r != col {
                let factor = a[r][col] / a[col][col];
                if factor != 0.0 {
                    let pivot_row = a[col].clone();
                    for (x, p) in a[r][col..=n].iter_mut().zip(&pivot_row[col..=n]) {
                        *x -= factor * p;
                    }
                }
            }
        }
    }
    Some((0..n).map(|i| a[i][n] / a[i][i]).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn least_squares_solves_an_exact_system() {
        // 2x + y = 5, x - y = 1  =>  x = 2, y = 1.
        let rows = vec![(vec![2.0, 1.0], 5.0), (vec![1.0, -1.0], 1.0)];
        let x = least_squares(2, &rows).unwrap();
        assert!((x[0] - 2.0).abs() < 1e-12 && (x[1] - 1.0).abs() < 1e-12);
    }

    #[test]
    fn recovers_per_segment_scales_from_landmarks_at_segment_ends() {
        // Three segments, a landmark at the end of each, true scales differ from the prior.
        let tau = vec![4e-9, 2e-9, 3e-9];
        let truth = [1.0, 0.996, 1.0031];
        let cover = vec![
            vec![1.0, 0.0, 0.0],
            vec![1.0, 1.0, 0.0],
            vec![1.0, 1.0, 1.0],
        ];
        let d: Vec<f64> = cover
            .iter()
            .map(|c: &Vec<f64>| (0..3).map(|j| c[j] * tau[j] * truth[j]).sum())
            .collect();
        let p = AlignProblem {
            tau,
            prior_scale: vec![1.0, 0.997, 1.002],
            prior_loss_db: vec![0.0; 3],
            cover,
            current_delay_s: d,
            amplitude_change_db: vec![0.5, 1.5, 2.0],
            sigma_s: 0.2e-12,
            sigma_db: 0.1,
        };
        let s = p.solve();
        for (got, want) in s.scale.iter().zip(truth) {
            assert!((got - want).abs() < 2e-5, "scale {got} vs {want}");
        }
        // Amplitudes rose by 0.5, 1.5, 2.0 dB: losses fell by 0.5, 1.0, 0.5 dB.
        let want = [-0.5, -1.0, -0.5];
        for (got, w) in s.loss_change_db.iter().zip(want) {
            assert!((got - w).abs() < 0.05, "loss change {got} vs {w}");
        }
        assert!(s.residual_rms_s < 1e-14);
        assert!(s.constrained.iter().all(|&c| c));
    }

    #[test]
    fn unconstrained_segment_keeps_the_prior() {
        let p = AlignProblem {
            tau: vec![1e-9, 1e-9],
            prior_scale: vec![1.0, 0.995],
            prior_loss_db: vec![0.0, -0.3],
            cover: vec![vec![1.0, 0.0]],
            current_delay_s: vec![1.001e-9],
            amplitude_change_db: vec![0.0],
            sigma_s: 0.1e-12,
            sigma_db: 0.1,
        };
        let s = p.solve();
        assert!((s.scale[0] - 1.001).abs() < 1e-5);
        assert!((s.scale[1] - 0.995).abs() < 1e-9);
        assert!((s.loss_change_db[1] + 0.3).abs() < 1e-9);
        assert_eq!(s.constrained, vec![true, false]);
    }
}
