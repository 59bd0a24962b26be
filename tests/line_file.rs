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
    // As-built start: the joint at 1.50 + 0.30 m (the feedthrough and J2 add no length), less the 4 mm of
    // J2's section taken from the cable before it.
    assert!((j2.start_m - 1.796).abs() < 1e-12);
    assert!((j2.length_m - 0.008).abs() < 1e-12);
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
         [[element]]\nkind = \"connector\"\nname = \"J9\"\nlength_m = 0.01\n"
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

/// A line with one user cable kind whose conductor is `conductor`, read through the file reader.
fn with_conductor(conductor: &str) -> Result<coldtrace::line::Line, LineError> {
    let text = format!(
        "{HEAD}[cables.mine]\nvelocity_factor = 0.7\nconductor = \"{conductor}\"\n\
         [[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"mine\"\nlength_m = 0.3\nfrom = \"room\"\nto = \"k4\"\n"
    );
    parse(&text, Path::new("in-07.toml"))
}

#[test]
fn material_names_people_write_resolve_to_the_right_material() {
    use coldtrace::line::materials::Material::{self, *};
    let cases: &[(&str, Material)] = &[
        ("copper", Copper),
        ("cu", Copper),
        ("Cu", Copper),
        ("copper-ofhc", Copper),
        ("OFHC copper", Copper),
        ("ofhc", Copper),
        ("silver", Silver),
        ("ag", Silver),
        ("stainless304", Stainless304),
        ("stainless", Stainless304),
        ("stainless-steel", Stainless304),
        ("Stainless Steel", Stainless304),
        ("ss304", Stainless304),
        ("SS304", Stainless304),
        ("ss", Stainless304),
        ("cupronickel", Cupronickel),
        ("CuNi", Cupronickel),
        ("cuni", Cupronickel),
        ("silver-plated-cupronickel", SilverPlatedCupronickel),
        ("AgCuNi", SilverPlatedCupronickel),
        ("brass", Brass),
        ("beryllium-copper", BerylliumCopper),
        ("BeCu", BerylliumCopper),
        ("nbti", Nbti),
        ("NbTi", Nbti),
        ("NBTI", Nbti),
        ("niobium-titanium", Nbti),
        ("niobium_titanium", Nbti),
        ("niobium", Niobium),
        ("Nb", Niobium),
        ("aluminium6061", Aluminium6061),
        ("aluminum6061", Aluminium6061),
        ("al6061", Aluminium6061),
        ("aluminium", Aluminium6061),
        ("aluminum", Aluminium6061),
        ("Aluminum", Aluminium6061),
    ];
    for (written, want) in cases {
        let l = with_conductor(written).unwrap_or_else(|e| panic!("{written}: {e}"));
        match &l.elements[0].kind {
            ElementKind::Cable { cable } => {
                assert_eq!((cable.inner, cable.outer), (*want, *want), "{written}")
            }
            k => panic!("{k:?}"),
        }
    }
    // Every alias in the table resolves to its own material (the list above is what people write; this
    // is the table itself).
    for (m, name, aliases) in coldtrace::line::materials::MATERIAL_NAMES {
        for a in aliases.iter().chain([name]) {
            assert_eq!(Material::parse(a), Some(*m), "{a}");
            assert_eq!(Material::parse(&a.to_uppercase()), Some(*m), "{a}");
        }
    }
    // Dielectric names go through the same reader.
    let text = format!(
        "{HEAD}[cables.mine]\nvelocity_factor = 0.7\ndielectric = \"Teflon\"\n\
         [[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"mine\"\nlength_m = 0.3\nfrom = \"room\"\nto = \"k4\"\n"
    );
    match &parse(&text, Path::new("a.toml")).unwrap().elements[0].kind {
        ElementKind::Cable { cable } => assert_eq!(cable.dielectric, Ptfe),
        k => panic!("{k:?}"),
    }
}

