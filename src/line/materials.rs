//! Material data against temperature, 0-300 K: integrated thermal contraction, PTFE permittivity and loss
//! tangent, conductor resistivity and surface impedance (classical, anomalous and superconducting).
//!
//! Conventions: temperatures in kelvin; contraction is the integrated linear contraction
//! `(L(293 K) - L(T)) / L(293 K)` as a plain fraction (0.00326 for copper at 4 K), positive on cooling;
//! resistivity in ohm m; surface resistance in ohm. Above 293 K the tables extrapolate with their last
//! slope (a few kelvin only: room is 295 K). Every value and its source is listed in `docs/materials.md`.

use serde::Serialize;

/// Room temperature used for "warm" everywhere, kelvin (common practice, no source).
pub const ROOM_K: f64 = 295.0;

/// Permeability of free space, H/m (CODATA 2018: 1.25663706212e-6; the pre-2019 exact 4 pi e-7 differs by
/// 5e-10 relative).
pub const MU0: f64 = 1.256_637_062_12e-6;
/// Permittivity of free space, F/m (CODATA 2018).
pub const EPS0: f64 = 8.854_187_812_8e-12;
/// Speed of light in vacuum, m/s (SI, exact).
pub const C0: f64 = 299_792_458.0;

/// A material that appears in a cable, connector or support.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Material {
    Copper,
    Silver,
    Stainless304,
    Cupronickel,
    /// Silver-plated cupronickel: silver carries the current at GHz, cupronickel sets the contraction.
    SilverPlatedCupronickel,
    Brass,
    BerylliumCopper,
    Nbti,
    Niobium,
    Aluminium6061,
    Ptfe,
    Polyethylene,
}

/// Every material with the name line files and reports use for it and the other names accepted for it
/// in a line file (the names people write: trade names, chemical symbols, US spelling). Compared after
/// [`super::names::normalise`], so case, spaces and underscores do not matter.
pub const MATERIAL_NAMES: &[(Material, &str, &[&str])] = &[
    (
        Material::Copper,
        "copper",
        &["cu", "copper-ofhc", "ofhc-copper", "ofhc"],
    ),
    (Material::Silver, "silver", &["ag"]),
    (
        Material::Stainless304,
        "stainless304",
        &["stainless", "stainless-steel", "ss304", "ss"],
    ),
    (Material::Cupronickel, "cupronickel", &["cuni"]),
    (
        Material::SilverPlatedCupronickel,
        "silver-plated-cupronickel",
        &["agcuni"],
    ),
    (Material::Brass, "brass", &[]),
    (Material::BerylliumCopper, "beryllium-copper", &["becu"]),
    (Material::Nbti, "nbti", &["niobium-titanium"]),
    (Material::Niobium, "niobium", &["nb"]),
    (
        Material::Aluminium6061,
        "aluminium6061",
        &["aluminum6061", "al6061", "aluminium", "aluminum"],
    ),
    (Material::Ptfe, "ptfe", &["teflon"]),
    (Material::Polyethylene, "polyethylene", &["pe"]),
];

