//! Line files: the demo files resolve; every error names the file, line, column and key.

use coldtrace::line::file::parse;
use coldtrace::line::{ElementKind, LineError, Load};
use std::path::Path;

fn demo(name: &str) -> coldtrace::line::Line {
    coldtrace::line::file::read_file(
        &Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/data/line")
            .join(name),
    )
    .unwrap()
}

#[test]
fn demo_files_resolve() {
    let l = demo("north-fridge-in-07.toml");
    assert_eq!(l.name, "north-fridge/in-07");
    assert_eq!(l.elements.len(), 12);
    assert_eq!(l.stage_kelvin("mxc"), Some(0.015));
    let (_, j2) = l.element("J2").unwrap();
    // As-built position: 1.50 + 0.008 + 0.30 m.
    assert!((j2.start_m - 1.808).abs() < 1e-12);
    assert!(matches!(
        l.elements.last().unwrap().kind,
        ElementKind::Device { load: Load::Open }
    ));
    let o = demo("north-fridge-out-03.toml");
    match o.elements.last().unwrap().kind {
        ElementKind::Device {
            load: Load::Reflection(g),
        } => assert!((g - 10f64.powf(-0.6)).abs() < 1e-12),
        ref k => panic!("{k:?}"),
    }
    match &o.elements[0].kind {
        ElementKind::Cable { cable } => assert!((cable.velocity_factor() - 0.70).abs() < 1e-12),
        k => panic!("{k:?}"),
    }
}

fn err(text: &str) -> (usize, usize, Option<String>, String) {
    match parse(text, Path::new("in-07.toml")) {
        Err(LineError::File {
            path,
            line,
            column,
            key,
            message,
        }) => {
            assert_eq!(path, Path::new("in-07.toml"));
            (line, column, key, message)
        }
        other => panic!("expected a file error, got {other:?}"),
    }
}

const HEAD: &str = "name = \"x\"\n[stages]\nk4 = 3.5\n";

#[test]
fn unknown_cable_kind_lists_the_known_ones() {
    let text = format!("{HEAD}[[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"ss-087\"\nlength_m = 0.3\nfrom = \"room\"\nto = \"k4\"\n");
    let (line, col, key, msg) = err(&text);
    assert_eq!((line, col), (7, 9));
    assert_eq!(key.as_deref(), Some("cable"));
    assert!(
        msg.contains("ss-087") && msg.contains("ss-086") && msg.contains("nbti-086"),
        "{msg}"
    );
}

#[test]
fn unknown_stage_negative_length_duplicate_name() {
    let cable = |from: &str, len: &str, name: &str| {
        format!("[[element]]\nkind = \"cable\"\nname = \"{name}\"\ncable = \"ss-086\"\nlength_m = {len}\nfrom = \"{from}\"\nto = \"k4\"\n")
    };
    let (line, _, key, msg) = err(&format!("{HEAD}{}", cable("k40", "0.3", "a")));
    assert_eq!(line, 9);
    assert_eq!(key.as_deref(), Some("from"));
    assert!(
        msg.contains("k40") && msg.contains("room") && msg.contains("k4"),
        "{msg}"
    );
    let (line, _, key, msg) = err(&format!("{HEAD}{}", cable("room", "-0.3", "a")));
    assert_eq!(line, 8);
    assert_eq!(key.as_deref(), Some("length_m"));
    assert!(msg.contains("positive"), "{msg}");
    let (line, _, key, msg) = err(&format!(
        "{HEAD}{}{}",
        cable("room", "0.3", "a"),
        cable("room", "0.3", "a")
    ));
    assert_eq!(line, 13);
    assert_eq!(key.as_deref(), Some("name"));
    assert!(msg.contains("duplicate") && msg.contains("line 4"), "{msg}");
}

#[test]
fn unknown_key_is_named_with_its_line() {
    let text = format!("{HEAD}[[element]]\nkind = \"connector\"\nname = \"J2\"\nlenght_m = 0.01\n");
    let (line, _, key, msg) = err(&text);
    assert_eq!(line, 7);
    assert_eq!(key.as_deref(), Some("lenght_m"));
    assert!(msg.contains("unknown field"), "{msg}");
}