#[test]
fn misspelt_material_suggests_the_closest_and_lists_names_with_aliases() {
    let (line, col, key, msg) = match with_conductor("stainles") {
        Err(LineError::File {
            line,
            column,
            key,
            message,
            ..
        }) => (line, column, key, message),
        other => panic!("{other:?}"),
    };
    // HEAD is 3 lines, then [cables.mine], velocity_factor, conductor = "stainles" (col 13: the string).
    assert_eq!((line, col), (6, 13));
    assert_eq!(key.as_deref(), Some("conductor"));
    assert!(msg.contains("unknown material 'stainles'"), "{msg}");
    assert!(msg.contains("did you mean 'stainless304'"), "{msg}");
    assert!(
        msg.contains("stainless304 (stainless, stainless-steel, ss304, ss)"),
        "{msg}"
    );
    assert!(msg.contains("nbti (niobium-titanium)"), "{msg}");
    assert!(msg.contains("brass,"), "{msg}");
    // Close to an alias: the suggestion is the material's own name.
    let msg = with_conductor("aluminun").unwrap_err().to_string();
    assert!(msg.contains("did you mean 'aluminium6061'"), "{msg}");
    // Nothing close: no suggestion, still the listing.
    let msg = with_conductor("unobtainium").unwrap_err().to_string();
    assert!(!msg.contains("did you mean"), "{msg}");
    assert!(msg.contains("copper (cu, copper-ofhc"), "{msg}");
}

#[test]
fn cable_kind_names_match_in_any_case_and_misspellings_get_a_suggestion() {
    let cable = |kind: &str| {
        format!("{HEAD}[[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"{kind}\"\nlength_m = 0.3\nfrom = \"room\"\nto = \"k4\"\n")
    };
    let l = parse(&cable("SS-086"), Path::new("a.toml")).unwrap();
    match &l.elements[0].kind {
        ElementKind::Cable { cable } => assert_eq!(cable.name, "ss-086"),
        k => panic!("{k:?}"),
    }
    let (line, col, key, msg) = err(&cable("nbti-68"));
    assert_eq!((line, col), (7, 9));
    assert_eq!(key.as_deref(), Some("cable"));
    assert!(msg.contains("did you mean 'nbti-086'"), "{msg}");
    // A kind of the file's own, written in another case.
    let own = format!(
        "{HEAD}[cables.Lab-Flex]\nvelocity_factor = 0.7\n\
         [[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"lab-flex\"\nlength_m = 0.3\nfrom = \"room\"\nto = \"k4\"\n"
    );
    let l = parse(&own, Path::new("a.toml")).unwrap();
    match &l.elements[0].kind {
        ElementKind::Cable { cable } => assert_eq!(cable.name, "Lab-Flex"),
        k => panic!("{k:?}"),
    }
    // A kind of the file's own may not shadow a built-in one in another case.
    let (line, _, key, msg) = err(&format!(
        "{HEAD}[cables.CU-086]\nvelocity_factor = 0.7\n{}",
        &cable("cu-086")[HEAD.len()..]
    ));
    assert_eq!(line, 4);
    assert_eq!(key.as_deref(), Some("cables.CU-086"));
    assert!(msg.contains("built-in cable kind 'cu-086'"), "{msg}");
}

/// Two 1.000 m cables with connector J2 between them; `top` goes at the top of the file, `j2` into J2.
fn two_cables(top: &str, j2: &str) -> String {
    format!(
        "name = \"north-fridge/in-07\"\n{top}[stages]\nk50 = 45.0\n\
         [[element]]\nkind = \"cable\"\nname = \"a\"\ncable = \"ss-086\"\nlength_m = 1.000\nfrom = \"room\"\nto = \"k50\"\n\
         [[element]]\nkind = \"connector\"\nname = \"J2\"\n{j2}\
         [[element]]\nkind = \"cable\"\nname = \"b\"\ncable = \"ss-086\"\nlength_m = 1.000\nfrom = \"k50\"\nto = \"k50\"\n"
    )
}

fn centre(l: &coldtrace::line::Line, name: &str) -> f64 {
    let (_, e) = l.element(name).unwrap();
    e.start_m + 0.5 * e.length_m
}

/// Elements end to end: each starts where the one before ends, and no extent is negative.
fn assert_contiguous(l: &coldtrace::line::Line) {
    let mut x = 0.0;
    for e in &l.elements {
        assert!(
            (e.start_m - x).abs() < 1e-12,
            "{} starts at {}",
            e.name,
            e.start_m
        );
        assert!(e.length_m >= 0.0, "{}", e.name);
        x = e.end_m();
    }
}

