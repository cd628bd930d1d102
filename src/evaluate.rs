//! The real evaluator: trains a genome of any encoding on the training
//! split and scores it on the validation split.

use crate::data::image::ImageShape;
use crate::data::Dataset;
use crate::genome::{AnyGenome, LayerGenome};
use crate::model::{genome_cost, train_genome_with_cut, training_memory_bytes, InputLayout};
use crate::net::Cost;
use crate::search::{EvalStatus, Evaluation, Evaluator};
use crate::train::{CurveCut, CutVerdict, Objective, Scores, TrainSettings, TrainStatus};
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
}

impl Default for TrainerSettings {
    /// 30 epochs, patience 5, ranked by accuracy, no size caps.
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
        }
    }
}

impl TrainerSettings {
    /// Checks the settings are usable.
    pub fn check(&self) -> crate::Result<()> {
        if self.max_epochs == 0 {
            return Err(crate::Error::input("epochs must be at least 1"));
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

/// Trains candidates on `train` and scores them on `valid`.
#[derive(Debug, Clone)]
pub struct TrainingEvaluator {
    train: Dataset,
    valid: Dataset,
    input: InputLayout,
    settings: TrainerSettings,
}

impl TrainingEvaluator {
    /// An evaluator over tabular splits (flat feature rows).
    pub fn new(train: Dataset, valid: Dataset, settings: TrainerSettings) -> Self {
        let input = InputLayout {
            n_inputs: train.n_features,
            image: None,
        };
        TrainingEvaluator {
            train,
            valid,
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
        };
        let cost = match genome_cost(genome, &self.input, self.train.n_classes) {
            Ok(cost) => cost,
            Err(e) => {
                evaluation.status = EvalStatus::Failed;
                evaluation.message = Some(e.to_string());
                return evaluation;
            }
        };
        evaluation.params = Some(cost.params);
        evaluation.madds = Some(cost.madds);
        let memory = training_memory_bytes(genome, &self.input, self.train.n_classes);
        if let Some(message) = self.over_cap(&cost, memory) {
            evaluation.status = EvalStatus::OverBudget;
            evaluation.message = Some(message);
            return evaluation;
        }
        let settings = TrainSettings {
            max_epochs: self.settings.max_epochs,
            patience: self.settings.patience,
            seed,
        };
        let cut = bar.filter(|_| self.settings.curve_cut).map(|bar| CurveCut {
            bar: bar + self.penalty(cost.params),
            objective: self.settings.objective,
        });
        let trained = train_genome_with_cut(
            genome,
            &self.train,
            Some(&self.valid),
            &self.input,
            &settings,
            self.settings.augment,
            cut,
        );
        match trained {
            Ok(outcome) => {
                evaluation.epochs = outcome.epochs_run;
                evaluation.best_epoch = outcome.best_epoch;
                evaluation.status = match outcome.status {
                    TrainStatus::Completed => EvalStatus::Completed,
                    TrainStatus::EarlyStopped => EvalStatus::EarlyStopped,
                    TrainStatus::Diverged => EvalStatus::Diverged,
                    TrainStatus::CurveCut => EvalStatus::CurveCut,
                };
                if let (Some(verdict), Some(bar)) = (outcome.cut, bar) {
                    evaluation.message = Some(self.cut_message(&verdict, bar, cost.params));
                }
                if let Some(scores) = outcome
                    .scores
                    .filter(|_| outcome.status != TrainStatus::Diverged)
                {
                    let raw = self.settings.objective.value(&scores);
                    evaluation.objective = Some(raw - self.penalty(cost.params));
                    evaluation.scores = scores_map(&scores);
                }
            }
            Err(e) => {
                evaluation.status = EvalStatus::Failed;
                evaluation.message = Some(e.to_string());
            }
        }
        evaluation
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
