//! Checks the network, gradients and Adam against numbers computed outside gemmule.
//!
//! Source of every reference value: `tests/fixtures/mlp_fixture.json` (NumPy, float64,
//! hand-derived backprop verified by finite differences; see `tests/fixtures/README.md`),
//! except the x² Adam sequence, quoted from the shared fixtures README, and the
//! class-weighted loss, printed by `tests/reference/weighted_loss_reference.py`.

use candle_core::{Device, Tensor};
use gemmule::genome::{Activation, LayerGene, LayerGenome, Optimizer, TrainGenes};
use gemmule::net::{parameter_specs, seeded_rng, Mlp};
use gemmule::train::{
    adam_step, compute_gradients, compute_weighted_gradients, AdamSettings, FastMlpLearner,
    Learner, OptimizerState,
};
use serde_json::Value;

/// Fixture key → gemmule parameter name, in parameter order.
const PARAMETERS: [(&str, &str); 4] = [
    ("W1", "layers.0.weight"),
    ("b1", "layers.0.bias"),
    ("W2", "output.weight"),
    ("b2", "output.bias"),
];

fn fixture() -> Value {
    let text = include_str!("fixtures/mlp_fixture.json");
    serde_json::from_str(text).expect("the fixture is valid JSON")
}

/// Nested JSON arrays of numbers, flattened row-major.
fn flat(value: &Value) -> Vec<f64> {
    match value {
        Value::Array(items) => items.iter().flat_map(flat).collect(),
        Value::Number(n) => vec![n.as_f64().expect("a finite number")],
        other => panic!("not a number array: {other}"),
    }
}

/// The fixture's four parameter tensors under `key` (e.g. "params_0"), in parameter order.
fn parameter_values(fixture: &Value, key: &str) -> Vec<Vec<f64>> {
    PARAMETERS
        .iter()
        .map(|(k, _)| flat(&fixture[key][k]))
        .collect()
}

fn assert_close(what: &str, got: &[f32], want: &[f64], relative: f64, absolute: f64) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    for (i, (&g, &w)) in got.iter().zip(want).enumerate() {
        let error = (f64::from(g) - w).abs();
        assert!(
            error <= absolute + relative * w.abs(),
            "{what}[{i}]: got {g}, want {w} (error {error:e})"
        );
    }
}

/// The fixture's 4-3-2 network: one relu hidden layer of 3 units; Adam, lr 0.01 (fixture "adam").
fn genome() -> LayerGenome {
    LayerGenome {
        layers: vec![LayerGene {
            width: 3,
            activation: Activation::Relu,
            residual: false,
            dropout: 0.0,
        }],
        training: TrainGenes {
            learning_rate: 0.01,
            batch_size: 3,
            weight_decay: 0.0,
            optimizer: Optimizer::Adam,
        },
    }
}

fn batch(fixture: &Value) -> (Tensor, Tensor) {
    let x: Vec<f32> = flat(&fixture["inputs"]).iter().map(|&v| v as f32).collect();
    let y: Vec<u32> = flat(&fixture["labels"]).iter().map(|&v| v as u32).collect();
    let x = Tensor::from_vec(x, (3, 4), &Device::Cpu).unwrap();
    let y = Tensor::from_vec(y, 3, &Device::Cpu).unwrap();
    (x, y)
}

fn mlp_from_fixture(fixture: &Value) -> Mlp {
    let weights: Vec<Vec<f32>> = parameter_values(fixture, "params_0")
        .into_iter()
        .map(|values| values.into_iter().map(|v| v as f32).collect())
        .collect();
    Mlp::from_weights(&genome(), 4, 2, &weights).unwrap()
}

