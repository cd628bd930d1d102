//! Helpers for the op tests: seeded random tensors and a central
//! finite-difference gradient check.

use candle_core::{Device, Tensor, Var};
use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// A seeded random generator for one test.
pub fn rng(seed: u64) -> ChaCha8Rng {
    ChaCha8Rng::seed_from_u64(seed)
}

/// A tensor of `shape` with values drawn from U(−1, 1).
pub fn uniform(rng: &mut ChaCha8Rng, shape: &[usize]) -> Tensor {
    let count = shape.iter().product();
    let values: Vec<f32> = (0..count).map(|_| rng.gen_range(-1.0f32..1.0)).collect();
    Tensor::from_vec(values, shape, &Device::Cpu).expect("tensor")
}

/// A tensor of `shape` holding distinct values 0.1 apart in random order,
/// so a finite-difference step of 0.01 never changes which cell is largest.
pub fn well_separated(rng: &mut ChaCha8Rng, shape: &[usize]) -> Tensor {
    let count: usize = shape.iter().product();
    let mut values: Vec<f32> = (0..count).map(|i| i as f32 * 0.1 - 1.0).collect();
    values.shuffle(rng);
    Tensor::from_vec(values, shape, &Device::Cpu).expect("tensor")
}

/// A trainable copy of `tensor`.
pub fn var(tensor: &Tensor) -> Var {
    Var::from_tensor(tensor).expect("var")
}

/// Row-major f32 values of any tensor.
pub fn values(tensor: &Tensor) -> Vec<f32> {
    tensor
        .flatten_all()
        .and_then(|t| t.to_vec1::<f32>())
        .expect("values")
}

/// Asserts `actual` and `expected` agree within `atol + rtol·|expected|` element-wise.
pub fn assert_close(actual: &[f32], expected: &[f32], atol: f32, rtol: f32, what: &str) {
    assert_eq!(actual.len(), expected.len(), "{what}: lengths differ");
    for (i, (a, e)) in actual.iter().zip(expected).enumerate() {
        let tolerance = atol + rtol * e.abs();
        assert!(
            (a - e).abs() <= tolerance,
            "{what}[{i}]: got {a}, expected {e} (tolerance {tolerance})"
        );
    }
}

/// Finite-difference step. The ops are f32-only, so the reference gradient
/// is (L(v + h) − L(v − h)) / 2h of the op's own f32 forward, with the
/// scalar L = Σ r·y accumulated in f64. Conv and pools are piecewise linear
/// (no truncation error; pool inputs are kept 0.1 apart so no step crosses a
/// kink), batch norm is smooth (truncation ~h²·f'''/6 ≈ 1e-5). f32 rounding of
/// each output (≤ 6e-8 relative, outputs ≤ ~10, ≤ ~600 of them) over 2h gives
/// at most ~1e-4, so the check uses 2e-3 + 1e-2·|g|.
const STEP: f32 = 1e-2;
/// Absolute part of the gradient tolerance (see [`STEP`]).
const GRAD_ATOL: f32 = 2e-3;
/// Relative part of the gradient tolerance (see [`STEP`]).
const GRAD_RTOL: f32 = 1e-2;

/// Checks the autograd gradients of L = Σ r·forward() with respect to every
/// var in `inputs` (r: fixed random weights) against central differences.
/// `forward` must read the vars' current values each time it runs.
pub fn check_gradients(inputs: &[Var], mut forward: impl FnMut() -> Tensor, what: &str) {
    let output = forward();
    let weights = uniform(&mut rng(99), output.dims());
    let loss = output
        .mul(&weights)
        .and_then(|t| t.sum_all())
        .expect("loss");
    let grads = loss.backward().expect("backward");
    let weights = values(&weights);
    let scalar_loss = |forward: &mut dyn FnMut() -> Tensor| -> f64 {
        values(&forward())
            .iter()
            .zip(&weights)
            .map(|(y, r)| f64::from(*y) * f64::from(*r))
            .sum()
    };
    for (index, input) in inputs.iter().enumerate() {
        let analytic = values(grads.get(input.as_tensor()).expect("a gradient"));
        let original = values(input.as_tensor());
        let mut numeric = Vec::with_capacity(original.len());
        for cell in 0..original.len() {
            let mut shifted = original.clone();
            shifted[cell] = original[cell] + STEP;
            set(input, &shifted);
            let up = scalar_loss(&mut forward);
            shifted[cell] = original[cell] - STEP;
            set(input, &shifted);
            let down = scalar_loss(&mut forward);
            numeric.push(((up - down) / (2.0 * f64::from(STEP))) as f32);
        }
        set(input, &original);
        assert_close(
            &analytic,
            &numeric,
            GRAD_ATOL,
            GRAD_RTOL,
            &format!("{what}: gradient of input {index}"),
        );
    }
}

/// Overwrites a var's values, keeping its shape.
fn set(input: &Var, new_values: &[f32]) {
    let tensor = Tensor::from_slice(new_values, input.dims(), &Device::Cpu).expect("tensor");
    input.set(&tensor).expect("set var");
}
