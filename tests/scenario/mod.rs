//! A seeded generator of mismatch scenarios: a cryostat line as the analysis is told it is (the nominal
//! line file) and as it really is (the truth), two simulated sweeps of the truth, and what the comparator
//! should find. Shared by `tests/compare_scenarios.rs` (`mod scenario;`) and `examples/accuracy.rs`
//! (`#[path = "../tests/scenario/mod.rs"] mod scenario;`).
//!
//! The truth departs from the nominal line the way a real line departs from its drawing: cable lengths a few
//! millimetres off the declared ones, connectors whose impedance and shunt capacitance the file does not
//! describe, and physics that is not the model's (`line::Perturbation`: the cold permittivity change, the
//! thermal contraction and the conductors' surface resistance). Everything follows from one seed; a
//! scenario is rebuilt exactly by `Scenario::generate(seed, case)`.
//!
//! Conventions: SI inside (Hz, m, ohm, F, K), dB at the edges; positions are one-way, as-built metres from
//! the reference plane in the **nominal** line's coordinates (see [`FaultTruth::position_m`]); noise levels
//! are the simulator's (power per point relative to |S| = 1, dB).
//!
//! A fault's level against the noise (`FaultTruth::level_db`, which decides whether it counts as visible) is
//! its echo as the port sees it: the truth simulated without noise in the current state with and without the
//! fault, the band-pass trace of the difference (the comparator's default window, normalised by its sum) at
//! its largest within [`SEEN_SPAN_CELLS`] resolution cells of the fault's round-trip delay on the truth, over
//! the band-pass trace's noise RMS, sigma_point sqrt(sum w^2) / sum w with sigma_point = 10^(noise_db/20)
//! and w the comparator's default window over the sweep's points (a trace normalised by the window sum, so a
//! lone reflection rho reads |rho|: docs/method.md). It carries the truth's own loss, mismatches and
//! context (a fault beside a device also moves the device's echo, within the same few cells).
//!
//! The lumped estimate (`FaultTruth::lumped_level_db`, the measure used before) is kept for comparison:
//! - the fault's local reflection |rho| at the band centre from its lumped model between two lines of the
//!   line's impedance (series Z: |Z / (2 Z0 + Z)|; a crush: one section of impedance Z1 and the cable's room
//!   permittivity, |G1 (1 - e^{-2j theta})| / |1 - G1^2 e^{-2j theta}|, G1 = (Z1 - Z0)/(Z1 + Z0), circuit and
//!   transmission-line theory);
//! - times the nominal model's round-trip loss to its place in the current state at the band centre
//!   (`line::visibility` on the nominal line; inside a cable, interpolated linearly between the cable's ends;
//!   the perturbed surface resistance and the connectors' mismatches are ignored);
//! - against the same noise RMS: `lumped_level_db = 20 log10(|rho| 10^(-loss_db/20) / noise_rms)`.
//!
//! The scoring (comparisons, figures, tables) is in `score.rs`.

#![allow(dead_code)] // each user (a test, an example) uses part of the module

pub mod score;

use coldtrace::compare::job::{compare_networks, LineModel, PairRequest};
use coldtrace::compare::{AnalysisConfig, CompareReport};
use coldtrace::line::rng::Rng;
use coldtrace::line::{simulate, ElementKind, Fault, Line, Load, Perturbation, SimConfig, State};
use coldtrace::Network;
use num_complex::Complex64;
use std::fmt::Write as _;
use std::path::Path;

// ---------------------------------------------------------------------------------------------------------
// Ranges and shares. Each is the project's choice of a plausible spread (common practice, no source) unless
// a source is named beside it.

