//! A second world: cryostat input lines simulated by physics written apart from coldtrace's own line model
//! (`coldtrace::line`), to test the comparator against a world that is not its model. Shared by
//! `tests/compare_independent.rs` (`mod independent;`) and `examples/independent_accuracy.rs`
//! (`#[path = "../tests/independent/mod.rs"] mod independent;`).
//!
//! Nothing here calls coldtrace's simulator, material tables or cable catalogue. Where the two worlds
//! differ:
//! - **Cables**: RLGC lines (telegrapher's equations) cut into slices along a temperature profile of a
//!   conductor whose thermal conductivity grows as T (T^2 linear along the cable: Fourier's law with
//!   k = k0 T). Conductor resistivity from the Bloch-Grueneisen formula for copper and silver (Ziman,
//!   Electrons and Phonons, 1960, ch. 9; Debye temperatures from memory), straight lines between the room and
//!   4 K values for stainless steel, constant for cupronickel, superconducting NbTi below 9.2 K; the
//!   anomalous skin effect as a floor under the surface resistance (X = sqrt(3) R there; Chambers, Proc. R.
//!   Soc. A 215:481, 1952, as compiled in ../shared/DOMAIN.md); surface roughness by the Hammerstad-Jensen
//!   factor (Hammerstad and Jensen, IEEE MTT-S Digest 1980, from memory); a braid's extra loss on the
//!   flexible cable (common practice, no source).
//! - **Dielectric**: each cable's own room permittivity (2.02-2.08, DOMAIN.md sec. 4) rising on cooling by
//!   0.4-1.8 % (the free Clausius-Mossotti bound is about 5 %, DOMAIN.md), its loss tangent halving.
//! - **Joints**: a mated pair is a lumped ladder of pi-cells (not a uniform section) of 47-53 ohm
//!   with fringing capacitance at its interface and a pin recess (an air-line step) that grows on cooling.
//! - **Attenuators**: resistive pi-pads from the standard design equations (from memory), each resistor off
//!   its value by up to 2 % and moving by up to 1.5 % on cooling (thin-film temperature coefficients of
//!   about 50 ppm/K over 290 K; common practice, no source), with shunt capacitance at each port and a body
//!   of line; the pad's output mates straight onto the next cable through a joint no line file describes.
//! - **Ends**: an open with fringing capacitance, a short with inductance, a load whose resistance drifts on
//!   cooling, a resistive device with lead inductance.
//! - **The port**: a calibrated analyser's residual directivity, source match and tracking ripple, the same
//!   in both sweeps but for a small drift; complex Gaussian noise.
//!
//! The line file handed to the comparator is written from the *nominal* line: built-in kinds by name,
//! declared lengths up to 6 mm off the as-built ones, round stage temperatures, attenuators' nominal loss.
//!
//! Conventions: e^{+j omega t}; SI units (Hz, m, ohm, F, H, K); a chain matrix (ABCD) per part; S11
//! referred to 50 ohm. Everything follows from one seed.

#![allow(dead_code)] // each user (a test, an example) uses part of the module

use coldtrace::compare::job::{compare_networks, LineModel, PairRequest};
use coldtrace::compare::{AnalysisConfig, CompareReport, Severity};
use coldtrace::line::rng::Rng;
use coldtrace::line::State;
use coldtrace::Network;
use num_complex::Complex64;
use std::f64::consts::PI;
use std::fmt::Write as _;
use std::path::Path;

/// Speed of light in vacuum, m/s (SI, exact).
pub const C0: f64 = 299_792_458.0;
/// Vacuum permeability, H/m (CODATA 2018: 1.25663706212e-6).
pub const MU0: f64 = 1.256_637_062_12e-6;
/// Vacuum permittivity, F/m (CODATA 2018).
pub const EPS0: f64 = 8.854_187_812_8e-12;
/// System impedance, ohm.
pub const Z_REF: f64 = 50.0;
/// Room temperature of a warm sweep, K (a lab at 20-25 C).
pub const ROOM_K: (f64, f64) = (293.0, 298.0);
/// Copper's resistivity at 20 C, ohm m: the International Annealed Copper Standard, 1/58 ohm mm^2/m.
pub const RHO_CU_293: f64 = 1.0 / 58.0 * 1e-6;
/// Silver's resistivity at 20 C, ohm m (from memory: 1.59e-8).
pub const RHO_AG_293: f64 = 1.59e-8;
/// Debye temperatures, K: copper 343, silver 225 (from memory; Kittel, Introduction to Solid State
/// Physics, table of Debye temperatures).
pub const THETA_CU: f64 = 343.0;
pub const THETA_AG: f64 = 225.0;
/// Stainless 304 at 293 K and 4 K, ohm m (DOMAIN.md sec. 4, from memory; Ho and Chu, CINDAS Report 45).
pub const RHO_SS: (f64, f64) = (7.2e-7, 5.0e-7);
/// Cupronickel 70/30, ohm m, nearly constant (DOMAIN.md sec. 4, from memory).
pub const RHO_CUNI: f64 = 3.7e-7;
/// NbTi normal-state resistivity, ohm m, and critical temperature, K (DOMAIN.md sec. 4, from memory).
pub const RHO_NBTI: f64 = 6e-7;
pub const TC_NBTI: f64 = 9.2;
/// Integrated contraction 293 K -> 4 K of an outer conductor (DOMAIN.md sec. 4: NIST fits for copper and
/// stainless 304; cupronickel and NbTi from memory, Ekin 2006 appendix A6).
pub const CONTRACTION_CU: f64 = 0.00326;
pub const CONTRACTION_SS: f64 = 0.00300;
pub const CONTRACTION_CUNI: f64 = 0.00270;
pub const CONTRACTION_NBTI: f64 = 0.00190;
/// Centre-conductor radius of 0.086-in and 0.141-in semi-rigid cable and of the flexible cable, m
/// (DOMAIN.md sec. 2 for 0.086-in; the others from memory).
pub const A_086: f64 = 0.2555e-3;
pub const A_141: f64 = 0.4555e-3;
pub const A_FLEX: f64 = 0.455e-3;
/// Length of a mated SMA-class pair, m, and the length a hermetic feedthrough adds, m (common practice,
/// no source).
pub const JOINT_M: f64 = 8e-3;
pub const FEEDTHROUGH_M: f64 = 0.02;
/// Slices per cable between two stages.
pub const SLICES: usize = 24;
/// Longest delay of one pi-cell of a joint's ladder, s: a cell of delay tau passes up to 1/(pi tau)
/// (its cut-off, circuit theory), 80 GHz at 4 ps, four times the highest frequency swept.
pub const JOINT_CELL_S: f64 = 4e-12;
/// Pin gaps of faults, m, drawn evenly in their logarithm: 81 fF down to 7 fF by Kirchhoff's disc formula
/// (common practice, no source: a pin pulled back by tens of micrometres to over a millimetre).
pub const GAP_M: (f64, f64) = (60e-6, 1.5e-3);
/// Level above the noise from which a fault counts as visible, dB (the comparator's goal).
pub const VISIBLE_LEVEL_DB: f64 = 10.0;

