//! The real evaluator: trains a genome of any encoding on the training
//! split and scores it on the validation split, or, with k-fold scoring,
//! trains it once per fold and scores the mean over the held-out folds.

use crate::data::image::ImageShape;
use crate::data::{Dataset, Fold};
use crate::genome::{AnyGenome, LayerGenome, Optimizer, TrainGenes};
use crate::model::{genome_cost, train_genome_with_cut, training_memory_bytes, InputLayout};
use crate::net::Cost;
use crate::search::seeds::derive;
use crate::search::{
    storable, BaselineRecord, EvalStatus, Evaluation, Evaluator, FoldResult, FoldScores,
    LINEAR_BASELINE, MAJORITY_BASELINE,
};
use crate::train::{
    score, CurveCut, CutVerdict, Objective, Scores, TrainSettings, TrainStatus, Watch,
};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// How every candidate of a search is trained and ranked; recorded in the
/// journal header so compared runs can be shown to share it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TrainerSettings {
    /// Most epochs a candidate trains.
    pub max_epochs: u32,
    /// Epochs without a lower validation loss before stopping (0 = never stop early).
    pub patience: u32,
    /// The validation score candidates are ranked by.
    pub objective: Objective,
    /// Candidates with more trainable parameters are not trained ("over budget").
    #[serde(default)]
    pub max_params: Option<u64>,
    /// Candidates with more multiply-adds per sample are not trained ("over budget").
    #[serde(default)]
    pub max_madds: Option<u64>,
    /// Compactness weight λ: when set, a scored candidate's `objective` is its
    /// validation score − λ·log10(parameters) ([`penalised_objective`]), while
    /// its `scores` stay the raw validation scores. Left out of the journal
    /// header when unset, so runs without it read and resume as before.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub size_penalty: Option<f64>,
    /// Candidates whose estimated training memory
    /// ([`crate::model::training_memory_bytes`]) is over this many MiB are not
    /// trained ("over budget"). Left out of the header when unset.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_memory_mb: Option<u64>,
    /// Shift training images by up to one pixel, seeded (image cell genomes
    /// only). Left out of the header when off.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub augment: bool,
    /// The learning-curve cut: stop a candidate whose validation curve
    /// cannot reach the strategy's bar (aging evolution: the population's
    /// worst objective) by its last epoch, and journal it as `curve_cut`
    /// ([`crate::train::CurveWatch`]). Off by default; left out of the
    /// header when off.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub curve_cut: bool,
    /// K of stratified K-fold scoring on train+validation (`None`: one
    /// validation split). Left out of the header when `None`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub folds: Option<u32>,
    /// What early stopping and the best-weight restore watch on the
    /// held-out rows. Left out of the header for the validation loss, so a
    /// header without it (every run made before the option existed) means
    /// the loss; [`TrainerSettings::default`] and the command line watch the
    /// objective.
    #[serde(default, skip_serializing_if = "Watched::is_loss")]
    pub watch: Watched,
    /// Class weights of the training loss (`None`: every row counts alike).
    /// Left out of the header when `None`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub class_weight: Option<ClassWeighting>,
}

/// What a candidate's training watches on its held-out rows to stop early
/// and to choose the epoch whose weights it keeps.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Watched {
    /// The mean cross-entropy (lowest is best).
    #[default]
    Loss,
    /// The search objective (highest is best; ties go to the lower loss).
    Objective,
}

impl Watched {
    /// True for [`Watched::Loss`], the default (left out of headers).
    pub fn is_loss(&self) -> bool {
        *self == Watched::Loss
    }

    /// The trainer's form of this choice for `objective`.
    pub fn watch(self, objective: Objective) -> Watch {
        match self {
            Watched::Loss => Watch::Loss,
            Watched::Objective => Watch::Objective(objective),
        }
    }
}

/// How the rows of each class are weighted in the training loss.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ClassWeighting {
    /// Each class weighs n_rows / (n_classes · its rows), counted on the
    /// rows a network is trained on (scikit-learn's "balanced" rule).
    Balanced,
}

