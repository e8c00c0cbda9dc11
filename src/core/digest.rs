//! Stable content digests: the same text parts give the same id on every machine and run.

/// A stable 128-bit FNV-1a digest (Fowler, Noll and Vo; offset basis and prime of the
/// 128-bit variant, from memory). It gives imported events an identity, so importing or
/// merging the same grade twice adds it once, and derives per-ranker resampling seeds.
pub fn content_uid(parts: &[&str]) -> String {
    let mut h: u128 = 0x6c62_272e_07bb_0142_62b8_2175_6295_c58d;
    for part in parts {
        for b in part.bytes().chain(std::iter::once(0x1f)) {
            h ^= b as u128;
            h = h.wrapping_mul(0x0000_0000_0100_0000_0000_0000_0000_013b);
        }
    }
    format!("{h:032x}")
}
