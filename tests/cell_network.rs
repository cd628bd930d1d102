//! Cell genomes built into candle networks: sizes, shapes, determinism,
//! saving, and training on two open datasets.
//!
//! Outside checks: tests/data/digits.csv (UCI optical digits, 8×8) and
//! tests/data/wine.csv (UCI wine), both as shipped in scikit-learn 1.9.1
//! (provenance in tests/data/README.md). Reference figures from
//! ../shared/data/README.md: a scikit-learn MLP grid reaches 0.977 5-fold CV
//! accuracy on digits and an MLP 0.972 on wine; our thresholds keep a margin
//! for small validation sets and few epochs (≥ 0.95 digits, ≥ 0.90 wine).

use std::path::{Path, PathBuf};
use std::sync::Once;

use candle_core::{Device, Tensor};
use gemmule::data::image::{prepare_images, read_pixel_csv, ImageShape};
use gemmule::data::{prepare, CsvOptions, SplitFractions};
use gemmule::genome::{
    Block, Cell, CellGenome, CellOp, ConvOp, DenseOp, ImageCellGenome, ImageCellSpace, Optimizer,
    SearchSpace, SeededRng, Skeleton, TableCellGenome, TableCellSpace, TrainGenes,
};
use gemmule::net::{
    cell_cost, table_cell_cost, train_image_cells, train_table_cells, ImageCellNet, TableCellNet,
};
use gemmule::train::{AutogradNetwork, TrainSettings, TrainStatus};
use rand::SeedableRng;

/// Keeps candle's matrix products on one thread (as the command line does),
/// so timings are per core and results bit-identical.
fn single_thread() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| std::env::set_var("RAYON_NUM_THREADS", "1"));
}

fn data_file(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(name)
}

fn training(learning_rate: f64, batch_size: u32) -> TrainGenes {
    TrainGenes {
        learning_rate,
        batch_size,
        weight_decay: 0.0,
        optimizer: Optimizer::Adam,
    }
}

fn block<Op: CellOp>(inputs: [u8; 2], ops: [Op; 2]) -> Block<Op> {
    Block { inputs, ops }
}

fn genome<Op: CellOp>(
    normal: Vec<Block<Op>>,
    reduction: Vec<Block<Op>>,
    skeleton: Skeleton,
    training: TrainGenes,
) -> CellGenome<Op> {
    CellGenome {
        normal: Cell { blocks: normal },
        reduction: Cell { blocks: reduction },
        skeleton,
        training,
    }
}

fn skeleton(channels: u32, normal_cells: u32, repeats: u32) -> Skeleton {
    Skeleton {
        channels,
        normal_cells,
        repeats,
    }
}

/// The reference image genome: F = 8, N = 1, R = 2, B = 2 with conv3x3 and sep_conv ops.
fn reference_image_genome() -> ImageCellGenome {
    use ConvOp::*;
    genome(
        vec![
            block([0, 1], [Conv3x3, SepConv3x3]),
            block([1, 2], [Identity, SepConv3x3]),
        ],
        vec![
            block([0, 1], [MaxPool3x3, SepConv3x3]),
            block([1, 2], [Identity, Conv3x3]),
        ],
        skeleton(8, 1, 2),
        training(0.01, 32),
    )
}

/// Every op, reduction identity on h0 and h1, N = 2, R = 3.
fn all_ops_image_genome() -> ImageCellGenome {
    use ConvOp::*;
    genome(
        vec![
            block([0, 1], [Identity, DilConv3x3]),
            block([0, 2], [AvgPool3x3, Conv1x1]),
            block([1, 3], [MaxPool3x3, SepConv3x3]),
        ],
        vec![
            block([0, 1], [Identity, Identity]),
            block([1, 2], [AvgPool3x3, DilConv3x3]),
            block([2, 3], [Conv1x1, MaxPool3x3]),
        ],
        skeleton(6, 2, 3),
        training(0.01, 32),
    )
}

