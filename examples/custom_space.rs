//! Defines a search space and a mutation catalogue of your own: at most two
//! hidden layers of 8..=48 units, ReLU or GELU, and a mutation mix that only
//! reshapes layers (no training-gene mutations), then searches the shipped
//! wine table with it and checks every candidate stayed inside the space.
//!
//! `cargo run --release --example custom_space`

use gemmule::genome::{Activation, AnyGenome, LayerSpace, MutationWeights, SearchSpace};
use gemmule::search::{Journal, JournalContents, QuietObserver};
use gemmule::workflow::{DataSource, SearchJob};
use std::path::Path;
use std::sync::atomic::AtomicBool;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let run_dir = std::env::temp_dir().join(format!("gemmule-custom-space-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&run_dir);

    let space = LayerSpace {
        min_layers: 1,
        max_layers: 2,
        min_width: 8,
        max_width: 48,
        activations: vec![Activation::Relu, Activation::Gelu],
        learning_rates: vec![0.003, 0.01],
        mutation_weights: MutationWeights {
            width: 3.0,
            insert_layer: 1.0,
            remove_layer: 1.0,
            activation: 1.0,
            add_skip: 0.5,
            remove_skip: 0.5,
            learning_rate: 0.0,
            batch_size: 0.0,
            dropout: 0.0,
            weight_decay: 0.0,
            optimizer: 0.0,
            identity: 0.0,
        },
        ..LayerSpace::default()
    };
    space.check()?;
    println!("the space holds {} genomes", space.size());

    let mut job = SearchJob::new(DataSource::new(root.join("data/examples/wine.csv")))
        .space(space.clone())
        .evaluations(16)
        .jobs(2)
        .seed(4);
    job.trainer.max_epochs = 15;
    job.run(&run_dir, &mut QuietObserver, &AtomicBool::new(false))?;

    let journal: JournalContents<AnyGenome> = Journal::read(&Journal::path_in(&run_dir))?;
    assert_eq!(journal.evaluations.len(), 16);
    for record in &journal.evaluations {
        let AnyGenome::Layers(genome) = &record.genome else {
            panic!("a layer space proposes layer genomes");
        };
        space.validate(genome)?;
        if let Some(mutation) = &record.mutation {
            assert!(
                ![
                    "learning_rate",
                    "batch_size",
                    "dropout",
                    "weight_decay",
                    "optimizer"
                ]
                .contains(&mutation.as_str()),
                "mutation {mutation} has weight 0"
            );
        }
    }
    println!("16 candidates, all inside the space, only layer-shaping mutations");
    std::fs::remove_dir_all(&run_dir)?;
    Ok(())
}
