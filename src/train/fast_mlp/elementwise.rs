//! The element-wise parts of a hidden layer, fused into single passes.
//!
//! Activations and their derivatives use the same formulas as candle's ops
//! (so both learners agree): relu passes the gradient where z ≥ 0, tanh
//! uses 1 − a², the sigmoid (1 − s)·s, GELU the tanh approximation and
//! candle's derivative constants.

use crate::genome::Activation;

/// √(2/π), as candle's GELU uses it.
const SQRT_TWO_OVER_PI: f32 = 0.797_884_6;

/// Row-major rows × width buffers of one hidden layer pass.
pub(super) struct HiddenForward<'a> {
    /// In: z = h·W + b. Out: z for relu and GELU, act(z) for tanh and the
    /// sigmoid (what each derivative reads).
    pub(super) pre: &'a mut [f32],
    /// The layer's input h (read for the residual sum).
    pub(super) input: &'a [f32],
    /// Out: the layer's output (act(z) [+ h]) · mask.
    pub(super) output: &'a mut [f32],
    /// Dropout multipliers (0 or 1/(1−p)), or empty for none.
    pub(super) mask: &'a [f32],
}

/// Applies the activation, the residual sum and the dropout mask in one pass.
pub(super) fn hidden_forward(activation: Activation, residual: bool, pass: HiddenForward<'_>) {
    match activation {
        Activation::Relu => hidden_forward_with(pass, residual, false, |z| z.max(0.0)),
        Activation::Tanh => hidden_forward_with(pass, residual, true, f32::tanh),
        Activation::Gelu => hidden_forward_with(pass, residual, false, gelu),
        Activation::Sigmoid => hidden_forward_with(pass, residual, true, sigmoid),
    }
}

#[inline(always)]
fn hidden_forward_with(
    pass: HiddenForward<'_>,
    residual: bool,
    keep_activation: bool,
    f: impl Fn(f32) -> f32,
) {
    let HiddenForward {
        pre,
        input,
        output,
        mask,
    } = pass;
    let n = output.len();
    let (pre, output) = (&mut pre[..n], &mut output[..n]);
    for (pre, out) in pre.iter_mut().zip(output.iter_mut()) {
        let a = f(*pre);
        if keep_activation {
            *pre = a;
        }
        *out = a;
    }
    if residual {
        for (out, &h) in output.iter_mut().zip(&input[..n]) {
            *out += h;
        }
    }
    if !mask.is_empty() {
        for (out, &keep) in output.iter_mut().zip(&mask[..n]) {
            *out *= keep;
        }
    }
}

/// Backward through dropout and the activation: `delta` holds dL/d(output)
/// and becomes dL/da (mask applied); `delta_z` receives dL/dz. `pre` is what
/// the forward pass left there (see [`HiddenForward::pre`]).
pub(super) fn hidden_backward(
    activation: Activation,
    pre: &[f32],
    mask: &[f32],
    delta: &mut [f32],
    delta_z: &mut [f32],
) {
    let n = delta.len();
    let (pre, delta_z) = (&pre[..n], &mut delta_z[..n]);
    if !mask.is_empty() {
        for (d, &keep) in delta.iter_mut().zip(&mask[..n]) {
            *d *= keep;
        }
    }
    let values = pre.iter().zip(delta.iter()).zip(delta_z.iter_mut());
    match activation {
        Activation::Relu => {
            for ((&z, &d), dz) in values {
                *dz = if z >= 0.0 { d } else { 0.0 };
            }
        }
        Activation::Tanh => {
            for ((&a, &d), dz) in values {
                *dz = d * (1.0 - a * a);
            }
        }
        Activation::Sigmoid => {
            for ((&s, &d), dz) in values {
                *dz = d * ((1.0 - s) * s);
            }
        }
        Activation::Gelu => {
            for ((&z, &d), dz) in values {
                *dz = d * gelu_derivative(z);
            }
        }
    }
}

/// Adds each row of the rows × width `values` into `sums` (a bias gradient).
pub(super) fn column_sums(values: &[f32], width: usize, sums: &mut [f32]) {
    sums.fill(0.0);
    for row in values.chunks_exact(width) {
        for (sum, &v) in sums.iter_mut().zip(row) {
            *sum += v;
        }
    }
}

/// Copies `bias` into every row of the rows × width `dst`.
pub(super) fn broadcast_rows(bias: &[f32], dst: &mut [f32]) {
    for row in dst.chunks_exact_mut(bias.len()) {
        row.copy_from_slice(bias);
    }
}

fn gelu(v: f32) -> f32 {
    0.5 * v * (1.0 + f32::tanh(SQRT_TWO_OVER_PI * v * (1.0 + 0.044715 * v * v)))
}

fn gelu_derivative(z: f32) -> f32 {
    let cube = z * z * z;
    let tanh = (0.035_677_4 * cube + 0.797_885 * z).tanh();
    0.5 * tanh + (0.053_516_1 * cube + 0.398_942 * z) * (1.0 - tanh * tanh) + 0.5
}

fn sigmoid(v: f32) -> f32 {
    1.0 / (1.0 + (-v).exp())
}
