//! The reader's state machine: header (comments, option line, version 2 keywords), network data, noise
//! data, end. Version 1 files are read line by line (each record must end at a line end); version 2 records
//! are counted, so line breaks inside a record do not matter (Touchstone 2.0, section "Network Data"; section
//! number from memory).

use super::convert::{self, Kind};
use super::keywords::{parse_keyword_line, Keyword};
use super::lexer::{parse_number, strip_comment, Lines, Tokens};

/// Characters that separate tokens: space and TAB.
const SPACES: &[char] = &[' ', '\t'];
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

/// Values in one noise record: f, NFmin (dB), |Gamma_opt|, angle (deg), Rn (Touchstone 1.1, "Noise
/// Parameter Data"; section title from memory).
const NOISE_VALUES: usize = 5;

/// Largest port count accepted, to keep `1 + 2 N^2` values per record sane (a guard against garbage, not a
/// rule of the specification).
const MAX_PORTS: usize = 1000;

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

pub(crate) fn parse(text: &str, path: &Path) -> Res<Touchstone> {
    let mut p = Parser {
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
    };
    let mut first_content = true;
    let mut line_vals: Vec<f64> = Vec::with_capacity(64);
    let mut line_cols: Vec<u32> = Vec::with_capacity(64);
    for line in Lines::new(text) {
        p.last_line = line.number;
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
            continue;
        }
        let lead = body.len() - trimmed.len();
        if first_content {
            first_content = false;
            if trimmed.starts_with('[') {
                p.start_v2(body, line.number)?;
                continue;
            }
            p.ports = ports_from_extension(path).filter(|&n| n <= MAX_PORTS);
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
                        p.mark_seen(Keyword::EndInformation, line.number, lead)?;
                        continue;
                    }
                }
            }
            p.information
                .push(trimmed.trim_end_matches(SPACES).to_string());
            continue;
        }
        if trimmed.starts_with('#') {
            p.option_line(body, line.number, lead)?;
            continue;
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
            p.keyword(body, line.number, lead)?;
            continue;
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
            p.reference_values(&line_vals, &line_cols, line.number)?;
            continue;
        }
        if p.v2 {
            p.v2_values(&line_vals, &line_cols, line.number)?;
        } else {
            p.v1_line(&line_vals, &line_cols, line.number)?;
        }
    }
    p.finish()
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
        TouchstoneError::Parse {
            path: self.path.to_path_buf(),
            line,
            col,
            kind,
            found: found.into(),
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

    /// `[Version]` as the first non-comment line: a version 2 file.
    fn start_v2(&mut self, body: &str, line: usize) -> Res<()> {
        let lead = body.len() - body.trim_start_matches(SPACES).len();
        let k = parse_keyword_line(body);
        match k {
            Some(k) if k.keyword == Some(Keyword::Version) => {
                self.version = match k.argument {
                    "2.0" => Version::V2_0,
                    "2.1" => Version::V2_1,
                    other => {
                        return Err(self.err(
                            line,
                            k.argument_offset + 1,
                            ErrorKind::BadKeywordValue,
                            if other.is_empty() { "nothing" } else { other },
                            "2.0 or 2.1 after [Version]",
                            "write '[Version] 2.0' or '[Version] 2.1'",
                        ))
                    }
                };
                self.v2 = true;
                self.seen.insert(Keyword::Version);
                Ok(())
            }
            _ => Err(self.err(
                line,
                lead + 1,
                ErrorKind::MisplacedKeyword,
                first_token(body),
                "[Version] as the first keyword of a version 2 file",
                "put '[Version] 2.1' (or 2.0) on the first line that is not a comment",
            )),
        }
    }

    fn option_line(&mut self, body: &str, line: usize, lead: usize) -> Res<()> {
        if self.options.is_some() {
            if self.v2 {
                return Err(self.err(
                    line,
                    lead + 1,
                    ErrorKind::MisplacedKeyword,
                    body.trim(),
                    "one option line only (version 2)",
                    format!(
                        "delete this option line; the first one is on line {}",
                        self.option_line_no
                    ),
                ));
            }
            // Touchstone 1.1, "Option Line": only the first option line counts.
            let first = self.option_line_no;
            self.warn(
                line,
                "extra-option-line",
                format!("a second option line is ignored; the one on line {first} applies"),
                "delete the extra option line",
            );
            return Ok(());
        }
        if self.v2 && self.section != Section::Header {
            return Err(self.err(
                line,
                lead + 1,
                ErrorKind::MisplacedKeyword,
                body.trim(),
                "the option line before [Network Data]",
                "move the option line up, right after [Version]",
            ));
        }
        if !self.v2 && self.seen_data {
            self.warn(
                line,
                "late-option-line",
                "an option line after the data is ignored; defaults (GHz S MA R 50) applied to the data",
                "move the option line before the first data line",
            );
            return Ok(());
        }
        let o = parse_option_line(body).map_err(|e| {
            self.err(
                line,
                e.offset + 1,
                ErrorKind::BadOptionLine,
                e.found,
                e.expected,
                "write the option line like '# GHz S RI R 50'",
            )
        })?;
        let ports = self.ports.unwrap_or(1);
        if o.reference.len() > 1 {
            if self.v2 {
                return Err(self.err(
                    line,
                    lead + 1,
                    ErrorKind::BadOptionLine,
                    body.trim(),
                    "one reference resistance after R (version 2)",
                    "give per-port references with the [Reference] keyword",
                ));
            }
            if o.reference.len() != ports {
                return Err(self.err(
                    line,
                    lead + 1,
                    ErrorKind::BadOptionLine,
                    format!("{} values after R", o.reference.len()),
                    format!("one value, or one per port ({ports})"),
                    "write one reference resistance after R, e.g. 'R 50'",
                ));
            }
            self.version = Version::V1_1;
            self.warn(
                line,
                "per-port-reference-v1",
                format!("the option line gives {} reference resistances, one per port", ports),
                "version 1.0 readers expect one value after R; write a version 2 file with [Reference] for portability",
            );
        }
        self.options = Some(o);
        self.option_line_no = line;
        Ok(())
    }

    fn mark_seen(&mut self, k: Keyword, line: usize, col0: usize) -> Res<()> {
        if !self.seen.insert(k) {
            return Err(self.err(
                line,
                col0 + 1,
                ErrorKind::MisplacedKeyword,
                k.name(),
                "each keyword at most once",
                "delete the repeated keyword",
            ));
        }
        Ok(())
    }

    fn need_ports(&self, k: Keyword, line: usize, col0: usize) -> Res<usize> {
        self.ports.ok_or_else(|| {
            self.err(
                line,
                col0 + 1,
                ErrorKind::MisplacedKeyword,
                k.name(),
                "[Number of Ports] before this keyword",
                "put '[Number of Ports] N' right after the option line",
            )
        })
    }

    fn count_argument(
        &self,
        arg: &str,
        off: usize,
        line: usize,
        k: Keyword,
        min: usize,
    ) -> Res<usize> {
        match arg.parse::<usize>() {
            Ok(n)
                if n >= min
                    && n <= if k == Keyword::NumberOfPorts {
                        MAX_PORTS
                    } else {
                        usize::MAX
                    } =>
            {
                Ok(n)
            }
            _ => Err(self.err(
                line,
                off + 1,
                ErrorKind::BadKeywordValue,
                if arg.is_empty() { "nothing" } else { arg },
                format!("a whole number >= {min} after {}", k.name()),
                format!("write '{} <count>'", k.name()),
            )),
        }
    }

    fn keyword(&mut self, body: &str, line: usize, lead: usize) -> Res<()> {
        let Some(kl) = parse_keyword_line(body) else {
            return Err(self.err(
                line,
                lead + 1,
                ErrorKind::UnknownKeyword,
                body.trim(),
                "a keyword in brackets, like [Number of Ports]",
                "close the bracket or remove the line",
            ));
        };
        let Some(k) = kl.keyword else {
            return Err(self.err(
                line,
                lead + 1,
                ErrorKind::UnknownKeyword,
                kl.raw,
                "a Touchstone 2.0/2.1 keyword",
                "check the spelling, or make the line a comment with '!'",
            ));
        };
        if self.reference_open.is_some() {
            return Err(self.err(
                line,
                lead + 1,
                ErrorKind::WrongValueCount,
                k.name(),
                format!(
                    "{} reference values after [Reference] (found {})",
                    self.ports.unwrap_or(0),
                    self.reference.len()
                ),
                "give one reference resistance per port after [Reference]",
            ));
        }
        let (arg, off) = (kl.argument, kl.argument_offset);
        let header_only = !matches!(k, Keyword::NoiseData | Keyword::End);
        if header_only && self.section != Section::Header {
            return Err(self.err(
                line,
                lead + 1,
                ErrorKind::MisplacedKeyword,
                k.name(),
                "this keyword before [Network Data]",
                "move the keyword above [Network Data]",
            ));
        }
        if self.section == Section::Ended {
            return Err(self.err(
                line,
                lead + 1,
                ErrorKind::MisplacedKeyword,
                k.name(),
                "nothing after [End]",
                "delete everything after [End]",
            ));
        }
        self.mark_seen(k, line, lead)?;
        match k {
            Keyword::Version => {
                return Err(self.err(
                    line,
                    lead + 1,
                    ErrorKind::MisplacedKeyword,
                    k.name(),
                    "[Version] only as the first line",
                    "delete this [Version] line",
                ))
            }
            Keyword::NumberOfPorts => {
                let n = self.count_argument(arg, off, line, k, 1)?;
                if let Some(e) = ports_from_extension(self.path) {
                    if e != n {
                        self.warn(
                            line,
                            "extension-port-mismatch",
                            format!("[Number of Ports] is {n} but the file name says {e} ports"),
                            format!("rename the file to end in .s{n}p"),
                        );
                    }
                }
                self.ports = Some(n);
            }
            Keyword::TwoPortDataOrder => {
                self.two_port_order = Some(match arg {
                    "21_12" => TwoPortOrder::O21_12,
                    "12_21" => TwoPortOrder::O12_21,
                    _ => {
                        return Err(self.err(
                            line,
                            off + 1,
                            ErrorKind::BadKeywordValue,
                            if arg.is_empty() { "nothing" } else { arg },
                            "21_12 or 12_21",
                            "write '[Two-Port Data Order] 21_12' (N11 N21 N12 N22) or '12_21' (N11 N12 N21 N22)",
                        ))
                    }
                });
            }
            Keyword::NumberOfFrequencies => {
                self.n_freq = Some(self.count_argument(arg, off, line, k, 1)?);
            }
            Keyword::NumberOfNoiseFrequencies => {
                self.n_noise = Some(self.count_argument(arg, off, line, k, 1)?);
            }
            Keyword::Reference => {
                self.need_ports(k, line, lead)?;
                self.reference_open = Some(line);
                self.reference.clear();
                let mut vals = Vec::new();
                let mut cols = Vec::new();
                for (o, tok) in Tokens::new(&body[off.min(body.len())..]) {
                    match parse_number(tok) {
                        Some(v) => {
                            vals.push(v);
                            cols.push((off + o + 1) as u32);
                        }
                        None => {
                            return Err(self.err(
                                line,
                                off + o + 1,
                                ErrorKind::NotANumber,
                                tok,
                                "a reference resistance in ohm",
                                "write one positive number per port after [Reference]",
                            ))
                        }
                    }
                }
                self.reference_values(&vals, &cols, line)?;
            }
            Keyword::MatrixFormat => {
                self.matrix_format = match arg.to_ascii_lowercase().as_str() {
                    "full" => MatrixFormat::Full,
                    "lower" => MatrixFormat::Lower,
                    "upper" => MatrixFormat::Upper,
                    _ => {
                        return Err(self.err(
                            line,
                            off + 1,
                            ErrorKind::BadKeywordValue,
                            if arg.is_empty() { "nothing" } else { arg },
                            "Full, Lower or Upper",
                            "write '[Matrix Format] Full'",
                        ))
                    }
                };
            }
            Keyword::MixedModeOrder => {
                if arg.is_empty() {
                    return Err(self.err(
                        line,
                        off + 1,
                        ErrorKind::BadKeywordValue,
                        "nothing",
                        "the mixed-mode order, e.g. 'D2,1 C2,1'",
                        "list the mixed-mode parameter order after [Mixed-Mode Order]",
                    ));
                }
                self.mixed_mode_order = Some(arg.to_string());
            }
            Keyword::BeginInformation => self.section = Section::Information,
            Keyword::EndInformation => {
                return Err(self.err(
                    line,
                    lead + 1,
                    ErrorKind::MisplacedKeyword,
                    k.name(),
                    "[End Information] only after [Begin Information]",
                    "add [Begin Information] above, or delete this line",
                ))
            }
            Keyword::NetworkData => self.begin_network(line, lead)?,
            Keyword::NoiseData => {
                if self.section != Section::Network {
                    return Err(self.err(
                        line,
                        lead + 1,
                        ErrorKind::MisplacedKeyword,
                        k.name(),
                        "[Noise Data] after the network data",
                        "put [Noise Data] after the [Network Data] records",
                    ));
                }
                self.end_network(line, lead)?;
                if self.ports != Some(2) {
                    return Err(self.err(
                        line,
                        lead + 1,
                        ErrorKind::MisplacedKeyword,
                        k.name(),
                        "noise data only in 2-port files",
                        "delete the noise block",
                    ));
                }
                if self.n_noise.is_none() {
                    return Err(self.err(
                        line,
                        lead + 1,
                        ErrorKind::MissingKeyword,
                        k.name(),
                        "[Number of Noise Frequencies] before [Network Data]",
                        "add '[Number of Noise Frequencies] M' (M = noise records) above [Network Data]",
                    ));
                }
                self.section = Section::Noise;
            }
            Keyword::End => {
                match self.section {
                    Section::Network => self.end_network(line, lead)?,
                    Section::Noise => self.end_noise(line, lead)?,
                    _ => {
                        return Err(self.err(
                            line,
                            lead + 1,
                            ErrorKind::MisplacedKeyword,
                            k.name(),
                            "[End] after [Network Data] and its records",
                            "add [Network Data] and the data before [End]",
                        ))
                    }
                }
                self.section = Section::Ended;
            }
        }
        Ok(())
    }

    fn reference_values(&mut self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
        let n = self.ports.unwrap_or(1);
        for (&v, &c) in vals.iter().zip(cols) {
            if self.reference.len() == n {
                return Err(self.err(
                    line,
                    c as usize,
                    ErrorKind::WrongValueCount,
                    format!("{v}"),
                    format!("{n} reference values after [Reference]"),
                    "give exactly one reference resistance per port",
                ));
            }
            if v <= 0.0 {
                return Err(self.err(
                    line,
                    c as usize,
                    ErrorKind::BadKeywordValue,
                    format!("{v}"),
                    "a positive reference resistance in ohm",
                    "write positive reference resistances after [Reference]",
                ));
            }
            self.reference.push(v);
        }
        if self.reference.len() == n {
            self.reference_open = None;
        }
        Ok(())
    }

    fn begin_network(&mut self, line: usize, col0: usize) -> Res<()> {
        let missing = |s: &Self, k: Keyword, fix: &str| {
            s.err(
                line,
                col0 + 1,
                ErrorKind::MissingKeyword,
                "[Network Data]",
                format!("{} before [Network Data]", k.name()),
                fix,
            )
        };
        let Some(n) = self.ports else {
            return Err(missing(
                self,
                Keyword::NumberOfPorts,
                "add '[Number of Ports] N' after the option line",
            ));
        };
        if self.n_freq.is_none() {
            return Err(missing(
                self,
                Keyword::NumberOfFrequencies,
                "add '[Number of Frequencies] K' (K = network records) above [Network Data]",
            ));
        }
        if n == 2 && self.two_port_order.is_none() {
            return Err(missing(
                self,
                Keyword::TwoPortDataOrder,
                "add '[Two-Port Data Order] 21_12' (or 12_21, whichever the data use)",
            ));
        }
        if n != 2 && self.two_port_order.is_some() {
            self.warn(
                line,
                "two-port-order-ignored",
                format!("[Two-Port Data Order] is ignored in a {n}-port file"),
                "delete [Two-Port Data Order]; it applies to 2-ports only",
            );
        }
        if self.n_noise.is_some() && n != 2 {
            return Err(self.err(
                line,
                col0 + 1,
                ErrorKind::MisplacedKeyword,
                "[Number of Noise Frequencies]",
                "noise data only in 2-port files",
                "delete [Number of Noise Frequencies]",
            ));
        }
        self.check_parameter_ports(n, line)?;
        self.section = Section::Network;
        Ok(())
    }

    fn check_parameter_ports(&self, n: usize, line: usize) -> Res<()> {
        let p = self
            .options
            .as_ref()
            .and_then(|o| o.parameter)
            .unwrap_or(Parameter::S);
        if matches!(p, Parameter::H | Parameter::G) && n != 2 {
            return Err(self.err(
                self.option_line_no.max(1),
                1,
                ErrorKind::BadPortCount,
                format!("{} parameters in a {n}-port file", p.as_str()),
                "H and G parameters only for 2-ports",
                "write the data as S, Y or Z parameters",
            ));
        }
        let _ = line;
        Ok(())
    }

    fn record_len(&self) -> usize {
        let n = self.ports.unwrap_or(1);
        match self.matrix_format {
            MatrixFormat::Full => 1 + 2 * n * n,
            _ => 1 + n * (n + 1),
        }
    }

    fn end_network(&mut self, line: usize, col0: usize) -> Res<()> {
        if !self.pending.is_empty() {
            let (l, c) = self.pending_start;
            let rl = self.record_len();
            return Err(self.err(
                l,
                c,
                ErrorKind::WrongValueCount,
                format!("{} values in the last record", self.pending.len()),
                format!(
                    "{rl} values per record (frequency and {} pairs)",
                    (rl - 1) / 2
                ),
                "complete or delete the last record",
            ));
        }
        let want = self.n_freq.unwrap_or(0);
        if self.freqs.len() != want {
            return Err(self.err(
                line,
                col0 + 1,
                ErrorKind::CountMismatch,
                format!("{} network records", self.freqs.len()),
                format!("{want} records as [Number of Frequencies] says"),
                "correct [Number of Frequencies] or the data",
            ));
        }
        Ok(())
    }

    fn end_noise(&mut self, line: usize, col0: usize) -> Res<()> {
        if !self.pending.is_empty() {
            let (l, c) = self.pending_start;
            return Err(self.err(
                l,
                c,
                ErrorKind::WrongValueCount,
                format!("{} values in the last noise record", self.pending.len()),
                "5 values per noise record: f NFmin |Gamma_opt| angle Rn",
                "complete or delete the last noise record",
            ));
        }
        let want = self.n_noise.unwrap_or(0);
        if self.noise.len() != want {
            return Err(self.err(
                line,
                col0 + 1,
                ErrorKind::CountMismatch,
                format!("{} noise records", self.noise.len()),
                format!("{want} records as [Number of Noise Frequencies] says"),
                "correct [Number of Noise Frequencies] or the noise data",
            ));
        }
        Ok(())
    }

    fn check_freq(
        &self,
        f: f64,
        prev: Option<f64>,
        line: usize,
        col: usize,
        noise: bool,
    ) -> Res<()> {
        if f < 0.0 {
            return Err(self.err(
                line,
                col,
                ErrorKind::NonIncreasingFrequency,
                format!("{f}"),
                "a frequency >= 0",
                "correct the frequency",
            ));
        }
        if let Some(p) = prev {
            if f <= p {
                let what = if noise {
                    "noise frequency"
                } else {
                    "frequency"
                };
                return Err(self.err(
                    line,
                    col,
                    ErrorKind::NonIncreasingFrequency,
                    format!("{f}"),
                    format!("a {what} larger than the previous one ({p})"),
                    "sort the records by frequency and remove duplicates",
                ));
            }
        }
        Ok(())
    }

    fn push_record(&mut self, rec: &[f64], line: usize) {
        self.freqs.push(rec[0]);
        self.values.extend_from_slice(&rec[1..]);
        self.record_lines.push(line as u32);
    }

    /// One data line of a version 1 file.
    fn v1_line(&mut self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
        self.seen_data = true;
        let n = self.ports.unwrap_or(1);
        let rl = 1 + 2 * n * n;
        let col0 = cols[0] as usize;
        if self.section == Section::Noise {
            return self.v1_noise_line(vals, cols, line);
        }
        if self.pending.is_empty() {
            let prev = self.freqs.last().copied();
            if n == 2 && vals.len() != rl && prev.is_some_and(|p| vals[0] <= p) {
                // Touchstone 1.1, "Noise Parameter Data": noise starts at a frequency <= the last one.
                self.section = Section::Noise;
                return self.v1_noise_line(vals, cols, line);
            }
            self.check_freq(vals[0], prev, line, col0, false)?;
            if n <= 2 {
                if vals.len() != rl {
                    let col = if vals.len() > rl {
                        cols[rl] as usize
                    } else {
                        1
                    };
                    return Err(self.err(
                        line,
                        col,
                        ErrorKind::WrongValueCount,
                        format!("{} values", vals.len()),
                        format!(
                            "{rl} values on each line of a {n}-port file (frequency and {} pairs{})",
                            n * n,
                            if n == 2 { " N11 N21 N12 N22" } else { "" }
                        ),
                        "complete the line, or check that the file extension (.sNp) gives the right port count",
                    ));
                }
                self.push_record(vals, line);
                return Ok(());
            }
            self.pending_start = (line, col0);
        }
        let is_first = self.pending.is_empty();
        let pairs_part = if is_first { vals.len() - 1 } else { vals.len() };
        if pairs_part % 2 != 0 || self.pending.len() + vals.len() > rl {
            let (found, expected) = if pairs_part % 2 != 0 {
                (
                    format!("{} values", vals.len()),
                    "whole pairs of values on each line".to_string(),
                )
            } else {
                (
                    format!("{} values in the record so far", self.pending.len() + vals.len()),
                    format!("{rl} values per record of a {n}-port file, each record ending at a line end"),
                )
            };
            return Err(self.err(
                line,
                col0,
                ErrorKind::WrongValueCount,
                found,
                expected,
                "check the record layout (each matrix row on its own line) and that the extension gives the right port count",
            ));
        }
        self.pending.extend_from_slice(vals);
        if self.pending.len() == rl {
            let rec = std::mem::take(&mut self.pending);
            let start = self.pending_start.0;
            self.push_record(&rec, start);
            self.pending = rec;
            self.pending.clear();
        }
        Ok(())
    }

    fn v1_noise_line(&mut self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
        if vals.len() != NOISE_VALUES {
            return Err(self.err(
                line,
                cols[0] as usize,
                ErrorKind::WrongValueCount,
                format!("{} values", vals.len()),
                "5 values on each noise line: f NFmin |Gamma_opt| angle Rn",
                "complete the noise line; network data must not follow noise data",
            ));
        }
        let prev = self.noise.last().map(|r| r[0]);
        self.check_freq(vals[0], prev, line, cols[0] as usize, true)?;
        let mut r = [0.0; NOISE_VALUES];
        r.copy_from_slice(vals);
        self.noise.push(r);
        Ok(())
    }

    /// Values of a version 2 data line; records are counted across lines.
    fn v2_values(&mut self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
        let (rl, noise) = match self.section {
            Section::Network => (self.record_len(), false),
            Section::Noise => (NOISE_VALUES, true),
            Section::Ended => {
                return Err(self.err(
                    line,
                    cols[0] as usize,
                    ErrorKind::WrongValueCount,
                    "data after [End]",
                    "nothing after [End]",
                    "delete the lines after [End], or move [End] to the end",
                ))
            }
            _ => {
                return Err(self.err(
                    line,
                    cols[0] as usize,
                    ErrorKind::MissingKeyword,
                    "data",
                    "[Network Data] before the data",
                    "add a '[Network Data]' line above the first data line",
                ))
            }
        };
        self.seen_data = true;
        for (&v, &c) in vals.iter().zip(cols) {
            if self.pending.is_empty() {
                let count = if noise {
                    self.noise.len()
                } else {
                    self.freqs.len()
                };
                let limit = if noise { self.n_noise } else { self.n_freq }.unwrap_or(usize::MAX);
                if count == limit {
                    let k = if noise {
                        "[Number of Noise Frequencies]"
                    } else {
                        "[Number of Frequencies]"
                    };
                    return Err(self.err(
                        line,
                        c as usize,
                        ErrorKind::CountMismatch,
                        format!("a record beyond the {limit} that {k} announces"),
                        format!("{limit} records"),
                        format!("correct {k} or remove the extra records"),
                    ));
                }
                let prev = if noise {
                    self.noise.last().map(|r| r[0])
                } else {
                    self.freqs.last().copied()
                };
                self.check_freq(v, prev, line, c as usize, noise)?;
                self.pending_start = (line, c as usize);
            }
            self.pending.push(v);
            if self.pending.len() == rl {
                if noise {
                    let mut r = [0.0; NOISE_VALUES];
                    r.copy_from_slice(&self.pending);
                    self.noise.push(r);
                } else {
                    let rec = std::mem::take(&mut self.pending);
                    self.push_record(&rec, self.pending_start.0);
                    self.pending = rec;
                }
                self.pending.clear();
            }
        }
        Ok(())
    }

    fn finish(mut self) -> Res<Touchstone> {
        let end_line = self.last_line.max(1);
        if let Some(l) = self.reference_open {
            return Err(self.err(
                l,
                1,
                ErrorKind::WrongValueCount,
                format!("{} reference values", self.reference.len()),
                format!("{} after [Reference]", self.ports.unwrap_or(1)),
                "give one reference resistance per port after [Reference]",
            ));
        }
        if self.v2 {
            match self.section {
                Section::Header | Section::Information => {
                    return Err(self.err(
                        end_line,
                        1,
                        ErrorKind::MissingKeyword,
                        "end of file",
                        "[Network Data] and the network records",
                        "add '[Network Data]' followed by the data",
                    ))
                }
                Section::Network | Section::Noise => {
                    if self.section == Section::Network {
                        self.end_network(end_line, 0)?;
                    } else {
                        self.end_noise(end_line, 0)?;
                    }
                    if self.version == Version::V2_1 {
                        return Err(self.err(
                            end_line,
                            1,
                            ErrorKind::MissingKeyword,
                            "end of file",
                            "[End] as the last line (required in version 2.1)",
                            "add '[End]' as the last line",
                        ));
                    }
                    self.warn(
                        end_line,
                        "missing-end",
                        "the file ends without [End]",
                        "add '[End]' as the last line",
                    );
                }
                Section::Ended => {}
            }
            if self.n_noise.is_some() && !self.seen.contains(&Keyword::NoiseData) {
                return Err(self.err(
                    end_line,
                    1,
                    ErrorKind::MissingKeyword,
                    "end of file",
                    "[Noise Data] as [Number of Noise Frequencies] announces",
                    "add the [Noise Data] block, or delete [Number of Noise Frequencies]",
                ));
            }
        } else if !self.pending.is_empty() {
            let (l, c) = self.pending_start;
            let rl = self.record_len();
            return Err(self.err(
                l,
                c,
                ErrorKind::WrongValueCount,
                format!("{} values in the last record", self.pending.len()),
                format!("{rl} values per record"),
                "complete or delete the last record",
            ));
        }
        if self.freqs.is_empty() {
            return Err(self.err(
                end_line,
                1,
                ErrorKind::NoData,
                "no network data",
                "at least one data line",
                "check that the file is a complete Touchstone file",
            ));
        }
        if self.options.is_none() {
            self.warn(
                1,
                "missing-option-line",
                "no option line; the defaults '# GHz S MA R 50' apply",
                "add an option line such as '# GHz S RI R 50' so the meaning of the numbers is stated",
            );
        }
        self.build()
    }

    fn build(mut self) -> Res<Touchstone> {
        let n = self.ports.unwrap_or(1);
        let o = self.options.clone().unwrap_or_default();
        let parameter = o.parameter.unwrap_or(Parameter::S);
        let format = o.format.unwrap_or(Format::MA);
        let unit = o.unit.unwrap_or(FreqUnit::GHz);
        self.check_parameter_ports(n, 0)?;
        let r_opt = o
            .reference
            .first()
            .copied()
            .unwrap_or(DEFAULT_REFERENCE_OHM);
        let reference: Vec<f64> = if self.v2 && !self.reference.is_empty() {
            self.reference.clone()
        } else if o.reference.len() == n {
            o.reference.clone()
        } else {
            vec![r_opt; n]
        };
        let order = if n == 2 {
            Some(self.two_port_order.unwrap_or(TwoPortOrder::O21_12))
        } else {
            None
        };
        let points = self.freqs.len();
        let mut s = Vec::with_capacity(points * n * n);
        let per = (self.record_len() - 1) / 2;
        let mut m = vec![C::new(0.0, 0.0); n * n];
        let kind = match parameter {
            Parameter::S => None,
            Parameter::Y => Some(Kind::Y),
            Parameter::Z => Some(Kind::Z),
            Parameter::H => Some(Kind::H),
            Parameter::G => Some(Kind::G),
        };
        let mut max_reflection = (0.0f64, 0usize);
        for k in 0..points {
            let raw = &self.values[k * 2 * per..(k + 1) * 2 * per];
            fill_matrix(&mut m, raw, n, self.matrix_format, order, format);
            match kind {
                None => {
                    for i in 0..n {
                        let mag = m[i * n + i].norm();
                        if mag > max_reflection.0 && mag > 1.0 {
                            max_reflection = (mag, k);
                        }
                    }
                    s.extend_from_slice(&m);
                }
                Some(kind) => {
                    // Version 1: values are normalised to R already; version 2: ohms and siemens.
                    if self.v2 {
                        convert::normalise(kind, &mut m, &reference);
                    } else if o.reference.len() > 1 {
                        // Per-port R in version 1 (a deviation): values taken as normalised per port.
                    }
                    let sm = convert::to_s(kind, &m, n).ok_or_else(|| {
                        self.err(
                            self.record_lines[k] as usize,
                            1,
                            ErrorKind::Unconvertible,
                            format!(
                                "{} values with no S-parameter equivalent",
                                parameter.as_str()
                            ),
                            "a network whose S-parameters exist at the reference impedance",
                            "check the values of this record",
                        )
                    })?;
                    s.extend_from_slice(&sm);
                }
            }
        }
        if max_reflection.0 > 1.0 {
            let line = self.record_lines[max_reflection.1] as usize;
            let f = self.freqs[max_reflection.1];
            self.warn(
                line,
                "reflection-above-one",
                format!(
                    "a reflection coefficient exceeds 1 in magnitude (largest {:.6} at {f} {}); a passive port reflects at most 1",
                    max_reflection.0,
                    unit.as_str()
                ),
                "usually calibration drift at the band edge; recalibrate if it is large",
            );
        }
        let scale = unit.hz();
        let freqs_hz: Vec<f64> = self.freqs.iter().map(|f| f * scale).collect();
        let rn_scale = if self.v2 { 1.0 } else { reference[0] };
        let noise = self
            .noise
            .iter()
            .map(|r| NoisePoint {
                freq_hz: r[0] * scale,
                nf_min_db: r[1],
                gamma_opt: C::from_polar(r[2], r[3].to_radians()),
                rn_ohm: r[4] * rn_scale,
            })
            .collect();
        let network = Network {
            ports: n,
            freqs_hz,
            s,
            reference_ohm: reference.clone(),
            noise,
        };
        let info = FileInfo {
            version: self.version,
            parameter,
            format,
            unit,
            reference_ohm: reference,
            option_line: self.options.is_some(),
            two_port_order: order,
            matrix_format: self.matrix_format,
            mixed_mode_order: self.mixed_mode_order,
            information: self.information,
            header_comments: self.header_comments,
        };
        Ok(Touchstone {
            network,
            info,
            warnings: self.warnings,
        })
    }
}

