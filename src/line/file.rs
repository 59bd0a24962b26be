//! The TOML line file (format in docs/line-file.md) and its resolution into a [`Line`].
//!
//! Every error names the file, the 1-based line and column and the key, and says what is allowed. The
//! file is read once, resolved once; nothing later looks at the TOML again.
//!
//! Material and cable kind names are matched as people write them ([`super::names`]: any case, aliases
//! for materials) and an unknown one gets the closest known name. Connectors without their own length are
//! counted in the cables' lengths unless the file says `connector_lengths = "added"`
//! ([`ConnectorLengths`]): their sections are carved out of the neighbouring cables after the elements are
//! read, before positions are assigned.

use super::catalogue::{self, CableKind};
use super::chain::{ConnectorLengths, Element, ElementKind, Line, Load, Stage, ROOM_STAGE};
use super::materials::{Material, PtfeModel, ROOM_K};
use super::names;
use super::LineError;
use crate::limits::{
    clip, clip_to, read_capped, short_number, IMPEDANCE_RANGE_OHM, MAX_ATTENUATOR_DB,
    MAX_CABLE_LOSS_DB_PER_M, MAX_ECHO_CHARS, MAX_ELEMENTS, MAX_LINE_FILE_BYTES, MAX_LINE_LENGTH_M,
    MAX_LOSS_TANGENT, RADIUS_RANGE_M,
};
use serde::de::{self, Deserializer, Visitor};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::ops::Range;
use std::path::{Path, PathBuf};
use toml::Spanned;

/// Default length of a connector pair's section, m (common practice, no source: an SMA pair is ~8 mm).
/// Under `connector_lengths = "in-cables"` (the default) it is carved out of the cables beside the
/// connector; under `"added"` it adds to the chain.
pub const CONNECTOR_LENGTH_M: f64 = 8e-3;
/// Default impedance of a connector section, ohm: slightly off 50 ohm so a connector shows as a small
/// echo, as real ones do (common practice, no source; |Gamma| of the step ~0.01).
pub const CONNECTOR_IMPEDANCE_OHM: f64 = 51.0;
/// Default as-built length of an attenuator body, m (common practice, no source: SMA attenuators are
/// ~2 cm).
pub const ATTENUATOR_LENGTH_M: f64 = 0.02;
/// Relative permittivity of an attenuator body for its delay (PTFE-like; common practice, no source).
pub const ATTENUATOR_ER: f64 = 2.03;

/// A number written as an integer or a float, or a quantity written as a string with its unit
/// (`"30 cm"`, `"4 K"`, `"20 dB"`); the string is read by [`quantity`] in the unit family of its key.
#[derive(Debug, Clone, PartialEq)]
enum Num {
    Value(f64),
    Text(String),
}

