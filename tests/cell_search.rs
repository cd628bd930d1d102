//! Cell genomes through the command line: search on images (pixel CSV, PNG
//! folder, IDX) and on tables, show, finalize, predict, determinism, and the
//! refusals that keep encodings and data kinds apart.
//!
//! Data: the UCI optical digits (8x8, as shipped in scikit-learn 1.9.1) and
//! the UCI wine data (copies and provenance in tests/data/README.md). The PNG
//! folder and IDX files are written by the test itself from the digits with
//! gemmule's writers (round-trip equality is checked in tests/image_data.rs).

use gemmule::data::image::{
    read_image_folder, read_pixel_csv, write_idx, write_image_folder, ImageFolderOptions,
    ImageShape,
};
use gemmule::data::CsvOptions;
use gemmule::genome::reference_image_cell_genome;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

mod private_dirs;

fn gemmule(args: &[&str]) -> Output {
    private_dirs::isolate(&mut Command::new(env!("CARGO_BIN_EXE_gemmule")))
        .env("RAYON_NUM_THREADS", "1")
        .args(args)
        .output()
        .expect("the binary runs")
}

fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// The first `rows` digits (header kept) as a smaller pixel CSV, so searches stay quick.
fn small_digits(dir: &Path, rows: usize) -> PathBuf {
    let full = std::fs::read_to_string(data("digits.csv")).unwrap();
    let text: Vec<&str> = full.lines().take(rows + 1).collect();
    let path = dir.join("digits-small.csv");
    std::fs::write(&path, text.join("\n") + "\n").unwrap();
    path
}

fn assert_ok(o: &Output) {
    assert!(
        o.status.success(),
        "exit {:?}: {}",
        o.status.code(),
        text(o)
    );
}