/// A conductor as this world models it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Metal {
    Copper { rrr: f64 },
    Silver { rrr: f64 },
    Stainless,
    Cupronickel,
    Nbti,
}

/// The Bloch-Grueneisen integral J5(z) = int_0^z x^5 / ((e^x - 1)(1 - e^-x)) dx (Simpson's rule).
fn bg_integral(z: f64) -> f64 {
    let n = 400;
    let h = z / n as f64;
    let g = |x: f64| {
        if x < 1e-9 {
            0.0
        } else {
            x.powi(5) / ((x.exp() - 1.0) * (1.0 - (-x).exp()))
        }
    };
    let mut s = g(0.0) + g(z);
    for k in 1..n {
        s += g(k as f64 * h) * if k % 2 == 1 { 4.0 } else { 2.0 };
    }
    s * h / 3.0
}

/// Phonon resistivity by Bloch-Grueneisen, scaled to `rho_293` at 293 K. The shape is kept per
/// (theta, T): a sweep asks for the same slices at every frequency.
fn bloch_grueneisen(t: f64, theta: f64, rho_293: f64) -> f64 {
    thread_local! {
        static SHAPES: std::cell::RefCell<std::collections::HashMap<(u64, u64), f64>> =
            Default::default();
    }
    let shape = |t: f64| {
        SHAPES.with(|m| {
            *m.borrow_mut()
                .entry((theta.to_bits(), t.to_bits()))
                .or_insert_with(|| (t / theta).powi(5) * bg_integral(theta / t.max(0.5)))
        })
    };
    rho_293 * shape(t) / shape(293.0)
}

impl Metal {
    /// Resistivity at `t` kelvin, ohm m (`None` for a superconductor below its transition).
    pub fn rho(self, t: f64) -> Option<f64> {
        Some(match self {
            Metal::Copper { rrr } => {
                RHO_CU_293 / rrr + bloch_grueneisen(t, THETA_CU, RHO_CU_293 * (1.0 - 1.0 / rrr))
            }
            Metal::Silver { rrr } => {
                RHO_AG_293 / rrr + bloch_grueneisen(t, THETA_AG, RHO_AG_293 * (1.0 - 1.0 / rrr))
            }
            Metal::Stainless => {
                let u = ((t - 4.0) / (293.0 - 4.0)).clamp(0.0, 1.1);
                RHO_SS.1 + (RHO_SS.0 - RHO_SS.1) * u
            }
            Metal::Cupronickel => RHO_CUNI,
            Metal::Nbti if t < TC_NBTI => return None,
            Metal::Nbti => RHO_NBTI,
        })
    }

    /// Surface impedance at `t` kelvin and `f` Hz, ohm: classical skin effect with roughness
    /// (`rough_m`, rms), floored by the anomalous skin effect for the pure metals (`ase_ratio`: how many
    /// times lower than at room temperature the cold surface resistance can go at 5 GHz).
    pub fn surface(self, t: f64, f: f64, rough_m: f64, ase_ratio: f64) -> Complex64 {
        let w = 2.0 * PI * f.max(1.0);
        let Some(rho) = self.rho(t) else {
            // A superconductor well below its transition: a small residual resistance rising as f^2
            // (from memory, of the order of 1e-4 ohm at 10 GHz for NbTi), no internal inductance kept.
            return Complex64::new(1e-4 * (f / 10e9).powi(2), 0.0);
        };
        let rs = (w * MU0 * rho / 2.0).sqrt();
        let delta = (2.0 * rho / (w * MU0)).sqrt();
        let rough = 1.0 + 2.0 / PI * (1.4 * (rough_m / delta).powi(2)).atan();
        let rs = rs * rough;
        let floor = match self {
            Metal::Copper { .. } | Metal::Silver { .. } => {
                let rho_room = self.rho(293.0).unwrap_or(rho);
                let at_5 = (2.0 * PI * 5e9 * MU0 * rho_room / 2.0).sqrt() / ase_ratio;
                at_5 * (f / 5e9).powf(2.0 / 3.0)
            }
            _ => 0.0,
        };
        if floor > rs {
            Complex64::new(floor, 3f64.sqrt() * floor)
        } else {
            Complex64::new(rs, rs)
        }
    }

    /// Integrated contraction from 293 K to 4 K.
    pub fn contraction_4k(self) -> f64 {
        match self {
            Metal::Copper { .. } | Metal::Silver { .. } => CONTRACTION_CU,
            Metal::Stainless => CONTRACTION_SS,
            Metal::Cupronickel => CONTRACTION_CUNI,
            Metal::Nbti => CONTRACTION_NBTI,
        }
    }
}

/// Share of the 4 K contraction (and of the cold permittivity rise) reached at `t`: 1 - ((T - 4)/289)^2,
/// which gives 0.93 at 77 K as the NIST copper and stainless fits do (0.304/0.326 and 0.280/0.300,
/// DOMAIN.md sec. 4).
pub fn cold_share(t: f64) -> f64 {
    let u = ((t - 4.0) / (293.0 - 4.0)).clamp(0.0, 1.0);
    1.0 - u * u
}

/// A 2x2 chain matrix.
#[derive(Debug, Clone, Copy)]
pub struct Chain {
    pub a: Complex64,
    pub b: Complex64,
    pub c: Complex64,
    pub d: Complex64,
}

impl Chain {
    pub const ONE: Chain = Chain {
        a: Complex64 { re: 1.0, im: 0.0 },
        b: Complex64 { re: 0.0, im: 0.0 },
        c: Complex64 { re: 0.0, im: 0.0 },
        d: Complex64 { re: 1.0, im: 0.0 },
    };
    pub fn times(&self, o: &Chain) -> Chain {
        Chain {
            a: self.a * o.a + self.b * o.c,
            b: self.a * o.b + self.b * o.d,
            c: self.c * o.a + self.d * o.c,
            d: self.c * o.b + self.d * o.d,
        }
    }
    pub fn series(z: Complex64) -> Chain {
        Chain { b: z, ..Chain::ONE }
    }
    pub fn shunt(y: Complex64) -> Chain {
        Chain { c: y, ..Chain::ONE }
    }
    /// A uniform line of propagation constant `g` (1/m), impedance `z`, length `l`.
    pub fn line(g: Complex64, z: Complex64, l: f64) -> Chain {
        let (ch, sh) = ((g * l).cosh(), (g * l).sinh());
        Chain {
            a: ch,
            b: z * sh,
            c: sh / z,
            d: ch,
        }
    }
    /// Input impedance with `zl` at the far port (`None`: an ideal open).
    pub fn input(&self, zl: Option<Complex64>) -> Complex64 {
        match zl {
            Some(zl) => (self.a * zl + self.b) / (self.c * zl + self.d),
            None => self.a / self.c,
        }
    }
}