impl Default for TrainerSettings {
    /// 30 epochs, patience 5, ranked by accuracy, early stopping and the
    /// best-weight restore watching the objective, no size caps.
    fn default() -> Self {
        TrainerSettings {
            max_epochs: 30,
            patience: 5,
            objective: Objective::Accuracy,
            max_params: None,
            max_madds: None,
            size_penalty: None,
            max_memory_mb: None,
            augment: false,
            curve_cut: false,
            folds: None,
            watch: Watched::Objective,
            class_weight: None,
        }
    }
}

impl TrainerSettings {
    /// Checks the settings are usable.
    pub fn check(&self) -> crate::Result<()> {
        if self.max_epochs == 0 {
            return Err(crate::Error::input("epochs must be at least 1"));
        }
        if let Some(k) = self.folds.filter(|&k| k < 2) {
            return Err(crate::Error::input(format!(
                "--folds is {k}; k-fold scoring needs at least 2 folds (or --folds off for one \
                 validation split)"
            )));
        }
        if let Some(lambda) = self.size_penalty {
            if !(lambda.is_finite() && lambda >= 0.0) {
                return Err(crate::Error::input(format!(
                    "--size-penalty is {lambda}; give a finite number of 0 or more, such as 0.01"
                )));
            }
        }
        Ok(())
    }
}

/// The compactness-penalised objective `score − lambda·log10(params)`; a
/// count of 0 is taken as 1 (no penalty), so the value stays finite.
pub fn penalised_objective(score: f64, params: u64, lambda: f64) -> f64 {
    score - lambda * (params.max(1) as f64).log10()
}

/// All scores by name, as the journal stores them.
pub fn scores_map(scores: &Scores) -> BTreeMap<String, f64> {
    BTreeMap::from([
        ("accuracy".to_string(), scores.accuracy),
        ("balanced_accuracy".to_string(), scores.balanced_accuracy),
        ("log_loss".to_string(), scores.log_loss),
        ("macro_f1".to_string(), scores.macro_f1),
    ])
}

/// Seed stream of the folds of one candidate (ASCII "folding").
const FOLD_STREAM: u64 = 0x0066_6f6c_6469_6e67;

/// The training seed of fold `fold` of a candidate evaluated with `seed`.
pub fn fold_seed(seed: u64, fold: usize) -> u64 {
    derive(seed, FOLD_STREAM, fold as u64)
}

/// Trains candidates on `train` and scores them on `valid`; or, built with
/// [`TrainingEvaluator::with_folds`], once per fold, scored by the mean.
#[derive(Debug, Clone)]
pub struct TrainingEvaluator {
    parts: Vec<Fold>,
    folded: bool,
    input: InputLayout,
    settings: TrainerSettings,
}

/// What training on one part gave.
struct PartResult {
    status: EvalStatus,
    scores: Option<Scores>,
    epochs: u32,
    best_epoch: u32,
    cut: Option<CutVerdict>,
    /// Why the part failed, for a failed part.
    failure: Option<String>,
}

impl TrainingEvaluator {
    /// An evaluator over tabular splits (flat feature rows).
    pub fn new(train: Dataset, valid: Dataset, settings: TrainerSettings) -> Self {
        let input = InputLayout {
            n_inputs: train.n_features,
            image: None,
        };
        TrainingEvaluator {
            parts: vec![Fold {
                train,
                held_out: valid,
            }],
            folded: false,
            input,
            settings,
        }
    }

    /// An evaluator over image splits of `shape` (rows in CHW order); image
    /// cell genomes need it, layer genomes read the pixels as flat rows.
    pub fn for_images(
        train: Dataset,
        valid: Dataset,
        shape: ImageShape,
        settings: TrainerSettings,
    ) -> Self {
        let mut evaluator = TrainingEvaluator::new(train, valid, settings);
        evaluator.input.image = Some(shape);
        evaluator
    }

