//! The forward simulator: an exact ABCD cascade of the chain, warm or cold, with faults and noise.
//!
//! Conventions: e^{+j omega t}; each cable is cut into temperature slices ([`super::position::slices`]),
//! each slice a uniform line of physical length (as-built length x (1 - outer-conductor contraction));
//! connectors are short uniform sections; attenuators are matched two-ports |S21| = 10^(-A/20) with the
//! delay of their body; the first device terminates the chain (a chain without a device ends in a match).
//! S-parameters refer to the line's `impedance_ohm`. In two-port mode the device is replaced by a matched
//! port 2 at its plane; an `open` or `short` fault there becomes a 1e12 ohm series resistance or a
//! 1e12 S shunt conductance so the two-port stays defined. Noise: complex Gaussian, variance
//! 10^(noise_db/10) per point (relative to |S| = 1), added to every parameter, seeded. A
//! [`Perturbation`] (neutral by default) moves the simulated physics away from the nominal model the
//! analysis uses; see [`super::perturb`].

use super::abcd::{reflection, Abcd};
use super::chain::{ElementKind, Line, Load, State};
use super::fault::{Fault, FaultKind};
use super::materials::C0;
use super::perturb::Perturbation;
use super::physics::SectionCoeffs;
use super::position::slices;
use super::rng::Rng;
use super::LineError;
use crate::limits::{short_number, MAX_FREQUENCY_HZ, MAX_SIMULATION_WORK, MAX_SWEEP_POINTS};
use crate::network::Network;
use num_complex::Complex64;
use std::f64::consts::PI;

/// What to simulate.
#[derive(Debug, Clone, PartialEq)]
pub struct SimConfig {
    pub state: State,
    /// Frequencies, Hz, strictly increasing.
    pub freqs_hz: Vec<f64>,
    /// Noise power per point relative to |S| = 1, dB (None: no noise).
    pub noise_db: Option<f64>,
    pub seed: u64,
    pub faults: Vec<Fault>,
    /// Write S21 too (2-port, device end as matched port 2).
    pub two_port: bool,
    /// How the simulated physics departs from the nominal model (default: not at all).
    pub perturbation: Perturbation,
}

impl SimConfig {
    /// A linear grid of `points` from `start_hz` to `stop_hz`.
    pub fn linear(state: State, start_hz: f64, stop_hz: f64, points: usize) -> SimConfig {
        let freqs_hz = if points == 1 {
            vec![start_hz]
        } else {
            (0..points)
                .map(|i| start_hz + (stop_hz - start_hz) * i as f64 / (points - 1) as f64)
                .collect()
        };
        SimConfig {
            state,
            freqs_hz,
            noise_db: None,
            seed: 0,
            faults: Vec::new(),
            two_port: false,
            perturbation: Perturbation::NEUTRAL,
        }
    }
}

/// One frequency-independent block of the cascade.
#[derive(Debug, Clone)]
enum Block {
    /// A uniform section (its slice's coefficients); `length_m` is as built.
    Line {
        co: SectionCoeffs,
        length_m: f64,
    },
    SeriesC(f64),
    SeriesR(f64),
    SeriesL(f64),
    /// A series resistance `r` in parallel with a capacitance `c` (a gap bridged by a poor contact).
    SeriesRc {
        r: f64,
        c: f64,
    },
    ShuntC(f64),
    ShuntG(f64),
    Atten {
        gain: f64,
        delay_s: f64,
        z0: f64,
    },
    End(Load),
}

impl Block {
    /// The block's chain matrix at `f` (`sqrt_f` = sqrt(f), computed once per frequency).
    fn abcd(&self, f: f64, sqrt_f: f64) -> Abcd {
        let w = 2.0 * PI * f;
        let j = Complex64::new(0.0, 1.0);
        match *self {
            Block::Line { ref co, length_m } => {
                let p = co.propagation(f, sqrt_f);
                Abcd::line_parts(p.z0, p.y0, p.gamma, length_m * co.length_scale)
            }
            Block::SeriesC(c) => {
                if w == 0.0 {
                    Abcd::series(Complex64::new(1e15, 0.0))
                } else {
                    Abcd::series(1.0 / (j * w * c))
                }
            }
            Block::SeriesR(r) => Abcd::series(Complex64::new(r, 0.0)),
            Block::SeriesL(l) => Abcd::series(j * w * l),
            // Z = R || 1/(j w C) = R / (1 + j w R C); R at DC.
            Block::SeriesRc { r, c } => Abcd::series(r / (1.0 + j * w * r * c)),
            Block::ShuntC(c) => Abcd::shunt(j * w * c),
            Block::ShuntG(g) => Abcd::shunt(Complex64::new(g, 0.0)),
            Block::Atten { gain, delay_s, z0 } => {
                let t = gain * Complex64::from_polar(1.0, -w * delay_s);
                let zero = Complex64::new(0.0, 0.0);
                Abcd::from_s([zero, t, t, zero], z0)
            }
            Block::End(_) => Abcd::IDENTITY,
        }
    }
}

