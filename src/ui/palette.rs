//! The workbench's colours, in one place: what a colour means (saved, caution, worse) is
//! decided here, so every screen says it the same way.

use egui::Color32;

/// Good news: saved, agreement, a candidate better than the baseline.
pub const GOOD: Color32 = Color32::from_rgb(0x3c, 0x9a, 0x5f);
/// A caution that needs reading (blind rule, read-only, small samples).
pub const CAUTION: Color32 = Color32::from_rgb(0xc0, 0x7a, 0x10);
/// A candidate worse than the baseline.
pub const WORSE: Color32 = Color32::from_rgb(0xc0, 0x50, 0x40);
/// Off-diagonal confusion cells (reviewers chose different levels).
pub const DISAGREE: Color32 = Color32::from_rgb(0x3a, 0x6e, 0xa8);
/// The "new item" badge on cards and in the catalog.
pub const NEW_BADGE: Color32 = Color32::from_rgb(0x2f, 0x7d, 0x5b);
/// The kappa scale from poor through fair to good.
pub const KAPPA_LOW: Color32 = Color32::from_rgb(0xc8, 0x4b, 0x3c);
/// The middle of the kappa scale.
pub const KAPPA_MID: Color32 = Color32::from_rgb(0xd9, 0xa4, 0x2b);

/// Distinct colours per series (rankers, scales), readable on light and dark backgrounds.
const SERIES: [Color32; 6] = [
    Color32::from_rgb(0x4c, 0x78, 0xa8),
    Color32::from_rgb(0xe4, 0x7f, 0x2b),
    Color32::from_rgb(0x3c, 0x9a, 0x5f),
    Color32::from_rgb(0xb0, 0x4a, 0x8f),
    Color32::from_rgb(0x8c, 0x6d, 0x3f),
    Color32::from_rgb(0x5f, 0x5f, 0x9e),
];

/// The colour of series number `n` (repeats after six).
pub fn series(n: usize) -> Color32 {
    SERIES[n % SERIES.len()]
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
