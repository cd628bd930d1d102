//! `gemmule::metrics` against numbers computed outside gemmule.
//!
//! Sources:
//! - `tests/fixtures/metrics_fixture.json`: made by `tests/reference/make_metrics_fixture.py`
//!   (a copy of `shared/fixtures/make_metrics_fixture.py`) with NumPy 2.4.6, SciPy 1.17.1 and
//!   scikit-learn 1.9.1; every value's library call is named in the file's `source` block
//!   (provenance in `tests/fixtures/README.md`).
//! - The McNemar p-values for large counts and the fold counts of labels in a shuffled class
//!   order: printed by `tests/reference/metrics_extra_reference.py` (same versions), pasted
//!   beside the checks below.
//! - The one-standard-error tables and the standard-error example are worked by hand from
//!   the rule's statement (worked examples, no outside source).
//!
//! Relative tolerance 1e-9 for the fixture's floating-point scores: both sides compute in f64
//! from the same f64 inputs, only the order of summation differs (scikit-learn sums with
//! NumPy's pairwise summation and computes the AUC from trapezoids; gemmule sums in order and
//! counts pairs exactly), which moves results by a few ulps (~1e-15), far inside 1e-9.

use std::collections::BTreeMap;

use gemmule::metrics::{
    balanced_class_weights, mcnemar_exact_p_value, mean_and_standard_error,
    one_standard_error_pick, plain_pick, stratified_folds, ClassReport, PickCandidate,
};
use gemmule::Error;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde_json::Value;

fn fixture() -> Value {
    serde_json::from_str(include_str!("fixtures/metrics_fixture.json"))
        .expect("the fixture is valid JSON")
}

fn numbers(value: &Value) -> Vec<f64> {
    value
        .as_array()
        .expect("an array")
        .iter()
        .map(|v| v.as_f64().expect("a number"))
        .collect()
}

fn integers(value: &Value) -> Vec<u64> {
    value
        .as_array()
        .expect("an array")
        .iter()
        .map(|v| v.as_u64().expect("an integer"))
        .collect()
}

fn assert_relative(what: &str, got: f64, want: f64, relative: f64) {
    let error = (got - want).abs();
    assert!(
        error <= relative * want.abs() || error <= 1e-300,
        "{what}: got {got}, want {want} (error {error:e})"
    );
}

/// The labels and row-major probabilities of a fixture case.
fn case_inputs(case: &Value) -> (Vec<u32>, Vec<f64>, usize) {
    let labels: Vec<u32> = integers(&case["y_true"])
        .iter()
        .map(|&v| v as u32)
        .collect();
    let rows = case["probabilities"].as_array().expect("rows");
    let n_classes = rows[0].as_array().expect("a row").len();
    let probabilities = rows.iter().flat_map(numbers).collect();
    (labels, probabilities, n_classes)
}

/// Checks every field of `report` against a fixture case (source: metrics_fixture.json,
/// scikit-learn 1.9.1; the function behind each key is named in its `source` block).
fn check_case(what: &str, report: &ClassReport, case: &Value, auc_key: &str, relative: f64) {
    let want_matrix: Vec<Vec<u64>> = case["confusion_matrix"]
        .as_array()
        .expect("rows")
        .iter()
        .map(integers)
        .collect();
    assert_eq!(
        report.confusion_matrix, want_matrix,
        "{what}: confusion matrix"
    );
    let per_class = &case["per_class"];
    for (key, got) in [
        (
            "precision",
            report
                .per_class
                .iter()
                .map(|c| c.precision)
                .collect::<Vec<_>>(),
        ),
        (
            "recall",
            report.per_class.iter().map(|c| c.recall).collect(),
        ),
        ("f1", report.per_class.iter().map(|c| c.f1).collect()),
    ] {
        let want = numbers(&per_class[key]);
        assert_eq!(got.len(), want.len(), "{what}: {key} length");
        for (class, (&g, &w)) in got.iter().zip(&want).enumerate() {
            assert_relative(&format!("{what}: {key}[{class}]"), g, w, relative);
        }
    }
    let support: Vec<u64> = report.per_class.iter().map(|c| c.support).collect();
    assert_eq!(support, integers(&per_class["support"]), "{what}: support");
    for (key, got) in [
        ("accuracy", report.accuracy),
        ("balanced_accuracy", report.balanced_accuracy),
        ("macro_f1", report.macro_f1),
        ("log_loss", report.log_loss),
    ] {
        let want = case[key].as_f64().expect("a number");
        assert_relative(&format!("{what}: {key}"), got, want, relative);
    }
    let want_auc = case[auc_key].as_f64().expect("a number");
    let got_auc = report
        .roc_auc
        .expect("both sides of every class are present");
    assert_relative(&format!("{what}: {auc_key}"), got_auc, want_auc, relative);
    // The predicted classes behind the confusion matrix: NumPy's argmax (first maximum).
    let predicted = integers(&case["y_pred_argmax"]);
    let predicted_counts: Vec<u64> = (0..report.n_classes as u64)
        .map(|c| predicted.iter().filter(|&&p| p == c).count() as u64)
        .collect();
    let column_sums: Vec<u64> = (0..report.n_classes)
        .map(|c| report.confusion_matrix.iter().map(|row| row[c]).sum())
        .collect();
    assert_eq!(
        column_sums, predicted_counts,
        "{what}: predictions per class"
    );
}