fn reference_table_genome() -> TableCellGenome {
    use DenseOp::*;
    genome(
        vec![
            block([0, 1], [DenseRelu, Gated]),
            block([1, 2], [Identity, DenseGelu]),
        ],
        vec![
            block([0, 1], [Identity, DenseTanh]),
            block([1, 2], [DenseRelu, Identity]),
        ],
        skeleton(32, 1, 2),
        training(0.01, 16),
    )
}

fn input(rows: usize, width: usize, seed: u64) -> Tensor {
    use rand::Rng;
    let mut rng = SeededRng::seed_from_u64(seed);
    let values: Vec<f32> = (0..rows * width)
        .map(|_| rng.gen_range(-1.0..1.0))
        .collect();
    Tensor::from_vec(values, (rows, width), &Device::Cpu).expect("input tensor")
}

// ------------------------------------------------------------ parameter counts

#[test]
fn image_param_counts_match_the_genome_count() {
    single_thread();
    let space = ImageCellSpace::default();
    let mut rng = SeededRng::seed_from_u64(7);
    let mut genomes: Vec<ImageCellGenome> = (0..20).map(|_| space.sample(&mut rng)).collect();
    genomes.push(reference_image_genome());
    genomes.push(all_ops_image_genome());
    for (shape, classes) in [((1, 8, 8), 10), ((3, 7, 5), 4)] {
        let image = ImageShape::new(shape.1, shape.2, shape.0).expect("shape");
        for (i, genome) in genomes.iter().enumerate() {
            let net = ImageCellNet::build(genome, image, classes, 1).expect("builds");
            let expected = cell_cost(genome, shape, classes).params;
            assert_eq!(
                net.param_count(),
                expected,
                "genome {i} {}",
                genome.canonical_json()
            );
        }
    }
}

#[test]
fn table_param_counts_match_the_genome_count() {
    let space = TableCellSpace::default();
    let mut rng = SeededRng::seed_from_u64(8);
    let mut genomes: Vec<TableCellGenome> = (0..20).map(|_| space.sample(&mut rng)).collect();
    genomes.push(reference_table_genome());
    let mut odd = reference_table_genome();
    odd.skeleton = skeleton(17, 2, 3);
    genomes.push(odd);
    for (i, genome) in genomes.iter().enumerate() {
        let net = TableCellNet::build(genome, 13, 3, 1).expect("builds");
        let expected = table_cell_cost(genome, 13, 3).params;
        assert_eq!(
            net.param_count(),
            expected,
            "genome {i} {}",
            genome.canonical_json()
        );
    }
}

// ------------------------------------------------------------ shapes

#[test]
fn outputs_have_one_logit_per_class() {
    single_thread();
    let image = ImageShape::new(7, 5, 3).expect("shape");
    for genome in [reference_image_genome(), all_ops_image_genome()] {
        let net = ImageCellNet::build(&genome, image, 4, 3).expect("builds");
        let x = input(6, image.n_values(), 1);
        for train in [true, false] {
            let logits = net.logits(&x, train).expect("forward");
            assert_eq!(logits.dims(), &[6, 4]);
        }
    }
    let net = TableCellNet::build(&reference_table_genome(), 13, 3, 3).expect("builds");
    let logits = net.logits(&input(5, 13, 2), false).expect("forward");
    assert_eq!(logits.dims(), &[5, 3]);
    let wrong = net.logits(&input(5, 12, 2), false);
    assert!(matches!(wrong, Err(gemmule::Error::Input(_))));
    assert_eq!(AutogradNetwork::n_inputs(&net), 13);
}

// ------------------------------------------------------------ determinism

fn logits_vec(t: &Tensor) -> Vec<f32> {
    t.flatten_all()
        .expect("flatten")
        .to_vec1::<f32>()
        .expect("values")
}