impl Material {
    /// The names accepted in line files, one per material (aliases in [`MATERIAL_NAMES`]).
    pub const NAMES: &'static [&'static str] = &[
        "copper",
        "silver",
        "stainless304",
        "cupronickel",
        "silver-plated-cupronickel",
        "brass",
        "beryllium-copper",
        "nbti",
        "niobium",
        "aluminium6061",
        "ptfe",
        "polyethylene",
    ];

    /// Parse a line-file material name or alias ([`MATERIAL_NAMES`]), ignoring case, surrounding blanks,
    /// and the difference between space, underscore and hyphen.
    pub fn parse(name: &str) -> Option<Material> {
        let n = super::names::normalise(name);
        MATERIAL_NAMES
            .iter()
            .find(|(_, canonical, aliases)| *canonical == n || aliases.contains(&n.as_str()))
            .map(|(m, _, _)| *m)
    }

    /// The name line files and reports use for it.
    pub fn name(self) -> &'static str {
        self.entry().1
    }

    /// The other names accepted for it in a line file.
    pub fn aliases(self) -> &'static [&'static str] {
        self.entry().2
    }

    fn entry(self) -> &'static (Material, &'static str, &'static [&'static str]) {
        MATERIAL_NAMES
            .iter()
            .find(|(m, _, _)| *m == self)
            .expect("every material is listed in MATERIAL_NAMES")
    }

    /// The known name closest to `written` (by edit distance over names and aliases), as its canonical
    /// name; `None` when nothing is close ([`super::names::closest`]).
    pub fn closest(written: &str) -> Option<&'static str> {
        super::names::closest(
            written,
            MATERIAL_NAMES.iter().flat_map(|(_, canonical, aliases)| {
                std::iter::once((*canonical, *canonical))
                    .chain(aliases.iter().map(|a| (*a, *canonical)))
            }),
        )
    }

    /// Every accepted name with its aliases, e.g. `stainless304 (stainless, stainless-steel, ss304, ss)`,
    /// comma-separated, for error messages.
    pub fn listing() -> String {
        MATERIAL_NAMES
            .iter()
            .map(|(_, canonical, aliases)| {
                if aliases.is_empty() {
                    canonical.to_string()
                } else {
                    format!("{canonical} ({})", aliases.join(", "))
                }
            })
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// Integrated linear contraction from 293 K to `t_k`, as a fraction.
    pub fn contraction(self, t_k: f64) -> f64 {
        match self {
            Material::Copper | Material::Silver => copper_contraction(t_k),
            _ => interp(self.contraction_table(), t_k) / 100.0,
        }
    }

    /// Tabulated contraction in percent, (T in K, (L293 - LT)/L293 in %), increasing T, ending at 293 K.
    pub fn contraction_table(self) -> &'static [(f64, f64)] {
        match self {
            Material::Copper | Material::Silver => COPPER_CONTRACTION_PCT,
            Material::Stainless304 => SS304_CONTRACTION_PCT,
            Material::Cupronickel | Material::SilverPlatedCupronickel => CUNI_CONTRACTION_PCT,
            Material::Brass => BRASS_CONTRACTION_PCT,
            Material::BerylliumCopper => BECU_CONTRACTION_PCT,
            Material::Nbti => NBTI_CONTRACTION_PCT,
            Material::Niobium => NB_CONTRACTION_PCT,
            Material::Aluminium6061 => AL6061_CONTRACTION_PCT,
            Material::Ptfe => PTFE_CONTRACTION_PCT,
            Material::Polyethylene => PE_CONTRACTION_PCT,
        }
    }
}

/// NIST cryogenic material properties, OFHC copper (UNS C10100/C10200), linear expansion coefficient fit:
/// log10(alpha / 1e-6 K^-1) = sum_i c_i (log10 T)^i, 4-300 K, quoted 5 % error above 50 K (NIST Cryogenics
/// Technologies Group, "Material Properties: OFHC Copper", trc.nist.gov/cryogenics/materials).
pub const NIST_OFHC_EXPANSION_FIT: [f64; 7] = [
    -17.908_128_9,
    67.131_914,
    -118.809_316,
    109.984_599_7,
    -53.869_608_9,
    13.302_474_91,
    -1.308_434_41,
];

/// Linear expansion coefficient of OFHC copper from the NIST fit, 1/K (clamped to its 4-300 K range).
pub fn copper_expansion_coefficient(t_k: f64) -> f64 {
    let x = t_k.clamp(4.0, 300.0).log10();
    let mut p = 0.0;
    let mut xi = 1.0;
    for c in NIST_OFHC_EXPANSION_FIT {
        p += c * xi;
        xi *= x;
    }
    10f64.powf(p) * 1e-6
}

