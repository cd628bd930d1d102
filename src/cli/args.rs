//! Command-line options, shared across commands so the same option means the
//! same thing everywhere.

use crate::data::image::ImageShape;
use crate::data::SplitFractions;
use crate::evaluate::{ClassWeighting, TrainerSettings, Watched};
use crate::genome::{Activation, AnySpace, Encoding, LayerSpace};
use crate::train::Objective;
use crate::workflow::{DataFormat, DataSource, FoldChoice};
use crate::{Error, Result};
use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// gemmule: find a compact classifier's architecture by search, on the CPU.
#[derive(Debug, Parser)]
#[command(
    name = "gemmule",
    version,
    about,
    long_about = None,
    arg_required_else_help = true,
    after_help = "Example:\n  gemmule search --data wine.csv --out runs/wine --budget 60\n\nExit codes: 0 success, 1 internal failure, 2 bad input, 130 interrupted.\nNO_COLOR=1 turns colour off. Every command is described in docs/cli.md."
)]
pub struct Cli {
    /// The command to run.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// See the whole job on invented demo data: compare aging evolution with
    /// random search, finalize the winner, print the comparison and the graph.
    #[command(after_help = "Examples:\n  gemmule demo --quick\n  gemmule demo --out my-demo")]
    Demo(super::demo::DemoArgs),
    /// Train one genome on a table or images, print validation scores and save the model.
    #[command(
        after_help = "Example:\n  gemmule train --data wine.csv --genome genome.json --out wine-model"
    )]
    Train(TrainArgs),
    /// Predict classes and class probabilities for the rows of a CSV file or for images.
    #[command(
        after_help = "Example:\n  gemmule predict --model wine-model --data new-rows.csv --out predictions.csv"
    )]
    Predict(PredictArgs),
    /// Print the exact size of a search space (layers, or cells with --encoding).
    #[command(after_help = "Example:\n  gemmule space --max-layers 3 --max-width 64")]
    Space(SpaceArgs),
    /// Search architectures on a table or images; every evaluation goes to RUN/journal.jsonl.
    #[command(
        after_help = "Example:\n  gemmule search --data wine.csv --out runs/wine --budget 60 --jobs 2 --seed 1"
    )]
    Search(SearchArgs),
    /// Continue a stopped or killed search exactly where it left off.
    #[command(after_help = "Example:\n  gemmule resume runs/wine")]
    Resume(ResumeArgs),
    /// Summarize a run: settings, top candidates, best-so-far curve, best architecture.
    #[command(
        after_help = "Examples:\n  gemmule show runs/wine\n  gemmule show runs/wine --json > wine-run.json"
    )]
    Show(ShowArgs),
    /// Retrain the best candidate on train+validation and open the sealed test split once.
    #[command(after_help = "Example:\n  gemmule finalize runs/wine --top-k 3 --repeats 3")]
    Finalize(FinalizeArgs),
    /// Run several strategies over several seeds with equal budgets and compare them.
    #[command(
        after_help = "Example:\n  gemmule compare --data wine.csv --out runs/wine-cmp --strategies evolution,random --seeds 5 --budget 60\n  gemmule compare --data wine.csv --out runs/wine-cmp --json > wine-cmp.json\n\nRunning the same command again continues an unfinished comparison."
    )]
    Compare(super::compare::CompareArgs),
    /// Write report.html, summary.json and candidates.csv for a run or comparison directory.
    #[command(
        after_help = "Examples:\n  gemmule report runs/wine\n  gemmule report runs/wine-cmp --out reports/wine"
    )]
    Report(super::report::ReportArgs),
}