    /// A k-fold evaluator: each candidate trains once per fold (with seed
    /// [`fold_seed`]`(seed, fold)`, its own early stopping) and is scored by
    /// the mean objective over the held-out folds; the evaluation keeps every
    /// fold ([`FoldScores`]). At least two folds; all with the same inputs.
    pub fn with_folds(
        folds: Vec<Fold>,
        image: Option<ImageShape>,
        settings: TrainerSettings,
    ) -> crate::Result<Self> {
        let Some(first) = folds.first() else {
            return Err(crate::Error::internal("k-fold scoring without folds"));
        };
        if folds.len() < 2 {
            return Err(crate::Error::internal("k-fold scoring needs two folds"));
        }
        let input = InputLayout {
            n_inputs: first.train.n_features,
            image,
        };
        Ok(TrainingEvaluator {
            parts: folds,
            folded: true,
            input,
            settings,
        })
    }

    /// The training/held-out pairs candidates are scored on (one, or one per fold).
    pub fn parts(&self) -> &[Fold] {
        &self.parts
    }

    /// What the networks read.
    pub fn input(&self) -> &InputLayout {
        &self.input
    }

    /// Classes of the data.
    fn n_classes(&self) -> usize {
        self.parts[0].train.n_classes
    }

    /// The settings candidates are trained with.
    pub fn settings(&self) -> &TrainerSettings {
        &self.settings
    }

    /// The size penalty subtracted from a raw score for `params` parameters
    /// (0 without `--size-penalty`); see [`penalised_objective`].
    fn penalty(&self, params: u64) -> f64 {
        match self.settings.size_penalty {
            Some(lambda) => -penalised_objective(0.0, params, lambda),
            None => 0.0,
        }
    }

    /// The journal message of a cut candidate, in objective terms.
    fn cut_message(&self, verdict: &CutVerdict, bar: f64, params: u64) -> String {
        let penalty = self.penalty(params);
        format!(
            "learning-curve cut after epoch {} of {}: best {} so far {:.4}, rising at most {:.4} \
             per epoch, projects to {:.4} by the last epoch, below the population's worst {:.4}",
            verdict.epoch,
            self.settings.max_epochs,
            self.settings.objective.name(),
            verdict.best - penalty,
            verdict.slope,
            verdict.projected - penalty,
            bar
        )
    }

    /// Why `genome` is not trained (a cap it exceeds), if it is not.
    fn over_cap(&self, cost: &Cost, memory: u64) -> Option<String> {
        if let Some(cap) = self.settings.max_params.filter(|&cap| cost.params > cap) {
            return Some(format!(
                "{} parameters is over the cap of {cap}",
                cost.params
            ));
        }
        if let Some(cap) = self.settings.max_madds.filter(|&cap| cost.madds > cap) {
            return Some(format!(
                "{} multiply-adds is over the cap of {cap}",
                cost.madds
            ));
        }
        if let Some(cap) = self
            .settings
            .max_memory_mb
            .filter(|&cap| memory > cap.saturating_mul(1 << 20))
        {
            return Some(format!(
                "its training would need about {} MiB, over the memory cap of {cap} MiB",
                memory.div_ceil(1 << 20)
            ));
        }
        None
    }
}

impl Evaluator<AnyGenome> for TrainingEvaluator {
    fn evaluate(&self, genome: &AnyGenome, seed: u64) -> Evaluation {
        self.evaluate_with_bar(genome, seed, None)
    }