/// Integrated contraction of OFHC copper, 293 K -> `t_k`, by integrating the NIST fit (Simpson, 64 steps).
/// Gives 0.3256 % at 4 K and 0.3042 % at 77 K.
///
/// A line's model asks for the same few temperatures (its stages, its tapers' slices) again and again, so
/// each thread keeps the integrals it has worked out, by the exact temperature; at most
/// [`COPPER_MEMO_SIZE`] of them, after which it starts afresh.
pub fn copper_contraction(t_k: f64) -> f64 {
    thread_local! {
        static MEMO: std::cell::RefCell<std::collections::HashMap<u64, f64>> =
            std::cell::RefCell::new(std::collections::HashMap::new());
    }
    MEMO.with(|memo| {
        if let Some(&v) = memo.borrow().get(&t_k.to_bits()) {
            return v;
        }
        let v = integrate_copper_contraction(t_k);
        let mut memo = memo.borrow_mut();
        if memo.len() >= COPPER_MEMO_SIZE {
            memo.clear();
        }
        memo.insert(t_k.to_bits(), v);
        v
    })
}

/// Most temperatures [`copper_contraction`] keeps per thread.
pub const COPPER_MEMO_SIZE: usize = 4096;

/// [`copper_contraction`] worked out: Simpson's rule, 64 steps, over the NIST fit's expansion coefficient.
fn integrate_copper_contraction(t_k: f64) -> f64 {
    let (a, b) = (t_k, 293.0);
    let n = 64;
    let h = (b - a) / n as f64;
    let mut s = copper_expansion_coefficient(a) + copper_expansion_coefficient(b);
    for i in 1..n {
        let w = if i % 2 == 1 { 4.0 } else { 2.0 };
        s += w * copper_expansion_coefficient(a + i as f64 * h);
    }
    s * h / 3.0
}

// Integrated linear contraction tables, percent. 4 K and 77 K anchors: NIST cryogenic material property
// fits as tabulated in J. W. Ekin, Experimental Techniques for Low-Temperature Measurements (Oxford 2006),
// appendix A6 (from memory for everything but copper). Intermediate points follow the copper curve's
// shape (from the NIST OFHC fit) scaled to each material's anchors, except PTFE (own shape, below).
// Values marked in docs/materials.md.

/// Copper, percent (integrated NIST OFHC fit, rounded; `copper_contraction` integrates the fit itself).
pub const COPPER_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 0.326),
    (20.0, 0.325),
    (40.0, 0.323),
    (77.0, 0.304),
    (100.0, 0.283),
    (150.0, 0.222),
    (200.0, 0.149),
    (250.0, 0.071),
    (293.0, 0.0),
];
/// Stainless 304, percent: 0.300 at 4 K, 0.280 at 77 K (Ekin A6, from memory).
pub const SS304_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 0.300),
    (20.0, 0.300),
    (40.0, 0.296),
    (77.0, 0.280),
    (100.0, 0.257),
    (150.0, 0.202),
    (200.0, 0.136),
    (250.0, 0.065),
    (293.0, 0.0),
];
/// Cupronickel 70/30, percent: about 0.27 at 4 K (Ekin A6, from memory).
pub const CUNI_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 0.270),
    (20.0, 0.270),
    (40.0, 0.266),
    (77.0, 0.250),
    (100.0, 0.233),
    (150.0, 0.183),
    (200.0, 0.122),
    (250.0, 0.059),
    (293.0, 0.0),
];
/// Brass, percent: about 0.38-0.40 at 4 K (Ekin A6, from memory; midpoint 0.385 used).
pub const BRASS_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 0.385),
    (20.0, 0.385),
    (40.0, 0.381),
    (77.0, 0.360),
    (100.0, 0.335),
    (150.0, 0.264),
    (200.0, 0.176),
    (250.0, 0.084),
    (293.0, 0.0),
];
/// Beryllium copper, percent: 0.317 at 4 K, 0.296 at 77 K (NIST fit via Ekin A6, from memory).
pub const BECU_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 0.317),
    (20.0, 0.317),
    (40.0, 0.313),
    (77.0, 0.296),
    (100.0, 0.276),
    (150.0, 0.217),
    (200.0, 0.145),
    (250.0, 0.069),
    (293.0, 0.0),
];
/// NbTi, percent: about 0.19 at 4 K (Ekin A6, from memory).
pub const NBTI_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 0.190),
    (20.0, 0.190),
    (40.0, 0.186),
    (77.0, 0.170),
    (100.0, 0.158),
    (150.0, 0.125),
    (200.0, 0.083),
    (250.0, 0.040),
    (293.0, 0.0),
];
/// Niobium, percent: about 0.14 at 4 K (Ekin A6, from memory).
pub const NB_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 0.143),
    (20.0, 0.143),
    (40.0, 0.141),
    (77.0, 0.130),
    (100.0, 0.121),
    (150.0, 0.095),
    (200.0, 0.064),
    (250.0, 0.030),
    (293.0, 0.0),
];
/// Aluminium 6061, percent: 0.415 at 4 K, 0.389 at 77 K (NIST fit via Ekin A6, from memory).
pub const AL6061_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 0.415),
    (20.0, 0.415),
    (40.0, 0.410),
    (77.0, 0.389),
    (100.0, 0.362),
    (150.0, 0.286),
    (200.0, 0.191),
    (250.0, 0.091),
    (293.0, 0.0),
];
/// PTFE, percent: 2.13 at 4 K, 1.94 at 77 K (NIST fit via Ekin A6, from memory); the steep part just below
/// room temperature is the 19 C (292 K) first-order transition (R. K. Kirby, J. Res. NBS 57(2):91, 1956);
/// intermediate points from memory of the NIST curve's shape.
pub const PTFE_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 2.13),
    (20.0, 2.12),
    (40.0, 2.08),
    (77.0, 1.94),
    (100.0, 1.78),
    (150.0, 1.43),
    (200.0, 1.06),
    (250.0, 0.66),
    (280.0, 0.30),
    (293.0, 0.0),
];
/// Polyethylene, percent: about 2.0 at 4 K (from memory; Ekin A6 lists polymers near 1.4-2.1 %).
pub const PE_CONTRACTION_PCT: &[(f64, f64)] = &[
    (4.0, 2.00),
    (20.0, 1.99),
    (40.0, 1.95),
    (77.0, 1.82),
    (100.0, 1.67),
    (150.0, 1.34),
    (200.0, 0.99),
    (250.0, 0.60),
    (293.0, 0.0),
];