/// Which data file and how to read and split it.
#[derive(Debug, Args)]
pub struct DataArgs {
    /// CSV file with a header row (one row per example), or a folder of
    /// images with one sub-folder per class (PNG/JPEG), or an IDX images
    /// file (with --idx-labels).
    #[arg(long, value_name = "FILE.csv|DIR")]
    pub data: PathBuf,
    /// Read --data as a CSV whose feature columns are the pixels of images
    /// of this shape (height x width x channels, e.g. 8x8x1), row by row.
    #[arg(long, value_name = "HxWxC")]
    pub image_shape: Option<String>,
    /// Read --data as an IDX images file with these IDX labels.
    #[arg(long, value_name = "FILE")]
    pub idx_labels: Option<PathBuf>,
    /// Image folder: convert every image to 1 (gray) or 3 (RGB) channels.
    #[arg(long, value_name = "1|3")]
    pub image_channels: Option<u8>,
    /// Image folder: resize every image to this size (height x width, e.g. 12x12).
    #[arg(long, value_name = "HxW")]
    pub resize: Option<String>,
    /// Name of the label column (default: the last column).
    #[arg(long, value_name = "COLUMN")]
    pub label: Option<String>,
    /// Field delimiter, one character (default: comma).
    #[arg(long, value_name = "CHAR")]
    pub delimiter: Option<char>,
    /// Fill missing cells (median or most frequent value of the training split,
    /// plus a missing-indicator column) instead of refusing the file.
    #[arg(long)]
    pub impute: bool,
    /// Train, validation and test shares, comma-separated (default
    /// 0.70,0.15,0.15). With --test-data: T,V or T,V,S, the test share is
    /// ignored and the data is split T:V. Not with --split-column.
    #[arg(long, value_name = "T,V,S")]
    pub split: Option<String>,
    /// Seed of the stratified split (default 0). Not with --split-column.
    #[arg(long, value_name = "N")]
    pub split_seed: Option<u64>,
    /// Identifier columns of a table: kept out of the features and written
    /// beside every prediction. Repeat the option or give a comma-separated list.
    #[arg(long = "id", value_name = "COLUMN[,COLUMN]", value_delimiter = ',')]
    pub id: Vec<String>,
    /// Columns of a table to leave out of the features. Repeat the option or
    /// give a comma-separated list.
    #[arg(long, value_name = "COLUMN[,COLUMN]", value_delimiter = ',')]
    pub ignore: Vec<String>,
    /// A fixed test set: a CSV file with the same columns as --data whose rows
    /// are the sealed test part; --data is split into training and validation only.
    #[arg(long, value_name = "FILE.csv")]
    pub test_data: Option<PathBuf>,
    /// A column whose values train, validation or test (lower case) assign
    /// every row to its part; the column is not a feature.
    #[arg(long, value_name = "COLUMN")]
    pub split_column: Option<String>,
}

impl DataArgs {
    /// The data source these options describe.
    pub fn source(&self) -> Result<DataSource> {
        if self.test_data.is_some() && self.split_column.is_some() {
            return Err(Error::input(
                "--test-data and --split-column both fix the test rows; give one of them",
            ));
        }
        if let Some(column) = &self.split_column {
            if self.split.is_some() || self.split_seed.is_some() {
                return Err(Error::input(format!(
                    "--split-column {column} assigns every row, so --split and --split-seed \
                     have nothing to do; leave them out"
                )));
            }
        }
        let fractions = match &self.split {
            None => SplitFractions::default(),
            Some(text) => self.fractions(text)?,
        };
        if self.test_data.is_some() {
            fractions.validate_without_test()?;
        } else {
            fractions.validate()?;
        }
        let source = DataSource {
            path: self.data.clone(),
            format: self.format()?,
            label: self.label.clone(),
            delimiter: self.delimiter,
            impute: self.impute,
            fractions,
            split_seed: self.split_seed.unwrap_or(0),
            id_columns: trimmed(&self.id),
            ignore_columns: trimmed(&self.ignore),
            test_data: self.test_data.clone(),
            split_column: self.split_column.as_ref().map(|c| c.trim().to_string()),
            recorded_test_fingerprint: None,
        };
        source.table_roles()?;
        Ok(source)
    }

    /// Reads `--split`: three shares, or two (train, validation) with --test-data.
    fn fractions(&self, text: &str) -> Result<SplitFractions> {
        let parts: Vec<&str> = text.split(',').map(str::trim).collect();
        let parse = |s: &str| -> Result<f64> {
            s.parse::<f64>().map_err(|_| {
                Error::input(format!(
                    "--split {text}: `{s}` is not a number; give three shares such as 0.70,0.15,0.15"
                ))
            })
        };
        match (parts.as_slice(), self.test_data.is_some()) {
            ([train, valid, test], _) => Ok(SplitFractions {
                train: parse(train)?,
                valid: parse(valid)?,
                test: parse(test)?,
            }),
            ([train, valid], true) => Ok(SplitFractions {
                train: parse(train)?,
                valid: parse(valid)?,
                test: 0.0,
            }),
            _ => Err(Error::input(format!(
                "--split {text}: give three comma-separated shares (train,validation,test), such as 0.70,0.15,0.15{}",
                if self.test_data.is_some() { " (or two, train,validation, with --test-data)" } else { "" }
            ))),
        }
    }
}

