//! Small numerical tools shared by the stages.

/// Golden-section search for the minimum of a unimodal `f` on [a, b], until the bracket is narrower than
/// `tol` (at most 200 steps). Returns the bracket's midpoint. Each step shrinks the bracket by
/// (sqrt 5 - 1)/2 at one evaluation of `f` (Kiefer 1953; e.g. Press et al., Numerical Recipes, 3rd ed.,
/// sec. 10.2).
pub fn golden_min(mut a: f64, mut b: f64, tol: f64, f: impl Fn(f64) -> f64) -> f64 {
    let r = (5f64.sqrt() - 1.0) / 2.0;
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..200 {
        if (b - a).abs() <= tol {
            break;
        }
        if fc < fd {
            b = d;
            d = c;
            fd = fc;
            c = b - r * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + r * (b - a);
            fd = f(d);
        }
    }
    0.5 * (a + b)
}

/// Brent's method for the minimum of `f` on [a, b]: golden-section steps where the function is not yet
/// parabolic, parabolic interpolation through the three best points where it is, until the bracket is
/// narrower than about `4 tol` (at most 200 steps; R. P. Brent, Algorithms for Minimization without
/// Derivatives, 1973, ch. 5; Press et al., Numerical Recipes, 3rd ed., sec. 10.3). Returns the abscissa and
/// value of the least point found. On a smooth minimum it converges superlinearly: about a dozen evaluations
/// where [`golden_min`] takes thirty for the same bracket.
///
/// A minimum at an end of the bracket, which the method approaches only geometrically (some thirty steps
/// for a bracket of 1e6 tolerances), is checked for once, after [`EDGE_PROBE_AFTER`] evaluations, if the
/// least point lies within [`EDGE_SHARE`] of the bracket from an end that has not moved: `f` at one and at
/// three tolerances inside the end. On a unimodal `f`, the first no greater than the second puts the
/// minimum within three tolerances of the end, and the point one tolerance inside it is returned (when it is
/// the least point found), as close to the minimum as the method's own stopping rule leaves its answer.
/// Otherwise the search goes on as if the check had not been made.
pub fn brent_min(a: f64, b: f64, tol: f64, f: impl Fn(f64) -> f64) -> (f64, f64) {
    /// (3 - sqrt 5)/2, the golden section's smaller part.
    const CGOLD: f64 = 0.381_966_011_250_105_1;
    let (mut a, mut b) = (a.min(b), a.max(b));
    let (a0, b0) = (a, b);
    let tol1 = tol.max(f64::EPSILON * (a.abs() + b.abs()));
    let tol2 = 2.0 * tol1;
    let mut x = a + CGOLD * (b - a);
    let mut fx = f(x);
    let (mut w, mut v, mut fw, mut fv) = (x, x, fx, fx);
    // d: the last step; e: the step before it (a parabolic step must be under half of it).
    let (mut d, mut e) = (0.0f64, 0.0f64);
    let mut probed = false;
    // Each step evaluates `f` once: at step k, k + 1 evaluations have been made.
    for step in 0..200 {
        let xm = 0.5 * (a + b);
        if (x - xm).abs() <= tol2 - 0.5 * (b - a) {
            break;
        }
        if !probed && step + 1 >= EDGE_PROBE_AFTER {
            // The least point near an end that has not moved: the minimum may lie at that end.
            let edge = if a == a0 && x - a0 < EDGE_SHARE * (b0 - a0) {
                Some(1.0)
            } else if b == b0 && b0 - x < EDGE_SHARE * (b0 - a0) {
                Some(-1.0)
            } else {
                None
            };
            if let Some(inward) = edge {
                probed = true;
                let end = if inward > 0.0 { a0 } else { b0 };
                let (p, q) = (end + inward * tol1, end + inward * 3.0 * tol1);
                let fp = f(p);
                if fp <= f(q) && fp <= fx {
                    return (p, fp);
                }
            }
        }
        let mut golden = true;
        if e.abs() > tol1 {
            let r = (x - w) * (fx - fv);
            let mut q = (x - v) * (fx - fw);
            let mut p = (x - v) * q - (x - w) * r;
            q = 2.0 * (q - r);
            if q > 0.0 {
                p = -p;
            }
            q = q.abs();
            let e_prev = e;
            e = d;
            if p.abs() < (0.5 * q * e_prev).abs() && p > q * (a - x) && p < q * (b - x) {
                d = p / q;
                let u = x + d;
                if u - a < tol2 || b - u < tol2 {
                    d = tol1.copysign(xm - x);
                }
                golden = false;
            }
        }
        if golden {
            e = if x >= xm { a - x } else { b - x };
            d = CGOLD * e;
        }
        let u = if d.abs() >= tol1 {
            x + d
        } else {
            x + tol1.copysign(d)
        };
        let fu = f(u);
        if fu <= fx {
            if u >= x {
                a = x;
            } else {
                b = x;
            }
            (v, fv, w, fw, x, fx) = (w, fw, x, fx, u, fu);
        } else {
            if u < x {
                a = u;
            } else {
                b = u;
            }
            if fu <= fw || w == x {
                (v, fv, w, fw) = (w, fw, u, fu);
            } else if fu <= fv || v == x || v == w {
                (v, fv) = (u, fu);
            }
        }
    }
    (x, fx)
}