/// Piecewise-linear interpolation in a table sorted by x; constant below the first point, last slope
/// extrapolated above the last.
pub fn interp(table: &[(f64, f64)], x: f64) -> f64 {
    assert!(
        table.len() >= 2,
        "interp needs two points, got {}",
        table.len()
    );
    if x <= table[0].0 {
        return table[0].1;
    }
    for w in table.windows(2) {
        let ((x0, y0), (x1, y1)) = (w[0], w[1]);
        if x <= x1 {
            return y0 + (y1 - y0) * (x - x0) / (x1 - x0);
        }
    }
    let n = table.len();
    let ((x0, y0), (x1, y1)) = (table[n - 2], table[n - 1]);
    y1 + (y1 - y0) * (x - x1) / (x1 - x0)
}

/// How the PTFE dielectric of a cable follows its conductors on cooling.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum PtfeModel {
    /// Free contraction: the density rises by the PTFE's own volumetric contraction and Clausius-Mossotti
    /// gives the permittivity. An upper bound for a cable.
    Free,
    /// The PTFE keeps filling the metal cavity: its density follows the conductors' volumetric contraction.
    /// A lower bound.
    Filled,
    /// Axially held to the conductors by friction, gripping the inner conductor, shrinking radially on its
    /// own and leaving an annular vacuum gap at the outer conductor; effective permittivity of the
    /// two-layer coax. The default.
    Gapped,
}

/// Poisson's ratio of PTFE, 0.46 at room temperature (from memory of handbook values). It falls somewhat
/// on cooling; in the gapped model a lower value lowers the density and thickens the layer, two effects
/// that partly cancel (0.36 at 4 K instead of 0.46 lowers the predicted delay change of a 295 K -> 3 K
/// copper line by about 2e-4), so one documented value is kept.
pub const PTFE_POISSON: f64 = 0.46;

impl Material {
    /// Poisson's ratio (dielectrics; polyethylene uses PTFE's value, from memory; metals 0.3).
    pub fn poisson_ratio(self) -> f64 {
        match self {
            Material::Ptfe | Material::Polyethylene => PTFE_POISSON,
            _ => 0.3,
        }
    }
}

