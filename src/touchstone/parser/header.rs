//! The header of a file: `[Version]`, the option line and the version 2 keywords (Touchstone 2.0 and 2.1,
//! section "Keywords" and one section per keyword; titles from memory).

use super::*;
use crate::limits::REFERENCE_RANGE_OHM;

impl<'a> Parser<'a> {
    /// `[Version]` as the first non-comment line: a version 2 file.
    pub(super) fn start_v2(&mut self, body: &str, line: usize) -> Res<()> {
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

    pub(super) fn option_line(&mut self, body: &str, line: usize, lead: usize) -> Res<()> {
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

    pub(super) fn mark_seen(&mut self, k: Keyword, line: usize, col0: usize) -> Res<()> {
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

    pub(super) fn need_ports(&self, k: Keyword, line: usize, col0: usize) -> Res<usize> {
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

    /// A count after a keyword: a whole number from `min` to the keyword's limit
    /// ([`crate::limits::MAX_PORTS`] ports, [`crate::limits::MAX_SWEEP_POINTS`] frequencies).
    pub(super) fn count_argument(
        &self,
        arg: &str,
        off: usize,
        line: usize,
        k: Keyword,
        min: usize,
    ) -> Res<usize> {
        let (max, what) = match k {
            Keyword::NumberOfPorts => (MAX_PORTS, "ports"),
            _ => (MAX_SWEEP_POINTS, "frequencies"),
        };
        let digits = !arg.is_empty() && arg.bytes().all(|b| b.is_ascii_digit());
        match arg.parse::<usize>() {
            Ok(n) if (min..=max).contains(&n) => Ok(n),
            // Past the limit, or too many digits to hold at all.
            Ok(n) if n > max => self.count_too_large(arg, off, line, k, max, what),
            Err(_) if digits => self.count_too_large(arg, off, line, k, max, what),
            _ => Err(self.err(
                line,
                off + 1,
                ErrorKind::BadKeywordValue,
                if arg.is_empty() { "nothing" } else { arg },
                format!("a whole number from {min} to {max} after {}", k.name()),
                format!("write '{} <count>'", k.name()),
            )),
        }
    }

    fn count_too_large(
        &self,
        arg: &str,
        off: usize,
        line: usize,
        k: Keyword,
        max: usize,
        what: &str,
    ) -> Res<usize> {
        Err(self.err(
            line,
            off + 1,
            ErrorKind::BadKeywordValue,
            arg,
            format!(
                "at most {max} {what} after {} (coldtrace's limit, docs/limits.md)",
                k.name()
            ),
            if k == Keyword::NumberOfPorts {
                format!("check the count; coldtrace reads files of up to {max} ports, so extract the ports you need into a smaller file")
            } else {
                format!("check the count; coldtrace reads sweeps of up to {max} frequencies, so split the sweep into several files")
            },
        ))
    }

    pub(super) fn keyword(&mut self, body: &str, line: usize, lead: usize) -> Res<()> {
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

    pub(super) fn reference_values(&mut self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
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
            if !(REFERENCE_RANGE_OHM.0..=REFERENCE_RANGE_OHM.1).contains(&v) {
                return Err(self.err(
                    line,
                    c as usize,
                    ErrorKind::BadKeywordValue,
                    crate::limits::short_number(v),
                    super::super::options::reference_expected(),
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

    pub(super) fn begin_network(&mut self, line: usize, col0: usize) -> Res<()> {
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
        self.check_parameter_ports(n)?;
        self.section = Section::Network;
        Ok(())
    }

    /// H and G parameters exist for 2-ports only (reported on the option line).
    pub(super) fn check_parameter_ports(&self, n: usize) -> Res<()> {
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
        Ok(())
    }
}