/// Column names of `--id` / `--ignore` without surrounding spaces (empty names
/// stay empty, to be refused with the option's name).
fn trimmed(names: &[String]) -> Vec<String> {
    names.iter().map(|n| n.trim().to_string()).collect()
}

impl DataArgs {
    /// What --data holds, from the image options and whether it is a folder.
    fn format(&self) -> Result<DataFormat> {
        let folder = self.data.is_dir();
        let folder_only = self.image_channels.is_some() || self.resize.is_some();
        match (&self.image_shape, &self.idx_labels) {
            (Some(_), Some(_)) => Err(Error::input(
                "--image-shape (pixel CSV) and --idx-labels (IDX files) exclude each other",
            )),
            (Some(text), None) => {
                if folder || folder_only {
                    return Err(Error::input(format!(
                        "--image-shape describes a CSV of pixel columns, but {} is a folder or folder options were given; leave --image-shape out for image folders",
                        self.data.display()
                    )));
                }
                Ok(DataFormat::PixelCsv {
                    shape: ImageShape::parse(text)?,
                })
            }
            (None, Some(labels)) => {
                if folder_only {
                    return Err(Error::input(
                        "--image-channels and --resize apply to image folders, not IDX files",
                    ));
                }
                Ok(DataFormat::Idx {
                    labels: labels.clone(),
                })
            }
            (None, None) if folder => Ok(DataFormat::ImageFolder {
                channels: self.image_channels,
                resize: self.resize.as_deref().map(parse_size).transpose()?,
            }),
            (None, None) if folder_only => Err(Error::input(format!(
                "--image-channels and --resize apply to image folders, but {} is not a folder",
                self.data.display()
            ))),
            (None, None) => Ok(DataFormat::Table),
        }
    }
}

/// Reads `HxW` (e.g. `12x12`).
fn parse_size(text: &str) -> Result<(u32, u32)> {
    let parts: Vec<&str> = text.trim().split(['x', 'X']).collect();
    match parts.as_slice() {
        [h, w] => match (h.trim().parse::<u32>(), w.trim().parse::<u32>()) {
            (Ok(h), Ok(w)) if h > 0 && w > 0 => Ok((h, w)),
            _ => Err(Error::input(format!(
                "--resize {text}: height and width must be positive integers, such as 12x12"
            ))),
        },
        _ => Err(Error::input(format!(
            "--resize {text}: give height x width, such as 12x12"
        ))),
    }
}

/// Options of `gemmule train`.
#[derive(Debug, Args)]
pub struct TrainArgs {
    #[command(flatten)]
    /// The data.
    pub data: DataArgs,
    /// Genome JSON file (see docs/search-spaces.md).
    #[arg(long, value_name = "GENOME.json")]
    pub genome: PathBuf,
    /// Training seed (initial weights, shuffling, dropout).
    #[arg(long, value_name = "N", default_value_t = 0)]
    pub seed: u64,
    /// Most epochs.
    #[arg(long, value_name = "N", default_value_t = 30)]
    pub epochs: u32,
    /// Epochs without a lower validation loss before stopping (0: never stop early).
    #[arg(long, value_name = "N", default_value_t = 5)]
    pub patience: u32,
    /// Shift training images by up to one pixel (seeded; image cell genomes only).
    #[arg(long)]
    pub augment: bool,
    /// Folder to save the model in (model.json + weights).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
}

