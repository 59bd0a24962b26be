//! Plots: formats by extension, labelled axes, markers, envelope thinning, refusals.

use coldtrace::report::{render_png, render_svg, write_plot, Figure, Marker, Series};

fn figure(points: usize) -> Figure {
    let mut fig = Figure::new("in-07 warm", "distance (m)", "|h| (dB)");
    let x: Vec<f64> = (0..points)
        .map(|i| i as f64 * 3.0 / points as f64)
        .collect();
    let y: Vec<f64> = x
        .iter()
        .map(|v| -60.0 + 50.0 * (-((v - 1.5) * 20.0).powi(2)).exp())
        .collect();
    fig.series.push(Series {
        name: "band-pass".into(),
        x,
        y,
    });
    fig.markers.push(Marker {
        x: 1.5,
        label: "SMA at 1.5 m".into(),
    });
    fig
}

#[test]
fn svg_has_title_axes_and_marker() {
    let svg = render_svg(&figure(500)).unwrap();
    for text in [
        "in-07 warm",
        "distance (m)",
        "|h| (dB)",
        "SMA at 1.5 m",
        "band-pass",
    ] {
        assert!(svg.contains(text), "missing '{text}'");
    }
}

#[test]
fn png_is_a_png_of_the_requested_size() {
    let png = render_png(&figure(200_000)).unwrap();
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
    // IHDR width and height, big-endian at bytes 16..24 (PNG specification, ISO/IEC 15948:2004, 11.2.2).
    let w = u32::from_be_bytes(png[16..20].try_into().unwrap());
    let h = u32::from_be_bytes(png[20..24].try_into().unwrap());
    assert_eq!((w, h), coldtrace::report::plot::DEFAULT_SIZE);
}

#[test]
fn write_plot_chooses_by_extension_and_refuses_others() {
    let dir = tempfile::tempdir().unwrap();
    let fig = figure(100);
    let svg = dir.path().join("a.SVG");
    write_plot(&svg, &fig, false, &[]).unwrap();
    assert!(std::fs::read_to_string(&svg).unwrap().starts_with("<svg"));
    let e = write_plot(&dir.path().join("a.pdf"), &fig, false, &[]).unwrap_err();
    assert!(e.to_string().contains(".svg or .png"), "{e}");
    let e = write_plot(&svg, &fig, false, &[]).unwrap_err();
    assert!(e.to_string().contains("--force"), "{e}");
    let mut bad = figure(10);
    bad.series[0].y.pop();
    let e = render_svg(&bad).unwrap_err();
    assert!(e.to_string().contains("10 x values but 9 y values"), "{e}");
    let empty = Figure::new("t", "x", "y");
    assert!(render_svg(&empty).is_err());
}