/// Clausius-Mossotti: permittivity of a non-polar dielectric whose density is scaled by `density_ratio`,
/// from its permittivity `er0` at the reference density ((er - 1)/(er + 2) proportional to density).
pub fn clausius_mossotti(er0: f64, density_ratio: f64) -> f64 {
    let x = (er0 - 1.0) / (er0 + 2.0) * density_ratio;
    (1.0 + 2.0 * x) / (1.0 - x)
}

/// Loss tangent of PTFE at `t_k` relative to its room-temperature value (from memory: PTFE loss falls by
/// roughly a factor 3 from room temperature to 4 K at GHz; no single published table used).
pub fn ptfe_loss_tangent_ratio(t_k: f64) -> f64 {
    interp(&[(4.0, 0.3), (77.0, 0.5), (200.0, 0.8), (293.0, 1.0)], t_k)
}

/// Electrical behaviour of a conductor material.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Conductor {
    /// Resistivity at 293 K, ohm m.
    pub rho_293: f64,
    /// Superconducting transition temperature, K (None for normal metals).
    pub tc_k: Option<f64>,
    /// Mean-free-path product rho * l, ohm m^2, for the anomalous skin effect (None: not relevant, the
    /// alloys' mean free path stays far below the skin depth).
    pub rho_l: Option<f64>,
}

/// Copper resistivity at 293 K, ohm m (IACS annealed copper standard 1.7241e-8; OFHC ~1.71e-8).
pub const RHO_COPPER_293: f64 = 1.724e-8;
/// rho * l of copper, ohm m^2 (R. G. Chambers, Proc. R. Soc. A 215:481, 1952: 6.6e-16, from memory).
pub const RHO_L_COPPER: f64 = 6.6e-16;
/// Silver resistivity at 293 K, ohm m (handbook, from memory).
pub const RHO_SILVER_293: f64 = 1.59e-8;
/// rho * l of silver, ohm m^2 (Chambers 1952, from memory: 8.4e-16).
pub const RHO_L_SILVER: f64 = 8.4e-16;
/// Residual resistance ratio assumed for drawn cable conductors (common range 10-50, from memory).
pub const CABLE_RRR: f64 = 30.0;
/// Superconducting transition of NbTi and niobium, K (niobium 9.2 K, published; NbTi ~9-10 K, from memory).
pub const TC_NB_K: f64 = 9.2;
/// Residual surface resistance of a superconducting cable conductor at 10 GHz, ohm (from memory; real
/// NbTi cables are limited by surface quality; scaled with f^2).
pub const RS_RESIDUAL_SC_10GHZ: f64 = 2e-4;

/// Ideal (phonon) resistivity of copper relative to 293 K (Bloch-Grueneisen shape; values from memory of
/// R. A. Matula, J. Phys. Chem. Ref. Data 8:1147, 1979).
const COPPER_IDEAL_RATIO: &[(f64, f64)] = &[
    (10.0, 0.0),
    (20.0, 0.0010),
    (30.0, 0.0050),
    (40.0, 0.014),
    (50.0, 0.030),
    (77.0, 0.125),
    (100.0, 0.202),
    (150.0, 0.406),
    (200.0, 0.608),
    (250.0, 0.805),
    (293.0, 1.0),
];
/// Stainless 304 resistivity relative to 293 K: 7.2e-7 -> about 5.0e-7 at 4 K (compilation: Ho and Chu,
/// CINDAS Report 45, 1977; from memory).
const SS304_RHO_RATIO: &[(f64, f64)] = &[
    (4.0, 0.694),
    (77.0, 0.75),
    (150.0, 0.83),
    (200.0, 0.88),
    (293.0, 1.0),
];
/// Cupronickel 70/30 relative to 293 K: nearly constant, about 3.7e-7 (from memory).
const CUNI_RHO_RATIO: &[(f64, f64)] = &[(4.0, 0.93), (77.0, 0.95), (293.0, 1.0)];
/// Brass, beryllium copper and aluminium 6061 relative to 293 K (alloy residual resistivity dominates;
/// from memory).
const BRASS_RHO_RATIO: &[(f64, f64)] = &[(4.0, 0.55), (77.0, 0.65), (293.0, 1.0)];
const AL6061_RHO_RATIO: &[(f64, f64)] = &[(4.0, 0.35), (77.0, 0.45), (293.0, 1.0)];

