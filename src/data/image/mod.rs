//! Image datasets: loading images from a class-folder tree, IDX files or a
//! pixel CSV, splitting them like tables, and per-channel standardisation.
//!
//! Flow: a loader ([`read_image_folder`], [`read_idx`], [`read_pixel_csv`])
//! → [`ImageTable`] (raw values, CHW per image) → [`prepare_images`] (the
//! seeded stratified split of [`crate::data::stratified_split`], statistics
//! from the training images only) → [`PreparedImages`]. In a
//! [`crate::data::Dataset`] row an image is stored CHW: channel by channel,
//! each row by row, `n_features = C·H·W`. [`augment_batch`] perturbs
//! training batches; the writers produce test and demo data.

mod augment;
mod folder;
mod folder_scan;
mod folder_write;
mod idx;
mod idx_write;
mod pixel_csv;
mod prepare;
mod preprocess;
mod shape;
mod table;

pub use augment::{augment_batch, flip_horizontal, shift_image};
pub(crate) use folder::to_channels;
pub use folder::{read_image_folder, ImageFolderOptions};
pub use folder_scan::IMAGE_EXTENSIONS;
pub use folder_write::write_image_folder;
pub use idx::{read_idx, IDX_IMAGES_MAGIC, IDX_LABELS_MAGIC};
pub use idx_write::write_idx;
pub use pixel_csv::read_pixel_csv;
pub use prepare::{prepare_images, PreparedImages};
pub use preprocess::ImagePreprocessor;
pub use shape::{ImageShape, MAX_IMAGE_VALUES};
pub use table::ImageTable;
