//! Limits on sizes that come from files and flags, in one place (the table is also in docs/limits.md).
//!
//! A count, length or size read from input is checked against these before anything is allocated for it,
//! with checked arithmetic, so an absurd input is refused with a message that states the limit and what
//! to do, never a panic, a hang or runaway memory. They are guards against garbage and mistakes, far above
//! what a real sweep or line needs; none is a rule of the Touchstone specification.
//!
//! | limit | value | applies to |
//! |---|---|---|
//! | [`MAX_SWEEP_FILE_BYTES`] | 256 MiB | a Touchstone file |
//! | [`MAX_LINE_FILE_BYTES`] | 16 MiB | a line file |
//! | [`MAX_PORTS`] | 1000 | `[Number of Ports]`, the `.sNp` extension |
//! | [`MAX_SWEEP_POINTS`] | 1,000,000 | frequencies in a file (`[Number of Frequencies]`, records), `simulate --points` |
//! | [`MAX_SWEEP_VALUES`] | 16,777,216 | complex values (frequencies x ports^2) in one sweep |
//! | [`MAX_TRACE_POINTS`] | 2,000,001 | output points of a trace (`--span` / `--step`) |
//! | [`MAX_SIMULATION_WORK`] | 1e9 | sections x frequencies of one simulation |
//! | [`MAX_FFT_POINTS`] | 16,777,216 | a whole-range trace's FFT (points x `--padding`) |
//! | [`MAX_ELEMENTS`] | 1000 | `[[element]]` entries in a line file |
//! | [`MAX_LINE_LENGTH_M`] | 1000 m | one element's `length_m`, and the line's as-built length |
//! | [`REFERENCE_RANGE_OHM`] | 1e-6 to 1e9 ohm | a sweep's reference resistances (`R`, `[Reference]`) |
//! | [`IMPEDANCE_RANGE_OHM`] | 1 to 1000 ohm | `impedance_ohm` in a line file |
//! | [`RADIUS_RANGE_M`] | 1e-6 to 1 m | `inner_radius_m`, `outer_radius_m`, `pin_radius_m` |
//! | [`MAX_ATTENUATOR_DB`] | 200 dB | an attenuator's `loss_db` |
//! | [`MAX_CABLE_LOSS_DB_PER_M`] | 100 dB/m | a cable kind's `loss_db_per_m_1ghz` |
//! | [`MAX_LOSS_TANGENT`] | 1 | a cable kind's `loss_tangent` |
//! | [`MAX_FREQUENCY_HZ`] | 10 THz | frequencies in a sweep, `simulate --start` / `--stop`, `--at` |
//! | [`MAX_VALUE_MAGNITUDE`] | 1e100 | the real and imaginary parts of each value in a sweep |
//! | [`MAX_ECHO_CHARS`] | 40 characters | a token quoted back in an error message |

use std::borrow::Cow;
use std::io::Read;
use std::path::Path;

