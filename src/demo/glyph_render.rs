//! Drawing one glyph: a jittered pose, anti-aliased strokes, then contrast
//! changes, blur, noise and speckles.

use ::image::codecs::png::PngEncoder;
use ::image::{ExtendedColorType, ImageEncoder};

use super::draws::{approx_normal, uniform, unit};
use super::glyph_shapes::{glyph_primitives, Primitive};
use crate::genome::SeededRng;
use crate::{Error, Result};

/// Largest control-point jitter, in unit-frame units.
const WOBBLE: f64 = 0.08;
/// Largest rotation parameter `t = tan(θ/2)` (about ±19°).
const MAX_TURN: f64 = 0.17;
/// Speckles (single stray pixels) drawn per glyph; each is kept with chance 1/3.
const SPECKLES: usize = 2;

/// Draws one `size`×`size` grey glyph of class `class`; returns the pixels
/// row by row (0 black … 255 white; ink is bright). `noise` is the largest
/// standard deviation of the pixel noise, in grey levels.
pub(crate) fn render_glyph(class: usize, size: usize, noise: f64, rng: &mut SeededRng) -> Vec<u8> {
    let primitives = glyph_primitives(class, WOBBLE, rng);
    let px = size as f64 / 12.0;
    let scale = uniform(rng, 0.75, 1.05) * 0.375 * size as f64;
    let t = uniform(rng, -MAX_TURN, MAX_TURN);
    // Rotation from the half-angle tangent: exact arithmetic, no sin/cos.
    let (cos, sin) = ((1.0 - t * t) / (1.0 + t * t), 2.0 * t / (1.0 + t * t));
    let centre_x = (size as f64 - 1.0) / 2.0 + uniform(rng, -1.5, 1.5) * px;
    let centre_y = (size as f64 - 1.0) / 2.0 + uniform(rng, -1.5, 1.5) * px;
    let half_width = uniform(rng, 0.5, 0.9) * px;
    let ink = |x: f64, y: f64| {
        let (vx, vy) = ((x - centre_x) / scale, (y - centre_y) / scale);
        let q = [cos * vx + sin * vy, -sin * vx + cos * vy];
        let d = primitives
            .iter()
            .map(|p: &Primitive| p.distance(q))
            .fold(f64::INFINITY, f64::min);
        (half_width + 0.5 - d * scale).clamp(0.0, 1.0)
    };
    let background = uniform(rng, 5.0, 60.0);
    let foreground = uniform(rng, 160.0, 250.0);
    let mut image = vec![0.0f64; size * size];
    for (i, value) in image.iter_mut().enumerate() {
        let (x, y) = ((i % size) as f64, (i / size) as f64);
        let coverage = [(-0.25, -0.25), (0.25, -0.25), (-0.25, 0.25), (0.25, 0.25)]
            .iter()
            .map(|(dx, dy)| ink(x + dx, y + dy))
            .sum::<f64>()
            / 4.0;
        *value = background + (foreground - background) * coverage;
    }
    let blur = uniform(rng, 0.0, 0.8);
    let blurred = binomial_blur(&image, size);
    let noise_sd = uniform(rng, 0.3, 1.0) * noise;
    for (value, soft) in image.iter_mut().zip(&blurred) {
        *value = (1.0 - blur) * *value + blur * soft + noise_sd * approx_normal(rng);
    }
    let kept = (unit(rng) * 3.0) as usize;
    for k in 0..SPECKLES {
        let at = ((unit(rng) * (size * size) as f64) as usize).min(size * size - 1);
        let value = uniform(rng, 0.0, 255.0);
        if k < kept {
            image[at] = value;
        }
    }
    image
        .iter()
        .map(|v| v.round().clamp(0.0, 255.0) as u8)
        .collect()
}

/// The 3×3 binomial blur (weights 1 2 1 / 2 4 2 / 1 2 1, sum 16), with
/// edge pixels repeated outside the image.
fn binomial_blur(image: &[f64], size: usize) -> Vec<f64> {
    let at = |x: isize, y: isize| {
        let clamp = |v: isize| v.clamp(0, size as isize - 1) as usize;
        image[clamp(y) * size + clamp(x)]
    };
    let mut out = vec![0.0; image.len()];
    for (i, value) in out.iter_mut().enumerate() {
        let (x, y) = ((i % size) as isize, (i / size) as isize);
        let mut sum = 0.0;
        for (dy, wy) in [(-1, 1.0), (0, 2.0), (1, 1.0)] {
            for (dx, wx) in [(-1, 1.0), (0, 2.0), (1, 1.0)] {
                sum += wy * wx * at(x + dx, y + dy);
            }
        }
        *value = sum / 16.0;
    }
    out
}

/// Encodes row-major 8-bit grey pixels of a `size`×`size` image as PNG.
pub(crate) fn encode_png(pixels: &[u8], size: usize) -> Result<Vec<u8>> {
    let side = u32::try_from(size).map_err(|_| Error::internal("glyph size beyond u32"))?;
    let mut png = Vec::new();
    PngEncoder::new(&mut png)
        .write_image(pixels, side, side, ExtendedColorType::L8)
        .map_err(|e| Error::internal(format!("PNG encoder: {e}")))?;
    Ok(png)
}