/// One complex value from a pair in `format` (angles in degrees).
#[inline]
pub(crate) fn pair_to_complex(a: f64, b: f64, format: Format) -> C {
    match format {
        Format::RI => C::new(a, b),
        Format::MA => C::from_polar(a, b.to_radians()),
        Format::DB => C::from_polar(10f64.powf(a / 20.0), b.to_radians()),
    }
}

/// Place one record's pairs into a row-major matrix.
fn fill_matrix(
    m: &mut [C],
    raw: &[f64],
    n: usize,
    matrix: MatrixFormat,
    order: Option<TwoPortOrder>,
    format: Format,
) {
    let v = |p: usize| pair_to_complex(raw[2 * p], raw[2 * p + 1], format);
    match matrix {
        MatrixFormat::Full => {
            if n == 2 && order == Some(TwoPortOrder::O21_12) {
                m[0] = v(0);
                m[2] = v(1);
                m[1] = v(2);
                m[3] = v(3);
            } else {
                for (p, slot) in m.iter_mut().enumerate() {
                    *slot = v(p);
                }
            }
        }
        MatrixFormat::Lower | MatrixFormat::Upper => {
            let mut p = 0;
            for i in 0..n {
                let (lo, hi) = if matrix == MatrixFormat::Lower {
                    (0, i)
                } else {
                    (i, n - 1)
                };
                for j in lo..=hi {
                    let x = v(p);
                    m[i * n + j] = x;
                    m[j * n + i] = x;
                    p += 1;
                }
            }
        }
    }
}