    /// With `curve_cut` on and a bar given, training stops once the
    /// validation curve cannot reach the bar (converted to a raw score by
    /// adding back the candidate's size penalty).
    fn evaluate_with_bar(&self, genome: &AnyGenome, seed: u64, bar: Option<f64>) -> Evaluation {
        let mut evaluation = Evaluation {
            status: EvalStatus::Completed,
            objective: None,
            scores: BTreeMap::new(),
            params: None,
            madds: None,
            epochs: 0,
            best_epoch: 0,
            message: None,
            folds: None,
        };
        let cost = match genome_cost(genome, &self.input, self.n_classes()) {
            Ok(cost) => cost,
            Err(e) => {
                evaluation.status = EvalStatus::Failed;
                evaluation.message = Some(e.to_string());
                return evaluation;
            }
        };
        evaluation.params = Some(cost.params);
        evaluation.madds = Some(cost.madds);
        let memory = training_memory_bytes(genome, &self.input, self.n_classes());
        if let Some(message) = self.over_cap(&cost, memory) {
            evaluation.status = EvalStatus::OverBudget;
            evaluation.message = Some(message);
            return evaluation;
        }
        let cut = bar.filter(|_| self.settings.curve_cut).map(|bar| CurveCut {
            bar: bar + self.penalty(cost.params),
            objective: self.settings.objective,
        });
        if !self.folded {
            let part = self.train_part(genome, &self.parts[0], seed, cut);
            return self.single_split(evaluation, part, bar, cost.params);
        }
        let mut results = Vec::with_capacity(self.parts.len());
        for (fold, part) in self.parts.iter().enumerate() {
            let result = self.train_part(genome, part, fold_seed(seed, fold), cut);
            let stop = !matches!(
                result.status,
                EvalStatus::Completed | EvalStatus::EarlyStopped
            );
            results.push(result);
            if stop {
                // A diverged, failed or cut fold ends the candidate: the
                // remaining folds could not change that verdict.
                break;
            }
        }
        self.combine_folds(evaluation, results, bar, cost.params)
    }
}

impl TrainingEvaluator {
    /// Trains `genome` on one part and scores it on the part's held-out rows.
    fn train_part(
        &self,
        genome: &AnyGenome,
        part: &Fold,
        seed: u64,
        cut: Option<CurveCut>,
    ) -> PartResult {
        let mut settings =
            TrainSettings::new(self.settings.max_epochs, self.settings.patience, seed);
        settings.watch = self.settings.watch.watch(self.settings.objective);
        if let Some(ClassWeighting::Balanced) = self.settings.class_weight {
            match balanced_weights(&part.train) {
                Ok(weights) => settings.class_weights = Some(weights),
                Err(e) => return PartResult::failed(e),
            }
        }
        let trained = train_genome_with_cut(
            genome,
            &part.train,
            Some(&part.held_out),
            &self.input,
            &settings,
            self.settings.augment,
            cut,
        );
        match trained {
            Ok(outcome) => PartResult {
                status: match outcome.status {
                    TrainStatus::Completed => EvalStatus::Completed,
                    TrainStatus::EarlyStopped => EvalStatus::EarlyStopped,
                    TrainStatus::Diverged => EvalStatus::Diverged,
                    TrainStatus::CurveCut => EvalStatus::CurveCut,
                },
                scores: outcome
                    .scores
                    .filter(|_| outcome.status != TrainStatus::Diverged),
                epochs: outcome.epochs_run,
                best_epoch: outcome.best_epoch,
                cut: outcome.cut,
                failure: None,
            },
            Err(e) => PartResult::failed(e),
        }
    }

    /// The evaluation of a single validation split (the journal form of
    /// every run made before k-fold scoring existed).
    fn single_split(
        &self,
        mut evaluation: Evaluation,
        part: PartResult,
        bar: Option<f64>,
        params: u64,
    ) -> Evaluation {
        evaluation.status = part.status;
        evaluation.epochs = part.epochs;
        evaluation.best_epoch = part.best_epoch;
        if let Some(message) = part.message() {
            evaluation.message = Some(message);
        }
        if let (Some(verdict), Some(bar)) = (&part.cut, bar) {
            evaluation.message = Some(self.cut_message(verdict, bar, params));
        }
        if let Some(scores) = &part.scores {
            let raw = self.settings.objective.value(scores);
            evaluation.objective = Some(raw - self.penalty(params));
            evaluation.scores = scores_map(scores);
        }
        evaluation
    }

