//! Reading the IDX format (the binary layout of LeCun, Cortes & Burges'
//! MNIST files): a big-endian magic number, big-endian u32 dimensions, then
//! the values.

use std::path::Path;

use sha2::{Digest, Sha256};

use crate::data::image::shape::MAX_IMAGE_VALUES;
use crate::data::image::{ImageShape, ImageTable};
use crate::{Error, Result};

/// Magic number of an IDX file of u8 values with 3 dimensions (images N, H, W).
pub const IDX_IMAGES_MAGIC: u32 = 0x0000_0803;
/// Magic number of an IDX file of u8 values with 1 dimension (labels N).
pub const IDX_LABELS_MAGIC: u32 = 0x0000_0801;

/// Reads an IDX images file (magic `0x00000803`, u8 pixels, dimensions N, H,
/// W) and its IDX labels file (magic `0x00000801`, u8 labels, dimension N).
///
/// Images are grayscale (1 channel), in file order; image `i` has source
/// `"record i+1"` and the label text of its byte value (`"0"`..`"255"`).
/// Fingerprint: SHA-256 of the images file's bytes followed by the labels
/// file's bytes. Errors (bad input, naming the file): a wrong magic number
/// (shown in hex with the expected one), a short header, a payload shorter
/// or longer than the dimensions say (expected and found byte counts),
/// different image and label counts, and sizes over 2^31 bytes.
pub fn read_idx(images_path: &Path, labels_path: &Path) -> Result<ImageTable> {
    let image_bytes = read_guarded(images_path)?;
    let label_bytes = read_guarded(labels_path)?;
    let (image_dims, pixels) = parse_idx(images_path, &image_bytes, IDX_IMAGES_MAGIC, "images")?;
    let (label_dims, labels) = parse_idx(labels_path, &label_bytes, IDX_LABELS_MAGIC, "labels")?;
    let (count, height, width) = (image_dims[0], image_dims[1], image_dims[2]);
    if label_dims[0] != count {
        return Err(Error::input(format!(
            "{} holds {count} images but {} holds {} labels; the two files must describe the \
             same records (check that they belong together, e.g. both training files)",
            images_path.display(),
            labels_path.display(),
            label_dims[0]
        )));
    }
    let shape = ImageShape::new(height, width, 1).map_err(|e| in_file(images_path, e))?;
    let mut hasher = Sha256::new();
    hasher.update(&image_bytes);
    hasher.update(&label_bytes);
    Ok(ImageTable {
        shape,
        pixels: pixels.iter().map(|&v| f32::from(v)).collect(),
        label_texts: labels.iter().map(|v| v.to_string()).collect(),
        sources: (1..=count).map(|i| format!("record {i}")).collect(),
        fingerprint: hasher
            .finalize()
            .iter()
            .map(|b| format!("{b:02x}"))
            .collect(),
        path: images_path.to_path_buf(),
        label_source: format!("IDX labels file {}", labels_path.display()),
        warnings: Vec::new(),
        resized_to: None,
    })
}

/// Reads a whole file after checking it is not absurdly large.
fn read_guarded(path: &Path) -> Result<Vec<u8>> {
    let size = std::fs::metadata(path)
        .map_err(|e| Error::io(path, e))?
        .len();
    if size > MAX_IMAGE_VALUES + 1024 {
        return Err(Error::input(format!(
            "{}: the file is {size} bytes; IDX files over {MAX_IMAGE_VALUES} bytes are refused \
             (split the data into smaller files)",
            path.display()
        )));
    }
    std::fs::read(path).map_err(|e| Error::io(path, e))
}

/// Checks the magic number and sizes; returns the dimensions and the payload.
fn parse_idx<'a>(
    path: &Path,
    bytes: &'a [u8],
    magic: u32,
    what: &str,
) -> Result<(Vec<usize>, &'a [u8])> {
    let file = path.display();
    let n_dims = (magic & 0xFF) as usize;
    let header = 4 + 4 * n_dims;
    let word = |i: usize| {
        bytes
            .get(i..i + 4)
            .and_then(|b| b.try_into().ok())
            .map(u32::from_be_bytes)
    };
    let found = word(0).ok_or_else(|| short_header(path, bytes.len(), header))?;
    if found != magic {
        return Err(Error::input(format!(
            "{file}: magic number {found:#010x}, expected {magic:#010x} for an IDX {what} file \
             (u8 values, {n_dims} dimension(s)){}",
            magic_hint(found)
        )));
    }
    let dims: Vec<usize> = (0..n_dims)
        .map(|d| word(4 + 4 * d).map(|v| v as usize))
        .collect::<Option<_>>()
        .ok_or_else(|| short_header(path, bytes.len(), header))?;
    let expected = dims
        .iter()
        .try_fold(1u64, |acc, &d| acc.checked_mul(d as u64))
        .filter(|&n| n <= MAX_IMAGE_VALUES)
        .ok_or_else(|| {
            Error::input(format!(
                "{file}: the dimensions {dims:?} describe more than {MAX_IMAGE_VALUES} bytes; \
                 the header is probably damaged"
            ))
        })?;
    if dims.contains(&0) {
        return Err(Error::input(format!(
            "{file}: the dimensions {dims:?} include a zero; the file holds no {what}"
        )));
    }
    let payload = &bytes[header..];
    if payload.len() as u64 != expected {
        let problem = if (payload.len() as u64) < expected {
            "the file is truncated"
        } else {
            "the file has extra bytes at the end"
        };
        return Err(Error::input(format!(
            "{file}: {problem}: the dimensions {dims:?} need {expected} bytes after the \
             {header}-byte header, found {}; download or copy the file again",
            payload.len()
        )));
    }
    Ok((dims, payload))
}

/// Error for a file shorter than its header.
fn short_header(path: &Path, len: usize, header: usize) -> Error {
    Error::input(format!(
        "{}: the file is {len} bytes long, too short for the {header}-byte IDX header",
        path.display()
    ))
}

/// A hint for magic numbers that point at a common mix-up.
fn magic_hint(found: u32) -> &'static str {
    match found {
        IDX_IMAGES_MAGIC => "; this is an images file: are the two paths swapped?",
        IDX_LABELS_MAGIC => "; this is a labels file: are the two paths swapped?",
        m if m >> 16 == 0x1f8b => "; the file looks gzip-compressed: unpack it first",
        _ => "",
    }
}

/// Prefixes the file name to a bad-input message.
fn in_file(path: &Path, error: Error) -> Error {
    match error {
        Error::Input(message) => Error::input(format!("{}: {message}", path.display())),
        other => other,
    }
}
