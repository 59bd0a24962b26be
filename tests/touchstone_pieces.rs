//! The streaming reader (`touchstone::read_pieces`, what `read_file` uses) against the whole-text reader
//! (`read_bytes`): the same network, warnings and errors, line numbers and columns included, whatever the
//! size of the pieces the file is read in. Line ends are cut between pieces, a CR LF across two pieces, a
//! byte-order mark and a byte that is not text are each placed where the whole-text reader places them.

use coldtrace::touchstone::{read_bytes, read_file, read_pieces, Touchstone, TouchstoneError};
use std::path::Path;

/// Piece sizes: single bytes (every line end cut), odd sizes, and one larger than any fixture.
const PIECES: [usize; 7] = [1, 2, 3, 5, 7, 64, 1 << 20];

fn shown(r: &Result<Touchstone, TouchstoneError>) -> String {
    match r {
        Ok(t) => format!("{t:?}"),
        Err(e) => format!("error: {e:?}"),
    }
}

fn agree(bytes: &[u8], name: &str) {
    let path = Path::new(name);
    let whole = shown(&read_bytes(bytes, path));
    for piece in PIECES {
        let streamed = shown(&read_pieces(bytes, path, u64::MAX, piece));
        assert_eq!(
            streamed,
            whole,
            "{name}, pieces of {piece} bytes: {:?}",
            String::from_utf8_lossy(bytes)
        );
    }
}

const V1: &str = "! a reflection sweep\n# GHz S RI R 50\n1 0.5 -0.25\n2 0.4 0.125\n3 -0.3 0.0625\n";

const V2: &str = "[Version] 2.0\n# GHz S MA R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n\
                  [Network Data]\n1 0.5 10\n2 0.4\n 20\n3 0.3 30\n[End]\n";

#[test]
fn the_fixtures_read_alike_in_pieces() {
    let mut n = 0;
    for entry in std::fs::read_dir("tests/data/touchstone").unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        if !name.contains(".s") || name.ends_with(".md") {
            continue;
        }
        agree(&std::fs::read(&path).unwrap(), &name);
        n += 1;
    }
    assert!(n >= 5, "only {n} fixtures found");
}

#[test]
fn every_line_end_reads_alike_in_pieces() {
    for text in [V1, V2] {
        let name = if text == V1 { "a.s1p" } else { "a.ts" };
        agree(text.as_bytes(), name);
        agree(text.replace('\n', "\r\n").as_bytes(), name);
        agree(text.replace('\n', "\r").as_bytes(), name);
        agree(text.trim_end().as_bytes(), name);
        agree(format!("\u{feff}{text}").as_bytes(), name);
        agree(text.replace('\n', "\n\n").as_bytes(), name);
    }
    agree(b"", "a.s1p");
    agree("\u{feff}".as_bytes(), "a.s1p");
    agree(b"\r\n\r\n", "a.s1p");
}

#[test]
fn faults_are_placed_alike_in_pieces() {
    let bad_number = V1.replace("0.125", "0.1x5");
    let control = V1.replace("0.125", "0.1\u{1}25");
    let mut not_text = V1.as_bytes().to_vec();
    not_text.insert(V1.find("0.4").unwrap() + 2, 0xff);
    let mut not_text_first_line = format!("\u{feff}{V1}").into_bytes();
    not_text_first_line.insert(6, 0xc3);
    let mut not_text_crlf = V1.replace('\n', "\r\n").into_bytes();
    let at = not_text_crlf.len() - 4;
    not_text_crlf.insert(at, 0x80);
    let backwards = V1.replace("3 -0.3", "1.5 -0.3");
    let v1_faults: [&[u8]; 6] = [
        bad_number.as_bytes(),
        control.as_bytes(),
        &not_text,
        &not_text_first_line,
        &not_text_crlf,
        backwards.as_bytes(),
    ];
    for bytes in v1_faults {
        agree(bytes, "a.s1p");
    }
    agree(
        V2.replace("[Number of Frequencies] 3", "[Number of Frequencies] 4")
            .as_bytes(),
        "a.ts",
    );
    agree(V2.replace("2 0.4", "2 0.4\u{7f}").as_bytes(), "a.ts");
}

