//! The invented coffee-roast table: batches described by roast-curve
//! readings, labelled with a roast outcome.

use std::fmt::Write as _;
use std::path::Path;

use rand::SeedableRng;

use super::draws::unit;
use super::roast_batch::{draw_batch, RoastBatch};
use super::roast_outcome::{hidden_scores, outcome_index, ROAST_OUTCOMES};
use crate::genome::SeededRng;
use crate::{Error, Result};

/// The columns of the roast table in file order; the label `outcome` is last.
pub const ROAST_COLUMNS: [&str; 14] = [
    "charge_temp_c",
    "turning_point_s",
    "turning_point_temp_c",
    "first_crack_s",
    "dev_time_ratio_pct",
    "drop_temp_c",
    "ror_2min_c_per_min",
    "ror_4min_c_per_min",
    "ror_6min_c_per_min",
    "ror_first_crack_c_per_min",
    "bean_moisture_pct",
    "batch_weight_kg",
    "drum_speed",
    "outcome",
];

/// The columns that have missing readings (empty cells), each with
/// probability [`RoastTableSpec::missing_rate`] per row.
pub const ROAST_MISSING_COLUMNS: [&str; 3] = [
    "turning_point_temp_c",
    "ror_6min_c_per_min",
    "bean_moisture_pct",
];

/// Fewest rows [`roast_table_csv`] accepts (every class needs rows in all three splits).
pub const MIN_ROAST_ROWS: usize = 100;
/// Most rows [`roast_table_csv`] accepts.
pub const MAX_ROAST_ROWS: usize = 1_000_000;

/// What the roast table generator makes: how many batches, from which seed,
/// with how many missing readings and how much label noise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RoastTableSpec {
    /// Number of batches (data rows), [`MIN_ROAST_ROWS`]..=[`MAX_ROAST_ROWS`].
    pub rows: usize,
    /// Seed of every random choice; the same spec gives the same bytes.
    pub seed: u64,
    /// Chance that a reading in each of [`ROAST_MISSING_COLUMNS`] is missing, in [0, 0.5].
    pub missing_rate: f64,
    /// Chance that a batch's outcome is replaced by a neighbouring outcome
    /// (a tasting mistake), in [0, 0.5].
    pub label_noise: f64,
}

impl Default for RoastTableSpec {
    /// The shipped demo table: 1,500 batches, seed 1, 2.5 % missing readings
    /// per affected column, 4 % label noise.
    fn default() -> Self {
        RoastTableSpec {
            rows: 2_000,
            seed: 1,
            missing_rate: 0.025,
            label_noise: 0.02,
        }
    }
}

impl RoastTableSpec {
    /// Checks the ranges of every field; the message names the field and its allowed range.
    pub fn validate(&self) -> Result<()> {
        if !(MIN_ROAST_ROWS..=MAX_ROAST_ROWS).contains(&self.rows) {
            return Err(Error::input(format!(
                "roast table: rows is {}, allowed range is {MIN_ROAST_ROWS}..={MAX_ROAST_ROWS}",
                self.rows
            )));
        }
        for (name, value) in [
            ("missing_rate", self.missing_rate),
            ("label_noise", self.label_noise),
        ] {
            if !(0.0..=0.5).contains(&value) {
                return Err(Error::input(format!(
                    "roast table: {name} is {value}, allowed range is [0, 0.5]"
                )));
            }
        }
        Ok(())
    }
}

/// Generates the roast table as CSV text (header line, one line per batch,
/// `\n` line ends, numbers with fixed decimals, missing readings as empty
/// cells). The same spec gives the same text on every machine.
///
/// Errors: a spec field outside its range ([`RoastTableSpec::validate`]).
pub fn roast_table_csv(spec: &RoastTableSpec) -> Result<String> {
    spec.validate()?;
    let mut rng = SeededRng::seed_from_u64(spec.seed);
    let mut text = String::with_capacity(100 * (spec.rows + 1));
    text.push_str(&ROAST_COLUMNS.join(","));
    text.push('\n');
    for _ in 0..spec.rows {
        let batch = draw_batch(&mut rng);
        let outcome = noisy_outcome(outcome_index(&hidden_scores(&batch)), spec, &mut rng);
        let missing = ROAST_MISSING_COLUMNS.map(|_| unit(&mut rng) < spec.missing_rate);
        write_row(&mut text, &batch, missing, ROAST_OUTCOMES[outcome]);
    }
    Ok(text)
}

/// Writes [`roast_table_csv`]'s text to `path` atomically (a temp file renamed over `path`).
pub fn write_roast_table(path: &Path, spec: &RoastTableSpec) -> Result<()> {
    let text = roast_table_csv(spec)?;
    crate::fsio::write_atomic(path, text.as_bytes())
}

/// Applies label noise: with chance `label_noise`, one step up or down the
/// outcome order (the other way at either end). Always consumes two draws.
fn noisy_outcome(index: usize, spec: &RoastTableSpec, rng: &mut SeededRng) -> usize {
    let (flip, direction) = (unit(rng), unit(rng));
    if flip >= spec.label_noise {
        return index;
    }
    let last = ROAST_OUTCOMES.len() - 1;
    match (index, direction < 0.5) {
        (0, _) => 1,
        (i, _) if i == last => last - 1,
        (i, true) => i - 1,
        (i, false) => i + 1,
    }
}

/// Appends one CSV line; `missing` follows [`ROAST_MISSING_COLUMNS`].
fn write_row(text: &mut String, b: &RoastBatch, missing: [bool; 3], outcome: &str) {
    let maybe = |value: f64, is_missing: bool| {
        if is_missing {
            String::new()
        } else {
            format!("{value:.1}")
        }
    };
    // Writing to a String cannot fail.
    let _ = writeln!(
        text,
        "{:.1},{:.0},{},{:.0},{:.1},{:.1},{:.1},{:.1},{},{:.1},{},{:.1},{},{}",
        b.charge_temp_c,
        b.turning_point_s,
        maybe(b.turning_point_temp_c, missing[0]),
        b.first_crack_s,
        b.dev_time_ratio_pct,
        b.drop_temp_c,
        b.ror_2min,
        b.ror_4min,
        maybe(b.ror_6min, missing[1]),
        b.ror_first_crack,
        maybe(b.bean_moisture_pct, missing[2]),
        b.batch_weight_kg,
        b.drum_speed.name(),
        outcome
    );
}