fn small_digits() -> (gemmule::data::Dataset, gemmule::data::Dataset, ImageShape) {
    let shape = ImageShape::parse("8x8x1").expect("shape");
    let table = read_pixel_csv(&data_file("digits.csv"), shape, &CsvOptions::default())
        .expect("the digits CSV loads as 8x8x1 images");
    let prepared = prepare_images(&table, &SplitFractions::default(), 0).expect("prepare");
    (prepared.train, prepared.valid, prepared.shape)
}

#[test]
fn same_seed_gives_the_same_weights_and_logits_after_one_epoch() {
    single_thread();
    let (train, valid, shape) = small_digits();
    let rows: Vec<usize> = (0..200).collect();
    let train = train.subset(&rows);
    let settings = TrainSettings::new(1, 0, 11);
    let genome = all_ops_image_genome();
    let built = |seed| ImageCellNet::build(&genome, shape, 10, seed).expect("builds");
    let x = Tensor::from_slice(&valid.x, (valid.len(), valid.n_features), &Device::Cpu)
        .expect("valid tensor");
    let first = logits_vec(&built(5).logits(&x, false).expect("forward"));
    assert_eq!(
        first,
        logits_vec(&built(5).logits(&x, false).expect("forward"))
    );
    assert_ne!(
        first,
        logits_vec(&built(6).logits(&x, false).expect("forward"))
    );

    let run = || {
        let outcome = train_image_cells(&genome, &train, Some(&valid), shape, &settings, true)
            .expect("trains");
        assert_eq!(outcome.status, TrainStatus::Completed);
        logits_vec(&outcome.network.logits(&x, false).expect("forward"))
    };
    let trained = run();
    assert_eq!(trained, run(), "same seed, same logits after one epoch");
    assert_ne!(trained, first, "training changed the network");

    let table_genome = reference_table_genome();
    let table_x = input(4, 13, 9);
    let a = TableCellNet::build(&table_genome, 13, 3, 2).expect("builds");
    let b = TableCellNet::build(&table_genome, 13, 3, 2).expect("builds");
    assert_eq!(
        logits_vec(&a.logits(&table_x, false).expect("forward")),
        logits_vec(&b.logits(&table_x, false).expect("forward"))
    );
}

// ------------------------------------------------------------ save and load

#[test]
fn saved_networks_load_with_identical_logits() {
    single_thread();
    let (train, valid, shape) = small_digits();
    let rows: Vec<usize> = (0..128).collect();
    let settings = TrainSettings::new(1, 0, 3);
    let genome = reference_image_genome();
    let outcome = train_image_cells(&genome, &train.subset(&rows), None, shape, &settings, false)
        .expect("trains");
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("cells.safetensors");
    outcome.network.save_safetensors(&path).expect("saves");
    let loaded = ImageCellNet::load_safetensors(&path, &genome, shape, 10).expect("loads");
    let x = Tensor::from_slice(&valid.x, (valid.len(), valid.n_features), &Device::Cpu)
        .expect("valid tensor");
    let before = logits_vec(&outcome.network.logits(&x, false).expect("forward"));
    assert_eq!(
        before,
        logits_vec(&loaded.logits(&x, false).expect("forward"))
    );
    let fresh = ImageCellNet::build(&genome, shape, 10, 3).expect("builds");
    assert_ne!(
        before,
        logits_vec(&fresh.logits(&x, false).expect("forward")),
        "running statistics and weights were restored, not rebuilt"
    );

    let other = all_ops_image_genome();
    match ImageCellNet::load_safetensors(&path, &other, shape, 10) {
        Err(gemmule::Error::Input(message)) => {
            assert!(message.contains("tensor '"), "{message}");
            assert!(message.contains("cells.safetensors"), "{message}");
        }
        other => panic!("expected an input error, got {other:?}"),
    }

    let table_genome = reference_table_genome();
    let table = TableCellNet::build(&table_genome, 13, 3, 4).expect("builds");
    let table_path = dir.path().join("table.safetensors");
    table.save_safetensors(&table_path).expect("saves");
    let loaded = TableCellNet::load_safetensors(&table_path, &table_genome, 13, 3).expect("loads");
    let x = input(7, 13, 5);
    assert_eq!(
        logits_vec(&table.logits(&x, false).expect("forward")),
        logits_vec(&loaded.logits(&x, false).expect("forward"))
    );
}

