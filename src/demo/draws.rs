//! Random draws for the demo generators that give the same numbers on every
//! machine.
//!
//! Only IEEE-754 arithmetic (`+ - * /`, `sqrt`, rounding) is used on the
//! uniform draws of a [`SeededRng`]: no `exp`, `ln`, `sin` or `cos`, whose
//! last bits may differ between maths libraries.

use rand::Rng;

use crate::genome::SeededRng;

/// √3, the scale that gives [`approx_normal`] a standard deviation of 1.
const SQRT_3: f64 = 1.732_050_807_568_877_2;

/// A uniform draw in `[0, 1)` (53 random bits).
pub(crate) fn unit(rng: &mut SeededRng) -> f64 {
    rng.gen::<f64>()
}

/// A uniform draw in `[low, high)`.
pub(crate) fn uniform(rng: &mut SeededRng, low: f64, high: f64) -> f64 {
    low + (high - low) * unit(rng)
}

/// An approximately normal draw with mean 0 and standard deviation 1: the
/// centred sum of four uniform draws (Irwin–Hall), scaled by √3. Its values
/// lie in [−2√3, 2√3] ≈ [−3.46, 3.46].
pub(crate) fn approx_normal(rng: &mut SeededRng) -> f64 {
    let sum: f64 = (0..4).map(|_| unit(rng)).sum();
    (sum - 2.0) * SQRT_3
}

/// `value` rounded to `decimals` decimal places (half away from zero).
pub(crate) fn round_to(value: f64, decimals: i32) -> f64 {
    let scale = [1.0, 10.0, 100.0, 1000.0][decimals.clamp(0, 3) as usize];
    (value * scale).round() / scale
}
