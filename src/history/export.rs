//! A line's history as CSV (one row per record and landmark) or JSON (every record in detail).
//!
//! CSV follows RFC 4180 (comma-separated, CRLF-free `\n` line ends, fields with a comma, quote or line
//! break quoted and their quotes doubled); empty fields are values not measured. Numbers are written with
//! Rust's shortest round-trip formatting, so a value read back is the value stored.

use super::store::RecordDetail;
use serde::Serialize;

/// The CSV columns, in order.
pub const CSV_COLUMNS: [&str; 14] = [
    "record_id",
    "line",
    "at",
    "state",
    "sha256",
    "sweep",
    "element",
    "kind",
    "start_m",
    "end_m",
    "reflection_db",
    "floor_db",
    "delay_s",
    "loss_change_db",
];

/// `history export --format json`'s document.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Export<'a> {
    pub line: &'a str,
    pub records: &'a [RecordDetail],
}

fn field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

fn num(x: Option<f64>) -> String {
    x.filter(|v| v.is_finite())
        .map(|v| v.to_string())
        .unwrap_or_default()
}

/// The records as CSV, header first.
pub fn to_csv(records: &[RecordDetail]) -> String {
    let mut out = CSV_COLUMNS.join(",");
    out.push('\n');
    for r in records {
        let s = &r.summary;
        for l in &r.landmarks {
            let row = [
                s.id.to_string(),
                field(&s.line),
                field(&s.at),
                s.state.name().to_string(),
                s.sha256.clone(),
                field(&s.sweep),
                field(&l.element),
                l.kind.name().to_string(),
                num(Some(l.start_m)),
                num(Some(l.end_m)),
                num(l.reflection_db),
                num(l.floor_db),
                num(l.delay_s),
                num(l.loss_change_db),
            ];
            out.push_str(&row.join(","));
            out.push('\n');
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn fields_are_quoted_per_rfc_4180() {
        assert_eq!(field("plain"), "plain");
        assert_eq!(field("a,b"), "\"a,b\"");
        assert_eq!(field("say \"hi\""), "\"say \"\"hi\"\"\"");
        assert_eq!(num(Some(-31.25)), "-31.25");
        assert_eq!(num(Some(f64::NAN)), "");
        assert_eq!(num(None), "");
    }
}
