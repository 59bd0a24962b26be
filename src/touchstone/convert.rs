//! Y, Z, H and G parameters to S-parameters, at real per-port reference resistances.
//!
//! Conventions: power-wave S-parameters with real references R_p (K. Kurokawa, "Power waves and the
//! scattering matrix", IEEE Trans. MTT 13(2), 1965), which for real R_p equal the pseudo-wave ones. With
//! R = diag(R_p), normalised matrices are z = R^{-1/2} Z R^{-1/2} and y = R^{1/2} Y R^{1/2}, and
//! S = (z - I)(z + I)^{-1} = (I - y)(I + y)^{-1}. H and G exist for 2-ports only: normalised
//! h = [[H11/R1, H12 sqrt(R2/R1)], [H21 sqrt(R2/R1), H22 R2]], g = [[G11 R1, G12 sqrt(R1/R2)],
//! [G21 sqrt(R1/R2), G22/R2]], and S follows from h by D. M. Pozar, "Microwave Engineering", 4th ed.,
//! Table 4.2 (normalised form; for equal references it is also Frickey, IEEE Trans. MTT 42(2), 1994).
//! A g matrix is the h matrix of the same network with its ports swapped.

use num_complex::Complex64 as C;

/// The dimension kind of a parameter set, to know how to normalise it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Kind {
    Z,
    Y,
    H,
    G,
}

/// LU decomposition with partial pivoting of an `n x n` row-major complex matrix, in place
/// (Golub & Van Loan, "Matrix Computations", 4th ed., Algorithm 3.4.1). Returns the row permutation, or
/// `None` when a pivot is exactly zero or not finite (singular matrix).
pub(crate) fn lu_decompose(a: &mut [C], n: usize) -> Option<Vec<usize>> {
    assert_eq!(
        a.len(),
        n * n,
        "lu_decompose: {} values for n = {n}",
        a.len()
    );
    let mut perm: Vec<usize> = (0..n).collect();
    for k in 0..n {
        let (mut p, mut best) = (k, a[k * n + k].norm());
        for r in k + 1..n {
            let v = a[r * n + k].norm();
            if v > best {
                p = r;
                best = v;
            }
        }
        if best == 0.0 || !best.is_finite() {
            return None;
        }
        if p != k {
            for c in 0..n {
                a.swap(k * n + c, p * n + c);
            }
            perm.swap(k, p);
        }
        let pivot = a[k * n + k];
        for r in k + 1..n {
            let f = a[r * n + k] / pivot;
            a[r * n + k] = f;
            for c in k + 1..n {
                let u = a[k * n + c];
                a[r * n + c] -= f * u;
            }
        }
    }
    Some(perm)
}

/// Solve `A x = b` in place given the LU factors and permutation of `A`.
pub(crate) fn lu_solve(lu: &[C], perm: &[usize], n: usize, b: &mut [C]) {
    let mut x: Vec<C> = perm.iter().map(|&p| b[p]).collect();
    for i in 0..n {
        for j in 0..i {
            let l = lu[i * n + j];
            x[i] = x[i] - l * x[j];
        }
    }
    for i in (0..n).rev() {
        for j in i + 1..n {
            let u = lu[i * n + j];
            x[i] = x[i] - u * x[j];
        }
        x[i] /= lu[i * n + i];
    }
    b.copy_from_slice(&x);
}

/// `num * den^{-1}` for `n x n` row-major matrices, computed as the transpose of
/// `den^{-T} num^T` (one LU of `den^T`). `None` when `den` is singular.
pub(crate) fn right_divide(num: &[C], den: &[C], n: usize) -> Option<Vec<C>> {
    let mut dt: Vec<C> = (0..n * n).map(|k| den[(k % n) * n + k / n]).collect();
    let perm = lu_decompose(&mut dt, n)?;
    let mut out = vec![C::new(0.0, 0.0); n * n];
    let mut col = vec![C::new(0.0, 0.0); n];
    // Row i of the result X solves den^T X_i^T = num_i^T.
    for i in 0..n {
        col.copy_from_slice(&num[i * n..(i + 1) * n]);
        lu_solve(&dt, &perm, n, &mut col);
        out[i * n..(i + 1) * n].copy_from_slice(&col);
    }
    if out.iter().all(|v| v.re.is_finite() && v.im.is_finite()) {
        Some(out)
    } else {
        None
    }
}

