//! Reading a folder tree of PNG/JPEG images, one sub-folder per class.

use std::path::Path;

use ::image::imageops::FilterType;
use ::image::{DynamicImage, ImageFormat};
use sha2::{Digest, Sha256};

use crate::data::image::folder_scan::{ignored_warning, list_image_folder, ImageFile};
use crate::data::image::{ImageShape, ImageTable};
use crate::{Error, Result};

/// How to read an image folder.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ImageFolderOptions {
    /// Channels to convert every image to (1 grayscale, 3 RGB); `None` keeps
    /// the channel count of the first image (after dropping alpha) and
    /// refuses images with another count.
    pub channels: Option<u8>,
    /// `(height, width)` to resize every image of another size to; `None`
    /// refuses images whose size differs from the first image's.
    pub resize: Option<(u32, u32)>,
}

/// Reads `root`: one sub-folder per class (class name = folder name) holding
/// PNG or JPEG files (`.png`, `.jpg`, `.jpeg` in any letter case).
///
/// Order: class folders sorted by name, then files sorted by name (byte
/// order), so the result is the same on every system. Other files and nested
/// folders are skipped and counted in a warning. Alpha channels are dropped;
/// 16-bit images are reduced to 8 bits, so pixel values are 0..255; RGB is
/// turned into gray (Rec. 709 weights) only when `channels` asks for 1.
/// Resizing uses bilinear interpolation ([`FilterType::Triangle`]).
///
/// Fingerprint: SHA-256 over every image file in load order, each fed as its
/// relative path `class/file` (UTF-8), a zero byte, its length in bytes as a
/// big-endian u64, and its bytes.
///
/// Errors (bad input, naming the folder or file): no class folders, a class
/// folder without images, a non-UTF-8 name, a file the decoder refuses (with
/// the decoder's message), a channel count or size that differs from the
/// first image's (naming both files and sizes).
pub fn read_image_folder(root: &Path, options: &ImageFolderOptions) -> Result<ImageTable> {
    let target_channels = match options.channels {
        None => None,
        Some(c @ (1 | 3)) => Some(c as usize),
        Some(other) => {
            return Err(Error::input(format!(
                "image channels {other}: only 1 (grayscale) or 3 (RGB) are supported"
            )))
        }
    };
    if let Some((h, w)) = options.resize {
        ImageShape::new(h as usize, w as usize, 1)?;
    }
    let listing = list_image_folder(root)?;
    let mut hasher = Sha256::new();
    let mut table = ImageTable {
        shape: ImageShape {
            height: 0,
            width: 0,
            channels: 0,
        },
        pixels: Vec::new(),
        label_texts: Vec::new(),
        sources: Vec::new(),
        fingerprint: String::new(),
        path: root.to_path_buf(),
        label_source: "class folder names".to_string(),
        warnings: ignored_warning(&listing.ignored).into_iter().collect(),
        resized_to: options.resize,
    };
    let mut first: Option<(String, ImageShape)> = None;
    for file in &listing.files {
        let bytes = std::fs::read(&file.path).map_err(|e| Error::io(&file.path, e))?;
        hasher.update(file.relative.as_bytes());
        hasher.update([0u8]);
        hasher.update((bytes.len() as u64).to_be_bytes());
        hasher.update(&bytes);
        let decoded = decode(file, &bytes)?;
        let channels = target_channels.unwrap_or_else(|| channels_without_alpha(&decoded));
        let (hwc, height, width) = to_channels(decoded, channels, options.resize);
        let shape = ImageShape::new(height as usize, width as usize, channels)?;
        let source = file.path.display().to_string();
        match &first {
            None => first = Some((source.clone(), shape)),
            Some((first_source, expected)) => check_same(&source, shape, first_source, *expected)?,
        }
        let start = table.pixels.len();
        table.pixels.resize(start + shape.n_values(), 0.0);
        let floats: Vec<f32> = hwc.iter().map(|&v| f32::from(v)).collect();
        shape.hwc_to_chw(&floats, &mut table.pixels[start..]);
        table.shape = shape;
        table.label_texts.push(file.class.clone());
        table.sources.push(source);
    }
    table.fingerprint = hasher
        .finalize()
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect();
    Ok(table)
}

/// Decodes one file with the decoder its extension names.
fn decode(file: &ImageFile, bytes: &[u8]) -> Result<DynamicImage> {
    let format = ImageFormat::from_path(&file.path).map_err(|e| {
        Error::input(format!(
            "{}: unknown image format: {e}",
            file.path.display()
        ))
    })?;
    ::image::load_from_memory_with_format(bytes, format).map_err(|e| {
        Error::input(format!(
            "{}: cannot read the file as {format:?}: {e}; replace the file or remove it from \
             the class folder",
            file.path.display()
        ))
    })
}

/// Channel count after dropping alpha: 1 for gray, 3 for colour.
fn channels_without_alpha(image: &DynamicImage) -> usize {
    let color = image.color();
    usize::from(color.channel_count()) - usize::from(color.has_alpha())
}

/// The image as 8-bit HWC values with `channels` (1, else 3) channels,
/// resized with bilinear interpolation ([`FilterType::Triangle`]) when
/// `resize` asks for another size; returns the values, height and width.
/// Training folders and the images `predict` reads go through this one
/// function, so both are resampled alike.
pub(crate) fn to_channels(
    image: DynamicImage,
    channels: usize,
    resize: Option<(u32, u32)>,
) -> (Vec<u8>, u32, u32) {
    let image = match resize {
        Some((h, w)) if (image.height(), image.width()) != (h, w) => match channels {
            1 => DynamicImage::ImageLuma8(::image::imageops::resize(
                &image.to_luma8(),
                w,
                h,
                FilterType::Triangle,
            )),
            _ => DynamicImage::ImageRgb8(::image::imageops::resize(
                &image.to_rgb8(),
                w,
                h,
                FilterType::Triangle,
            )),
        },
        _ => image,
    };
    let (height, width) = (image.height(), image.width());
    let values = if channels == 1 {
        image.into_luma8().into_raw()
    } else {
        image.into_rgb8().into_raw()
    };
    (values, height, width)
}

/// Refuses an image whose shape differs from the first image's.
fn check_same(
    source: &str,
    shape: ImageShape,
    first_source: &str,
    expected: ImageShape,
) -> Result<()> {
    if shape.channels != expected.channels {
        return Err(Error::input(format!(
            "{source}: has {} channel(s) but the first image {first_source} has {}; convert \
             the images to one colour mode or choose the channel count (1 gray, 3 RGB)",
            shape.channels, expected.channels
        )));
    }
    if (shape.height, shape.width) != (expected.height, expected.width) {
        return Err(Error::input(format!(
            "{source}: is {}x{} (height x width) but the first image {first_source} is {}x{}; \
             all images must have one size: resize them or ask for resizing",
            shape.height, shape.width, expected.height, expected.width
        )));
    }
    Ok(())
}