/// A coax cable's construction and the room-temperature figures of its kind.
#[derive(Debug, Clone)]
pub struct Coax {
    /// The built-in kind the line file names for it.
    pub kind: &'static str,
    pub a: f64,
    /// Impedance of this very cable at room temperature, ohm.
    pub z_ohm: f64,
    pub er_room: f64,
    pub tan_d: f64,
    pub inner: Metal,
    pub outer: Metal,
    /// Extra loss factor of the outer conductor (a braid), 1 for a solid tube.
    pub outer_factor: f64,
    pub rough_m: f64,
}

impl Coax {
    /// Series impedance and shunt admittance per metre at `t` kelvin and `f` Hz, for a local impedance
    /// `z_ohm` (a crushed part has a lower one), with the cold permittivity rise `er_rise` (at 4 K) and the
    /// anomalous-skin ratio.
    fn rlgc(&self, t: f64, f: f64, z_ohm: f64, er_rise: f64, ase: f64) -> (Complex64, Complex64) {
        let w = 2.0 * PI * f.max(1.0);
        let er = self.er_room * (1.0 + er_rise * cold_share(t));
        let tan_d = self.tan_d * (0.5 + 0.5 * (t / 293.0).min(1.0));
        // b from the room geometry: the impedance is a property of the cable as built.
        let b = self.a * (z_ohm * self.er_room.sqrt() / 59.958).exp();
        let ln = (b / self.a).ln();
        let zs_in = self.inner.surface(t, f, self.rough_m, ase);
        let zs_out = self.outer.surface(t, f, self.rough_m, ase) * self.outer_factor;
        let z_int = zs_in / (2.0 * PI * self.a) + zs_out / (2.0 * PI * b);
        let l_ext = MU0 / (2.0 * PI) * ln;
        let c = 2.0 * PI * EPS0 * er / ln;
        let zser = z_int + Complex64::new(0.0, w * l_ext);
        let ysh = Complex64::new(w * c * tan_d, w * c);
        (zser, ysh)
    }

    /// A length `l` of this cable, uniform at `t` kelvin, with neither a cold permittivity rise nor the
    /// anomalous skin effect's floor mattering (a warm cable).
    pub fn section_at(&self, t: f64, f: f64, l: f64) -> Chain {
        self.section(t, f, self.z_ohm, 0.0, 5.0, l)
    }

    fn section(&self, t: f64, f: f64, z_ohm: f64, er_rise: f64, ase: f64, l: f64) -> Chain {
        let (z, y) = self.rlgc(t, f, z_ohm, er_rise, ase);
        let g = (z * y).sqrt();
        let zc = (z / y).sqrt();
        Chain::line(g, zc, l)
    }
}

/// One part of the line as built.
#[derive(Debug, Clone)]
pub enum Part {
    Cable {
        name: String,
        coax: Coax,
        /// As built, end to end, m (a mated pair's halves included).
        length_m: f64,
        /// Declared in the line file, m.
        declared_m: f64,
        from: usize,
        to: usize,
        /// Millimetres taken at each end by the mated pairs there.
        cut_start_m: f64,
        cut_end_m: f64,
    },
    Joint {
        /// `None` for a joint no line file describes (a pad's output onto its cable).
        name: Option<String>,
        stage: usize,
        z_ohm: f64,
        /// Extra length of its own (a feedthrough), as built and declared, m.
        own_m: f64,
        declared_own_m: f64,
        fringe_f: f64,
        recess_warm_m: f64,
        recess_cold_m: f64,
    },
    Pad {
        name: String,
        stage: usize,
        db: f64,
        /// Resistors (shunt in, series, shunt out) off their design values, warm and cold.
        err_warm: [f64; 3],
        err_cold: [f64; 3],
        port_c_f: f64,
        body_m: f64,
    },
    End(End),
}

/// The far end.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum End {
    Open {
        c_f: f64,
    },
    Short {
        l_h: f64,
    },
    /// A load: resistance warm and cold, lead inductance.
    Load {
        warm_ohm: f64,
        cold_ohm: f64,
        l_h: f64,
        declared_ohm: Option<f64>,
    },
}

/// A fault in the current sweep.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Fault {
    /// A pin pulled back by `gap_m` at joint number `joint` (index in `Line::parts`).
    Gap {
        part: usize,
        gap_m: f64,
    },
    /// A gap bridged by a contact of `ohm`.
    PartialGap {
        part: usize,
        gap_m: f64,
        ohm: f64,
    },
    Contact {
        part: usize,
        ohm: f64,
    },
    Open {
        part: usize,
    },
    /// A crush inside cable `part` at `at_m` from its start (as built), of `length_m` to `ohm`.
    Crush {
        part: usize,
        at_m: f64,
        length_m: f64,
        ohm: f64,
    },
}

impl Fault {
    pub fn part(&self) -> usize {
        match *self {
            Fault::Gap { part, .. }
            | Fault::PartialGap { part, .. }
            | Fault::Contact { part, .. }
            | Fault::Open { part }
            | Fault::Crush { part, .. } => part,
        }
    }
    pub fn kind(&self) -> &'static str {
        match self {
            Fault::Gap { .. } => "pin-gap",
            Fault::PartialGap { .. } => "pin-gap + contact",
            Fault::Contact { .. } => "contact",
            Fault::Open { .. } => "open",
            Fault::Crush { .. } => "crush",
        }
    }
}

/// The resistive pi-pad of `db` on [`Z_REF`], each resistor (shunt in, series, shunt out) off its design
/// value by the share in `err`. Design equations (from memory, the standard pi-pad): with K = 10^(dB/20),
/// shunt arms Z0 (K + 1)/(K - 1), series arm Z0 (K^2 - 1)/(2 K).
pub fn pad_chain(db: f64, err: [f64; 3]) -> Chain {
    let k = 10f64.powf(db / 20.0);
    let r_shunt = Z_REF * (k + 1.0) / (k - 1.0);
    let r_series = Z_REF * (k * k - 1.0) / (2.0 * k);
    let shunt = |e: f64| Chain::shunt(Complex64::new(1.0 / (r_shunt * (1.0 + e)), 0.0));
    shunt(err[0])
        .times(&Chain::series(Complex64::new(
            r_series * (1.0 + err[1]),
            0.0,
        )))
        .times(&shunt(err[2]))
}

/// Capacitance of an axial gap `g` between pin ends of radius `a` in PTFE (er 2.03), F: Kirchhoff's disc
/// formula, eps [pi a^2 / g + a (ln(16 pi a / g) - 1)] (DOMAIN.md sec. 2).
pub fn gap_capacitance(a: f64, g: f64) -> f64 {
    EPS0 * 2.03 * (PI * a * a / g + a * ((16.0 * PI * a / g).ln() - 1.0))
}

