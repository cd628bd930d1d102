//! The hidden rule that turns a batch's readings into a roast outcome.
//!
//! Documented in words and pseudo-code in `docs/demo-data.md`; change both together.

use super::roast_batch::{DrumSpeed, RoastBatch};

/// The roast outcome classes, from least to most roasted.
pub const ROAST_OUTCOMES: [&str; 5] = ["underdeveloped", "light", "medium", "dark", "scorched"];

/// The hidden scores of one batch, before any label noise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct HiddenScores {
    /// How far the roast developed (light below −0.55, medium below 1.0, dark from 1.0).
    pub development: f64,
    /// Surface scorching risk (scorched at 1.25 or more).
    pub tipping: f64,
    /// Interior under-development (underdeveloped at 1.8 or more).
    pub under: f64,
}

/// Development score at or above which a roast is dark.
const DARK_DEVELOPMENT: f64 = 1.0;
/// Development score below which a roast is light.
const LIGHT_DEVELOPMENT: f64 = -0.55;
/// Tipping score at or above which the surface scorches.
const SCORCHED_TIPPING: f64 = 1.25;
/// Under-development score at or above which the interior stays underdeveloped.
const UNDER_LIMIT: f64 = 1.8;

/// Computes the hidden scores of `batch` from its recorded readings (and its
/// unrecorded density).
pub(crate) fn hidden_scores(batch: &RoastBatch) -> HiddenScores {
    let heat = (batch.drop_temp_c - 211.0) / 4.0;
    let time = (batch.dev_time_ratio_pct - 19.0) / 3.5;
    let moisture = (batch.bean_moisture_pct - 10.8) / 0.6;
    let weight = (batch.batch_weight_kg - 7.0) / 2.9;
    let development = heat + 0.7 * time - 0.8 * moisture * weight - 0.05 * batch.density;

    let drum_factor = match batch.drum_speed {
        DrumSpeed::Low => 1.6,
        DrumSpeed::Mid => 1.0,
        DrumSpeed::High => 0.6,
    };
    let hot_charge = (batch.charge_temp_c - 200.0 - 1.2 * (batch.batch_weight_kg - 7.0)) / 8.0;
    let tipping = hot_charge * drum_factor;

    let ratio = batch.ror_first_crack / batch.ror_6min;
    let crash_or_flick = ((ratio - 0.72).abs() - 0.25) / 0.15;
    let under = 1.6 * crash_or_flick + (19.0 - batch.dev_time_ratio_pct) / 2.5;
    HiddenScores {
        development,
        tipping,
        under,
    }
}

/// The outcome class index (into [`ROAST_OUTCOMES`]) the hidden scores give:
/// scorching first, then under-development, then the development bands.
pub(crate) fn outcome_index(scores: &HiddenScores) -> usize {
    if scores.tipping >= SCORCHED_TIPPING {
        4
    } else if scores.under >= UNDER_LIMIT {
        0
    } else if scores.development < LIGHT_DEVELOPMENT {
        1
    } else if scores.development < DARK_DEVELOPMENT {
        2
    } else {
        3
    }
}
