//! Tools for the invented demo data (src/demo, shipped in data/demo):
//! check that the shipped files equal the generator's output, rewrite them
//! after a change to the generator, and measure the accuracies quoted in
//! docs/demo-data.md.
//!
//! ```sh
//! cargo run --release --example demo_data_tool                 # check (what CI runs)
//! cargo run --release --example demo_data_tool -- regenerate   # rewrite data/demo
//! cargo run --release --example demo_data_tool -- measure      # the roast table's accuracies
//! cargo run --release --example demo_data_tool -- measure-glyphs
//! ```
//!
//! The data is invented, so the measurements have no outside reference; they
//! document our own generator.

use gemmule::data::image::{prepare_images, read_image_folder, ImageFolderOptions};
use gemmule::data::{prepare, CsvOptions, Prepared, SplitFractions};
use gemmule::demo::{
    ensure_demo_data, write_glyph_folder, write_roast_table, GlyphSpec, RoastTableSpec,
};
use gemmule::genome::{reference_image_cell_genome, LayerGenome};
use gemmule::net::train_image_cells;
use gemmule::train::{train, TrainSettings};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

type Outcome = Result<(), Box<dyn std::error::Error>>;

fn main() -> Outcome {
    let action = std::env::args()
        .nth(1)
        .unwrap_or_else(|| "check".to_string());
    match action.as_str() {
        "check" => check(),
        "regenerate" => regenerate(),
        "measure" => measure_roast_accuracies(),
        "measure-glyphs" => measure_glyph_accuracy(),
        other => Err(format!(
            "unknown action {other:?}; use check, regenerate, measure or measure-glyphs"
        )
        .into()),
    }
}

fn shipped() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("data/demo")
}

/// Every file under `root` but README.md, as (relative path, bytes), sorted.
fn tree(root: &Path) -> std::io::Result<BTreeMap<String, Vec<u8>>> {
    let mut files = BTreeMap::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for entry in std::fs::read_dir(&dir)? {
            let path = entry?.path();
            if path.is_dir() {
                stack.push(path);
            } else if let Ok(relative) = path.strip_prefix(root) {
                let key = relative.to_string_lossy().replace('\\', "/");
                if key != "README.md" {
                    files.insert(key, std::fs::read(&path)?);
                }
            }
        }
    }
    Ok(files)
}

/// Generates the demo data into a temporary folder and compares it with data/demo.
fn check() -> Outcome {
    let dir = tempfile::tempdir()?;
    ensure_demo_data(dir.path())?;
    let generated = tree(dir.path())?;
    let shipped_files = tree(&shipped())?;
    if generated != shipped_files {
        let differing: Vec<&String> = generated
            .keys()
            .chain(shipped_files.keys())
            .filter(|name| generated.get(*name) != shipped_files.get(*name))
            .collect();
        return Err(format!(
            "data/demo differs from the generator in {differing:?}; run this tool with `regenerate`"
        )
        .into());
    }
    println!(
        "data/demo equals the generator's output ({} files)",
        generated.len()
    );
    Ok(())
}

/// Writes the shipped files into data/demo (after changing the generator).
fn regenerate() -> Outcome {
    let files = ensure_demo_data(&shipped())?;
    println!("{} files written to {}", files.written, files.dir.display());
    Ok(())
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
    LayerGenome::from_json(&json, "tool genome").expect("a valid genome literal")
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

/// Prints validation accuracies of six networks on three roast tables (docs/demo-data.md).
fn measure_roast_accuracies() -> Outcome {
    let dir = tempfile::tempdir().expect("temp dir");
    let candidates = [
        ("linear (no hidden layer)", layer_genome("", 0.01)),
        (
            "relu 2",
            layer_genome(r#"{"width":2,"activation":"relu"}"#, 0.01),
        ),
        (
            "relu 4",
            layer_genome(r#"{"width":4,"activation":"relu"}"#, 0.01),
        ),
        (
            "relu 32",
            layer_genome(r#"{"width":32,"activation":"relu"}"#, 0.01),
        ),
        (
            "relu 64-32",
            layer_genome(
                r#"{"width":64,"activation":"relu"},{"width":32,"activation":"relu"}"#,
                0.005,
            ),
        ),
        (
            "tanh 32-32",
            layer_genome(
                r#"{"width":32,"activation":"tanh"},{"width":32,"activation":"tanh"}"#,
                0.003,
            ),
        ),
    ];
    for seed in [1u64, 2, 3] {
        let spec = RoastTableSpec {
            seed,
            ..RoastTableSpec::default()
        };
        let data = prepared_table(dir.path(), &spec, 0);
        for (name, genome) in &candidates {
            let accs: Vec<f64> = [1u64, 2, 3]
                .iter()
                .map(|&s| accuracy(genome, &data, 200, s))
                .collect();
            let text: Vec<String> = accs.iter().map(|a| format!("{a:.3}")).collect();
            println!(
                "data seed {seed}, {name}: {} (mean {:.3})",
                text.join(" "),
                accs.iter().sum::<f64>() / 3.0
            );
        }
    }
    Ok(())
}

/// Prints cell-network and MLP validation accuracies on the glyphs.
/// `GLYPHS_PER_CLASS` and `GLYPH_EPOCHS` change the defaults (50 and 15).
fn measure_glyph_accuracy() -> Outcome {
    std::env::set_var("RAYON_NUM_THREADS", "1");
    let per_class: usize = std::env::var("GLYPHS_PER_CLASS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(50);
    let epochs: u32 = std::env::var("GLYPH_EPOCHS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(15);
    for seed in [1u64, 2] {
        let dir = tempfile::tempdir().expect("temp dir");
        let spec = GlyphSpec {
            per_class,
            seed,
            ..GlyphSpec::default()
        };
        let root = dir.path().join("glyphs");
        write_glyph_folder(&root, &spec).expect("writes");
        let table = read_image_folder(&root, &ImageFolderOptions::default()).expect("loads");
        let prepared = prepare_images(&table, &SplitFractions::default(), 0).expect("prepare");
        let settings = TrainSettings::new(epochs, 0, 1);
        let outcome = train_image_cells(
            &reference_image_cell_genome(),
            &prepared.train,
            Some(&prepared.valid),
            prepared.shape,
            &settings,
            false,
        )
        .expect("trains");
        let mlp = layer_genome(r#"{"width":64,"activation":"relu"}"#, 0.003);
        let mlp_settings = TrainSettings::new(100, 15, 1);
        let mlp_outcome =
            train(&mlp, &prepared.train, Some(&prepared.valid), &mlp_settings).expect("trains");
        println!(
            "glyph seed {seed}: MLP relu 64 on pixels, accuracy {:.3}",
            mlp_outcome.scores.expect("scores").accuracy
        );
        let scores = outcome.scores.expect("scores");
        println!(
            "glyph seed {seed}: {} images, valid {}, accuracy {:.3} after {} epochs, {:.1} s",
            table.len(),
            prepared.valid.len(),
            scores.accuracy,
            outcome.epochs_run,
            outcome.seconds
        );
    }
    Ok(())
}
