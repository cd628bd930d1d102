//! The shape of one image and the pixel layouts it is stored in.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::{Error, Result};

/// Most values one image may hold (`height · width · channels`): 2^31.
pub const MAX_IMAGE_VALUES: u64 = 1 << 31;

/// Height, width and channel count of every image of a dataset.
///
/// Written and parsed as `HxWxC` (height, width, channels), e.g. `8x8x1` for
/// the grayscale digits or `32x32x3` for small colour images. In a
/// [`crate::data::Dataset`] row an image is stored channel-major (CHW):
/// all pixels of channel 0 row by row, then channel 1, and so on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct ImageShape {
    /// Rows of pixels.
    pub height: usize,
    /// Columns of pixels.
    pub width: usize,
    /// Values per pixel (1 grayscale, 3 RGB).
    pub channels: usize,
}

impl ImageShape {
    /// A shape with every dimension at least 1 and at most [`MAX_IMAGE_VALUES`] values.
    pub fn new(height: usize, width: usize, channels: usize) -> Result<Self> {
        let shape = ImageShape {
            height,
            width,
            channels,
        };
        if height == 0 || width == 0 || channels == 0 {
            return Err(Error::input(format!(
                "image shape {shape}: every dimension must be at least 1"
            )));
        }
        let values = (height as u64)
            .checked_mul(width as u64)
            .and_then(|v| v.checked_mul(channels as u64));
        match values {
            Some(v) if v <= MAX_IMAGE_VALUES => Ok(shape),
            _ => Err(Error::input(format!(
                "image shape {shape}: more than {MAX_IMAGE_VALUES} values per image; \
                 check the dimensions"
            ))),
        }
    }

    /// Parses `HxWxC` (`x` or `X` between three positive integers), e.g. `28x28x1`.
    pub fn parse(text: &str) -> Result<Self> {
        let bad = |why: &str| {
            Error::input(format!(
                "image shape '{text}' (--image-shape): {why}; write HEIGHTxWIDTHxCHANNELS, \
                 e.g. 8x8x1 for grayscale or 32x32x3 for RGB"
            ))
        };
        let parts: Vec<&str> = text.trim().split(['x', 'X']).collect();
        if parts.len() != 3 {
            return Err(bad(&format!(
                "expected 3 numbers separated by 'x', found {}",
                parts.len()
            )));
        }
        let mut dims = [0usize; 3];
        for ((dim, part), name) in dims
            .iter_mut()
            .zip(&parts)
            .zip(["height", "width", "channels"])
        {
            *dim = match part.trim().parse::<usize>() {
                Ok(value) if value > 0 => value,
                _ => {
                    return Err(bad(&format!(
                        "the {name} '{part}' is not a positive integer"
                    )))
                }
            };
        }
        ImageShape::new(dims[0], dims[1], dims[2])
    }

    /// Values per image: `height · width · channels`.
    pub fn n_values(&self) -> usize {
        self.height * self.width * self.channels
    }

    /// Pixels per channel: `height · width`.
    pub fn plane(&self) -> usize {
        self.height * self.width
    }

    /// Position in a CHW image of the value at `row`, `column`, `channel`.
    pub fn chw_index(&self, row: usize, column: usize, channel: usize) -> usize {
        channel * self.plane() + row * self.width + column
    }

    /// One image reordered from HWC (pixel-major, channels interleaved) to CHW.
    pub fn hwc_to_chw<T: Copy>(&self, hwc: &[T], chw: &mut [T]) {
        for (position, &value) in hwc.iter().enumerate().take(self.n_values()) {
            let channel = position % self.channels;
            let pixel = position / self.channels;
            chw[channel * self.plane() + pixel] = value;
        }
    }

    /// One image reordered from CHW to HWC (the order of PNG rows).
    pub fn chw_to_hwc<T: Copy>(&self, chw: &[T], hwc: &mut [T]) {
        for (position, &value) in chw.iter().enumerate().take(self.n_values()) {
            let channel = position / self.plane();
            let pixel = position % self.plane();
            hwc[pixel * self.channels + channel] = value;
        }
    }
}

impl fmt::Display for ImageShape {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}x{}x{}", self.height, self.width, self.channels)
    }
}

impl FromStr for ImageShape {
    type Err = Error;

    fn from_str(text: &str) -> Result<Self> {
        ImageShape::parse(text)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn layouts_round_trip() {
        let shape = ImageShape::new(2, 3, 3).expect("valid shape");
        let hwc: Vec<usize> = (0..18).collect();
        let mut chw = vec![0; 18];
        shape.hwc_to_chw(&hwc, &mut chw);
        // HWC position of (row 1, column 2, channel 1) is (1*3+2)*3+1 = 16.
        assert_eq!(chw[shape.chw_index(1, 2, 1)], 16);
        let mut back = vec![0; 18];
        shape.chw_to_hwc(&chw, &mut back);
        assert_eq!(back, hwc);
    }

    #[test]
    fn parse_accepts_hxwxc_only() {
        let shape = ImageShape::parse("28X28x1").expect("valid text");
        assert_eq!((shape.height, shape.width, shape.channels), (28, 28, 1));
        assert_eq!(shape.to_string(), "28x28x1");
        for bad in [
            "",
            "8x8",
            "8x8x0",
            "8x-1x1",
            "axbxc",
            "8x8x1x1",
            "99999x99999x9",
        ] {
            assert!(ImageShape::parse(bad).is_err(), "{bad:?}");
        }
    }
}
