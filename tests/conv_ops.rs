//! The convolutional op family (`gemmule::net::ops`): gradients against
//! finite differences, forward values against hand-computed numbers, and
//! the fast kernels against the simple reference implementations.

#[path = "conv_ops/support.rs"]
mod support;

use candle_core::{Device, Tensor};
use gemmule::net::ops::{self, kernels, reference, BatchNorm2d};
use support::{assert_close, check_gradients, rng, uniform, values, var, well_separated};

fn tensor(values: &[f32], shape: &[usize]) -> Tensor {
    Tensor::from_slice(values, shape, &Device::Cpu).expect("tensor")
}

/// 0, 1, …, h·w − 1 in a (1, 1, h, w) tensor: x[r][c] = w·r + c.
fn ramp(h: usize, w: usize) -> Tensor {
    let values: Vec<f32> = (0..h * w).map(|v| v as f32).collect();
    tensor(&values, &[1, 1, h, w])
}

// ---------- gradients against central finite differences ----------

/// (stride, padding, dilation, groups, C_in, C_out, kernel size) of each checked convolution.
const CONV_CASES: [(usize, usize, usize, usize, usize, usize, usize); 5] = [
    (1, 1, 1, 1, 3, 4, 3), // 3×3, pad 1, stride 1
    (2, 1, 1, 1, 3, 4, 3), // 3×3, pad 1, stride 2
    (1, 0, 1, 1, 3, 4, 1), // 1×1
    (1, 1, 1, 4, 4, 4, 3), // depthwise 3×3 (groups = C)
    (1, 2, 2, 1, 3, 4, 3), // dilated 3×3 (dilation 2, pad 2)
];

#[test]
fn conv2d_gradients_match_finite_differences() {
    for (case, &(stride, padding, dilation, groups, c_in, c_out, k)) in
        CONV_CASES.iter().enumerate()
    {
        let mut rng = rng(case as u64);
        // 5×4: non-square, odd and even sides (stride 2 leaves one row unused).
        let x = var(&uniform(&mut rng, &[2, c_in, 5, 4]));
        let w = var(&uniform(&mut rng, &[c_out, c_in / groups, k, k]));
        let (xc, wc) = (x.clone(), w.clone());
        check_gradients(
            &[x, w],
            || ops::conv2d(&xc, &wc, stride, padding, dilation, groups).expect("conv2d"),
            &format!("conv2d case {case}"),
        );
    }
}

#[test]
fn pool_gradients_match_finite_differences() {
    for stride in [1, 2] {
        let x = var(&well_separated(&mut rng(10 + stride as u64), &[2, 2, 5, 5]));
        let xc = x.clone();
        check_gradients(
            std::slice::from_ref(&x),
            || ops::max_pool3x3(&xc, stride).expect("max pool"),
            &format!("max pool stride {stride}"),
        );
        check_gradients(
            &[x],
            || ops::avg_pool3x3(&xc, stride).expect("avg pool"),
            &format!("avg pool stride {stride}"),
        );
    }
    let x = var(&uniform(&mut rng(12), &[2, 3, 4, 5]));
    let xc = x.clone();
    check_gradients(
        &[x],
        || ops::global_avg_pool(&xc).expect("global avg pool"),
        "global avg pool",
    );
}

#[test]
fn batch_norm_training_gradients_match_finite_differences() {
    let mut rng = rng(20);
    let x = var(&uniform(&mut rng, &[3, 2, 3, 3]));
    let mut norm = BatchNorm2d::new(2).expect("batch norm");
    let [gamma, beta] = <[_; 2]>::try_from(norm.vars()).expect("two vars");
    gamma.set(&tensor(&[1.5, -0.5], &[2])).expect("gamma");
    beta.set(&tensor(&[0.2, 0.3], &[2])).expect("beta");
    let xc = x.clone();
    check_gradients(
        &[x, gamma, beta],
        || norm.forward(&xc, true).expect("batch norm"),
        "batch norm (train)",
    );
}

