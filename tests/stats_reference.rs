//! gemmule's statistics (src/stats) against an outside reference.
//!
//! The expected numbers were printed by `tests/reference/mannwhitney_reference.py`
//! with SciPy 1.17.1 and NumPy 2.4.6 (Python 3 venv, installed from PyPI);
//! each check quotes the script's output line it compares with. Exact p-values
//! are checked to 1e-12 relative, normal approximations to 1e-10 relative.

use gemmule::stats::{
    bootstrap_median_difference, mann_whitney_u, mean, median, quartiles, sample_sd, Alternative,
    PValueMethod,
};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const GREATER: Alternative = Alternative::Greater;
const LESS: Alternative = Alternative::Less;
const TWO_SIDED: Alternative = Alternative::TwoSided;

/// Checks U and p of one SciPy output line, and the method auto resolved to.
fn check(
    x: &[f64],
    y: &[f64],
    alternative: Alternative,
    method: PValueMethod,
    expected_u: f64,
    expected_p: f64,
    expected_method: PValueMethod,
) {
    let result = mann_whitney_u(x, y, alternative, method)
        .unwrap_or_else(|e| panic!("{alternative:?} {method:?}: {e}"));
    assert_eq!(result.u, expected_u, "U for {alternative:?} {method:?}");
    assert_eq!(result.method, expected_method, "method for {alternative:?}");
    let tolerance = match expected_method {
        PValueMethod::Exact => 1e-12,
        _ => 1e-10,
    };
    let relative = ((result.p_value - expected_p) / expected_p).abs();
    assert!(
        relative < tolerance,
        "{alternative:?} {method:?}: p = {} but SciPy gives {expected_p}",
        result.p_value
    );
}

// small_distinct: x=[0.91, 0.87, 0.95, 0.89, 0.93]
// small_distinct: y=[0.84, 0.9, 0.86, 0.88, 0.82]
const SMALL_X: [f64; 5] = [0.91, 0.87, 0.95, 0.89, 0.93];
const SMALL_Y: [f64; 5] = [0.84, 0.9, 0.86, 0.88, 0.82];

#[test]
fn small_samples_without_ties_use_the_exact_distribution() {
    use PValueMethod::{Auto, Exact};
    // small_distinct auto greater: U=22.0 p=0.027777777777777776
    check(
        &SMALL_X,
        &SMALL_Y,
        GREATER,
        Auto,
        22.0,
        0.027777777777777776,
        Exact,
    );
    // small_distinct auto less: U=22.0 p=0.9841269841269841
    check(
        &SMALL_X,
        &SMALL_Y,
        LESS,
        Auto,
        22.0,
        0.9841269841269841,
        Exact,
    );
    // small_distinct auto two-sided: U=22.0 p=0.05555555555555555
    check(
        &SMALL_X,
        &SMALL_Y,
        TWO_SIDED,
        Auto,
        22.0,
        0.05555555555555555,
        Exact,
    );
}

#[test]
fn the_normal_approximation_can_be_forced() {
    use PValueMethod::Normal;
    // small_distinct asymptotic greater: U=22.0 p=0.030051402969433157
    check(
        &SMALL_X,
        &SMALL_Y,
        GREATER,
        Normal,
        22.0,
        0.030051402969433157,
        Normal,
    );
    // small_distinct asymptotic less: U=22.0 p=0.981643071818648
    check(
        &SMALL_X,
        &SMALL_Y,
        LESS,
        Normal,
        22.0,
        0.981643071818648,
        Normal,
    );
    // small_distinct asymptotic two-sided: U=22.0 p=0.06010280593886631
    check(
        &SMALL_X,
        &SMALL_Y,
        TWO_SIDED,
        Normal,
        22.0,
        0.06010280593886631,
        Normal,
    );
}

