//! Plugs a scoring function of your own into gemmule's strategies: here a
//! cheap stand-in for "train and measure on my own rig" that rewards
//! networks whose total width is close to 96 units and whose learning rate is
//! close to 0.003. The same journal, resume and reports work with it.
//!
//! `cargo run --release --example custom_evaluator`

use gemmule::genome::{LayerGenome, LayerSpace, SearchSpace};
use gemmule::search::{
    run_search, AgingEvolution, AgingSettings, Budget, EvalStatus, Evaluation, Evaluator, Journal,
    JournalContents, QuietObserver, RandomSampling, SearchContext, SearchPlan, Strategy,
};
use std::collections::BTreeMap;
use std::sync::atomic::AtomicBool;
use std::sync::Arc;

/// Your own evaluator: any deterministic function of the genome (and the
/// seed, for noisy ones) that returns an objective, higher is better.
struct WidthTarget;

impl Evaluator<LayerGenome> for WidthTarget {
    fn evaluate(&self, genome: &LayerGenome, _seed: u64) -> Evaluation {
        let width: u32 = genome.layers.iter().map(|l| l.width).sum();
        let lr_miss = (genome.training.learning_rate.log10() - 0.003f64.log10()).abs();
        let score = 1.0 - (f64::from(width) - 96.0).abs() / 96.0 - 0.1 * lr_miss;
        Evaluation {
            status: EvalStatus::Completed,
            objective: Some(score),
            scores: BTreeMap::from([("width_score".to_string(), score)]),
            params: None,
            madds: None,
            epochs: 0,
            best_epoch: 0,
            message: None,
            folds: None,
        }
    }
}

fn search(
    dir: &std::path::Path,
    space: &LayerSpace,
    strategy: &mut dyn Strategy<LayerGenome>,
) -> Result<f64, Box<dyn std::error::Error>> {
    let plan = SearchPlan {
        seed: 7,
        jobs: 2,
        budget: Budget::evaluations(150),
        space: space.describe(),
        data: serde_json::json!({ "note": "no data: a custom scoring function" }),
        trainer: serde_json::json!({ "evaluator": "width_target" }),
        baselines: Vec::new(),
    };
    let stop = AtomicBool::new(false);
    let context = SearchContext {
        space,
        evaluator: Arc::new(WidthTarget),
        strategy,
        observer: &mut QuietObserver,
        stop: &stop,
    };
    let outcome = run_search(dir, &plan, context)?;
    let journal: JournalContents<LayerGenome> = Journal::read(&Journal::path_in(dir))?;
    assert_eq!(
        journal.evaluations.len(),
        150,
        "the whole budget is journaled"
    );
    Ok(outcome.best.map(|(_, v)| v).ok_or("nothing scored")?)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let root = std::env::temp_dir().join(format!("gemmule-custom-eval-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&root);
    let space = Arc::new(LayerSpace::default());

    let settings = AgingSettings::for_budget(150);
    let mut evolution = AgingEvolution::new(space.clone(), settings, 150)?;
    let best_evolution = search(&root.join("evolution"), &space, &mut evolution)?;
    let mut random = RandomSampling::new(space.clone());
    let best_random = search(&root.join("random"), &space, &mut random)?;
    println!("best score: aging evolution {best_evolution:.4}, random search {best_random:.4}");
    // Deterministic for this seed; on a smooth objective like this one,
    // evolution's local steps should do at least as well as random samples.
    assert!(
        best_evolution >= best_random,
        "{best_evolution} < {best_random}"
    );
    std::fs::remove_dir_all(&root)?;
    Ok(())
}
