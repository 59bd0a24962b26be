//! Propagation constant and characteristic impedance of a coax section at a frequency and temperature,
//! from the telegrapher's equations.
//!
//! Conventions: e^{+j omega t}; gamma = sqrt((R' + j omega L' + j X') (G' + j omega C')) with Re gamma >= 0,
//! a section of physical length l multiplies a forward wave by e^{-gamma l}; Z0 = sqrt(z / y) with
//! Re Z0 > 0. Per-metre quantities are per physical (cold, contracted) metre. The series impedance carries
//! the conductors' surface impedance Zs = R_s + j X_s per unit perimeter (classically X_s = R_s, so the
//! loss brings its own internal-inductance phase, which a causal model needs: Pozar, Microwave Engineering,
//! 4th ed., sec. 2.7; Hall and Heck, Advanced Signal Integrity, Wiley 2009); L' is the external inductance
//! (mu0 / 2 pi) ln(b/a), C' = 2 pi eps0 er / ln(b/a), G' = omega C' tan(delta).

use super::catalogue::CableKind;
use super::materials::{self, Material, PtfeModel, EPS0, MU0, ROOM_K};
use num_complex::Complex64;
use serde::Serialize;
use std::f64::consts::PI;

/// A coax cross-section at one temperature: everything that does not depend on frequency.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SectionState {
    pub t_k: f64,
    /// Physical length per as-built metre (1 - contraction of the outer conductor).
    pub length_scale: f64,
    /// Contracted radii, m.
    pub inner_radius_m: f64,
    pub outer_radius_m: f64,
    /// Effective relative permittivity (the dielectric and any vacuum gap together).
    pub er_eff: f64,
    pub loss_tangent: f64,
    /// Multiplier on the computed conductor loss (1 unless the kind states a measured loss).
    pub conductor_scale: f64,
    pub inner: Material,
    pub outer: Material,
}

impl SectionState {
    /// The state of `kind` at `t_k`, with the given PTFE model.
    pub fn new(kind: &CableKind, t_k: f64, ptfe: PtfeModel) -> SectionState {
        SectionState::with_contraction_scale(kind, t_k, ptfe, 1.0)
    }

    /// As [`SectionState::new`], with every material's contraction from room temperature (conductors and
    /// dielectric alike) multiplied by `scale`. A scale of 1 is [`SectionState::new`] exactly (a product by
    /// 1.0 is exact in floating point). Used by the simulator's [`Perturbation`](super::Perturbation).
    pub fn with_contraction_scale(
        kind: &CableKind,
        t_k: f64,
        ptfe: PtfeModel,
        scale: f64,
    ) -> SectionState {
        let c_in = scale * (kind.inner.contraction(t_k) - kind.inner.contraction(ROOM_K));
        let c_out = scale * (kind.outer.contraction(t_k) - kind.outer.contraction(ROOM_K));
        let c_d = scale * (kind.dielectric.contraction(t_k) - kind.dielectric.contraction(ROOM_K));
        let (a, b) = (kind.inner_radius_m, kind.outer_radius_m);
        let a1 = a * (1.0 - c_in);
        let b1 = b * (1.0 - c_out);
        let ln_ba = (b1 / a1).ln();
        let er_eff = match ptfe {
            PtfeModel::Free => materials::clausius_mossotti(kind.er, (1.0 - c_d).powi(-3)),
            PtfeModel::Filled => {
                // Density follows the cavity: area (b1^2 - a1^2) times length (1 - c_out).
                let vol = (b1 * b1 - a1 * a1) / (b * b - a * a) * (1.0 - c_out);
                materials::clausius_mossotti(kind.er, 1.0 / vol)
            }
            PtfeModel::Gapped => {
                // Held axially at the outer conductor's length, the dielectric is stretched by
                // e = (c_d - c_out) / (1 - c_d) against its free length; as a uniaxially strained
                // elastic solid its volume grows by (1 - 2 nu) e (lateral strain -nu e), so its density
                // is the free-contraction density / (1 + (1 - 2 nu) e), and its cross-section is
                // A0 (1 - c_d)^2 (1 - nu e)^2. Inner surface on the (contracted) inner conductor.
                let nu = kind.dielectric.poisson_ratio();
                let e = ((c_d - c_out) / (1.0 - c_d)).max(0.0);
                let density = (1.0 - c_d).powi(-3) / (1.0 + (1.0 - 2.0 * nu) * e);
                let er_p = materials::clausius_mossotti(kind.er, density);
                let area = PI * (b * b - a * a) * ((1.0 - c_d) * (1.0 - nu * e)).powi(2);
                let rp = (a1 * a1 + area / PI).sqrt().min(b1);
                // Series capacitances of the dielectric layer and the vacuum gap.
                ln_ba / ((rp / a1).ln() / er_p + (b1 / rp).ln())
            }
        };
        let conductor_scale = match kind.loss_db_per_m_1ghz {
            Some(db) => {
                let computed = conductor_alpha_room_1ghz(kind);
                (db / NEPER_DB) / computed
            }
            None => 1.0,
        };
        SectionState {
            t_k,
            length_scale: 1.0 - c_out,
            inner_radius_m: a1,
            outer_radius_m: b1,
            er_eff,
            loss_tangent: kind.loss_tangent
                * if kind.dielectric == Material::Ptfe {
                    materials::ptfe_loss_tangent_ratio(t_k)
                } else {
                    1.0
                },
            conductor_scale,
            inner: kind.inner,
            outer: kind.outer,
        }
    }

