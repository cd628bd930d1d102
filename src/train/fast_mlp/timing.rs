//! Where the time of training steps goes.

use std::time::Duration;

/// Time spent per phase over a number of training steps.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct PhaseTimes {
    /// Forward passes (affine maps, activations, dropout).
    pub forward: Duration,
    /// Loss, its gradient and back-propagation to every parameter.
    pub backward: Duration,
    /// Optimiser updates.
    pub optimizer: Duration,
    /// Steps that reached the optimiser.
    pub steps: u64,
}