/// Cable count per line (common practice, no source).
pub const CABLES: (usize, usize) = (2, 8);
/// Share of cables of a user kind (`[cables.NAME]`), and such a kind's velocity factor, stated loss at
/// 1 GHz (dB/m) and conductors (common practice, no source: flexible and semi-rigid lines of the trade).
pub const USER_KIND_SHARE: f64 = 0.15;
pub const USER_VF: (f64, f64) = (0.69, 0.84);
pub const USER_LOSS_DB_PER_M_1GHZ: (f64, f64) = (0.3, 2.0);
pub const USER_CONDUCTORS: [&str; 3] = ["copper", "cupronickel", "stainless304"];
/// Reflection of a far end from which a fault at the joint in front of it is counted apart: the end's
/// echo and the fault's share one resolution cell (the comparator's own `COMPONENT_REFLECTION`, 0.1).
pub const END_REFLECTION: f64 = 0.1;
/// Share of lines with a connector between the last cable and the device (common practice, no source).
pub const END_CONNECTOR_SHARE: f64 = 0.5;
/// Far-end devices: a resistive load (20 or 120 ohm, or any in this range) or a stated return loss, dB
/// (common practice, no source).
pub const DEVICE_OHM: (f64, f64) = (10.0, 200.0);
pub const DEVICE_RETURN_LOSS_DB: (f64, f64) = (3.0, 20.0);
/// Share of fault cases whose baseline is warm (the rest cold) (common practice, no source).
pub const WARM_BASELINE_SHARE: f64 = 0.5;
/// Weights of the fault kinds: pin gap, pin gap with a bridging contact, contact, crush, open (common
/// practice, no source).
pub const FAULT_WEIGHTS: [(TrueKind, u32); 5] = [
    (TrueKind::PinGap, 5),
    (TrueKind::PartialGap, 4),
    (TrueKind::Contact, 4),
    (TrueKind::Crush, 5),
    (TrueKind::Open, 2),
];
/// Share of opens placed inside a cable (a break) rather than at a connector (common practice, no source).
pub const OPEN_IN_CABLE_SHARE: f64 = 0.5;
/// Half-width of the comparator's main lobe in resolution cells (-6 dB widths), as its detector uses it
/// (`compare::analysis::lobe_shape`: the Kaiser beta 9 first null at 3.03 bins against 2.34 bins at -6 dB,
/// Harris, Proc. IEEE 66(1), 1978, from memory).
pub const MAIN_LOBE_CELLS: f64 = 1.3;
/// Declared (nominal) cable length, m: runs between stages of 0.15-0.35 m and room cables of 1-3 m (Krinner
/// et al., EPJ Quantum Technology 6:2, 2019), widened at both ends.
pub const CABLE_LENGTH_M: (f64, f64) = (0.1, 1.5);
/// Largest difference between a cable's declared and as-built length, m (common practice, no source: a
/// length taken from a drawing or a tape against a cut and bent cable).
pub const LENGTH_ERROR_M: f64 = 8e-3;
/// Impedance of a real connector pair, ohm, which the nominal file does not state (its default is 51 ohm;
/// common practice, no source: SMA-class pairs measure within a few ohm of 50).
pub const CONNECTOR_Z_OHM: (f64, f64) = (48.0, 53.0);
/// Shunt capacitance of a real connector pair beyond its section, F (common practice, no source).
pub const CONNECTOR_SHUNT_F: (f64, f64) = (0.0, 15e-15);
/// Most attenuators per line and their loss, dB (Krinner et al. 2019 list 0-20 dB per stage).
pub const ATTENUATORS: usize = 2;
pub const ATTENUATOR_DB: (u32, u32) = (0, 20);
/// Stage temperatures, K: ~40-50 K, ~3-4 K, still ~0.8-1.2 K, mixing chamber ~10-20 mK (Krinner et al.
/// 2019). Room is the line file's built-in 295 K.
pub const STAGES: [(&str, f64, f64); 4] = [
    ("k50", 40.0, 50.0),
    ("k4", 3.0, 4.0),
    ("still", 0.8, 1.2),
    ("mxc", 0.010, 0.020),
];
/// Physics perturbation of the truth: the cold permittivity change scaled by 0.5-2 (the nominal PTFE model
/// sits between a free and a filled bound that differ by more than that: docs/materials.md), the
/// contraction by 1 +/- 0.2 and the surface resistance by 1 +/- 0.3 (the material data's spread, from
/// memory: alloy composition, RRR and surface finish).
pub const PERMITTIVITY_CHANGE_SCALE: (f64, f64) = (0.5, 2.0);
pub const CONTRACTION_SPREAD: f64 = 0.2;
pub const SURFACE_RESISTANCE_SPREAD: f64 = 0.3;
/// Noise power per point, dB (common practice, no source: a network analyzer at 10 Hz-1 kHz IF bandwidth).
pub const NOISE_DB: (f64, f64) = (-100.0, -80.0);
/// Point counts offered; the generator keeps those whose alias-free range holds the line (common practice,
/// no source).
pub const POINTS: [usize; 5] = [1601, 2001, 2401, 3201, 4001];
/// Share of the alias-free round trip the visible line may use (our choice: room for the far echo's lobe).
pub const ALIAS_MARGIN: f64 = 0.8;
/// Bands (start, stop Hz) and their weights: mostly the usual 0.5-10 GHz, sometimes wider or narrower
/// (common practice, no source).
pub const BANDS: [(f64, f64, u32); 5] = [
    (0.5e9, 10e9, 5),
    (10e6, 20e9, 2),
    (0.3e9, 8.5e9, 1),
    (1e9, 18e9, 1),
    (0.1e9, 6e9, 1),
];
/// Fault sizes: pin gaps 5-50 fF (wide gaps: 0.1 mm on a 0.086-in pin is about 55 fF by Kirchhoff's disc
/// formula, `line::fault::gap_capacitance`; in series on 50 ohm they reflect |rho| > 0.85 at 5 GHz, circuit
/// theory), a bridging partial contact 20-500 ohm, contacts 0.5-10 ohm, crushes to 35-45 ohm over 5-10 mm
/// (common practice, no source).
pub const GAP_F: (f64, f64) = (5e-15, 50e-15);
pub const PARTIAL_CONTACT_OHM: (f64, f64) = (20.0, 500.0);
pub const CONTACT_OHM: (f64, f64) = (0.5, 10.0);
pub const CRUSH_OHM: (f64, f64) = (35.0, 45.0);
pub const CRUSH_M: (f64, f64) = (5e-3, 10e-3);
/// Half-width of the span around a fault's delay over which its seen echo is looked for, resolution cells
/// (1/bandwidth): the cold physics' delay error and the window's main lobe.
pub const SEEN_SPAN_CELLS: f64 = 4.0;
/// Time steps per resolution cell in that search.
pub const SEEN_STEPS_PER_CELL: f64 = 8.0;

/// Level above the noise floor from which a fault must be found and ranked first, dB (the project's goal).
pub const VISIBLE_LEVEL_DB: f64 = 10.0;

// ---------------------------------------------------------------------------------------------------------