impl Material {
    /// Conductor data, or None for a dielectric.
    pub fn conductor(self) -> Option<Conductor> {
        Some(match self {
            Material::Copper => Conductor {
                rho_293: RHO_COPPER_293,
                tc_k: None,
                rho_l: Some(RHO_L_COPPER),
            },
            Material::Silver | Material::SilverPlatedCupronickel => Conductor {
                rho_293: RHO_SILVER_293,
                tc_k: None,
                rho_l: Some(RHO_L_SILVER),
            },
            // Stainless 304: 7.2e-7 ohm m (Ho and Chu, CINDAS 45, 1977; from memory).
            Material::Stainless304 => Conductor {
                rho_293: 7.2e-7,
                tc_k: None,
                rho_l: None,
            },
            Material::Cupronickel => Conductor {
                rho_293: 3.7e-7,
                tc_k: None,
                rho_l: None,
            },
            // Brass 6.4e-8, beryllium copper 7e-8, aluminium 6061 4.0e-8 ohm m (handbook, from memory).
            Material::Brass => Conductor {
                rho_293: 6.4e-8,
                tc_k: None,
                rho_l: None,
            },
            Material::BerylliumCopper => Conductor {
                rho_293: 7.0e-8,
                tc_k: None,
                rho_l: None,
            },
            Material::Aluminium6061 => Conductor {
                rho_293: 4.0e-8,
                tc_k: None,
                rho_l: None,
            },
            // NbTi normal state about 6e-7 ohm m, nearly temperature independent (from memory).
            Material::Nbti => Conductor {
                rho_293: 6.0e-7,
                tc_k: Some(TC_NB_K),
                rho_l: None,
            },
            // Niobium 1.5e-7 ohm m at 293 K, RRR ~ 30 in wire (from memory).
            Material::Niobium => Conductor {
                rho_293: 1.5e-7,
                tc_k: Some(TC_NB_K),
                rho_l: None,
            },
            Material::Ptfe | Material::Polyethylene => return None,
        })
    }

    /// DC resistivity at `t_k` (normal state), ohm m.
    pub fn resistivity(self, t_k: f64) -> f64 {
        let Some(c) = self.conductor() else {
            return f64::INFINITY;
        };
        match self {
            Material::Copper | Material::Silver | Material::SilverPlatedCupronickel => {
                // Matthiessen: residual (rho_293 / RRR) plus the ideal part.
                let residual = c.rho_293 / CABLE_RRR;
                residual + (c.rho_293 - residual) * interp(COPPER_IDEAL_RATIO, t_k).max(0.0)
            }
            Material::Stainless304 => c.rho_293 * interp(SS304_RHO_RATIO, t_k),
            Material::Cupronickel => c.rho_293 * interp(CUNI_RHO_RATIO, t_k),
            Material::Brass | Material::BerylliumCopper => c.rho_293 * interp(BRASS_RHO_RATIO, t_k),
            Material::Aluminium6061 => c.rho_293 * interp(AL6061_RHO_RATIO, t_k),
            Material::Niobium => {
                let residual = c.rho_293 / CABLE_RRR;
                residual + (c.rho_293 - residual) * interp(COPPER_IDEAL_RATIO, t_k).max(0.0)
            }
            _ => c.rho_293,
        }
    }