/// Largest Touchstone file read, bytes. A 4-port sweep of 100,001 points in RI with 16-digit numbers is
/// about 60 MB; the cap keeps the text and its parsed values (at most about 5 times the text) in memory.
pub const MAX_SWEEP_FILE_BYTES: u64 = 256 << 20;
/// Largest line file read, bytes. A line of a thousand elements is about 100 kB of TOML.
pub const MAX_LINE_FILE_BYTES: u64 = 16 << 20;
/// Largest port count (`1 + 2 N^2` values per record; 1000 ports make two million values a record).
pub const MAX_PORTS: usize = 1000;
/// Most frequency points in one sweep, read or simulated. Analyzers stop at 100,001 points per sweep
/// (common practice, no source); ten times that leaves room for stitched sweeps.
pub const MAX_SWEEP_POINTS: usize = 1_000_000;
/// Fewest frequency points `locate`, `compare` and `history record` analyse a sweep from, and so the fewest
/// `simulate --points` writes: a trace of fewer has no resolution to place anything with (201 or more is
/// usual; common practice, no source).
pub const MIN_TRACE_POINTS: usize = 16;
/// Most complex values (frequencies x ports^2) in one sweep: 256 MiB as complex numbers. A 4-port sweep of
/// a million points fills it.
pub const MAX_SWEEP_VALUES: usize = 1 << 24;
/// Most output points of one trace (a `--span` at a `--step`).
pub const MAX_TRACE_POINTS: usize = 2_000_001;
/// Most sections times frequencies one simulation evaluates (each cable is cut into temperature slices,
/// each slice a section). A section at one frequency took about 120 ns (release build, 2026-12-02): a line of
/// 1000 cables from room temperature to 3.5 K, cold, is 58,000 sections and took 11 s at 1601 points
/// (docs/performance.md); this limit stops at about two minutes.
pub const MAX_SIMULATION_WORK: usize = 1_000_000_000;
/// Largest FFT of a whole-range trace (points times `--padding`): 256 MiB of complex numbers.
pub const MAX_FFT_POINTS: usize = 1 << 24;
/// Most elements in a line file. A cryostat line has tens (common practice, no source). The comparator's
/// work grows faster than the element count: `compare` of two sweeps on a line of 1000 elements took 1.3 s,
/// of 2000 elements 5.8 s, of 9,999 elements 225 s and 2.4 GB (release build, 2026-12-02,
/// docs/performance.md).
pub const MAX_ELEMENTS: usize = 1000;
/// Longest as-built length of one element and of a whole line, m. A cryostat line is a few metres and its
/// room-temperature cabling tens of metres (common practice, no source); the analysis walks a line in
/// steps of centimetres, so this also bounds its work.
pub const MAX_LINE_LENGTH_M: f64 = 1000.0;
/// Reference resistances a sweep may give (option line `R`, `[Reference]`), ohm. 50 and 75 ohm are the
/// usual ones (common practice, no source); outside this range conversions and impedance profiles overflow.
pub const REFERENCE_RANGE_OHM: (f64, f64) = (1e-6, 1e9);
/// Characteristic impedances a line file may give (line, cable kind, element), ohm. Coax is made from
/// about 10 to 200 ohm (common practice, no source); outside this range the section's geometry, worked out
/// from the impedance, overflows.
pub const IMPEDANCE_RANGE_OHM: (f64, f64) = (1.0, 1000.0);
/// Conductor radii a line file may give, m: a micrometre to a metre.
pub const RADIUS_RANGE_M: (f64, f64) = (1e-6, 1.0);
/// Largest attenuator loss in a line file, dB. Cryostat attenuators are 3 to 30 dB each (common practice,
/// no source); 200 dB is beyond any measurement's dynamic range.
pub const MAX_ATTENUATOR_DB: f64 = 200.0;
/// Largest cable loss at 1 GHz a cable kind may give, dB/m (thin stainless coax is about 2 to 5 dB/m at
/// 1 GHz; common practice, no source).
pub const MAX_CABLE_LOSS_DB_PER_M: f64 = 100.0;
/// Largest dielectric loss tangent a cable kind may give (PTFE is about 2e-4; common practice, no source).
pub const MAX_LOSS_TANGENT: f64 = 1.0;
/// Highest frequency read from a sweep or given to the simulator, Hz. The material data and models are
/// meant for microwave frequencies (docs/materials.md), and network analyzers with extenders end near
/// 1 THz (common practice, no source); beyond this nothing of the analysis means anything.
pub const MAX_FREQUENCY_HZ: f64 = 10e12;
/// Largest magnitude of the real or imaginary part of a network parameter read from a sweep (after its
/// format: a DB value of 2000 dB is 1e100). No network parameter comes near; the cap keeps every sum,
/// square and transform of the values finite.
pub const MAX_VALUE_MAGNITUDE: f64 = 1e100;
/// Longest piece of the user's text quoted back in an error message, in characters; longer text is cut and
/// ends in "...".
pub const MAX_ECHO_CHARS: usize = 40;

/// `text` as it may be quoted in a message: at most [`MAX_ECHO_CHARS`] characters, "..." when cut.
pub fn clip(text: &str) -> Cow<'_, str> {
    clip_to(text, MAX_ECHO_CHARS)
}

/// `text` cut to at most `chars` characters, "..." when cut.
pub fn clip_to(text: &str, chars: usize) -> Cow<'_, str> {
    match text.char_indices().nth(chars) {
        None => Cow::Borrowed(text),
        Some((end, _)) => Cow::Owned(format!("{}...", &text[..end])),
    }
}

