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
    /// Prior uncertainty of each segment's loss change, dB; empty: [`LOSS_PRIOR_SIGMA_DB`] for all.
    pub loss_sigma_db: Vec<f64>,
    /// Landmarks: for each, the fraction of every segment before it (`cover[k][j]`), its current delay (s)
    /// and its amplitude change, current over baseline, dB.
    pub cover: Vec<Vec<f64>>,
    pub current_delay_s: Vec<f64>,
    pub amplitude_change_db: Vec<f64>,
    /// Delay uncertainty of one landmark, s.
    pub sigma_s: f64,
    /// Amplitude uncertainty of one landmark, dB.
    pub sigma_db: f64,
    /// Bounds of each segment's delay scale (physical limits of the state change); `None`: unbounded.
    pub bounds: Option<(f64, f64)>,
    /// True when a sweep shows gain in its path (an amplifier in front of the line): the level change is
    /// then expected and fitted freely, however few landmarks there are.
    pub level_free: bool,
}

/// The solved alignment.
#[derive(Debug, Clone, PartialEq)]
pub struct AlignSolution {
    pub scale: Vec<f64>,
    pub loss_change_db: Vec<f64>,
    /// Change of the whole trace's level, current over baseline, dB (an amplifier's gain in front of the
    /// line, a changed source power): it adds to every echo alike.
    pub level_db: f64,
    /// Robust weight (0..1) each landmark kept in the amplitude fit: a landmark whose own reflection changed
    /// is weighed down rather than bending the loss.
    pub amplitude_weight: Vec<f64>,
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
        let scale = bounded_least_squares(n, &rows, self.bounds)
            .unwrap_or_else(|| self.prior_scale.clone());

        // Loss: unknowns L_j (dB, round trip) and the level change g (dB); a landmark's amplitude changes by
        // g less the loss before it. Huber weights (k = 1.5 sigma) keep a changed landmark from bending it.
        let w_a = 1.0 / self.sigma_db.max(1e-6);
        let w_l = |j: usize| {
            1.0 / self
                .loss_sigma_db
                .get(j)
                .copied()
                .unwrap_or(LOSS_PRIOR_SIGMA_DB)
                .max(1e-6)
        };
        // A landmark that moved by more than any level or loss change can explain is a change, not a
        // landmark; and the level is left free only where enough landmarks can outvote a changed one.
        let mut robust: Vec<f64> = self
            .amplitude_change_db
            .iter()
            .map(|a| {
                if !a.is_finite() || a.abs() > MAX_LANDMARK_AMPLITUDE_DB {
                    0.0
                } else {
                    1.0
                }
            })
            .collect();
        let usable = robust.iter().filter(|&&w| w > 0.0).count();
        let free = usable >= MIN_LEVEL_LANDMARKS || (self.level_free && usable > 0);
        // With too few landmarks to outvote a changed one, the loss keeps the plain prior width too.
        let w_l = |j: usize| {
            if free {
                w_l(j)
            } else {
                1.0 / LOSS_PRIOR_SIGMA_DB
            }
        };
        let w_g = if free {
            1.0 / LEVEL_PRIOR_SIGMA_DB
        } else {
            1.0 / self.sigma_db.max(1e-6)
        };
        let mut sol = None;
        for _ in 0..6 {
            let mut rows: Vec<(Vec<f64>, f64)> = Vec::new();
            for (k, cover) in self.cover.iter().enumerate() {
                if robust[k] == 0.0 {
                    continue;
                }
                let wk = w_a * robust[k];
                let mut row: Vec<f64> = (0..n).map(|j| -cover[j] * wk).collect();
                row.push(wk);
                rows.push((row, self.amplitude_change_db[k] * wk));
            }
            for j in 0..n {
                let mut row = vec![0.0; n + 1];
                row[j] = w_l(j);
                rows.push((row, self.prior_loss_db[j] * w_l(j)));
            }
            let mut row = vec![0.0; n + 1];
            row[n] = w_g;
            rows.push((row, 0.0));
            let Some(x) = least_squares(n + 1, &rows) else {
                break;
            };
            for (k, cover) in self.cover.iter().enumerate() {
                let fit = x[n] - (0..n).map(|j| cover[j] * x[j]).sum::<f64>();
                let r = (self.amplitude_change_db[k] - fit).abs();
                let h = 1.5 * self.sigma_db;
                if robust[k] > 0.0 {
                    robust[k] = if r <= h { 1.0 } else { h / r };
                }
            }
            sol = Some(x);
        }
        let (loss, level_db) = match sol {
            Some(x) => (x[..n].to_vec(), x[n]),
            None => (self.prior_loss_db.clone(), 0.0),
        };

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
            level_db,
            amplitude_weight: robust,
            constrained,
            residual_rms_s,
            residual_s,
        }
    }
}