#[test]
fn binary_case_matches_scikit_learn() {
    let fixture = fixture();
    let case = &fixture["binary"];
    let (labels, probabilities, n_classes) = case_inputs(case);
    assert_eq!(n_classes, 2);
    let report = ClassReport::from_probabilities(&probabilities, &labels, 2, None).unwrap();
    assert_eq!(report.rows, 40);
    assert_eq!(report.positive_class, Some(1));
    // Source: metrics_fixture.json "binary" (roc_auc = roc_auc_score(y, p[:, 1]), ties 1/2).
    check_case("binary", &report, case, "roc_auc", 1e-9);
    let explicit = ClassReport::from_probabilities(&probabilities, &labels, 2, Some(1)).unwrap();
    assert_eq!(explicit, report);
}

#[test]
fn multiclass_case_matches_scikit_learn() {
    let fixture = fixture();
    let case = &fixture["multiclass"];
    let (labels, probabilities, n_classes) = case_inputs(case);
    assert_eq!(n_classes, 3);
    let report = ClassReport::from_probabilities(&probabilities, &labels, 3, None).unwrap();
    assert_eq!(report.positive_class, None);
    // Source: metrics_fixture.json "multiclass" (roc_auc_score(multi_class="ovr", average="macro")).
    check_case("multiclass", &report, case, "roc_auc_macro_ovr", 1e-9);
}

#[test]
fn f32_probabilities_match_within_their_rounding() {
    // The same cases with the probabilities rounded to f32 (relative rounding ≤ 6e-8): counts
    // and everything derived from them are unchanged (no two probabilities of a row come
    // within f32 rounding of each other, and the AUC orders are kept), the log loss moves by
    // at most ~6e-8 relative; 1e-6 bounds both.
    let fixture = fixture();
    for (name, auc_key) in [("binary", "roc_auc"), ("multiclass", "roc_auc_macro_ovr")] {
        let case = &fixture[name];
        let (labels, probabilities, n_classes) = case_inputs(case);
        let single: Vec<f32> = probabilities.iter().map(|&p| p as f32).collect();
        let report = ClassReport::from_probabilities(&single, &labels, n_classes, None).unwrap();
        check_case(&format!("{name} (f32)"), &report, case, auc_key, 1e-6);
    }
}

#[test]
fn the_binary_auc_can_rank_by_class_zero_and_is_none_without_both_classes() {
    let fixture = fixture();
    let (labels, probabilities, _) = case_inputs(&fixture["binary"]);
    let one = ClassReport::from_probabilities(&probabilities, &labels, 2, Some(1)).unwrap();
    let zero = ClassReport::from_probabilities(&probabilities, &labels, 2, Some(0)).unwrap();
    assert_eq!(zero.positive_class, Some(0));
    // p0 = 1 − p1 in every row (up to the fixture's 12-decimal rounding), so ranking class 0
    // by p0 orders every pair the same way: the same AUC (common practice, no source).
    assert_relative(
        "AUC of class 0",
        zero.roc_auc.unwrap(),
        one.roc_auc.unwrap(),
        1e-12,
    );
    let only_zero =
        ClassReport::from_probabilities(&[0.7, 0.3, 0.6, 0.4], &[0, 0], 2, None).unwrap();
    assert_eq!(only_zero.roc_auc, None);
    assert_eq!(only_zero.accuracy, 1.0);
    let missing_class =
        ClassReport::from_probabilities(&[0.7, 0.2, 0.1, 0.1, 0.8, 0.1], &[0, 1], 3, None).unwrap();
    assert_eq!(missing_class.roc_auc, None, "class 2 has no positive row");
}

