//! What every fuzz input is put through, shared by the libFuzzer targets, the
//! `stress` driver and `tests/parser_properties.rs` (which includes this file).
//!
//! Each check feeds arbitrary bytes to one parser of gemmule. The parser may
//! accept the bytes or refuse them with a typed error; a panic, an
//! `Error::Internal` or `Error::Tensor`, or an accepted value that breaks the
//! parser's own promises (checked below) is a finding. Each check returns
//! whether the input got through the deepest stage (so callers can tell that
//! the checks of accepted values ran).

use std::cell::RefCell;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use gemmule::data::image::{read_idx, IDX_IMAGES_MAGIC, IDX_LABELS_MAGIC};
use gemmule::data::{prepare, read_table, CsvOptions, SplitFractions, MAX_COLUMNS};
use gemmule::genome::{
    CellGenome, ConvOp, DenseOp, ImageCellSpace, LayerGenome, LayerSpace, SearchSpace,
    TableCellSpace,
};
use gemmule::net::{cell_cost, layer_cost, table_cell_cost};
use gemmule::search::Journal;
use gemmule::Error;

/// A private folder for the files a check writes (removed on drop).
pub struct Scratch {
    dir: PathBuf,
}

impl Scratch {
    /// A fresh folder under `/dev/shm` when it exists (no disk writes), else the temp folder.
    pub fn new() -> Scratch {
        static COUNTER: AtomicU64 = AtomicU64::new(0);
        let base = if Path::new("/dev/shm").is_dir() {
            PathBuf::from("/dev/shm")
        } else {
            std::env::temp_dir()
        };
        let dir = base.join(format!(
            "gemmule-fuzz-{}-{}",
            std::process::id(),
            COUNTER.fetch_add(1, Ordering::Relaxed)
        ));
        std::fs::create_dir_all(&dir).expect("scratch folder");
        Scratch { dir }
    }

    /// Writes `bytes` to `name` inside the folder and returns its path.
    pub fn file(&self, name: &str, bytes: &[u8]) -> PathBuf {
        let path = self.dir.join(name);
        std::fs::write(&path, bytes).expect("scratch file");
        path
    }
}

impl Default for Scratch {
    fn default() -> Self {
        Scratch::new()
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.dir);
    }
}

thread_local! {
    static SCRATCH: RefCell<Option<Scratch>> = const { RefCell::new(None) };
}

/// Runs `f` with this thread's scratch folder (made once, reused).
pub fn with_scratch<R>(f: impl FnOnce(&Scratch) -> R) -> R {
    SCRATCH.with(|cell| {
        let mut slot = cell.borrow_mut();
        let scratch = slot.get_or_insert_with(Scratch::new);
        f(scratch)
    })
}

/// Panics on an error kind that means a bug (not bad input, not I/O).
fn typed(what: &str, result: &Result<impl Sized, Error>) {
    if let Err(error @ (Error::Internal(_) | Error::Tensor(_))) = result {
        panic!("{what}: a bug, not a bad-input error: {error}");
    }
    if let Err(error) = result {
        let message = error.to_string();
        assert!(!message.is_empty(), "{what}: empty error message");
        assert!(
            message.len() <= 4096,
            "{what}: error message of {} bytes",
            message.len()
        );
    }
}

/// CSV reader and data preparation. The first byte picks the options
/// (delimiter, imputation, label column); the rest is the file.
pub fn csv_loader(scratch: &Scratch, data: &[u8]) -> bool {
    let (options, bytes) = match data.split_first() {
        Some((&choice, rest)) => (
            CsvOptions {
                label: (choice & 0x08 != 0).then(|| "label".to_string()),
                delimiter: [None, Some(b';'), Some(b'\t'), Some(b'|')][usize::from(choice & 3)],
                impute: choice & 0x04 != 0,
            },
            rest,
        ),
        None => (CsvOptions::default(), data),
    };
    let path = scratch.file("data.csv", bytes);
    let table = read_table(&path, &options);
    typed("read_table", &table);
    let Ok(table) = table else { return false };
    let rows = table.n_rows();
    assert!(rows > 0, "a table without rows was accepted");
    assert!(table.column_names().len() <= MAX_COLUMNS);
    for name in table.column_names() {
        let texts = table.column_texts(name).expect("every named column exists");
        assert_eq!(texts.len(), rows, "column {name:?} has another row count");
        assert!(table.column_kind(name).is_some());
    }
    let lines: Vec<u64> = (0..rows).filter_map(|r| table.line_of(r)).collect();
    assert!(
        lines.windows(2).all(|w| w[0] < w[1]),
        "line numbers must increase"
    );
    let prepared = prepare(&path, &options, &SplitFractions::default(), 3);
    typed("prepare", &prepared);
    let Ok(prepared) = prepared else {
        return false;
    };
    let info = &prepared.info;
    assert_eq!(info.rows_train + info.rows_valid + info.rows_test, rows);
    for part in [&prepared.train, &prepared.valid] {
        assert_eq!(part.x.len(), part.len() * info.n_features);
        assert!(part.x.iter().all(|v| v.is_finite()), "non-finite feature");
        assert!(part
            .y
            .iter()
            .all(|&c| (c as usize) < info.class_names.len()));
    }
    true
}