// ---------- forward values against hand-computed numbers ----------

#[test]
fn conv2d_forward_matches_hand_computation() {
    // x = [[1,2,3],[4,5,6],[7,8,9]], Laplacian kernel [[0,1,0],[1,-4,1],[0,1,0]], pad 1:
    // out(0,0) = −4·1 + 2 + 4 = 2;  out(0,1) = −4·2 + 1 + 3 + 5 = 1;  out(0,2) = −12 + 2 + 6 = −4
    // out(1,0) = −16 + 1 + 5 + 7 = −3; out(1,1) = −20 + 2 + 4 + 6 + 8 = 0; out(1,2) = −24 + 3 + 5 + 9 = −7
    // out(2,0) = −28 + 4 + 8 = −16; out(2,1) = −32 + 5 + 7 + 9 = −11; out(2,2) = −36 + 6 + 8 = −22
    let x = tensor(&[1., 2., 3., 4., 5., 6., 7., 8., 9.], &[1, 1, 3, 3]);
    let laplacian = tensor(&[0., 1., 0., 1., -4., 1., 0., 1., 0.], &[1, 1, 3, 3]);
    let out = ops::conv2d(&x, &laplacian, 1, 1, 1, 1).expect("conv");
    assert_eq!(out.dims(), [1, 1, 3, 3]);
    assert_close(
        &values(&out),
        &[2., 1., -4., -3., 0., -7., -16., -11., -22.],
        1e-6,
        0.0,
        "laplacian",
    );

    // Cross-correlation, not convolution: kernel [[1,2,0],[0,0,0],[0,0,0]], no pad → 1·1 + 2·2 = 5.
    let corner = tensor(&[1., 2., 0., 0., 0., 0., 0., 0., 0.], &[1, 1, 3, 3]);
    let out = ops::conv2d(&x, &corner, 1, 0, 1, 1).expect("conv");
    assert_close(&values(&out), &[5.], 1e-6, 0.0, "unflipped kernel");

    // All-ones kernel, pad 1, stride 2: windows centred on (0,0), (0,2), (2,0), (2,2):
    // 1+2+4+5 = 12, 2+3+5+6 = 16, 4+5+7+8 = 24, 5+6+8+9 = 28.
    let ones = tensor(&[1.; 9], &[1, 1, 3, 3]);
    let out = ops::conv2d(&x, &ones, 2, 1, 1, 1).expect("conv");
    assert_eq!(out.dims(), [1, 1, 2, 2]);
    assert_close(&values(&out), &[12., 16., 24., 28.], 1e-6, 0.0, "stride 2");

    // Dilation 2, pad 2, kernel with 1 in its four corners on the 5×5 ramp x[r][c] = 5r + c:
    // the taps sit at (i±2, j±2); out(0,0) sees only x[2][2] = 12, out(2,2) sees
    // x[0][0] + x[0][4] + x[4][0] + x[4][4] = 0 + 4 + 20 + 24 = 48.
    let corners = tensor(&[1., 0., 1., 0., 0., 0., 1., 0., 1.], &[1, 1, 3, 3]);
    let out = ops::conv2d(&ramp(5, 5), &corners, 1, 2, 2, 1).expect("conv");
    assert_eq!(out.dims(), [1, 1, 5, 5]);
    let out = values(&out);
    assert_close(&[out[0], out[12]], &[12., 48.], 1e-6, 0.0, "dilated");

    // Depthwise 1×1 (groups = 2) with weights 2 and −1: channel 0 doubles, channel 1 negates.
    let pair = tensor(&[1., 2., 3., 4., 5., 6., 7., 8.], &[1, 2, 2, 2]);
    let out = ops::conv2d(&pair, &tensor(&[2., -1.], &[2, 1, 1, 1]), 1, 0, 1, 2).expect("conv");
    assert_close(
        &values(&out),
        &[2., 4., 6., 8., -5., -6., -7., -8.],
        1e-6,
        0.0,
        "groups",
    );
}

