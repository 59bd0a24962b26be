//! The trend rule: does a landmark's reflection climb, cooldown after cooldown, faster than re-mating
//! scatter and noise explain?
//!
//! Method (published): over the latest values of a landmark (oldest first, one per cycle), the **Theil-Sen slope** (the median of all pairwise slopes: H. Theil, "A rank-invariant method
//! of linear and polynomial regression analysis", Proc. KNAW 53, 1950; P. K. Sen, "Estimates of the
//! regression coefficient based on Kendall's tau", JASA 63, 1968) and the one-sided **Mann-Kendall test**
//! for an upward trend (H. B. Mann, "Nonparametric tests against trend", Econometrica 13, 1945; M. G.
//! Kendall, Rank Correlation Methods, 4th ed., 1975): S = sum over i < j of sign(x_j - x_i), its exact
//! null distribution for untied data from the count of permutations with a given number of inversions,
//! the normal approximation with the tie-corrected variance otherwise.
//!
//! The rule looks at the latest k values for every k from [`TrendRule::min_points`] to
//! [`TrendRule::window`] (a climb that has just begun shows in the last few cooldowns before it dominates a
//! longer window), and warns when for one of them all hold (a statistically significant climb that is also
//! large enough to matter): Mann-Kendall one-sided p <= [`TrendRule::alpha`]; slope >=
//! [`TrendRule::min_slope_db`] per cycle; the rise, the Theil-Sen line's latest value over the median of
//! the values before the window (at least [`TrendRule::min_reference`] of them: the connector's own level
//! before the climb), >= [`TrendRule::min_rise_db`] (more than the re-mating scatter of a connector); the
//! same value, and the last two values measured, over every value before the window by
//! [`TrendRule::min_excess_db`] (out of the connector's own past range, and for two cooldowns running: the
//! data must show it, not only the line fitted through them, whose end overshoots a window that jumped from
//! one of a re-made connector's levels to another; and a re-made connector's first visit to a level it had
//! not shown is one value, where a connector that degrades stays out; a run of points beyond a limit
//! rather than one, as in the Western Electric rules for control charts, from memory); and the latest value above the sweep's detection floor there (a climb inside the noise is not a
//! reflection growing).
//!
//! Projection: the cycles until the Theil-Sen line reaches the reflection at which a series resistance
//! (the costliest lumped fault for a given |rho|: it both reflects and dissipates) would cost each
//! severity's power drop: |rho| = 1 - 10^(-D/20) for D = `compare::severity::MINOR_DB`, `MAJOR_DB`,
//! `CRITICAL_DB` (a series R between matched lines: rho = R / (2 Z0 + R), |S21| = 1 - rho; circuit
//! theory). Given only where the landmark climbs (Mann-Kendall p <= alpha and a positive slope); 0 for a
//! level already reached.
//!
//! Conventions: values in dB (20 log10 |rho|), one value per cycle, cycles equally spaced.

use crate::compare::severity::{CRITICAL_DB, MAJOR_DB, MINOR_DB};
use crate::numeric::median;
use crate::Warning;
use serde::Serialize;
use std::collections::BTreeMap;

/// The rule's parameters. The defaults are the rule measured in docs/accuracy.md.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TrendRule {
    /// The longest window of latest cycles the rule looks at.
    pub window: usize,
    /// Fewest values for a verdict, and the shortest window scanned.
    pub min_points: usize,
    /// Significance level of the one-sided Mann-Kendall test.
    pub alpha: f64,
    /// Least Theil-Sen slope that warns, dB per cycle.
    pub min_slope_db: f64,
    /// Least rise that warns, dB: the Theil-Sen line's latest value over the median of the values before
    /// the window. Twice the 4 dB peak to peak of a connector's reflection moving "a dB or two" either way
    /// when it is re-made (common practice, no source); 6 dB let one simulated healthy line in 120 warn
    /// (docs/accuracy.md).
    pub min_rise_db: f64,
    /// Fewest values before the window for a reference level (a line's first records cannot warn).
    pub min_reference: usize,
    /// Least margin by which the Theil-Sen line's latest value, and each of the last two values measured,
    /// must stand over every value before the window, dB: a re-made connector may read anywhere in its own past range (where its own mismatch and
    /// a re-made parasitic add, several dB apart), a degrading one leaves that range (common practice, no
    /// source).
    pub min_excess_db: f64,
}

