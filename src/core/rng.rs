//! SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number generators"):
//! a small, well-mixed deterministic generator, so the demo and the simulation need no
//! random-number crate and give the same numbers on every platform.

#[derive(Debug, Clone)]
pub struct SplitMix(u64);

impl SplitMix {
    pub fn new(seed: u64) -> Self {
        SplitMix(seed)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.unit()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splitmix_matches_its_reference_sequence() {
        // SplitMix64 with seed 0: first output 0xE220A8397B1DCDAF (Steele, Lea & Flood 2014;
        // the value from the reference C implementation, from memory).
        assert_eq!(SplitMix::new(0).next_u64(), 0xE220_A839_7B1D_CDAF);
        let mut r = SplitMix::new(5);
        assert!((0..1000).map(|_| r.unit()).all(|u| (0.0..1.0).contains(&u)));
    }
}