/// Options of `gemmule predict`.
#[derive(Debug, Args)]
pub struct PredictArgs {
    /// Model folder made by `gemmule train` or `gemmule finalize` (RUN/final).
    #[arg(long, value_name = "DIR")]
    pub model: PathBuf,
    /// CSV file with the training features (the label column is optional);
    /// for image models: a folder of images (class sub-folders give labels,
    /// image files directly inside are unlabelled), an IDX images file (with
    /// --idx-labels) or a CSV of pixel columns plus a label column.
    #[arg(long, value_name = "FILE.csv|DIR")]
    pub data: PathBuf,
    /// Field delimiter, one character (default: comma).
    #[arg(long, value_name = "CHAR")]
    pub delimiter: Option<char>,
    /// Image models: read --data as an IDX images file with these IDX labels.
    #[arg(long, value_name = "FILE")]
    pub idx_labels: Option<PathBuf>,
    /// Image models, pixel CSV: name of the label column (default: the last column).
    #[arg(long, value_name = "COLUMN")]
    pub label: Option<String>,
    /// Write predictions here instead of standard output.
    #[arg(long, value_name = "FILE.csv")]
    pub out: Option<PathBuf>,
}

/// The encoding and bounds of the search space (each option overrides the
/// default or the --space file).
#[derive(Debug, Args, Default)]
pub struct SpaceArgs {
    /// Genome encoding: layers (MLP), cells_image (convolutional cells, needs
    /// images) or cells_table (dense cells). Default: cells_image for image
    /// data, layers for tables.
    #[arg(long, value_name = "ENCODING")]
    pub encoding: Option<String>,
    /// Search-space JSON file of the encoding (see docs/search-spaces.md); options below override it.
    #[arg(long, value_name = "SPACE.json")]
    pub space: Option<PathBuf>,
    /// Fewest hidden layers.
    #[arg(long, value_name = "N")]
    pub min_layers: Option<u32>,
    /// Most hidden layers.
    #[arg(long, value_name = "N")]
    pub max_layers: Option<u32>,
    /// Narrowest hidden layer.
    #[arg(long, value_name = "N")]
    pub min_width: Option<u32>,
    /// Widest hidden layer.
    #[arg(long, value_name = "N")]
    pub max_width: Option<u32>,
    /// Allowed activations, comma-separated.
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub activations: Option<Vec<ActivationArg>>,
    /// Leave residual skips out of the space.
    #[arg(long)]
    pub no_residual: bool,
    /// Cells: blocks per cell B (1..=5).
    #[arg(long, value_name = "B")]
    pub blocks: Option<u32>,
    /// Cells: allowed stem channel counts (widths for tables) F, comma-separated.
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub stem_channels: Option<Vec<u32>>,
    /// Cells: allowed normal cells per repeat N, comma-separated.
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub normal_cells: Option<Vec<u32>>,
    /// Cells: allowed repeats R, comma-separated.
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub repeats: Option<Vec<u32>>,
}

/// An activation name on the command line.
#[derive(Debug, Clone, Copy, ValueEnum)]
pub enum ActivationArg {
    /// ReLU.
    Relu,
    /// tanh.
    Tanh,
    /// GELU.
    Gelu,
    /// Sigmoid.
    Sigmoid,
}

impl From<ActivationArg> for Activation {
    fn from(a: ActivationArg) -> Self {
        match a {
            ActivationArg::Relu => Activation::Relu,
            ActivationArg::Tanh => Activation::Tanh,
            ActivationArg::Gelu => Activation::Gelu,
            ActivationArg::Sigmoid => Activation::Sigmoid,
        }
    }
}

impl SpaceArgs {
    /// The encoding asked for, or the default for the data (`images`: cells_image).
    pub fn encoding(&self, images: bool) -> Result<Encoding> {
        match &self.encoding {
            Some(name) => Encoding::from_name(name.trim()),
            None if images => Ok(Encoding::ImageCells),
            None => Ok(Encoding::Layers),
        }
    }