/// Which comparison a scenario is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Case {
    /// Warm baseline -> cold current, nothing wrong.
    Healthy,
    /// Cold -> cold, nothing wrong, another noise seed.
    Repeat,
    /// One fault in the current (cold) sweep only.
    Fault,
}

impl Case {
    pub fn name(self) -> &'static str {
        match self {
            Case::Healthy => "healthy",
            Case::Repeat => "repeat",
            Case::Fault => "fault",
        }
    }

    pub fn parse(s: &str) -> Option<Case> {
        match s {
            "healthy" => Some(Case::Healthy),
            "repeat" => Some(Case::Repeat),
            "fault" => Some(Case::Fault),
            _ => None,
        }
    }

    fn tag(self) -> u64 {
        match self {
            Case::Healthy => 0x4845_414c,
            Case::Repeat => 0x5245_5045,
            Case::Fault => 0x4641_554c,
        }
    }
}

/// The kind of a true fault.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum TrueKind {
    PinGap,
    PartialGap,
    Contact,
    Crush,
    Open,
}

impl TrueKind {
    pub fn name(self) -> &'static str {
        match self {
            TrueKind::PinGap => "pin-gap",
            TrueKind::PartialGap => "pin-gap + contact",
            TrueKind::Contact => "contact",
            TrueKind::Crush => "crush",
            TrueKind::Open => "open",
        }
    }
}

/// The sweep grid and noise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Band {
    pub start_hz: f64,
    pub stop_hz: f64,
    pub points: usize,
    pub noise_db: f64,
}

impl Band {
    pub fn freqs(&self) -> Vec<f64> {
        SimConfig::linear(State::Cold, self.start_hz, self.stop_hz, self.points).freqs_hz
    }

    pub fn centre_hz(&self) -> f64 {
        0.5 * (self.start_hz + self.stop_hz)
    }

    /// Noise RMS of the band-pass trace (normalised by the window sum) for the comparator's window.
    pub fn trace_noise_rms(&self) -> f64 {
        let w = AnalysisConfig::default().window.coefficients(self.points);
        let s1: f64 = w.iter().sum();
        let s2: f64 = w.iter().map(|x| x * x).sum();
        10f64.powf(self.noise_db / 20.0) * s2.sqrt() / s1
    }
}

/// What is wrong, where, and how well a sweep can see it.
#[derive(Debug, Clone, PartialEq)]
pub struct FaultTruth {
    pub kind: TrueKind,
    /// The simulator's fault specification on the truth line.
    pub spec: String,
    /// The element a finding should name: the connector for a fault at a connector, else the cable.
    pub element: String,
    pub at_connector: bool,
    /// Position in the nominal line's as-built metres: a connector's nominal centre, or for a fault inside
    /// a cable (a crush: its centre) the nominal start of the cable plus the true offset scaled by nominal
    /// over true length (where an analysis that aligns on the connectors would put it).
    pub position_m: f64,
    /// Local |rho| at the band centre and the nominal round-trip loss to it (dB), as in the module
    /// documentation (the lumped estimate).
    pub local_rho: f64,
    pub loss_db: f64,
    /// The lumped estimate of the level over the noise floor (module documentation), dB.
    pub lumped_level_db: f64,
    /// The level over the noise floor of the fault's echo as the port sees it (`seen_level_db`), dB: what
    /// decides whether the fault counts as visible.
    pub level_db: f64,
}

impl FaultTruth {
    pub fn visible(&self) -> bool {
        self.level_db >= VISIBLE_LEVEL_DB
    }
}

/// One generated scenario.
#[derive(Debug, Clone)]
pub struct Scenario {
    pub seed: u64,
    pub case: Case,
    /// Line-file text of what the analysis is told, and of the line as built.
    pub nominal_text: String,
    pub truth_text: String,
    pub nominal: Line,
    pub truth: Line,
    pub perturbation: Perturbation,
    /// Connector shunt capacitances of the truth, as simulator fault specs (in both sweeps).
    pub parasitics: Vec<String>,
    /// As-built minus declared length of each cable, m.
    pub length_errors_m: Vec<f64>,
    pub band: Band,
    pub baseline_state: State,
    pub current_state: State,
    pub baseline_noise_seed: u64,
    pub current_noise_seed: u64,
    pub fault: Option<FaultTruth>,
}

struct Gen(Rng);

impl Gen {
    fn u(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.0.uniform()
    }
    fn int(&mut self, lo: usize, hi: usize) -> usize {
        lo + (self.0.next_u64() % (hi - lo + 1) as u64) as usize
    }
    fn chance(&mut self, p: f64) -> bool {
        self.0.uniform() < p
    }
    fn pick<'a, T>(&mut self, v: &'a [T]) -> &'a T {
        &v[self.int(0, v.len() - 1)]
    }
}

#[derive(Debug, Clone)]
struct UserKind {
    name: String,
    vf: f64,
    loss_db_per_m_1ghz: f64,
    conductor: &'static str,
}

#[derive(Debug, Clone)]
enum Item {
    Cable {
        name: String,
        kind: String,
        length_m: f64,
        truth_length_m: f64,
        from: &'static str,
        to: &'static str,
    },
    Connector {
        name: String,
        stage: &'static str,
        truth_ohm: f64,
        shunt_f: f64,
    },
    Attenuator {
        name: String,
        stage: &'static str,
        loss_db: u32,
    },
    Device {
        name: String,
        stage: &'static str,
        load: String,
    },
}