/// A number as a message shows it: `1e308` rather than its 309 digits, `0.3` as `0.3`.
pub fn short_number(x: f64) -> String {
    if x.is_finite() && x != 0.0 && !(1e-4..1e6).contains(&x.abs()) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// A size in bytes for messages: `256 MiB`, `16 MiB`, `12 kiB`, `300 bytes`.
pub fn bytes_text(n: u64) -> String {
    if n >= 1 << 20 && n % (1 << 20) == 0 {
        format!("{} MiB", n >> 20)
    } else if n >= 1 << 20 {
        format!("{:.1} MiB", n as f64 / (1u64 << 20) as f64)
    } else if n >= 1 << 10 {
        format!("{:.1} kiB", n as f64 / 1024.0)
    } else {
        format!("{n} bytes")
    }
}

/// Read a whole input file of at most `limit` bytes; `what` names it in messages ("sweep", "line file").
///
/// A regular file larger than the limit is refused before anything is read. A device or a folder is
/// refused outright (`/dev/zero` would never end). A pipe or FIFO is read, but never more than `limit`
/// bytes: one byte past it and the read stops with an error. The error is an `std::io::Error` whose message
/// states the limit and the fix; callers wrap it with the path as they wrap any I/O error.
pub fn read_capped(path: &Path, limit: u64, what: &str) -> std::io::Result<Vec<u8>> {
    let (file, size) = open_capped(path, limit, what)?;
    let mut bytes = Vec::with_capacity(size.unwrap_or(0) as usize);
    read_at_most(file, limit, &mut bytes).map_err(|e| match e {
        Overflow::Io(e) => e,
        Overflow::TooLarge => too_large(what, limit, None),
    })?;
    Ok(bytes)
}

/// Open `path` to be read as a `what` of at most `limit` bytes, with the refusals of [`read_capped`]
/// (folders, devices, regular files over the limit) made before anything is read. The size of a regular
/// file comes back with it; a pipe's is not known, and its reader must stop at the limit itself
/// ([`too_large_error`]).
pub fn open_capped(
    path: &Path,
    limit: u64,
    what: &str,
) -> std::io::Result<(std::fs::File, Option<u64>)> {
    let meta = std::fs::metadata(path).map_err(|e| missing_input(e, what))?;
    let ft = meta.file_type();
    if ft.is_dir() {
        return Err(refusal(format!(
            "is a folder, not a {what}; give the path of a file"
        )));
    }
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if ft.is_char_device() || ft.is_block_device() {
            return Err(refusal(format!(
                "is a device, not a {what}; give the path of a regular file"
            )));
        }
    }
    if ft.is_file() && meta.len() > limit {
        return Err(too_large(what, limit, Some(meta.len())));
    }
    let file = std::fs::File::open(path)?;
    Ok((file, ft.is_file().then_some(meta.len())))
}

/// The refusal of a `what` that offered more than `limit` bytes while it was read.
pub fn too_large_error(what: &str, limit: u64) -> std::io::Error {
    too_large(what, limit, None)
}

/// A missing input said as such: the caller puts the path in front ("in.s1p: the sweep does not exist").
fn missing_input(e: std::io::Error, what: &str) -> std::io::Error {
    if e.kind() == std::io::ErrorKind::NotFound {
        std::io::Error::new(
            std::io::ErrorKind::NotFound,
            format!("the {what} to read does not exist (no such file); check the path"),
        )
    } else {
        e
    }
}

/// Why [`read_at_most`] stopped.
#[derive(Debug)]
pub(crate) enum Overflow {
    Io(std::io::Error),
    /// More than the limit was offered.
    TooLarge,
}

/// Append everything `reader` gives to `out`, but refuse once it offers more than `limit` bytes.
pub(crate) fn read_at_most(
    reader: impl Read,
    limit: u64,
    out: &mut Vec<u8>,
) -> Result<(), Overflow> {
    let got = reader
        .take(limit.saturating_add(1))
        .read_to_end(out)
        .map_err(Overflow::Io)?;
    if got as u64 > limit {
        return Err(Overflow::TooLarge);
    }
    Ok(())
}

fn refusal(message: String) -> std::io::Error {
    std::io::Error::new(std::io::ErrorKind::InvalidInput, message)
}

fn too_large(what: &str, limit: u64, size: Option<u64>) -> std::io::Error {
    refusal(format!(
        "{}is larger than the {} limit for a {what} (docs/limits.md); split it, or keep only the band \
         and the points you need",
        size.map(|s| format!("{} ", bytes_text(s))).unwrap_or_default(),
        bytes_text(limit)
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clip_cuts_long_text_only() {
        assert_eq!(clip("short"), "short");
        let long = "x".repeat(1_000_000);
        let c = clip(&long);
        assert_eq!(c.len(), MAX_ECHO_CHARS + 3);
        assert!(c.ends_with("..."));
        // Characters, not bytes: a multi-byte character is never split.
        let wide = "µ".repeat(100);
        assert_eq!(clip(&wide).chars().count(), MAX_ECHO_CHARS + 3);
    }

    #[test]
    fn read_at_most_stops_an_endless_stream() {
        // std::io::repeat never ends, like /dev/zero or a FIFO that keeps writing.
        let mut out = Vec::new();
        let r = read_at_most(std::io::repeat(0), 1000, &mut out);
        assert!(matches!(r, Err(Overflow::TooLarge)));
        assert!(
            out.len() <= 1001,
            "read {} bytes past a limit of 1000",
            out.len()
        );
        let mut out = Vec::new();
        read_at_most(&b"exactly ten"[..10], 10, &mut out).unwrap();
        assert_eq!(out, b"exactly te");
    }

    #[test]
    fn byte_sizes_read_well() {
        assert_eq!(bytes_text(MAX_SWEEP_FILE_BYTES), "256 MiB");
        assert_eq!(bytes_text(MAX_LINE_FILE_BYTES), "16 MiB");
        assert_eq!(bytes_text(300), "300 bytes");
    }
}