    /// The space of the encoding (default for `images` data, see
    /// [`SpaceArgs::encoding`]): the --space file or the default, with the
    /// overrides applied, checked. Layer options on a cell encoding (and the
    /// other way round) are refused.
    pub fn any_space(&self, images: bool) -> Result<AnySpace> {
        let encoding = self.encoding(images)?;
        if encoding == Encoding::Layers {
            if self.blocks.is_some()
                || self.stem_channels.is_some()
                || self.normal_cells.is_some()
                || self.repeats.is_some()
            {
                return Err(Error::input(
                    "--blocks, --stem-channels, --normal-cells and --repeats shape cell spaces; add --encoding cells_table (or cells_image for images)",
                ));
            }
            return Ok(AnySpace::Layers(self.space()?));
        }
        if self.min_layers.is_some()
            || self.max_layers.is_some()
            || self.min_width.is_some()
            || self.max_width.is_some()
            || self.activations.is_some()
            || self.no_residual
        {
            return Err(Error::input(format!(
                "--min-layers, --max-layers, --min-width, --max-width, --activations and --no-residual shape layer spaces, not {encoding}; use --blocks, --stem-channels, --normal-cells, --repeats"
            )));
        }
        let mut space = match &self.space {
            Some(path) => {
                let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
                AnySpace::from_json(encoding, &text, &path.display().to_string())?
            }
            None => AnySpace::default_for(encoding),
        };
        match &mut space {
            AnySpace::ImageCells(s) => self.override_cells(s),
            AnySpace::TableCells(s) => self.override_cells(s),
            AnySpace::Layers(_) => {}
        }
        space.check()?;
        Ok(space)
    }

    fn override_cells<Op>(&self, space: &mut crate::genome::CellSpace<Op>) {
        if let Some(b) = self.blocks {
            space.blocks = b;
        }
        if let Some(list) = &self.stem_channels {
            space.channels = list.clone();
        }
        if let Some(list) = &self.normal_cells {
            space.normal_cells = list.clone();
        }
        if let Some(list) = &self.repeats {
            space.repeats = list.clone();
        }
    }

    /// The layer space: the --space file (or the default) with the overrides applied, checked.
    pub fn space(&self) -> Result<LayerSpace> {
        let mut space = match &self.space {
            Some(path) => {
                let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
                LayerSpace::from_json(&text, &path.display().to_string())?
            }
            None => LayerSpace::default(),
        };
        if let Some(v) = self.min_layers {
            space.min_layers = v;
        }
        if let Some(v) = self.max_layers {
            space.max_layers = v;
        }
        if let Some(v) = self.min_width {
            space.min_width = v;
        }
        if let Some(v) = self.max_width {
            space.max_width = v;
        }
        if let Some(list) = &self.activations {
            let mut acts: Vec<Activation> = list.iter().map(|&a| a.into()).collect();
            acts.sort();
            acts.dedup();
            space.activations = acts;
        }
        if self.no_residual {
            space.residual = false;
        }
        space.check()?;
        Ok(space)
    }
}

/// The search strategies on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum StrategyArg {
    /// Regularized (aging) evolution (Real et al., AAAI 2019).
    Evolution,
    /// Random search (Li & Talwalkar, UAI 2019).
    Random,
}

/// Options of `gemmule search`.
#[derive(Debug, Args)]
pub struct SearchArgs {
    #[command(flatten)]
    /// The data.
    pub data: DataArgs,
    /// Run directory to create (journal, timings, models).
    #[arg(long, value_name = "RUN")]
    pub out: PathBuf,
    /// Search strategy.
    #[arg(long, value_enum, default_value_t = StrategyArg::Evolution)]
    pub strategy: StrategyArg,
    /// Evaluations (candidates trained) in total.
    #[arg(long, value_name = "N", default_value_t = 40)]
    pub budget: u64,
    /// Stop proposing after this many seconds of wall-clock time (running trainings finish).
    #[arg(long, value_name = "SECONDS")]
    pub time_limit: Option<f64>,
    /// Candidates trained at once, one thread each (default: available cores).
    /// The journal depends on it: resume uses the recorded value.
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    /// Run seed; every random choice flows from it.
    #[arg(long, value_name = "N", default_value_t = 0)]
    pub seed: u64,
    /// Aging evolution's population P (default: scaled to the budget).
    #[arg(long, value_name = "P")]
    pub population: Option<usize>,
    /// Aging evolution's tournament sample size S (default: scaled to P).
    #[arg(long, value_name = "S")]
    pub sample_size: Option<usize>,
    /// Start aging evolution from these genomes instead of random ones: a JSON
    /// file holding one genome or an array of genomes (e.g. minimal networks).
    #[arg(long, value_name = "GENOMES.json")]
    pub seed_genomes: Option<PathBuf>,
    #[command(flatten)]
    /// How candidates are trained and ranked.
    pub trainer: TrainerArgs,
    #[command(flatten)]
    /// The search space.
    pub space: SpaceArgs,
    /// No progress bar.
    #[arg(long, short)]
    pub quiet: bool,
}

