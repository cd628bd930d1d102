//! Built-in demo datasets, generated from a seed: an invented coffee-roast
//! table and a folder of invented 12×12 glyph images.
//!
//! Everything here is invented (no real roasters, brands or measurements).
//! Every random choice flows from the spec's seed through a
//! [`crate::genome::SeededRng`], and only exactly reproducible arithmetic is
//! used (no `exp`, `ln`, `sin`, `cos`; numbers written with fixed decimals),
//! so the same spec gives byte-identical files on every machine. The files
//! shipped in `data/demo/` are the output of [`ensure_demo_data`].
//! `docs/demo-data.md` documents the generating process.

mod draws;
mod ensure;
mod glyph_render;
mod glyph_shapes;
mod glyphs;
mod roast_batch;
mod roast_outcome;
mod roast_table;

pub use ensure::{
    ensure_demo_data, ensure_demo_data_with, DemoFiles, GLYPH_FOLDER, MANIFEST_FILE, ROAST_FILE,
};
pub use glyph_shapes::GLYPH_CLASSES;
pub use glyphs::{glyph_images, write_glyph_folder, GlyphSpec, GlyphSummary, MAX_GLYPHS_PER_CLASS};
pub use roast_outcome::ROAST_OUTCOMES;
pub use roast_table::{
    roast_table_csv, write_roast_table, RoastTableSpec, MAX_ROAST_ROWS, MIN_ROAST_ROWS,
    ROAST_COLUMNS, ROAST_MISSING_COLUMNS,
};