#[test]
fn key_of_another_kind_is_refused() {
    let text = format!("{HEAD}[[element]]\nkind = \"connector\"\nname = \"J2\"\nloss_db = 3.0\n");
    let (line, _, key, msg) = err(&text);
    assert_eq!(line, 7);
    assert_eq!(key.as_deref(), Some("loss_db"));
    assert!(
        msg.contains("connector") && msg.contains("pin_radius_m"),
        "{msg}"
    );
}

#[test]
fn stage_jumps_and_hidden_elements_are_warned() {
    let text = format!(
        "{HEAD}[[element]]\nkind = \"cable\"\nname = \"a\"\ncable = \"cu-086\"\nlength_m = 1\nfrom = \"room\"\nto = \"room\"\n\
         [[element]]\nkind = \"cable\"\nname = \"b\"\ncable = \"cu-086\"\nlength_m = 1\nfrom = \"k4\"\nto = \"k4\"\n\
         [[element]]\nkind = \"device\"\nname = \"amp\"\nreturn_loss_db = 0\n\
         [[element]]\nkind = \"connector\"\nname = \"J9\"\n"
    );
    let l = parse(&text, Path::new("w.toml")).unwrap();
    let kinds: Vec<&str> = l.warnings.iter().map(|w| w.kind.as_str()).collect();
    assert_eq!(kinds, ["stage-jump", "hidden-by-device"]);
    assert_eq!(l.warnings[0].location.as_deref(), Some("w.toml:11"));
    assert!(l.warnings[1].message.contains("J9"));
    assert_eq!(l.length_m(), 2.0);
    // return_loss_db = 0 is a full reflection: the simulator treats it as an open, with no NaN.
    let net = coldtrace::line::simulate(
        &l,
        &coldtrace::line::SimConfig::linear(coldtrace::line::State::Warm, 1e9, 2e9, 3),
    )
    .unwrap();
    assert!(
        net.s
            .iter()
            .all(|g| g.is_finite() && g.norm() < 1.0 && g.norm() > 0.3),
        "{:?}",
        net.s
    );
}

#[test]
fn syntax_error_has_line_and_column() {
    let (line, col, _, _) = err("name = \"x\"\nimpedance_ohm = = 3\n");
    assert_eq!(line, 2);
    assert!(col > 1);
}

#[test]
fn integers_are_numbers_and_display_names_the_file() {
    let text = format!("{HEAD}[[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"cu-086\"\nlength_m = 1\nfrom = \"room\"\nto = \"k4\"\n");
    let l = parse(&text, Path::new("a.toml")).unwrap();
    assert_eq!(l.elements[0].length_m, 1.0);
    let e = parse("name = 3\n", Path::new("dir/a.toml")).unwrap_err();
    let s = e.to_string();
    assert!(s.starts_with("dir/a.toml:1:"), "{s}");
}

mod props {
    use proptest::prelude::*;
    use std::path::Path;

    proptest! {
        #[test]
        fn line_parser_never_panics(text in "\\PC{0,300}") {
            let _ = coldtrace::line::file::parse(&text, Path::new("p.toml"));
        }

        #[test]
        fn line_parser_never_panics_on_near_valid_files(len in -2.0f64..2.0, kind in "(cable|connector|device|attenuator|x)", st in "(room|k4|mxc)") {
            let text = format!("name = \"x\"\n[stages]\nk4 = 3.5\n[[element]]\nkind = \"{kind}\"\nname = \"e\"\ncable = \"ss-086\"\nlength_m = {len}\nfrom = \"{st}\"\nto = \"k4\"\n");
            let _ = coldtrace::line::file::parse(&text, Path::new("p.toml"));
        }

        #[test]
        fn fault_parser_never_panics(spec in "\\PC{0,60}") {
            let _ = coldtrace::line::Fault::parse(&spec);
        }
    }
}
