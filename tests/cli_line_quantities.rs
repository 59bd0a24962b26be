//! Line files take quantities with their unit (`length_m = "30 cm"`, `k4 = "4 K"`, `loss_db = "20 dB"`,
//! `impedance_ohm = "50 ohm"`), read by the same parser the flags use; a quantity of another family is
//! refused at file:line:column naming the key, the unit it takes and the fix.

#[path = "common/first_hour.rs"]
mod first_hour;

use first_hour::*;

#[test]
fn quantities_with_units_simulate_the_same_line_as_bare_numbers() {
    let dir = tempfile::tempdir().unwrap();
    let (o, plain) = simulate_short(dir.path(), &sample("in-07.toml"), "plain.s1p");
    assert!(o.status.success(), "{}", stderr(&o));
    // Each written value is the bare one in another unit; the products (150 * 0.01, 15 * 0.001) are exact
    // in binary64, so the simulated sweeps must agree to the last digit.
    let quoted = edited_line(
        dir.path(),
        "quoted.toml",
        &[
            ("impedance_ohm = 50.0", "impedance_ohm = \"50 ohm\""),
            ("k4 = 3.5", "k4 = \"3.5 K\""),
            ("mxc = 0.015", "mxc = \"15 mK\""),
            ("length_m = 1.50", "length_m = \"150 cm\""),
            ("impedance_ohm = 52.0", "impedance_ohm = \"52 Ohm\""),
            ("loss_db = 20.0", "loss_db = \"20 dB\""),
        ],
    );
    let (o, other) = simulate_short(dir.path(), &quoted, "quoted.s1p");
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(data_lines(&plain), data_lines(&other));
    // A changed quantity changes the sweep: the units are read, not dropped.
    let longer = edited_line(
        dir.path(),
        "longer.toml",
        &[("length_m = 1.50", "length_m = \"160 cm\"")],
    );
    let (o, third) = simulate_short(dir.path(), &longer, "longer.s1p");
    assert!(o.status.success(), "{}", stderr(&o));
    assert_ne!(data_lines(&plain), data_lines(&third));
}

#[test]
fn a_quantity_of_another_family_names_the_key_its_unit_and_the_fix() {
    let dir = tempfile::tempdir().unwrap();
    // length_m is on line 16 of the demo line file; the value starts in column 12.
    let bad = edited_line(
        dir.path(),
        "bad.toml",
        &[("length_m = 1.50", "length_m = \"50 ohm\"")],
    );
    let (o, out) = simulate_short(dir.path(), &bad, "x.s1p");
    refused(
        &o,
        &[
            "error: ",
            "bad.toml:16:12:",
            "key 'length_m'",
            "'50 ohm' is a resistance, but length_m takes a length in m",
            "write length_m = 0.3 or length_m = \"30 cm\"",
        ],
    );
    assert!(!out.exists());
    let cases = [
        (
            "k4 = 3.5",
            "k4 = \"4 m\"",
            "stages.k4",
            "a temperature in K",
        ),
        (
            "loss_db = 20.0",
            "loss_db = \"20 ohm\"",
            "loss_db",
            "a level in dB",
        ),
        (
            "impedance_ohm = 52.0",
            "impedance_ohm = \"52 furlongs\"",
            "impedance_ohm",
            "unknown unit 'furlongs'",
        ),
    ];
    for (from, to, key, needle) in cases {
        let bad = edited_line(dir.path(), "bad.toml", &[(from, to)]);
        let (o, _) = simulate_short(dir.path(), &bad, "x.s1p");
        refused(
            &o,
            &["bad.toml:", &format!("key '{key}'"), needle, "write "],
        );
    }
}

#[test]
fn a_load_takes_a_resistance_with_its_unit() {
    let dir = tempfile::tempdir().unwrap();
    let with_load = |name: &str, load: &str| {
        let line = edited_line(
            dir.path(),
            &format!("{name}.toml"),
            &[("load = \"open\"", load)],
        );
        simulate_short(dir.path(), &line, &format!("{name}.s1p"))
    };
    let (o, bare) = with_load("a", "load = 75.0");
    assert!(o.status.success(), "{}", stderr(&o));
    let (o, unit) = with_load("b", "load = \"75 ohm\"");
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(data_lines(&bare), data_lines(&unit));
    let (o, _) = with_load("c", "load = \"75 m\"");
    refused(&o, &["c.toml:", "key 'load'", "unknown load '75 m'"]);
}
