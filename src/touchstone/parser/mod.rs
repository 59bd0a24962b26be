//! The reader's state machine: header (comments, option line, version 2 keywords), network data, noise
//! data, end. Version 1 files are read line by line (each record must end at a line end); version 2 records
//! are counted, so line breaks inside a record do not matter (Touchstone 2.0, section "Network Data"; section
//! number from memory).

mod build;
mod data;
mod header;

use super::convert::{self, Kind};
use super::keywords::{parse_keyword_line, Keyword};
use super::lexer::{lex_data_line, parse_number, strip_comment, Line, Lines, Tokens};
use super::options::{parse_option_line, OptionLine, DEFAULT_REFERENCE_OHM};
use super::{
    ports_from_extension, ErrorKind, FileInfo, Format, FreqUnit, MatrixFormat, Parameter,
    Touchstone, TouchstoneError, TwoPortOrder, Version,
};
use crate::network::NoisePoint;
use crate::{Network, Warning};
use num_complex::Complex64 as C;
use std::collections::HashSet;
use std::path::Path;

/// Characters that separate tokens: space and TAB.
const SPACES: &[char] = &[' ', '\t'];

/// Values in one noise record: f, NFmin (dB), |Gamma_opt|, angle (deg), Rn (Touchstone 1.1, "Noise
/// Parameter Data"; section title from memory).
const NOISE_VALUES: usize = 5;

use crate::limits::{clip, MAX_PORTS, MAX_SWEEP_POINTS, MAX_SWEEP_VALUES};

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Section {
    Header,
    Information,
    Network,
    Noise,
    Ended,
}

struct Parser<'a> {
    path: &'a Path,
    version: Version,
    v2: bool,
    options: Option<OptionLine>,
    option_line_no: usize,
    ports: Option<usize>,
    two_port_order: Option<TwoPortOrder>,
    matrix_format: MatrixFormat,
    n_freq: Option<usize>,
    n_noise: Option<usize>,
    reference: Vec<f64>,
    /// `[Reference]` still collecting values (it may span lines): line it started on.
    reference_open: Option<usize>,
    mixed_mode_order: Option<String>,
    information: Vec<String>,
    header_comments: Vec<String>,
    seen: HashSet<Keyword>,
    section: Section,
    warnings: Vec<Warning>,
    /// Raw frequencies (file unit) and raw values (pairs in file format order) per record.
    freqs: Vec<f64>,
    values: Vec<f64>,
    record_lines: Vec<u32>,
    noise: Vec<[f64; NOISE_VALUES]>,
    /// The record being assembled (version 2, or version 1 3+-ports over several lines).
    pending: Vec<f64>,
    pending_start: (usize, usize),
    last_line: usize,
    seen_data: bool,
}

type Res<T> = Result<T, TouchstoneError>;

/// Parse a whole text.
pub(crate) fn parse(text: &str, path: &Path) -> Res<Touchstone> {
    let mut feed = LineFeed::new(path);
    for line in Lines::new(text) {
        feed.line(line)?;
    }
    feed.finish()
}

/// The reader fed one physical line at a time, in order: [`parse`] over a whole text, and the streaming
/// reader (`touchstone::read_file`) over a file read in pieces, whose text is never held whole.
pub(crate) struct LineFeed<'a> {
    p: Parser<'a>,
    first_content: bool,
    line_vals: Vec<f64>,
    line_cols: Vec<u32>,
}

impl<'a> LineFeed<'a> {
    pub(crate) fn new(path: &'a Path) -> Self {
        LineFeed {
            p: Parser::new(path),
            first_content: true,
            line_vals: Vec::with_capacity(64),
            line_cols: Vec::with_capacity(64),
        }
    }

    /// Room in the records' arrays for the records a text of `size` bytes holds, at the density of its
    /// first `parsed` bytes (and [`super::RECORDS_MARGIN`] more; at most the sweep limit's records).
    /// Returns whether the density was known (a record had been read); the arrays' contents are not
    /// touched.
    pub(crate) fn reserve_for(&mut self, parsed: u64, size: u64) -> bool {
        let p = &mut self.p;
        let records = p.freqs.len();
        if records == 0 || parsed == 0 {
            return false;
        }
        let per_record = (p.values.len() / records).max(1);
        // Never room for more than the sweep limits let a file hold (records, and complex values as two
        // numbers each beside a record's frequency).
        let most = crate::limits::MAX_SWEEP_POINTS
            .min(2 * crate::limits::MAX_SWEEP_VALUES / per_record + 1);
        let total = (records as f64 * size as f64 / parsed as f64 * (1.0 + super::RECORDS_MARGIN))
            .ceil()
            .min(most as f64) as usize;
        let more = total.saturating_sub(records);
        p.freqs.reserve(more);
        p.values.reserve(more * per_record);
        p.record_lines.reserve(more);
        true
    }

    /// The network read so far, checked and built, once every line has been fed.
    pub(crate) fn finish(self) -> Res<Touchstone> {
        self.p.finish()
    }

