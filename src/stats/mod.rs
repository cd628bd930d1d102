//! Statistics for comparing search strategies over seeds: descriptive
//! summaries, the Mann–Whitney U test, a bootstrap interval for a difference
//! of medians, and measures of best-so-far curves.
//!
//! Every function refuses empty samples and NaN or infinite values with an
//! input error instead of returning a meaningless number.

mod bootstrap;
mod curves;
mod describe;
mod exact_u;
mod mann_whitney;
mod normal;

pub use bootstrap::{bootstrap_median_difference, MedianDifferenceInterval, DEFAULT_RESAMPLES};
pub use curves::{area_under_best_so_far, evaluations_to_reach};
pub use describe::{max, mean, median, min, quantile, quartiles, sample_sd, Summary};
pub use exact_u::exact_upper_tail;
pub use mann_whitney::{
    mann_whitney_u, Alternative, MannWhitney, PValueMethod, AUTO_EXACT_MAX_SIZE,
};
pub use normal::{erfc, normal_sf};