#[test]
fn small_samples_with_ties_use_the_tie_corrected_approximation() {
    use PValueMethod::{Auto, Normal};
    // small_ties: x=[0.9, 0.9, 0.95, 0.85, 1.0, 0.95]
    // small_ties: y=[0.85, 0.9, 0.8, 0.85, 0.75, 0.9, 0.95]
    let x = [0.9, 0.9, 0.95, 0.85, 1.0, 0.95];
    let y = [0.85, 0.9, 0.8, 0.85, 0.75, 0.9, 0.95];
    // small_ties auto greater: U=33.0 p=0.045989593326101925
    check(&x, &y, GREATER, Auto, 33.0, 0.045989593326101925, Normal);
    // small_ties auto less: U=33.0 p=0.9664925890585707
    check(&x, &y, LESS, Auto, 33.0, 0.9664925890585707, Normal);
    // small_ties auto two-sided: U=33.0 p=0.09197918665220385
    check(&x, &y, TWO_SIDED, Auto, 33.0, 0.09197918665220385, Normal);
    assert!(mann_whitney_u(&x, &y, GREATER, PValueMethod::Exact).is_err());
}

#[test]
fn one_small_sample_suffices_for_the_exact_distribution() {
    use PValueMethod::{Auto, Exact};
    // unbalanced_distinct: x=[3.5, 12.25, 7.75, 20.5]
    // unbalanced_distinct: y=[1.0, 2.0, ..., 30.0]
    let x = [3.5, 12.25, 7.75, 20.5];
    let y: Vec<f64> = (1..=30).map(f64::from).collect();
    // unbalanced_distinct auto greater: U=42.0 p=0.8317664309125411
    check(&x, &y, GREATER, Auto, 42.0, 0.8317664309125411, Exact);
    // unbalanced_distinct auto less: U=42.0 p=0.18196912195963427
    check(&x, &y, LESS, Auto, 42.0, 0.18196912195963427, Exact);
    // unbalanced_distinct auto two-sided: U=42.0 p=0.36393824391926854
    check(&x, &y, TWO_SIDED, Auto, 42.0, 0.36393824391926854, Exact);
}

// large_distinct: x=[0.0, 0.16999999999999998, 0.33999999999999997, 0.36, 0.53, 0.7, 0.72, 0.89, 1.06, 1.08, 1.25, 1.42]
// large_distinct: y=[0.2, 0.269, 0.338, 0.40700000000000003, 0.6000000000000001, 0.669, 0.738, 0.8070000000000002, 1.0, 1.069, 1.138, 1.207, 1.4000000000000001, 1.469, 1.538]
const LARGE_X: [f64; 12] = [
    0.0,
    0.16999999999999998,
    0.33999999999999997,
    0.36,
    0.53,
    0.7,
    0.72,
    0.89,
    1.06,
    1.08,
    1.25,
    1.42,
];
const LARGE_Y: [f64; 15] = [
    0.2,
    0.269,
    0.338,
    0.40700000000000003,
    0.6000000000000001,
    0.669,
    0.738,
    0.8070000000000002,
    1.0,
    1.069,
    1.138,
    1.207,
    1.4000000000000001,
    1.469,
    1.538,
];

#[test]
fn large_samples_use_the_approximation_unless_exact_is_asked_for() {
    use PValueMethod::{Auto, Exact, Normal};
    // large_distinct auto greater: U=74.0 p=0.7896240783165338
    check(
        &LARGE_X,
        &LARGE_Y,
        GREATER,
        Auto,
        74.0,
        0.7896240783165338,
        Normal,
    );
    // large_distinct auto less: U=74.0 p=0.2247279136571083
    check(
        &LARGE_X,
        &LARGE_Y,
        LESS,
        Auto,
        74.0,
        0.2247279136571083,
        Normal,
    );
    // large_distinct auto two-sided: U=74.0 p=0.4494558273142166
    check(
        &LARGE_X,
        &LARGE_Y,
        TWO_SIDED,
        Auto,
        74.0,
        0.4494558273142166,
        Normal,
    );
    // large_distinct exact greater: U=74.0 p=0.7864388576530184
    check(
        &LARGE_X,
        &LARGE_Y,
        GREATER,
        Exact,
        74.0,
        0.7864388576530184,
        Exact,
    );
    // large_distinct exact less: U=74.0 p=0.2279317711946599
    check(
        &LARGE_X,
        &LARGE_Y,
        LESS,
        Exact,
        74.0,
        0.2279317711946599,
        Exact,
    );
    // large_distinct exact two-sided: U=74.0 p=0.4558635423893198
    check(
        &LARGE_X,
        &LARGE_Y,
        TWO_SIDED,
        Exact,
        74.0,
        0.4558635423893198,
        Exact,
    );
}

