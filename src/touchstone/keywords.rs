//! Version 2 keywords: `[Name] argument` (Touchstone 2.0, section "Keywords"; Touchstone 2.1 keeps them;
//! section numbers from memory). Names are case-insensitive, and runs of spaces inside a name count as one.

use nom::bytes::complete::{tag, take_till};
use nom::character::complete::space0;
use nom::sequence::delimited;
use nom::{IResult, Parser};

/// The keywords of Touchstone 2.0 and 2.1.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub(crate) enum Keyword {
    Version,
    NumberOfPorts,
    TwoPortDataOrder,
    NumberOfFrequencies,
    NumberOfNoiseFrequencies,
    Reference,
    MatrixFormat,
    MixedModeOrder,
    BeginInformation,
    EndInformation,
    NetworkData,
    NoiseData,
    End,
}

impl Keyword {
    pub fn name(self) -> &'static str {
        match self {
            Keyword::Version => "[Version]",
            Keyword::NumberOfPorts => "[Number of Ports]",
            Keyword::TwoPortDataOrder => "[Two-Port Data Order]",
            Keyword::NumberOfFrequencies => "[Number of Frequencies]",
            Keyword::NumberOfNoiseFrequencies => "[Number of Noise Frequencies]",
            Keyword::Reference => "[Reference]",
            Keyword::MatrixFormat => "[Matrix Format]",
            Keyword::MixedModeOrder => "[Mixed-Mode Order]",
            Keyword::BeginInformation => "[Begin Information]",
            Keyword::EndInformation => "[End Information]",
            Keyword::NetworkData => "[Network Data]",
            Keyword::NoiseData => "[Noise Data]",
            Keyword::End => "[End]",
        }
    }

    fn from_name(normalised: &str) -> Option<Keyword> {
        Some(match normalised {
            "version" => Keyword::Version,
            "number of ports" => Keyword::NumberOfPorts,
            "two-port data order" => Keyword::TwoPortDataOrder,
            "number of frequencies" => Keyword::NumberOfFrequencies,
            "number of noise frequencies" => Keyword::NumberOfNoiseFrequencies,
            "reference" => Keyword::Reference,
            "matrix format" => Keyword::MatrixFormat,
            "mixed-mode order" => Keyword::MixedModeOrder,
            "begin information" => Keyword::BeginInformation,
            "end information" => Keyword::EndInformation,
            "network data" => Keyword::NetworkData,
            "noise data" => Keyword::NoiseData,
            "end" => Keyword::End,
            _ => return None,
        })
    }
}

/// A keyword line split into its name and the rest of the line.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct KeywordLine<'a> {
    /// The name as written, with brackets.
    pub raw: &'a str,
    /// The keyword, or `None` when the name is unknown.
    pub keyword: Option<Keyword>,
    /// What follows `]`, trimmed.
    pub argument: &'a str,
    /// 0-based byte offset of the argument in the line (for error columns).
    pub argument_offset: usize,
}

fn bracketed(input: &str) -> IResult<&str, &str> {
    delimited(tag("["), take_till(|c| c == ']' || c == '['), tag("]")).parse(input)
}

/// Parse a comment-free line starting (after spaces) with `[`. `None` when the brackets do not close.
pub(crate) fn parse_keyword_line(line: &str) -> Option<KeywordLine<'_>> {
    let (rest, _) = space0::<&str, nom::error::Error<&str>>(line).ok()?;
    let (after, name) = bracketed(rest).ok()?;
    let raw = &rest[..rest.len() - after.len()];
    let normalised = name
        .split_ascii_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
        .to_ascii_lowercase();
    let argument = after.trim_matches(|c| c == ' ' || c == '\t');
    let argument_offset = if argument.is_empty() {
        line.len()
    } else {
        argument.as_ptr() as usize - line.as_ptr() as usize
    };
    Some(KeywordLine {
        raw,
        keyword: Keyword::from_name(&normalised),
        argument,
        argument_offset,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_are_case_and_space_insensitive() {
        let k = parse_keyword_line("  [number   OF ports] 4").unwrap();
        assert_eq!(k.keyword, Some(Keyword::NumberOfPorts));
        assert_eq!(k.argument, "4");
        assert_eq!(k.argument_offset, 22);
        assert_eq!(
            parse_keyword_line("[End]").unwrap().keyword,
            Some(Keyword::End)
        );
        assert_eq!(parse_keyword_line("[Frobnicate] 1").unwrap().keyword, None);
        assert!(parse_keyword_line("[Version 2.0").is_none());
    }
}