#[test]
fn image_cell_search_show_finalize_predict() {
    let dir = tempfile::tempdir().unwrap();
    let csv = small_digits(dir.path(), 500);
    let run = dir.path().join("run");
    let o = gemmule(&[
        "search",
        "--data",
        s(&csv),
        "--image-shape",
        "8x8x1",
        "--out",
        s(&run),
        "--budget",
        "4",
        "--jobs",
        "2",
        "--epochs",
        "2",
        "--seed",
        "3",
        "--stem-channels",
        "8",
        "--blocks",
        "2",
        "--quiet",
    ]);
    assert_ok(&o);
    assert!(text(&o).contains("cells_image space"), "{}", text(&o));
    let journal = std::fs::read_to_string(run.join("journal.jsonl")).unwrap();
    assert!(journal.contains(r#""encoding":"cells_image""#));
    assert_eq!(
        journal.matches(r#""ops":"conv""#).count(),
        4,
        "4 cell genomes"
    );

    let shown = gemmule(&["show", s(&run)]);
    assert_ok(&shown);
    assert!(text(&shown).contains("reduction cell"), "{}", text(&shown));

    let fin = gemmule(&["finalize", s(&run)]);
    assert_ok(&fin);
    assert!(text(&fin).contains("test accuracy"), "{}", text(&fin));
    let model = run.join("final");
    let description = std::fs::read_to_string(model.join("model.json")).unwrap();
    assert!(description.contains("image_preprocessor"));

    let out = dir.path().join("predictions.csv");
    let p = gemmule(&[
        "predict",
        "--model",
        s(&model),
        "--data",
        s(&csv),
        "--out",
        s(&out),
    ]);
    assert_ok(&p);
    let predictions = std::fs::read_to_string(&out).unwrap();
    assert_eq!(
        predictions.lines().count(),
        501,
        "header + one line per image"
    );
    assert!(text(&p).contains("accuracy on the labelled rows"));
}

#[test]
fn image_cell_journals_are_byte_identical_for_the_same_seed_and_jobs() {
    let dir = tempfile::tempdir().unwrap();
    let csv = small_digits(dir.path(), 200);
    let mut journals = Vec::new();
    for name in ["a", "b"] {
        let run = dir.path().join(name);
        let o = gemmule(&[
            "search",
            "--data",
            s(&csv),
            "--image-shape",
            "8x8x1",
            "--out",
            s(&run),
            "--budget",
            "3",
            "--jobs",
            "2",
            "--epochs",
            "1",
            "--seed",
            "9",
            "--stem-channels",
            "8",
            "--blocks",
            "2",
            "--quiet",
        ]);
        assert_ok(&o);
        journals.push(std::fs::read(run.join("journal.jsonl")).unwrap());
    }
    assert_eq!(journals[0], journals[1]);
}

#[test]
fn png_folder_and_idx_sources_train_and_predict_the_same_images() {
    let dir = tempfile::tempdir().unwrap();
    let csv = small_digits(dir.path(), 150);
    let shape = ImageShape::new(8, 8, 1).unwrap();
    let table = read_pixel_csv(&csv, shape, &CsvOptions::default()).unwrap();
    // The digits hold 0..16 intensities; PNG and IDX store bytes, so scale
    // them to 0..255 first (values stay integers).
    let mut bytes_table = table.clone();
    for v in &mut bytes_table.pixels {
        *v = (*v * 15.0).min(255.0);
    }
    let folder = dir.path().join("png");
    write_image_folder(&bytes_table, &folder).unwrap();
    let (images, labels) = (dir.path().join("images.idx"), dir.path().join("labels.idx"));
    write_idx(&bytes_table, &images, &labels).unwrap();

    let genome = dir.path().join("cells.json");
    let json = serde_json::to_string(&reference_image_cell_genome()).unwrap();
    std::fs::write(&genome, json).unwrap();

    let folder_model = dir.path().join("m-folder");
    let from_folder = gemmule(&[
        "train",
        "--data",
        s(&folder),
        "--genome",
        s(&genome),
        "--epochs",
        "2",
        "--out",
        s(&folder_model),
    ]);
    assert_ok(&from_folder);
    let idx_model = dir.path().join("m-idx");
    let o = gemmule(&[
        "train",
        "--data",
        s(&images),
        "--idx-labels",
        s(&labels),
        "--genome",
        s(&genome),
        "--epochs",
        "2",
        "--out",
        s(&idx_model),
    ]);
    assert_ok(&o);
    let score = |o: &Output| {
        text(o)
            .lines()
            .find(|l| l.starts_with("validation accuracy"))
            .map(str::to_string)
    };
    assert!(score(&o).is_some(), "{}", text(&o));
    // Same folder, split seed and training seed: the same validation score.
    let again = gemmule(&[
        "train",
        "--data",
        s(&folder),
        "--genome",
        s(&genome),
        "--epochs",
        "2",
        "--out",
        s(&dir.path().join("m-again")),
    ]);
    assert!(score(&from_folder).is_some(), "{}", text(&from_folder));
    assert_eq!(score(&again), score(&from_folder));

    // Unlabelled prediction: image files directly inside a folder.
    let flat = dir.path().join("flat");
    std::fs::create_dir(&flat).unwrap();
    let first_class = std::fs::read_dir(&folder)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .min()
        .unwrap();
    for entry in std::fs::read_dir(&first_class).unwrap().take(5) {
        let p = entry.unwrap().path();
        std::fs::copy(&p, flat.join(p.file_name().unwrap())).unwrap();
    }
    let p = gemmule(&["predict", "--model", s(&folder_model), "--data", s(&flat)]);
    assert_ok(&p);
    assert_eq!(String::from_utf8_lossy(&p.stdout).lines().count(), 6);
    assert!(!text(&p).contains("accuracy on the labelled rows"));
}

/// The prediction rows of `predict` output without the row number and
/// source columns: predicted class and probabilities.
fn prediction_values(o: &Output) -> Vec<String> {
    String::from_utf8_lossy(&o.stdout)
        .lines()
        .skip(1)
        .map(|line| line.splitn(3, ',').nth(2).unwrap_or_default().to_string())
        .collect()
}

/// `--resize` is kept in the model folder, and `predict` resizes images of
/// another size with the training loader's resampling, so original-size
/// images predict exactly like images resized beforehand by that loader
/// (this tool's own contract, no outside source).
#[test]
fn a_resized_model_resizes_the_images_it_predicts() {
    let dir = tempfile::tempdir().unwrap();
    let csv = small_digits(dir.path(), 120);
    let table = read_pixel_csv(
        &csv,
        ImageShape::new(8, 8, 1).unwrap(),
        &CsvOptions::default(),
    )
    .unwrap();
    let mut bytes_table = table.clone();
    for v in &mut bytes_table.pixels {
        *v = (*v * 15.0).min(255.0);
    }
    let folder = dir.path().join("png8");
    write_image_folder(&bytes_table, &folder).unwrap();
    // The same images resized to 6x6 by the folder loader, stored as PNG.
    let resized = read_image_folder(
        &folder,
        &ImageFolderOptions {
            channels: None,
            resize: Some((6, 6)),
        },
    )
    .unwrap();
    assert_eq!(resized.shape, ImageShape::new(6, 6, 1).unwrap());
    let folder6 = dir.path().join("png6");
    write_image_folder(&resized, &folder6).unwrap();

    let genome = dir.path().join("cells.json");
    let json = serde_json::to_string(&reference_image_cell_genome()).unwrap();
    std::fs::write(&genome, json).unwrap();
    let model = dir.path().join("m-resize");
    let o = gemmule(&[
        "train",
        "--data",
        s(&folder),
        "--resize",
        "6x6",
        "--genome",
        s(&genome),
        "--epochs",
        "1",
        "--out",
        s(&model),
    ]);
    assert_ok(&o);
    let description: serde_json::Value =
        serde_json::from_slice(&std::fs::read(model.join("model.json")).unwrap()).unwrap();
    assert_eq!(
        description["image_preprocessor"]["resize"],
        serde_json::json!([6, 6])
    );
    assert_eq!(
        description["image_preprocessor"]["shape"],
        serde_json::json!({"height": 6, "width": 6, "channels": 1})
    );

    // Class folders of 8x8 images against the same images pre-resized.
    let original = gemmule(&["predict", "--model", s(&model), "--data", s(&folder)]);
    assert_ok(&original);
    let pre_resized = gemmule(&["predict", "--model", s(&model), "--data", s(&folder6)]);
    assert_ok(&pre_resized);
    assert_eq!(prediction_values(&original).len(), 120);
    assert_eq!(
        prediction_values(&original),
        prediction_values(&pre_resized)
    );
    assert!(text(&original).contains("accuracy on the labelled rows"));

    // A flat folder of unlabelled 8x8 images: the same rows again.
    let flat = dir.path().join("flat");
    std::fs::create_dir(&flat).unwrap();
    let first_class = std::fs::read_dir(&folder)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .min()
        .unwrap();
    let mut files: Vec<PathBuf> = std::fs::read_dir(&first_class)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    files.sort();
    for p in files.iter().take(4) {
        std::fs::copy(p, flat.join(p.file_name().unwrap())).unwrap();
    }
    let from_flat = gemmule(&["predict", "--model", s(&model), "--data", s(&flat)]);
    assert_ok(&from_flat);
    assert_eq!(
        prediction_values(&from_flat),
        prediction_values(&pre_resized)[..4].to_vec()
    );

    // A model trained without --resize keeps model.json free of the key
    // (the bytes older gemmule versions wrote) and still refuses other sizes.
    let plain = dir.path().join("m-plain");
    assert_ok(&gemmule(&[
        "train",
        "--data",
        s(&folder6),
        "--genome",
        s(&genome),
        "--epochs",
        "1",
        "--out",
        s(&plain),
    ]));
    let text_json = std::fs::read_to_string(plain.join("model.json")).unwrap();
    assert!(!text_json.contains("resize"), "{text_json}");
    let refused = gemmule(&["predict", "--model", s(&plain), "--data", s(&folder)]);
    assert_eq!(refused.status.code(), Some(2), "{}", text(&refused));
    assert!(text(&refused).contains("6x6x1"), "{}", text(&refused));
}

#[test]
fn table_cell_search_runs_on_a_csv_table() {
    let dir = tempfile::tempdir().unwrap();
    let run = dir.path().join("run");
    let o = gemmule(&[
        "search",
        "--data",
        s(&data("wine.csv")),
        "--encoding",
        "cells_table",
        "--out",
        s(&run),
        "--budget",
        "4",
        "--jobs",
        "1",
        "--epochs",
        "5",
        "--seed",
        "2",
        "--quiet",
    ]);
    assert_ok(&o);
    let journal = std::fs::read_to_string(run.join("journal.jsonl")).unwrap();
    assert!(journal.contains(r#""encoding":"cells_table""#));
    assert_eq!(journal.matches(r#""ops":"dense""#).count(), 4);
    let fin = gemmule(&["finalize", s(&run)]);
    assert_ok(&fin);
}

#[test]
fn memory_cap_records_candidates_as_over_budget() {
    let dir = tempfile::tempdir().unwrap();
    let csv = small_digits(dir.path(), 100);
    let run = dir.path().join("run");
    let o = gemmule(&[
        "search",
        "--data",
        s(&csv),
        "--image-shape",
        "8x8x1",
        "--out",
        s(&run),
        "--budget",
        "3",
        "--jobs",
        "1",
        "--epochs",
        "1",
        "--max-memory-mb",
        "1",
        "--quiet",
    ]);
    assert_ok(&o);
    let journal = std::fs::read_to_string(run.join("journal.jsonl")).unwrap();
    assert_eq!(
        journal.matches(r#""status":"over_budget""#).count(),
        3,
        "{journal}"
    );
    assert!(journal.contains("memory cap of 1 MiB"));
}

#[test]
fn encodings_and_data_kinds_that_do_not_fit_are_refused_with_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let wine = data("wine.csv");
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["--encoding", "cells_image"], "needs image data"),
        (vec!["--augment"], "--augment"),
        (
            vec!["--encoding", "pyramids"],
            "encoding `pyramids` is unknown",
        ),
        (vec!["--blocks", "2"], "shape cell spaces"),
        (
            vec!["--encoding", "cells_table", "--max-layers", "2"],
            "shape layer spaces",
        ),
        (vec!["--image-shape", "8x8"], "8x8"),
    ];
    for (i, (extra, expected)) in cases.into_iter().enumerate() {
        let run = dir.path().join(format!("run{i}"));
        let mut args = vec!["search", "--data", s(&wine), "--out", s(&run), "--quiet"];
        args.extend(extra.iter().copied());
        let o = gemmule(&args);
        assert_eq!(o.status.code(), Some(2), "{extra:?}: {}", text(&o));
        assert!(text(&o).contains(expected), "{extra:?}: {}", text(&o));
        assert!(!text(&o).contains("panicked"));
        assert!(!run.join("journal.jsonl").exists());
    }
}
