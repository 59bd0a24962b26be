//! Checks on an HTML page coldtrace writes, shared by the report tests.

use scraper::{Html, Selector};

/// A CSS selector (the tests' own, always valid).
pub fn sel(s: &str) -> Selector {
    Selector::parse(s).unwrap()
}

/// The page fetches nothing from elsewhere and runs nothing: no script, no element that loads a resource,
/// no `src` or `href` attribute, no event handler, and no `url(` or `@import` in its style.
pub fn assert_self_contained(html: &Html) {
    assert_eq!(html.select(&sel("script")).count(), 0, "a script");
    for tag in ["link", "iframe", "object", "embed", "img", "image", "use"] {
        assert_eq!(html.select(&sel(tag)).count(), 0, "a <{tag}>");
    }
    for el in html.select(&sel("*")) {
        for (name, value) in el.value().attrs() {
            let name = name.to_ascii_lowercase();
            assert!(
                !(name == "src" || name.ends_with("href")),
                "<{} {name}=\"{value}\">",
                el.value().name()
            );
            assert!(!name.starts_with("on"), "an event handler {name}");
        }
    }
    let style: String = html.select(&sel("style")).flat_map(|s| s.text()).collect();
    assert!(
        !style.contains("url(") && !style.contains("@import"),
        "{style}"
    );
}