    /// Per-metre series impedance z = R' + j(omega L' + X') and shunt admittance y = G' + j omega C'.
    pub fn zy(&self, f_hz: f64) -> (Complex64, Complex64) {
        let w = 2.0 * PI * f_hz;
        let ln_ba = (self.outer_radius_m / self.inner_radius_m).ln();
        let l = MU0 / (2.0 * PI) * ln_ba;
        let c = 2.0 * PI * EPS0 * self.er_eff / ln_ba;
        let (ri, xi) = self.inner.surface_impedance(f_hz, self.t_k);
        let (ro, xo) = self.outer.surface_impedance(f_hz, self.t_k);
        let r = self.conductor_scale
            * (ri / (2.0 * PI * self.inner_radius_m) + ro / (2.0 * PI * self.outer_radius_m));
        let x = self.conductor_scale
            * (xi / (2.0 * PI * self.inner_radius_m) + xo / (2.0 * PI * self.outer_radius_m));
        let z = Complex64::new(r, w * l + x);
        let y = Complex64::new(w * c * self.loss_tangent, w * c);
        (z, y)
    }

    /// Propagation constant per physical metre and characteristic impedance at `f_hz`.
    pub fn gamma_z0(&self, f_hz: f64) -> (Complex64, Complex64) {
        if f_hz <= 0.0 {
            // DC: the lossless limit (the conductor resistance is negligible for reflection at DC here).
            let ln_ba = (self.outer_radius_m / self.inner_radius_m).ln();
            let z0 = super::catalogue::ETA0_OVER_2PI / self.er_eff.sqrt() * ln_ba;
            return (Complex64::new(0.0, 0.0), Complex64::new(z0, 0.0));
        }
        let (z, y) = self.zy(f_hz);
        propagation(z, y)
    }

    /// One-way group delay per as-built metre at `f_hz`, s/m (central difference of beta).
    pub fn group_delay_per_m(&self, f_hz: f64) -> f64 {
        let df = (f_hz * 1e-4).max(1e3);
        let (f1, f2) = ((f_hz - df).max(1.0), f_hz + df);
        let b1 = self.gamma_z0(f1).0.im;
        let b2 = self.gamma_z0(f2).0.im;
        self.length_scale * (b2 - b1) / (2.0 * PI * (f2 - f1))
    }

    /// Attenuation per as-built metre at `f_hz`, Np/m.
    pub fn alpha_per_m(&self, f_hz: f64) -> f64 {
        self.length_scale * self.gamma_z0(f_hz).0.re
    }
}

/// A section's frequency-independent per-metre coefficients, so that a sweep evaluates each section with
/// one complex sqrt, one complex exp and the conductors' cube roots per frequency. Built once per slice by
/// [`SectionState::coeffs`]; [`SectionCoeffs::gamma_z0`] equals [`SectionState::gamma_z0`] to rounding
/// (tested over materials, temperatures and frequencies).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SectionCoeffs {
    /// External inductance and capacitance per physical metre, H/m and F/m.
    pub l_per_m: f64,
    pub c_per_m: f64,
    pub loss_tangent: f64,
    /// conductor_scale / (2 pi radius) for the inner and outer conductor, 1/m.
    pub inner_per_m: f64,
    pub outer_per_m: f64,
    pub inner: materials::SurfaceCoeffs,
    pub outer: materials::SurfaceCoeffs,
    /// Lossless characteristic impedance, for f = 0, ohm.
    pub z0_dc: f64,
    pub length_scale: f64,
}

impl SectionState {
    /// The section's coefficients for [`SectionCoeffs::gamma_z0`].
    pub fn coeffs(&self) -> SectionCoeffs {
        let ln_ba = (self.outer_radius_m / self.inner_radius_m).ln();
        SectionCoeffs {
            l_per_m: MU0 / (2.0 * PI) * ln_ba,
            c_per_m: 2.0 * PI * EPS0 * self.er_eff / ln_ba,
            loss_tangent: self.loss_tangent,
            inner_per_m: self.conductor_scale / (2.0 * PI * self.inner_radius_m),
            outer_per_m: self.conductor_scale / (2.0 * PI * self.outer_radius_m),
            inner: self.inner.surface_coeffs(self.t_k),
            outer: self.outer.surface_coeffs(self.t_k),
            z0_dc: super::catalogue::ETA0_OVER_2PI / self.er_eff.sqrt() * ln_ba,
            length_scale: self.length_scale,
        }
    }
}

impl SectionCoeffs {
    /// Propagation constant per physical metre and characteristic impedance at `f_hz`
    /// (`sqrt_f` = sqrt(f_hz), shared by every section at one frequency): [`Self::propagation`] without the
    /// characteristic admittance.
    #[inline]
    pub fn gamma_z0(&self, f_hz: f64, sqrt_f: f64) -> (Complex64, Complex64) {
        let p = self.propagation(f_hz, sqrt_f);
        (p.gamma, p.z0)
    }