#[test]
fn large_samples_with_many_ties() {
    use PValueMethod::{Auto, Normal};
    // large_ties: x=[0.0, 0.35, 0.15, 0.5, 0.3, 0.1, 0.45, 0.25, 0.05, 0.4, 0.2, 0.0, 0.35, 0.15, 0.5, 0.3, 0.1, 0.45, 0.25, 0.05, 0.4, 0.2, 0.0, 0.35, 0.15]
    // large_ties: y=[0.0, 0.25, 0.05, 0.3, 0.1, 0.35, 0.15, 0.4, 0.2, 0.0, 0.25, 0.05, 0.3, 0.1, 0.35, 0.15, 0.4, 0.2, 0.0, 0.25]
    let x = [
        0.0, 0.35, 0.15, 0.5, 0.3, 0.1, 0.45, 0.25, 0.05, 0.4, 0.2, 0.0, 0.35, 0.15, 0.5, 0.3, 0.1,
        0.45, 0.25, 0.05, 0.4, 0.2, 0.0, 0.35, 0.15,
    ];
    let y = [
        0.0, 0.25, 0.05, 0.3, 0.1, 0.35, 0.15, 0.4, 0.2, 0.0, 0.25, 0.05, 0.3, 0.1, 0.35, 0.15,
        0.4, 0.2, 0.0, 0.25,
    ];
    // large_ties auto greater: U=292.5 p=0.1675162754707769
    check(&x, &y, GREATER, Auto, 292.5, 0.1675162754707769, Normal);
    // large_ties auto less: U=292.5 p=0.8381737033241622
    check(&x, &y, LESS, Auto, 292.5, 0.8381737033241622, Normal);
    // large_ties auto two-sided: U=292.5 p=0.3350325509415538
    check(&x, &y, TWO_SIDED, Auto, 292.5, 0.3350325509415538, Normal);
}

#[test]
fn completely_separated_samples() {
    use PValueMethod::{Auto, Exact};
    // separated: x=[10.0, ..., 17.0], y=[0.0, ..., 7.0]
    let x: Vec<f64> = (10..18).map(f64::from).collect();
    let y: Vec<f64> = (0..8).map(f64::from).collect();
    // separated auto greater: U=64.0 p=7.77000777000777e-05
    check(&x, &y, GREATER, Auto, 64.0, 7.77000777000777e-05, Exact);
    // separated auto less: U=64.0 p=1.0
    check(&x, &y, LESS, Auto, 64.0, 1.0, Exact);
    // separated auto two-sided: U=64.0 p=0.0001554001554001554
    check(&x, &y, TWO_SIDED, Auto, 64.0, 0.0001554001554001554, Exact);
}

fn close(got: f64, expected: f64) -> bool {
    (got - expected).abs() <= 1e-12 * expected.abs().max(1.0)
}

/// Checks quartiles (NumPy percentile 25/50/75, linear), mean, std (ddof=1) and median.
fn check_numpy(values: &[f64], expected_quartiles: [f64; 3], expected: [f64; 3]) {
    let [expected_mean, expected_sd, expected_median] = expected;
    let got = quartiles(values).unwrap_or([f64::NAN; 3]);
    for (g, e) in got.iter().zip(expected_quartiles) {
        assert!(close(*g, e), "quartile {g} vs NumPy {e} for {values:?}");
    }
    assert!(close(mean(values).unwrap_or(f64::NAN), expected_mean));
    let sd = sample_sd(values).ok().flatten().unwrap_or(f64::NAN);
    assert!(close(sd, expected_sd), "sd {sd} vs NumPy {expected_sd}");
    assert!(close(median(values).unwrap_or(f64::NAN), expected_median));
}