// ------------------------------------------------------------ outside checks

#[test]
fn digits_reference_cells_reach_ninety_five_percent() {
    single_thread();
    let (train, valid, shape) = small_digits();
    let settings = TrainSettings::new(6, 0, 1);
    let outcome = train_image_cells(
        &reference_image_genome(),
        &train,
        Some(&valid),
        shape,
        &settings,
        false,
    )
    .expect("trains");
    let scores = outcome.scores.expect("validation scores");
    eprintln!(
        "digits cells: validation accuracy {:.4}, {} epochs (best {}), {:.3} s per epoch",
        scores.accuracy,
        outcome.epochs_run,
        outcome.best_epoch,
        outcome.seconds / f64::from(outcome.epochs_run)
    );
    assert!(
        scores.accuracy >= 0.95,
        "digits validation accuracy {}",
        scores.accuracy
    );
}

#[test]
fn wine_table_cells_reach_ninety_percent() {
    single_thread();
    let data = prepare(
        &data_file("wine.csv"),
        &CsvOptions::default(),
        &SplitFractions::default(),
        0,
    )
    .expect("wine prepares");
    let settings = TrainSettings::new(40, 10, 1);
    let outcome = train_table_cells(
        &reference_table_genome(),
        &data.train,
        Some(&data.valid),
        &settings,
    )
    .expect("trains");
    let scores = outcome.scores.expect("validation scores");
    eprintln!(
        "wine cells: validation accuracy {:.4}, {} epochs (best {}), {:.4} s per epoch",
        scores.accuracy,
        outcome.epochs_run,
        outcome.best_epoch,
        outcome.seconds / f64::from(outcome.epochs_run)
    );
    assert!(
        scores.accuracy >= 0.90,
        "wine validation accuracy {}",
        scores.accuracy
    );
}

// ------------------------------------------------------------ one-row batches

#[test]
fn a_last_batch_of_one_row_on_one_pixel_maps_is_skipped_not_fatal() {
    // Batch norm in training mode needs more than one value per channel
    // (PyTorch refuses the same; common practice, no source). With three
    // reductions an 8×8 image ends at 1×1 maps, so a last mini-batch of one
    // row would give one value per channel: 129 rows in batches of 32.
    single_thread();
    let (train, valid, shape) = small_digits();
    let rows: Vec<usize> = (0..129).collect();
    let mut genome = reference_image_genome();
    genome.skeleton = skeleton(4, 1, 4);
    genome.training = training(0.01, 32);
    let settings = TrainSettings::new(2, 0, 5);
    let outcome = train_image_cells(
        &genome,
        &train.subset(&rows),
        Some(&valid),
        shape,
        &settings,
        false,
    )
    .expect("trains although the last batch has one row");
    assert_eq!(outcome.status, TrainStatus::Completed);
    assert_eq!(outcome.epochs_run, 2);
    // A batch size of 1 cannot train such a network at all: an input error.
    genome.training = training(0.01, 1);
    match train_image_cells(&genome, &train.subset(&rows), None, shape, &settings, false) {
        Err(gemmule::Error::Input(message)) => assert!(
            message.contains("at least 2 rows per training batch")
                && message.contains("batch size is 1"),
            "{message}"
        ),
        other => panic!("expected an input error, got {:?}", other.map(|o| o.status)),
    }
    // Maps of 2×2 and more keep training on every row, the one-row batch included.
    let mut wide = reference_image_genome();
    wide.training = training(0.01, 32);
    let outcome = train_image_cells(
        &wide,
        &train.subset(&rows),
        Some(&valid),
        shape,
        &settings,
        false,
    )
    .expect("trains");
    assert_eq!(outcome.status, TrainStatus::Completed);
}
