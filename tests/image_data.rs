//! Image datasets: loaders, writers, preparation and augmentation.
//!
//! Outside check: tests/data/digits.csv is the UCI "Optical Recognition of
//! Handwritten Digits" test part as shipped in scikit-learn 1.9.1
//! (`digits.csv.gz`); its figures (row count, class counts, per-pixel means,
//! minimum and maximum, SHA-256) come from tests/data/digits.stats.json,
//! computed with NumPy/pandas (provenance in tests/data/README.md).

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use gemmule::data::image::{
    augment_batch, flip_horizontal, prepare_images, read_idx, read_image_folder, read_pixel_csv,
    shift_image, write_idx, write_image_folder, ImageFolderOptions, ImageShape, ImageTable,
};
use gemmule::data::{prepare, stratified_split, CsvOptions, SplitFractions};
use gemmule::Error;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use serde_json::Value;

fn data_file(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
}

fn digits_stats() -> Value {
    let text = std::fs::read_to_string(data_file("digits.stats.json"))
        .expect("stats file is part of the repository");
    serde_json::from_str(&text).expect("stats file is valid JSON")
}

fn digits_shape() -> ImageShape {
    ImageShape::parse("8x8x1").expect("valid shape text")
}

fn load_digits() -> ImageTable {
    read_pixel_csv(
        &data_file("digits.csv"),
        digits_shape(),
        &CsvOptions::default(),
    )
    .expect("the digits CSV loads as 8x8x1 images")
}

/// Equal within 1e-9 relative (exact for zero).
fn close(actual: f64, expected: f64) -> bool {
    actual == expected || (actual - expected).abs() <= 1e-9 * actual.abs().max(expected.abs())
}

/// The message of a bad-input error; fails the test for any other outcome.
fn input_message<T: std::fmt::Debug>(result: Result<T, Error>) -> String {
    match result {
        Err(error @ Error::Input(_)) => {
            assert_eq!(error.exit_code(), 2);
            error.to_string()
        }
        other => panic!("expected a bad-input error, got {other:?}"),
    }
}

/// Image order after a stable sort by label text: the order an image folder is read in.
fn class_order(table: &ImageTable) -> Vec<usize> {
    let mut order: Vec<usize> = (0..table.len()).collect();
    order.sort_by(|&a, &b| table.label_texts[a].cmp(&table.label_texts[b]));
    order
}

fn gray_png(path: &Path, height: u32, width: u32, value: u8) {
    let pixels = vec![value; (height * width) as usize];
    image::GrayImage::from_raw(width, height, pixels)
        .expect("buffer matches the size")
        .save(path)
        .expect("test image is written");
}

fn class_folder(root: &Path, class: &str) -> PathBuf {
    let folder = root.join(class);
    std::fs::create_dir_all(&folder).expect("class folder is created");
    folder
}

// ---------------------------------------------------------------- digits CSV

#[test]
fn digits_csv_matches_the_reference_figures() {
    let stats = digits_stats();
    let table = load_digits();
    assert_eq!(table.len() as u64, stats["rows"].as_u64().expect("rows"));
    assert_eq!(table.len(), 1797);
    assert_eq!(table.shape, digits_shape());
    assert_eq!(
        table.fingerprint,
        stats["csv_sha256"].as_str().expect("sha")
    );
    assert_eq!(table.sources[0], "line 2");

    let mut counts: BTreeMap<String, u64> = BTreeMap::new();
    for label in &table.label_texts {
        *counts.entry(label.clone()).or_default() += 1;
    }
    let expected: BTreeMap<String, u64> = stats["class_counts"]
        .as_object()
        .expect("class counts")
        .iter()
        .map(|(name, count)| (name.clone(), count.as_u64().expect("count")))
        .collect();
    assert_eq!(counts, expected);
    assert_eq!(counts.len(), 10);

    assert!(table.pixels.iter().all(|&v| v.fract() == 0.0));
    let min = table.pixels.iter().copied().fold(f32::INFINITY, f32::min);
    let max = table
        .pixels
        .iter()
        .copied()
        .fold(f32::NEG_INFINITY, f32::max);
    assert_eq!((min, max), (0.0, 16.0));

    // Per-pixel means and extremes, column pixel_R_C = CHW position (R, C, channel 0).
    let shape = table.shape;
    for row in 0..8 {
        for column in 0..8 {
            let name = format!("pixel_{row}_{column}");
            let position = shape.chw_index(row, column, 0);
            let values: Vec<f64> = (0..table.len())
                .map(|i| f64::from(table.image(i).expect("image")[position]))
                .collect();
            let mean = values.iter().sum::<f64>() / values.len() as f64;
            let expected = stats["feature_mean"][&name].as_f64().expect("mean");
            assert!(close(mean, expected), "{name}: {mean} vs {expected}");
            let min = values.iter().copied().fold(f64::INFINITY, f64::min);
            let max = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            assert_eq!(Some(min), stats["feature_min"][&name].as_f64(), "{name}");
            assert_eq!(Some(max), stats["feature_max"][&name].as_f64(), "{name}");
        }
    }
}

