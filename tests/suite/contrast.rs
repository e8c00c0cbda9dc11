//! The desk's reading text (query text, item titles) meets WCAG 2.1 AA: a contrast ratio
//! of at least 4.5:1 against the panel, in the dark and the light theme. The ratio is
//! computed here from the W3C definition, independently of the workbench.

use plumbline::ui::palette::reading_text;

/// Relative luminance of an sRGB colour (W3C WCAG 2.1, "relative luminance": each
/// channel c/255 linearised as c/12.92 below 0.04045, else ((c + 0.055)/1.055)^2.4;
/// L = 0.2126 R + 0.7152 G + 0.0722 B).
fn luminance(c: egui::Color32) -> f64 {
    let lin = |v: u8| {
        let s = v as f64 / 255.0;
        if s <= 0.04045 {
            s / 12.92
        } else {
            ((s + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * lin(c.r()) + 0.7152 * lin(c.g()) + 0.0722 * lin(c.b())
}

/// Contrast ratio (W3C WCAG 2.1, "contrast ratio"): (L1 + 0.05) / (L2 + 0.05), L1 the
/// lighter.
fn contrast(a: egui::Color32, b: egui::Color32) -> f64 {
    let (x, y) = (luminance(a), luminance(b));
    (x.max(y) + 0.05) / (x.min(y) + 0.05)
}

#[test]
fn the_formula_gives_the_published_extremes() {
    // WCAG 2.1: black on white is 21:1, a colour on itself 1:1.
    let ratio = contrast(egui::Color32::BLACK, egui::Color32::WHITE);
    assert!((ratio - 21.0).abs() < 1e-9, "{ratio}");
    assert!((contrast(egui::Color32::GRAY, egui::Color32::GRAY) - 1.0).abs() < 1e-12);
}

#[test]
fn desk_reading_text_meets_aa_in_both_themes() {
    for (theme, visuals) in [
        ("dark", egui::Visuals::dark()),
        ("light", egui::Visuals::light()),
    ] {
        let ratio = contrast(reading_text(&visuals), visuals.panel_fill);
        assert!(ratio >= 4.5, "{theme}: {ratio:.2}:1 is below AA's 4.5:1");
    }
}
