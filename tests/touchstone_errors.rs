//! Every malformed case is rejected with its kind, line, column and fix (rules cited by specification
//! version and section title; titles from memory, numbers not given).

use coldtrace::touchstone::{read_str, ErrorKind, TouchstoneError};
use std::path::Path;

/// Read `text` as `name`, expect an error of `kind` at `line` (and `col` when given) whose fix contains
/// `fix`; returns the displayed message.
fn expect(
    text: &str,
    name: &str,
    kind: ErrorKind,
    line: usize,
    col: Option<usize>,
    fix: &str,
) -> String {
    let e = match read_str(text, Path::new(name)) {
        Ok(t) => panic!("expected {kind:?}, read {} points\n{text}", t.network.len()),
        Err(e) => e,
    };
    let msg = e.to_string();
    match &e {
        TouchstoneError::Parse {
            line: l,
            col: c,
            kind: k,
            fix: f,
            ..
        } => {
            assert_eq!(*k, kind, "{msg}");
            assert_eq!(*l, line, "{msg}");
            if let Some(col) = col {
                assert_eq!(*c, col, "{msg}");
            }
            assert!(f.contains(fix), "fix '{f}' lacks '{fix}'");
        }
        other => panic!("not a parse error: {other}"),
    }
    msg
}

const V2_HEAD_1PORT: &str = "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] 1\n";

#[test]
fn display_names_path_line_column_found_expected_fix() {
    let msg = expect(
        "# Hz S RI\n1 0 0\n2 0 x\n",
        "in-07.s1p",
        ErrorKind::NotANumber,
        3,
        Some(5),
        "correct",
    );
    assert!(
        msg.starts_with("in-07.s1p:3:5: found 'x', expected a number; fix: "),
        "{msg}"
    );
}

// 1.1 "Network Data": frequencies increase.
#[test]
fn frequency_not_increasing() {
    expect(
        "# Hz S RI\n1 0 0\n1 0 0\n",
        "a.s1p",
        ErrorKind::NonIncreasingFrequency,
        3,
        Some(1),
        "sort",
    );
    expect(
        "# Hz S RI\n 2 0 0\n 1 0 0\n",
        "a.s1p",
        ErrorKind::NonIncreasingFrequency,
        3,
        Some(2),
        "sort",
    );
    // A 2-port line of 9 values at a lower frequency is not noise.
    let two = "# Hz S RI\n2 0 0 0 0 0 0 0 0\n1 0 0 0 0 0 0 0 0\n";
    expect(
        two,
        "a.s2p",
        ErrorKind::NonIncreasingFrequency,
        3,
        Some(1),
        "sort",
    );
    // Noise frequencies increase too (1.1 "Noise Parameter Data").
    let noise = "# Hz S RI\n2 0 0 0 0 0 0 0 0\n1 1 0.5 0 0.2\n1 1 0.5 0 0.2\n";
    expect(
        noise,
        "a.s2p",
        ErrorKind::NonIncreasingFrequency,
        4,
        Some(1),
        "sort",
    );
    let v2 =
        format!("{V2_HEAD_1PORT}[Number of Frequencies] 2\n[Network Data]\n5 0 0 4 0 0\n[End]\n");
    expect(
        &v2,
        "a.s1p",
        ErrorKind::NonIncreasingFrequency,
        6,
        Some(7),
        "sort",
    );
}

// 1.1 "Network Data": a 1-port line holds 3 values, a 2-port line 9, a 3-port record 19; records end at a
// line end.
#[test]
fn wrong_value_count() {
    expect(
        "# Hz S RI\n1 0 0 0\n",
        "a.s1p",
        ErrorKind::WrongValueCount,
        2,
        Some(7),
        "extension",
    );
    expect(
        "# Hz S RI\n1 0 0 0 0 0 0 0\n",
        "a.s2p",
        ErrorKind::WrongValueCount,
        2,
        None,
        "complete",
    );
    let three = "# Hz S RI\n1 0 0 0 0 0 0\n0 0 0 0 0 0\n0 0 0 0 0\n";
    expect(
        three,
        "a.s3p",
        ErrorKind::WrongValueCount,
        4,
        None,
        "layout",
    );
    let short = "# Hz S RI\n1 0 0 0 0 0 0\n0 0 0 0 0 0\n";
    expect(
        short,
        "a.s3p",
        ErrorKind::WrongValueCount,
        2,
        None,
        "complete or delete the last record",
    );
    let noise = "# Hz S RI\n2 0 0 0 0 0 0 0 0\n1 1 0.5 0\n";
    expect(
        noise,
        "a.s2p",
        ErrorKind::WrongValueCount,
        3,
        None,
        "complete the noise line",
    );
    // 2.0 "[Reference]": one value per port.
    let reference = "[Version] 2.0\n# Hz S RI R 50\n[Number of Ports] 2\n[Reference] 50 50 50\n";
    expect(
        reference,
        "a.s2p",
        ErrorKind::WrongValueCount,
        4,
        Some(19),
        "one reference resistance per port",
    );
    let v2 = format!("{V2_HEAD_1PORT}[Number of Frequencies] 1\n[Network Data]\n1 0\n[End]\n");
    expect(
        &v2,
        "a.s1p",
        ErrorKind::WrongValueCount,
        6,
        Some(1),
        "complete or delete",
    );
}