    /// The evaluation of k-fold scoring: means over the folds, every fold kept.
    fn combine_folds(
        &self,
        mut evaluation: Evaluation,
        results: Vec<PartResult>,
        bar: Option<f64>,
        params: u64,
    ) -> Evaluation {
        let penalty = self.penalty(params);
        let last = results.last();
        evaluation.status = match last.map(|r| r.status) {
            Some(EvalStatus::Completed) | None => {
                if results.iter().any(|r| r.status == EvalStatus::EarlyStopped) {
                    EvalStatus::EarlyStopped
                } else {
                    EvalStatus::Completed
                }
            }
            Some(other) => other,
        };
        if let Some(message) = last.and_then(PartResult::message) {
            evaluation.message = Some(format!("fold {}: {message}", results.len()));
        }
        if let (Some(verdict), Some(bar)) = (last.and_then(|r| r.cut.as_ref()), bar) {
            evaluation.message = Some(format!(
                "fold {}: {}",
                results.len(),
                self.cut_message(verdict, bar, params)
            ));
        }
        let each: Vec<FoldResult> = results
            .iter()
            .map(|r| FoldResult {
                status: r.status,
                objective: r
                    .scores
                    .as_ref()
                    .map(|s| self.settings.objective.value(s) - penalty),
                scores: r.scores.as_ref().map(scores_map).unwrap_or_default(),
                epochs: r.epochs,
                best_epoch: r.best_epoch,
            })
            .collect();
        evaluation.epochs = each.iter().map(|f| f.epochs).sum();
        let best_epochs: Vec<f64> = each.iter().map(|f| f64::from(f.best_epoch)).collect();
        evaluation.best_epoch =
            (best_epochs.iter().sum::<f64>() / best_epochs.len().max(1) as f64).round() as u32;
        let objectives: Option<Vec<f64>> = each.iter().map(|f| f.objective).collect();
        let scored = matches!(
            evaluation.status,
            EvalStatus::Completed | EvalStatus::EarlyStopped | EvalStatus::CurveCut
        );
        let mut standard_error = None;
        if let (Some(objectives), true) = (objectives, scored) {
            let (mean, se) = mean_and_standard_error(&objectives);
            evaluation.objective = Some(mean);
            standard_error = se;
            let mut means: BTreeMap<String, f64> = BTreeMap::new();
            for fold in &each {
                for (name, value) in &fold.scores {
                    *means.entry(name.clone()).or_default() += value / each.len() as f64;
                }
            }
            evaluation.scores = means;
        }
        evaluation.folds = Some(FoldScores {
            k: self.parts.len() as u32,
            standard_error,
            each,
        });
        evaluation
    }
}

impl PartResult {
    fn failed(error: crate::Error) -> PartResult {
        PartResult {
            status: EvalStatus::Failed,
            scores: None,
            epochs: 0,
            best_epoch: 0,
            cut: None,
            failure: Some(error.to_string()),
        }
    }

    /// The failure text of a failed part.
    fn message(&self) -> Option<String> {
        self.failure.clone()
    }
}

/// Balanced class weights of the rows `train` holds (see
/// [`ClassWeighting::Balanced`]), as the trainer takes them; also used by
/// the final training on train+validation.
pub(crate) fn balanced_weights(train: &Dataset) -> crate::Result<Vec<f32>> {
    let mut counts = vec![0usize; train.n_classes];
    for &class in &train.y {
        counts[class as usize] += 1;
    }
    let weights = crate::metrics::balanced_class_weights(&counts)?;
    Ok(weights.into_iter().map(|w| w as f32).collect())
}

/// Mean and standard error (sample standard deviation / √n; `None` below
/// two values) of `values`.
fn mean_and_standard_error(values: &[f64]) -> (f64, Option<f64>) {
    match crate::metrics::mean_and_standard_error(values) {
        Ok(summary) => (summary.mean, Some(summary.standard_error)),
        Err(_) => (
            values.iter().sum::<f64>() / values.len().max(1) as f64,
            None,
        ),
    }
}