#[test]
fn pixel_csv_with_channels_is_read_as_interleaved_hwc() {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("rgb.csv");
    // One 1x2 RGB image: pixel (0,0) = (1,2,3), pixel (0,1) = (4,5,6).
    std::fs::write(
        &path,
        "a,b,c,d,e,f,label\n1,2,3,4,5,6,x\n7,8,9,10,11,12,y\n",
    )
    .expect("csv written");
    let shape = ImageShape::parse("1x2x3").expect("shape");
    let table = read_pixel_csv(&path, shape, &CsvOptions::default()).expect("loads");
    assert_eq!(
        table.image(0).expect("image"),
        &[1.0, 4.0, 2.0, 5.0, 3.0, 6.0]
    );
    assert_eq!(table.label_texts, vec!["x", "y"]);
}

// ------------------------------------------------------------- round trips

#[test]
fn png_folder_round_trip_gives_the_csv_tensors_in_class_order() {
    let table = load_digits();
    let dir = tempfile::tempdir().expect("temp dir");
    let root = dir.path().join("digits");
    // Raw values 0..16 are written unscaled as 8-bit gray pixels.
    write_image_folder(&table, &root).expect("folder written");
    assert!(root.join("3").join("000003.png").is_file());

    let loaded = read_image_folder(&root, &ImageFolderOptions::default()).expect("folder loads");
    assert_eq!(loaded.shape, table.shape);
    assert_eq!(loaded.len(), table.len());
    assert!(loaded.warnings.is_empty(), "{:?}", loaded.warnings);
    let order = class_order(&table);
    for (position, &original) in order.iter().enumerate() {
        assert_eq!(loaded.label_texts[position], table.label_texts[original]);
        assert_eq!(
            loaded.image(position),
            table.image(original),
            "image {original}"
        );
    }
    assert_eq!(loaded.fingerprint.len(), 64);
    let again = read_image_folder(&root, &ImageFolderOptions::default()).expect("loads again");
    assert_eq!(again.fingerprint, loaded.fingerprint);
}

#[test]
fn idx_round_trip_gives_the_csv_tensors_in_file_order() {
    let table = load_digits();
    let dir = tempfile::tempdir().expect("temp dir");
    let (images, labels) = (dir.path().join("images.idx"), dir.path().join("labels.idx"));
    write_idx(&table, &images, &labels).expect("IDX written");
    assert_eq!(
        std::fs::metadata(&images).expect("images file").len(),
        16 + 1797 * 64
    );
    assert_eq!(
        std::fs::metadata(&labels).expect("labels file").len(),
        8 + 1797
    );

    let loaded = read_idx(&images, &labels).expect("IDX loads");
    assert_eq!(loaded.shape, table.shape);
    assert_eq!(loaded.pixels, table.pixels);
    assert_eq!(loaded.label_texts, table.label_texts);
    assert_eq!(loaded.sources[0], "record 1");

    let mut bytes = std::fs::read(&images).expect("images bytes");
    bytes.extend(std::fs::read(&labels).expect("labels bytes"));
    assert_eq!(loaded.fingerprint, gemmule::genome::sha256_hex(&bytes));
}