    /// Surface impedance per square at frequency `f_hz` and temperature `t_k`: (R, X) in ohm.
    ///
    /// Normal metals: classical skin effect R = X = sqrt(pi f mu0 rho), blended with the extreme anomalous
    /// limit of Reuter and Sondheimer (Proc. R. Soc. A 195:336, 1948; R. G. Chambers, Proc. R. Soc. A
    /// 215:481, 1952) R_inf = (sqrt(3) omega^2 mu0^2 rho l / (16 pi))^{1/3}, X_inf = sqrt(3) R_inf, which
    /// holds once the mean free path far exceeds the skin depth. The blend
    /// R = (R_cl^3 + R_inf^3)^{1/3} is our interpolation (no source): it tends to each limit, and at room
    /// temperature it adds 0.1 % to copper's classical value at 1 GHz. Superconductors below Tc:
    /// two-fluid weighting with the normal fraction t^4 (Gorter-Casimir) between the normal-state value at
    /// Tc and a residual resistance [`RS_RESIDUAL_SC_10GHZ`] scaled with f^2; kinetic inductance ignored.
    pub fn surface_impedance(self, f_hz: f64, t_k: f64) -> (f64, f64) {
        let Some(c) = self.conductor() else {
            return (0.0, 0.0);
        };
        let omega = 2.0 * std::f64::consts::PI * f_hz;
        let normal = |t: f64| -> (f64, f64) {
            let rho = self.resistivity(t);
            let r_cl = (std::f64::consts::PI * f_hz * MU0 * rho).sqrt();
            match c.rho_l {
                Some(rho_l) => {
                    let r_inf = (3f64.sqrt() * omega * omega * MU0 * MU0 * rho_l
                        / (16.0 * std::f64::consts::PI))
                        .cbrt();
                    let (a3, b3) = (r_cl.powi(3), r_inf.powi(3));
                    let r = (a3 + b3).cbrt();
                    let x_over_r = (a3 + 3f64.sqrt() * b3) / (a3 + b3);
                    (r, r * x_over_r)
                }
                None => (r_cl, r_cl),
            }
        };
        match c.tc_k {
            Some(tc) if t_k < tc => {
                let (rn, xn) = normal(tc);
                let xnorm = (t_k / tc).powi(4);
                let rres = RS_RESIDUAL_SC_10GHZ * (f_hz / 1e10).powi(2);
                (xnorm * rn + (1.0 - xnorm) * rres, xnorm * xn)
            }
            _ => normal(t_k),
        }
    }
}

/// A conductor's surface impedance at one temperature, reduced to frequency-independent coefficients so
/// that many frequencies cost one cube root each: R_normal = cbrt(a3 f^1.5 + b3 f^2) (or kc sqrt f when
/// there is no anomalous term), with the superconducting blend R = wn R_normal(f) + wr f^2, X = wn X_normal(f).
/// [`SurfaceCoeffs::eval`] equals [`Material::surface_impedance`] to rounding (tested).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SurfaceCoeffs {
    /// Classical skin effect: r_cl = kc sqrt(f).
    pub kc: f64,
    /// r_cl^3 = a3 f^1.5 and r_inf^3 = b3 f^2; b3 = 0 without the anomalous skin effect.
    pub a3: f64,
    pub b3: f64,
    /// Weight of the normal-state impedance and of the residual f^2 term (1 and 0 for a normal metal).
    pub wn: f64,
    pub wr: f64,
}

impl SurfaceCoeffs {
    /// (R_s, X_s) at `f_hz`, given `sqrt_f` = sqrt(f_hz), ohm.
    #[inline]
    pub fn eval(&self, f_hz: f64, sqrt_f: f64) -> (f64, f64) {
        if f_hz <= 0.0 {
            return (0.0, 0.0);
        }
        let (rn, xn) = if self.b3 == 0.0 {
            let r = self.kc * sqrt_f;
            (r, r)
        } else {
            let a3 = self.a3 * f_hz * sqrt_f;
            let b3 = self.b3 * f_hz * f_hz;
            let r = (a3 + b3).cbrt();
            (r, r * (a3 + 3f64.sqrt() * b3) / (a3 + b3))
        };
        (self.wn * rn + self.wr * f_hz * f_hz, self.wn * xn)
    }
}