/// One difference, said in `read_file`'s documentation: of two faults, the first in the file's order is
/// the one reported, where the whole-text reader reports a byte that is not text wherever it lies.
#[test]
fn of_two_faults_the_first_in_the_file_is_reported() {
    let mut bytes = V1.replace("0.125", "0.1x5").into_bytes();
    bytes.push(0xff);
    let streamed = read_pieces(&bytes[..], Path::new("a.s1p"), u64::MAX, 7).unwrap_err();
    assert!(streamed.to_string().contains(":4:"), "{streamed}");
    let whole = read_bytes(&bytes, Path::new("a.s1p")).unwrap_err();
    assert!(whole.to_string().contains(":6:"), "{whole}");
}

#[test]
fn a_file_over_the_limit_is_refused_as_it_is_read() {
    let e = read_pieces(V1.as_bytes(), Path::new("a.s1p"), 10, 4).unwrap_err();
    assert!(
        matches!(e, TouchstoneError::Io { .. }) && e.to_string().contains("limit"),
        "{e}"
    );
    assert!(read_pieces(V1.as_bytes(), Path::new("a.s1p"), V1.len() as u64, 4).is_ok());
}

#[test]
fn read_file_streams_what_read_bytes_reads() {
    let dir = std::env::temp_dir().join(format!("coldtrace-pieces-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("a.s1p");
    // Longer than one piece of `read_file`, with CR LF line ends.
    let mut text = String::from("# MHz S DB R 50\r\n");
    for k in 0..40_000 {
        text.push_str(&format!(
            "{} {:.4} {:.2}\r\n",
            10 + k,
            -20.0 - k as f64 * 1e-4,
            k % 360
        ));
    }
    assert!(text.len() > coldtrace::touchstone::READ_PIECE_BYTES);
    std::fs::write(&path, &text).unwrap();
    let streamed = read_file(&path).unwrap();
    let whole = read_bytes(text.as_bytes(), &path).unwrap();
    std::fs::remove_dir_all(&dir).unwrap();
    assert_eq!(streamed, whole);
    assert_eq!(streamed.network.len(), 40_000);
}

/// `read_file` gives its records' arrays room from the first piece's density (`RECORDS_MARGIN` more): a
/// file whose density changes after that piece reads as the whole-text reader reads it, whether the rest
/// holds far more records than the first piece foretells (comments first) or far fewer (comments after).
#[test]
fn read_file_reads_alike_when_the_density_changes_after_the_first_piece() {
    let dir = std::env::temp_dir().join(format!("coldtrace-density-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let comments = |n: usize| -> String {
        (0..n)
            .map(|k| format!("! a note of the campaign, number {k}, kept with the sweep\n"))
            .collect()
    };
    let records = |from: usize, n: usize| -> String {
        (from..from + n)
            .map(|k| {
                format!(
                    "{} {:.6} {:.6} {:.6} {:.6} {:.6} {:.6} {:.6} {:.6}\n",
                    1 + k,
                    0.5 - k as f64 * 1e-6,
                    -0.25,
                    0.9,
                    0.01 * (k % 7) as f64,
                    0.9,
                    -0.01,
                    0.4,
                    0.125
                )
            })
            .collect()
    };
    let head = "# MHz S RI R 50\n";
    for (name, text) in [
        (
            "sparse-first.s2p",
            format!("{head}{}{}", comments(8000), records(0, 9000)),
        ),
        (
            "dense-first.s2p",
            format!("{head}{}{}", records(0, 9000), comments(8000)),
        ),
        (
            "mixed.s2p",
            format!(
                "{head}{}{}{}",
                records(0, 3000),
                comments(8000),
                records(3000, 6000)
            ),
        ),
    ] {
        assert!(
            text.len() > 2 * coldtrace::touchstone::READ_PIECE_BYTES,
            "{name}"
        );
        let path = dir.join(name);
        std::fs::write(&path, &text).unwrap();
        let streamed = read_file(&path).unwrap();
        let whole = read_bytes(text.as_bytes(), &path).unwrap();
        assert_eq!(streamed, whole, "{name}");
        assert_eq!(streamed.network.len(), 9000, "{name}");
    }
    std::fs::remove_dir_all(&dir).unwrap();
}