/// Normalise one matrix (in ohms / siemens / hybrid units) to the references `r`, in place.
pub(crate) fn normalise(kind: Kind, m: &mut [C], r: &[f64]) {
    let n = r.len();
    for i in 0..n {
        for j in 0..n {
            let f = match kind {
                Kind::Z => 1.0 / (r[i] * r[j]).sqrt(),
                Kind::Y => (r[i] * r[j]).sqrt(),
                Kind::H => match (i, j) {
                    (0, 0) => 1.0 / r[0],
                    (1, 1) => r[1],
                    _ => (r[1] / r[0]).sqrt(),
                },
                Kind::G => match (i, j) {
                    (0, 0) => r[0],
                    (1, 1) => 1.0 / r[1],
                    _ => (r[0] / r[1]).sqrt(),
                },
            };
            m[i * n + j] *= f;
        }
    }
}

/// S from one normalised matrix of `kind`. `None` when the conversion is singular at this point.
pub(crate) fn to_s(kind: Kind, m: &[C], n: usize) -> Option<Vec<C>> {
    let one = C::new(1.0, 0.0);
    let eye = |i: usize, j: usize| if i == j { one } else { C::new(0.0, 0.0) };
    match kind {
        Kind::Z => {
            let num: Vec<C> = (0..n * n).map(|k| m[k] - eye(k / n, k % n)).collect();
            let den: Vec<C> = (0..n * n).map(|k| m[k] + eye(k / n, k % n)).collect();
            right_divide(&num, &den, n)
        }
        Kind::Y => {
            let num: Vec<C> = (0..n * n).map(|k| eye(k / n, k % n) - m[k]).collect();
            let den: Vec<C> = (0..n * n).map(|k| eye(k / n, k % n) + m[k]).collect();
            right_divide(&num, &den, n)
        }
        Kind::H => h_to_s(m[0], m[1], m[2], m[3]),
        Kind::G => {
            // g of the network is h of the port-swapped network; swap S back.
            let s = h_to_s(m[3], m[2], m[1], m[0])?;
            Some(vec![s[3], s[2], s[1], s[0]])
        }
    }
}

/// Pozar, "Microwave Engineering", 4th ed., Table 4.2, h column, normalised to the references.
fn h_to_s(h11: C, h12: C, h21: C, h22: C) -> Option<Vec<C>> {
    let one = C::new(1.0, 0.0);
    let d = (h11 + one) * (h22 + one) - h12 * h21;
    if d.norm() == 0.0 || !d.norm().is_finite() {
        return None;
    }
    Some(vec![
        ((h11 - one) * (h22 + one) - h12 * h21) / d,
        2.0 * h12 / d,
        -2.0 * h21 / d,
        ((one + h11) * (one - h22) + h12 * h21) / d,
    ])
}

#[cfg(test)]
mod tests {
    use super::*;

    fn c(re: f64, im: f64) -> C {
        C::new(re, im)
    }

    fn matmul(a: &[C], b: &[C], n: usize) -> Vec<C> {
        let mut out = vec![c(0.0, 0.0); n * n];
        for i in 0..n {
            for j in 0..n {
                for k in 0..n {
                    out[i * n + j] += a[i * n + k] * b[k * n + j];
                }
            }
        }
        out
    }