/// Checks logits, loss and every gradient at the current weights against fixture step `step`
/// (forward_{step}, grads_{step}), returning the gradients for the next Adam step.
fn check_forward_and_gradients(fixture: &Value, mlp: &Mlp, step: usize) -> Vec<Tensor> {
    let (x, y) = batch(fixture);
    let logits = mlp
        .forward_eval(&x)
        .unwrap()
        .flatten_all()
        .unwrap()
        .to_vec1::<f32>()
        .unwrap();
    // Source: mlp_fixture.json forward_{step}.logits (NumPy float64).
    let want_logits = flat(&fixture[format!("forward_{step}")]["logits"]);
    assert_close(
        &format!("forward_{step}.logits"),
        &logits,
        &want_logits,
        1e-5,
        1e-5,
    );

    let gradients = compute_gradients(mlp, &x, &y, &mut seeded_rng(0, 0)).unwrap();
    // Source: mlp_fixture.json forward_{step}.mean_loss.
    let want_loss = fixture[format!("forward_{step}")]["mean_loss"]
        .as_f64()
        .unwrap();
    assert_close(
        &format!("forward_{step}.mean_loss"),
        &[gradients.loss],
        &[want_loss],
        1e-5,
        1e-6,
    );

    // Source: mlp_fixture.json grads_{step}.{W1,b1,W2,b2} (checked there by finite differences).
    let got = gradients.to_vecs().unwrap();
    for ((key, name), got) in PARAMETERS.iter().zip(&got) {
        let want = flat(&fixture[format!("grads_{step}")][key]);
        assert_close(
            &format!("grads_{step}.{key} ({name})"),
            got,
            &want,
            1e-5,
            1e-6,
        );
    }
    gradients.tensors
}

/// Checks parameters and Adam moments after Adam step `step` against the fixture
/// (params_{step}, adam_m_{step}, adam_v_{step}).
fn check_after_adam_step(fixture: &Value, mlp: &Mlp, optimizer: &OptimizerState, step: usize) {
    let weights = mlp.weights().unwrap();
    for (index, ((key, name), got)) in PARAMETERS.iter().zip(&weights).enumerate() {
        // Source: mlp_fixture.json params_{step}.
        let want = flat(&fixture[format!("params_{step}")][key]);
        assert_close(
            &format!("params_{step}.{key} ({name})"),
            got,
            &want,
            1e-6,
            1e-6,
        );
        let (m, v) = optimizer.adam_moments(index).unwrap();
        // Source: mlp_fixture.json adam_m_{step} and adam_v_{step}.
        let want_m = flat(&fixture[format!("adam_m_{step}")][key]);
        assert_close(&format!("adam_m_{step}.{key}"), m, &want_m, 1e-5, 1e-8);
        let want_v = flat(&fixture[format!("adam_v_{step}")][key]);
        assert_close(&format!("adam_v_{step}.{key}"), v, &want_v, 1e-5, 1e-12);
    }
}

#[test]
fn fixture_parameter_names_match_gemmule_layout() {
    let names: Vec<String> = parameter_specs(&genome(), 4, 2)
        .into_iter()
        .map(|s| s.name)
        .collect();
    let expected: Vec<&str> = PARAMETERS.iter().map(|(_, name)| *name).collect();
    assert_eq!(names, expected);
    // Source: mlp_fixture.json description — W1 has shape (4, 3), W2 (3, 2): (in, out) like ours.
    let shapes: Vec<Vec<usize>> = parameter_specs(&genome(), 4, 2)
        .into_iter()
        .map(|s| s.shape)
        .collect();
    assert_eq!(shapes, vec![vec![4, 3], vec![3], vec![3, 2], vec![2]]);
}

#[test]
fn logits_loss_gradients_and_two_adam_steps_match_numpy_reference() {
    let fixture = fixture();
    let mlp = mlp_from_fixture(&fixture);
    let mut optimizer = OptimizerState::new(&genome().training, &parameter_specs(&genome(), 4, 2));

    let gradients = check_forward_and_gradients(&fixture, &mlp, 0);
    optimizer.step(&mlp.parameters(), &gradients).unwrap();
    check_after_adam_step(&fixture, &mlp, &optimizer, 1);

    let gradients = check_forward_and_gradients(&fixture, &mlp, 1);
    optimizer.step(&mlp.parameters(), &gradients).unwrap();
    check_after_adam_step(&fixture, &mlp, &optimizer, 2);

    // Source: mlp_fixture.json forward_2 (logits and loss at the step-2 parameters).
    let (x, _) = batch(&fixture);
    let logits = mlp
        .forward_eval(&x)
        .unwrap()
        .flatten_all()
        .unwrap()
        .to_vec1::<f32>()
        .unwrap();
    assert_close(
        "forward_2.logits",
        &logits,
        &flat(&fixture["forward_2"]["logits"]),
        1e-5,
        1e-5,
    );
}

