//! Command-line options, shared across commands so the same option means the
//! same thing everywhere.

use crate::data::SplitFractions;
use crate::genome::{Activation, LayerSpace};
use crate::train::Objective;
use crate::workflow::DataSource;
use crate::{Error, Result};
use clap::{Args, Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// gemmule: find a compact classifier's architecture by search, on the CPU.
#[derive(Debug, Parser)]
#[command(name = "gemmule", version, about, long_about = None, arg_required_else_help = true)]
pub struct Cli {
    /// The command to run.
    #[command(subcommand)]
    pub command: Command,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Train one genome on a CSV file, print validation scores and save the model.
    #[command(
        after_help = "Example:\n  gemmule train --data wine.csv --genome genome.json --out wine-model"
    )]
    Train(TrainArgs),
    /// Predict classes and class probabilities for the rows of a CSV file.
    #[command(
        after_help = "Example:\n  gemmule predict --model wine-model --data new-rows.csv --out predictions.csv"
    )]
    Predict(PredictArgs),
    /// Print the exact size of a layer search space.
    #[command(after_help = "Example:\n  gemmule space --max-layers 3 --max-width 64")]
    Space(SpaceArgs),
    /// Search architectures on a CSV file; every evaluation goes to RUN/journal.jsonl.
    #[command(
        after_help = "Example:\n  gemmule search --data wine.csv --out runs/wine --budget 60 --jobs 2 --seed 1"
    )]
    Search(SearchArgs),
    /// Continue a stopped or killed search exactly where it left off.
    #[command(after_help = "Example:\n  gemmule resume runs/wine")]
    Resume(ResumeArgs),
    /// Summarize a run: settings, top candidates, best-so-far curve, best architecture.
    #[command(after_help = "Example:\n  gemmule show runs/wine")]
    Show(ShowArgs),
    /// Retrain the best candidate on train+validation and open the sealed test split once.
    #[command(after_help = "Example:\n  gemmule finalize runs/wine --top-k 3 --repeats 3")]
    Finalize(FinalizeArgs),
    /// Run several strategies over several seeds with equal budgets and compare them.
    #[command(
        after_help = "Example:\n  gemmule compare --data wine.csv --out runs/wine-cmp --strategies evolution,random --seeds 5 --budget 60\n\nRunning the same command again continues an unfinished comparison."
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
    /// CSV file with a header row; one row per example.
    #[arg(long, value_name = "FILE.csv")]
    pub data: PathBuf,
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
    /// Train, validation and test shares, comma-separated.
    #[arg(long, value_name = "T,V,S", default_value = "0.70,0.15,0.15")]
    pub split: String,
    /// Seed of the stratified split.
    #[arg(long, value_name = "N", default_value_t = 0)]
    pub split_seed: u64,
}

impl DataArgs {
    /// The data source these options describe.
    pub fn source(&self) -> Result<DataSource> {
        let parts: Vec<&str> = self.split.split(',').map(str::trim).collect();
        let parse = |s: &str| -> Result<f64> {
            s.parse::<f64>().map_err(|_| {
                Error::input(format!(
                    "--split {}: `{s}` is not a number; give three shares such as 0.70,0.15,0.15",
                    self.split
                ))
            })
        };
        if parts.len() != 3 {
            return Err(Error::input(format!(
                "--split {}: give three comma-separated shares (train,validation,test), such as 0.70,0.15,0.15",
                self.split
            )));
        }
        let fractions = SplitFractions {
            train: parse(parts[0])?,
            valid: parse(parts[1])?,
            test: parse(parts[2])?,
        };
        fractions.validate()?;
        Ok(DataSource {
            path: self.data.clone(),
            label: self.label.clone(),
            delimiter: self.delimiter,
            impute: self.impute,
            fractions,
            split_seed: self.split_seed,
        })
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
    /// Folder to save the model in (model.json + model.safetensors).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
}

/// Options of `gemmule predict`.
#[derive(Debug, Args)]
pub struct PredictArgs {
    /// Model folder made by `gemmule train` or `gemmule finalize` (RUN/final).
    #[arg(long, value_name = "DIR")]
    pub model: PathBuf,
    /// CSV file with the training features (the label column is optional).
    #[arg(long, value_name = "FILE.csv")]
    pub data: PathBuf,
    /// Field delimiter, one character (default: comma).
    #[arg(long, value_name = "CHAR")]
    pub delimiter: Option<char>,
    /// Write predictions here instead of standard output.
    #[arg(long, value_name = "FILE.csv")]
    pub out: Option<PathBuf>,
}

/// Bounds of the layer search space (each overrides the default or --space file).
#[derive(Debug, Args, Default)]
pub struct SpaceArgs {
    /// Search-space JSON file (see docs/search-spaces.md); options below override it.
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
    /// The space: the --space file (or the default) with the overrides applied, checked.
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
    /// Most epochs per candidate.
    #[arg(long, value_name = "N", default_value_t = 30)]
    pub epochs: u32,
    /// Epochs without a lower validation loss before a candidate stops (0: never).
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
    #[command(flatten)]
    /// The search space.
    pub space: SpaceArgs,
    /// No progress bar.
    #[arg(long, short)]
    pub quiet: bool,
}

/// Options of `gemmule resume`.
#[derive(Debug, Args)]
pub struct ResumeArgs {
    /// Run directory made by `gemmule search`.
    #[arg(value_name = "RUN")]
    pub run: PathBuf,
    /// The data file, if it moved since the run started (its content must be unchanged).
    #[arg(long, value_name = "FILE.csv")]
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
    /// The data file, if it moved since the run started (its content must be unchanged).
    #[arg(long, value_name = "FILE.csv")]
    pub data: Option<PathBuf>,
}