    /// Feed the next line (its number counts every line before it, from 1).
    pub(crate) fn line(&mut self, line: Line) -> Res<()> {
        let LineFeed {
            p,
            first_content,
            line_vals,
            line_cols,
        } = self;
        let path = p.path;
        p.last_line = line.number;
        let data_section = p.reference_open.is_none()
            && if p.v2 {
                matches!(p.section, Section::Network | Section::Noise)
            } else {
                !*first_content
            };
        if data_section && lex_data_line(line.text.as_bytes(), line_vals, line_cols) {
            return if p.v2 {
                p.v2_values(line_vals, line_cols, line.number)
            } else {
                p.v1_line(line_vals, line_cols, line.number)
            };
        }
        if let Some((col, b)) = line
            .text
            .bytes()
            .enumerate()
            .find(|&(_, b)| (b < 0x20 && b != b'\t') || b == 0x7f)
        {
            return Err(p.err(
                line.number,
                col + 1,
                ErrorKind::NotText,
                format!("control character 0x{b:02x}"),
                "printable ASCII text, spaces and tabs",
                "remove the control characters (the file may be binary or damaged)",
            ));
        }
        let (body, comment) = strip_comment(line.text);
        if let (Some(c), false) = (comment, p.seen_data) {
            if p.section == Section::Header {
                p.header_comments.push(c.trim().to_string());
            }
        }
        let trimmed = body.trim_start_matches(SPACES);
        if trimmed.trim_end_matches(SPACES).is_empty() {
            return Ok(());
        }
        let lead = body.len() - trimmed.len();
        if *first_content {
            *first_content = false;
            if trimmed.starts_with('[') {
                return p.start_v2(body, line.number);
            }
            if let Some(n) = ports_from_extension(path).filter(|&n| n > MAX_PORTS) {
                return Err(p.err(
                    line.number,
                    1,
                    ErrorKind::BadPortCount,
                    format!("file name '{}' ({n} ports)", display_name(path)),
                    format!("at most {MAX_PORTS} ports (coldtrace's limit, docs/limits.md)"),
                    format!("rename the file if its extension is wrong, or extract the ports you need into a file of at most {MAX_PORTS} ports"),
                ));
            }
            p.ports = ports_from_extension(path);
            if p.ports.is_none() {
                return Err(p.err(
                    line.number,
                    1,
                    ErrorKind::BadPortCount,
                    format!("file name '{}'", display_name(path)),
                    "a version 1 file named *.sNp (N = number of ports) or a version 2 file with [Number of Ports]",
                    "rename the file to end in .s1p, .s2p, ... for its port count, or add [Version] 2.1 and [Number of Ports]",
                ));
            }
        }
        if p.section == Section::Information {
            if trimmed.starts_with('[') {
                if let Some(k) = parse_keyword_line(body) {
                    if k.keyword == Some(Keyword::EndInformation) {
                        p.section = Section::Header;
                        return p.mark_seen(Keyword::EndInformation, line.number, lead);
                    }
                }
            }
            p.information
                .push(trimmed.trim_end_matches(SPACES).to_string());
            return Ok(());
        }
        if trimmed.starts_with('#') {
            return p.option_line(body, line.number, lead);
        }
        if trimmed.starts_with('[') {
            if !p.v2 {
                return Err(p.err(
                    line.number,
                    lead + 1,
                    ErrorKind::MisplacedKeyword,
                    first_token(trimmed),
                    "data or comments (keywords exist only in version 2 files)",
                    "start the file with '[Version] 2.1' to use keywords, or delete the keyword line",
                ));
            }
            return p.keyword(body, line.number, lead);
        }
        // Numbers.
        line_vals.clear();
        line_cols.clear();
        for (off, tok) in Tokens::new(body) {
            match parse_number(tok) {
                Some(v) => {
                    line_vals.push(v);
                    line_cols.push((off + 1) as u32);
                }
                None => {
                    return Err(p.err(
                        line.number,
                        off + 1,
                        ErrorKind::NotANumber,
                        tok.to_string(),
                        "a number",
                        "correct or remove the token; comments must start with '!'",
                    ))
                }
            }
        }
        if p.reference_open.is_some() {
            return p.reference_values(line_vals, line_cols, line.number);
        }
        if p.v2 {
            p.v2_values(line_vals, line_cols, line.number)
        } else {
            p.v1_line(line_vals, line_cols, line.number)
        }
    }
}

impl<'a> Parser<'a> {
    fn new(path: &'a Path) -> Self {
        Parser {
            path,
            version: Version::V1_0,
            v2: false,
            options: None,
            option_line_no: 0,
            ports: None,
            two_port_order: None,
            matrix_format: MatrixFormat::Full,
            n_freq: None,
            n_noise: None,
            reference: Vec::new(),
            reference_open: None,
            mixed_mode_order: None,
            information: Vec::new(),
            header_comments: Vec::new(),
            seen: HashSet::new(),
            section: Section::Header,
            warnings: Vec::new(),
            freqs: Vec::new(),
            values: Vec::new(),
            record_lines: Vec::new(),
            noise: Vec::new(),
            pending: Vec::new(),
            pending_start: (0, 0),
            last_line: 0,
            seen_data: false,
        }
    }
}

fn display_name(path: &Path) -> String {
    path.file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| path.display().to_string())
}

fn first_token(s: &str) -> String {
    let t = s.trim();
    match t.find(']') {
        Some(i) => t[..=i].to_string(),
        None => t.split(SPACES).next().unwrap_or("").to_string(),
    }
}

impl<'a> Parser<'a> {
    fn err(
        &self,
        line: usize,
        col: usize,
        kind: ErrorKind,
        found: impl Into<String>,
        expected: impl Into<String>,
        fix: impl Into<String>,
    ) -> TouchstoneError {
        // A token is quoted back short: a damaged file can hold a token of megabytes.
        let found: String = found.into();
        TouchstoneError::Parse {
            path: self.path.to_path_buf(),
            line,
            col,
            kind,
            found: clip(&found).into_owned(),
            expected: expected.into(),
            fix: fix.into(),
        }
    }

    fn warn(
        &mut self,
        line: usize,
        kind: &str,
        message: impl Into<String>,
        fix: impl Into<String>,
    ) {
        let w = Warning::new(kind, message, fix).at(format!("{}:{line}", self.path.display()));
        self.warnings.push(w);
    }
}
