//! Seeded random streams: the only source of randomness in networks and training.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// A ChaCha8 generator for `seed`, positioned on its own `stream`.
///
/// Different streams of one seed are independent, so each use (initial
/// weights, the shuffle of epoch 3, the dropout masks of epoch 3, …) gets
/// its own stream and results never depend on the order of draws elsewhere.
/// Candle's own CPU generator cannot be seeded, so it is never used.
pub fn seeded_rng(seed: u64, stream: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(stream);
    rng
}