impl Default for TrendRule {
    fn default() -> Self {
        TrendRule {
            window: 6,
            min_points: 4,
            alpha: 0.05,
            min_slope_db: 1.0,
            min_rise_db: 8.0,
            min_reference: 2,
            min_excess_db: 3.0,
        }
    }
}

/// The rule's verdict on one series.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// Theil-Sen slope over the window, dB per cycle (`None` with fewer than two values).
    pub slope_db_per_cycle: Option<f64>,
    /// One-sided Mann-Kendall p-value of an upward trend over the window.
    pub mann_kendall_p: Option<f64>,
    /// The number of latest values the figures are of: the shortest recent window that warns, else
    /// the whole window.
    pub window: usize,
    /// The Theil-Sen line's latest value less the median of the values before the window, dB (`None`
    /// with fewer than [`TrendRule::min_reference`] values before it).
    pub rise_db: Option<f64>,
    pub warning: bool,
    /// Severity -> cycles from the latest until the trend line reaches it.
    pub projected_cycles_to: BTreeMap<&'static str, f64>,
}

/// One landmark's trend. JSON: `history trend --json` `landmarks[]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LandmarkTrend {
    pub element: String,
    /// The records the values come from, oldest first.
    pub record_ids: Vec<i64>,
    /// When each was taken (RFC 3339 UTC).
    pub at: Vec<String>,
    /// The connector's compensated reflection in each record, dB, oldest first.
    pub values_db: Vec<f64>,
    /// The detection floor at the connector in the latest record, dB.
    pub floor_db: Option<f64>,
    #[serde(flatten)]
    pub verdict: Verdict,
}

/// `history trend`'s result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrendReport {
    pub line: String,
    /// The state whose records make the cycles (`warm` or `cold`).
    pub state: &'static str,
    pub rule: TrendRule,
    pub landmarks: Vec<LandmarkTrend>,
    pub warnings: Vec<Warning>,
}

/// Mann-Kendall S of `x`: sum over i < j of sign(x_j - x_i).
pub fn mann_kendall_s(x: &[f64]) -> i64 {
    let mut s = 0;
    for i in 0..x.len() {
        for j in i + 1..x.len() {
            s += match x[j].partial_cmp(&x[i]) {
                Some(std::cmp::Ordering::Greater) => 1,
                Some(std::cmp::Ordering::Less) => -1,
                _ => 0,
            };
        }
    }
    s
}

/// Largest series length for which the exact distribution is used.
const EXACT_MAX_N: usize = 20;

/// P(S >= s) for an upward trend under the null hypothesis (no trend, exchangeable values), for a series
/// of `n` values; `ties` are the sizes of the groups of equal values (empty for untied data).
pub fn mann_kendall_p_upper(n: usize, s: i64, ties: &[usize]) -> f64 {
    if n < 2 {
        return 1.0;
    }
    let pairs = (n * (n - 1) / 2) as i64;
    if ties.iter().all(|&t| t < 2) && n <= EXACT_MAX_N {
        // S = pairs - 2 I, I the number of inversions; count permutations by inversions (Mahonian
        // numbers: f(k, i) = sum over j in 0..k of f(k - 1, i - j)).
        let mut counts = vec![1.0f64];
        for k in 2..=n {
            let mut next = vec![0.0; counts.len() + k - 1];
            for (i, c) in counts.iter().enumerate() {
                for slot in next.iter_mut().skip(i).take(k) {
                    *slot += c;
                }
            }
            counts = next;
        }
        let total: f64 = counts.iter().sum();
        // S >= s  <=>  I <= (pairs - s) / 2.
        let max_inv = (pairs - s).div_euclid(2);
        if max_inv < 0 {
            return 0.0;
        }
        let hit: f64 = counts.iter().take(max_inv as usize + 1).sum();
        return (hit / total).min(1.0);
    }
    let nf = n as f64;
    let tie_term: f64 = ties
        .iter()
        .map(|&t| {
            let t = t as f64;
            t * (t - 1.0) * (2.0 * t + 5.0)
        })
        .sum();
    let var = (nf * (nf - 1.0) * (2.0 * nf + 5.0) - tie_term) / 18.0;
    if var <= 0.0 {
        return 1.0;
    }
    // Continuity correction (Kendall 1975).
    let z = if s > 0 {
        (s as f64 - 1.0) / var.sqrt()
    } else if s < 0 {
        (s as f64 + 1.0) / var.sqrt()
    } else {
        0.0
    };
    0.5 * erfc(z / std::f64::consts::SQRT_2)
}

