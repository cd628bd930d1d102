//! Seeded image augmentation for training batches: small shifts and mirroring.

use rand::Rng;

use crate::data::image::ImageShape;
use crate::{Error, Result};

/// Augments every CHW image of the batch `x` in place, drawing from `rng`.
///
/// Per image, in this order: with `flip`, a horizontal mirror with
/// probability 1/2 (one draw); with `shift`, a translation by `dy` rows and
/// `dx` columns, each drawn uniformly from {−1, 0, 1} (two draws), the
/// uncovered border filled with 0 — after standardisation that is the
/// training mean of the channel. All channels of an image move together.
/// The same `rng` state gives the same result; images are visited in order.
/// `x.len()` must be a multiple of `shape.n_values()` (an internal error
/// otherwise).
pub fn augment_batch<R: Rng + ?Sized>(
    x: &mut [f32],
    shape: &ImageShape,
    rng: &mut R,
    shift: bool,
    flip: bool,
) -> Result<()> {
    let n = shape.n_values();
    if n == 0 || !x.len().is_multiple_of(n) {
        return Err(Error::internal(format!(
            "augment_batch: {} values are not whole images of shape {shape}",
            x.len()
        )));
    }
    for image in x.chunks_exact_mut(n) {
        if flip && rng.gen_bool(0.5) {
            flip_horizontal(image, shape);
        }
        if shift {
            let dy = rng.gen_range(-1i64..=1);
            let dx = rng.gen_range(-1i64..=1);
            shift_image(image, shape, dy, dx);
        }
    }
    Ok(())
}

/// Mirrors one CHW image left to right (every row of every channel reversed).
pub fn flip_horizontal(image: &mut [f32], shape: &ImageShape) {
    for row in image.chunks_exact_mut(shape.width) {
        row.reverse();
    }
}

/// Moves one CHW image `dy` rows down and `dx` columns right (negative: up,
/// left); the value at (r, c) becomes the old value at (r − dy, c − dx), or
/// 0 where that lies outside the image.
pub fn shift_image(image: &mut [f32], shape: &ImageShape, dy: i64, dx: i64) {
    let (height, width) = (shape.height as i64, shape.width as i64);
    for plane in image.chunks_exact_mut(shape.plane()) {
        let old = plane.to_vec();
        for r in 0..height {
            for c in 0..width {
                let (from_r, from_c) = (r - dy, c - dx);
                let inside = (0..height).contains(&from_r) && (0..width).contains(&from_c);
                plane[(r * width + c) as usize] = if inside {
                    old[(from_r * width + from_c) as usize]
                } else {
                    0.0
                };
            }
        }
    }
}