/// How every candidate of a search is trained and ranked: the trainer
/// options `search` and `compare` share.
#[derive(Debug, Args)]
pub struct TrainerArgs {
    /// Most epochs per candidate.
    #[arg(long, value_name = "N", default_value_t = 30)]
    pub epochs: u32,
    /// Epochs without an improvement of what --watch follows (the validation
    /// loss by default) before a candidate stops (0: never).
    #[arg(long, value_name = "N", default_value_t = 5)]
    pub patience: u32,
    /// Validation score that ranks candidates.
    #[arg(long, value_enum, default_value_t = Objective::Accuracy)]
    pub objective: Objective,
    /// Candidates with more trainable parameters are recorded as over budget, not trained.
    #[arg(long, value_name = "N")]
    pub max_params: Option<u64>,
    /// Candidates with more multiply-adds per example are recorded as over budget, not trained.
    #[arg(long, value_name = "N")]
    pub max_madds: Option<u64>,
    /// Prefer compact candidates: rank by validation score − λ·log10(parameters)
    /// (the raw scores stay in the journal too).
    #[arg(long, value_name = "LAMBDA")]
    pub size_penalty: Option<f64>,
    /// Candidates whose estimated training memory is over this many MiB are
    /// recorded as over budget, not trained.
    #[arg(long, value_name = "MIB")]
    pub max_memory_mb: Option<u64>,
    /// Shift training images by up to one pixel (seeded; cells_image only).
    #[arg(long)]
    pub augment: bool,
    /// Stop training a candidate once its validation curve, extrapolated
    /// optimistically, cannot reach the population's worst score by its last
    /// epoch (journaled as curve_cut). Aging evolution only: random search
    /// keeps no population (`search` refuses it, `compare` cuts only evolution).
    #[arg(long)]
    pub curve_cut: bool,
    /// Score each candidate by stratified K-fold cross-validation on
    /// train+validation (the test split stays sealed): a number K ≥ 2, `off`
    /// for one validation split, or `auto` (5 folds for tables of at most
    /// 4,000 train+validation rows, one split otherwise and for images).
    #[arg(long, value_name = "K|off|auto", default_value = "auto", value_parser = parse_folds)]
    pub folds: FoldChoice,
    /// What early stopping and the restore of the best weights watch on the
    /// held-out rows: the validation loss or the search objective.
    /// Default: the objective (measured on iris, wine and digits over five
    /// split seeds: equal or higher test accuracy than the loss; docs/verdicts.md).
    #[arg(long, value_enum, default_value_t = WatchArg::Objective)]
    pub watch: WatchArg,
    /// Weight the training loss by class: `balanced` gives each class
    /// n_rows / (n_classes · its rows), so rare classes count as much as
    /// common ones.
    #[arg(long, value_enum, value_name = "balanced")]
    pub class_weight: Option<ClassWeightArg>,
}

/// `--watch` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum WatchArg {
    /// The mean cross-entropy on the held-out rows (lowest is best).
    Loss,
    /// The search objective on the held-out rows (highest is best).
    Objective,
}

/// `--class-weight` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ClassWeightArg {
    /// n_rows / (n_classes · rows of the class), on the rows a network trains on.
    Balanced,
}

/// Reads `--folds`: `auto`, `off` or a whole number of at least 2.
fn parse_folds(text: &str) -> Result<FoldChoice, String> {
    match text {
        "auto" => Ok(FoldChoice::Auto),
        "off" => Ok(FoldChoice::Off),
        number => match number.parse::<u32>() {
            Ok(k) if k >= 2 => Ok(FoldChoice::Exactly(k)),
            _ => Err(format!(
                "{number:?} is not a fold count: give a whole number of 2 or more (such as 5), \
                 `off` for one validation split, or `auto`"
            )),
        },
    }
}

impl TrainerArgs {
    /// The settings these options ask for (the fold count is decided with
    /// the data, from [`TrainerArgs::folds`]).
    pub fn settings(&self) -> TrainerSettings {
        TrainerSettings {
            max_epochs: self.epochs,
            patience: self.patience,
            objective: self.objective,
            max_params: self.max_params,
            max_madds: self.max_madds,
            size_penalty: self.size_penalty,
            max_memory_mb: self.max_memory_mb,
            augment: self.augment,
            curve_cut: self.curve_cut,
            folds: None,
            watch: match self.watch {
                WatchArg::Loss => Watched::Loss,
                WatchArg::Objective => Watched::Objective,
            },
            class_weight: self.class_weight.map(|_| ClassWeighting::Balanced),
        }
    }
}

