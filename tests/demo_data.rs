//! The built-in demo datasets (src/demo): determinism, the shipped files in
//! data/demo, loading through the real loaders, and the "architecture
//! matters" property of the roast table.
//!
//! The data is invented, so there is no outside reference for its values:
//! every check here is a property of our own generator (no outside source),
//! except where a check names the loader it goes through.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use gemmule::data::image::{prepare_images, read_image_folder, ImageFolderOptions};
use gemmule::data::{prepare, read_table, ColumnKind, CsvOptions, Prepared, SplitFractions};
use gemmule::demo::{
    ensure_demo_data, ensure_demo_data_with, glyph_images, roast_table_csv, write_glyph_folder,
    write_roast_table, GlyphSpec, RoastTableSpec, GLYPH_CLASSES, GLYPH_FOLDER, MANIFEST_FILE,
    ROAST_COLUMNS, ROAST_FILE, ROAST_MISSING_COLUMNS, ROAST_OUTCOMES,
};
use gemmule::genome::LayerGenome;
use gemmule::train::{train, TrainSettings};

fn shipped() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("data/demo")
}

fn impute() -> CsvOptions {
    CsvOptions {
        impute: true,
        ..CsvOptions::default()
    }
}

fn layer_genome(layers: &str, learning_rate: f64) -> LayerGenome {
    let json = format!(
        r#"{{"layers":[{layers}],"training":{{"learning_rate":{learning_rate},"batch_size":32}}}}"#
    );
    LayerGenome::from_json(&json, "test genome").expect("genome")
}

fn prepared_table(dir: &Path, spec: &RoastTableSpec, split_seed: u64) -> Prepared {
    let path = dir.join(format!("roast-{}.csv", spec.seed));
    write_roast_table(&path, spec).expect("writes");
    prepare(&path, &impute(), &SplitFractions::default(), split_seed).expect("prepare")
}

fn accuracy(genome: &LayerGenome, data: &Prepared, epochs: u32, seed: u64) -> f64 {
    let settings = TrainSettings::new(epochs, 15, seed);
    let outcome = train(genome, &data.train, Some(&data.valid), &settings).expect("trains");
    outcome.scores.expect("scores").accuracy
}

/// Every file under `root`, as (path relative to `root`, bytes), sorted.
fn tree(root: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut files = BTreeMap::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for entry in std::fs::read_dir(&dir).expect("read dir") {
            let path = entry.expect("entry").path();
            if path.is_dir() {
                stack.push(path);
            } else {
                let relative = path.strip_prefix(root).expect("prefix");
                let key = relative.to_string_lossy().replace('\\', "/");
                files.insert(key, std::fs::read(&path).expect("read"));
            }
        }
    }
    files
}

// ------------------------------------------------------------ determinism

#[test]
fn same_seed_same_table_bytes_and_other_seed_other_bytes() {
    let spec = RoastTableSpec::default();
    let a = roast_table_csv(&spec).expect("csv");
    assert_eq!(a, roast_table_csv(&spec).expect("csv"));
    let other = roast_table_csv(&RoastTableSpec { seed: 2, ..spec }).expect("csv");
    assert_ne!(a, other);
    // Every row draws the same number of random values, so a shorter table
    // is a prefix of a longer one with the same seed.
    let short = roast_table_csv(&RoastTableSpec { rows: 300, ..spec }).expect("csv");
    assert!(a.starts_with(&short));
    assert_eq!(a.lines().count(), spec.rows + 1);
    assert!(!a.contains('\r'), "line ends are \\n only");
}

#[test]
fn same_seed_same_glyphs_and_other_seed_other_glyphs() {
    let spec = GlyphSpec {
        per_class: 5,
        ..GlyphSpec::default()
    };
    let a = glyph_images(&spec).expect("glyphs");
    assert_eq!(a, glyph_images(&spec).expect("glyphs"));
    assert_eq!(a.len(), 5 * GLYPH_CLASSES.len());
    assert!(a.iter().all(|(_, pixels)| pixels.len() == 144));
    let other = glyph_images(&GlyphSpec { seed: 2, ..spec }).expect("glyphs");
    assert_ne!(a, other);
    // Image i of a class has its own random stream: more images per class
    // keep the first ones unchanged.
    let more = glyph_images(&GlyphSpec {
        per_class: 7,
        ..spec
    })
    .expect("glyphs");
    for (class, name) in GLYPH_CLASSES.iter().enumerate() {
        assert_eq!(
            a[class * 5..class * 5 + 5],
            more[class * 7..class * 7 + 5],
            "{name}"
        );
    }
}

#[test]
fn specs_out_of_range_are_refused_with_the_field_name() {
    let bad_table = RoastTableSpec {
        rows: 10,
        ..RoastTableSpec::default()
    };
    match roast_table_csv(&bad_table) {
        Err(gemmule::Error::Input(message)) => assert!(message.contains("rows is 10"), "{message}"),
        other => panic!("expected an input error, got {other:?}"),
    }
    let bad_glyphs = GlyphSpec {
        noise: 100.0,
        ..GlyphSpec::default()
    };
    match glyph_images(&bad_glyphs) {
        Err(gemmule::Error::Input(message)) => {
            assert!(message.contains("noise is 100"), "{message}")
        }
        other => panic!("expected an input error, got {other:?}"),
    }
}

