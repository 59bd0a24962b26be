//! End of file checks and the final network: pairs to complex, matrix layout, Y/Z/H/G to S, units to Hz.

use super::*;
use crate::limits::MAX_VALUE_MAGNITUDE;

impl<'a> Parser<'a> {
    pub(super) fn finish(mut self) -> Res<Touchstone> {
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

    pub(super) fn build(mut self) -> Res<Touchstone> {
        let n = self.ports.unwrap_or(1);
        let o = self.options.clone().unwrap_or_default();
        let parameter = o.parameter.unwrap_or(Parameter::S);
        let format = o.format.unwrap_or(Format::MA);
        let unit = o.unit.unwrap_or(FreqUnit::GHz);
        self.check_parameter_ports(n)?;
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
            if m.iter().any(|&c| !bounded(c)) {
                return Err(self.out_of_range(k, raw, format));
            }
            match kind {
                None => {
                    for i in 0..n {
                        // |S|^2 avoids a square root per point; the magnitude itself (which cannot
                        // overflow where its square would) only for the rare values above 1.
                        if m[i * n + i].norm_sqr() > 1.0 {
                            let mag = m[i * n + i].norm();
                            if mag > max_reflection.0 {
                                max_reflection = (mag, k);
                            }
                        }
                    }
                    s.extend_from_slice(&m);
                }
                Some(kind) => {
                    // Version 1: values are normalised to R already (with one R per port, a
                    // deviation, each to its port's R as in `convert`); version 2: ohms and siemens.
                    if self.v2 {
                        convert::normalise(kind, &mut m, &reference);
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
                    if sm.iter().any(|&c| !bounded(c)) {
                        return Err(self.err(
                            self.record_lines[k] as usize,
                            1,
                            ErrorKind::Unconvertible,
                            format!(
                                "{} values whose S-parameters exceed {MAX_VALUE_MAGNITUDE:e} in magnitude",
                                parameter.as_str()
                            ),
                            "a network whose S-parameters at the reference impedance are within coldtrace's limit (docs/limits.md)",
                            "check the values of this record and the reference impedance",
                        ));
                    }
                    s.extend_from_slice(&sm);
                }
            }
        }
        if max_reflection.0 > 1.0 {
            let line = self.record_lines[max_reflection.1] as usize;
            let f = self.freqs[max_reflection.1];
            let largest = if max_reflection.0 > 1e6 {
                format!("{:e}", max_reflection.0)
            } else {
                format!("{:.6}", max_reflection.0)
            };
            self.warn(
                line,
                "reflection-above-one",
                format!(
                    "a reflection coefficient exceeds 1 in magnitude (largest {} at {f} {}); a passive port reflects at most 1",
                    largest,
                    unit.as_str()
                ),
                "usually calibration drift at the band edge; recalibrate if it is large",
            );
        }
        let scale = unit.hz();
        // In place: a million-point sweep's frequencies are not held twice.
        let mut freqs_hz = std::mem::take(&mut self.freqs);
        for f in &mut freqs_hz {
            *f *= scale;
        }
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

/// A value whose parts are finite and within [`MAX_VALUE_MAGNITUDE`].
fn bounded(c: C) -> bool {
    c.re.abs() <= MAX_VALUE_MAGNITUDE && c.im.abs() <= MAX_VALUE_MAGNITUDE
}

impl Parser<'_> {
    /// The error for record `k` whose pairs make a complex number past [`MAX_VALUE_MAGNITUDE`] or not
    /// finite (a dB value of 1e308, say: 10^(1e308/20) overflows).
    fn out_of_range(&self, k: usize, raw: &[f64], format: Format) -> TouchstoneError {
        let (a, b) = raw
            .chunks_exact(2)
            .map(|p| (p[0], p[1]))
            .find(|&(a, b)| !bounded(pair_to_complex(a, b, format)))
            .unwrap_or((raw[0], raw[1]));
        self.err(
            self.record_lines[k] as usize,
            1,
            ErrorKind::NotANumber,
            format!(
                "the pair {} {}",
                crate::limits::short_number(a),
                crate::limits::short_number(b)
            ),
            format!(
                "a value whose {} number is at most {:e} in magnitude (coldtrace's limit, docs/limits.md)",
                format.as_str(),
                MAX_VALUE_MAGNITUDE
            ),
            "correct the value, or the format on the option line (RI, MA or DB)",
        )
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
