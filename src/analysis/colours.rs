//! The colours a figure means something by, as plain RGB so that both the screens
//! (`ui::palette`) and the report's SVG pictures draw them the same.

/// Distinct colours per series (rankers, scales), readable on light and dark backgrounds.
pub const SERIES: [[u8; 3]; 6] = [
    [0x4c, 0x78, 0xa8],
    [0xe4, 0x7f, 0x2b],
    [0x3c, 0x9a, 0x5f],
    [0xb0, 0x4a, 0x8f],
    [0x8c, 0x6d, 0x3f],
    [0x5f, 0x5f, 0x9e],
];

/// Good news: saved, agreement, a candidate better than the baseline.
pub const GOOD: [u8; 3] = [0x3c, 0x9a, 0x5f];
/// A candidate worse than the baseline.
pub const WORSE: [u8; 3] = [0xc0, 0x50, 0x40];
/// The low end of the kappa scale (poor agreement).
pub const KAPPA_LOW: [u8; 3] = [0xc8, 0x4b, 0x3c];
/// The middle of the kappa scale.
pub const KAPPA_MID: [u8; 3] = [0xd9, 0xa4, 0x2b];

/// The colour of series number `n` (repeats after six).
pub fn series(n: usize) -> [u8; 3] {
    SERIES[n % SERIES.len()]
}