/// Prior uncertainty of a segment's loss change about the model's, dB (common practice, no source).
pub const LOSS_PRIOR_SIGMA_DB: f64 = 0.5;

/// Prior uncertainty of the whole trace's level change, dB: wide, so the landmarks decide (an amplifier's
/// gain can move by several dB on cooling; common practice, no source).
pub const LEVEL_PRIOR_SIGMA_DB: f64 = 20.0;

/// Largest amplitude change of a landmark that the level and loss calibration may take in, dB: beyond it the
/// echo itself changed (common practice, no source).
pub const MAX_LANDMARK_AMPLITUDE_DB: f64 = 20.0;

/// Least number of usable landmarks for the level change to be fitted freely; with fewer, one changed
/// landmark could pass for a level change (three: a majority can outvote one).
pub const MIN_LEVEL_LANDMARKS: usize = 3;

/// Least squares with every unknown kept inside `bounds` (an active set: unknowns that leave the bounds
/// are held at the bound they crossed and the rest solved again, until none leaves).
pub fn bounded_least_squares(
    n: usize,
    rows: &[(Vec<f64>, f64)],
    bounds: Option<(f64, f64)>,
) -> Option<Vec<f64>> {
    let Some((lo, hi)) = bounds else {
        return least_squares(n, rows);
    };
    let mut fixed: Vec<Option<f64>> = vec![None; n];
    for _ in 0..=n {
        let free: Vec<usize> = (0..n).filter(|&j| fixed[j].is_none()).collect();
        let reduced: Vec<(Vec<f64>, f64)> = rows
            .iter()
            .map(|(row, rhs)| {
                let held: f64 = (0..n).filter_map(|j| fixed[j].map(|v| row[j] * v)).sum();
                (free.iter().map(|&j| row[j]).collect(), rhs - held)
            })
            .collect();
        let x = if free.is_empty() {
            Vec::new()
        } else {
            least_squares(free.len(), &reduced)?
        };
        let mut full: Vec<f64> = (0..n).map(|j| fixed[j].unwrap_or(0.0)).collect();
        for (k, &j) in free.iter().enumerate() {
            full[j] = x[k];
        }
        let mut changed = false;
        for &j in &free {
            if full[j] < lo {
                fixed[j] = Some(lo);
                changed = true;
            } else if full[j] > hi {
                fixed[j] = Some(hi);
                changed = true;
            }
        }
        if !changed {
            return Some(full);
        }
    }
    Some(
        (0..n)
            .map(|j| fixed[j].unwrap_or(1.0).clamp(lo, hi))
            .collect(),
    )
}

/// Solve the overdetermined system `rows` (each a coefficient row and its right-hand side) in the least
/// squares sense through the normal equations, by Gaussian elimination with partial pivoting. `None` when
/// the normal matrix is singular.
pub fn least_squares(n: usize, rows: &[(Vec<f64>, f64)]) -> Option<Vec<f64>> {
    let mut a = vec![vec![0.0; n + 1]; n];
    for (row, rhs) in rows {
        add_row(&mut a, row, *rhs);
    }
    solve_normal(a)
}