/// Options of `gemmule resume`.
#[derive(Debug, Args)]
pub struct ResumeArgs {
    /// Run directory made by `gemmule search`.
    #[arg(value_name = "RUN")]
    pub run: PathBuf,
    /// The data file or image folder, if it moved since the run started (its content must be unchanged).
    #[arg(long, value_name = "FILE.csv|DIR")]
    pub data: Option<PathBuf>,
    /// A new total evaluation budget (e.g. to extend a finished run).
    #[arg(long, value_name = "N")]
    pub budget: Option<u64>,
    /// Wall-clock limit of this session in seconds.
    #[arg(long, value_name = "SECONDS")]
    pub time_limit: Option<f64>,
    /// No progress bar.
    #[arg(long, short)]
    pub quiet: bool,
}

/// Options of `gemmule show`.
#[derive(Debug, Args)]
pub struct ShowArgs {
    /// Run directory.
    #[arg(value_name = "RUN")]
    pub run: PathBuf,
    /// Rows of the leaderboard.
    #[arg(long, value_name = "N", default_value_t = 10)]
    pub top: usize,
    /// Draw the architecture of this evaluation (journal index) instead of the best.
    #[arg(long, value_name = "INDEX")]
    pub index: Option<u64>,
    /// Draw with plain ASCII characters (the default when the locale is not UTF-8).
    #[arg(long)]
    pub ascii: bool,
    /// Also write the drawn architecture as a Graphviz DOT file.
    #[arg(long, value_name = "FILE.dot")]
    pub dot: Option<PathBuf>,
    /// Also write the drawn architecture as a standalone SVG file (no Graphviz needed).
    #[arg(long, value_name = "FILE.svg")]
    pub svg: Option<PathBuf>,
    /// Print everything as one JSON document on standard output (keys in docs/json-output.md).
    #[arg(long)]
    pub json: bool,
    /// The pick rule to show (default: one standard error for k-fold runs,
    /// the top objective otherwise; see `finalize --pick`).
    #[arg(long, value_enum)]
    pub pick: Option<PickArg>,
}

/// Options of `gemmule finalize`.
#[derive(Debug, Args)]
pub struct FinalizeArgs {
    /// Run directory.
    #[arg(value_name = "RUN")]
    pub run: PathBuf,
    /// Re-train the best K distinct genomes and pick by mean validation score.
    #[arg(long, value_name = "K", default_value_t = 1)]
    pub top_k: usize,
    /// Seeds per re-trained genome (with --top-k).
    #[arg(long, value_name = "R", default_value_t = 1)]
    pub repeats: usize,
    /// Open the test split again although it was opened before.
    #[arg(long)]
    pub reopen: bool,
    /// The data file or image folder, if it moved since the run started (its content must be unchanged).
    #[arg(long, value_name = "FILE.csv|DIR")]
    pub data: Option<PathBuf>,
    /// Finalize this evaluation (a journal index, as `show` lists them)
    /// instead of the pick, e.g. a member of the Pareto front.
    #[arg(long, value_name = "N")]
    pub index: Option<u64>,
    /// How the pick is made: `one-se` (fewest parameters within one standard
    /// error of the best k-fold mean; the default with folds) or `top` (the
    /// highest objective; the default with one validation split).
    #[arg(long, value_enum)]
    pub pick: Option<PickArg>,
    /// The class whose probability the binary ROC AUC ranks by (default:
    /// the second class in sorted order).
    #[arg(long, value_name = "CLASS")]
    pub positive: Option<String>,
}

/// `--pick` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PickArg {
    /// The one-standard-error rule on k-fold scores.
    OneSe,
    /// The highest validation objective.
    Top,
}

impl PickArg {
    /// The library's rule.
    pub fn rule(self) -> crate::search::PickRule {
        match self {
            PickArg::OneSe => crate::search::PickRule::OneSe,
            PickArg::Top => crate::search::PickRule::Top,
        }
    }
}