    /// gamma = sqrt(z y) (Re >= 0), Z0 = sqrt(z / y) (Re >= 0) and Y0 = 1 / Z0 at `f_hz` (`sqrt_f` =
    /// sqrt(f_hz)), from the series impedance z and shunt admittance y per metre (telegrapher's
    /// equations). The root is taken algebraically ([`principal_sqrt`]), and Z0 = z / gamma, Y0 = y / gamma
    /// share one reciprocal (z / gamma = gamma / y because gamma^2 = z y): no angle, no polar form.
    #[inline]
    pub fn propagation(&self, f_hz: f64, sqrt_f: f64) -> Propagation {
        if f_hz <= 0.0 {
            return Propagation {
                gamma: Complex64::new(0.0, 0.0),
                z0: Complex64::new(self.z0_dc, 0.0),
                y0: Complex64::new(1.0 / self.z0_dc, 0.0),
            };
        }
        let w = 2.0 * PI * f_hz;
        let (ri, xi) = self.inner.eval(f_hz, sqrt_f);
        let (ro, xo) = self.outer.eval(f_hz, sqrt_f);
        let r = ri * self.inner_per_m + ro * self.outer_per_m;
        let x = xi * self.inner_per_m + xo * self.outer_per_m;
        let z = Complex64::new(r, w * self.l_per_m + x);
        let wc = w * self.c_per_m;
        let y = Complex64::new(wc * self.loss_tangent, wc);
        let gamma = principal_sqrt(z * y);
        let inv = gamma.inv();
        let (mut z0, mut y0) = (z * inv, y * inv);
        // The sign is fixed by Re Z0 >= 0 (and Y0 = 1 / Z0 goes with it).
        if z0.re < 0.0 {
            z0 = -z0;
            y0 = -y0;
        }
        Propagation { gamma, z0, y0 }
    }
}

/// A section's propagation constant per physical metre, characteristic impedance and characteristic
/// admittance at one frequency ([`SectionCoeffs::propagation`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Propagation {
    pub gamma: Complex64,
    pub z0: Complex64,
    pub y0: Complex64,
}

/// The principal square root of `w` (Re >= 0), algebraically: t = sqrt((|w| + |Re w|) / 2) is one part and
/// Im w / (2 t) the other, with no cancellation whatever the sign of Re w (Kahan's scheme; the same value
/// as num-complex's polar root to a few ulps). |w|^2 must be a finite number (the telegrapher's z y of a
/// cable at any frequency the simulator allows is far inside).
#[inline]
pub fn principal_sqrt(w: Complex64) -> Complex64 {
    let r = w.norm_sqr().sqrt();
    if r == 0.0 {
        return Complex64::new(0.0, 0.0);
    }
    let t = (0.5 * (r + w.re.abs())).sqrt();
    if w.re >= 0.0 {
        Complex64::new(t, w.im / (2.0 * t))
    } else {
        Complex64::new(w.im.abs() / (2.0 * t), t.copysign(w.im))
    }
}

/// 1 Np = 20 / ln(10) dB.
pub const NEPER_DB: f64 = 8.685_889_638_065_035;

/// gamma = sqrt(z y) with Re >= 0 and Z0 = sqrt(z / y) with Re >= 0.
pub fn propagation(z: Complex64, y: Complex64) -> (Complex64, Complex64) {
    let mut g = (z * y).sqrt();
    if g.re < 0.0 {
        g = -g;
    }
    let mut z0 = (z / y).sqrt();
    if z0.re < 0.0 {
        z0 = -z0;
    }
    (g, z0)
}

/// Conductor attenuation of a kind at 1 GHz, room temperature, from its materials alone, Np/m.
fn conductor_alpha_room_1ghz(kind: &CableKind) -> f64 {
    let mut k = kind.clone();
    k.loss_db_per_m_1ghz = None;
    k.loss_tangent = 0.0;
    let s = SectionState::new(&k, ROOM_K, PtfeModel::Free);
    s.gamma_z0(1e9).0.re
}

/// Pozar's closed form for coax loss (Microwave Engineering, 4th ed., sec. 2.7 and Example 2.6 style):
/// alpha_c = Rs (1/a + 1/b) / (2 eta ln(b/a)), alpha_d = pi f sqrt(er) tan(delta) / c0; returns
/// (alpha_c, alpha_d) in Np/m for conductors of resistivity `rho` (classical skin effect).
pub fn pozar_coax_loss(f_hz: f64, a: f64, b: f64, er: f64, tan_d: f64, rho: f64) -> (f64, f64) {
    let rs = (PI * f_hz * MU0 * rho).sqrt();
    let eta = (MU0 / (EPS0 * er)).sqrt();
    let ac = rs * (1.0 / a + 1.0 / b) / (2.0 * eta * (b / a).ln());
    let ad = PI * f_hz * er.sqrt() * tan_d / materials::C0;
    (ac, ad)
}