/// How one sweep is taken.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Take {
    pub state: State,
    /// Stage temperatures of this cooldown (room first), K.
    pub stage_k: [f64; 6],
    pub noise_db: f64,
    pub noise_seed: u64,
    /// Tracking drift of the port, dB and degrees.
    pub drift_db: f64,
    pub drift_deg: f64,
}

/// A line of this world.
#[derive(Debug, Clone)]
pub struct World {
    pub name: String,
    pub parts: Vec<Part>,
    /// Stages used (names in the line file), room first.
    pub stage_names: [&'static str; 6],
    pub stage_nominal_k: [f64; 6],
    /// Cold permittivity rise at 4 K, per cable kind family (one per line).
    pub er_rise: f64,
    pub contraction_scale: f64,
    pub ase_ratio: f64,
    /// Residual port errors: directivity, source match (complex at 1 GHz, turning with frequency).
    pub directivity: Complex64,
    pub source_match: Complex64,
    pub ripple_db: f64,
    pub freqs_hz: Vec<f64>,
}

/// Which comparison a case is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Case {
    Cooldown,
    Repeat,
    Fault,
}

impl Case {
    pub fn name(self) -> &'static str {
        match self {
            Case::Cooldown => "cooldown",
            Case::Repeat => "repeat",
            Case::Fault => "fault",
        }
    }
}

/// One generated case: the world, the two takes, the fault, the line file.
#[derive(Debug, Clone)]
pub struct Scene {
    pub seed: u64,
    pub case: Case,
    pub world: World,
    pub baseline: Take,
    pub current: Take,
    pub fault: Option<Fault>,
    pub line_text: String,
}

fn pick<T: Copy>(r: &mut Rng, xs: &[T]) -> T {
    xs[((r.uniform() * xs.len() as f64) as usize).min(xs.len() - 1)]
}

fn between(r: &mut Rng, lo: f64, hi: f64) -> f64 {
    lo + (hi - lo) * r.uniform()
}

fn log_between(r: &mut Rng, (lo, hi): (f64, f64)) -> f64 {
    lo * (hi / lo).powf(r.uniform())
}

/// Stage names and nominal temperatures, K (Krinner et al., EPJ Quantum Technology 6:2, 2019).
const STAGES: [(&str, f64, f64, f64); 6] = [
    ("room", 295.0, 295.0, 295.0),
    ("k50", 45.0, 38.0, 55.0),
    ("k4", 3.5, 2.8, 4.2),
    ("still", 0.9, 0.7, 1.2),
    ("cp", 0.1, 0.07, 0.15),
    ("mxc", 0.015, 0.008, 0.03),
];

fn coax(r: &mut Rng, kind: &'static str) -> Coax {
    let er = between(r, 2.02, 2.08);
    let z = between(r, 49.0, 51.0);
    let rough = between(r, 0.1e-6, 0.4e-6);
    let cu = Metal::Copper {
        rrr: between(r, 20.0, 80.0),
    };
    let ag = Metal::Silver {
        rrr: between(r, 10.0, 30.0),
    };
    let (a, inner, outer, er, tan_d, factor) = match kind {
        "cu-086" => (A_086, cu, cu, er, 2e-4, 1.0),
        "cu-141" => (A_141, cu, cu, er, 2e-4, 1.0),
        "ss-086" => (A_086, Metal::Stainless, Metal::Stainless, er, 2e-4, 1.0),
        "cuni-086" => (A_086, Metal::Cupronickel, Metal::Cupronickel, er, 2e-4, 1.0),
        "agcuni-086" => (A_086, ag, Metal::Cupronickel, er, 2e-4, 1.0),
        "nbti-086" => (A_086, Metal::Nbti, Metal::Nbti, er, 2e-4, 1.0),
        // Low-density PTFE and a braided outer conductor.
        "cu-flex" => (
            A_FLEX,
            cu,
            cu,
            between(r, 1.68, 1.78),
            3e-4,
            between(r, 1.8, 2.5),
        ),
        _ => unreachable!("kind {kind}"),
    };
    Coax {
        kind,
        a,
        z_ohm: z,
        er_room: er,
        tan_d,
        inner,
        outer,
        outer_factor: factor,
        rough_m: rough,
    }
}

/// Cable kinds usual between two stages (Krinner et al. 2019: stainless or cupronickel from room to 4 K,
/// NbTi below).
fn kinds_between(to: usize) -> &'static [&'static str] {
    match to {
        0 => &["cu-flex", "cu-141", "cu-086"],
        1 | 2 => &["ss-086", "cuni-086", "agcuni-086"],
        _ => &["nbti-086", "cuni-086", "agcuni-086", "ss-086"],
    }
}