/// The fixture's weights as f32 tensors in parameter order.
fn fixture_weights(fixture: &Value, key: &str) -> Vec<Vec<f32>> {
    parameter_values(fixture, key)
        .into_iter()
        .map(|values| values.into_iter().map(|v| v as f32).collect())
        .collect()
}

#[test]
fn fast_learner_matches_numpy_reference_over_two_adam_steps() {
    let fixture = fixture();
    let weights = fixture_weights(&fixture, "params_0");
    let mut learner = FastMlpLearner::new(&genome(), 4, 2, &weights).unwrap();
    let x: Vec<f32> = flat(&fixture["inputs"]).iter().map(|&v| v as f32).collect();
    let y: Vec<u32> = flat(&fixture["labels"]).iter().map(|&v| v as u32).collect();
    for step in 0..2 {
        // Source: mlp_fixture.json forward_{step}.logits and .mean_loss (NumPy float64).
        let logits = learner.logits(&x, 3).unwrap();
        let forward = &fixture[format!("forward_{step}")];
        assert_close("logits", &logits, &flat(&forward["logits"]), 1e-5, 1e-5);
        let (loss, gradients) = learner.gradients(&x, &y, 3, &mut seeded_rng(0, 0)).unwrap();
        let want_loss = forward["mean_loss"].as_f64().unwrap();
        assert_close("mean_loss", &[loss], &[want_loss], 1e-5, 1e-6);
        // Source: mlp_fixture.json grads_{step} (checked there by finite differences).
        for ((key, _), got) in PARAMETERS.iter().zip(&gradients) {
            let want = flat(&fixture[format!("grads_{step}")][key]);
            assert_close(&format!("grads_{step}.{key}"), got, &want, 1e-5, 1e-6);
        }
        let stepped = learner
            .train_step(&x, &y, 3, &mut seeded_rng(0, 0))
            .unwrap();
        assert_eq!(stepped, loss);
        // Source: mlp_fixture.json params_{step+1}, adam_m_{step+1}, adam_v_{step+1}.
        let after = step + 1;
        let params = learner.snapshot().unwrap().into_tensors();
        for (index, ((key, _), got)) in PARAMETERS.iter().zip(&params).enumerate() {
            let want = flat(&fixture[format!("params_{after}")][key]);
            assert_close(&format!("params_{after}.{key}"), got, &want, 1e-6, 1e-6);
            let (m, v) = learner.optimizer().adam_moments(index).unwrap();
            let want_m = flat(&fixture[format!("adam_m_{after}")][key]);
            assert_close(&format!("adam_m_{after}.{key}"), m, &want_m, 1e-5, 1e-8);
            let want_v = flat(&fixture[format!("adam_v_{after}")][key]);
            assert_close(&format!("adam_v_{after}.{key}"), v, &want_v, 1e-5, 1e-12);
        }
    }
    // Source: mlp_fixture.json forward_2.logits (at the step-2 parameters).
    let logits = learner.logits(&x, 3).unwrap();
    let want = flat(&fixture["forward_2"]["logits"]);
    assert_close("forward_2.logits", &logits, &want, 1e-5, 1e-5);
}

/// Source: `python3 tests/reference/weighted_loss_reference.py` (NumPy 2.4.6, float64,
/// hand-derived backprop checked against central finite differences to 5.4e-11): the
/// class-weighted mean cross-entropy Σ w_{y_i}·CE_i / Σ w_{y_i} of the fixture's network
/// ("params_0") on its three rows (labels 0, 1, 0) with class weights [0.6, 1.7], and its
/// gradients in the fixture's layout.
const WEIGHTED_LOSS: f64 = 0.17818860523204982;
const WEIGHTED_GRADIENTS: [(&str, &[f64]); 4] = [
    (
        "W1",
        &[
            -0.03456560681585435,
            0.03187256152468561,
            -0.027648909993710884,
            -0.0691312136317087,
            -0.06374512304937122,
            0.05529781998742177,
            0.03456560681585435,
            -0.12749024609874243,
            0.018465965779230716,
            -0.017282803407927174,
            0.09561768457405682,
            -0.09610811200907735,
        ],
    ),
    (
        "b1",
        &[
            -0.03456560681585435,
            -0.06374512304937122,
            0.002652291875643014,
        ],
    ),
    (
        "W2",
        &[
            -0.08888298895505406,
            0.08888298895505403,
            0.13618276287820225,
            -0.13618276287820213,
            -0.06866438479276855,
            0.06866438479276858,
        ],
    ),
    ("b2", &[-0.044074854557077346, 0.044074854557077374]),
];