// ------------------------------------------------------------ shipped files

/// The files in data/demo are exactly what the generator makes, so they cannot
/// drift from the code (on another machine this also checks that the
/// generator gives the same bytes there).
#[test]
fn shipped_demo_files_equal_the_generator_output() {
    let dir = tempfile::tempdir().expect("temp dir");
    let files = ensure_demo_data(dir.path()).expect("generates");
    let generated = tree(dir.path());
    let mut shipped_files = tree(&shipped());
    shipped_files.remove("README.md");
    assert_eq!(
        generated.keys().collect::<Vec<_>>(),
        shipped_files.keys().collect::<Vec<_>>(),
        "same file list"
    );
    for (name, bytes) in &generated {
        assert!(
            shipped_files[name] == *bytes,
            "data/demo/{name} differs from the generator's output; \
             regenerate with: cargo run --release --example demo_data_tool -- regenerate"
        );
    }
    assert_eq!(
        files.written,
        generated.len(),
        "a new folder gets every file"
    );
    assert_eq!(files.glyphs.images, 50 * GLYPH_CLASSES.len());
}

#[test]
fn ensure_reuses_matching_files_and_repairs_the_rest() {
    let dir = tempfile::tempdir().expect("temp dir");
    let small = GlyphSpec {
        per_class: 4,
        ..GlyphSpec::default()
    };
    let table = RoastTableSpec {
        rows: 200,
        ..RoastTableSpec::default()
    };
    let first = ensure_demo_data_with(dir.path(), &table, &small).expect("generates");
    assert_eq!(first.written, 1 + 4 * GLYPH_CLASSES.len() + 1);
    let again = ensure_demo_data_with(dir.path(), &table, &small).expect("reuses");
    assert_eq!(again.written, 0, "every file matched");
    assert_eq!(again.table_sha256, first.table_sha256);
    assert_eq!(again.glyphs, first.glyphs);

    // A changed image, a deleted table and a leftover temp file are repaired.
    let glyph = dir.path().join(GLYPH_FOLDER).join("ring/0002.png");
    std::fs::write(&glyph, b"not a png").expect("write");
    std::fs::remove_file(dir.path().join(ROAST_FILE)).expect("remove");
    // A temporary file named the way gemmule names its own, by a process
    // that has exited (a spawned and reaped `true`).
    let mut gone = std::process::Command::new("true")
        .spawn()
        .expect("true runs");
    let dead = gone.id();
    gone.wait().expect("reaped");
    let leftover = dir
        .path()
        .join(GLYPH_FOLDER)
        .join("dot")
        .join(format!(".gemmule-{dead}-0-0001.png.partial"));
    std::fs::write(&leftover, b"half").expect("write");
    let repaired = ensure_demo_data_with(dir.path(), &table, &small).expect("repairs");
    assert_eq!(repaired.written, 2);
    assert!(!leftover.exists());
    assert_eq!(repaired.table_sha256, first.table_sha256);

    // A file the generator would not write is refused, not deleted.
    let stray = dir.path().join(GLYPH_FOLDER).join("cross/extra.png");
    std::fs::write(&stray, b"x").expect("write");
    match ensure_demo_data_with(dir.path(), &table, &small) {
        Err(gemmule::Error::Input(message)) => {
            assert!(message.contains("extra.png"), "{message}");
            assert!(message.contains("remove it"), "{message}");
        }
        other => panic!("expected an input error, got {other:?}"),
    }
    assert!(stray.exists());
}

// ------------------------------------------------------------ loading