impl Scene {
    /// The case of `seed`.
    pub fn generate(seed: u64, case: Case) -> Scene {
        let mut r = Rng::new(seed ^ 0x1d3e_5a7b_9c2f_4e61);
        let last_stage = 2 + (r.uniform() * 4.0) as usize; // k4 .. mxc
        let last_stage = last_stage.min(5);
        let mut parts = Vec::new();
        let mut joints = 0;
        let mut pads = 0;
        let mut cables = 0;
        let mut next_joint = |parts: &mut Vec<Part>, r: &mut Rng, stage: usize, own: f64| {
            joints += 1;
            let cold_stage = stage > 0;
            let recess = between(r, 0.0, 20e-6);
            parts.push(Part::Joint {
                name: Some(if own > 0.0 {
                    "FT".to_string()
                } else {
                    format!("J{joints}")
                }),
                stage,
                z_ohm: between(r, 47.0, 53.0),
                own_m: if own > 0.0 {
                    own + between(r, -2e-3, 4e-3)
                } else {
                    0.0
                },
                declared_own_m: own,
                fringe_f: between(r, 0.0, 20e-15),
                recess_warm_m: recess,
                recess_cold_m: recess
                    + if cold_stage {
                        between(r, 0.0, 15e-6)
                    } else {
                        0.0
                    },
            });
        };
        let mut cable =
            |parts: &mut Vec<Part>, r: &mut Rng, from: usize, to: usize, len: (f64, f64)| {
                cables += 1;
                let kind = pick(r, kinds_between(to));
                let length = between(r, len.0, len.1);
                parts.push(Part::Cable {
                    name: format!("c{cables}"),
                    coax: coax(r, kind),
                    length_m: length,
                    declared_m: length + between(r, -6e-3, 6e-3),
                    from,
                    to,
                    cut_start_m: 0.0,
                    cut_end_m: 0.0,
                });
            };
        // Room cable, feedthrough, then one cable per stage crossed, a joint at each stage, pads at some.
        cable(&mut parts, &mut r, 0, 0, (0.8, 2.2));
        next_joint(&mut parts, &mut r, 0, FEEDTHROUGH_M);
        for stage in 1..=last_stage {
            cable(&mut parts, &mut r, stage - 1, stage, (0.15, 0.35));
            let last = stage == last_stage;
            if !last || r.uniform() < 0.6 {
                next_joint(&mut parts, &mut r, stage, 0.0);
            }
            let pad_share = match stage {
                2 => 0.7,
                1 => 0.2,
                _ => 0.35,
            };
            if !last && pads < 3 && r.uniform() < pad_share {
                pads += 1;
                let db = match stage {
                    2 | 5 => pick(&mut r, &[10.0, 20.0, 20.0]),
                    _ => pick(&mut r, &[3.0, 6.0, 10.0]),
                };
                let mut err = || [0; 3].map(|_| between(&mut r, -0.02, 0.02));
                let warm = err();
                let drift = err().map(|e| 0.75 * e);
                parts.push(Part::Pad {
                    name: format!("A{pads}"),
                    stage,
                    db,
                    err_warm: warm,
                    err_cold: [0, 1, 2].map(|k| warm[k] + drift[k]),
                    port_c_f: between(&mut r, 10e-15, 40e-15),
                    body_m: between(&mut r, 0.018, 0.026),
                });
                // The pad's output mates onto the next cable: a joint the line file does not describe.
                let recess = between(&mut r, 0.0, 20e-6);
                parts.push(Part::Joint {
                    name: None,
                    stage,
                    z_ohm: between(&mut r, 47.0, 53.0),
                    own_m: 0.0,
                    declared_own_m: 0.0,
                    fringe_f: between(&mut r, 0.0, 20e-15),
                    recess_warm_m: recess,
                    recess_cold_m: recess + between(&mut r, 0.0, 15e-6),
                });
            }
        }
        let end = match (r.uniform() * 4.0) as usize {
            0 => End::Open {
                c_f: between(&mut r, 20e-15, 60e-15),
            },
            1 => End::Short {
                l_h: between(&mut r, 5e-12, 30e-12),
            },
            2 => {
                let w = 50.0 * (1.0 + between(&mut r, -0.04, 0.04));
                End::Load {
                    warm_ohm: w,
                    cold_ohm: w * (1.0 + between(&mut r, -0.03, 0.03)),
                    l_h: between(&mut r, 20e-12, 80e-12),
                    declared_ohm: None,
                }
            }
            _ => {
                let nominal = pick(&mut r, &[10.0, 20.0, 100.0, 200.0]);
                let w = nominal * (1.0 + between(&mut r, -0.05, 0.05));
                End::Load {
                    warm_ohm: w,
                    cold_ohm: w * (1.0 + between(&mut r, -0.05, 0.05)),
                    l_h: between(&mut r, 0.1e-9, 0.4e-9),
                    declared_ohm: Some(nominal),
                }
            }
        };
        parts.push(Part::End(end));
        // Mated pairs take their halves out of the cables beside them (the line file's default).
        for k in 0..parts.len() {
            if let Part::Joint { own_m, .. } = parts[k] {
                if own_m > 0.0 {
                    continue;
                }
                if let Some(Part::Cable { cut_end_m, .. }) = k.checked_sub(1).map(|i| &mut parts[i])
                {
                    *cut_end_m = JOINT_M / 2.0;
                }
                if let Some(Part::Cable { cut_start_m, .. }) = parts.get_mut(k + 1) {
                    *cut_start_m = JOINT_M / 2.0;
                }
            }
        }
        // Band and grid: points enough for the line's round trip with room to spare.
        let (lo, hi) = pick(
            &mut r,
            &[
                (0.5e9, 10e9),
                (0.5e9, 10e9),
                (0.5e9, 10e9),
                (10e6, 20e9),
                (1e9, 18e9),
                (0.3e9, 8.5e9),
            ],
        );
        let mut world = World {
            name: format!("west-fridge/indep-{seed}"),
            parts,
            stage_names: STAGES.map(|s| s.0),
            stage_nominal_k: STAGES.map(|s| s.1),
            er_rise: between(&mut r, 0.004, 0.018),
            contraction_scale: between(&mut r, 0.85, 1.15),
            ase_ratio: between(&mut r, 4.0, 7.0),
            directivity: Complex64::from_polar(
                between(&mut r, 0.003, 0.012),
                between(&mut r, 0.0, 2.0 * PI),
            ),
            source_match: Complex64::from_polar(
                between(&mut r, 0.01, 0.04),
                between(&mut r, 0.0, 2.0 * PI),
            ),
            ripple_db: between(&mut r, 0.0, 0.03),
            freqs_hz: Vec::new(),
        };
        let t_round = 2.0 * world.length_m() * 1.45 / C0; // er about 2.1 and a margin
        let points = [1601usize, 2001, 3201, 4001, 6401, 10001]
            .into_iter()
            .find(|&n| (n - 1) as f64 / (hi - lo) >= 1.25 * t_round)
            .unwrap_or(10001);
        world.freqs_hz = (0..points)
            .map(|i| lo + (hi - lo) * i as f64 / (points - 1) as f64)
            .collect();
        let noise_db = between(&mut r, -100.0, -80.0);
        let cooldown = |r: &mut Rng| -> [f64; 6] {
            let mut k = [0.0; 6];
            for (i, s) in STAGES.iter().enumerate() {
                k[i] = between(r, s.2, s.3);
            }
            k
        };
        let room = |r: &mut Rng| [between(r, ROOM_K.0, ROOM_K.1); 6];
        let take = |r: &mut Rng, state: State, stage_k: [f64; 6], seed: u64| Take {
            state,
            stage_k,
            noise_db,
            noise_seed: seed,
            drift_db: between(r, -0.02, 0.02),
            drift_deg: between(r, -0.3, 0.3),
        };
        let (baseline, current, fault) = match case {
            Case::Cooldown => {
                let b = room(&mut r);
                let c = cooldown(&mut r);
                (
                    take(&mut r, State::Warm, b, seed * 2 + 1),
                    take(&mut r, State::Cold, c, seed * 2 + 2),
                    None,
                )
            }
            Case::Repeat => {
                let b = cooldown(&mut r);
                let c = cooldown(&mut r);
                (
                    take(&mut r, State::Cold, b, seed * 2 + 1),
                    take(&mut r, State::Cold, c, seed * 2 + 2),
                    None,
                )
            }
            Case::Fault => {
                let warm = r.uniform() < 0.5;
                let b = if warm { room(&mut r) } else { cooldown(&mut r) };
                let c = cooldown(&mut r);
                let fault = world.pick_fault(&mut r);
                (
                    take(
                        &mut r,
                        if warm { State::Warm } else { State::Cold },
                        b,
                        seed * 2 + 1,
                    ),
                    take(&mut r, State::Cold, c, seed * 2 + 2),
                    Some(fault),
                )
            }
        };
        let line_text = world.line_file();
        Scene {
            seed,
            case,
            world,
            baseline,
            current,
            fault,
            line_text,
        }
    }