fn stage_name(i: usize) -> &'static str {
    if i == 0 {
        "room"
    } else {
        STAGES[i - 1].0
    }
}

fn toml_text(
    name: &str,
    stages: &[(&str, f64)],
    kinds: &[UserKind],
    items: &[Item],
    truth: bool,
) -> String {
    let mut s = String::new();
    let what = if truth {
        "the line as built (truth)"
    } else {
        "the line as declared (nominal)"
    };
    let _ = writeln!(s, "# Generated scenario, invented data: {what}.");
    // Connectors add their own section to the chain, so cable lengths are what the generator drew.
    let _ = writeln!(
        s,
        "name = \"{name}\"\nimpedance_ohm = 50.0\nconnector_lengths = \"added\"\n\n[stages]"
    );
    for (n, k) in stages {
        let _ = writeln!(s, "{n} = {k:.6}");
    }
    for k in kinds {
        let _ = writeln!(
            s,
            "\n[cables.{}]\nvelocity_factor = {:.4}\nloss_db_per_m_1ghz = {:.3}\nconductor = \"{}\"",
            k.name, k.vf, k.loss_db_per_m_1ghz, k.conductor
        );
    }
    for it in items {
        s.push_str("\n[[element]]\n");
        match it {
            Item::Cable {
                name,
                kind,
                length_m,
                truth_length_m,
                from,
                to,
            } => {
                let l = if truth { *truth_length_m } else { *length_m };
                let _ = writeln!(
                    s,
                    "kind = \"cable\"\nname = \"{name}\"\ncable = \"{kind}\"\nlength_m = {l:.6}\nfrom = \"{from}\"\nto = \"{to}\""
                );
            }
            Item::Connector {
                name,
                stage,
                truth_ohm,
                ..
            } => {
                let _ = writeln!(
                    s,
                    "kind = \"connector\"\nname = \"{name}\"\nstage = \"{stage}\""
                );
                if truth {
                    let _ = writeln!(s, "impedance_ohm = {truth_ohm:.4}");
                }
            }
            Item::Attenuator {
                name,
                stage,
                loss_db,
            } => {
                let _ = writeln!(
                    s,
                    "kind = \"attenuator\"\nname = \"{name}\"\nstage = \"{stage}\"\nloss_db = {loss_db}.0"
                );
            }
            Item::Device { name, stage, load } => {
                let _ = writeln!(
                    s,
                    "kind = \"device\"\nname = \"{name}\"\nstage = \"{stage}\"\n{load}"
                );
            }
        }
    }
    s
}

/// Cable kinds offered for a cable between `from` and `to` stages (indices): room cables, the runs into the
/// cryostat, and the cold runs (Krinner et al. 2019: stainless or cupronickel from room to 4 K, NbTi below;
/// mixed here on purpose).
fn kinds_for(from: usize, to: usize) -> &'static [&'static str] {
    match (from, to) {
        (0, 0) => &["cu-flex", "cu-141", "cu-086"],
        (0, _) | (1, _) => &["ss-086", "cuni-086", "agcuni-086", "cu-086"],
        _ => &["nbti-086", "cuni-086", "agcuni-086", "ss-086", "cu-086"],
    }
}

/// `n` as swept through an amplifier in front of the line: every point scaled by the round-trip gain
/// `gain_db(f, u)`, dB, at frequency `f` (Hz) whose place in the band is `u` (0 at its bottom, 1 at its top).
pub fn through_gain(mut n: Network, gain_db: impl Fn(f64, f64) -> f64) -> Network {
    let freqs = n.freqs_hz.clone();
    let (f0, f1) = (freqs[0], freqs[freqs.len() - 1]);
    for (s, &f) in n.s.iter_mut().zip(&freqs) {
        *s *= 10f64.powf(gain_db(f, (f - f0) / (f1 - f0)) / 20.0);
    }
    n
}