#[test]
fn report_json_keys_are_snake_case() {
    let report = ClassReport::from_probabilities(&[0.7, 0.3, 0.2, 0.8], &[0, 1], 2, None).unwrap();
    let json = serde_json::to_value(&report).unwrap();
    let keys: Vec<&str> = json
        .as_object()
        .unwrap()
        .keys()
        .map(String::as_str)
        .collect();
    assert_eq!(
        keys,
        [
            "accuracy",
            "balanced_accuracy",
            "confusion_matrix",
            "log_loss",
            "macro_f1",
            "n_classes",
            "per_class",
            "positive_class",
            "roc_auc",
            "rows"
        ]
    );
    let per_class: Vec<&str> = json["per_class"][0]
        .as_object()
        .unwrap()
        .keys()
        .map(String::as_str)
        .collect();
    assert_eq!(per_class, ["f1", "precision", "recall", "support"]);
    let back: ClassReport = serde_json::from_value(json).unwrap();
    assert_eq!(back, report);
}

/// A report request: probabilities, labels, classes, positive class; and a piece of its error.
type BadRequest<'a> = (&'a [f64], &'a [u32], usize, Option<usize>, &'a str);

#[test]
fn bad_report_requests_are_input_errors_that_say_what_to_fix() {
    let cases: [BadRequest; 6] = [
        (&[0.5, 0.5], &[0], 1, None, "at least 2 classes"),
        (&[], &[], 2, None, "at least one labelled row"),
        (
            &[0.5, 0.5, 0.5],
            &[0, 1],
            2,
            None,
            "expected 4 probabilities",
        ),
        (&[0.5, 0.5], &[2], 2, None, "row 0 has class index 2"),
        (&[0.5, f64::NAN], &[0], 2, None, "row 0 for class 1 is NaN"),
        (&[0.2, 0.3, 0.5], &[2], 3, Some(1), "two classes only"),
    ];
    for (probabilities, labels, n_classes, positive, needle) in cases {
        let error = ClassReport::from_probabilities(probabilities, labels, n_classes, positive)
            .unwrap_err();
        assert!(matches!(error, Error::Input(_)), "{error:?}");
        assert!(
            error.to_string().contains(needle),
            "{error} lacks {needle:?}"
        );
    }
    let error = ClassReport::from_probabilities(&[0.5, 0.5], &[0], 2, Some(2)).unwrap_err();
    assert!(error.to_string().contains("must be 0 or 1"), "{error}");
}

#[test]
fn balanced_class_weights_match_scikit_learn() {
    let fixture = fixture();
    // Source: metrics_fixture.json "class_weight" (compute_class_weight("balanced")).
    for case in fixture["class_weight"].as_array().unwrap() {
        let counts: Vec<usize> = integers(&case["counts"])
            .iter()
            .map(|&c| c as usize)
            .collect();
        let got = balanced_class_weights(&counts).unwrap();
        let want = numbers(&case["weights"]);
        assert_eq!(got.len(), want.len());
        for (class, (&g, &w)) in got.iter().zip(&want).enumerate() {
            // Same operations in the same order as scikit-learn: equal to the last bit.
            assert_eq!(g, w, "counts {counts:?}, class {class}");
        }
    }
    let error = balanced_class_weights(&[4, 0, 2]).unwrap_err();
    assert!(matches!(error, Error::Input(_)));
    assert!(error.to_string().contains("class 1 has no rows"), "{error}");
    assert!(matches!(balanced_class_weights(&[]), Err(Error::Input(_))));
}

