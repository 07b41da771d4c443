//! Stack painting and its high-water mark.
//!
//! At start-up the free part of the stack region is filled with [`PAINT`]; the deepest word that
//! no longer holds the pattern marks how far the stack ever grew. The scan here works on a slice
//! of words (lowest address first) so it is host-tested; `target::stack` applies it to the real
//! stack region on the Cortex-M images.

/// Fill pattern.
pub const PAINT: u32 = 0xC0FF_EE5A;

/// Bytes ever used of a stack region given as words from its lowest address (the end the stack
/// grows towards) to its top: everything above the last untouched painted word counts as used.
pub fn high_water(region: &[u32]) -> usize {
    let untouched = region.iter().take_while(|&&w| w == PAINT).count();
    (region.len() - untouched) * 4
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn high_water_counts_from_the_deepest_touched_word() {
        let mut r = [PAINT; 16];
        assert_eq!(high_water(&r), 0);
        r[15] = 1;
        assert_eq!(high_water(&r), 4);
        r[10] = 0;
        // A word deeper down that still holds the pattern by chance does not hide r[10].
        assert_eq!(high_water(&r), 24);
        assert_eq!(high_water(&[]), 0);
        assert_eq!(high_water(&[0; 4]), 16);
    }
}
