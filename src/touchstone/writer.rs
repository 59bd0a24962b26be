//! Writing S-parameter Touchstone files, version 1 or 2.0.
//!
//! Version 2 files are written as `[Version] 2.0`: it has every keyword we need, and more readers accept
//! 2.0 than 2.1. Numbers are written with Rust's shortest round-trip representation in exponent form
//! (`{:e}`), so RI values read back bit for bit; frequencies are divided by the unit, so they read back
//! within one rounding. Layout (Touchstone 1.1, "Network Data"; the same layout is legal in version 2):
//! 1- and 2-ports one record per line (2-ports N11 N21 N12 N22, `[Two-Port Data Order] 21_12`), 3- and
//! 4-ports one matrix row per line, 5+ ports at most 4 pairs per line, each row on a new line.

use super::{Format, FreqUnit, TouchstoneError};
use crate::Network;
use num_complex::Complex64 as C;
use std::fmt::Write as _;
use std::path::Path;

/// Which major version to write.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum WriteVersion {
    /// Version 1 (no keywords): one reference resistance for all ports.
    #[default]
    V1,
    /// Version 2.0 (keywords; per-port references with `[Reference]`).
    V2,
}

/// How to write a file. Default: version 1, RI, GHz, no comments.
#[derive(Debug, Clone, PartialEq)]
pub struct WriteOptions {
    pub version: WriteVersion,
    pub format: Format,
    pub unit: FreqUnit,
    /// Written as `! ...` lines at the top.
    pub comments: Vec<String>,
}

impl Default for WriteOptions {
    fn default() -> Self {
        WriteOptions {
            version: WriteVersion::V1,
            format: Format::RI,
            unit: FreqUnit::GHz,
            comments: Vec::new(),
        }
    }
}

/// Smallest magnitude written in DB format, so an exact zero becomes a finite (very negative) dB value.
const MIN_DB_MAGNITUDE: f64 = f64::MIN_POSITIVE;

/// Most pairs on one line for 5+ ports (Touchstone 1.1, "Network Data": at most four pairs per line).
const PAIRS_PER_LINE: usize = 4;