#[test]
fn mcnemar_p_values_match_scipy() {
    let fixture = fixture();
    // Source: metrics_fixture.json "mcnemar" (scipy.stats.binomtest, two-sided, p = 0.5).
    for case in fixture["mcnemar"].as_array().unwrap() {
        let (b, c) = (case["b"].as_u64().unwrap(), case["c"].as_u64().unwrap());
        let want = case["p_value"].as_f64().unwrap();
        assert_relative(
            &format!("b={b} c={c}"),
            mcnemar_exact_p_value(b, c),
            want,
            1e-12,
        );
        assert_eq!(mcnemar_exact_p_value(b, c), mcnemar_exact_p_value(c, b));
    }
    // Source: tests/reference/metrics_extra_reference.py (SciPy 1.17.1): (b, c, SciPy's
    // binomtest p-value, the same tail summed exactly with Python's fractions and rounded
    // once). SciPy's own values lie within 1.2e-13 relative of the exact ones, so they are
    // checked at 1e-12; the exact ones at 1e-13 (gemmule's error was below 2e-14 when this
    // test was written). Zero means below the smallest double for both.
    let large: [(u64, u64, f64, f64); 8] = [
        (50000, 49000, 0.0014980826229750034, 0.0014980826229749737),
        (60000, 40000, 0.0, 0.0),
        (5000, 4800, 0.04440414879984631, 0.04440414879984629),
        (100, 60, 0.001953728034064355, 0.001953728034064342),
        (1, 99999, 0.0, 0.0),
        (20000, 19990, 0.9641028991619363, 0.9641028991619361),
        (700, 400, 1.1735888055606002e-19, 1.1735888055605814e-19),
        (3000, 2000, 1.3002310005205326e-45, 1.3002310005203771e-45),
    ];
    for (b, c, scipy, exact) in large {
        let got = mcnemar_exact_p_value(b, c);
        if exact == 0.0 {
            assert_eq!(got, 0.0, "b={b} c={c}: below the smallest double");
        } else {
            assert_relative(&format!("b={b} c={c} (SciPy)"), got, scipy, 1e-12);
            assert_relative(&format!("b={b} c={c} (exact)"), got, exact, 1e-13);
        }
    }
}

/// Held-out rows per class per fold: `counts[fold][class]` (classes by label index).
fn held_out_counts(folds: &[usize], y: &[u32], k: usize, n_classes: usize) -> Vec<Vec<u64>> {
    let mut counts = vec![vec![0u64; n_classes]; k];
    for (&fold, &label) in folds.iter().zip(y) {
        counts[fold][label as usize] += 1;
    }
    counts
}

#[test]
fn stratified_fold_counts_match_scikit_learn_for_every_seed() {
    let fixture = fixture();
    // Source: metrics_fixture.json "stratified_folds" (StratifiedKFold(n_splits=5), held-out
    // class counts per fold). The counts do not depend on the seed; the rows do.
    for case in fixture["stratified_folds"].as_array().unwrap() {
        let class_counts = integers(&case["class_counts"]);
        let y: Vec<u32> = class_counts
            .iter()
            .enumerate()
            .flat_map(|(class, &count)| std::iter::repeat_n(class as u32, count as usize))
            .collect();
        let want: Vec<Vec<u64>> = case["held_out_counts_per_fold"]
            .as_array()
            .unwrap()
            .iter()
            .map(integers)
            .collect();
        for seed in [0, 1, 7, 42, 20261204, u64::MAX] {
            let folds = stratified_folds(&y, 5, seed).unwrap();
            let got = held_out_counts(&folds, &y, 5, class_counts.len());
            assert_eq!(got, want, "class counts {class_counts:?}, seed {seed}");
        }
    }
    // Source: tests/reference/metrics_extra_reference.py: classes first appear in the order
    // 2, 0, 1; scikit-learn numbers them by first appearance before it allocates, which
    // changes the counts for k = 4 and 5 (a label-sorted allocation would give other rows).
    let y = [2, 0, 1, 0, 2, 2, 1, 0, 0, 2, 1, 0, 2, 0, 1, 2, 0, 1];
    let expected: [(usize, Vec<Vec<u64>>); 3] = [
        (3, vec![vec![3, 1, 2], vec![2, 2, 2], vec![2, 2, 2]]),
        (
            4,
            vec![vec![2, 1, 2], vec![1, 2, 2], vec![2, 1, 1], vec![2, 1, 1]],
        ),
        (
            5,
            vec![
                vec![1, 1, 2],
                vec![2, 1, 1],
                vec![2, 1, 1],
                vec![1, 1, 1],
                vec![1, 1, 1],
            ],
        ),
    ];
    for (k, want) in expected {
        for seed in [0, 3, 99] {
            let folds = stratified_folds(&y, k, seed).unwrap();
            assert_eq!(
                held_out_counts(&folds, &y, k, 3),
                want,
                "k {k}, seed {seed}"
            );
        }
    }
}