impl Material {
    /// The frequency-independent coefficients of [`Material::surface_impedance`] at `t_k`.
    pub fn surface_coeffs(self, t_k: f64) -> SurfaceCoeffs {
        let Some(c) = self.conductor() else {
            return SurfaceCoeffs {
                kc: 0.0,
                a3: 0.0,
                b3: 0.0,
                wn: 0.0,
                wr: 0.0,
            };
        };
        let pi = std::f64::consts::PI;
        let (t_normal, wn, wr) = match c.tc_k {
            Some(tc) if t_k < tc => {
                let xnorm = (t_k / tc).powi(4);
                (tc, xnorm, (1.0 - xnorm) * RS_RESIDUAL_SC_10GHZ / 1e20)
            }
            _ => (t_k, 1.0, 0.0),
        };
        let kc = (pi * MU0 * self.resistivity(t_normal)).sqrt();
        let b3 = match c.rho_l {
            // r_inf^3 = sqrt(3) (2 pi f)^2 mu0^2 rho_l / (16 pi).
            Some(rho_l) => 3f64.sqrt() * 4.0 * pi * pi * MU0 * MU0 * rho_l / (16.0 * pi),
            None => 0.0,
        };
        SurfaceCoeffs {
            kc,
            a3: kc.powi(3),
            b3,
            wn,
            wr,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn copper_fit_matches_table_anchors() {
        // NIST OFHC fit integrated: Ekin A6 lists 0.326 % (4 K) and 0.304 % (77 K).
        assert!((copper_contraction(4.0) * 100.0 - 0.326).abs() < 0.002);
        assert!((copper_contraction(77.0) * 100.0 - 0.304).abs() < 0.002);
        assert!(copper_contraction(293.0).abs() < 1e-12);
    }

    #[test]
    fn kept_copper_integrals_are_the_integrals() {
        // Asked twice, and past the memo's size, the answer is the integral itself, bit for bit.
        for k in 0..(COPPER_MEMO_SIZE + 10) {
            let t = 1.0 + k as f64 * 0.07;
            assert_eq!(copper_contraction(t), integrate_copper_contraction(t));
            assert_eq!(copper_contraction(t), integrate_copper_contraction(t));
        }
    }

    #[test]
    fn names_table_is_consistent() {
        let canonical: Vec<&str> = MATERIAL_NAMES.iter().map(|(_, c, _)| *c).collect();
        assert_eq!(canonical, Material::NAMES);
        let mut all: Vec<&str> = Vec::new();
        for (m, c, aliases) in MATERIAL_NAMES {
            assert_eq!(Material::parse(c), Some(*m), "{c}");
            assert_eq!(m.name(), *c);
            for a in aliases.iter().chain(std::iter::once(c)) {
                // Stored as compared: a name that is not already normalised could never match.
                assert_eq!(crate::line::names::normalise(a), *a, "{a}");
                assert!(!all.contains(a), "'{a}' is listed twice");
                all.push(a);
            }
        }
    }

    #[test]
    fn interp_is_piecewise_linear() {
        let t = [(0.0, 0.0), (10.0, 1.0), (20.0, 3.0)];
        assert_eq!(interp(&t, -5.0), 0.0);
        assert!((interp(&t, 15.0) - 2.0).abs() < 1e-12);
        assert!((interp(&t, 25.0) - 4.0).abs() < 1e-12);
    }

    #[test]
    fn surface_coefficients_match_the_direct_surface_impedance() {
        use Material::*;
        for m in [
            Copper,
            Silver,
            Stainless304,
            Cupronickel,
            SilverPlatedCupronickel,
            Brass,
            Nbti,
            Niobium,
            Ptfe,
        ] {
            for t in [0.015, 1.0, 3.0, 8.0, 9.5, 20.0, 77.0, 150.0, 295.0] {
                let c = m.surface_coeffs(t);
                for f in [1e6, 3.3e7, 1e9, 5.5e9, 2e10, 4e10] {
                    let (r0, x0) = m.surface_impedance(f, t);
                    let (r1, x1) = c.eval(f, f.sqrt());
                    let tol = 1e-12 * r0.abs().max(x0.abs()).max(1e-300);
                    assert!(
                        (r0 - r1).abs() <= tol && (x0 - x1).abs() <= tol,
                        "{m:?} {t} K {f} Hz: ({r0}, {x0}) vs ({r1}, {x1})"
                    );
                }
            }
        }
    }
}