// ------------------------------------------------------------- preparation

#[test]
fn prepare_images_fits_statistics_on_training_images_only() {
    let table = load_digits();
    let fractions = SplitFractions::default();
    let prepared = prepare_images(&table, &fractions, 42).expect("digits prepare");

    let names: Vec<String> = (0..10).map(|d| d.to_string()).collect();
    assert_eq!(prepared.info.class_names, names);
    let labels: Vec<u32> = table
        .label_texts
        .iter()
        .map(|t| t.parse().expect("digit label"))
        .collect();
    let split = stratified_split(&labels, 10, &fractions, 42).expect("split");

    let train_values: Vec<f64> = split
        .train
        .iter()
        .flat_map(|&i| table.image(i).expect("image").iter().map(|&v| f64::from(v)))
        .collect();
    let n = train_values.len() as f64;
    let mean = train_values.iter().sum::<f64>() / n;
    let std = (train_values
        .iter()
        .map(|v| (v - mean) * (v - mean))
        .sum::<f64>()
        / n)
        .sqrt();
    let fitted = &prepared.preprocessor;
    assert!(
        close(fitted.channel_mean[0], mean),
        "{} vs {mean}",
        fitted.channel_mean[0]
    );
    assert!(
        close(fitted.channel_std[0], std),
        "{} vs {std}",
        fitted.channel_std[0]
    );
    let all_mean =
        table.pixels.iter().map(|&v| f64::from(v)).sum::<f64>() / table.pixels.len() as f64;
    assert!(
        !close(fitted.channel_mean[0], all_mean),
        "statistics must not use all images"
    );

    // Same rows as the seeded split of tables, per part and class.
    let train_labels: Vec<u32> = split.train.iter().map(|&i| labels[i]).collect();
    let valid_labels: Vec<u32> = split.valid.iter().map(|&i| labels[i]).collect();
    assert_eq!(prepared.train.y, train_labels);
    assert_eq!(prepared.valid.y, valid_labels);
    assert_eq!(prepared.test.rows(), split.test.rows());
    assert_eq!(prepared.info.rows_test, split.test.rows());
    assert_eq!(
        prepared.info.rows_train + prepared.info.rows_valid + prepared.info.rows_test,
        1797
    );
    let tabular = prepare(
        &data_file("digits.csv"),
        &CsvOptions::default(),
        &fractions,
        42,
    )
    .expect("tabular digits prepare");
    assert_eq!(prepared.train.y, tabular.train.y);
    assert_eq!(prepared.valid.y, tabular.valid.y);
    assert_eq!(prepared.test.rows(), tabular.test.rows());

    // Encoded values are (raw - mean) / std in CHW order.
    assert_eq!(prepared.train.n_features, 64);
    let first = table.image(split.train[0]).expect("image");
    for (encoded, raw) in prepared.train.row(0).iter().zip(first) {
        let expected = ((f64::from(*raw) - fitted.channel_mean[0]) / fitted.channel_std[0]) as f32;
        assert_eq!(*encoded, expected);
    }
    let (x, y) = fitted.encode(&table).expect("encode for prediction");
    assert_eq!(x.len(), 1797 * 64);
    assert_eq!(y.expect("labelled"), labels);
}

#[test]
fn encode_refuses_another_shape() {
    let table = load_digits();
    let prepared = prepare_images(&table, &SplitFractions::default(), 1).expect("prepare");
    let mut other = table.clone();
    other.shape = ImageShape::parse("4x16x1").expect("shape");
    let message = input_message(prepared.preprocessor.encode(&other));
    assert!(
        message.contains("4x16x1") && message.contains("8x8x1"),
        "{message}"
    );
}