/// scikit-learn's allocation rule written out independently (StratifiedKFold._make_test_folds:
/// classes numbered by first appearance, sorted, fold i takes y_order[i::k]).
fn allocation_rule(y: &[u32], k: usize) -> BTreeMap<u32, Vec<u64>> {
    let mut order: Vec<u32> = Vec::new();
    for &label in y {
        if !order.contains(&label) {
            order.push(label);
        }
    }
    let mut encoded: Vec<usize> = y
        .iter()
        .map(|label| order.iter().position(|o| o == label).unwrap())
        .collect();
    encoded.sort_unstable();
    let mut counts: BTreeMap<u32, Vec<u64>> =
        order.iter().map(|&label| (label, vec![0; k])).collect();
    for (position, &code) in encoded.iter().enumerate() {
        counts.get_mut(&order[code]).unwrap()[position % k] += 1;
    }
    counts
}

#[test]
fn stratified_folds_hold_their_properties_over_random_inputs() {
    // Invented inputs drawn from fixed seeds; properties follow from the rule (no outside source).
    let mut rng = ChaCha8Rng::seed_from_u64(2024);
    for trial in 0..40 {
        let n_classes = rng.gen_range(2..6u32);
        let k = rng.gen_range(2..8usize);
        let rows = rng.gen_range(n_classes as usize * k..300);
        // Every class first gets k rows (so k is allowed), the rest are random, then shuffled.
        let mut y: Vec<u32> = (0..n_classes)
            .flat_map(|c| std::iter::repeat_n(c, k))
            .collect();
        y.extend((y.len()..rows).map(|_| rng.gen_range(0..n_classes)));
        for i in (1..y.len()).rev() {
            y.swap(i, rng.gen_range(0..=i));
        }
        let seed = rng.gen::<u64>();
        let folds = stratified_folds(&y, k, seed).unwrap();
        assert_eq!(folds.len(), y.len(), "trial {trial}: one fold per row");
        assert!(
            folds.iter().all(|&f| f < k),
            "trial {trial}: fold out of range"
        );
        let counts = held_out_counts(&folds, &y, k, n_classes as usize);
        let rule = allocation_rule(&y, k);
        for class in 0..n_classes {
            let per_fold: Vec<u64> = counts.iter().map(|row| row[class as usize]).collect();
            let (low, high) = (
                per_fold.iter().min().unwrap(),
                per_fold.iter().max().unwrap(),
            );
            assert!(
                high - low <= 1,
                "trial {trial}, class {class}: {per_fold:?}"
            );
            assert_eq!(per_fold, rule[&class], "trial {trial}, class {class}");
        }
        assert_eq!(
            stratified_folds(&y, k, seed).unwrap(),
            folds,
            "deterministic"
        );
        let other = stratified_folds(&y, k, seed.wrapping_add(1)).unwrap();
        assert_ne!(other, folds, "trial {trial}: another seed deals other rows");
    }
}

#[test]
fn fold_requests_that_cannot_work_name_the_option_and_the_class() {
    let y = [0, 1, 1, 2, 2, 2, 0, 1, 2];
    let error = stratified_folds(&y, 1, 0).unwrap_err();
    assert!(matches!(error, Error::Input(_)));
    assert!(error.to_string().contains("--folds is 1"), "{error}");
    let error = stratified_folds(&y, 3, 0).unwrap_err();
    let message = error.to_string();
    assert!(matches!(error, Error::Input(_)));
    for needle in [
        "--folds is 3",
        "class 0 has only 2 rows",
        "--folds 2 or less",
    ] {
        assert!(message.contains(needle), "{message} lacks {needle:?}");
    }
    assert!(stratified_folds(&y, 2, 0).is_ok());
    assert!(matches!(stratified_folds(&[], 2, 0), Err(Error::Input(_))));
}