    /// The two sweeps.
    pub fn sweeps(&self) -> (Network, Network) {
        (
            self.world.sweep(&self.baseline, None),
            self.world.sweep(&self.current, self.fault),
        )
    }
}

impl World {
    /// As-built length, m.
    pub fn length_m(&self) -> f64 {
        self.parts
            .iter()
            .map(|p| match p {
                Part::Cable { length_m, .. } => *length_m,
                Part::Joint { own_m, .. } => *own_m,
                Part::Pad { body_m, .. } => *body_m,
                Part::End(_) => 0.0,
            })
            .sum()
    }

    fn pick_fault(&self, r: &mut Rng) -> Fault {
        let joints: Vec<usize> = (0..self.parts.len())
            .filter(|&k| matches!(self.parts[k], Part::Joint { name: Some(_), .. }))
            .collect();
        let cables: Vec<usize> = (0..self.parts.len())
            .filter(|&k| matches!(&self.parts[k], Part::Cable { length_m, .. } if *length_m > 0.1))
            .collect();
        match (r.uniform() * 5.0) as usize {
            0 => Fault::Gap {
                part: pick(r, &joints),
                gap_m: log_between(r, GAP_M),
            },
            1 => Fault::PartialGap {
                part: pick(r, &joints),
                gap_m: log_between(r, GAP_M),
                ohm: between(r, 20.0, 500.0),
            },
            2 => Fault::Contact {
                part: pick(r, &joints),
                ohm: between(r, 0.5, 10.0),
            },
            3 => Fault::Open {
                part: pick(r, &joints),
            },
            _ => {
                let part = pick(r, &cables);
                let Part::Cable { length_m, .. } = self.parts[part] else {
                    unreachable!()
                };
                Fault::Crush {
                    part,
                    at_m: between(r, 0.03, length_m - 0.04),
                    length_m: between(r, 5e-3, 10e-3),
                    ohm: between(r, 35.0, 45.0),
                }
            }
        }
    }

    /// The name of part `k` as the line file gives it.
    pub fn part_name(&self, k: usize) -> String {
        match &self.parts[k] {
            Part::Cable { name, .. } | Part::Pad { name, .. } => name.clone(),
            Part::Joint { name, .. } => name.clone().unwrap_or_default(),
            Part::End(_) => "end".into(),
        }
    }

    /// The nominal (declared) position of part `k`'s start, m, in the line file's coordinates (a fault in a
    /// cable at `at_m` adds it, scaled to the declared length).
    pub fn nominal_position_m(&self, k: usize, at_m: f64) -> f64 {
        let mut x = 0.0;
        for p in &self.parts[..k] {
            x += match p {
                Part::Cable { declared_m, .. } => *declared_m,
                Part::Joint { declared_own_m, .. } => *declared_own_m,
                Part::Pad { .. } => 0.02,
                Part::End(_) => 0.0,
            };
        }
        match &self.parts[k] {
            Part::Cable {
                declared_m,
                length_m,
                ..
            } => x + at_m * declared_m / length_m,
            _ => x,
        }
    }

    /// The line file the comparator is given: the nominal line.
    pub fn line_file(&self) -> String {
        let mut t = String::new();
        let _ = writeln!(
            t,
            "# Independent world, invented data: the line as declared (nominal).\nname = \"{}\"\n\n[stages]",
            self.name
        );
        let last = self
            .parts
            .iter()
            .filter_map(|p| match p {
                Part::Cable { to, .. } => Some(*to),
                _ => None,
            })
            .max()
            .unwrap_or(0);
        for s in 1..=last {
            let _ = writeln!(t, "{} = {}", self.stage_names[s], self.stage_nominal_k[s]);
        }
        for p in &self.parts {
            match p {
                Part::Cable {
                    name,
                    coax,
                    declared_m,
                    from,
                    to,
                    ..
                } => {
                    let _ = writeln!(
                        t,
                        "\n[[element]]\nkind = \"cable\"\nname = \"{name}\"\ncable = \"{}\"\nlength_m = {declared_m:.4}\nfrom = \"{}\"\nto = \"{}\"",
                        coax.kind, self.stage_names[*from], self.stage_names[*to]
                    );
                }
                Part::Joint {
                    name: Some(name),
                    stage,
                    declared_own_m,
                    ..
                } => {
                    let _ = writeln!(
                        t,
                        "\n[[element]]\nkind = \"connector\"\nname = \"{name}\"\nstage = \"{}\"",
                        self.stage_names[*stage]
                    );
                    if *declared_own_m > 0.0 {
                        let _ = writeln!(t, "length_m = {declared_own_m}");
                    }
                }
                Part::Joint { name: None, .. } => {}
                Part::Pad {
                    name, stage, db, ..
                } => {
                    let _ = writeln!(
                        t,
                        "\n[[element]]\nkind = \"attenuator\"\nname = \"{name}\"\nloss_db = {db}\nstage = \"{}\"",
                        self.stage_names[*stage]
                    );
                }
                Part::End(end) => {
                    let load = match end {
                        End::Open { .. } => "\"open\"".to_string(),
                        End::Short { .. } => "\"short\"".to_string(),
                        End::Load {
                            declared_ohm: None, ..
                        } => "\"match\"".to_string(),
                        End::Load {
                            declared_ohm: Some(r),
                            ..
                        } => format!("{r}"),
                    };
                    let _ = writeln!(
                        t,
                        "\n[[element]]\nkind = \"device\"\nname = \"end\"\nload = {load}"
                    );
                }
            }
        }
        t
    }

    /// Temperature at fraction `u` along a cable between stages at `t1` and `t2`: T^2 linear in the
    /// position (steady conduction with k proportional to T).
    fn profile(t1: f64, t2: f64, u: f64) -> f64 {
        (t1 * t1 + (t2 * t2 - t1 * t1) * u).max(0.0).sqrt()
    }