    fn xorshift(x: &mut u64) -> f64 {
        *x ^= *x << 13;
        *x ^= *x >> 7;
        *x ^= *x << 17;
        (*x >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    }

    #[test]
    fn right_divide_matches_definition_over_sizes() {
        let mut seed = 12345u64;
        for n in 1..=8 {
            for _ in 0..10 {
                let a: Vec<C> = (0..n * n)
                    .map(|_| c(xorshift(&mut seed), xorshift(&mut seed)))
                    .collect();
                let b: Vec<C> = (0..n * n)
                    .map(|k| {
                        c(xorshift(&mut seed), xorshift(&mut seed))
                            + if k % (n + 1) == 0 {
                                c(2.0, 0.0)
                            } else {
                                c(0.0, 0.0)
                            }
                    })
                    .collect();
                let x = right_divide(&a, &b, n).unwrap();
                let back = matmul(&x, &b, n);
                for k in 0..n * n {
                    assert!((back[k] - a[k]).norm() < 1e-12, "n={n}");
                }
            }
        }
        assert!(right_divide(&[c(1.0, 0.0)], &[c(0.0, 0.0)], 1).is_none());
    }

    // Analytic: a load Z_L on a 1-port referenced to R gives Gamma = (Z_L - R)/(Z_L + R) (Pozar, 4th ed.,
    // eq. 2.35).
    #[test]
    fn one_port_z_and_y() {
        let r = [50.0];
        let zl = c(75.0, 25.0);
        let want = (zl - 50.0) / (zl + 50.0);
        let mut z = vec![zl];
        normalise(Kind::Z, &mut z, &r);
        assert!((to_s(Kind::Z, &z, 1).unwrap()[0] - want).norm() < 1e-15);
        let mut y = vec![1.0 / zl];
        normalise(Kind::Y, &mut y, &r);
        assert!((to_s(Kind::Y, &y, 1).unwrap()[0] - want).norm() < 1e-15);
    }

    /// Z of a 2-port from its hybrid matrix: Z11 = det(H)/H22, Z12 = H12/H22, Z21 = -H21/H22, Z22 = 1/H22
    /// (Pozar, 4th ed., Table 4.2).
    fn h_to_z(h: &[C]) -> Vec<C> {
        let det = h[0] * h[3] - h[1] * h[2];
        vec![det / h[3], h[1] / h[3], -h[2] / h[3], 1.0 / h[3]]
    }

    #[test]
    fn h_and_g_agree_with_the_z_route_unequal_references() {
        let r = [50.0, 75.0];
        let mut seed = 99u64;
        for _ in 0..50 {
            let hm: Vec<C> = (0..4)
                .map(|_| c(xorshift(&mut seed) * 100.0, xorshift(&mut seed) * 100.0))
                .collect();
            let hm = vec![hm[0], hm[1] * 0.01, hm[2] * 0.01, hm[3] * 1e-4];
            let mut z = h_to_z(&hm);
            normalise(Kind::Z, &mut z, &r);
            let want = to_s(Kind::Z, &z, 2).unwrap();
            let mut h = hm.clone();
            normalise(Kind::H, &mut h, &r);
            let got = to_s(Kind::H, &h, 2).unwrap();
            for k in 0..4 {
                assert!(
                    (got[k] - want[k]).norm() < 1e-9 * (1.0 + want[k].norm()),
                    "{got:?} {want:?}"
                );
            }
            // G = H^{-1}.
            let det = hm[0] * hm[3] - hm[1] * hm[2];
            let mut g = vec![hm[3] / det, -hm[1] / det, -hm[2] / det, hm[0] / det];
            normalise(Kind::G, &mut g, &r);
            let got = to_s(Kind::G, &g, 2).unwrap();
            for k in 0..4 {
                assert!((got[k] - want[k]).norm() < 1e-9 * (1.0 + want[k].norm()));
            }
        }
    }

    // Analytic: a series impedance Zs between two ports with equal R: S11 = Zs/(Zs + 2R),
    // S21 = 2R/(Zs + 2R) (Pozar, 4th ed., Example 4.5 style result; common practice, no source for the
    // exact example number). Its Y matrix is [[1, -1], [-1, 1]]/Zs.
    #[test]
    fn series_impedance_from_y() {
        let zs = c(10.0, 30.0);
        let r = [50.0, 50.0];
        let ys = 1.0 / zs;
        let mut y = vec![ys, -ys, -ys, ys];
        normalise(Kind::Y, &mut y, &r);
        let s = to_s(Kind::Y, &y, 2).unwrap();
        let s11 = zs / (zs + 100.0);
        let s21 = c(100.0, 0.0) / (zs + 100.0);
        assert!((s[0] - s11).norm() < 1e-14 && (s[3] - s11).norm() < 1e-14);
        assert!((s[1] - s21).norm() < 1e-14 && (s[2] - s21).norm() < 1e-14);
    }
}