#[test]
fn mean_and_standard_error_of_a_small_sample() {
    // Worked example, no outside source: 0.5, 0.75, 1.0 have mean 0.75, sample variance
    // (0.0625 + 0 + 0.0625) / 2 = 0.0625, sd 0.25, standard error 0.25 / √3.
    let summary = mean_and_standard_error(&[0.5, 0.75, 1.0]).unwrap();
    assert_eq!(summary.mean, 0.75);
    assert_eq!(summary.count, 3);
    assert_relative(
        "standard error",
        summary.standard_error,
        0.25 / 3f64.sqrt(),
        1e-15,
    );
    assert!(matches!(
        mean_and_standard_error(&[0.5]),
        Err(Error::Input(_))
    ));
    assert!(matches!(
        mean_and_standard_error(&[0.5, f64::NAN]),
        Err(Error::Input(_))
    ));
}

fn candidate(index: u64, mean: f64, se: f64, params: u64) -> PickCandidate {
    PickCandidate {
        mean,
        se,
        params,
        index,
    }
}

#[test]
fn one_standard_error_rule_on_worked_tables() {
    // Worked example, no outside source (the rule: Breiman et al. 1984; Hastie, Tibshirani &
    // Friedman, ESL 2nd ed. §7.10). Dyadic numbers so every comparison is exact.
    //
    // Table A: the best mean is 0.875 (position 1, se 0.125), so the threshold is 0.75.
    //   position 0: 0.8125, 5000 params   within
    //   position 1: 0.875, 20000 params   within (the best)
    //   position 2: 0.75, 1200 params     within (exactly at the threshold counts)
    //   position 3: 0.6875, 300 params    below: excluded although it is the smallest
    //   position 4: 0.78125, 1200 params  within; ties position 2 on params, higher mean
    // Fewest params among those within: 1200 (positions 2 and 4); higher mean: position 4.
    let table_a = [
        candidate(10, 0.8125, 0.0625, 5000),
        candidate(11, 0.875, 0.125, 20000),
        candidate(12, 0.75, 0.0625, 1200),
        candidate(13, 0.6875, 0.0, 300),
        candidate(14, 0.78125, 0.25, 1200),
    ];
    assert_eq!(one_standard_error_pick(&table_a), Some(4));
    assert_eq!(
        plain_pick(&table_a),
        Some(1),
        "the plain rule takes the best mean"
    );

    // Table B: two candidates share the best mean 0.875; the best is the earlier index (3,
    // position 1) and its se 0.125 sets the threshold 0.75 (the other's se 0 would set 0.875
    // and pick position 1 instead). Within: all four; fewest params 400 (positions 2 and 3),
    // equal means, earlier index 2 → position 3.
    let table_b = [
        candidate(7, 0.875, 0.0, 900),
        candidate(3, 0.875, 0.125, 900),
        candidate(5, 0.75, 0.0, 400),
        candidate(2, 0.75, 0.0, 400),
    ];
    assert_eq!(one_standard_error_pick(&table_b), Some(3));
    // Plain rule: best mean 0.875 at positions 0 and 1, equal params, earlier index 3.
    assert_eq!(plain_pick(&table_b), Some(1));

    // Table C: the plain rule breaks an equal mean by fewer params before the index.
    let table_c = [candidate(0, 0.5, 0.0, 100), candidate(1, 0.5, 0.0, 50)];
    assert_eq!(plain_pick(&table_c), Some(1));

    // Nothing usable: no candidates, or only NaN means; a NaN mean is skipped.
    assert_eq!(one_standard_error_pick(&[]), None);
    assert_eq!(plain_pick(&[candidate(0, f64::NAN, 0.0, 1)]), None);
    let with_nan = [candidate(0, f64::NAN, 0.0, 1), candidate(1, 0.5, 0.1, 10)];
    assert_eq!(one_standard_error_pick(&with_nan), Some(1));
    assert_eq!(plain_pick(&with_nan), Some(1));
}
