//! Listing an image folder tree: class folders and their image files, sorted.

use std::path::{Path, PathBuf};

use crate::data::cells::count_of;
use crate::{Error, Result};

/// File extensions read as images (compared without letter case).
/// (Public through `crate::data::image`.)
pub const IMAGE_EXTENSIONS: [&str; 3] = ["png", "jpg", "jpeg"];

/// One image file found in a class folder.
#[derive(Debug, Clone)]
pub(crate) struct ImageFile {
    /// Full path.
    pub path: PathBuf,
    /// `class/file` with `/` as separator (the fingerprint uses it).
    pub relative: String,
    /// The class (folder) name.
    pub class: String,
}

/// The images of a folder tree in load order, and what was skipped.
#[derive(Debug, Default)]
pub(crate) struct FolderListing {
    /// Images ordered by class folder name, then by file name (byte order).
    pub files: Vec<ImageFile>,
    /// Files and folders that are not images in a class folder.
    pub ignored: Vec<PathBuf>,
}

/// Lists `root`: one sub-folder per class holding PNG/JPEG files.
pub(crate) fn list_image_folder(root: &Path) -> Result<FolderListing> {
    let metadata = std::fs::metadata(root).map_err(|e| Error::io(root, e))?;
    if !metadata.is_dir() {
        return Err(Error::input(format!(
            "{}: is not a folder; an image folder holds one sub-folder per class with PNG or \
             JPEG files inside",
            root.display()
        )));
    }
    let mut listing = FolderListing::default();
    let mut classes = Vec::new();
    for (name, path, is_dir) in sorted_entries(root)? {
        if is_dir {
            classes.push((name, path));
        } else {
            listing.ignored.push(path);
        }
    }
    if classes.is_empty() {
        return Err(Error::input(format!(
            "{}: no class folders found; put the images of each class in a sub-folder named \
             after the class (e.g. {}/cat/001.png)",
            root.display(),
            root.display()
        )));
    }
    for (class, folder) in classes {
        let mut found = 0;
        for (name, path, is_dir) in sorted_entries(&folder)? {
            if is_dir || !is_image_name(&name) {
                listing.ignored.push(path);
                continue;
            }
            found += 1;
            listing.files.push(ImageFile {
                path,
                relative: format!("{class}/{name}"),
                class: class.clone(),
            });
        }
        if found == 0 {
            return Err(Error::input(format!(
                "{}: the class folder '{class}' holds no PNG or JPEG files (extensions {}); \
                 add images or remove the folder",
                folder.display(),
                IMAGE_EXTENSIONS.join(", ")
            )));
        }
    }
    Ok(listing)
}

/// The warning for ignored entries, if any.
pub(crate) fn ignored_warning(ignored: &[PathBuf]) -> Option<String> {
    let first = ignored.first()?;
    Some(format!(
        "ignored {} that {} not a PNG or JPEG image in a class folder (first: {})",
        count_of(ignored.len(), "entry"),
        if ignored.len() == 1 { "is" } else { "are" },
        first.display()
    ))
}

/// True for names ending in one of [`IMAGE_EXTENSIONS`], in any letter case.
fn is_image_name(name: &str) -> bool {
    Path::new(name)
        .extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| IMAGE_EXTENSIONS.iter().any(|x| e.eq_ignore_ascii_case(x)))
}

/// Entries of `folder` as (name, path, is folder), sorted by name; refuses non-UTF-8 names.
fn sorted_entries(folder: &Path) -> Result<Vec<(String, PathBuf, bool)>> {
    let mut entries = Vec::new();
    let reader = std::fs::read_dir(folder).map_err(|e| Error::io(folder, e))?;
    for entry in reader {
        let entry = entry.map_err(|e| Error::io(folder, e))?;
        let path = entry.path();
        let name = entry.file_name().into_string().map_err(|_| {
            Error::input(format!(
                "{}: the name is not valid UTF-8; rename it (class and file names must be text)",
                path.display()
            ))
        })?;
        let is_dir = std::fs::metadata(&path)
            .map_err(|e| Error::io(&path, e))?
            .is_dir();
        entries.push((name, path, is_dir));
    }
    entries.sort_by(|a, b| a.0.cmp(&b.0));
    Ok(entries)
}