impl<'de> Deserialize<'de> for Num {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Num, D::Error> {
        struct V;
        impl Visitor<'_> for V {
            type Value = Num;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number, or a quantity with its unit in quotes (\"30 cm\")")
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Num, E> {
                Ok(Num::Value(v))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Num, E> {
                Ok(Num::Value(v as f64))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Num, E> {
                Ok(Num::Value(v as f64))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<Num, E> {
                Ok(Num::Text(v.to_string()))
            }
        }
        d.deserialize_any(V)
    }
}

/// `load = "open"` or `load = 75.0`.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(untagged)]
enum RawLoad {
    Word(String),
    Ohms(f64),
    Int(i64),
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFile {
    name: Spanned<String>,
    impedance_ohm: Option<Spanned<Num>>,
    ptfe_model: Option<Spanned<String>>,
    connector_lengths: Option<Spanned<String>>,
    gain_in_path: Option<Spanned<toml::Value>>,
    #[serde(default)]
    stages: Option<Spanned<BTreeMap<String, Spanned<Num>>>>,
    #[serde(default, rename = "element")]
    elements: Vec<Spanned<RawElement>>,
    #[serde(default)]
    cables: BTreeMap<String, Spanned<RawCable>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawElement {
    kind: Spanned<String>,
    name: Spanned<String>,
    cable: Option<Spanned<String>>,
    length_m: Option<Spanned<Num>>,
    from: Option<Spanned<String>>,
    to: Option<Spanned<String>>,
    stage: Option<Spanned<String>>,
    impedance_ohm: Option<Spanned<Num>>,
    loss_db: Option<Spanned<Num>>,
    load: Option<Spanned<RawLoad>>,
    return_loss_db: Option<Spanned<Num>>,
    pin_radius_m: Option<Spanned<Num>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawCable {
    velocity_factor: Option<Spanned<Num>>,
    loss_db_per_m_1ghz: Option<Spanned<Num>>,
    loss_tangent: Option<Spanned<Num>>,
    conductor: Option<Spanned<String>>,
    inner_conductor: Option<Spanned<String>>,
    outer_conductor: Option<Spanned<String>>,
    dielectric: Option<Spanned<String>>,
    impedance_ohm: Option<Spanned<Num>>,
    inner_radius_m: Option<Spanned<Num>>,
    outer_radius_m: Option<Spanned<Num>>,
}

struct Ctx<'a> {
    path: &'a Path,
    text: &'a str,
    /// Byte offset where each line starts, built once so that placing a span costs a binary search, not a
    /// scan of the text (a file of thousands of elements is placed once per element).
    line_starts: Vec<usize>,
}

impl<'a> Ctx<'a> {
    fn new(path: &'a Path, text: &'a str) -> Self {
        let line_starts = std::iter::once(0)
            .chain(memchr::memchr_iter(b'\n', text.as_bytes()).map(|i| i + 1))
            .collect();
        Ctx {
            path,
            text,
            line_starts,
        }
    }

    /// 1-based line and column (in characters) of byte offset `pos`.
    fn line_col(&self, pos: usize) -> (usize, usize) {
        let pos = pos.min(self.text.len());
        // The last line start at or before `pos`.
        let line = self.line_starts.partition_point(|&s| s <= pos);
        let start = self.line_starts[line - 1];
        let col = self.text.get(start..pos).map_or(0, |s| s.chars().count()) + 1;
        (line, col)
    }

    fn err(&self, span: Range<usize>, key: Option<&str>, message: impl Into<String>) -> LineError {
        let (line, column) = self.line_col(span.start);
        LineError::File {
            path: self.path.to_path_buf(),
            line,
            column,
            key: key.map(str::to_string),
            message: message.into(),
        }
    }
}

/// Read and resolve a line file. Files above [`MAX_LINE_FILE_BYTES`] and devices are refused before
/// anything is read; a pipe is read up to that limit.
pub fn read_file(path: &Path) -> crate::Result<Line> {
    let bytes = read_capped(path, MAX_LINE_FILE_BYTES, "line file")
        .map_err(|e| crate::Error::io(path, e))?;
    let text = String::from_utf8(bytes).map_err(|e| {
        let good = &e.as_bytes()[..e.utf8_error().valid_up_to()];
        let line = 1 + memchr::memchr_iter(b'\n', good).count();
        LineError::File {
            path: path.to_path_buf(),
            line,
            column: 0,
            key: None,
            message: "the file is not UTF-8 text (TOML files are UTF-8); save it as UTF-8".into(),
        }
    })?;
    Ok(parse(&text, path)?)
}

/// Parse and resolve line-file text; `path` names it in errors. A UTF-8 byte-order mark at the start is
/// skipped with a `byte-order-mark` warning.
pub fn parse(text: &str, path: &Path) -> Result<Line, LineError> {
    if let Some(rest) = text.strip_prefix(crate::touchstone::BYTE_ORDER_MARK) {
        let mut line = parse(rest, path)?;
        line.warnings.insert(
            0,
            crate::Warning::new(
                "byte-order-mark",
                "the file starts with a UTF-8 byte-order mark (an invisible character some editors add); it was skipped",
                "save the file as UTF-8 without a byte-order mark",
            )
            .at(format!("{}:1", path.display())),
        );
        return Ok(line);
    }
    let ctx = Ctx::new(path, text);
    let raw: RawFile = toml::from_str(text).map_err(|e| {
        let span = e.span().unwrap_or(0..0);
        let msg = e.message().to_string();
        let key = msg
            .split('`')
            .nth(1)
            .filter(|_| msg.starts_with("unknown field") || msg.starts_with("missing field"))
            .map(str::to_string);
        let hint = if msg.starts_with("unknown field") {
            "; see docs/line-file.md for the keys each table takes"
        } else {
            ""
        };
        ctx.err(
            span,
            key.as_deref(),
            format!("{}{hint}", clip_to(&msg, 10 * MAX_ECHO_CHARS)),
        )
    })?;
    if let Some(extra) = raw.elements.get(MAX_ELEMENTS) {
        return Err(ctx.err(
            extra.span(),
            Some("element"),
            format!(
                "more than {MAX_ELEMENTS} [[element]] entries (coldtrace's limit, docs/limits.md); \
                 a cryostat line has tens: check that the file is the line you meant"
            ),
        ));
    }
    resolve(&ctx, raw)
}

/// A positive number (`positive`) that must also lie in `lo..=hi` (`unit` for the message): the ranges of
/// docs/limits.md, beyond which the physics overflows or means nothing.
fn ranged(
    ctx: &Ctx,
    v: &Spanned<Num>,
    key: &str,
    allow_zero: bool,
    (lo, hi): (f64, f64),
    unit: &str,
) -> Result<f64, LineError> {
    let x = positive(ctx, v, key, allow_zero)?;
    let unit = if unit.is_empty() {
        String::new()
    } else {
        format!(" {unit}")
    };
    if (lo..=hi).contains(&x) || (allow_zero && x == 0.0) {
        Ok(x)
    } else {
        Err(ctx.err(
            v.span(),
            Some(key),
            format!(
                "{}{unit} is outside {} to {}{unit}, the range coldtrace accepts here (docs/limits.md); \
                 check the value and its unit",
                short_number(x),
                short_number(lo),
                short_number(hi)
            ),
        ))
    }
}

/// The spellings of the built-in room stage, compared after `names::normalise` (so in any case).
const ROOM_ALIASES: &[&str] = &["room", "rt", "300k", "room-temperature"];

/// Whether a stage name written in a line file is the built-in room stage.
fn is_room(name: &str) -> bool {
    ROOM_ALIASES.contains(&super::names::normalise(name).as_str())
}

/// Whether two stage names are one (any case, surrounding blanks ignored).
fn same_stage(a: &str, b: &str) -> bool {
    super::names::normalise(a) == super::names::normalise(b)
}

/// Why a stage temperature, accepted, cannot be right: 0 K cannot be reached (third law of
/// thermodynamics), and a stage below the room stage cannot be warmer than room, 295 K.
fn unlikely_stage_kelvin(k: f64) -> Option<&'static str> {
    if k == 0.0 {
        Some("cannot be reached (absolute zero); a mixing chamber runs at about 0.01 K")
    } else if k > ROOM_K {
        Some("is warmer than the room stage (295 K) above it")
    } else {
        None
    }
}

/// The number a key holds, in the unit its name states: a bare number as written, a quoted quantity
/// read with its unit ([`super::quantity::read`]), refused at its position when of another family.
fn quantity(ctx: &Ctx, v: &Spanned<Num>, key: &str) -> Result<f64, LineError> {
    match v.get_ref() {
        Num::Value(x) => Ok(*x),
        Num::Text(t) => super::quantity::read(key, t).map_err(|m| ctx.err(v.span(), Some(key), m)),
    }
}

fn positive(ctx: &Ctx, v: &Spanned<Num>, key: &str, allow_zero: bool) -> Result<f64, LineError> {
    let x = quantity(ctx, v, key)?;
    let ok = x.is_finite() && if allow_zero { x >= 0.0 } else { x > 0.0 };
    if ok {
        Ok(x)
    } else {
        Err(ctx.err(
            v.span(),
            Some(key),
            format!(
                "{} is not allowed: give a {} number",
                short_number(x),
                if allow_zero {
                    "non-negative"
                } else {
                    "positive"
                }
            ),
        ))
    }
}

fn material(ctx: &Ctx, v: &Spanned<String>, key: &str) -> Result<Material, LineError> {
    Material::parse(v.get_ref()).ok_or_else(|| {
        ctx.err(
            v.span(),
            Some(key),
            format!(
                "unknown material '{}'{}; known (aliases in brackets, any case): {}",
                clip(v.get_ref()),
                names::did_you_mean(Material::closest(v.get_ref())),
                Material::listing()
            ),
        )
    })
}

fn user_cable(
    ctx: &Ctx,
    name: &str,
    raw: &Spanned<RawCable>,
    z_line: f64,
) -> Result<CableKind, LineError> {
    let r = raw.get_ref();
    let shown = clip(name);
    if let Some(b) = catalogue::built_in_name(name) {
        return Err(ctx.err(
            raw.span(),
            Some(&format!("cables.{name}")),
            format!(
                "'{name}' is the built-in cable kind '{b}' (kind names are matched in any case); \
                 give your kind another name"
            ),
        ));
    }
    let er = match &r.velocity_factor {
        Some(v) => {
            let vf = positive(ctx, v, "velocity_factor", false)?;
            if vf > 1.0 {
                return Err(ctx.err(
                    v.span(),
                    Some("velocity_factor"),
                    format!("{vf} is above 1: a velocity factor lies in (0, 1]"),
                ));
            }
            1.0 / (vf * vf)
        }
        None => {
            return Err(ctx.err(
                raw.span(),
                Some("velocity_factor"),
                format!("cable kind '{shown}' needs velocity_factor (e.g. 0.70)"),
            ))
        }
    };
    let both = match &r.conductor {
        Some(c) => material(ctx, c, "conductor")?,
        None => Material::Copper,
    };
    let inner = match &r.inner_conductor {
        Some(c) => material(ctx, c, "inner_conductor")?,
        None => both,
    };
    let outer = match &r.outer_conductor {
        Some(c) => material(ctx, c, "outer_conductor")?,
        None => both,
    };
    for (m, v, key) in [
        (inner, &r.inner_conductor, "inner_conductor"),
        (outer, &r.outer_conductor, "outer_conductor"),
    ] {
        if m.conductor().is_none() {
            let span = v.as_ref().map(|s| s.span()).unwrap_or(raw.span());
            return Err(ctx.err(span, Some(key), "a dielectric cannot be a conductor"));
        }
    }
    let dielectric = match &r.dielectric {
        Some(d) => {
            let m = material(ctx, d, "dielectric")?;
            if !matches!(m, Material::Ptfe | Material::Polyethylene) {
                return Err(ctx.err(
                    d.span(),
                    Some("dielectric"),
                    "the dielectric must be 'ptfe' or 'polyethylene'",
                ));
            }
            m
        }
        None => Material::Ptfe,
    };
    let a = match &r.inner_radius_m {
        Some(v) => ranged(ctx, v, "inner_radius_m", false, RADIUS_RANGE_M, "m")?,
        None => catalogue::A_086,
    };
    let b = match (&r.outer_radius_m, &r.impedance_ohm) {
        (Some(_), Some(z)) => {
            return Err(ctx.err(
                z.span(),
                Some("impedance_ohm"),
                "give outer_radius_m or impedance_ohm, not both",
            ))
        }
        (Some(v), None) => {
            let b = ranged(ctx, v, "outer_radius_m", false, RADIUS_RANGE_M, "m")?;
            if b <= a {
                return Err(ctx.err(
                    v.span(),
                    Some("outer_radius_m"),
                    "outer_radius_m must exceed inner_radius_m",
                ));
            }
            b
        }
        (None, z) => {
            let z0 = match z {
                Some(z) => ranged(ctx, z, "impedance_ohm", false, IMPEDANCE_RANGE_OHM, "ohm")?,
                None => z_line,
            };
            a * (z0 * er.sqrt() / catalogue::ETA0_OVER_2PI).exp()
        }
    };
    Ok(CableKind {
        name: name.to_string(),
        inner_radius_m: a,
        outer_radius_m: b,
        er,
        dielectric,
        inner,
        outer,
        loss_tangent: match &r.loss_tangent {
            Some(v) => ranged(ctx, v, "loss_tangent", true, (0.0, MAX_LOSS_TANGENT), "")?,
            None => catalogue::PTFE_TAN_D,
        },
        loss_db_per_m_1ghz: match &r.loss_db_per_m_1ghz {
            Some(v) => Some(ranged(
                ctx,
                v,
                "loss_db_per_m_1ghz",
                false,
                (0.0, MAX_CABLE_LOSS_DB_PER_M),
                "dB/m",
            )?),
            None => None,
        },
    })
}

const KEYS: &[(&str, &[&str])] = &[
    (
        "cable",
        &[
            "kind",
            "name",
            "cable",
            "length_m",
            "from",
            "to",
            "impedance_ohm",
        ],
    ),
    (
        "connector",
        &[
            "kind",
            "name",
            "stage",
            "length_m",
            "impedance_ohm",
            "pin_radius_m",
        ],
    ),
    (
        "attenuator",
        &[
            "kind",
            "name",
            "stage",
            "loss_db",
            "length_m",
            "impedance_ohm",
        ],
    ),
    (
        "device",
        &["kind", "name", "stage", "load", "return_loss_db"],
    ),
];

fn resolve(ctx: &Ctx, raw: RawFile) -> Result<Line, LineError> {
    let z_line = match &raw.impedance_ohm {
        Some(v) => ranged(ctx, v, "impedance_ohm", false, IMPEDANCE_RANGE_OHM, "ohm")?,
        None => 50.0,
    };
    if raw.name.get_ref().trim().is_empty() {
        return Err(ctx.err(
            raw.name.span(),
            Some("name"),
            "the line needs a name, e.g. \"north-fridge/in-07\"",
        ));
    }
    let ptfe_model = match &raw.ptfe_model {
        None => PtfeModel::Gapped,
        Some(v) => match v.get_ref().as_str() {
            "free" => PtfeModel::Free,
            "filled" => PtfeModel::Filled,
            "gapped" => PtfeModel::Gapped,
            other => {
                return Err(ctx.err(
                    v.span(),
                    Some("ptfe_model"),
                    format!(
                        "unknown PTFE model '{}'; use free, filled or gapped",
                        clip(other)
                    ),
                ))
            }
        },
    };
    let connector_lengths = match &raw.connector_lengths {
        None => ConnectorLengths::default(),
        Some(v) => ConnectorLengths::parse(v.get_ref()).ok_or_else(|| {
            ctx.err(
                v.span(),
                Some("connector_lengths"),
                format!(
                    "unknown value '{}'; use \"in-cables\" (the default: cable lengths include their \
                     connectors, so a connector without length_m adds no length) or \"added\" (every \
                     connector adds its length, default {} mm)",
                    clip(v.get_ref()),
                    CONNECTOR_LENGTH_M * 1e3
                ),
            )
        })?,
    };
    let mut stages = vec![Stage {
        name: ROOM_STAGE.to_string(),
        kelvin: ROOM_K,
    }];
    let mut stage_warnings = Vec::new();
    if let Some(st) = &raw.stages {
        for (name, t) in st.get_ref() {
            let key = format!("stages.{name}");
            if is_room(name) {
                return Err(ctx.err(
                    t.span(),
                    Some(&key),
                    format!(
                        "'{}' is the built-in stage 'room' (295 K; also written {}); remove it from \
                         [stages]",
                        clip(name),
                        ROOM_ALIASES.join(", ")
                    ),
                ));
            }
            if let Some(other) = stages.iter().find(|s| same_stage(&s.name, name)) {
                return Err(ctx.err(
                    t.span(),
                    Some(&key),
                    format!(
                        "'{}' is the stage '{}' again (stage names are matched in any case); give one \
                         of them another name",
                        clip(name),
                        other.name
                    ),
                ));
            }
            let k = positive(ctx, t, &key, true)?;
            if k > 400.0 {
                return Err(ctx.err(
                    t.span(),
                    Some(&key),
                    format!("{k} K is not a cryostat stage: give kelvin between 0 and 400"),
                ));
            }
            if let Some(why) = unlikely_stage_kelvin(k) {
                let (line, col) = ctx.line_col(t.span().start);
                stage_warnings.push(
                    crate::Warning::new(
                        "stage-temperature",
                        format!("stage '{}' at {k} K {why}", clip(name)),
                        "check the stage's temperature in kelvin",
                    )
                    .at(format!("{}:{line}:{col}", ctx.path.display())),
                );
            }
            stages.push(Stage {
                name: name.clone(),
                kelvin: k,
            });
        }
    }
    stages[1..].sort_by(|a, b| b.kelvin.total_cmp(&a.kelvin));
    let stage_k = |v: &Spanned<String>, key: &str| -> Result<(String, f64), LineError> {
        stages
            .iter()
            .find(|s| {
                same_stage(&s.name, v.get_ref()) || (s.name == ROOM_STAGE && is_room(v.get_ref()))
            })
            .map(|s| (s.name.clone(), s.kelvin))
            .ok_or_else(|| {
                ctx.err(
                    v.span(),
                    Some(key),
                    format!(
                        "unknown stage '{}'; known: {} (define more under [stages])",
                        clip(v.get_ref()),
                        stages
                            .iter()
                            .map(|s| s.name.as_str())
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                )
            })
    };
    let mut kinds: BTreeMap<String, CableKind> = BTreeMap::new();
    // In the order written, so a clash is reported at the later of the two.
    let mut cables: Vec<(&String, &Spanned<RawCable>)> = raw.cables.iter().collect();
    cables.sort_by_key(|(_, c)| c.span().start);
    for (name, c) in cables {
        if let Some(other) = kinds.keys().find(|k| k.eq_ignore_ascii_case(name)) {
            return Err(ctx.err(
                c.span(),
                Some(&format!("cables.{name}")),
                format!(
                    "'{name}' differs from the cable kind '{other}' only in case, and kind names are \
                     matched in any case; give one of them another name"
                ),
            ));
        }
        kinds.insert(name.clone(), user_cable(ctx, name, c, z_line)?);
    }
    let known_kinds = || {
        let mut v: Vec<String> = catalogue::BUILT_IN.iter().map(|s| s.to_string()).collect();
        v.extend(kinds.keys().cloned());
        v.join(", ")
    };
    // A kind by name in any case: the file's own kinds first, then the built-in ones.
    let find_kind = |name: &str| -> Option<CableKind> {
        kinds
            .get(name)
            .or_else(|| {
                kinds
                    .iter()
                    .find(|(k, _)| k.eq_ignore_ascii_case(name.trim()))
                    .map(|(_, v)| v)
            })
            .cloned()
            .or_else(|| catalogue::built_in(name))
    };
    let closest_kind = |name: &str| -> Option<String> {
        let all: Vec<&str> = catalogue::BUILT_IN
            .iter()
            .copied()
            .chain(kinds.keys().map(String::as_str))
            .collect();
        names::closest(name, all.iter().map(|k| (*k, *k))).map(str::to_string)
    };
    let mut elements: Vec<Element> = Vec::new();
    // Where each element's name and its length_m are in the text (for the connector-length errors).
    let mut spans: Vec<(Range<usize>, Option<Range<usize>>)> = Vec::new();
    let mut seen: BTreeMap<String, usize> = BTreeMap::new();
    let mut last_stage = (ROOM_STAGE.to_string(), ROOM_K);
    for sel in &raw.elements {
        let el = sel.get_ref();
        let (line_no, _) = ctx.line_col(sel.span().start);
        let kind = el.kind.get_ref().as_str();
        let allowed = KEYS
            .iter()
            .find(|(k, _)| *k == kind)
            .map(|(_, a)| *a)
            .ok_or_else(|| {
                ctx.err(
                    el.kind.span(),
                    Some("kind"),
                    format!(
                        "unknown element kind '{}'; use cable, connector, attenuator or device",
                        clip(kind)
                    ),
                )
            })?;
        let present: [(&str, Option<Range<usize>>); 10] = [
            ("cable", el.cable.as_ref().map(|v| v.span())),
            ("length_m", el.length_m.as_ref().map(|v| v.span())),
            ("from", el.from.as_ref().map(|v| v.span())),
            ("to", el.to.as_ref().map(|v| v.span())),
            ("stage", el.stage.as_ref().map(|v| v.span())),
            ("impedance_ohm", el.impedance_ohm.as_ref().map(|v| v.span())),
            ("loss_db", el.loss_db.as_ref().map(|v| v.span())),
            ("load", el.load.as_ref().map(|v| v.span())),
            (
                "return_loss_db",
                el.return_loss_db.as_ref().map(|v| v.span()),
            ),
            ("pin_radius_m", el.pin_radius_m.as_ref().map(|v| v.span())),
        ];
        for (key, span) in present {
            if let Some(span) = span {
                if !allowed.contains(&key) {
                    return Err(ctx.err(
                        span,
                        Some(key),
                        format!(
                            "a {kind} does not take '{key}'; it takes: {}",
                            allowed.join(", ")
                        ),
                    ));
                }
            }
        }
        let name = el.name.get_ref().trim().to_string();
        if name.is_empty() {
            return Err(ctx.err(el.name.span(), Some("name"), "every element needs a name"));
        }
        if name.contains(':') || name.contains('@') {
            return Err(ctx.err(
                el.name.span(),
                Some("name"),
                "names may not contain ':' or '@' (they separate parts of a fault spec)",
            ));
        }
        if let Some(first) = seen.get(&name) {
            return Err(ctx.err(
                el.name.span(),
                Some("name"),
                format!("duplicate element name '{}' (first used on line {first}); names must be unique", clip(&name)),
            ));
        }
        seen.insert(name.clone(), line_no);
        let shown = clip(&name);
        let at_stage = |v: &Option<Spanned<String>>| -> Result<(String, f64), LineError> {
            match v {
                Some(s) => stage_k(s, "stage"),
                None => Ok(last_stage.clone()),
            }
        };
        let length = |default: Option<f64>| -> Result<f64, LineError> {
            match (&el.length_m, default) {
                (Some(v), _) => {
                    let l = positive(ctx, v, "length_m", default.is_some())?;
                    if l > MAX_LINE_LENGTH_M {
                        return Err(ctx.err(
                            v.span(),
                            Some("length_m"),
                            format!(
                                "{} m is longer than the {MAX_LINE_LENGTH_M} m limit for one element \
                                 (docs/limits.md); give the as-built length in metres",
                                short_number(l)
                            ),
                        ));
                    }
                    Ok(l)
                }
                (None, Some(d)) => Ok(d),
                (None, None) => Err(ctx.err(
                    sel.span(),
                    Some("length_m"),
                    format!("cable '{shown}' needs length_m (as-built metres)"),
                )),
            }
        };
        let z_el = match &el.impedance_ohm {
            Some(v) => Some(ranged(
                ctx,
                v,
                "impedance_ohm",
                false,
                IMPEDANCE_RANGE_OHM,
                "ohm",
            )?),
            None => None,
        };
        let (kind_v, length_m, from, to) = match kind {
            "cable" => {
                let c = el.cable.as_ref().ok_or_else(|| {
                    ctx.err(
                        sel.span(),
                        Some("cable"),
                        format!(
                            "cable '{shown}' needs cable = KIND; known kinds: {}",
                            known_kinds()
                        ),
                    )
                })?;
                let mut k = find_kind(c.get_ref()).ok_or_else(|| {
                    ctx.err(
                        c.span(),
                        Some("cable"),
                        format!(
                            "unknown cable kind '{}'{}; known kinds (any case): {} (or define one under \
                             [cables.NAME])",
                            clip(c.get_ref()),
                            names::did_you_mean(closest_kind(c.get_ref()).as_deref()),
                            known_kinds()
                        ),
                    )
                })?;
                if let Some(z) = z_el {
                    k = k.with_impedance(z);
                }
                let need =
                    |v: &Option<Spanned<String>>, key: &str| -> Result<(String, f64), LineError> {
                        match v {
                            Some(s) => stage_k(s, key),
                            None => Err(ctx.err(
                                sel.span(),
                                Some(key),
                                format!("cable '{shown}' needs '{key}' (a stage name)"),
                            )),
                        }
                    };
                let from = need(&el.from, "from")?;
                let to = need(&el.to, "to")?;
                (ElementKind::Cable { cable: k }, length(None)?, from, to)
            }
            "connector" => {
                let st = at_stage(&el.stage)?;
                let pin = match &el.pin_radius_m {
                    Some(v) => ranged(ctx, v, "pin_radius_m", false, RADIUS_RANGE_M, "m")?,
                    None => elements
                        .iter()
                        .rev()
                        .find_map(|e| match &e.kind {
                            ElementKind::Cable { cable } => Some(cable.inner_radius_m),
                            _ => None,
                        })
                        .unwrap_or(catalogue::A_086),
                };
                let section = CableKind {
                    name: format!("connector {name}"),
                    inner: Material::BerylliumCopper,
                    outer: Material::Brass,
                    ..catalogue::built_in("cu-086").expect("built-in cu-086")
                }
                .with_impedance(z_el.unwrap_or(CONNECTOR_IMPEDANCE_OHM));
                (
                    ElementKind::Connector {
                        section,
                        pin_radius_m: pin,
                    },
                    length(Some(CONNECTOR_LENGTH_M))?,
                    st.clone(),
                    st,
                )
            }
            "attenuator" => {
                let st = at_stage(&el.stage)?;
                let loss_db = match &el.loss_db {
                    Some(v) => ranged(ctx, v, "loss_db", true, (0.0, MAX_ATTENUATOR_DB), "dB")?,
                    None => {
                        return Err(ctx.err(
                            sel.span(),
                            Some("loss_db"),
                            format!("attenuator '{shown}' needs loss_db (e.g. 20.0)"),
                        ))
                    }
                };
                (
                    ElementKind::Attenuator {
                        loss_db,
                        impedance_ohm: z_el.unwrap_or(z_line),
                        er: ATTENUATOR_ER,
                    },
                    length(Some(ATTENUATOR_LENGTH_M))?,
                    st.clone(),
                    st,
                )
            }
            _ => {
                let st = at_stage(&el.stage)?;
                let load = match (&el.load, &el.return_loss_db) {
                    (Some(l), Some(_)) => {
                        return Err(ctx.err(l.span(), Some("load"), "give load or return_loss_db, not both"))
                    }
                    (Some(l), None) => match l.get_ref() {
                        RawLoad::Word(w) => match w.to_ascii_lowercase().as_str() {
                            "match" | "matched" => Load::Match,
                            "open" => Load::Open,
                            "short" => Load::Short,
                            _ => match crate::units::parse(w, crate::units::Family::Resistance) {
                                Ok(r) if r > 0.0 => Load::Ohms(r),
                                _ => return Err(ctx.err(l.span(), Some("load"), format!("unknown load '{}'; use \"match\", \"open\", \"short\" or a resistance in ohm (75.0 or \"75 ohm\")", clip(w)))),
                            },
                        },
                        RawLoad::Ohms(r) if *r > 0.0 && r.is_finite() => Load::Ohms(*r),
                        RawLoad::Int(r) if *r > 0 => Load::Ohms(*r as f64),
                        _ => return Err(ctx.err(l.span(), Some("load"), "a load resistance must be positive")),
                    },
                    (None, Some(rl)) => {
                        let db = positive(ctx, rl, "return_loss_db", true)?;
                        Load::Reflection(10f64.powf(-db / 20.0))
                    }
                    (None, None) => Load::Match,
                };
                (ElementKind::Device { load }, 0.0, st.clone(), st)
            }
        };
        last_stage = to.clone();
        spans.push((el.name.span(), el.length_m.as_ref().map(|v| v.span())));
        elements.push(Element {
            name,
            kind: kind_v,
            length_m,
            start_m: 0.0,
            from_stage: from.0,
            to_stage: to.0,
            cold_from_k: from.1,
            cold_to_k: to.1,
            line_no,
        });
    }
    if elements.is_empty() {
        return Err(ctx.err(
            0..0,
            Some("element"),
            "the line has no [[element]] entries; add at least one",
        ));
    }
    let mut total_m = 0.0;
    for (e, (name_span, _)) in elements.iter().zip(&spans) {
        total_m += e.length_m;
        if total_m > MAX_LINE_LENGTH_M {
            return Err(ctx.err(
                name_span.clone(),
                Some("length_m"),
                format!(
                    "the line is longer than the {MAX_LINE_LENGTH_M} m limit (docs/limits.md) by the end of \
                     '{}'; check the lengths, which are as-built metres",
                    clip(&e.name)
                ),
            ));
        }
    }
    if connector_lengths == ConnectorLengths::InCables {
        carve_connectors(ctx, &mut elements, &spans)?;
    }
    let mut warnings = stage_warnings;
    let loc = |e: &Element| format!("{}:{}", ctx.path.display(), e.line_no);
    for w in elements.windows(2) {
        let (prev, next) = (&w[0], &w[1]);
        if next.from_stage != prev.to_stage {
            warnings.push(
                crate::Warning::new(
                    "stage-jump",
                    format!(
                        "'{}' starts at stage '{}' but '{}' before it ends at '{}'",
                        next.name, next.from_stage, prev.name, prev.to_stage
                    ),
                    "check the stages: each element should start where the previous one ends",
                )
                .at(loc(next)),
            );
        }
    }
    if let Some(d) = elements
        .iter()
        .position(|e| matches!(e.kind, ElementKind::Device { .. }))
    {
        if d + 1 < elements.len() {
            let hidden: Vec<&str> = elements[d + 1..].iter().map(|e| e.name.as_str()).collect();
            warnings.push(
                crate::Warning::new(
                    "hidden-by-device",
                    format!(
                        "reflection stops at device '{}': {} after it cannot be seen or simulated",
                        elements[d].name,
                        hidden.join(", ")
                    ),
                    "move the device to the end, or remove what reflection cannot reach",
                )
                .at(loc(&elements[d + 1])),
            );
        }
    }
    let mut line = Line::new(raw.name.get_ref().trim(), z_line, stages, elements);
    line.warnings = warnings;
    line.ptfe_model = ptfe_model;
    line.connector_lengths = connector_lengths;
    line.gain_in_path = match &raw.gain_in_path {
        None => false,
        Some(v) => v.get_ref().as_bool().ok_or_else(|| {
            ctx.err(
                v.span(),
                Some("gain_in_path"),
                format!(
                    "takes true or false, without quotes, got {}; true when the line's sweeps pass \
                     through an amplifier (docs/line-file.md, \"Sweeps through gain\")",
                    clip(&v.get_ref().to_string())
                ),
            )
        })?,
    };
    line.source = Some(PathBuf::from(ctx.path));
    Ok(line)
}

/// `connector_lengths = "in-cables"`: every connector without its own `length_m` takes its section out of
/// the cables beside it, half from the end of the cable before and half from the start of the cable
/// after (all from one side when only one neighbour is a cable), so the chain keeps the cables' written
/// lengths and the connector's centre sits at the joint. `spans[i]` is where element `i`'s name and
/// its `length_m` (if written) are in the text.
fn carve_connectors(
    ctx: &Ctx,
    elements: &mut [Element],
    spans: &[(Range<usize>, Option<Range<usize>>)],
) -> Result<(), LineError> {
    let is_cable = |e: &Element| matches!(e.kind, ElementKind::Cable { .. });
    let n = elements.len();
    let mut taken = vec![0.0; n];
    let mut takers: Vec<Vec<String>> = vec![Vec::new(); n];
    for i in 0..n {
        let e = &elements[i];
        if !matches!(e.kind, ElementKind::Connector { .. }) || spans[i].1.is_some() {
            continue;
        }
        let before = i.checked_sub(1).filter(|&b| is_cable(&elements[b]));
        let after = Some(i + 1).filter(|&a| a < n && is_cable(&elements[a]));
        let shares: Vec<(usize, f64)> = match (before, after) {
            (Some(b), Some(a)) => vec![(b, 0.5 * e.length_m), (a, 0.5 * e.length_m)],
            (Some(j), None) | (None, Some(j)) => vec![(j, e.length_m)],
            (None, None) => {
                return Err(ctx.err(
                    spans[i].0.clone(),
                    Some("length_m"),
                    format!(
                        "connector '{}' has no cable before or after it to take its {} mm section \
                         from (connector_lengths = \"in-cables\", the default, counts connectors in \
                         the cables' lengths); give it length_m (it then adds that length to the \
                         chain), or set connector_lengths = \"added\" at the top of the file",
                        e.name,
                        e.length_m * 1e3
                    ),
                ))
            }
        };
        for (j, d) in shares {
            taken[j] += d;
            takers[j].push(e.name.clone());
        }
    }
    for (j, e) in elements.iter_mut().enumerate() {
        if taken[j] == 0.0 {
            continue;
        }
        let left = e.length_m - taken[j];
        if left <= 0.0 {
            let span = spans[j].1.clone().unwrap_or_else(|| spans[j].0.clone());
            return Err(ctx.err(
                span,
                Some("length_m"),
                format!(
                    "cable '{}' is {} m long, but the connector section{} of {} beside it take{} \
                     {:.1} mm of it (connector_lengths = \"in-cables\", the default: a cable's \
                     length includes its connector bodies); check length_m, {}, or set \
                     connector_lengths = \"added\"",
                    e.name,
                    e.length_m,
                    if takers[j].len() > 1 { "s" } else { "" },
                    takers[j].join(" and "),
                    if takers[j].len() > 1 { "" } else { "s" },
                    taken[j] * 1e3,
                    if takers[j].len() > 1 {
                        "give the connectors their own length_m (they then add it to the chain)"
                    } else {
                        "give the connector its own length_m (it then adds it to the chain)"
                    },
                ),
            ));
        }
        e.length_m = left;
    }
    Ok(())
}