#[test]
fn not_a_number() {
    expect(
        "# Hz S RI\n1 0 0,5\n",
        "a.s1p",
        ErrorKind::NotANumber,
        2,
        Some(5),
        "comments must start with '!'",
    );
    expect(
        "# Hz S RI\n1 nan 0\n",
        "a.s1p",
        ErrorKind::NotANumber,
        2,
        Some(3),
        "correct",
    );
    let v2 = "[Version] 2.0\n# Hz S RI\n[Number of Ports] 2\n[Reference] 50 abc\n";
    expect(
        v2,
        "a.s2p",
        ErrorKind::NotANumber,
        4,
        Some(16),
        "positive number",
    );
}

// 2.0 "Keywords": unknown keywords are errors.
#[test]
fn unknown_keyword() {
    let text = format!("{V2_HEAD_1PORT}[Number of Apples] 3\n");
    expect(
        &text,
        "a.s1p",
        ErrorKind::UnknownKeyword,
        4,
        Some(1),
        "spelling",
    );
}

// 2.0 "[Version]" first; keywords only in version 2; each keyword once; header keywords before
// [Network Data]; nothing after [End].
#[test]
fn misplaced_keyword() {
    expect(
        "# Hz S RI\n[Number of Ports] 1\n1 0 0\n",
        "a.s1p",
        ErrorKind::MisplacedKeyword,
        2,
        Some(1),
        "[Version] 2.1",
    );
    expect(
        "# Hz S RI\n",
        "a.s1p",
        ErrorKind::NoData,
        1,
        None,
        "complete",
    );
    expect(
        "[Number of Ports] 1\n",
        "a.s1p",
        ErrorKind::MisplacedKeyword,
        1,
        None,
        "first line",
    );
    let twice = format!("{V2_HEAD_1PORT}[Number of Ports] 1\n");
    expect(
        &twice,
        "a.s1p",
        ErrorKind::MisplacedKeyword,
        4,
        None,
        "delete the repeated keyword",
    );
    let late = format!(
        "{V2_HEAD_1PORT}[Number of Frequencies] 1\n[Network Data]\n1 0 0\n[Reference] 50\n"
    );
    expect(
        &late,
        "a.s1p",
        ErrorKind::MisplacedKeyword,
        7,
        None,
        "above [Network Data]",
    );
    let after_end =
        format!("{V2_HEAD_1PORT}[Number of Frequencies] 1\n[Network Data]\n1 0 0\n[End]\n2 0 0\n");
    expect(
        &after_end,
        "a.s1p",
        ErrorKind::WrongValueCount,
        8,
        None,
        "after [End]",
    );
    let second_option = format!("{V2_HEAD_1PORT}# GHz S MA\n");
    expect(
        &second_option,
        "a.s1p",
        ErrorKind::MisplacedKeyword,
        4,
        None,
        "first one is on line 2",
    );
    let reference_first = "[Version] 2.0\n# Hz S RI\n[Reference] 50\n";
    expect(
        reference_first,
        "a.s1p",
        ErrorKind::MisplacedKeyword,
        3,
        None,
        "[Number of Ports] N",
    );
}

// 2.0 "[Number of Ports]", "[Number of Frequencies]", "[Two-Port Data Order]" (required for 2-ports),
// "[Number of Noise Frequencies]" (required with [Noise Data]), "[End]" (required in 2.1).
#[test]
fn missing_keyword() {
    let no_ports = "[Version] 2.0\n# Hz S RI\n[Number of Frequencies] 1\n[Network Data]\n";
    expect(
        no_ports,
        "a.s1p",
        ErrorKind::MissingKeyword,
        4,
        None,
        "[Number of Ports] N",
    );
    let no_count = format!("{V2_HEAD_1PORT}[Network Data]\n");
    expect(
        &no_count,
        "a.s1p",
        ErrorKind::MissingKeyword,
        4,
        None,
        "[Number of Frequencies] K",
    );
    let no_order = "[Version] 2.0\n# Hz S RI\n[Number of Ports] 2\n[Number of Frequencies] 1\n[Network Data]\n";
    expect(
        no_order,
        "a.s2p",
        ErrorKind::MissingKeyword,
        5,
        None,
        "[Two-Port Data Order] 21_12",
    );
    let v21_no_end = "[Version] 2.1\n# Hz S RI\n[Number of Ports] 1\n[Number of Frequencies] 1\n[Network Data]\n1 0 0\n";
    expect(
        v21_no_end,
        "a.s1p",
        ErrorKind::MissingKeyword,
        6,
        None,
        "add '[End]'",
    );
    let no_network = format!("{V2_HEAD_1PORT}[Number of Frequencies] 1\n");
    expect(
        &no_network,
        "a.s1p",
        ErrorKind::MissingKeyword,
        4,
        None,
        "[Network Data]",
    );
    let data_first = format!("{V2_HEAD_1PORT}[Number of Frequencies] 1\n1 0 0\n");
    expect(
        &data_first,
        "a.s1p",
        ErrorKind::MissingKeyword,
        5,
        None,
        "[Network Data]",
    );
    let noise = "[Version] 2.0\n# Hz S RI\n[Number of Ports] 2\n[Two-Port Data Order] 21_12\n\
                 [Number of Frequencies] 1\n[Network Data]\n1 0 0 0 0 0 0 0 0\n[Noise Data]\n";
    expect(
        noise,
        "a.s2p",
        ErrorKind::MissingKeyword,
        8,
        None,
        "[Number of Noise Frequencies] M",
    );
}

