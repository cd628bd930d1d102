//! Data: loading tables, splitting them with a sealed test part, and
//! preprocessing fitted on the training part only.
//!
//! Flow: [`read_table`] (CSV → [`Table`]) → [`stratified_split`] (seeded,
//! per class, test part [`Sealed`]) → [`Preprocessor::fit`] on the training
//! rows → [`Preprocessor::transform`] of each part; [`prepare`] does it all.

mod cells;
mod column_plan;
mod csv_table;
mod dataset;
mod encode;
mod header;
pub mod image;
mod labels;
mod limits;
mod options;
mod prepare;
mod preprocess;
#[cfg(test)]
mod preprocess_tests;
mod sealed;
mod sniff;
mod split;

pub use csv_table::{read_table, ColumnKind, Table};
pub use dataset::Dataset;
pub use limits::{MAX_CELL_BYTES, MAX_COLUMNS};
pub use options::{CsvOptions, SplitFractions};
pub use prepare::{prepare, DataInfo, Prepared};
pub use preprocess::{Encoded, Preprocessor};
pub use sealed::{Opening, Sealed};
pub use split::{stratified_split, Split, MIN_ROWS_PER_CLASS};