/// Complementary error function, |error| < 1.2e-7 (Numerical Recipes in C, 2nd ed., sec. 6.2, `erfcc`,
/// Chebyshev fit; from memory, checked against Python's math.erfc in the tests).
fn erfc(x: f64) -> f64 {
    let z = x.abs();
    let t = 1.0 / (1.0 + 0.5 * z);
    let r = t
        * (-z * z - 1.265_512_23
            + t * (1.000_023_68
                + t * (0.374_091_96
                    + t * (0.096_784_18
                        + t * (-0.186_288_06
                            + t * (0.278_868_07
                                + t * (-1.135_203_98
                                    + t * (1.488_515_87
                                        + t * (-0.822_152_23 + t * 0.170_872_77)))))))))
            .exp();
    if x >= 0.0 {
        r
    } else {
        2.0 - r
    }
}

/// Sizes of the groups of equal values in `x`.
fn tie_groups(x: &[f64]) -> Vec<usize> {
    let mut v = x.to_vec();
    v.sort_by(f64::total_cmp);
    let mut out = Vec::new();
    let mut run = 1;
    for w in v.windows(2) {
        if w[0] == w[1] {
            run += 1;
        } else {
            out.push(run);
            run = 1;
        }
    }
    out.push(run);
    out.retain(|&t| t > 1);
    out
}

/// Theil-Sen line of `x` against its index 0, 1, ...: (slope, intercept), the slope the median of the
/// pairwise slopes, the intercept the median of x_i - slope i. `None` with fewer than two values.
pub fn theil_sen(x: &[f64]) -> Option<(f64, f64)> {
    if x.len() < 2 {
        return None;
    }
    let mut slopes = Vec::with_capacity(x.len() * (x.len() - 1) / 2);
    for i in 0..x.len() {
        for j in i + 1..x.len() {
            slopes.push((x[j] - x[i]) / (j - i) as f64);
        }
    }
    let slope = median(&mut slopes);
    let mut res: Vec<f64> = x
        .iter()
        .enumerate()
        .map(|(i, v)| v - slope * i as f64)
        .collect();
    Some((slope, median(&mut res)))
}

/// The reflection (dB) at which a series resistance costs `drop_db` of transmitted power.
pub fn level_db(drop_db: f64) -> f64 {
    20.0 * (1.0 - 10f64.powf(-drop_db / 20.0)).log10()
}

/// The severities a projection reaches for, with their drop.
pub const PROJECTED: [(&str, f64); 3] = [
    ("minor", MINOR_DB),
    ("major", MAJOR_DB),
    ("critical", CRITICAL_DB),
];

impl TrendRule {
    /// The verdict on `values` (oldest first, one per cycle); `floor_db` is the detection floor at the
    /// landmark in the latest record.
    pub fn evaluate(&self, values: &[f64], floor_db: Option<f64>) -> Verdict {
        let n = values.len();
        let longest = n.min(self.window.max(2));
        let full = self.judge(&values[..n - longest], &values[n - longest..], floor_db);
        // Scan the recent windows, shortest first: a climb that has just begun shows in the last few
        // cooldowns before it dominates the whole window.
        let first = self.min_points.max(2);
        (first..longest)
            .map(|k| self.judge(&values[..n - k], &values[n - k..], floor_db))
            .find(|v| v.warning)
            .unwrap_or(full)
    }

