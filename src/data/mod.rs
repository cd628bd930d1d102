//! Data: loading tables, splitting them with a sealed test part, and
//! preprocessing fitted on the training part only.
//!
//! Flow: [`read_table`] (CSV → [`Table`]) → [`stratified_split`] (seeded,
//! per class, test part [`Sealed`]) → [`Preprocessor::fit`] on the training
//! rows → [`Preprocessor::transform`] of each part; [`prepare`] does it all.

mod cells;
pub(crate) use cells::count_of;
mod column_plan;
mod csv_table;
mod dataset;
mod encode;
mod folds;
mod header;
pub mod image;
mod labels;
mod limits;
mod options;
mod partition;
mod prepare;
#[cfg(test)]
mod prepare_tests;
mod preprocess;
#[cfg(test)]
mod preprocess_tests;
mod roles;
mod row_tags;
mod sealed;
mod sniff;
mod split;

pub use csv_table::{read_table, ColumnKind, Table};
pub use dataset::Dataset;
pub use folds::{Fold, FoldSource};
pub use limits::{MAX_CELL_BYTES, MAX_COLUMNS};
pub use options::{CsvOptions, Partition, SplitFractions, TableRoles};
pub use prepare::{prepare, prepare_with, DataInfo, Prepared};
pub use preprocess::{Encoded, Preprocessor};
pub use row_tags::{RowTag, RowTags};
pub use sealed::{Opening, Sealed};
pub use split::{stratified_split, Split, MIN_ROWS_PER_CLASS};
