//! Which seeded stream each random choice of training draws from.
//!
//! Stream 0 of the seed initialises the weights (see [`crate::net::Mlp::build`]);
//! each epoch has its own shuffle stream and its own dropout stream, so an
//! epoch's randomness depends only on the seed and the epoch number.

/// The stream the row order of `epoch` (1-based) is drawn from.
pub(crate) fn shuffle_stream(epoch: u32) -> u64 {
    (1u64 << 32) | u64::from(epoch)
}

/// The stream the dropout masks of `epoch` (1-based) are drawn from.
pub(crate) fn dropout_stream(epoch: u32) -> u64 {
    (2u64 << 32) | u64::from(epoch)
}