impl Scenario {
    /// The scenario of `seed` and `case`.
    pub fn generate(seed: u64, case: Case) -> Scenario {
        let mut sm = seed ^ case.tag().rotate_left(32);
        let mut g = Gen(Rng::new(coldtrace::line::rng::splitmix64(&mut sm)));

        // Stages.
        let stages: Vec<(&str, f64)> = STAGES
            .iter()
            .map(|(n, lo, hi)| (*n, g.u(*lo, *hi)))
            .collect();

        // Cables and the stages they join: `deepest` transitions, each cable one step down or none.
        let n = g.int(CABLES.0, CABLES.1);
        let deepest = g.int(1, STAGES.len().min(n));
        let mut order: Vec<usize> = (0..n).collect();
        for i in (1..n).rev() {
            let j = g.int(0, i);
            order.swap(i, j);
        }
        let mut steps = vec![false; n];
        for &i in &order[..deepest] {
            steps[i] = true;
        }
        let mut kinds: Vec<UserKind> = Vec::new();
        let mut cables = Vec::new();
        let mut s = 0usize;
        for (i, step) in steps.iter().enumerate() {
            let (from, to) = (s, if *step { s + 1 } else { s });
            s = to;
            let kind = if g.chance(USER_KIND_SHARE) {
                // A user kind, defined in the file: a flexible or semi-rigid cable of stated loss.
                let name = format!("user-{}", (b'a' + kinds.len() as u8) as char);
                kinds.push(UserKind {
                    name: name.clone(),
                    vf: g.u(USER_VF.0, USER_VF.1),
                    loss_db_per_m_1ghz: g.u(USER_LOSS_DB_PER_M_1GHZ.0, USER_LOSS_DB_PER_M_1GHZ.1),
                    conductor: USER_CONDUCTORS[g.int(0, USER_CONDUCTORS.len() - 1)],
                });
                name
            } else {
                g.pick(kinds_for(from, to)).to_string()
            };
            let length_m = g.u(CABLE_LENGTH_M.0, CABLE_LENGTH_M.1);
            let err = g.u(-LENGTH_ERROR_M, LENGTH_ERROR_M);
            cables.push(Item::Cable {
                name: format!("c{}", i + 1),
                kind,
                length_m,
                truth_length_m: length_m + err,
                from: stage_name(from),
                to: stage_name(to),
            });
        }

        // Junctions between cables: a connector, or connector, attenuator, connector (cold junctions first).
        let junction_stage: Vec<&'static str> = cables
            .iter()
            .take(n - 1)
            .map(|c| match c {
                Item::Cable { to, .. } => *to,
                _ => unreachable!(),
            })
            .collect();
        let n_att = g.int(0, ATTENUATORS.min(n - 1));
        let mut junctions: Vec<usize> = (0..n - 1).collect();
        for i in (1..junctions.len()).rev() {
            let j = g.int(0, i);
            junctions.swap(i, j);
        }
        // Attenuators go to cold junctions first (4 K and below), as on real input lines.
        junctions.sort_by_key(|&j| junction_stage[j] == "room" || junction_stage[j] == "k50");
        let mut att_at: Vec<usize> = Vec::new();
        for &j in junctions.iter().take(n_att) {
            att_at.push(j);
        }
        let mut items = Vec::new();
        let (mut nj, mut na) = (0, 0);
        let mut connector = |g: &mut Gen, stage: &'static str, items: &mut Vec<Item>| {
            nj += 1;
            let shunt_f = g.u(CONNECTOR_SHUNT_F.0, CONNECTOR_SHUNT_F.1);
            items.push(Item::Connector {
                name: format!("J{nj}"),
                stage,
                truth_ohm: g.u(CONNECTOR_Z_OHM.0, CONNECTOR_Z_OHM.1),
                shunt_f,
            });
        };
        let mut last_stage = "room";
        for (i, c) in cables.into_iter().enumerate() {
            if let Item::Cable { to, .. } = &c {
                last_stage = to;
            }
            items.push(c);
            if i + 1 < n {
                let st = junction_stage[i];
                connector(&mut g, st, &mut items);
                if att_at.contains(&i) {
                    na += 1;
                    items.push(Item::Attenuator {
                        name: format!("A{na}"),
                        stage: st,
                        loss_db: g.int(ATTENUATOR_DB.0 as usize, ATTENUATOR_DB.1 as usize) as u32,
                    });
                    connector(&mut g, st, &mut items);
                }
            }
        }
        if g.chance(END_CONNECTOR_SHARE) {
            connector(&mut g, last_stage, &mut items);
        }
        let load = match g.int(0, 4) {
            0 => "load = \"open\"".to_string(),
            1 => "load = \"short\"".to_string(),
            2 => "load = \"match\"".to_string(),
            3 => {
                let any = g.u(DEVICE_OHM.0, DEVICE_OHM.1);
                format!("load = {:.1}", *g.pick(&[20.0, 120.0, any]))
            }
            _ => format!(
                "return_loss_db = {:.2}",
                g.u(DEVICE_RETURN_LOSS_DB.0, DEVICE_RETURN_LOSS_DB.1)
            ),
        };
        items.push(Item::Device {
            name: "end".into(),
            stage: last_stage,
            load,
        });

        let fridge = *g.pick(&["north-fridge", "south-fridge"]);
        let name = format!("{fridge}/sim-{}-{seed}", case.name());
        let nominal_text = toml_text(&name, &stages, &kinds, &items, false);
        let truth_text = toml_text(&name, &stages, &kinds, &items, true);
        let nominal = coldtrace::line::file::parse(&nominal_text, Path::new("nominal.toml"))
            .unwrap_or_else(|e| {
                panic!("seed {seed}: the nominal line does not parse: {e}\n{nominal_text}")
            });
        let truth = coldtrace::line::file::parse(&truth_text, Path::new("truth.toml"))
            .unwrap_or_else(|e| {
                panic!("seed {seed}: the truth line does not parse: {e}\n{truth_text}")
            });

        let parasitics: Vec<String> = items
            .iter()
            .filter_map(|it| match it {
                Item::Connector { name, shunt_f, .. } if *shunt_f >= 0.05e-15 => {
                    Some(format!("{name}:shunt={:.3}fF", shunt_f * 1e15))
                }
                _ => None,
            })
            .collect();
        let length_errors_m = items
            .iter()
            .filter_map(|it| match it {
                Item::Cable {
                    length_m,
                    truth_length_m,
                    ..
                } => Some(truth_length_m - length_m),
                _ => None,
            })
            .collect();

        let perturbation = Perturbation {
            permittivity_change_scale: {
                // Log-uniform, so halving and doubling are equally likely.
                let (lo, hi) = PERMITTIVITY_CHANGE_SCALE;
                (lo.ln() + (hi.ln() - lo.ln()) * g.0.uniform()).exp()
            },
            contraction_scale: 1.0 + g.u(-CONTRACTION_SPREAD, CONTRACTION_SPREAD),
            surface_resistance_scale: 1.0
                + g.u(-SURFACE_RESISTANCE_SPREAD, SURFACE_RESISTANCE_SPREAD),
        };