#[test]
fn a_mated_pair_adds_no_length_and_sits_at_the_joint() {
    use coldtrace::line::ConnectorLengths;
    let l = parse(&two_cables("", ""), Path::new("a.toml")).unwrap();
    assert_eq!(l.connector_lengths, ConnectorLengths::InCables);
    assert_eq!(l.connector_lengths.name(), "in-cables");
    assert!((l.length_m() - 2.000).abs() < 1e-12, "{}", l.length_m());
    assert!((centre(&l, "J2") - 1.000).abs() < 1e-12);
    // Its 8 mm section is still there, taken 4 mm from each cable.
    let lengths: Vec<f64> = l.elements.iter().map(|e| e.length_m).collect();
    for (got, want) in lengths.iter().zip([0.996, 0.008, 0.996]) {
        assert!((got - want).abs() < 1e-12, "{lengths:?}");
    }
    assert_contiguous(&l);
    // The same written explicitly.
    let explicit = parse(
        &two_cables("connector_lengths = \"in-cables\"\n", ""),
        Path::new("a.toml"),
    )
    .unwrap();
    let extents = |l: &coldtrace::line::Line| -> Vec<(f64, f64)> {
        l.elements.iter().map(|e| (e.start_m, e.length_m)).collect()
    };
    assert_eq!(extents(&explicit), extents(&l));
    assert_eq!(explicit.connector_lengths, ConnectorLengths::InCables);
}

#[test]
fn a_feedthrough_with_its_own_length_adds_it() {
    let l = parse(&two_cables("", "length_m = 0.025\n"), Path::new("a.toml")).unwrap();
    assert!((l.length_m() - 2.025).abs() < 1e-12, "{}", l.length_m());
    assert!((centre(&l, "J2") - 1.0125).abs() < 1e-12);
    assert_eq!(l.elements[0].length_m, 1.0);
    assert_eq!(l.elements[2].length_m, 1.0);
    assert_contiguous(&l);
}

#[test]
fn connector_lengths_added_gives_the_old_chain() {
    use coldtrace::line::ConnectorLengths;
    let l = parse(
        &two_cables("connector_lengths = \"added\"\n", ""),
        Path::new("a.toml"),
    )
    .unwrap();
    assert_eq!(l.connector_lengths, ConnectorLengths::Added);
    assert_eq!(l.connector_lengths.name(), "added");
    assert!((l.length_m() - 2.008).abs() < 1e-12, "{}", l.length_m());
    assert!((centre(&l, "J2") - 1.004).abs() < 1e-12);
    assert_contiguous(&l);
    let json = serde_json::to_value(&l).unwrap();
    assert_eq!(json["connector_lengths"], "added");
}

#[test]
fn a_bad_connector_lengths_value_names_the_line_and_the_accepted_values() {
    let (line, col, key, msg) = err(&two_cables("connector_lengths = \"included\"\n", ""));
    assert_eq!((line, col), (2, 21));
    assert_eq!(key.as_deref(), Some("connector_lengths"));
    assert!(
        msg.contains("'included'") && msg.contains("\"in-cables\"") && msg.contains("\"added\""),
        "{msg}"
    );
}

#[test]
fn gain_in_path_is_read_from_the_top_of_the_file_and_is_off_by_default() {
    let off = parse(&two_cables("", ""), Path::new("a.toml")).unwrap();
    assert!(!off.gain_in_path);
    let on = parse(
        &two_cables("gain_in_path = true\n", ""),
        Path::new("a.toml"),
    )
    .unwrap();
    assert!(on.gain_in_path);
    assert_eq!(serde_json::to_value(&on).unwrap()["gain_in_path"], true);
    // Not a boolean: the file, its line and what the key takes.
    let (line, _, key, msg) = err(&two_cables("gain_in_path = \"yes\"\n", ""));
    assert_eq!(line, 2);
    assert_eq!(key.as_deref(), Some("gain_in_path"));
    assert!(
        msg.contains("true or false") && msg.contains("\"yes\""),
        "{msg}"
    );
}

