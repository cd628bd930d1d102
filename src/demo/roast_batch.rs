//! One invented coffee-roast batch: its recorded readings and the hidden
//! factors behind them.

use super::draws::{approx_normal, round_to, uniform, unit};
use crate::genome::SeededRng;

/// Drum speed setting of the (invented) roaster.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum DrumSpeed {
    /// Slow drum: more heat by contact with the hot drum.
    Low,
    /// The usual setting.
    Mid,
    /// Fast drum: more heat by hot air, less contact.
    High,
}

impl DrumSpeed {
    /// The text written to the CSV cell.
    pub(crate) fn name(self) -> &'static str {
        match self {
            DrumSpeed::Low => "low",
            DrumSpeed::Mid => "mid",
            DrumSpeed::High => "high",
        }
    }
}

/// How the rate of rise behaves near first crack (hidden; it shows only in
/// the readings).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum RorShape {
    /// Keeps declining smoothly.
    Steady,
    /// Drops sharply just before first crack.
    Crash,
    /// Rises again just after a dip.
    Flick,
}

/// The readings of one batch, already rounded as they are written, plus the
/// hidden bean density the roaster never recorded.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct RoastBatch {
    /// Bean temperature probe at charge, °C (1 decimal).
    pub charge_temp_c: f64,
    /// Seconds from charge to the turning point (whole seconds).
    pub turning_point_s: f64,
    /// Bean temperature at the turning point, °C (1 decimal).
    pub turning_point_temp_c: f64,
    /// Seconds from charge to first crack (whole seconds).
    pub first_crack_s: f64,
    /// Development time as a share of the total roast time, % (1 decimal).
    pub dev_time_ratio_pct: f64,
    /// Bean temperature at drop, °C (1 decimal).
    pub drop_temp_c: f64,
    /// Rate of rise 2 minutes after charge, °C/min (1 decimal).
    pub ror_2min: f64,
    /// Rate of rise at 4 minutes, °C/min (1 decimal).
    pub ror_4min: f64,
    /// Rate of rise at 6 minutes, °C/min (1 decimal).
    pub ror_6min: f64,
    /// Rate of rise at first crack, °C/min (1 decimal).
    pub ror_first_crack: f64,
    /// Green-bean moisture, % (1 decimal).
    pub bean_moisture_pct: f64,
    /// Green-bean batch weight, kg (1 decimal).
    pub batch_weight_kg: f64,
    /// Drum speed setting.
    pub drum_speed: DrumSpeed,
    /// Hidden: how the rate of rise behaved near first crack.
    pub ror_shape: RorShape,
    /// Hidden: bean density, standardised (mean 0, sd 1); not written.
    pub density: f64,
}

/// Draws one batch. Every batch consumes the same number of uniform draws (51), so
/// row `i` depends only on the seed and `i`.
pub(crate) fn draw_batch(rng: &mut SeededRng) -> RoastBatch {
    let weight = round_to(uniform(rng, 2.0, 12.0), 1);
    let moisture = round_to((10.8 + 0.6 * approx_normal(rng)).clamp(9.0, 12.8), 1);
    let drum = match unit(rng) {
        u if u < 0.30 => DrumSpeed::Low,
        u if u < 0.75 => DrumSpeed::Mid,
        _ => DrumSpeed::High,
    };
    let dw = weight - 7.0;
    let charge = 200.0 + 1.2 * dw + 8.0 * approx_normal(rng);
    let dc = charge - 200.0;
    let drum_tp = match drum {
        DrumSpeed::Low => 4.0,
        DrumSpeed::Mid => 0.0,
        DrumSpeed::High => -3.0,
    };
    let tp_temp = 90.0 + 0.3 * dc - 1.5 * dw + 2.0 * approx_normal(rng);
    let tp_s = 80.0 + 3.0 * dw - 0.8 * dc + drum_tp + 5.0 * approx_normal(rng);
    let ror2 = 20.0 + 0.22 * dc - 0.5 * dw + 1.8 * approx_normal(rng);
    let ror4 = 13.0 + 0.55 * (ror2 - 20.0) + 1.3 * approx_normal(rng);
    let ror6 = (9.0 + 0.5 * (ror4 - 13.0) + 1.2 * approx_normal(rng)).max(2.0);
    let shape = match unit(rng) {
        u if u < 0.62 => RorShape::Steady,
        u if u < 0.81 => RorShape::Crash,
        _ => RorShape::Flick,
    };
    let fc_factor = match shape {
        RorShape::Steady => 0.72,
        RorShape::Crash => 0.32,
        RorShape::Flick => 1.12,
    };
    let ror_fc = (fc_factor * ror6 + 0.8 * approx_normal(rng)).max(0.3);
    let first_crack = 480.0 + 25.0 * (moisture - 10.8) + 6.0 * dw - 9.0 * (ror4 - 13.0)
        + 25.0 * approx_normal(rng);
    let dtr = (19.0 + 3.5 * approx_normal(rng)).clamp(9.0, 32.0);
    let development = first_crack * dtr / (100.0 - dtr);
    let drop = 200.0 + 0.1 * development + 0.6 * (ror_fc - 6.5) + 3.0 * approx_normal(rng);
    let density = approx_normal(rng);
    RoastBatch {
        charge_temp_c: round_to(charge, 1),
        turning_point_s: round_to(tp_s, 0),
        turning_point_temp_c: round_to(tp_temp, 1),
        first_crack_s: round_to(first_crack, 0),
        dev_time_ratio_pct: round_to(dtr, 1),
        drop_temp_c: round_to(drop, 1),
        ror_2min: round_to(ror2, 1),
        ror_4min: round_to(ror4, 1),
        ror_6min: round_to(ror6, 1),
        ror_first_crack: round_to(ror_fc, 1),
        bean_moisture_pct: moisture,
        batch_weight_kg: weight,
        drum_speed: drum,
        ror_shape: shape,
        density,
    }
}