#[test]
fn constant_channel_gets_unit_std_and_a_warning() {
    let dir = tempfile::tempdir().expect("temp dir");
    let root = dir.path().join("flat");
    for class in ["a", "b"] {
        let folder = class_folder(&root, class);
        for i in 0..4 {
            gray_png(&folder.join(format!("{i}.png")), 2, 2, 9);
        }
    }
    let table = read_image_folder(&root, &ImageFolderOptions::default()).expect("loads");
    let prepared = prepare_images(&table, &SplitFractions::default(), 3).expect("prepare");
    assert_eq!(prepared.preprocessor.channel_std, vec![1.0]);
    assert!(prepared.train.x.iter().all(|&v| v == 0.0));
    assert!(
        prepared
            .info
            .warnings
            .iter()
            .any(|w| w.contains("constant")),
        "{:?}",
        prepared.info.warnings
    );
}

// ------------------------------------------------------------- folder rules

#[test]
fn folder_reads_jpeg_any_case_ignores_other_files_and_can_resize() {
    let dir = tempfile::tempdir().expect("temp dir");
    let root = dir.path().join("tree");
    let a = class_folder(&root, "a");
    gray_png(&a.join("1.png"), 4, 4, 10);
    image::RgbImage::from_pixel(4, 4, image::Rgb([200, 200, 200]))
        .save(a.join("2.JPG"))
        .expect("jpeg written");
    std::fs::write(a.join("notes.txt"), "not an image").expect("text written");
    let b = class_folder(&root, "b");
    gray_png(&b.join("1.png"), 6, 5, 20);

    let options = ImageFolderOptions {
        channels: Some(1),
        resize: Some((4, 4)),
    };
    let table = read_image_folder(&root, &options).expect("loads with resizing");
    assert_eq!(table.shape, ImageShape::parse("4x4x1").expect("shape"));
    assert_eq!(table.len(), 3);
    assert_eq!(table.label_texts, vec!["a", "a", "b"]);
    assert!(table.sources[1].ends_with("2.JPG"));
    assert!(table.image(2).expect("image").iter().all(|&v| v == 20.0));
    assert_eq!(table.warnings.len(), 1);
    assert!(
        table.warnings[0].contains("notes.txt"),
        "{:?}",
        table.warnings
    );

    let message = input_message(read_image_folder(&root, &ImageFolderOptions::default()));
    assert!(
        message.contains("2.JPG") && message.contains("3 channel"),
        "{message}"
    );
}

#[test]
fn corrupt_png_is_named_with_the_decoder_message() {
    let dir = tempfile::tempdir().expect("temp dir");
    gray_png(&class_folder(dir.path(), "a").join("ok.png"), 3, 3, 1);
    std::fs::write(
        class_folder(dir.path(), "b").join("broken.png"),
        b"\x89PNG not really",
    )
    .expect("bad file written");
    let message = input_message(read_image_folder(
        dir.path(),
        &ImageFolderOptions::default(),
    ));
    assert!(
        message.contains("broken.png") && message.contains("Png"),
        "{message}"
    );
}

#[test]
fn mismatched_size_names_the_first_differing_file() {
    let dir = tempfile::tempdir().expect("temp dir");
    let a = class_folder(dir.path(), "a");
    gray_png(&a.join("1.png"), 8, 8, 1);
    gray_png(&a.join("2.png"), 8, 8, 1);
    let b = class_folder(dir.path(), "b");
    gray_png(&b.join("1.png"), 9, 8, 1);
    gray_png(&b.join("2.png"), 7, 7, 1);
    let message = input_message(read_image_folder(
        dir.path(),
        &ImageFolderOptions::default(),
    ));
    assert!(
        message.contains(&format!("b{}1.png", std::path::MAIN_SEPARATOR)),
        "{message}"
    );
    assert!(
        message.contains("9x8") && message.contains("8x8"),
        "{message}"
    );
    assert!(!message.contains("2.png: "), "{message}");
}

