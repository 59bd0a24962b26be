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
    fn finds_the_vertex_of_a_parabola() {
        let x = golden_min(-3.0, 5.0, 1e-12, |x| (x - 1.25) * (x - 1.25) + 7.0);
        // A minimum is located to about sqrt(machine epsilon) relative: f is flat to 1e-16 within 1e-8 of it.
        assert!((x - 1.25).abs() < 1e-7, "{x}");
    }
}
