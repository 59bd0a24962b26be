//! Network and noise records: version 1 line by line, version 2 counted across lines.

use super::*;
use crate::limits::{short_number, MAX_FREQUENCY_HZ};

impl<'a> Parser<'a> {
    pub(super) fn record_len(&self) -> usize {
        let n = self.ports.unwrap_or(1);
        match self.matrix_format {
            MatrixFormat::Full => 1 + 2 * n * n,
            _ => 1 + n * (n + 1),
        }
    }

    pub(super) fn end_network(&mut self, line: usize, col0: usize) -> Res<()> {
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

    pub(super) fn end_noise(&mut self, line: usize, col0: usize) -> Res<()> {
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

    /// Every number of a data line must be finite: `1e400` overflows to infinity when read.
    pub(super) fn check_finite(&self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
        match vals.iter().position(|v| !v.is_finite()) {
            None => Ok(()),
            Some(i) => Err(self.err(
                line,
                cols[i] as usize,
                ErrorKind::NotANumber,
                short_number(vals[i]),
                "a finite number (this one overflows a 64-bit float, beyond about 1.8e308)",
                "correct the number; the file may be damaged",
            )),
        }
    }

    pub(super) fn check_freq(
        &self,
        f: f64,
        prev: Option<f64>,
        line: usize,
        col: usize,
        noise: bool,
    ) -> Res<()> {
        let unit = self
            .options
            .as_ref()
            .and_then(|o| o.unit)
            .unwrap_or(FreqUnit::GHz);
        if f * unit.hz() > MAX_FREQUENCY_HZ {
            return Err(self.err(
                line,
                col,
                ErrorKind::NonIncreasingFrequency,
                short_number(f),
                format!(
                    "a frequency up to {} Hz (coldtrace's limit, docs/limits.md); {} {} is {} Hz",
                    short_number(MAX_FREQUENCY_HZ),
                    short_number(f),
                    unit.as_str(),
                    short_number(f * unit.hz())
                ),
                "correct the frequency, or the unit on the option line",
            ));
        }
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

    /// Keep one complete record; refused past [`MAX_SWEEP_POINTS`] records or [`MAX_SWEEP_VALUES`] values.
    pub(super) fn push_record(&mut self, rec: &[f64], line: usize) -> Res<()> {
        let values = (self.values.len() + rec.len() - 1) / 2;
        if self.freqs.len() >= MAX_SWEEP_POINTS || values > MAX_SWEEP_VALUES {
            let (found, expected) = if self.freqs.len() >= MAX_SWEEP_POINTS {
                (
                    format!("record {}", self.freqs.len() + 1),
                    format!("at most {MAX_SWEEP_POINTS} frequencies in one sweep (coldtrace's limit, docs/limits.md)"),
                )
            } else {
                (
                    format!("{values} complex values so far"),
                    format!("at most {MAX_SWEEP_VALUES} complex values (frequencies x ports^2) in one sweep (coldtrace's limit, docs/limits.md)"),
                )
            };
            return Err(self.err(
                line,
                1,
                ErrorKind::CountMismatch,
                found,
                expected,
                "split the sweep into several files, or keep only the band and ports you need",
            ));
        }
        self.freqs.push(rec[0]);
        self.values.extend_from_slice(&rec[1..]);
        self.record_lines.push(line as u32);
        Ok(())
    }

    /// One data line of a version 1 file.
    pub(super) fn v1_line(&mut self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
        self.check_finite(vals, cols, line)?;
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
                self.push_record(vals, line)?;
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
            self.push_record(&rec, start)?;
            self.pending = rec;
            self.pending.clear();
        }
        Ok(())
    }

    pub(super) fn v1_noise_line(&mut self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
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
    pub(super) fn v2_values(&mut self, vals: &[f64], cols: &[u32], line: usize) -> Res<()> {
        self.check_finite(vals, cols, line)?;
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
                    self.push_record(&rec, self.pending_start.0)?;
                    self.pending = rec;
                }
                self.pending.clear();
            }
        }
        Ok(())
    }
}