#[test]
fn pools_forward_match_hand_computation() {
    // 4×4 ramp x[r][c] = 4r + c. Max over a padding-1 window centred on (i, j) is the
    // bottom-right in-image cell: 4·min(i+1, 3) + min(j+1, 3).
    let x = ramp(4, 4);
    let max1 = [
        5., 6., 7., 7., 9., 10., 11., 11., 13., 14., 15., 15., 13., 14., 15., 15.,
    ];
    assert_close(
        &values(&ops::max_pool3x3(&x, 1).expect("max")),
        &max1,
        0.0,
        0.0,
        "max s1",
    );
    // Stride 2: centres (0,0), (0,2), (2,0), (2,2) → x[1][1] = 5, x[1][3] = 7, x[3][1] = 13, x[3][3] = 15.
    assert_close(
        &values(&ops::max_pool3x3(&x, 2).expect("max")),
        &[5., 7., 13., 15.],
        0.0,
        0.0,
        "max s2",
    );

    // Average over in-image cells only: the mean of 4r + c over rows R and columns C is
    // 4·mean(R) + mean(C); for centres 0, 1, 2, 3 the in-image means are m = 0.5, 1, 2, 2.5
    // (e.g. centre 0 covers {0, 1}). So out(i, j) = 4·m(i) + m(j); out(0,0) = (0+1+4+5)/4 = 2.5.
    let m = [0.5f32, 1., 2., 2.5];
    let avg1: Vec<f32> = (0..16).map(|cell| 4. * m[cell / 4] + m[cell % 4]).collect();
    assert_close(
        &values(&ops::avg_pool3x3(&x, 1).expect("avg")),
        &avg1,
        1e-6,
        0.0,
        "avg s1",
    );
    // Stride 2: centres 0 and 2 → m = 0.5 and 2 → [[2.5, 4], [8.5, 10]].
    assert_close(
        &values(&ops::avg_pool3x3(&x, 2).expect("avg")),
        &[2.5, 4., 8.5, 10.],
        1e-6,
        0.0,
        "avg s2",
    );

    // Global mean of 0..15 = 7.5, shape (1, 1).
    let global = ops::global_avg_pool(&x).expect("global");
    assert_eq!(global.dims(), [1, 1]);
    assert_close(&values(&global), &[7.5], 1e-6, 0.0, "global");
}

#[test]
fn max_pool_ties_send_the_gradient_to_the_first_cell() {
    // A constant 2×2 plane: each of the four stride-1 windows covers all four cells, and
    // PyTorch's CPU kernel (first maximum in row-major order) picks cell (0, 0) every time,
    // so the gradient of the sum is [4, 0, 0, 0].
    let x = var(&tensor(&[1.0; 4], &[1, 1, 2, 2]));
    let out = ops::max_pool3x3(&x, 1).expect("max pool");
    let grads = out.sum_all().and_then(|l| l.backward()).expect("backward");
    let grad = values(grads.get(x.as_tensor()).expect("gradient"));
    assert_eq!(grad, [4.0, 0.0, 0.0, 0.0]);
}