fn end_impedance(load: Load, z_ref: f64) -> Option<Complex64> {
    match load {
        Load::Match => Some(Complex64::new(z_ref, 0.0)),
        Load::Ohms(r) => Some(Complex64::new(r, 0.0)),
        Load::Reflection(g) if g < 1.0 => Some(Complex64::new(z_ref * (1.0 + g) / (1.0 - g), 0.0)),
        Load::Open | Load::Short | Load::Reflection(_) => None,
    }
}

/// Build the cascade's blocks for `line` in `state` with resolved faults.
fn blocks(
    line: &Line,
    state: State,
    faults: &[(usize, f64, Fault)],
    two_port: bool,
    perturbation: &Perturbation,
) -> Vec<Block> {
    let mut out = Vec::new();
    for (i, e) in line.visible().iter().enumerate() {
        let mut here: Vec<&(usize, f64, Fault)> = faults.iter().filter(|f| f.0 == i).collect();
        here.sort_by(|a, b| a.1.total_cmp(&b.1));
        match &e.kind {
            ElementKind::Cable { cable: k } | ElementKind::Connector { section: k, .. } => {
                // Event points: fault positions (and crush ends); impedance overrides over intervals.
                let mut points: Vec<f64> = vec![0.0, e.length_m];
                for (_, off, f) in &here {
                    points.push(*off);
                    if let FaultKind::Crush { length_m, .. } = f.kind {
                        points.push((off + length_m).min(e.length_m));
                    }
                }
                points.sort_by(|a, b| a.total_cmp(b));
                points.dedup_by(|b, a| (*b - *a).abs() < 1e-12);
                for w in points.windows(2) {
                    let (x0, x1) = (w[0], w[1]);
                    lumped_at(&mut out, &here, x0, two_port);
                    // The impedance over (x0, x1): the last step before it, then any crush covering it.
                    let mut z: Option<f64> = None;
                    for (_, off, f) in &here {
                        match f.kind {
                            FaultKind::Step { ohm } if *off <= x0 + 1e-12 => z = Some(ohm),
                            FaultKind::Crush { ohm, length_m }
                                if *off <= x0 + 1e-12 && off + length_m >= x1 - 1e-12 =>
                            {
                                z = Some(ohm)
                            }
                            _ => {}
                        }
                    }
                    let kind = match z {
                        Some(z) => k.with_impedance(z),
                        None => k.clone(),
                    };
                    for s in slices(e, state, x0, x1) {
                        out.push(Block::Line {
                            co: perturbation.section(&kind, s.t_k, line.ptfe_model).coeffs(),
                            length_m: s.length_m,
                        });
                    }
                }
                lumped_at(&mut out, &here, e.length_m, two_port);
            }
            ElementKind::Attenuator {
                loss_db,
                impedance_ohm,
                er,
            } => {
                let delay = e.length_m * er.sqrt() / C0;
                // Faults inside an attenuator sit at their offset; the body splits around them.
                let mut x = 0.0;
                let mut offs: Vec<f64> = here.iter().map(|f| f.1).collect();
                offs.push(e.length_m);
                offs.dedup_by(|b, a| (*b - *a).abs() < 1e-12);
                for o in offs {
                    let frac = if e.length_m > 0.0 {
                        (o - x) / e.length_m
                    } else {
                        1.0
                    };
                    let part_db = loss_db * frac;
                    out.push(Block::Atten {
                        gain: 10f64.powf(-part_db / 20.0),
                        delay_s: delay * frac,
                        z0: *impedance_ohm,
                    });
                    lumped_at(&mut out, &here, o, two_port);
                    x = o;
                }
            }
            ElementKind::Device { load } => {
                lumped_at(&mut out, &here, 0.0, two_port);
                out.push(Block::End(*load));
                return out;
            }
        }
    }
    out.push(Block::End(Load::Match));
    out
}

fn lumped_at(out: &mut Vec<Block>, here: &[&(usize, f64, Fault)], x: f64, two_port: bool) {
    for (_, off, f) in here {
        if (off - x).abs() > 1e-12 {
            continue;
        }
        match f.kind {
            FaultKind::Gap { farad } => out.push(Block::SeriesC(farad)),
            FaultKind::Contact { ohm } => out.push(Block::SeriesR(ohm)),
            FaultKind::PartialGap { farad, ohm } => out.push(Block::SeriesRc { r: ohm, c: farad }),
            FaultKind::Inductance { henry } => out.push(Block::SeriesL(henry)),
            FaultKind::Shunt { farad } => out.push(Block::ShuntC(farad)),
            FaultKind::Open if two_port => out.push(Block::SeriesR(1e12)),
            FaultKind::Short if two_port => out.push(Block::ShuntG(1e12)),
            FaultKind::Open => out.push(Block::End(Load::Open)),
            FaultKind::Short => out.push(Block::End(Load::Short)),
            FaultKind::Crush { .. } | FaultKind::Step { .. } => {}
        }
    }
}