        // Band and points: the visible line must fit in the alias-free range, warm and cold.
        let total: u32 = BANDS.iter().map(|b| b.2).sum();
        let mut r = g.int(0, total as usize - 1) as u32;
        let mut band_pick = BANDS[0];
        for b in BANDS {
            if r < b.2 {
                band_pick = b;
                break;
            }
            r -= b.2;
        }
        let (start_hz, stop_hz, _) = band_pick;
        let end = nominal.length_m();
        let rt = nominal
            .round_trip_s(end, State::Warm)
            .max(nominal.round_trip_s(end, State::Cold));
        let fits: Vec<usize> = POINTS
            .iter()
            .copied()
            .filter(|&p| rt < ALIAS_MARGIN * (p - 1) as f64 / (stop_hz - start_hz))
            .collect();
        assert!(
            !fits.is_empty(),
            "seed {seed}: no point count holds the line ({rt:e} s round trip)"
        );
        let points = *g.pick(&fits);
        let band = Band {
            start_hz,
            stop_hz,
            points,
            noise_db: g.u(NOISE_DB.0, NOISE_DB.1),
        };

        let (baseline_state, current_state) = match case {
            Case::Healthy => (State::Warm, State::Cold),
            Case::Repeat => (State::Cold, State::Cold),
            Case::Fault => {
                if g.chance(WARM_BASELINE_SHARE) {
                    (State::Warm, State::Cold)
                } else {
                    (State::Cold, State::Cold)
                }
            }
        };
        let baseline_noise_seed = g.0.next_u64();
        let current_noise_seed = g.0.next_u64();