    /// The verdict on the window `w`, with `before` the values before it (the reference level).
    fn judge(&self, before: &[f64], w: &[f64], floor_db: Option<f64>) -> Verdict {
        let fit = theil_sen(w);
        let p = (w.len() >= 2)
            .then(|| mann_kendall_p_upper(w.len(), mann_kendall_s(w), &tie_groups(w)));
        let mut verdict = Verdict {
            slope_db_per_cycle: fit.map(|f| f.0),
            mann_kendall_p: p,
            window: w.len(),
            rise_db: None,
            warning: false,
            projected_cycles_to: BTreeMap::new(),
        };
        let (Some((slope, intercept)), Some(p)) = (fit, p) else {
            return verdict;
        };
        let last = *w.last().expect("two or more values");
        let now = intercept + slope * (w.len() - 1) as f64;
        let reference = (before.len() >= self.min_reference).then(|| median(&mut before.to_vec()));
        verdict.rise_db = reference.map(|r| now - r);
        let highest = before.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let climbs = p <= self.alpha && slope > 0.0;
        verdict.warning = w.len() >= self.min_points
            && climbs
            && slope >= self.min_slope_db
            && verdict.rise_db.is_some_and(|r| r >= self.min_rise_db)
            && now.min(last) - highest >= self.min_excess_db
            && w[w.len() - 2] - highest >= self.min_excess_db
            && floor_db.map_or(true, |f| last > f);
        if climbs {
            for (name, drop) in PROJECTED {
                let level = level_db(drop);
                verdict
                    .projected_cycles_to
                    .insert(name, ((level - now) / slope).max(0.0));
            }
        }
        verdict
    }
}