    /// The chain matrix of everything up to the end and the end's load at `f` for `take` (with `fault`).
    fn response(&self, take: &Take, fault: Option<Fault>, f: f64) -> Complex64 {
        let w = 2.0 * PI * f.max(1.0);
        let j = Complex64::new(0.0, 1.0);
        let cold = take.state == State::Cold;
        let temp = |stage: usize| take.stage_k[stage];
        let er_rise = if cold { self.er_rise } else { 0.0 };
        let mut m = Chain::ONE;
        for (k, p) in self.parts.iter().enumerate() {
            let here = fault.filter(|ft| ft.part() == k);
            match p {
                Part::Cable {
                    coax,
                    length_m,
                    from,
                    to,
                    cut_start_m,
                    cut_end_m,
                    ..
                } => {
                    let (t1, t2) = (temp(*from), temp(*to));
                    let run = length_m - cut_start_m - cut_end_m;
                    let n = if from == to { 1 } else { SLICES };
                    // Pieces: (start, end) along the run, with the crush's own impedance over its span.
                    let crush = match here {
                        Some(Fault::Crush {
                            at_m,
                            length_m: lc,
                            ohm,
                            ..
                        }) => Some((at_m - cut_start_m, at_m - cut_start_m + lc, ohm)),
                        _ => None,
                    };
                    for s in 0..n {
                        let (x0, x1) = (run * s as f64 / n as f64, run * (s + 1) as f64 / n as f64);
                        let u = 0.5 * (x0 + x1) / run;
                        let t = Self::profile(t1, t2, u);
                        let shrink = if cold {
                            1.0 - coax.outer.contraction_4k()
                                * self.contraction_scale
                                * cold_share(t)
                        } else {
                            1.0
                        };
                        let mut cuts = vec![x0, x1];
                        if let Some((c0, c1, _)) = crush {
                            for c in [c0, c1] {
                                if c > x0 && c < x1 {
                                    cuts.push(c);
                                }
                            }
                        }
                        cuts.sort_by(|a, b| a.total_cmp(b));
                        for piece in cuts.windows(2) {
                            let mid = 0.5 * (piece[0] + piece[1]);
                            let z = match crush {
                                Some((c0, c1, z)) if mid > c0 && mid < c1 => z,
                                _ => coax.z_ohm,
                            };
                            let l = (piece[1] - piece[0]) * shrink;
                            m = m.times(&coax.section(t, f, z, er_rise, self.ase_ratio, l));
                        }
                    }
                }
                Part::Joint {
                    stage,
                    z_ohm,
                    own_m,
                    fringe_f,
                    recess_warm_m,
                    recess_cold_m,
                    ..
                } => {
                    // A ladder of pi-cells for the mated pair (or the feedthrough's own length), PTFE-filled.
                    let len = if *own_m > 0.0 { *own_m } else { JOINT_M };
                    let tau = len * 2.03f64.sqrt() / C0;
                    let cells = (tau / JOINT_CELL_S).ceil().max(2.0) as usize;
                    let (l, c) = (z_ohm * tau / cells as f64, tau / z_ohm / cells as f64);
                    let half = cells / 2;
                    for cell in 0..cells {
                        if cell == half {
                            // The interface: fringing, the pin's recess (an air-line step of about
                            // 72 ohm, DOMAIN.md sec. 2), and a fault.
                            m = m.times(&Chain::shunt(j * w * fringe_f));
                            let recess = if take.state == State::Cold && *stage > 0 {
                                *recess_cold_m
                            } else {
                                *recess_warm_m
                            };
                            m = m.times(&Chain::series(j * w * 72.0 * recess / C0));
                            match here {
                                Some(Fault::Gap { gap_m, .. }) => {
                                    let cg = gap_capacitance(A_086, gap_m);
                                    m = m.times(&Chain::series(1.0 / (j * w * cg)));
                                }
                                Some(Fault::PartialGap { gap_m, ohm, .. }) => {
                                    let cg = gap_capacitance(A_086, gap_m);
                                    m = m.times(&Chain::series(ohm / (1.0 + j * w * ohm * cg)));
                                }
                                Some(Fault::Contact { ohm, .. }) => {
                                    m = m.times(&Chain::series(Complex64::new(ohm, 0.0)));
                                }
                                Some(Fault::Open { .. }) => {
                                    // Nothing passes: the joint is an open with a little fringing.
                                    let zl = 1.0 / (j * w * 30e-15);
                                    return self.port(take, f, m.input(Some(zl)));
                                }
                                _ => {}
                            }
                        }
                        m = m
                            .times(&Chain::shunt(j * w * c / 2.0))
                            .times(&Chain::series(j * w * l))
                            .times(&Chain::shunt(j * w * c / 2.0));
                    }
                }
                Part::Pad {
                    db,
                    err_warm,
                    err_cold,
                    port_c_f,
                    body_m,
                    ..
                } => {
                    let err = if cold { err_cold } else { err_warm };
                    let body = Coax {
                        kind: "pad body",
                        a: A_086,
                        z_ohm: 50.0,
                        er_room: 2.03,
                        tan_d: 2e-4,
                        inner: Metal::Stainless,
                        outer: Metal::Stainless,
                        outer_factor: 1.0,
                        rough_m: 0.0,
                    };
                    let t = temp(*self.stage_of(k));
                    let half = body.section(t, f, 50.0, 0.0, self.ase_ratio, body_m / 2.0);
                    m = m.times(&half).times(&Chain::shunt(j * w * port_c_f));
                    if *db > 0.0 {
                        m = m.times(&pad_chain(*db, *err));
                    }
                    m = m.times(&Chain::shunt(j * w * port_c_f)).times(&half);
                }
                Part::End(end) => {
                    let zl = match *end {
                        End::Open { c_f } => 1.0 / (j * w * c_f),
                        End::Short { l_h } => j * w * l_h,
                        End::Load {
                            warm_ohm,
                            cold_ohm,
                            l_h,
                            ..
                        } => Complex64::new(if cold { cold_ohm } else { warm_ohm }, w * l_h),
                    };
                    return self.port(take, f, m.input(Some(zl)));
                }
            }
        }
        self.port(take, f, m.input(Some(Complex64::new(Z_REF, 0.0))))
    }

    fn stage_of(&self, k: usize) -> &usize {
        match &self.parts[k] {
            Part::Joint { stage, .. } | Part::Pad { stage, .. } => stage,
            Part::Cable { to, .. } => to,
            Part::End(_) => &0,
        }
    }

    /// What the analyser reads for an input impedance `zin`: the residual error terms of a calibrated
    /// port (directivity, source match, tracking ripple and drift).
    fn port(&self, take: &Take, f: f64, zin: Complex64) -> Complex64 {
        let g = (zin - Z_REF) / (zin + Z_REF);
        let turn =
            |c: Complex64, ns: f64| c * Complex64::from_polar(1.0, -2.0 * PI * f * ns * 1e-9);
        let e00 = turn(self.directivity, 0.7);
        let e11 = turn(self.source_match, 1.3);
        let ripple =
            1.0 + (10f64.powf(self.ripple_db / 20.0) - 1.0) * (2.0 * PI * f * 2.1e-9).cos();
        let drift = Complex64::from_polar(
            10f64.powf(take.drift_db / 20.0),
            take.drift_deg.to_radians(),
        );
        e00 + ripple * drift * g / (1.0 - e11 * g)
    }