#[test]
fn batch_norm_statistics_match_hand_computation() {
    // Shape (2, 2, 1, 2). Channel 0 holds {1, 3} and {5, 7}: mean 4, squared deviations
    // 9, 1, 1, 9 → biased variance 20/4 = 5, unbiased 20/3. Channel 1 holds {2, 2} and
    // {2, 6}: mean 3, squared deviations 1, 1, 1, 9 → biased 3, unbiased 12/3 = 4.
    let x = tensor(&[1., 3., 2., 2., 5., 7., 2., 6.], &[2, 2, 1, 2]);
    let mut norm = BatchNorm2d::new(2).expect("batch norm");

    // Training output: (x − mean) / √(biased var + 1e-5). Channel 0: ±3/√5.00001 = ±1.3416394,
    // ±1/√5.00001 = ±0.4472131; channel 1: −1/√3.00001 = −0.5773493, 3/√3.00001 = 1.7320480.
    let out = norm.forward(&x, true).expect("train");
    let (a, b, c, d) = (1.341_639_4, 0.447_213_1, 0.577_349_3, 1.732_048);
    assert_close(
        &values(&out),
        &[-a, -b, -c, -c, b, a, -c, d],
        1e-5,
        0.0,
        "train output",
    );

    // One step: running = 0.9·(0, 1) + 0.1·(mean, unbiased var):
    // mean (0.4, 0.3), var (0.9 + 0.1·20/3, 0.9 + 0.1·4) = (1.5666667, 1.3).
    let (mean, var) = norm.running_stats();
    assert_close(
        &values(&mean),
        &[0.4, 0.3],
        1e-6,
        0.0,
        "running mean after 1 step",
    );
    assert_close(
        &values(&var),
        &[1.566_666_7, 1.3],
        1e-6,
        0.0,
        "running var after 1 step",
    );

    // After many passes over the same batch the running statistics equal the batch's
    // (the initial values decay as 0.9^k; 0.9^300 ≈ 2e-14).
    for _ in 0..300 {
        norm.forward(&x, true).expect("train");
    }
    let (mean, var) = norm.running_stats();
    assert_close(
        &values(&mean),
        &[4., 3.],
        1e-5,
        0.0,
        "running mean converged",
    );
    assert_close(
        &values(&var),
        &[20. / 3., 4.],
        1e-5,
        0.0,
        "running var converged",
    );

    // Eval mode uses them, with gamma (2, 1) and beta (0.5, −1):
    // channel 0: 2·(x − 4)/√(20/3 + 1e-5) + 0.5 with √(20/3 + 1e-5) = 2.5819908 →
    //   x = 1: −6/2.5819908 + 0.5 = −1.8237883, x = 3: −2/2.5819908 + 0.5 = −0.2745961,
    //   x = 5: 1.2745961, x = 7: 2.8237883;
    // channel 1: (x − 3)/√4.00001 − 1 → x = 2: −1.4999994, x = 6: 0.4999981.
    let [gamma, beta] = <[_; 2]>::try_from(norm.vars()).expect("two vars");
    gamma.set(&tensor(&[2., 1.], &[2])).expect("gamma");
    beta.set(&tensor(&[0.5, -1.], &[2])).expect("beta");
    let out = norm.forward(&x, false).expect("eval");
    let expected = [
        -1.823_788_3,
        -0.274_596_1,
        -1.499_999_4,
        -1.499_999_4,
        1.274_596_1,
        2.823_788_3,
        -1.499_999_4,
        0.499_998_1,
    ];
    assert_close(&values(&out), &expected, 1e-5, 0.0, "eval output");
    let (mean_after, _) = norm.running_stats();
    assert_close(
        &values(&mean_after),
        &[4., 3.],
        1e-5,
        0.0,
        "eval leaves running stats",
    );
}

// ---------- fast kernels against the reference implementations ----------

/// Forward outputs and input gradients (of Σ r·y) of `op` at the given inputs.
fn outputs_and_grads(inputs: &[Tensor], op: &dyn Fn(&[Tensor]) -> Tensor) -> Vec<Vec<f32>> {
    let vars: Vec<_> = inputs.iter().map(var).collect();
    let tensors: Vec<Tensor> = vars.iter().map(|v| v.as_tensor().clone()).collect();
    let out = op(&tensors);
    let weights = uniform(&mut rng(7), out.dims());
    let grads = out
        .mul(&weights)
        .and_then(|t| t.sum_all())
        .and_then(|l| l.backward())
        .expect("backward");
    let mut result = vec![values(&out)];
    result.extend(
        vars.iter()
            .map(|v| values(grads.get(v.as_tensor()).expect("gradient"))),
    );
    result
}