        let mut sc = Scenario {
            seed,
            case,
            nominal_text,
            truth_text,
            nominal,
            truth,
            perturbation,
            parasitics,
            length_errors_m,
            band,
            baseline_state,
            current_state,
            baseline_noise_seed,
            current_noise_seed,
            fault: None,
        };
        if case == Case::Fault {
            sc.fault = Some(sc.place_fault(&mut g));
        }
        sc
    }

    /// Whether the fault lies at the joint right in front of a far end that reflects strongly (an open, a
    /// short, or a device of [`END_REFLECTION`] or more): its echo and the end's share one resolution cell,
    /// so what the comparator sees of it is a change of the end's own echo, which a device's cooling also
    /// makes (docs/method.md, "Where the comparator cannot tell").
    pub fn fault_masked_by_end(&self) -> bool {
        let Some(f) = &self.fault else {
            return false;
        };
        if !f.at_connector {
            return false;
        }
        let els = &self.truth.elements;
        let Some(k) = els.iter().position(|e| e.name == f.element) else {
            return false;
        };
        match els.get(k + 1).map(|e| &e.kind) {
            Some(ElementKind::Device { load }) => {
                let z0 = self.truth.impedance_ohm;
                let rho = match *load {
                    Load::Match => 0.0,
                    Load::Open | Load::Short => 1.0,
                    Load::Ohms(r) => ((r - z0) / (r + z0)).abs(),
                    Load::Reflection(x) => x.abs(),
                };
                rho >= END_REFLECTION
            }
            _ => false,
        }
    }

    /// One-way as-built distance a resolution cell's main lobe covers around an echo in a line of
    /// permittivity `er`, m ([`MAIN_LOBE_CELLS`] -6 dB widths, as the comparator's detector uses), plus
    /// the length error. Faults inside cables keep this far from the cable's ends.
    pub fn margin_m(&self, er: f64) -> f64 {
        let bins = AnalysisConfig::default().window.figures().mainlobe_6db_bins;
        let rt = MAIN_LOBE_CELLS * bins / (self.band.stop_hz - self.band.start_hz);
        0.5 * rt * coldtrace::line::materials::C0 / er.sqrt() + LENGTH_ERROR_M
    }

    /// How far from a connector's nominal centre a finding may lie and still be the connector's, m: a main
    /// lobe and the length error (see [`Scenario::margin_m`]) at the built-in cables' permittivity.
    pub fn connector_tolerance_m(&self) -> f64 {
        self.margin_m(coldtrace::line::catalogue::PTFE_ER)
    }

    fn place_fault(&self, g: &mut Gen) -> FaultTruth {
        let vis = self.truth.visible();
        let connectors: Vec<usize> = (0..vis.len())
            .filter(|&i| matches!(vis[i].kind, ElementKind::Connector { .. }))
            .collect();
        let total: u32 = FAULT_WEIGHTS.iter().map(|w| w.1).sum();
        let mut r = g.int(0, total as usize - 1) as u32;
        let mut kind = FAULT_WEIGHTS[0].0;
        for (k, w) in FAULT_WEIGHTS {
            if r < w {
                kind = k;
                break;
            }
            r -= w;
        }
        let in_cable =
            kind == TrueKind::Crush || (kind == TrueKind::Open && g.chance(OPEN_IN_CABLE_SHARE));
        // Cables long enough to hold the fault clear of their ends.
        let crush_m = g.u(CRUSH_M.0, CRUSH_M.1);
        let cables: Vec<(usize, f64)> = (0..vis.len())
            .filter_map(|i| match &vis[i].kind {
                ElementKind::Cable { cable } => {
                    let m = self.margin_m(cable.er);
                    let need = if kind == TrueKind::Crush {
                        crush_m
                    } else {
                        0.0
                    };
                    (vis[i].length_m > 2.0 * m + need).then_some((i, m))
                }
                _ => None,
            })
            .collect();
        let z0 = self.truth.impedance_ohm;
        let w = 2.0 * std::f64::consts::PI * self.band.centre_hz();
        let j = Complex64::new(0.0, 1.0);
        let series = |z: Complex64| (z / (2.0 * z0 + z)).norm();
        let (spec, element, at_connector, true_offset, local_rho) =
            if in_cable && !cables.is_empty() {
                let &(i, m) = g.pick(&cables);
                let e = &vis[i];
                let need = if kind == TrueKind::Crush {
                    crush_m
                } else {
                    0.0
                };
                let off = g.u(m, e.length_m - m - need);
                match kind {
                    TrueKind::Crush => {
                        let z1 = g.u(CRUSH_OHM.0, CRUSH_OHM.1);
                        let er = match &e.kind {
                            ElementKind::Cable { cable } => cable.er,
                            _ => unreachable!(),
                        };
                        let g1 = (z1 - z0) / (z1 + z0);
                        let theta = w * er.sqrt() * crush_m / coldtrace::line::materials::C0;
                        let ph = Complex64::from_polar(1.0, -2.0 * theta);
                        let rho = (g1 * (1.0 - ph) / (1.0 - g1 * g1 * ph)).norm();
                        (
                            format!(
                                "{}@{off:.6}m:crush={z1:.3}ohm,{:.3}mm",
                                e.name,
                                crush_m * 1e3
                            ),
                            e.name.clone(),
                            false,
                            off + 0.5 * crush_m,
                            rho,
                        )
                    }
                    _ => (
                        format!("{}@{off:.6}m:open", e.name),
                        e.name.clone(),
                        false,
                        off,
                        1.0,
                    ),
                }
            } else {
                let i = *g.pick(&connectors);
                let e = &vis[i];
                let (what, rho) = match kind {
                    TrueKind::PinGap => {
                        let c = g.u(GAP_F.0, GAP_F.1);
                        (format!("gap={:.3}fF", c * 1e15), series(1.0 / (j * w * c)))
                    }
                    TrueKind::PartialGap => {
                        let c = g.u(GAP_F.0, GAP_F.1);
                        let r = g.u(PARTIAL_CONTACT_OHM.0, PARTIAL_CONTACT_OHM.1);
                        (
                            format!("gap={:.3}fF,contact={r:.3}ohm", c * 1e15),
                            series(r / (1.0 + j * w * r * c)),
                        )
                    }
                    TrueKind::Contact | TrueKind::Crush => {
                        let r = g.u(CONTACT_OHM.0, CONTACT_OHM.1);
                        (format!("contact={r:.4}ohm"), series(Complex64::new(r, 0.0)))
                    }
                    TrueKind::Open => ("open".to_string(), 1.0),
                };
                (
                    format!("{}:{what}", e.name),
                    e.name.clone(),
                    true,
                    0.5 * e.length_m,
                    rho,
                )
            };
        // A crush that found no cable long enough became a contact above.
        let kind = match (kind, at_connector) {
            (TrueKind::Crush, true) => TrueKind::Contact,
            (k, _) => k,
        };
        // Nominal coordinates.
        let (_, ne) = self
            .nominal
            .element(&element)
            .expect("same names in both files");
        let (_, te) = self
            .truth
            .element(&element)
            .expect("same names in both files");
        let position_m = ne.start_m + true_offset * ne.length_m / te.length_m;
        let loss_db = self.nominal_loss_db(&element, true_offset * ne.length_m / te.length_m);
        let noise = self.band.trace_noise_rms();
        let lumped_level_db = 20.0 * (local_rho * 10f64.powf(-loss_db / 20.0) / noise).log10();
        let level_db = self.seen_level_db(&spec, te.start_m + true_offset);
        FaultTruth {
            kind,
            spec,
            element,
            at_connector,
            position_m,
            local_rho,
            loss_db,
            lumped_level_db,
            level_db,
        }
    }

    /// The fault's echo as the port sees it, over the noise floor at its place, dB: the truth simulated
    /// without noise in the current state with and without the fault; the band-pass trace of the difference
    /// (the comparator's default window, normalised by its sum) at its largest within [`SEEN_SPAN_CELLS`]
    /// resolution cells of the fault's round-trip delay on the truth (`truth_x`, as-built metres); over
    /// [`Band::trace_noise_rms`].
    fn seen_level_db(&self, spec: &str, truth_x: f64) -> f64 {
        let sim = |fault: Option<&str>| {
            let mut cfg = SimConfig::linear(
                self.current_state,
                self.band.start_hz,
                self.band.stop_hz,
                self.band.points,
            );
            cfg.perturbation = self.perturbation;
            cfg.faults = self
                .parasitics
                .iter()
                .map(String::as_str)
                .chain(fault)
                .map(|s| Fault::parse(s).expect("a generated fault spec"))
                .collect();
            simulate(&self.truth, &cfg)
                .expect("simulate a generated line")
                .s11()
        };
        let (without, with) = (sim(None), sim(Some(spec)));
        let freqs = self.band.freqs();
        let w = AnalysisConfig::default()
            .window
            .coefficients(self.band.points);
        let s1: f64 = w.iter().sum();
        let t0 = self.truth.round_trip_s(truth_x, self.current_state);
        let cell = 1.0 / (self.band.stop_hz - self.band.start_hz);
        let steps = (SEEN_SPAN_CELLS * SEEN_STEPS_PER_CELL) as i64;
        let peak = (-steps..=steps)
            .map(|k| {
                let t = t0 + k as f64 * cell / SEEN_STEPS_PER_CELL;
                let h: Complex64 = (0..freqs.len())
                    .map(|i| {
                        (with[i] - without[i])
                            * w[i]
                            * Complex64::from_polar(1.0, 2.0 * std::f64::consts::PI * freqs[i] * t)
                    })
                    .sum();
                h.norm() / s1
            })
            .fold(0.0, f64::max);
        20.0 * (peak.max(1e-300) / self.band.trace_noise_rms()).log10()
    }

    /// Round-trip loss of the nominal model to `offset_m` inside `element` in the current state at the band
    /// centre, dB: `line::visibility` at the element's place, and inside a cable a linear interpolation to
    /// the next element's place.
    fn nominal_loss_db(&self, element: &str, offset_m: f64) -> f64 {
        let v = coldtrace::line::visibility(
            &self.nominal,
            self.current_state,
            &self.band.freqs(),
            1e-6,
        )
        .expect("visibility of a generated line");
        let i = v
            .iter()
            .position(|x| x.element == element)
            .expect("element");
        let here = v[i].round_trip_loss_db.unwrap_or(f64::INFINITY);
        let e = &self.nominal.elements[i];
        if !matches!(e.kind, ElementKind::Cable { .. }) {
            return here;
        }
        let next = v
            .get(i + 1)
            .and_then(|x| x.round_trip_loss_db)
            .unwrap_or(here);
        here + (next - here) * (offset_m / e.length_m).clamp(0.0, 1.0)
    }

    /// Simulate the baseline and current sweeps of the truth.
    pub fn sweeps(&self) -> Result<(Network, Network), String> {
        let mk = |state: State, seed: u64, fault: Option<&str>| {
            let mut cfg = SimConfig::linear(
                state,
                self.band.start_hz,
                self.band.stop_hz,
                self.band.points,
            );
            cfg.noise_db = Some(self.band.noise_db);
            cfg.seed = seed;
            cfg.perturbation = self.perturbation;
            let mut specs: Vec<&str> = self.parasitics.iter().map(String::as_str).collect();
            specs.extend(fault);
            cfg.faults = specs
                .iter()
                .map(|s| Fault::parse(s).map_err(|e| e.to_string()))
                .collect::<Result<_, _>>()?;
            simulate(&self.truth, &cfg).map_err(|e| e.to_string())
        };
        let b = mk(self.baseline_state, self.baseline_noise_seed, None)?;
        let c = mk(
            self.current_state,
            self.current_noise_seed,
            self.fault.as_ref().map(|f| f.spec.as_str()),
        )?;
        Ok((b, c))
    }

    /// Compare the two sweeps on the nominal line, with the states given (the truth's) or inferred.
    pub fn compare(
        &self,
        baseline: &Network,
        current: &Network,
        states_given: bool,
    ) -> coldtrace::Result<CompareReport> {
        let cfg = AnalysisConfig::default();
        compare_networks(&PairRequest {
            baseline: ("baseline", baseline),
            current: ("current", current),
            line: LineModel::Line(&self.nominal),
            baseline_state: states_given.then_some(self.baseline_state),
            current_state: states_given.then_some(self.current_state),
            analysis: &cfg,
        })
    }

    /// A few lines saying what the scenario is.
    pub fn describe(&self) -> String {
        let mut s = String::new();
        let els: Vec<String> = self
            .truth
            .visible()
            .iter()
            .map(|e| match &e.kind {
                ElementKind::Cable { cable } => {
                    format!(
                        "{} {} {:.3} m {}-{}",
                        e.name, cable.name, e.length_m, e.from_stage, e.to_stage
                    )
                }
                ElementKind::Attenuator { loss_db, .. } => format!("{} {loss_db} dB", e.name),
                ElementKind::Device { load } => format!("{} {load:?}", e.name),
                ElementKind::Connector { .. } => e.name.clone(),
            })
            .collect();
        let _ = writeln!(
            s,
            "{} seed {} ({})",
            self.case.name(),
            self.seed,
            self.truth.name
        );
        let _ = writeln!(s, "  truth: {}", els.join(" | "));
        let _ = writeln!(
            s,
            "  band {:.2}-{:.2} GHz, {} points, noise {:.1} dB; {:?} -> {:?}; perturbation: permittivity change x{:.2}, contraction x{:.3}, surface resistance x{:.3}",
            self.band.start_hz / 1e9,
            self.band.stop_hz / 1e9,
            self.band.points,
            self.band.noise_db,
            self.baseline_state,
            self.current_state,
            self.perturbation.permittivity_change_scale,
            self.perturbation.contraction_scale,
            self.perturbation.surface_resistance_scale
        );
        if let Some(f) = &self.fault {
            let _ = writeln!(
                s,
                "  fault: {} ({}) at {:.4} m nominal, |rho| {:.2e}, loss {:.1} dB, {:.1} dB over the noise as the port sees it ({:.1} dB by the lumped estimate)",
                f.spec,
                f.kind.name(),
                f.position_m,
                f.local_rho,
                f.loss_db,
                f.level_db,
                f.lumped_level_db
            );
        }
        s
    }
}
