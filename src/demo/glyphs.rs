//! The invented glyph images: 8 classes of strokes, rings and dots, drawn
//! with jitter, blur and noise, written as a class-folder tree of PNG files.

use std::path::{Path, PathBuf};

use rand::SeedableRng;
use sha2::{Digest, Sha256};

use super::glyph_render::{encode_png, render_glyph};
use super::glyph_shapes::GLYPH_CLASSES;
use crate::genome::SeededRng;
use crate::{Error, Result};

/// Most images per class (file names have four digits).
pub const MAX_GLYPHS_PER_CLASS: usize = 9_999;

/// What the glyph generator makes: how many images of each class, their
/// side length, how noisy, and from which seed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GlyphSpec {
    /// Images per class, 3..=[`MAX_GLYPHS_PER_CLASS`].
    pub per_class: usize,
    /// Seed of every random choice; the same spec gives the same bytes.
    pub seed: u64,
    /// Side length in pixels (square images), 8..=64.
    pub size: usize,
    /// Largest standard deviation of the pixel noise, in grey levels, 0..=64
    /// (each image draws its own level between 30 % and 100 % of it).
    pub noise: f64,
}

impl Default for GlyphSpec {
    /// The shipped demo images: 50 per class, 12×12 pixels, noise up to 18
    /// grey levels, seed 1.
    fn default() -> Self {
        GlyphSpec {
            per_class: 50,
            seed: 1,
            size: 12,
            noise: 18.0,
        }
    }
}

impl GlyphSpec {
    /// Checks the ranges of every field; the message names the field and its allowed range.
    pub fn validate(&self) -> Result<()> {
        if !(3..=MAX_GLYPHS_PER_CLASS).contains(&self.per_class) {
            return Err(Error::input(format!(
                "glyphs: per_class is {}, allowed range is 3..={MAX_GLYPHS_PER_CLASS}",
                self.per_class
            )));
        }
        if !(8..=64).contains(&self.size) {
            return Err(Error::input(format!(
                "glyphs: size is {}, allowed range is 8..=64 pixels",
                self.size
            )));
        }
        if !(0.0..=64.0).contains(&self.noise) {
            return Err(Error::input(format!(
                "glyphs: noise is {}, allowed range is [0, 64] grey levels",
                self.noise
            )));
        }
        Ok(())
    }
}

/// What [`write_glyph_folder`] wrote.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GlyphSummary {
    /// The folder holding one sub-folder per class.
    pub root: PathBuf,
    /// Side length of every image, pixels.
    pub size: usize,
    /// Each class name with its number of images, in load order.
    pub classes: Vec<(String, usize)>,
    /// All images written.
    pub images: usize,
    /// SHA-256 of the folder as [`crate::data::image::read_image_folder`]
    /// computes it (so it equals the loaded table's fingerprint).
    pub fingerprint: String,
}

/// Draws every glyph in memory: `(class, pixels)` pairs, class by class in
/// [`GLYPH_CLASSES`] order, `per_class` images each; the pixels are
/// `size × size` grey values row by row (ink is bright).
///
/// Image `i` of class `c` comes from its own stream of the seeded generator,
/// so it does not change when `per_class` changes.
pub fn glyph_images(spec: &GlyphSpec) -> Result<Vec<(String, Vec<u8>)>> {
    spec.validate()?;
    let mut images = Vec::with_capacity(GLYPH_CLASSES.len() * spec.per_class);
    for (class, name) in GLYPH_CLASSES.iter().enumerate() {
        for index in 0..spec.per_class {
            let mut rng = SeededRng::seed_from_u64(spec.seed);
            rng.set_stream(((class as u64) << 32) | index as u64);
            images.push((
                name.to_string(),
                render_glyph(class, spec.size, spec.noise, &mut rng),
            ));
        }
    }
    Ok(images)
}

/// Every glyph as a PNG file: `(relative path "class/nnnn.png", bytes)`, in load order.
pub(crate) fn glyph_png_files(spec: &GlyphSpec) -> Result<Vec<(String, Vec<u8>)>> {
    let mut counters = vec![0usize; GLYPH_CLASSES.len()];
    glyph_images(spec)?
        .into_iter()
        .map(|(class, pixels)| {
            let slot = GLYPH_CLASSES
                .iter()
                .position(|c| *c == class)
                .ok_or_else(|| Error::internal(format!("unknown glyph class {class}")))?;
            let index = counters[slot];
            counters[slot] += 1;
            Ok((
                format!("{class}/{index:04}.png"),
                encode_png(&pixels, spec.size)?,
            ))
        })
        .collect()
}

/// SHA-256 over files given in load order, computed exactly like
/// [`crate::data::image::read_image_folder`]'s fingerprint.
pub(crate) fn folder_fingerprint(files: &[(String, Vec<u8>)]) -> String {
    let mut hasher = Sha256::new();
    for (relative, bytes) in files {
        hasher.update(relative.as_bytes());
        hasher.update([0u8]);
        hasher.update((bytes.len() as u64).to_be_bytes());
        hasher.update(bytes);
    }
    hasher
        .finalize()
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// The summary of `files` written under `root`.
pub(crate) fn summary(root: &Path, spec: &GlyphSpec, files: &[(String, Vec<u8>)]) -> GlyphSummary {
    GlyphSummary {
        root: root.to_path_buf(),
        size: spec.size,
        classes: GLYPH_CLASSES
            .iter()
            .map(|c| (c.to_string(), spec.per_class))
            .collect(),
        images: files.len(),
        fingerprint: folder_fingerprint(files),
    }
}

/// Writes the glyphs as `dir/<class>/<nnnn>.png` (8-bit grey PNG, `nnnn`
/// counting from 0000 within each class), readable by
/// [`crate::data::image::read_image_folder`]. Each file is written
/// atomically. `dir` must not exist yet or be empty, so no stale images mix in.
pub fn write_glyph_folder(dir: &Path, spec: &GlyphSpec) -> Result<GlyphSummary> {
    let files = glyph_png_files(spec)?;
    let has_entries = match std::fs::read_dir(dir) {
        Ok(mut entries) => entries.next().is_some(),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => false,
        Err(e) => return Err(Error::io(dir, e)),
    };
    if has_entries {
        return Err(Error::input(format!(
            "{}: the folder is not empty; write the glyphs to a new or empty folder",
            dir.display()
        )));
    }
    for class in GLYPH_CLASSES {
        let folder = dir.join(class);
        std::fs::create_dir_all(&folder).map_err(|e| Error::io(&folder, e))?;
    }
    for (relative, bytes) in &files {
        crate::fsio::write_atomic(&dir.join(relative), bytes)?;
    }
    Ok(summary(dir, spec, &files))
}