#[test]
fn empty_class_folder_is_named() {
    let dir = tempfile::tempdir().expect("temp dir");
    gray_png(&class_folder(dir.path(), "cat").join("1.png"), 2, 2, 1);
    std::fs::write(class_folder(dir.path(), "dog").join("readme.md"), "x").expect("written");
    let message = input_message(read_image_folder(
        dir.path(),
        &ImageFolderOptions::default(),
    ));
    assert!(
        message.contains("'dog'") && message.contains("no PNG or JPEG"),
        "{message}"
    );
}

#[test]
fn folder_without_class_folders_is_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    gray_png(&dir.path().join("loose.png"), 2, 2, 1);
    let message = input_message(read_image_folder(
        dir.path(),
        &ImageFolderOptions::default(),
    ));
    assert!(message.contains("no class folders"), "{message}");
}

#[cfg(unix)]
#[test]
fn non_utf8_names_are_refused() {
    use std::os::unix::ffi::OsStrExt;
    let dir = tempfile::tempdir().expect("temp dir");
    let folder = class_folder(dir.path(), "a");
    gray_png(
        &folder.join(std::ffi::OsStr::from_bytes(b"bad\xff.png")),
        2,
        2,
        1,
    );
    let message = input_message(read_image_folder(
        dir.path(),
        &ImageFolderOptions::default(),
    ));
    assert!(message.contains("not valid UTF-8"), "{message}");
}

// ---------------------------------------------------------------- IDX rules

/// A small valid IDX pair (first 20 digits) in `dir`.
fn small_idx(dir: &Path) -> (PathBuf, PathBuf) {
    let mut table = load_digits();
    table.pixels.truncate(20 * 64);
    table.label_texts.truncate(20);
    table.sources.truncate(20);
    let (images, labels) = (dir.join("images.idx"), dir.join("labels.idx"));
    write_idx(&table, &images, &labels).expect("IDX written");
    (images, labels)
}

#[test]
fn idx_wrong_magic_is_shown_in_hex() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (images, labels) = small_idx(dir.path());
    let mut bytes = std::fs::read(&images).expect("read");
    bytes[3] = 0x04;
    std::fs::write(&images, bytes).expect("write");
    let message = input_message(read_idx(&images, &labels));
    assert!(
        message.contains("0x00000804") && message.contains("0x00000803"),
        "{message}"
    );
    let message = input_message(read_idx(&labels, &labels));
    assert!(
        message.contains("0x00000801") && message.contains("swapped"),
        "{message}"
    );
}

#[test]
fn idx_truncated_payload_reports_expected_and_found_bytes() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (images, labels) = small_idx(dir.path());
    let bytes = std::fs::read(&images).expect("read");
    std::fs::write(&images, &bytes[..bytes.len() - 10]).expect("write");
    let message = input_message(read_idx(&images, &labels));
    assert!(message.contains("truncated"), "{message}");
    assert!(
        message.contains("1280") && message.contains("1270"),
        "{message}"
    );
}

#[test]
fn idx_count_mismatch_names_both_counts() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (images, labels) = small_idx(dir.path());
    let mut bytes = std::fs::read(&labels).expect("read");
    bytes[7] = 19;
    bytes.pop();
    std::fs::write(&labels, bytes).expect("write");
    let message = input_message(read_idx(&images, &labels));
    assert!(
        message.contains("20 images") && message.contains("19 labels"),
        "{message}"
    );
}

#[test]
fn idx_absurd_dimensions_are_refused_before_allocating() {
    let dir = tempfile::tempdir().expect("temp dir");
    let (images, labels) = small_idx(dir.path());
    let mut bytes = std::fs::read(&images).expect("read");
    bytes[4..8].copy_from_slice(&u32::MAX.to_be_bytes());
    std::fs::write(&images, bytes).expect("write");
    let message = input_message(read_idx(&images, &labels));
    assert!(message.contains("2147483648"), "{message}");
}

// -------------------------------------------------------- CSV and shape text

#[test]
fn pixel_csv_with_the_wrong_column_count_names_both() {
    let shape = ImageShape::parse("8x7x1").expect("shape");
    let message = input_message(read_pixel_csv(
        &data_file("digits.csv"),
        shape,
        &CsvOptions::default(),
    ));
    assert!(
        message.contains("64 pixel columns") && message.contains("56"),
        "{message}"
    );
}

