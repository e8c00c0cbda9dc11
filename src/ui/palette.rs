//! The workbench's colours, in one place: what a colour means (saved, caution, worse) is
//! decided here, so every screen says it the same way.

use egui::Color32;

use crate::analysis::colours as rgb;

const fn from(c: [u8; 3]) -> Color32 {
    Color32::from_rgb(c[0], c[1], c[2])
}

/// Good news: saved, agreement, a candidate better than the baseline.
pub const GOOD: Color32 = from(rgb::GOOD);
/// A caution that needs reading (blind rule, read-only, small samples).
pub const CAUTION: Color32 = Color32::from_rgb(0xc0, 0x7a, 0x10);
/// A candidate worse than the baseline.
pub const WORSE: Color32 = from(rgb::WORSE);
/// Off-diagonal confusion cells (reviewers chose different levels).
pub const DISAGREE: Color32 = Color32::from_rgb(0x3a, 0x6e, 0xa8);
/// The "new item" badge on cards and in the catalog.
pub const NEW_BADGE: Color32 = Color32::from_rgb(0x2f, 0x7d, 0x5b);
/// The kappa scale from poor through fair to good.
pub const KAPPA_LOW: Color32 = from(rgb::KAPPA_LOW);
/// The middle of the kappa scale.
pub const KAPPA_MID: Color32 = from(rgb::KAPPA_MID);

/// Text a reviewer reads closely on the desk (the query, the item titles): the theme's
/// strongest text colour, which stays well above the WCAG 2.1 AA contrast of 4.5:1 on
/// the panel in both the dark and the light theme (checked in the desk's tests).
pub fn reading_text(visuals: &egui::Visuals) -> Color32 {
    visuals.strong_text_color()
}

/// The colour of series number `n` (repeats after six; see `analysis::colours`).
pub fn series(n: usize) -> Color32 {
    from(rgb::series(n))
}

/// A level's `#rrggbb` colour (surrounding spaces allowed); `None` for anything else.
pub fn parse_hex(text: &str) -> Option<Color32> {
    let hex = text.trim().strip_prefix('#')?;
    if hex.len() != 6 || !hex.chars().all(|c| c.is_ascii_hexdigit()) {
        return None;
    }
    let v = u32::from_str_radix(hex, 16).ok()?;
    Some(Color32::from_rgb((v >> 16) as u8, (v >> 8) as u8, v as u8))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hex_colours_parse_and_nothing_else_does() {
        assert_eq!(parse_hex(" #3c9a5f "), Some(GOOD));
        for bad in ["3c9a5f", "#3c9a5", "#+c9a5f", "#3c9a5g", ""] {
            assert_eq!(parse_hex(bad), None, "{bad:?}");
        }
    }
}