/// The file text of `network` as S-parameters.
pub fn write(network: &Network, options: &WriteOptions) -> Result<String, TouchstoneError> {
    let n = network.ports;
    check(network)?;
    let r0 = network.reference_ohm[0];
    let same_ref = network.reference_ohm.iter().all(|&r| r == r0);
    if options.version == WriteVersion::V1 && !same_ref {
        return Err(TouchstoneError::Invalid(format!(
            "the network has different reference impedances per port ({:?} ohm), which version 1 cannot hold; write version 2 (--touchstone-version 2)",
            network.reference_ohm
        )));
    }
    if !network.noise.is_empty() && n != 2 {
        return Err(TouchstoneError::Invalid(format!(
            "noise data exist only for 2-ports, but the network has {n} ports; drop the noise data"
        )));
    }
    check_noise(network, options)?;
    let mut out = String::with_capacity(64 + network.len() * (1 + 2 * n * n) * 24);
    for c in &options.comments {
        for line in c.lines() {
            let _ = writeln!(out, "! {line}");
        }
    }
    let v2 = options.version == WriteVersion::V2;
    if v2 {
        out.push_str("[Version] 2.0\n");
    }
    let _ = writeln!(
        out,
        "# {} S {} R {r0}",
        options.unit.as_str(),
        options.format.as_str(),
    );
    if v2 {
        let _ = writeln!(out, "[Number of Ports] {n}");
        if n == 2 {
            out.push_str("[Two-Port Data Order] 21_12\n");
        }
        let _ = writeln!(out, "[Number of Frequencies] {}", network.len());
        if !network.noise.is_empty() {
            let _ = writeln!(out, "[Number of Noise Frequencies] {}", network.noise.len());
        }
        if !same_ref {
            out.push_str("[Reference]");
            for r in &network.reference_ohm {
                let _ = write!(out, " {r}");
            }
            out.push('\n');
        }
        out.push_str("[Network Data]\n");
    }
    let scale = options.unit.hz();
    let freqs: Vec<f64> = network.freqs_hz.iter().map(|f| f / scale).collect();
    if freqs.windows(2).any(|w| w[1] <= w[0]) {
        return Err(TouchstoneError::Invalid(format!(
            "two frequencies become equal when written in {}; choose a smaller unit (e.g. --unit Hz)",
            options.unit.as_str()
        )));
    }
    let written = freq_texts(&network.freqs_hz, scale);
    for (k, f) in written.iter().enumerate() {
        out.push_str(f);
        if n <= 2 {
            let order: &[(usize, usize)] = if n == 1 {
                &[(0, 0)]
            } else {
                &[(0, 0), (1, 0), (0, 1), (1, 1)]
            };
            for &(i, j) in order {
                push_pair(&mut out, network.at(k, i, j), options.format);
            }
            out.push('\n');
            continue;
        }
        for i in 0..n {
            for j in 0..n {
                if j > 0 && n > 4 && j % PAIRS_PER_LINE == 0 {
                    out.push('\n');
                }
                push_pair(&mut out, network.at(k, i, j), options.format);
            }
            out.push('\n');
        }
    }
    if !network.noise.is_empty() {
        if v2 {
            out.push_str("[Noise Data]\n");
        } else {
            out.push_str("! noise parameters: f NFmin(dB) |Gamma_opt| angle(deg) Rn(normalised)\n");
        }
        let rn_scale = if v2 { 1.0 } else { 1.0 / r0 };
        for p in &network.noise {
            let _ = writeln!(
                out,
                "{} {} {} {} {}",
                fmt_freq(p.freq_hz, scale),
                fmt_num(p.nf_min_db),
                fmt_num(p.gamma_opt.norm()),
                fmt_num(p.gamma_opt.arg().to_degrees()),
                fmt_num(p.rn_ohm * rn_scale)
            );
        }
    }
    if v2 {
        out.push_str("[End]\n");
    }
    Ok(out)
}

/// Write `network` to `path` through [`crate::output::write_output`] (never over an input, never over an
/// existing file unless `overwrite`).
pub fn write_file(
    path: &Path,
    network: &Network,
    options: &WriteOptions,
    overwrite: bool,
    inputs: &[&Path],
) -> crate::Result<()> {
    let text = write(network, options)?;
    crate::output::write_output(path, text.as_bytes(), overwrite, inputs)
}

fn check(network: &Network) -> Result<(), TouchstoneError> {
    let n = network.ports;
    let bad = |msg: String| Err(TouchstoneError::Invalid(msg));
    if n == 0 {
        return bad("a network with 0 ports cannot be written".into());
    }
    if network.s.len() != network.len() * n * n || network.reference_ohm.len() != n {
        return bad(format!(
            "inconsistent network: {} frequencies, {} values, {} references for {n} ports",
            network.len(),
            network.s.len(),
            network.reference_ohm.len()
        ));
    }
    if network.is_empty() {
        return bad("a network without frequencies cannot be written".into());
    }
    if network
        .reference_ohm
        .iter()
        .any(|r| !(r.is_finite() && *r > 0.0))
    {
        return bad(format!(
            "reference impedances must be positive: {:?}",
            network.reference_ohm
        ));
    }
    if let Some(w) = network
        .freqs_hz
        .windows(2)
        .position(|w| w[1] <= w[0] || w[1].is_nan())
    {
        return bad(format!(
            "frequencies must increase: point {} ({} Hz) is not above the one before",
            w + 1,
            network.freqs_hz[w + 1]
        ));
    }
    if network.freqs_hz.iter().any(|f| !f.is_finite() || *f < 0.0)
        || network
            .s
            .iter()
            .any(|v| !v.re.is_finite() || !v.im.is_finite())
    {
        return bad("the network holds a non-finite or negative-frequency value, which Touchstone cannot hold".into());
    }
    Ok(())
}