#[test]
fn descriptive_statistics_match_numpy() {
    // four: quartiles=[1.75, 2.5, 3.25] mean=2.5 sd=1.2909944487358056 median=2.5
    check_numpy(
        &[4.0, 1.0, 3.0, 2.0],
        [1.75, 2.5, 3.25],
        [2.5, 1.2909944487358056, 2.5],
    );
    // seven: quartiles=[0.8, 0.88, 0.92] mean=0.8600000000000001 sd=0.06855654600401044 median=0.88
    check_numpy(
        &[0.81, 0.93, 0.77, 0.93, 0.88, 0.91, 0.79],
        [0.8, 0.88, 0.92],
        [0.8600000000000001, 0.06855654600401044, 0.88],
    );
    // ten: quartiles=[3.420358449236301, 9.590169943749475, 17.564428997263867]
    //      mean=11.10495340670725 sd=9.379647578955256 median=9.590169943749475
    let ten: Vec<f64> = (0..10).map(|v| f64::from(v).powf(1.5)).collect();
    check_numpy(
        &ten,
        [3.420358449236301, 9.590169943749475, 17.564428997263867],
        [11.10495340670725, 9.379647578955256, 9.590169943749475],
    );
}

/// Two samples of `n` values: uniform noise on [-0.5, 0.5) shifted by `shift` and by 0.
/// The true difference of the population medians is `shift`.
fn synthetic(n: usize, shift: f64, rng: &mut ChaCha8Rng) -> (Vec<f64>, Vec<f64>) {
    let mut draw =
        |offset: f64| -> Vec<f64> { (0..n).map(|_| offset + rng.gen::<f64>() - 0.5).collect() };
    let first = draw(shift);
    let second = draw(0.0);
    (first, second)
}

#[test]
fn the_bootstrap_interval_is_deterministic_per_seed() {
    let mut rng = ChaCha8Rng::seed_from_u64(11);
    let (x, y) = synthetic(20, 1.0, &mut rng);
    let once =
        bootstrap_median_difference(&x, &y, 0.95, 10_000, 42).unwrap_or_else(|e| panic!("{e}"));
    let again =
        bootstrap_median_difference(&x, &y, 0.95, 10_000, 42).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(once, again);
    let other =
        bootstrap_median_difference(&x, &y, 0.95, 10_000, 43).unwrap_or_else(|e| panic!("{e}"));
    assert_ne!((once.low, once.high), (other.low, other.high));
    assert!(once.low <= once.estimate && once.estimate <= once.high);
    // The true difference of medians is 1.0; this interval covers it.
    assert!(once.low < 1.0 && 1.0 < once.high, "{once:?}");
}

#[test]
fn the_bootstrap_interval_covers_the_true_difference_about_95_percent_of_the_time() {
    // 200 synthetic data sets of 25 + 25 values with a true median difference of 0.3.
    // A binomial(200, 0.95) count falls below 180 (0.90) with probability < 0.3%,
    // so coverage must reach 0.90. Over-coverage is bounded by the width: the
    // normal-theory 95% width of a median difference here is about
    // 2 * 1.96 * sqrt(2 / (4 * 25)) = 0.55 (median variance 1 / (4 n f^2), f = 1,
    // Serfling 1980, sec. 2.3.3); the mean width must stay below 0.8.
    let mut rng = ChaCha8Rng::seed_from_u64(2024);
    let mut covered = 0;
    let mut total_width = 0.0;
    let sets = 200;
    for set in 0..sets {
        let (x, y) = synthetic(25, 0.3, &mut rng);
        let interval =
            bootstrap_median_difference(&x, &y, 0.95, 1_000, set).unwrap_or_else(|e| panic!("{e}"));
        total_width += interval.high - interval.low;
        if interval.low <= 0.3 && 0.3 <= interval.high {
            covered += 1;
        }
    }
    let rate = f64::from(covered) / sets as f64;
    assert!(rate >= 0.90, "coverage {rate}");
    let mean_width = total_width / sets as f64;
    assert!(mean_width < 0.8, "mean width {mean_width}");
}