/// The trend of every connector of `line` over its records in `state` (oldest first), or of `element`
/// only. An element the line's records do not have is an error naming the closest one.
pub fn line_trend(
    store: &dyn super::HistoryStore,
    line: &str,
    state: crate::line::State,
    element: Option<&str>,
    rule: &TrendRule,
) -> crate::Result<TrendReport> {
    use super::LandmarkKind;
    let records = store.line_details(line)?;
    let mut warnings = Vec::new();
    let in_state: Vec<_> = records
        .iter()
        .filter(|r| r.summary.state == state)
        .collect();
    if in_state.is_empty() {
        return Err(crate::Error::Usage(format!(
            "{}: line '{line}' has no {} records ({} in all); pass --state {} for the others",
            store.location(),
            state.name(),
            records.len(),
            match state {
                crate::line::State::Cold => "warm",
                crate::line::State::Warm => "cold",
            }
        )));
    }
    let mut landmarks: Vec<LandmarkTrend> = Vec::new();
    for r in &in_state {
        for l in r
            .landmarks
            .iter()
            .filter(|l| l.kind == LandmarkKind::Connector)
        {
            let Some(v) = l.reflection_db else { continue };
            let t = match landmarks.iter_mut().find(|t| t.element == l.element) {
                Some(t) => t,
                None => {
                    landmarks.push(LandmarkTrend {
                        element: l.element.clone(),
                        record_ids: Vec::new(),
                        at: Vec::new(),
                        values_db: Vec::new(),
                        floor_db: None,
                        verdict: rule.evaluate(&[], None),
                    });
                    landmarks.last_mut().expect("just pushed")
                }
            };
            t.record_ids.push(r.summary.id);
            t.at.push(r.summary.at.clone());
            t.values_db.push(v);
            t.floor_db = l.floor_db;
        }
    }
    if let Some(e) = element {
        let names: Vec<String> = landmarks.iter().map(|t| t.element.clone()).collect();
        landmarks.retain(|t| {
            crate::line::names::normalise(&t.element) == crate::line::names::normalise(e)
        });
        if landmarks.is_empty() {
            let best =
                crate::line::names::closest(e, names.iter().map(|n| (n.as_str(), n.as_str())));
            return Err(crate::Error::Usage(format!(
                "--element '{e}': line '{line}' has no connector of that name in its records{}; its \
                 connectors: {}",
                crate::line::names::did_you_mean(best),
                names.join(", ")
            )));
        }
    }
    for t in &mut landmarks {
        t.verdict = rule.evaluate(&t.values_db, t.floor_db);
    }
    if in_state.len() < rule.min_points {
        warnings.push(crate::Warning::new(
            "short-history",
            format!(
                "line '{line}' has {} {} record(s); the trend rule needs at least {}",
                in_state.len(),
                state.name(),
                rule.min_points
            ),
            "record the line after each cooldown (`coldtrace history record`)",
        ));
    }
    Ok(TrendReport {
        line: line.to_string(),
        state: state.name(),
        rule: *rule,
        landmarks,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn theil_sen_of_a_line_and_of_an_outlier() {
        // A straight line is returned exactly; one wild point does not move the median slope.
        let (m, b) = theil_sen(&[-40.0, -38.5, -37.0, -35.5]).unwrap();
        assert!((m - 1.5).abs() < 1e-12 && (b + 40.0).abs() < 1e-12);
        let (m, _) = theil_sen(&[0.0, 1.0, 2.0, 30.0, 4.0, 5.0]).unwrap();
        assert!((m - 1.0).abs() < 1e-12, "{m}");
    }

    #[test]
    fn mann_kendall_exact_values() {
        // Increasing series of n: P = 1/n! (the one permutation without inversions).
        assert!((mann_kendall_p_upper(4, 6, &[]) - 1.0 / 24.0).abs() < 1e-15);
        assert!((mann_kendall_p_upper(5, 10, &[]) - 1.0 / 120.0).abs() < 1e-15);
        // n = 4, S = 4 (one inversion): 1 + 3 permutations with at most one inversion, 4/24
        // (Mahonian numbers 1, 3, 5, 6, 5, 3, 1 for n = 4; OEIS A008302).
        assert!((mann_kendall_p_upper(4, 4, &[]) - 4.0 / 24.0).abs() < 1e-15);
        // n = 10, S = 21: P = 0.036 in Kendall's table (Kendall 1975, Appendix Table 1, from memory);
        // 0.036275 from the Mahonian recurrence in Python 3.11.7, computed offline.
        let p = mann_kendall_p_upper(10, 21, &[]);
        assert!((p - 0.036).abs() < 0.001, "{p}");
        assert_eq!(mann_kendall_s(&[1.0, 2.0, 2.0, 3.0]), 5);
        // n = 6 has 15 pairs, so S is odd and symmetric about 0: P(S >= 1) is one half exactly.
        assert!((mann_kendall_p_upper(6, 1, &[]) - 0.5).abs() < 1e-15);
    }

    #[test]
    fn normal_approximation_is_close_to_exact_at_twenty() {
        // The exact and the approximate path should agree to a few 1e-3 at n = 20.
        for s in [10i64, 30, 50, 70] {
            let exact = mann_kendall_p_upper(20, s, &[]);
            let approx = mann_kendall_p_upper(20, s, &[2]);
            assert!((exact - approx).abs() < 0.01, "s {s}: {exact} {approx}");
        }
        // erfc against Python 3.11.7 math.erfc, computed offline: erfc(0.5) = 0.4795001221869535,
        // erfc(-1) = 1.842700792949715, erfc(2) = 0.004677734981047265.
        assert!((erfc(0.5) - 0.479_500_122_186_953_5).abs() < 2e-7);
        assert!((erfc(-1.0) - 1.842_700_792_949_714_8).abs() < 2e-7);
        assert!((erfc(2.0) - 0.004_677_734_981_047_266).abs() < 2e-7);
    }

    #[test]
    fn levels_match_series_resistance() {
        // 1 dB drop: 1 - 10^(-0.05) = 0.10875, 20 log10 = -19.27 dB (calc).
        assert!((level_db(1.0) + 19.27).abs() < 0.01);
        // A series R of 10 ohm on 50 ohm: rho = 10/110, |S21| = 100/110 (circuit theory).
        let rho: f64 = 10.0 / 110.0;
        let drop = -20.0 * (100.0f64 / 110.0).log10();
        assert!((level_db(drop) - 20.0 * rho.log10()).abs() < 1e-9);
    }

    #[test]
    fn rule_fires_on_a_steady_climb_and_not_on_scatter() {
        let rule = TrendRule::default();
        // Two cooldowns at -41 dB, then a climb of 2 dB per cooldown: the last four values fit a line of
        // slope 2 exactly, ending 9 dB over the reference -41 dB.
        let climb = [-41.0, -41.0, -38.0, -36.0, -34.0, -32.0];
        let v = rule.evaluate(&climb, Some(-60.0));
        assert!(v.warning, "{v:?}");
        assert_eq!(v.window, 4);
        assert!((v.slope_db_per_cycle.unwrap() - 2.0).abs() < 1e-12);
        assert!((v.rise_db.unwrap() - 9.0).abs() < 1e-12);
        // The line reaches -19.27 dB (major) from -32 dB in 12.73 / 2 cycles.
        assert!((v.projected_cycles_to["major"] - (level_db(1.0) + 32.0) / 2.0).abs() < 1e-9);
        // Without the reference before the climb (a line's first records), no warning yet.
        assert!(!rule.evaluate(&climb[2..], Some(-60.0)).warning);
        // The same climb under the detection floor is noise, not a reflection growing.
        assert!(!rule.evaluate(&climb, Some(-30.0)).warning);
        // Scatter of +-2 dB with no trend, and a climb too small to matter.
        let scatter = [-40.0, -38.0, -41.0, -39.5, -40.5, -38.5, -41.5, -39.0];
        let v = rule.evaluate(&scatter, None);
        assert!(!v.warning && v.projected_cycles_to.is_empty(), "{v:?}");
        assert!(
            !rule
                .evaluate(&[-40.0, -39.7, -39.4, -39.1, -38.8, -38.5], None)
                .warning
        );
        // Too few values.
        assert!(
            !rule
                .evaluate(&[-40.0, -40.0, -40.0, -30.0, -20.0], None)
                .warning
        );
        // Bounded scatter that happens to rise over four cooldowns stays under the rise: median of
        // the values before is -40, the line ends at about -37.
        let v = rule.evaluate(&[-40.0, -42.0, -38.0, -40.0, -39.9, -38.5, -37.0], None);
        assert!(!v.warning, "{v:?}");
        // A connector that reads in two modes 9 dB apart (its own mismatch and a re-made parasitic adding
        // or cancelling) climbs from the low to the high mode: 8.3 dB over the median of the values before
        // (-47.5), but not out of its own past range (-39.0 was read before).
        let modes = [
            -39.0, -47.5, -47.8, -48.0, -47.6, -39.2, -47.0, -47.0, -44.4, -41.8, -39.2,
        ];
        let lax = TrendRule {
            min_excess_db: f64::NEG_INFINITY,
            ..rule
        };
        let v = lax.evaluate(&modes, None);
        assert!(
            v.warning && (v.rise_db.unwrap() - 8.3).abs() < 1e-9,
            "{v:?}"
        );
        assert!(!rule.evaluate(&modes, None).warning);
        // A re-made connector's first visit to a level it had not shown (seed 550016 of the trend program):
        // one value 12 dB over its past, after values inside it. The last four climb (Mann-Kendall
        // p = 1/24) and the line fitted through them ends far over every earlier value, but only one value
        // measured does: no warning. With the value before it out of the past range too, the climb is a
        // warning.
        let visit = [
            -43.0, -51.4, -50.4, -43.4, -43.2, -51.1, -49.5, -43.8, -41.6, -29.5,
        ];
        assert!(!rule.evaluate(&visit, None).warning);
        let mut stays = visit.to_vec();
        stays[8] = -36.0;
        let v = rule.evaluate(&stays, None);
        assert!(v.warning, "{v:?}");
    }
}