fn assert_same(
    inputs: &[Tensor],
    fast: &dyn Fn(&[Tensor]) -> Tensor,
    slow: &dyn Fn(&[Tensor]) -> Tensor,
    what: &str,
) {
    let fast = outputs_and_grads(inputs, fast);
    let slow = outputs_and_grads(inputs, slow);
    for (index, (f, s)) in fast.iter().zip(&slow).enumerate() {
        assert_close(
            f,
            s,
            1e-4,
            1e-5,
            &format!("{what}: output/gradient {index}"),
        );
    }
}

/// A convolution entry point with `ops::conv2d`'s signature.
type ConvFn = fn(&Tensor, &Tensor, usize, usize, usize, usize) -> gemmule::Result<Tensor>;

/// The dispatching `ops::conv2d` and every kernel that handles a convolution
/// with these groups and channel counts.
fn conv_kernels(groups: usize, c_in: usize, c_out: usize) -> Vec<(&'static str, ConvFn)> {
    let depthwise = groups > 1 && groups == c_in && groups == c_out;
    let mut found: Vec<(&'static str, ConvFn)> = vec![
        ("ops::conv2d", ops::conv2d),
        ("im2col", kernels::conv2d_im2col),
    ];
    if depthwise {
        found.push(("depthwise direct", kernels::depthwise_direct));
    }
    found
}

#[test]
fn fast_conv2d_matches_reference() {
    let extra = [
        (2, 1, 1, 8, 8, 8, 3), // depthwise, stride 2
        (1, 1, 1, 2, 4, 6, 3), // 2 groups of 2 → 3 channels
        (2, 0, 1, 1, 5, 3, 1), // 1×1, stride 2
        (1, 2, 1, 1, 3, 4, 5), // 5×5, pad 2
        (1, 2, 1, 4, 4, 4, 5), // depthwise 5×5
        (1, 2, 2, 4, 4, 4, 3), // depthwise dilated
    ];
    for (case, &(stride, padding, dilation, groups, c_in, c_out, k)) in
        CONV_CASES.iter().chain(&extra).enumerate()
    {
        // Square inputs only: candle 0.11.1's own conv2d backward (the reference) fails on
        // stride 2 with H and W of different parity (it derives the output padding of
        // both axes from H); the fast kernels' non-square gradients are checked above.
        for (h, w) in [(8, 8), (7, 7)] {
            let mut rng = rng(100 + case as u64);
            let inputs = [
                uniform(&mut rng, &[3, c_in, h, w]),
                uniform(&mut rng, &[c_out, c_in / groups, k, k]),
            ];
            let reference = |t: &[Tensor]| {
                reference::conv2d(&t[0], &t[1], stride, padding, dilation, groups)
                    .expect("reference")
            };
            for (name, kernel) in conv_kernels(groups, c_in, c_out) {
                assert_same(
                    &inputs,
                    &|t| kernel(&t[0], &t[1], stride, padding, dilation, groups).expect(name),
                    &reference,
                    &format!("{name}, conv2d case {case} on {h}×{w}"),
                );
            }
        }
    }
}

#[test]
fn fast_pools_match_reference() {
    for (h, w) in [(8, 8), (7, 6), (1, 1)] {
        for stride in [1, 2] {
            let inputs = [uniform(&mut rng(200 + h as u64), &[3, 4, h, w])];
            assert_same(
                &inputs,
                &|t| ops::max_pool3x3(&t[0], stride).expect("fast"),
                &|t| reference::max_pool3x3(&t[0], stride).expect("reference"),
                &format!("max pool stride {stride} on {h}×{w}"),
            );
            assert_same(
                &inputs,
                &|t| ops::avg_pool3x3(&t[0], stride).expect("fast"),
                &|t| reference::avg_pool3x3(&t[0], stride).expect("reference"),
                &format!("avg pool stride {stride} on {h}×{w}"),
            );
        }
        let inputs = [uniform(&mut rng(300), &[3, 4, h, w])];
        assert_same(
            &inputs,
            &|t| ops::global_avg_pool(&t[0]).expect("fast"),
            &|t| reference::global_avg_pool(&t[0]).expect("reference"),
            &format!("global avg pool on {h}×{w}"),
        );
    }
}