/// Add one row of the design (`row`, right-hand side `rhs`) to the augmented normal equations `a` (n rows of
/// n + 1), as [`least_squares`] does.
pub fn add_row(a: &mut [Vec<f64>], row: &[f64], rhs: f64) {
    let n = row.len();
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

/// Solve the augmented normal equations `a` (n rows of n + 1) by Gauss-Jordan elimination with partial
/// pivoting; `None` when they are singular.
pub fn solve_normal(mut a: Vec<Vec<f64>>) -> Option<Vec<f64>> {
    let n = a.len();
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
        // Three segments, a landmark at the reference plane and at the end of each, true scales differ from
        // the prior.
        let tau = vec![4e-9, 2e-9, 3e-9];
        let truth = [1.0, 0.996, 1.0031];
        let cover = vec![
            vec![0.0, 0.0, 0.0],
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
            loss_sigma_db: Vec::new(),
            cover,
            current_delay_s: d,
            amplitude_change_db: vec![0.0, 0.5, 1.5, 2.0],
            sigma_s: 0.2e-12,
            sigma_db: 0.1,
            bounds: None,
            level_free: false,
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
        assert!(s.level_db.abs() < 0.05, "level {}", s.level_db);
        assert!(s.residual_rms_s < 1e-14);
        assert!(s.constrained.iter().all(|&c| c));
    }

    #[test]
    fn a_gain_change_is_a_level_and_a_changed_landmark_is_weighed_down() {
        // Five landmarks along one segment; the whole trace rose by 5 dB (an amplifier warmed), the loss did
        // not change, and the landmark at 0.6 rose by another 8 dB (its own joint changed).
        let cover: Vec<Vec<f64>> = [0.0, 0.2, 0.4, 0.6, 0.8, 1.0]
            .iter()
            .map(|&c| vec![c])
            .collect();
        let amp: Vec<f64> = (0..6).map(|k| if k == 3 { 13.0 } else { 5.0 }).collect();
        let p = AlignProblem {
            tau: vec![10e-9],
            prior_scale: vec![1.0],
            prior_loss_db: vec![0.0],
            loss_sigma_db: Vec::new(),
            current_delay_s: cover.iter().map(|c| c[0] * 10e-9).collect(),
            cover,
            amplitude_change_db: amp,
            sigma_s: 0.2e-12,
            sigma_db: 0.3,
            bounds: Some((0.998, 1.01)),
            level_free: false,
        };
        let s = p.solve();
        assert!((s.level_db - 5.0).abs() < 0.3, "level {}", s.level_db);
        assert!(
            s.loss_change_db[0].abs() < 0.3,
            "loss {}",
            s.loss_change_db[0]
        );
        assert!(
            s.amplitude_weight[3] < 0.2,
            "weights {:?}",
            s.amplitude_weight
        );
    }

    /// Two landmarks (the reference plane's echo and one along the line), the whole trace 4 dB higher: on a
    /// passive line too few to outvote a changed joint, so the level stays near 0; with gain in the path
    /// the level is expected to move, and it takes the 4 dB.
    #[test]
    fn with_gain_in_the_path_two_landmarks_set_the_level() {
        let problem = |level_free: bool| AlignProblem {
            tau: vec![10e-9],
            prior_scale: vec![1.0],
            prior_loss_db: vec![0.0],
            loss_sigma_db: Vec::new(),
            cover: vec![vec![0.0], vec![0.5]],
            current_delay_s: vec![0.0, 5e-9],
            amplitude_change_db: vec![4.0, 4.0],
            sigma_s: 0.2e-12,
            sigma_db: 1.0,
            bounds: Some((0.998, 1.01)),
            level_free,
        };
        let passive = problem(false).solve();
        assert!(passive.level_db < 3.0, "level {}", passive.level_db);
        let amplified = problem(true).solve();
        assert!(
            (amplified.level_db - 4.0).abs() < 0.1,
            "level {}",
            amplified.level_db
        );
    }

    #[test]
    fn bounded_scales_stay_inside_their_bounds() {
        // Landmarks say the segment grew by 3 %, outside what cooling PTFE can do: the scale stops at 1 %.
        let p = AlignProblem {
            tau: vec![1e-9, 1e-9],
            prior_scale: vec![1.0, 1.0],
            prior_loss_db: vec![0.0, 0.0],
            loss_sigma_db: Vec::new(),
            cover: vec![vec![1.0, 0.0], vec![1.0, 1.0]],
            current_delay_s: vec![1.03e-9, 2.03e-9],
            amplitude_change_db: vec![0.0, 0.0],
            sigma_s: 0.1e-12,
            sigma_db: 0.1,
            bounds: Some((0.998, 1.01)),
            level_free: false,
        };
        let s = p.solve();
        assert!((s.scale[0] - 1.01).abs() < 1e-12, "{:?}", s.scale);
        assert!(s.scale[1] >= 0.998 - 1e-12 && s.scale[1] <= 1.01 + 1e-12);
    }

    #[test]
    fn unconstrained_segment_keeps_the_prior() {
        let p = AlignProblem {
            tau: vec![1e-9, 1e-9],
            prior_scale: vec![1.0, 0.995],
            prior_loss_db: vec![0.0, -0.3],
            loss_sigma_db: Vec::new(),
            cover: vec![vec![1.0, 0.0]],
            current_delay_s: vec![1.001e-9],
            amplitude_change_db: vec![0.0],
            sigma_s: 0.1e-12,
            sigma_db: 0.1,
            bounds: None,
            level_free: false,
        };
        let s = p.solve();
        assert!((s.scale[0] - 1.001).abs() < 1e-5);
        assert!((s.scale[1] - 0.995).abs() < 1e-9);
        assert!((s.loss_change_db[1] + 0.3).abs() < 1e-9);
        assert_eq!(s.constrained, vec![true, false]);
    }
}