// 2.0 "[Number of Frequencies]": must equal the number of records.
#[test]
fn count_mismatch() {
    let fewer = format!("{V2_HEAD_1PORT}[Number of Frequencies] 2\n[Network Data]\n1 0 0\n[End]\n");
    expect(
        &fewer,
        "a.s1p",
        ErrorKind::CountMismatch,
        7,
        None,
        "correct [Number of Frequencies]",
    );
    let more =
        format!("{V2_HEAD_1PORT}[Number of Frequencies] 1\n[Network Data]\n1 0 0\n2 0 0\n[End]\n");
    expect(
        &more,
        "a.s1p",
        ErrorKind::CountMismatch,
        7,
        Some(1),
        "remove the extra records",
    );
    let noise = "[Version] 2.0\n# Hz S RI\n[Number of Ports] 2\n[Two-Port Data Order] 21_12\n\
                 [Number of Frequencies] 1\n[Number of Noise Frequencies] 2\n[Network Data]\n\
                 1 0 0 0 0 0 0 0 0\n[Noise Data]\n1 1 0.5 0 20\n[End]\n";
    expect(
        noise,
        "a.s2p",
        ErrorKind::CountMismatch,
        11,
        None,
        "[Number of Noise Frequencies]",
    );
}

// 1.1 / 2.0 "Option Line".
#[test]
fn bad_option_line() {
    expect(
        "# GHz S XY R 50\n1 0 0\n",
        "a.s1p",
        ErrorKind::BadOptionLine,
        1,
        Some(9),
        "# GHz S RI R 50",
    );
    expect(
        "# GHz S RI R\n1 0 0\n",
        "a.s1p",
        ErrorKind::BadOptionLine,
        1,
        Some(13),
        "# GHz S RI R 50",
    );
    expect(
        "# Hz S RI R 50 75 100\n1 0 0 0 0 0 0 0 0\n",
        "a.s2p",
        ErrorKind::BadOptionLine,
        1,
        None,
        "R 50",
    );
    let v2 = "[Version] 2.0\n# Hz S RI R 50 75\n";
    expect(
        v2,
        "a.s2p",
        ErrorKind::BadOptionLine,
        2,
        None,
        "[Reference]",
    );
}

#[test]
fn bad_keyword_value_and_port_count() {
    expect(
        "[Version] 3.0\n",
        "a.s1p",
        ErrorKind::BadKeywordValue,
        1,
        Some(11),
        "[Version] 2.1",
    );
    let order = "[Version] 2.0\n# Hz S RI\n[Number of Ports] 2\n[Two-Port Data Order] 21-12\n";
    expect(
        order,
        "a.s2p",
        ErrorKind::BadKeywordValue,
        4,
        Some(23),
        "21_12",
    );
    let ports = "[Version] 2.0\n# Hz S RI\n[Number of Ports] two\n";
    expect(
        ports,
        "a.s2p",
        ErrorKind::BadKeywordValue,
        3,
        Some(19),
        "[Number of Ports] <count>",
    );
    let format = "[Version] 2.0\n# Hz S RI\n[Number of Ports] 2\n[Matrix Format] Diagonal\n";
    expect(format, "a.s2p", ErrorKind::BadKeywordValue, 4, None, "Full");
    expect(
        "# Hz S RI\n1 0 0\n",
        "sweep.txt",
        ErrorKind::BadPortCount,
        1,
        None,
        "rename the file",
    );
    // H and G exist for 2-ports only.
    expect(
        "# Hz H RI\n1 0 0\n",
        "a.s1p",
        ErrorKind::BadPortCount,
        1,
        None,
        "S, Y or Z",
    );
}

#[test]
fn control_characters_are_not_text() {
    expect(
        "# Hz S RI\n1 0\x00 0\n",
        "a.s1p",
        ErrorKind::NotText,
        2,
        Some(4),
        "control characters",
    );
}

#[test]
fn singular_conversion_is_reported() {
    // z = -1 makes z + I singular: no S-parameters exist.
    expect(
        "# Hz Z RI\n1 -1 0\n",
        "a.s1p",
        ErrorKind::Unconvertible,
        2,
        None,
        "check the values",
    );
}

#[test]
fn absurd_port_count_in_the_extension_is_an_error_not_an_overflow() {
    expect(
        "# Hz S RI\n1 0 0\n",
        "a.s99999999999p",
        ErrorKind::BadPortCount,
        1,
        None,
        "rename the file",
    );
}
