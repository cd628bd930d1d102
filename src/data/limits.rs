//! Size limits of the CSV reader, so a hostile or mistaken file is refused
//! quickly with a clear message instead of exhausting time or memory.

/// Most columns a CSV file may have, label included (a 320×320 RGB pixel CSV
/// has 307,201). Wider headers are refused before any per-column work.
pub const MAX_COLUMNS: usize = 400_000;

/// Longest cell or column name, in bytes (64 KiB). Longer cells are almost
/// always a missing closing quote that swallowed the rest of the file.
pub const MAX_CELL_BYTES: usize = 64 * 1024;
