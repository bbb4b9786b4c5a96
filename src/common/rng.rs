//! Seeds and shuffling that depend only on what they are for.
//!
//! Results must be byte-identical whatever the thread count or the order in
//! which cells run, and must stay so across dependency upgrades. We therefore
//! derive every seed by hashing a cell's identity (never from a shared
//! generator) and use our own small, fully specified generator (SplitMix64)
//! instead of one whose stream a crate update could change.

/// Mixes a 64-bit value into a well-distributed one (the SplitMix64 finaliser).
fn mix(mut z: u64) -> u64 {
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// Builds a seed from an experiment seed and the labelled parts of an
/// identity, such as `["wdbc", "logreg", "repeat 0", "fold 3"]`, so that the
/// same identity always yields the same stream and different identities yield
/// unrelated ones.
pub fn derive_seed(base: u64, parts: &[&str]) -> u64 {
    let mut h = mix(base ^ 0x6a09_e667_f3bc_c908);
    for part in parts {
        // FNV-1a over the bytes, then mixed into the running state; the length
        // is folded in so that ["ab", "c"] and ["a", "bc"] differ.
        let mut f: u64 = 0xcbf2_9ce4_8422_2325;
        for b in part.as_bytes() {
            f ^= u64::from(*b);
            f = f.wrapping_mul(0x0100_0000_01b3);
        }
        h = mix(h ^ f ^ (part.len() as u64).rotate_left(32));
    }
    h
}

/// A SplitMix64 generator: small, fast and with a stream fixed by its
/// published definition.
#[derive(Debug, Clone)]
pub struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    /// Starts a stream; equal seeds give equal streams.
    pub fn new(seed: u64) -> Self {
        Self { state: seed }
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        mix(self.state)
    }

    /// A uniform integer in `0..n` without modulo bias (Lemire's method with
    /// rejection).
    pub fn below(&mut self, n: usize) -> usize {
        assert!(n > 0, "below(0) has no valid output");
        let n = n as u64;
        loop {
            let m = u128::from(self.next_u64()) * u128::from(n);
            let low = m as u64;
            if low >= n.wrapping_neg() % n {
                return (m >> 64) as usize;
            }
        }
    }

    /// A uniform float in `[0, 1)` with 53 random bits.
    pub fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// A standard normal draw (Box–Muller; the second value of each pair
    /// is not kept, so a draw always costs the same two uniforms).
    pub fn normal(&mut self) -> f64 {
        let u = 1.0 - self.unit();
        let v = self.unit();
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }

    /// Shuffles in place with the Fisher–Yates algorithm.
    pub fn shuffle<T>(&mut self, items: &mut [T]) {
        for i in (1..items.len()).rev() {
            let j = self.below(i + 1);
            items.swap(i, j);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splitmix_matches_the_published_reference_stream() {
        // Reference values for seed 1234567 of the published SplitMix64
        // reference code (splitmix64.c, Vigna 2015). The values are recalled
        // from memory and were confirmed by running that code's constants in
        // a short Python port.
        let mut g = SplitMix64::new(1_234_567);
        assert_eq!(g.next_u64(), 6_457_827_717_110_365_317);
        assert_eq!(g.next_u64(), 3_203_168_211_198_807_973);
    }

    #[test]
    fn derived_seeds_depend_on_every_part_and_its_boundaries() {
        let a = derive_seed(7, &["ab", "c"]);
        let b = derive_seed(7, &["a", "bc"]);
        let c = derive_seed(8, &["ab", "c"]);
        assert_ne!(a, b);
        assert_ne!(a, c);
        assert_eq!(a, derive_seed(7, &["ab", "c"]));
    }

    #[test]
    fn below_stays_in_range_and_covers_it() {
        let mut g = SplitMix64::new(3);
        let mut seen = [false; 7];
        for _ in 0..1000 {
            seen[g.below(7)] = true;
        }
        assert!(seen.iter().all(|s| *s));
    }
}
