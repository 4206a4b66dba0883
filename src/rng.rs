//! Seeded random streams derived per task.
//!
//! Every random draw in furrow comes from a stream named by (seed, domain,
//! index): the seed the user chose, a constant naming what the stream is for,
//! and the index of the future, path or block it serves. Streams never depend
//! on which thread runs the task, so a run with 1 thread and with 8 gives the
//! same bits. Mixing uses SplitMix64 (Steele, Lea & Flood, "Fast splittable
//! pseudorandom number generators", OOPSLA 2014); the generator is PCG-64 MCG
//! (O'Neill, "PCG: A family of simple fast space-efficient statistically good
//! algorithms for random number generation", 2014).

use rand::SeedableRng;
use rand_pcg::Pcg64Mcg;

/// The generator every stream uses.
pub type Stream = Pcg64Mcg;

/// Domains keep streams for different purposes apart.
pub mod domain {
    /// Baseline error-process paths.
    pub const BASELINE: u64 = 0x6261_7365;
    /// Site-wide factors of one future.
    pub const SITE: u64 = 0x7369_7465;
    /// Cluster-level draws of one future.
    pub const CLUSTER: u64 = 0x636c_7573;
    /// Keyword-level draws of one future.
    pub const KEYWORD: u64 = 0x6b65_7977;
    /// Demo data generation.
    pub const DEMO: u64 = 0x6465_6d6f;
    /// Anything in tests.
    pub const TEST: u64 = 0x7465_7374;
}

/// One step of SplitMix64: a bijective mix of 64 bits.
pub fn splitmix64(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The stream for task `index` of `domain` under `seed`.
pub fn stream(seed: u64, domain: u64, index: u64) -> Stream {
    let a = splitmix64(seed ^ splitmix64(domain));
    let b = splitmix64(a ^ splitmix64(index.wrapping_add(0x5851_F42D_4C95_7F2D)));
    // Both halves of the 128-bit state depend on the index: a multiplicative
    // congruential generator's low state bits never mix with its high ones,
    // so a low half shared by every stream would correlate the streams.
    let c = splitmix64(b ^ 0x2545_F491_4F6C_DD1D);
    let mut bytes = [0u8; 16];
    bytes[..8].copy_from_slice(&c.to_le_bytes());
    bytes[8..].copy_from_slice(&b.to_le_bytes());
    Pcg64Mcg::from_seed(bytes)
}

/// A stream for a sub-task (for example keyword `k` of future `s`).
pub fn substream(seed: u64, domain: u64, index: u64, sub: u64) -> Stream {
    stream(
        seed,
        domain,
        splitmix64(index) ^ sub.wrapping_mul(0xD6E8_FEB8_6659_FD93),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::RngExt;

    #[test]
    fn same_inputs_same_stream_and_different_indices_differ() {
        let mut s1 = stream(7, domain::SITE, 3);
        let mut s2 = stream(7, domain::SITE, 3);
        let mut s3 = stream(7, domain::SITE, 4);
        let x1: u64 = s1.random();
        let x2: u64 = s2.random();
        let x3: u64 = s3.random();
        assert_eq!(x1, x2);
        assert_ne!(x1, x3);
    }

    #[test]
    fn splitmix_matches_reference_sequence() {
        // The first output of SplitMix64 seeded with 1234567 (Steele, Lea &
        // Flood 2014; in our formulation, splitmix64(1234567)). Value from
        // memory of the public-domain C reference implementation's output,
        // written down before this code first ran.
        assert_eq!(splitmix64(1234567), 6457827717110365317);
    }
}