/// Layer and cell genome JSON. The first byte picks the encoding (layers,
/// image cells, table cells); the rest is the JSON text. A genome that passes
/// `validate_basic` must survive a round trip through its canonical JSON.
pub fn genome_json(_scratch: &Scratch, data: &[u8]) -> bool {
    let Some((&choice, bytes)) = data.split_first() else {
        return false;
    };
    let text = String::from_utf8_lossy(bytes);
    match choice % 3 {
        0 => {
            let parsed = LayerGenome::from_json(&text, "genome.json");
            typed("layer from_json", &parsed);
            let Ok(genome) = parsed else { return false };
            let basic = genome.validate_basic();
            typed("layer validate_basic", &basic);
            if basic.is_ok() {
                let again = LayerGenome::from_json(&genome.canonical_json(), "canonical");
                assert_eq!(
                    again.ok().as_ref(),
                    Some(&genome),
                    "canonical JSON round trip"
                );
            }
            typed(
                "layer space validate",
                &LayerSpace::default().validate(&genome),
            );
            if basic.is_ok() {
                let cost = layer_cost(&genome, 1000, 10);
                assert!(cost.params >= cost.madds, "parameters include every weight");
            }
            basic.is_ok()
        }
        1 => {
            let parsed = CellGenome::<ConvOp>::from_json(&text, "cells.json");
            typed("image cell from_json", &parsed);
            let Ok(genome) = parsed else { return false };
            let basic = genome.validate_basic();
            typed("image cell validate_basic", &basic);
            if basic.is_ok() {
                let again = CellGenome::<ConvOp>::from_json(&genome.canonical_json(), "canonical");
                assert_eq!(
                    again.ok().as_ref(),
                    Some(&genome),
                    "canonical JSON round trip"
                );
            }
            typed(
                "image cell space validate",
                &ImageCellSpace::default().validate(&genome),
            );
            if basic.is_ok() {
                let _ = cell_cost(&genome, (3, 32, 32), 10);
                let _ = genome.normal.unused_blocks();
            }
            basic.is_ok()
        }
        _ => {
            let parsed = CellGenome::<DenseOp>::from_json(&text, "cells.json");
            typed("table cell from_json", &parsed);
            let Ok(genome) = parsed else { return false };
            let basic = genome.validate_basic();
            typed("table cell validate_basic", &basic);
            if basic.is_ok() {
                let again = CellGenome::<DenseOp>::from_json(&genome.canonical_json(), "canonical");
                assert_eq!(
                    again.ok().as_ref(),
                    Some(&genome),
                    "canonical JSON round trip"
                );
            }
            typed(
                "table cell space validate",
                &TableCellSpace::default().validate(&genome),
            );
            if basic.is_ok() {
                let _ = table_cell_cost(&genome, 50, 10);
            }
            basic.is_ok()
        }
    }
}

/// IDX images + labels. The first two bytes (big-endian) say how many of the
/// remaining bytes form the images file; the rest is the labels file. With
/// the low bit of the first byte set, the checks write a matching magic
/// number in front of each file, so more inputs get past the first check.
pub fn idx_reader(scratch: &Scratch, data: &[u8]) -> bool {
    if data.len() < 2 {
        return false;
    }
    let split = usize::from(u16::from_be_bytes([data[0], data[1]]) >> 1);
    let with_magic = data[0] & 1 == 1;
    let rest = &data[2..];
    let (images, labels) = rest.split_at(split.min(rest.len()));
    let file = |name: &str, magic: u32, bytes: &[u8]| {
        if with_magic {
            let mut all = magic.to_be_bytes().to_vec();
            all.extend_from_slice(bytes);
            scratch.file(name, &all)
        } else {
            scratch.file(name, bytes)
        }
    };
    let images_path = file("images.idx", IDX_IMAGES_MAGIC, images);
    let labels_path = file("labels.idx", IDX_LABELS_MAGIC, labels);
    let table = read_idx(&images_path, &labels_path);
    typed("read_idx", &table);
    let Ok(table) = table else { return false };
    assert_eq!(table.label_texts.len(), table.len());
    assert_eq!(table.pixels.len(), table.len() * table.shape.n_values());
    assert!(table.pixels.iter().all(|&v| (0.0..=255.0).contains(&v)));
    true
}

/// The run journal reader, with JSON values and with layer genomes as genomes.
pub fn journal_reader(scratch: &Scratch, data: &[u8]) -> bool {
    let path = scratch.file("journal.jsonl", data);
    let values = Journal::read::<serde_json::Value>(&path);
    typed("journal read (values)", &values);
    if let Ok(contents) = &values {
        assert!(contents.intact_len as usize <= data.len());
        for (i, record) in contents.evaluations.iter().enumerate() {
            assert_eq!(record.index, i as u64, "evaluation indices without gaps");
        }
    }
    let layers = Journal::read::<LayerGenome>(&path);
    typed("journal read (layer genomes)", &layers);
    if let (Ok(layers), Ok(values)) = (&layers, &values) {
        assert_eq!(layers.evaluations.len(), values.evaluations.len());
    }
    layers.is_ok()
}