/// Evaluations after which [`brent_min`] checks for a minimum at an end of its bracket.
pub const EDGE_PROBE_AFTER: usize = 5;

/// How near an end of [`brent_min`]'s bracket (a share of the bracket) the least point must lie for the
/// check for a minimum at that end.
pub const EDGE_SHARE: f64 = 0.05;

/// A power ratio `p` in dB, 10 log10 p, as 10 / ln 10 times the natural logarithm (one library call where
/// log10 makes two; the same value to an ulp or two).
#[inline]
pub fn power_db(p: f64) -> f64 {
    const DB_PER_NEPER_POWER: f64 = 10.0 / std::f64::consts::LN_10;
    DB_PER_NEPER_POWER * p.ln()
}

/// The median of `v` (sorted in place; the mean of the middle two for an even count). `v` must not be
/// empty.
pub fn median(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn power_db_is_ten_log10() {
        for p in [1e-300, 1e-24, 1e-12, 0.5, 1.0, 2.0, 10.0, 123.456, 1e30] {
            let want = 10.0 * f64::log10(p);
            assert!(
                (power_db(p) - want).abs() <= 4.0 * f64::EPSILON * want.abs().max(1.0),
                "{p}"
            );
        }
        assert_eq!(power_db(100.0).round(), 20.0);
    }

    #[test]
    fn finds_the_vertex_of_a_parabola() {
        let x = golden_min(-3.0, 5.0, 1e-12, |x| (x - 1.25) * (x - 1.25) + 7.0);
        // A minimum is located to about sqrt(machine epsilon) relative: f is flat to 1e-16 within 1e-8 of it.
        assert!((x - 1.25).abs() < 1e-7, "{x}");
    }

    #[test]
    fn brent_agrees_with_golden_section_in_fewer_evaluations() {
        use std::cell::Cell;
        // A smooth, skewed minimum (x - ln x has its minimum at x = 1, value 1; calculus) and a quadratic.
        // (function, bracket, true minimum)
        type Case = (fn(f64) -> f64, f64, f64, f64);
        let cases: [Case; 2] = [
            (|x| x - x.ln(), 0.2, 4.0, 1.0),
            (|x| (x - 1.25) * (x - 1.25) + 7.0, -3.0, 5.0, 1.25),
        ];
        for (g, a, b, truth) in cases {
            let (n_brent, n_golden) = (Cell::new(0), Cell::new(0));
            let tol = 1e-9 * (b - a);
            let (x, fx) = brent_min(a, b, tol, |x| {
                n_brent.set(n_brent.get() + 1);
                g(x)
            });
            let xg = golden_min(a, b, tol, |x| {
                n_golden.set(n_golden.get() + 1);
                g(x)
            });
            assert!((x - truth).abs() < 1e-6, "{x}");
            assert!((x - xg).abs() < 1e-6, "{x} vs {xg}");
            assert_eq!(fx, g(x));
            assert!(
                n_brent.get() < n_golden.get(),
                "{n_brent:?} vs {n_golden:?}"
            );
        }
        // A minimum at the bracket's edge is approached and not passed.
        let (x, _) = brent_min(0.0, 1.0, 1e-9, |x| x);
        assert!((0.0..1e-6).contains(&x), "{x}");
    }

    #[test]
    fn brent_settles_a_minimum_at_an_end_in_few_evaluations() {
        use std::cell::Cell;
        // Monotone on the bracket: the minimum at the lower end, then at the upper (calculus). Without the
        // check at the ends the method takes about thirty evaluations to close in on either.
        type Case = (fn(f64) -> f64, f64);
        let cases: [Case; 2] = [(|x| x * x + x, 0.0), (|x| (2.0 - x).ln(), 1.0)];
        for (g, end) in cases {
            let n = Cell::new(0);
            let tol = 1e-7;
            let (x, fx) = brent_min(0.0, 1.0, tol, |x| {
                n.set(n.get() + 1);
                g(x)
            });
            assert!((x - end).abs() <= 3.0 * tol, "{x}");
            assert_eq!(fx, g(x));
            assert!(n.get() <= 12, "{} evaluations", n.get());
        }
        // A minimum near an end (within EDGE_SHARE of the bracket) but many tolerances clear of it: the
        // check finds it is not at the end, and the search goes on to it.
        for truth in [0.004, 0.996] {
            let (x, _) = brent_min(0.0, 1.0, 1e-9, |x| (x - truth).powi(2));
            assert!((x - truth).abs() < 1e-6, "{x} for {truth}");
        }
    }
}