/// Noise records must survive the trip: finite, increasing in the written unit, and in version 1 starting
/// at or below the last network frequency (that is how a version 1 reader finds them; Touchstone 1.1,
/// "Noise Parameter Data").
fn check_noise(network: &Network, options: &WriteOptions) -> Result<(), TouchstoneError> {
    let Some(first) = network.noise.first() else {
        return Ok(());
    };
    let scale = options.unit.hz();
    let r0 = network.reference_ohm[0];
    let finite = network.noise.iter().all(|p| {
        p.freq_hz.is_finite()
            && p.freq_hz >= 0.0
            && p.nf_min_db.is_finite()
            && p.gamma_opt.norm().is_finite()
            && (p.rn_ohm / r0).is_finite()
    });
    if !finite {
        return Err(TouchstoneError::Invalid(
            "the noise data hold a non-finite or negative-frequency value, which Touchstone cannot hold".into(),
        ));
    }
    if network
        .noise
        .windows(2)
        .any(|w| w[1].freq_hz / scale <= w[0].freq_hz / scale)
    {
        return Err(TouchstoneError::Invalid(format!(
            "noise frequencies must increase (also when written in {}); sort them or choose a smaller unit",
            options.unit.as_str()
        )));
    }
    let last = network.freqs_hz[network.len() - 1];
    if options.version == WriteVersion::V1 && first.freq_hz / scale > last / scale {
        return Err(TouchstoneError::Invalid(format!(
            "the first noise frequency ({} Hz) is above the last network frequency ({last} Hz), so a version 1 reader could not tell noise from network data; write version 2 (--touchstone-version 2)",
            first.freq_hz
        )));
    }
    Ok(())
}

/// How far a written frequency may read back from the one held, in units in the last place of the
/// frequency in Hz. A file's frequency is a decimal in its unit scaled to Hz by a power of ten, which binary
/// floating point rounds (parsing, then multiplying), so the value held is within a couple of ulps of the
/// decimal the file gave; 4 leaves a margin (common practice, no source). Within it the shortest decimal is
/// written: `504.75` MHz, not `5.0475000000000006e2`.
pub const FREQ_ULPS: f64 = 4.0;

/// A frequency `f_hz` written in the unit of `scale` Hz: the shortest decimal (Rust's `{}` of the value it
/// reads as) whose value, scaled back to Hz, is within [`FREQ_ULPS`] of `f_hz`.
fn fmt_freq(f_hz: f64, scale: f64) -> String {
    let x = f_hz / scale;
    let tol = FREQ_ULPS * f64::EPSILON * f_hz.abs();
    for digits in 0..17 {
        let short: f64 = format!("{x:.digits$e}").parse().unwrap_or(f64::NAN);
        if (short * scale - f_hz).abs() <= tol {
            return format!("{short}");
        }
    }
    format!("{x}")
}

/// Every frequency of a sweep as written ([`fmt_freq`]); should two short forms read back equal or out of
/// order (points closer than [`FREQ_ULPS`]), each is written in full, the shortest form of its own value.
fn freq_texts(freqs_hz: &[f64], scale: f64) -> Vec<String> {
    let short: Vec<String> = freqs_hz.iter().map(|&f| fmt_freq(f, scale)).collect();
    let read: Vec<f64> = short
        .iter()
        .map(|t| t.parse::<f64>().unwrap_or(f64::NAN))
        .collect();
    if read.windows(2).all(|w| w[0] < w[1]) {
        short
    } else {
        freqs_hz.iter().map(|f| format!("{}", f / scale)).collect()
    }
}

fn fmt_num(v: f64) -> String {
    format!("{v:e}")
}

fn push_pair(out: &mut String, v: C, format: Format) {
    let (a, b) = match format {
        Format::RI => (v.re, v.im),
        Format::MA => (v.norm(), v.arg().to_degrees()),
        Format::DB => (
            20.0 * v.norm().max(MIN_DB_MAGNITUDE).log10(),
            v.arg().to_degrees(),
        ),
    };
    let _ = write!(out, " {a:e} {b:e}");
}