impl TrainingEvaluator {
    /// The two baselines, scored on the same split or folds as every
    /// candidate: the majority class (probabilities = the training class
    /// shares) and the linear model ([`linear_baseline_genome`], trained
    /// like a candidate with `seed`, but for at least
    /// [`LINEAR_BASELINE_MIN_EPOCHS`] epochs with a patience of at least
    /// [`LINEAR_BASELINE_MIN_PATIENCE`] (when early stopping is on): a convex
    /// model that is stopped before it converges would make a weak
    /// baseline and flatter the search). Size caps do not apply to them;
    /// with `--size-penalty` the linear model's objective is penalised like
    /// a candidate's (its parameters counted), so the two compare on one
    /// scale.
    pub fn baselines(&self, seed: u64) -> Vec<BaselineRecord> {
        let mut plain = self.clone();
        plain.settings.max_epochs = plain.settings.max_epochs.max(LINEAR_BASELINE_MIN_EPOCHS);
        if plain.settings.patience > 0 {
            plain.settings.patience = plain.settings.patience.max(LINEAR_BASELINE_MIN_PATIENCE);
        }
        plain.settings.max_params = None;
        plain.settings.max_madds = None;
        plain.settings.max_memory_mb = None;
        plain.settings.curve_cut = false;
        let linear = AnyGenome::Layers(linear_baseline_genome());
        let majority = plain.majority_class();
        vec![
            BaselineRecord {
                name: MAJORITY_BASELINE.to_string(),
                genome: None,
                evaluation: storable(majority),
            },
            BaselineRecord {
                name: LINEAR_BASELINE.to_string(),
                genome: serde_json::to_value(&linear).ok(),
                evaluation: storable(Evaluator::<AnyGenome>::evaluate(&plain, &linear, seed)),
            },
        ]
    }

    /// The majority-class baseline's evaluation (nothing is trained).
    fn majority_class(&self) -> Evaluation {
        let results = self
            .parts
            .iter()
            .map(|part| {
                let n_classes = part.train.n_classes;
                let mut shares = vec![0.0f64; n_classes];
                for &class in &part.train.y {
                    shares[class as usize] += 1.0 / part.train.y.len().max(1) as f64;
                }
                let probabilities: Vec<f32> = (0..part.held_out.len())
                    .flat_map(|_| shares.iter().map(|&p| p as f32))
                    .collect();
                PartResult {
                    status: EvalStatus::Completed,
                    scores: Some(score(&probabilities, &part.held_out.y, n_classes)),
                    epochs: 0,
                    best_epoch: 0,
                    cut: None,
                    failure: None,
                }
            })
            .collect::<Vec<_>>();
        let evaluation = Evaluation {
            status: EvalStatus::Completed,
            objective: None,
            scores: BTreeMap::new(),
            params: Some(0),
            madds: Some(0),
            epochs: 0,
            best_epoch: 0,
            message: None,
            folds: None,
        };
        if self.folded {
            self.combine_folds(evaluation, results, None, 0)
        } else {
            let mut results = results;
            self.single_split(evaluation, results.remove(0), None, 0)
        }
    }
}

/// Fewest epochs the linear baseline trains (see [`TrainingEvaluator::baselines`]).
pub const LINEAR_BASELINE_MIN_EPOCHS: u32 = 300;
/// Smallest patience of the linear baseline when early stopping is on.
pub const LINEAR_BASELINE_MIN_PATIENCE: u32 = 20;

/// The linear baseline's genome: no hidden layer (softmax regression on the
/// encoded features), Adam with learning rate 0.01 and mini-batches of 32.
pub fn linear_baseline_genome() -> LayerGenome {
    LayerGenome {
        layers: Vec::new(),
        training: TrainGenes {
            learning_rate: 0.01,
            batch_size: 32,
            weight_decay: 0.0,
            optimizer: Optimizer::Adam,
        },
    }
}

impl Evaluator<LayerGenome> for TrainingEvaluator {
    /// As for [`AnyGenome::Layers`].
    fn evaluate(&self, genome: &LayerGenome, seed: u64) -> Evaluation {
        Evaluator::<AnyGenome>::evaluate(self, &AnyGenome::Layers(genome.clone()), seed)
    }

    /// As for [`AnyGenome::Layers`].
    fn evaluate_with_bar(&self, genome: &LayerGenome, seed: u64, bar: Option<f64>) -> Evaluation {
        let genome = AnyGenome::Layers(genome.clone());
        Evaluator::<AnyGenome>::evaluate_with_bar(self, &genome, seed, bar)
    }
}
