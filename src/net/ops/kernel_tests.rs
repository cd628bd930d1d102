//! Unit tests of the element-wise kernels (`relu`, `add_channel_bias`) and
//! of the convolution's weight-only backward. Sources: hand-computed values
//! (written beside each check) and candle's own ops (`Tensor::relu`,
//! `broadcast_add`, differentiated by candle's autograd) as the reference.

use candle_core::{Device, Tensor, Var};

use super::{add_channel_bias, conv2d, reference, relu};

fn tensor(values: &[f32], shape: &[usize]) -> Tensor {
    Tensor::from_slice(values, shape, &Device::Cpu).expect("tensor")
}

fn values(t: &Tensor) -> Vec<f32> {
    t.flatten_all().expect("flatten").to_vec1().expect("f32")
}

fn bits(t: &Tensor) -> Vec<u32> {
    values(t).iter().map(|v| v.to_bits()).collect()
}

/// A fixed, irregular pattern in (−1, 1) (no randomness needed).
fn pattern(len: usize, salt: f32) -> Vec<f32> {
    (0..len)
        .map(|i| ((i as f32 * 0.618 + salt) % 2.0) - 1.0)
        .collect()
}

#[test]
fn relu_matches_candle_bit_for_bit_forward_and_backward() {
    // Includes 0, −0 (the gradient passes there in candle: x ≥ 0) and
    // weights on the output so each cell's gradient differs.
    let x_values = [-2.0f32, -0.0, 0.0, 0.5, -1e-30, 3.0, 1e-30, -7.5];
    let weights = tensor(&[1.0, -2.0, 3.0, -4.0, 5.0, -6.0, 7.0, -8.0], &[2, 4]);
    let ours = Var::from_tensor(&tensor(&x_values, &[2, 4])).expect("var");
    let theirs = Var::from_tensor(&tensor(&x_values, &[2, 4])).expect("var");
    let y_ours = relu(ours.as_tensor()).expect("relu");
    let y_theirs = reference::relu(theirs.as_tensor()).expect("candle relu");
    assert_eq!(bits(&y_ours), bits(&y_theirs));
    // Hand-computed: max(x, 0).
    assert_eq!(values(&y_ours), [0.0, 0.0, 0.0, 0.5, 0.0, 3.0, 1e-30, 0.0]);
    let loss = |y: &Tensor| (y * &weights).expect("mul").sum_all().expect("sum");
    let g_ours = loss(&y_ours).backward().expect("backward");
    let g_theirs = loss(&y_theirs).backward().expect("backward");
    let g_ours = g_ours.get(ours.as_tensor()).expect("gradient");
    let g_theirs = g_theirs.get(theirs.as_tensor()).expect("gradient");
    assert_eq!(bits(g_ours), bits(g_theirs));
    // Hand-computed: weight where x ≥ 0 (−0 ≥ 0 too), else 0.
    assert_eq!(values(g_ours), [0.0, -2.0, 3.0, -4.0, 0.0, -6.0, 7.0, 0.0]);
}

#[test]
fn channel_bias_adds_per_channel_and_sums_its_gradient() {
    // x (2, 2, 1, 2): images [[1, 2], [3, 4]] and [[5, 6], [7, 8]]; bias [10, 20].
    let x = Var::from_tensor(&tensor(
        &[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0],
        &[2, 2, 1, 2],
    ))
    .expect("var");
    let bias = Var::from_tensor(&tensor(&[10.0, 20.0], &[2])).expect("var");
    let y = add_channel_bias(x.as_tensor(), bias.as_tensor()).expect("bias");
    assert_eq!(values(&y), [11.0, 12.0, 23.0, 24.0, 15.0, 16.0, 27.0, 28.0]);
    // Loss Σ w·y with w = 1..8: ∂/∂bias[0] = 1+2+5+6 = 14, ∂/∂bias[1] = 3+4+7+8 = 22,
    // ∂/∂x = w.
    let w = tensor(&[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0], &[2, 2, 1, 2]);
    let grads = (&y * &w)
        .expect("mul")
        .sum_all()
        .expect("sum")
        .backward()
        .expect("backward");
    let grad_bias = grads.get(bias.as_tensor()).expect("bias gradient");
    assert_eq!(values(grad_bias), [14.0, 22.0]);
    let grad_x = grads.get(x.as_tensor()).expect("input gradient");
    assert_eq!(values(grad_x), values(&w));
}

#[test]
fn channel_bias_agrees_with_candle_broadcast_add() {
    let x_values = pattern(3 * 4 * 5 * 6, 0.3);
    let bias_values = pattern(4, 0.7);
    let w = tensor(&pattern(3 * 4 * 5 * 6, 0.1), &[3, 4, 5, 6]);
    let run = |ours: bool| {
        let x = Var::from_tensor(&tensor(&x_values, &[3, 4, 5, 6])).expect("var");
        let bias = Var::from_tensor(&tensor(&bias_values, &[4])).expect("var");
        let y = if ours {
            add_channel_bias(x.as_tensor(), bias.as_tensor())
        } else {
            reference::add_channel_bias(x.as_tensor(), bias.as_tensor())
        }
        .expect("bias");
        let grads = (&y * &w)
            .expect("mul")
            .sum_all()
            .expect("sum")
            .backward()
            .expect("backward");
        let grad_bias = values(grads.get(bias.as_tensor()).expect("bias gradient"));
        let grad_x = values(grads.get(x.as_tensor()).expect("input gradient"));
        (values(&y), grad_bias, grad_x)
    };
    let (ours, theirs) = (run(true), run(false));
    assert_eq!(ours.0, theirs.0, "forward (one addition per cell: exact)");
    assert_eq!(ours.2, theirs.2, "input gradient (passed through: exact)");
    for (a, b) in ours.1.iter().zip(&theirs.1) {
        // 90 terms per channel summed in another order: rounding only.
        assert!((a - b).abs() <= 1e-5, "bias gradient {a} vs {b}");
    }
}

#[test]
fn channel_bias_refuses_a_bias_of_the_wrong_length() {
    let x = tensor(&[0.0; 12], &[1, 3, 2, 2]);
    let error = add_channel_bias(&x, &tensor(&[0.0; 2], &[2])).expect_err("2 ≠ 3 channels");
    assert!(matches!(error, crate::Error::Input(_)));
    assert!(error.to_string().contains("shape (3)"), "{error}");
}

#[test]
fn conv_on_data_gives_the_same_weight_gradient_without_an_input_gradient() {
    // The first convolution of a network reads data (not a variable): its
    // backward skips the input gradient. The weight gradient must not change.
    let x_values = pattern(2 * 3 * 5 * 4, 0.2);
    let w = Var::from_tensor(&tensor(&pattern(4 * 3 * 3 * 3, 0.9), &[4, 3, 3, 3])).expect("var");
    let weight_grad = |x: &Tensor| {
        let y = conv2d(x, w.as_tensor(), 1, 1, 1, 1).expect("conv");
        let grads = y
            .sqr()
            .expect("sqr")
            .sum_all()
            .expect("sum")
            .backward()
            .expect("backward");
        (
            values(grads.get(w.as_tensor()).expect("weight gradient")),
            grads.get(x).is_some(),
        )
    };
    let data = tensor(&x_values, &[2, 3, 5, 4]);
    let tracked = Var::from_tensor(&data).expect("var");
    let (from_data, data_has_grad) = weight_grad(&data);
    let (from_var, var_has_grad) = weight_grad(tracked.as_tensor());
    assert_eq!(from_data, from_var);
    assert!(!data_has_grad && var_has_grad);
}
