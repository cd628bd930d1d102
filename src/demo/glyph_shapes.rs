//! The invented glyph classes as strokes, rings and dots in a unit frame.
//!
//! Coordinates lie in about [−1, 1]², x to the right, y downwards. Every
//! control point is moved by a small random offset, so no two glyphs of a
//! class have quite the same shape.

use super::draws::uniform;
use crate::genome::SeededRng;

/// The glyph classes, in byte order of their names (the order the image
/// folder loader gives them).
pub const GLYPH_CLASSES: [&str; 8] = [
    "bars", "chevron", "corner", "cross", "dot", "ring", "saltire", "stroke",
];

/// One drawing primitive of a glyph, in unit-frame coordinates.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Primitive {
    /// A straight stroke between two points.
    Segment([f64; 2], [f64; 2]),
    /// A circle outline of the given radius.
    Ring([f64; 2], f64),
    /// A filled disk of the given radius.
    Disk([f64; 2], f64),
}

impl Primitive {
    /// Distance from `p` to the primitive's ink (0 inside a disk), in unit-frame units.
    pub(crate) fn distance(&self, p: [f64; 2]) -> f64 {
        match *self {
            Primitive::Segment(a, b) => segment_distance(p, a, b),
            Primitive::Ring(c, r) => (length(sub(p, c)) - r).abs(),
            Primitive::Disk(c, r) => (length(sub(p, c)) - r).max(0.0),
        }
    }
}

/// Draws jittered control points and proportions for one glyph.
struct Jitter<'a> {
    rng: &'a mut SeededRng,
    wobble: f64,
}

impl Jitter<'_> {
    /// The point (x, y) moved by up to ±`wobble` along each axis.
    fn point(&mut self, x: f64, y: f64) -> [f64; 2] {
        let dx = uniform(self.rng, -self.wobble, self.wobble);
        let dy = uniform(self.rng, -self.wobble, self.wobble);
        [x + dx, y + dy]
    }

    /// A proportion drawn uniformly from `base ± spread`.
    fn vary(&mut self, base: f64, spread: f64) -> f64 {
        uniform(self.rng, base - spread, base + spread)
    }
}

/// The primitives of one glyph of class `class` (an index into
/// [`GLYPH_CLASSES`]), with its control points jittered by up to
/// ±`wobble` and its class-specific proportions drawn from `rng`.
pub(crate) fn glyph_primitives(class: usize, wobble: f64, rng: &mut SeededRng) -> Vec<Primitive> {
    use Primitive::*;
    let mut j = Jitter { rng, wobble };
    match GLYPH_CLASSES[class] {
        "bars" => {
            let gap = j.vary(0.32, 0.1);
            vec![
                Segment(j.point(-0.7, -gap), j.point(0.7, -gap)),
                Segment(j.point(-0.7, gap), j.point(0.7, gap)),
            ]
        }
        "chevron" => {
            let spread = j.vary(0.62, 0.15);
            let tip = j.point(0.0, 0.55);
            vec![
                Segment(j.point(-spread, -0.55), tip),
                Segment(tip, j.point(spread, -0.55)),
            ]
        }
        "corner" => {
            let knee = j.point(-0.55, 0.6);
            vec![
                Segment(j.point(-0.55, -0.7), knee),
                Segment(knee, j.point(0.65, 0.6)),
            ]
        }
        "cross" => vec![
            Segment(j.point(-0.75, 0.0), j.point(0.75, 0.0)),
            Segment(j.point(0.0, -0.75), j.point(0.0, 0.75)),
        ],
        "dot" => {
            let radius = j.vary(0.3, 0.08);
            vec![Disk(j.point(0.0, 0.0), radius)]
        }
        "ring" => {
            let radius = j.vary(0.6, 0.1);
            vec![Ring(j.point(0.0, 0.0), radius)]
        }
        "saltire" => vec![
            Segment(j.point(-0.65, -0.65), j.point(0.65, 0.65)),
            Segment(j.point(-0.65, 0.65), j.point(0.65, -0.65)),
        ],
        _ => vec![Segment(j.point(-0.65, 0.7), j.point(0.65, -0.7))],
    }
}

fn sub(a: [f64; 2], b: [f64; 2]) -> [f64; 2] {
    [a[0] - b[0], a[1] - b[1]]
}

fn dot(a: [f64; 2], b: [f64; 2]) -> f64 {
    a[0] * b[0] + a[1] * b[1]
}

fn length(a: [f64; 2]) -> f64 {
    dot(a, a).sqrt()
}

/// Distance from `p` to the segment `a`–`b`.
fn segment_distance(p: [f64; 2], a: [f64; 2], b: [f64; 2]) -> f64 {
    let ab = sub(b, a);
    let ap = sub(p, a);
    let len2 = dot(ab, ab);
    let t = if len2 > 0.0 {
        (dot(ap, ab) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    length(sub(ap, [ab[0] * t, ab[1] * t]))
}