#[test]
fn a_connector_beside_one_cable_takes_its_whole_section_from_it() {
    // J5 between the last cable and the device, J6 first in the chain.
    let text = format!(
        "{HEAD}[[element]]\nkind = \"connector\"\nname = \"J6\"\n\
         [[element]]\nkind = \"cable\"\nname = \"c\"\ncable = \"nbti-086\"\nlength_m = 0.35\nfrom = \"room\"\nto = \"k4\"\n\
         [[element]]\nkind = \"connector\"\nname = \"J5\"\n\
         [[element]]\nkind = \"device\"\nname = \"sample input\"\nload = \"open\"\n"
    );
    let l = parse(&text, Path::new("a.toml")).unwrap();
    assert!((l.length_m() - 0.35).abs() < 1e-12, "{}", l.length_m());
    assert!((l.elements[1].length_m - (0.35 - 0.016)).abs() < 1e-12);
    assert!((centre(&l, "J6") - 0.004).abs() < 1e-12);
    assert!((centre(&l, "J5") - 0.346).abs() < 1e-12);
    assert_contiguous(&l);
}

#[test]
fn carving_more_than_a_cable_has_or_from_no_cable_is_an_error() {
    // A 6 mm jumper between two mated pairs cannot give up 8 mm.
    let text = format!(
        "{HEAD}[[element]]\nkind = \"cable\"\nname = \"a\"\ncable = \"cu-086\"\nlength_m = 0.5\nfrom = \"room\"\nto = \"k4\"\n\
         [[element]]\nkind = \"connector\"\nname = \"J3\"\n\
         [[element]]\nkind = \"cable\"\nname = \"jumper\"\ncable = \"cu-086\"\nlength_m = 0.006\nfrom = \"k4\"\nto = \"k4\"\n\
         [[element]]\nkind = \"connector\"\nname = \"J4\"\n\
         [[element]]\nkind = \"cable\"\nname = \"b\"\ncable = \"cu-086\"\nlength_m = 0.5\nfrom = \"k4\"\nto = \"k4\"\n"
    );
    let (line, _, key, msg) = err(&text);
    assert_eq!(line, 18, "{msg}");
    assert_eq!(key.as_deref(), Some("length_m"));
    assert!(
        msg.contains("'jumper'")
            && msg.contains("J3 and J4")
            && msg.contains("8.0 mm")
            && msg.contains("connector_lengths = \"added\""),
        "{msg}"
    );
    // The same jumper with the old convention is fine.
    let added = text.replacen(
        "name = \"x\"\n",
        "name = \"x\"\nconnector_lengths = \"added\"\n",
        1,
    );
    let l = parse(&added, Path::new("a.toml")).unwrap();
    assert!((l.length_m() - 1.022).abs() < 1e-12);
    // A connector between an attenuator and a device has no cable to take its section from.
    let text = format!(
        "{HEAD}[[element]]\nkind = \"attenuator\"\nname = \"A4\"\nloss_db = 20\n\
         [[element]]\nkind = \"connector\"\nname = \"J4\"\n\
         [[element]]\nkind = \"device\"\nname = \"amp\"\n"
    );
    let (line, _, key, msg) = err(&text);
    assert_eq!(line, 10, "{msg}");
    assert_eq!(key.as_deref(), Some("length_m"));
    assert!(
        msg.contains("'J4'") && msg.contains("give it length_m"),
        "{msg}"
    );
}

#[test]
fn the_connector_lengths_example_in_the_docs_has_the_positions_it_states() {
    let doc =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/line-file.md"))
            .unwrap();
    let section = &doc[doc.find("## Connector lengths").unwrap()..];
    let start = section.find("```toml\n").unwrap() + "```toml\n".len();
    let toml = &section[start..start + section[start..].find("```").unwrap()];
    let l = parse(toml, Path::new("docs/line-file.md")).unwrap();
    let span = |name: &str| {
        let (_, e) = l.element(name).unwrap();
        (e.start_m, e.end_m())
    };
    let close =
        |(a, b): (f64, f64), (c, d): (f64, f64)| (a - c).abs() < 1e-12 && (b - d).abs() < 1e-12;
    assert!(close(span("feedthrough"), (1.50, 1.525)));
    assert!(close(span("room to 50K"), (1.525, 1.821)));
    assert!(close(span("J2"), (1.821, 1.829)));
    assert!((centre(&l, "J2") - 1.825).abs() < 1e-12);
    assert!((l.length_m() - 2.125).abs() < 1e-12);
    let added = parse(
        &toml.replace(
            "# connector_lengths = \"in-cables\"",
            "connector_lengths = \"added\"",
        ),
        Path::new("docs/line-file.md"),
    )
    .unwrap();
    assert!((centre(&added, "J2") - 1.829).abs() < 1e-12);
    assert!((added.length_m() - 2.133).abs() < 1e-12);
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