#[test]
fn weighted_loss_and_gradients_match_numpy_reference() {
    let fixture = fixture();
    let class_weights = [0.6f32, 1.7];
    let weights = fixture_weights(&fixture, "params_0");
    let x: Vec<f32> = flat(&fixture["inputs"]).iter().map(|&v| v as f32).collect();
    let y: Vec<u32> = flat(&fixture["labels"]).iter().map(|&v| v as u32).collect();

    // The fast learner, weighted through the Learner seam.
    let mut learner = FastMlpLearner::new(&genome(), 4, 2, &weights).unwrap();
    learner.set_class_weights(Some(&class_weights)).unwrap();
    let (loss, gradients) = learner.gradients(&x, &y, 3, &mut seeded_rng(0, 0)).unwrap();
    assert_close("fast weighted loss", &[loss], &[WEIGHTED_LOSS], 1e-5, 1e-6);
    for ((key, want), got) in WEIGHTED_GRADIENTS.iter().zip(&gradients) {
        assert_close(&format!("fast weighted {key}"), got, want, 1e-5, 1e-6);
    }

    // The candle autograd path.
    let mlp = mlp_from_fixture(&fixture);
    let (xt, yt) = batch(&fixture);
    let reference =
        compute_weighted_gradients(&mlp, &xt, &yt, &class_weights, &mut seeded_rng(0, 0)).unwrap();
    assert_close(
        "autograd weighted loss",
        &[reference.loss],
        &[WEIGHTED_LOSS],
        1e-5,
        1e-6,
    );
    for ((key, want), got) in WEIGHTED_GRADIENTS.iter().zip(reference.to_vecs().unwrap()) {
        assert_close(&format!("autograd weighted {key}"), &got, want, 1e-5, 1e-6);
    }

    // Back to unweighted: the fixture's plain mean again (mlp_fixture.json forward_0.mean_loss).
    learner.set_class_weights(None).unwrap();
    let (loss, _) = learner.gradients(&x, &y, 3, &mut seeded_rng(0, 0)).unwrap();
    let plain = fixture["forward_0"]["mean_loss"].as_f64().unwrap();
    assert_close("unweighted loss", &[loss], &[plain], 1e-5, 1e-6);

    // Weights must be one finite positive number per class.
    for bad in [&[1.0f32][..], &[1.0, 0.0], &[1.0, f32::NAN], &[1.0, -2.0]] {
        let error = learner.set_class_weights(Some(bad)).unwrap_err();
        assert!(matches!(error, gemmule::Error::Input(_)), "{error:?}");
    }
}

#[test]
fn fixture_adam_settings_are_the_defaults() {
    // Source: mlp_fixture.json "adam": lr 0.01, beta1 0.9, beta2 0.999, eps 1e-8.
    let fixture = fixture();
    let adam = AdamSettings::with_learning_rate(0.01);
    assert_eq!(adam.learning_rate, fixture["adam"]["lr"].as_f64().unwrap());
    assert_eq!(adam.beta1, fixture["adam"]["beta1"].as_f64().unwrap());
    assert_eq!(adam.beta2, fixture["adam"]["beta2"].as_f64().unwrap());
    assert_eq!(adam.epsilon, fixture["adam"]["eps"].as_f64().unwrap());
}

#[test]
fn adam_on_x_squared_matches_float64_reference() {
    // Source: ../shared/fixtures/README.md (copied into tests/fixtures/README.md):
    // Adam on f(x) = x², x0 = 1, α 1e-3, β1 0.9, β2 0.999, ε 1e-8, computed in float64.
    let reference = [0.999000000005, 0.998000026214, 0.997000096065];
    let settings = AdamSettings::with_learning_rate(1e-3);
    let (mut x, mut m, mut v) = ([1.0f32], [0.0f32], [0.0f32]);
    for (step, want) in (1..=3).zip(reference) {
        let gradient = [2.0 * x[0]];
        adam_step(&mut x, &gradient, &mut m, &mut v, step, &settings, 0.0).unwrap();
        assert!(
            (f64::from(x[0]) - want).abs() <= 1e-6,
            "step {step}: got {}, want {want}",
            x[0]
        );
    }
}