    /// One sweep, with noise.
    pub fn sweep(&self, take: &Take, fault: Option<Fault>) -> Network {
        let mut rng = Rng::new(take.noise_seed);
        let sigma = 10f64.powf(take.noise_db / 20.0) / 2f64.sqrt();
        let s: Vec<Complex64> = self
            .freqs_hz
            .iter()
            .map(|&f| {
                let (a, b) = rng.normal_pair();
                self.response(take, fault, f) + Complex64::new(a * sigma, b * sigma)
            })
            .collect();
        Network::one_port(self.freqs_hz.clone(), s, Z_REF)
    }

    /// A fault's echo over the band-pass trace's noise, dB: the current take without noise, with and
    /// without the fault, the windowed difference's largest band-pass response over the whole record (an
    /// inverse FFT zero-padded to 8 times the points), over sigma sqrt(sum w^2) / sum w.
    pub fn fault_level_db(&self, take: &Take, fault: Fault) -> f64 {
        let with: Vec<Complex64> = self
            .freqs_hz
            .iter()
            .map(|&f| self.response(take, Some(fault), f))
            .collect();
        let without: Vec<Complex64> = self
            .freqs_hz
            .iter()
            .map(|&f| self.response(take, None, f))
            .collect();
        let n = self.freqs_hz.len();
        let w = AnalysisConfig::default().window.coefficients(n);
        let sw: f64 = w.iter().sum();
        let sw2: f64 = w.iter().map(|x| x * x).sum();
        // Zero-padded to 8 times: 8 steps a resolution cell over the whole record.
        let m = 8 * n;
        let mut buf: Vec<Complex64> = (0..m)
            .map(|i| {
                if i < n {
                    (with[i] - without[i]) * w[i]
                } else {
                    Complex64::new(0.0, 0.0)
                }
            })
            .collect();
        rustfft::FftPlanner::new()
            .plan_fft_inverse(m)
            .process(&mut buf);
        let best = buf.iter().map(|v| v.norm()).fold(0.0, f64::max) / sw;
        let noise = 10f64.powf(take.noise_db / 20.0) * sw2.sqrt() / sw;
        20.0 * (best / noise).log10()
    }
}

/// What one comparison gave, reduced to what is scored.
#[derive(Debug, Clone)]
pub struct Outcome {
    pub error: Option<String>,
    /// Findings above info: "severity kind at X m (element)".
    pub alarms: Vec<String>,
    /// Rank 1: element, nearest connector, distance, kind, severity.
    pub top: Option<(String, Option<String>, f64, &'static str, Severity)>,
    pub states: String,
}

impl Outcome {
    fn of(r: coldtrace::Result<CompareReport>) -> Outcome {
        match r {
            Err(e) => Outcome {
                error: Some(e.to_string()),
                alarms: Vec::new(),
                top: None,
                states: String::new(),
            },
            Ok(r) => Outcome {
                error: None,
                alarms: r
                    .findings
                    .iter()
                    .filter(|f| f.severity > Severity::Info)
                    .map(|f| {
                        format!(
                            "{} {} at {:.3} m ({})",
                            f.severity.name(),
                            f.kind.name(),
                            f.place.distance_m,
                            f.place.element
                        )
                    })
                    .collect(),
                top: r.findings.iter().min_by_key(|f| f.rank).map(|f| {
                    (
                        f.place.element.clone(),
                        f.place.nearest_connector.clone(),
                        f.place.distance_m,
                        f.kind.name(),
                        f.severity,
                    )
                }),
                states: format!("{}->{}", r.states.baseline, r.states.current),
            },
        }
    }
}

/// A scene run through the comparator, states inferred and given.
#[derive(Debug, Clone)]
pub struct Judged {
    pub scene: Scene,
    pub inferred: Outcome,
    pub given: Outcome,
    /// For a fault: its level over the noise, dB.
    pub level_db: Option<f64>,
}

/// Run `scene` through `coldtrace::compare` (its public API) with the nominal line file.
pub fn judge(scene: Scene) -> Judged {
    let line = coldtrace::line::file::parse(&scene.line_text, Path::new("independent.toml"))
        .unwrap_or_else(|e| panic!("scene {} line file: {e}\n{}", scene.seed, scene.line_text));
    let (b, c) = scene.sweeps();
    let cfg = AnalysisConfig::default();
    let run = |given: bool| {
        Outcome::of(compare_networks(&PairRequest {
            baseline: ("baseline", &b),
            current: ("current", &c),
            line: LineModel::Line(&line),
            baseline_state: given.then_some(scene.baseline.state),
            current_state: given.then_some(scene.current.state),
            analysis: &cfg,
        }))
    };
    let inferred = run(false);
    let given = run(true);
    let level_db = scene
        .fault
        .map(|f| scene.world.fault_level_db(&scene.current, f));
    Judged {
        scene,
        inferred,
        given,
        level_db,
    }
}

impl Judged {
    /// Whether the rank-1 finding of `o` lies at the fault's element: it names it, or (a joint's fault)
    /// names it as its nearest connector.
    pub fn right(&self, o: &Outcome) -> bool {
        let (Some(f), Some(top)) = (self.scene.fault, &o.top) else {
            return false;
        };
        let name = self.scene.world.part_name(f.part());
        match f {
            Fault::Crush { .. } => top.0 == name,
            _ => top.0 == name || top.1.as_deref() == Some(name.as_str()),
        }
    }

    /// One line describing the case and what `o` made of it.
    pub fn describe(&self, o: &Outcome) -> String {
        let s = &self.scene;
        let mut t = format!("`{}:{}` {}", s.case.name(), s.seed, s.world.parts.len());
        t = format!(
            "{t} parts, {:.2}-{:.2} GHz",
            s.world.freqs_hz[0] / 1e9,
            s.world.freqs_hz.last().unwrap() / 1e9
        );
        if let Some(f) = s.fault {
            let _ = write!(
                t,
                "; truth {} at {} ({:.3} m nominal), {:.1} dB over the noise",
                f.kind(),
                s.world.part_name(f.part()),
                s.world.nominal_position_m(
                    f.part(),
                    match f {
                        Fault::Crush { at_m, .. } => at_m,
                        _ => 0.0,
                    }
                ),
                self.level_db.unwrap_or(f64::NAN)
            );
        }
        let _ = write!(t, "; states {}", o.states);
        if let Some(e) = &o.error {
            let _ = write!(t, "; error: {e}");
        }
        match &o.top {
            Some(top) => {
                let _ = write!(
                    t,
                    "; rank 1: {} {} in {} (nearest {}) at {:.3} m",
                    top.4.name(),
                    top.3,
                    top.0,
                    top.1.as_deref().unwrap_or("-"),
                    top.2
                );
            }
            None => t.push_str("; no finding"),
        }
        if !o.alarms.is_empty() {
            let _ = write!(t, "; above info: {}", o.alarms.join(", "));
        }
        t
    }
}
