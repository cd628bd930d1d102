//! Where the randomness of proposal k comes from: a pure function of (run seed, k).
//!
//! The derivation is fixed so that a resumed run re-derives exactly the
//! proposals and evaluation seeds of an uninterrupted one:
//!
//! * `mix(x)` is the SplitMix64 step (Steele, Lea & Flood, 2014): add
//!   `0x9E3779B97F4A7C15`, then xor-shift and multiply by `0xBF58476D1CE4E5B9`
//!   and `0x94D049BB133111EB`.
//! * `derive(seed, stream, k) = mix(mix(mix(seed) ^ stream) ^ k)`, with one
//!   constant per stream: [`PROPOSAL_STREAM`] and [`EVALUATION_STREAM`].
//! * The proposal generator of index k is ChaCha8 keyed with the 32 bytes of
//!   the little-endian words `d, mix(d), mix(mix(d)), mix(mix(mix(d)))` where
//!   `d = derive(seed, PROPOSAL_STREAM, k)`.
//! * The seed handed to `Evaluator::evaluate` for index k is
//!   `derive(seed, EVALUATION_STREAM, k)`.
//!
//! The two streams are independent, so a strategy drawing more or fewer
//! numbers never shifts the evaluation seeds.

use crate::genome::SeededRng;
use rand::SeedableRng;

/// Stream constant for proposal randomness (ASCII `"propose"`).
pub const PROPOSAL_STREAM: u64 = 0x0070_726f_706f_7365;
/// Stream constant for evaluation seeds (ASCII `"evaluat"`).
pub const EVALUATION_STREAM: u64 = 0x0065_7661_6c75_6174;

/// One SplitMix64 step applied to `x` (a bijective 64-bit mixer).
pub fn mix(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The 64-bit value of `stream` for proposal `index` of a run seeded with `run_seed`.
pub fn derive(run_seed: u64, stream: u64, index: u64) -> u64 {
    mix(mix(mix(run_seed) ^ stream) ^ index)
}

/// The generator a strategy draws from when making proposal `index`.
pub fn proposal_rng(run_seed: u64, index: u64) -> SeededRng {
    let mut word = derive(run_seed, PROPOSAL_STREAM, index);
    let mut key = [0u8; 32];
    for chunk in key.chunks_exact_mut(8) {
        chunk.copy_from_slice(&word.to_le_bytes());
        word = mix(word);
    }
    SeededRng::from_seed(key)
}

/// The seed passed to the evaluator for proposal `index`.
pub fn evaluation_seed(run_seed: u64, index: u64) -> u64 {
    derive(run_seed, EVALUATION_STREAM, index)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::RngCore;

    #[test]
    fn splitmix_matches_the_reference_sequence() {
        // Reference: SplitMix64 seeded with 0 yields 0xE220A8397B1DCDAF first.
        assert_eq!(mix(0), 0xE220_A839_7B1D_CDAF);
    }

    #[test]
    fn streams_and_indices_are_distinct_and_stable() {
        assert_ne!(evaluation_seed(7, 3), evaluation_seed(7, 4));
        assert_ne!(evaluation_seed(7, 3), evaluation_seed(8, 3));
        assert_ne!(derive(7, PROPOSAL_STREAM, 3), evaluation_seed(7, 3));
        let first = proposal_rng(42, 5).next_u64();
        assert_eq!(first, proposal_rng(42, 5).next_u64());
        assert_ne!(first, proposal_rng(42, 6).next_u64());
    }
}