#[test]
fn bad_arguments_are_input_errors() {
    let x = uniform(&mut rng(1), &[1, 4, 5, 5]);
    let w = uniform(&mut rng(2), &[4, 2, 3, 3]);
    assert!(ops::conv2d(&x, &w, 1, 1, 1, 1).is_err(), "channel mismatch");
    assert!(
        ops::conv2d(&x, &w, 1, 1, 1, 3).is_err(),
        "groups not dividing"
    );
    assert!(ops::conv2d(&x, &w, 0, 1, 1, 2).is_err(), "stride 0");
    assert!(
        ops::conv2d(&x, &uniform(&mut rng(3), &[4, 2, 9, 9]), 1, 1, 1, 2).is_err(),
        "kernel too big"
    );
    assert!(
        ops::max_pool3x3(&uniform(&mut rng(4), &[4, 5]), 1).is_err(),
        "rank 2"
    );
    assert!(ops::avg_pool3x3(&x, 0).is_err(), "stride 0");
    let mut norm = BatchNorm2d::new(3).expect("batch norm");
    assert!(norm.forward(&x, true).is_err(), "channel count");
    let mut norm = BatchNorm2d::new(4).expect("batch norm");
    assert!(
        norm.forward(&uniform(&mut rng(5), &[1, 4, 1, 1]), true)
            .is_err(),
        "one value per channel"
    );
    assert!(
        norm.set_running_stats(x.clone(), x).is_err(),
        "running stats shape"
    );
}

/// Output and gradients (x, gamma, beta) of Σ r·y for `BatchNorm2d` and for
/// `reference::batch_norm`, at the same values, in training or eval mode.
fn batch_norm_both(train: bool) -> (Vec<Vec<f32>>, Vec<Vec<f32>>) {
    let mut rng = rng(400);
    let (x, gamma, beta) = (
        uniform(&mut rng, &[4, 3, 5, 6]),
        uniform(&mut rng, &[3]),
        uniform(&mut rng, &[3]),
    );
    let running_mean = uniform(&mut rng, &[3]);
    let running_var = (uniform(&mut rng, &[3]).abs().expect("abs") + 0.5).expect("var");
    let weights = uniform(&mut rng, &[4, 3, 5, 6]);
    let mut norm = BatchNorm2d::new(3).expect("batch norm");
    norm.set_running_stats(running_mean.clone(), running_var.clone())
        .expect("running stats");
    let [fast_gamma, fast_beta] = <[_; 2]>::try_from(norm.vars()).expect("two vars");
    fast_gamma.set(&gamma).expect("gamma");
    fast_beta.set(&beta).expect("beta");
    let fast_x = var(&x);
    let fast_out = norm.forward(&fast_x, train).expect("fast");
    let (slow_x, slow_gamma, slow_beta) = (var(&x), var(&gamma), var(&beta));
    let running = (!train).then_some((&running_mean, &running_var));
    let slow_out = reference::batch_norm(&slow_x, &slow_gamma, &slow_beta, running).expect("slow");
    let collect = |out: &Tensor, vars: [&candle_core::Var; 3]| {
        let grads = out
            .mul(&weights)
            .and_then(|t| t.sum_all())
            .and_then(|l| l.backward())
            .expect("backward");
        let mut result = vec![values(out)];
        result.extend(vars.map(|v| values(grads.get(v.as_tensor()).expect("gradient"))));
        result
    };
    (
        collect(&fast_out, [&fast_x, &fast_gamma, &fast_beta]),
        collect(&slow_out, [&slow_x, &slow_gamma, &slow_beta]),
    )
}

#[test]
fn fast_batch_norm_matches_reference() {
    for train in [true, false] {
        let (fast, slow) = batch_norm_both(train);
        for (index, (f, s)) in fast.iter().zip(&slow).enumerate() {
            let what = format!("batch norm (train {train}): output/gradient {index}");
            assert_close(f, s, 1e-4, 1e-5, &what);
        }
    }
}