/// The shipped table through gemmule's own CSV loader and preparation.
#[test]
fn shipped_table_has_the_documented_columns_classes_and_missing_cells() {
    let path = shipped().join(ROAST_FILE);
    let table = read_table(&path, &CsvOptions::default()).expect("reads");
    assert_eq!(table.column_names(), ROAST_COLUMNS.map(String::from));
    assert_eq!(table.label_name(), "outcome");
    assert_eq!(table.n_rows(), RoastTableSpec::default().rows);
    let manifest: serde_json::Value =
        serde_json::from_slice(&std::fs::read(shipped().join(MANIFEST_FILE)).expect("manifest"))
            .expect("JSON");
    assert_eq!(manifest["table"]["sha256"], table.fingerprint());
    for name in &ROAST_COLUMNS[..ROAST_COLUMNS.len() - 1] {
        let expected = if *name == "drum_speed" {
            ColumnKind::Categorical
        } else {
            ColumnKind::Numeric
        };
        assert_eq!(table.column_kind(name), Some(expected), "{name}");
        let texts = table.column_texts(name).expect("column");
        let missing = texts.iter().filter(|t| t.is_empty()).count();
        let share = missing as f64 / texts.len() as f64;
        if ROAST_MISSING_COLUMNS.contains(name) {
            assert!((0.01..=0.045).contains(&share), "{name}: {share} missing");
        } else {
            assert_eq!(missing, 0, "{name} has no missing readings");
        }
    }
    let drums: std::collections::BTreeSet<&str> = table
        .column_texts("drum_speed")
        .expect("drum")
        .iter()
        .map(String::as_str)
        .collect();
    assert_eq!(drums, ["high", "low", "mid"].into_iter().collect());
    let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
    for label in table.label_texts() {
        *counts.entry(label.as_str()).or_default() += 1;
    }
    let mut classes: Vec<&str> = counts.keys().copied().collect();
    let mut expected: Vec<&str> = ROAST_OUTCOMES.to_vec();
    classes.sort_unstable();
    expected.sort_unstable();
    assert_eq!(classes, expected);
    for (class, count) in &counts {
        let share = *count as f64 / table.n_rows() as f64;
        assert!((0.08..=0.32).contains(&share), "{class}: share {share}");
    }

    // Missing readings need imputation; with it the table prepares.
    match prepare(&path, &CsvOptions::default(), &SplitFractions::default(), 0) {
        Err(gemmule::Error::Input(message)) => assert!(message.contains("missing"), "{message}"),
        other => panic!("expected an input error about missing cells, got {other:?}"),
    }
    let prepared = prepare(&path, &impute(), &SplitFractions::default(), 0).expect("prepares");
    assert_eq!(prepared.info.class_names.len(), 5);
    // 12 numeric readings + 3 one-hot drum speeds + 3 missing indicators.
    assert_eq!(prepared.info.n_features, 18);
}

/// The shipped glyph folder through gemmule's image folder loader.
#[test]
fn shipped_glyphs_load_as_twelve_by_twelve_grey_images() {
    let root = shipped().join(GLYPH_FOLDER);
    let table = read_image_folder(&root, &ImageFolderOptions::default()).expect("loads");
    assert_eq!(
        (table.shape.height, table.shape.width, table.shape.channels),
        (12, 12, 1)
    );
    assert!(table.warnings.is_empty(), "{:?}", table.warnings);
    let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
    for label in &table.label_texts {
        *counts.entry(label.as_str()).or_default() += 1;
    }
    assert_eq!(counts.keys().copied().collect::<Vec<_>>(), GLYPH_CLASSES);
    assert!(counts
        .values()
        .all(|&n| n == GlyphSpec::default().per_class));
    let manifest: serde_json::Value =
        serde_json::from_slice(&std::fs::read(shipped().join(MANIFEST_FILE)).expect("manifest"))
            .expect("JSON");
    assert_eq!(
        manifest["glyphs"]["fingerprint"],
        table.fingerprint.as_str()
    );
    let in_memory = glyph_images(&GlyphSpec::default()).expect("glyphs");
    let loaded: Vec<u8> = table.pixels.iter().map(|&v| v as u8).collect();
    let generated: Vec<u8> = in_memory.iter().flat_map(|(_, p)| p.clone()).collect();
    assert_eq!(loaded, generated, "PNG files hold the generated pixels");
    prepare_images(&table, &SplitFractions::default(), 0).expect("prepares");
}

#[test]
fn write_glyph_folder_refuses_a_folder_with_files() {
    let dir = tempfile::tempdir().expect("temp dir");
    std::fs::write(dir.path().join("note.txt"), b"x").expect("write");
    let spec = GlyphSpec {
        per_class: 3,
        ..GlyphSpec::default()
    };
    match write_glyph_folder(dir.path(), &spec) {
        Err(gemmule::Error::Input(message)) => assert!(message.contains("not empty"), "{message}"),
        other => panic!("expected an input error, got {other:?}"),
    }
}

// ------------------------------------------------------------ architecture matters

/// Property of our own generator, no outside source: on the shipped table a
/// linear model (no hidden layer) and a poor network (one hidden layer of 2
/// units) stay clearly below a good small network (two tanh layers of 32).
/// Thresholds from the measurements in docs/demo-data.md, with margin.
#[test]
fn architecture_matters_on_the_roast_table() {
    let dir = tempfile::tempdir().expect("temp dir");
    let data = prepared_table(dir.path(), &RoastTableSpec::default(), 0);
    let linear = layer_genome("", 0.01);
    let poor = layer_genome(r#"{"width":2,"activation":"relu"}"#, 0.01);
    let good = layer_genome(
        r#"{"width":32,"activation":"tanh"},{"width":32,"activation":"tanh"}"#,
        0.003,
    );
    let mean = |genome: &LayerGenome| {
        (accuracy(genome, &data, 200, 1) + accuracy(genome, &data, 200, 2)) / 2.0
    };
    let (linear, poor, good) = (mean(&linear), mean(&poor), mean(&good));
    eprintln!("validation accuracy: linear {linear:.3}, poor {poor:.3}, good {good:.3}");
    assert!(good >= 0.80, "good network {good}");
    assert!(good - linear >= 0.10, "linear {linear} vs good {good}");
    assert!(good - poor >= 0.10, "poor {poor} vs good {good}");
}
