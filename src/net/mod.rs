//! Turning genomes into candle networks, and counting their size.
//!
//! [`layer_cost`] sizes a candidate from its genome alone (no tensors are
//! built); [`Mlp`] is the built network the trainer updates.

mod activation;
mod cost;
mod dense;
mod init;
mod mlp;
mod mlp_from_values;
mod param_spec;
mod seeded;

pub use cost::{layer_cost, Cost};
pub use mlp::Mlp;
pub use param_spec::{parameter_specs, ParameterSpec};
pub use seeded::seeded_rng;
