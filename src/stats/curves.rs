//! Measures of a best-so-far curve: `curve[i]` is the best objective among
//! evaluations `1..=i + 1` (`None` while none was scored), as in
//! `crate::search::RunSummary::best_so_far`.

use crate::{Error, Result};

/// The mean of the best-so-far values over evaluations `1..=budget`: the area
/// under the curve divided by the budget, so it shares the objective's scale
/// and rewards reaching good scores early.
///
/// Positions still without a score (`None`) count as `floor`, which the
/// caller chooses as a value no score is below (e.g. the worst score seen
/// among all the curves being compared). Refused when the curve holds fewer
/// than `budget` evaluations or `budget` is 0.
pub fn area_under_best_so_far(curve: &[Option<f64>], budget: usize, floor: f64) -> Result<f64> {
    if budget == 0 {
        return Err(Error::input("the curve's budget must be at least 1"));
    }
    if curve.len() < budget {
        return Err(Error::input(format!(
            "the curve holds {} evaluations, fewer than the budget of {budget}",
            curve.len()
        )));
    }
    let total: f64 = curve[..budget].iter().map(|v| v.unwrap_or(floor)).sum();
    Ok(total / budget as f64)
}

/// The number of evaluations (1-based) after which the best-so-far score first
/// reaches `target` (at least equal to it), or `None` if it never does.
pub fn evaluations_to_reach(curve: &[Option<f64>], target: f64) -> Option<u64> {
    curve
        .iter()
        .position(|value| value.is_some_and(|v| v >= target))
        .map(|index| index as u64 + 1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn area_and_reach_by_hand() {
        let curve = [None, Some(0.5), Some(0.5), Some(0.9)];
        let area = area_under_best_so_far(&curve, 4, 0.1).unwrap_or(f64::NAN);
        assert!((area - (0.1 + 0.5 + 0.5 + 0.9) / 4.0).abs() < 1e-15);
        let first_three = area_under_best_so_far(&curve, 3, 0.0).unwrap_or(f64::NAN);
        assert!((first_three - 1.0 / 3.0).abs() < 1e-15);
        assert!(area_under_best_so_far(&curve, 5, 0.0).is_err());
        assert!(area_under_best_so_far(&curve, 0, 0.0).is_err());
        assert_eq!(evaluations_to_reach(&curve, 0.5), Some(2));
        assert_eq!(evaluations_to_reach(&curve, 0.6), Some(4));
        assert_eq!(evaluations_to_reach(&curve, 0.95), None);
    }
}
