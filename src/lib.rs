//! gemmule: neural architecture search on the CPU.
//!
//! The modules follow the data flow of a search:
//! [`data`] (load, split with a sealed test part, preprocess) →
//! [`genome`] (encodings and search spaces) → [`net`] (genome to network) →
//! [`train`] (the CPU trainer and its scores).

#![warn(missing_docs)]

pub mod bundle;
pub mod cli;
pub mod data;
pub mod demo;
pub mod error;
pub mod evaluate;
pub mod fsio;
pub mod genome;
pub mod ledger;
pub mod metrics;
pub mod model;
pub mod net;
pub mod render;
pub mod report;
pub mod search;
pub mod stats;
pub mod train;
pub mod workflow;

pub use error::{Error, Result};