#[test]
fn bad_image_shape_text_explains_the_format() {
    for text in ["8x8", "eight", "8x8x0", "8x8x1x2", "-8x8x1"] {
        let message = input_message(ImageShape::parse(text));
        assert!(
            message.contains(text) && message.contains("8x8x1"),
            "{message}"
        );
    }
    let parsed: ImageShape = "28x28x1".parse().expect("FromStr");
    assert_eq!(parsed.n_values(), 784);
}

// ------------------------------------------------------------ augmentation

#[test]
fn shift_keeps_the_pixels_up_to_zero_fill() {
    let shape = ImageShape::parse("4x5x2").expect("shape");
    // Non-zero values inside a zero border of one pixel, two channels.
    let mut image = vec![0.0f32; shape.n_values()];
    for channel in 0..2 {
        for row in 1..3 {
            for column in 1..4 {
                image[shape.chw_index(row, column, channel)] =
                    (1 + row * 10 + column + 100 * channel) as f32;
            }
        }
    }
    let sorted = |values: &[f32]| {
        let mut v: Vec<f32> = values.iter().copied().filter(|&x| x != 0.0).collect();
        v.sort_by(f32::total_cmp);
        v
    };
    let mut shifted = image.clone();
    shift_image(&mut shifted, &shape, 1, -1);
    assert_eq!(
        shifted[shape.chw_index(2, 0, 1)],
        image[shape.chw_index(1, 1, 1)]
    );
    assert_eq!(sorted(&shifted), sorted(&image));

    let mut batch: Vec<f32> = image.iter().chain(&image).chain(&image).copied().collect();
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    augment_batch(&mut batch, &shape, &mut rng, true, false).expect("whole images");
    for augmented in batch.chunks(shape.n_values()) {
        assert_eq!(sorted(augmented), sorted(&image));
    }
}

#[test]
fn flip_twice_is_the_identity() {
    let shape = ImageShape::parse("3x4x3").expect("shape");
    let image: Vec<f32> = (0..shape.n_values()).map(|v| v as f32).collect();
    let mut flipped = image.clone();
    flip_horizontal(&mut flipped, &shape);
    assert_eq!(
        flipped[shape.chw_index(0, 0, 2)],
        image[shape.chw_index(0, 3, 2)]
    );
    flip_horizontal(&mut flipped, &shape);
    assert_eq!(flipped, image);

    // Flip-only augmentation with the same seed twice undoes itself.
    let mut batch: Vec<f32> = (0..shape.n_values() * 16).map(|v| v as f32).collect();
    let original = batch.clone();
    augment_batch(
        &mut batch,
        &shape,
        &mut ChaCha8Rng::seed_from_u64(9),
        false,
        true,
    )
    .expect("whole images");
    assert_ne!(
        batch, original,
        "16 fair coin flips should flip at least one image"
    );
    augment_batch(
        &mut batch,
        &shape,
        &mut ChaCha8Rng::seed_from_u64(9),
        false,
        true,
    )
    .expect("whole images");
    assert_eq!(batch, original);
}

#[test]
fn augmentation_is_determined_by_the_seed() {
    let table = load_digits();
    let shape = table.shape;
    let batch = table.pixels[..32 * 64].to_vec();
    let run = |seed: u64| {
        let mut x = batch.clone();
        augment_batch(
            &mut x,
            &shape,
            &mut ChaCha8Rng::seed_from_u64(seed),
            true,
            true,
        )
        .expect("whole images");
        x
    };
    assert_eq!(run(11), run(11));
    assert_ne!(run(11), run(12));
    let mut partial = batch[..100].to_vec();
    let error = augment_batch(
        &mut partial,
        &shape,
        &mut ChaCha8Rng::seed_from_u64(1),
        true,
        true,
    );
    assert!(matches!(error, Err(Error::Internal(_))));
}