/// Simulate `line` as configured: S11 (or the 2-port with S21) on `config.freqs_hz`.
pub fn simulate(line: &Line, config: &SimConfig) -> Result<Network, LineError> {
    if config.freqs_hz.is_empty() {
        return Err(LineError::Invalid(
            "no frequencies to simulate: give --points 1 or more".into(),
        ));
    }
    if config.freqs_hz.iter().any(|f| !f.is_finite() || *f < 0.0)
        || config.freqs_hz.windows(2).any(|w| w[1] <= w[0])
    {
        return Err(LineError::Invalid(
            "frequencies must be >= 0 and strictly increasing: check --start and --stop".into(),
        ));
    }
    if config.freqs_hz.len() > MAX_SWEEP_POINTS {
        return Err(LineError::Invalid(format!(
            "{} frequencies asked, above the limit of {MAX_SWEEP_POINTS} (docs/limits.md): give --points \
             {MAX_SWEEP_POINTS} or fewer",
            config.freqs_hz.len()
        )));
    }
    if let Some(&f) = config.freqs_hz.last().filter(|&&f| f > MAX_FREQUENCY_HZ) {
        return Err(LineError::Invalid(format!(
            "{f} Hz is above the simulator's limit of {MAX_FREQUENCY_HZ} Hz (docs/limits.md), beyond which \
             its material data mean nothing: give a lower --stop"
        )));
    }
    if line.visible().is_empty() {
        return Err(LineError::Invalid(format!(
            "line '{}' has no elements to simulate",
            line.name
        )));
    }
    config.perturbation.check()?;
    let mut resolved = Vec::new();
    for f in &config.faults {
        let mut f = f.clone();
        let (idx, off) = f.resolve(line)?;
        resolved.push((idx, off, f));
    }
    let blocks = blocks(
        line,
        config.state,
        &resolved,
        config.two_port,
        &config.perturbation,
    );
    let work = blocks.len().saturating_mul(config.freqs_hz.len());
    if work > MAX_SIMULATION_WORK {
        return Err(LineError::Invalid(format!(
            "simulating {} sections (cables are cut into temperature slices) at {} frequencies is {} \
             section-frequencies, above the limit of {} (docs/limits.md; minutes of work): give fewer --points",
            blocks.len(),
            config.freqs_hz.len(),
            short_number(work as f64),
            short_number(MAX_SIMULATION_WORK as f64)
        )));
    }
    let z_ref = line.impedance_ohm;
    let ports = if config.two_port { 2 } else { 1 };
    let mut s = Vec::with_capacity(config.freqs_hz.len() * ports * ports);
    for &f in &config.freqs_hz {
        let sqrt_f = f.sqrt();
        let mut m = Abcd::IDENTITY;
        let mut end = Load::Match;
        for b in &blocks {
            if let Block::End(load) = b {
                end = *load;
                break;
            }
            m = m.then(&b.abcd(f, sqrt_f));
        }
        if config.two_port {
            let [s11, s12, s21, s22] = m.to_s(z_ref);
            s.extend_from_slice(&[s11, s12, s21, s22]);
        } else {
            let zin = match (end_impedance(end, z_ref), end) {
                (Some(zl), _) => m.input_impedance(zl),
                (None, Load::Open | Load::Reflection(_)) => m.input_impedance_open(),
                _ => m.input_impedance_short(),
            };
            let g = if zin.is_finite() {
                reflection(zin, z_ref)
            } else {
                Complex64::new(1.0, 0.0)
            };
            s.push(g);
        }
    }
    if let Some(db) = config.noise_db {
        let sigma = 10f64.powf(db / 20.0) / 2f64.sqrt();
        let mut rng = Rng::new(config.seed);
        for v in &mut s {
            let (a, b) = rng.normal_pair();
            *v += Complex64::new(a * sigma, b * sigma);
        }
    }
    if let Some(k) = s.iter().position(|v| !v.is_finite()) {
        return Err(LineError::Invalid(format!(
            "the simulated sweep is not finite at {} Hz{}; check the line file's values and the faults",
            config.freqs_hz[k / (ports * ports)],
            if config.noise_db.is_some() {
                " (or --noise-db, which is relative to |S| = 1: -90 is typical)"
            } else {
                ""
            }
        )));
    }
    Ok(Network {
        ports,
        freqs_hz: config.freqs_hz.clone(),
        s,
        reference_ohm: vec![z_ref; ports],
        noise: Vec::new(),
    })
}
