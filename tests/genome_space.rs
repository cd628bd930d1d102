//! Layer genomes and their search space: size formula, validation, mutations.

use gemmule::genome::{
    Activation, LayerGene, LayerGenome, LayerMutation, LayerSpace, Optimizer, SearchSpace,
    SeededRng, TrainGenes,
};
use num_bigint::BigUint;
use rand::SeedableRng;
use std::collections::{BTreeMap, BTreeSet};

fn tiny_space() -> LayerSpace {
    LayerSpace {
        min_layers: 0,
        max_layers: 3,
        min_width: 1,
        max_width: 3,
        activations: vec![Activation::Relu, Activation::Tanh],
        residual: true,
        dropouts: vec![0.0, 0.5],
        learning_rates: vec![1e-3, 1e-2],
        batch_sizes: vec![32],
        weight_decays: vec![0.0],
        optimizers: vec![Optimizer::Adam],
        ..LayerSpace::default()
    }
}

fn genome(widths: &[u32]) -> LayerGenome {
    LayerGenome {
        layers: widths
            .iter()
            .map(|&w| LayerGene {
                width: w,
                activation: Activation::Relu,
                residual: false,
                dropout: 0.0,
            })
            .collect(),
        training: TrainGenes {
            learning_rate: 1e-3,
            batch_size: 32,
            weight_decay: 0.0,
            optimizer: Optimizer::Adam,
        },
    }
}

/// Arithmetic check named in the issue: 20 layers of widths 1..=15 at fixed
/// depth, one activation, no other choices: 15^20 members.
#[test]
fn size_of_twenty_layers_of_fifteen_widths() {
    let space = LayerSpace {
        min_layers: 20,
        max_layers: 20,
        min_width: 1,
        max_width: 15,
        activations: vec![Activation::Relu],
        residual: false,
        dropouts: vec![0.0],
        learning_rates: vec![1e-3],
        batch_sizes: vec![32],
        weight_decays: vec![0.0],
        optimizers: vec![Optimizer::Adam],
        ..LayerSpace::default()
    };
    let expected: BigUint = "332525673007965087890625".parse().unwrap();
    assert_eq!(space.size(), expected);
    assert_eq!(BigUint::from(15u32).pow(20), expected);
}

/// Enumerates every candidate of a tiny space by brute force (all gene
/// combinations, kept when the space accepts them) and compares with the formula.
#[test]
fn brute_force_enumeration_matches_size_formula() {
    let space = tiny_space();
    let mut layer_options = Vec::new();
    for width in space.min_width..=space.max_width {
        for &activation in &space.activations {
            for &dropout in &space.dropouts {
                for residual in [false, true] {
                    layer_options.push(LayerGene {
                        width,
                        activation,
                        residual,
                        dropout,
                    });
                }
            }
        }
    }
    let mut seen = BTreeSet::new();
    let mut stacks: Vec<Vec<LayerGene>> = vec![vec![]];
    for depth in 0..=space.max_layers {
        if depth > 0 {
            stacks = stacks
                .iter()
                .flat_map(|s| {
                    layer_options.iter().map(move |l| {
                        let mut n = s.clone();
                        n.push(l.clone());
                        n
                    })
                })
                .collect();
        }
        for stack in &stacks {
            for &lr in &space.learning_rates {
                let mut g = genome(&[]);
                g.layers = stack.clone();
                g.training.learning_rate = lr;
                if space.validate(&g).is_ok() {
                    seen.insert(g.canonical_json());
                }
            }
        }
    }
    assert_eq!(BigUint::from(seen.len()), space.size());
    // Hand arithmetic for this space: W=3, A·D=4, T=2; depth 0: 1, depth 1: 12,
    // depth 2: 12·16 = 192, depth 3: 12·16² = 3072; (1+12+192+3072)·2 = 6554.
    assert_eq!(space.size(), BigUint::from(6554u32));
}

#[test]
fn mutations_stay_in_bounds_and_every_operator_is_reachable() {
    let space = LayerSpace {
        optimizers: vec![Optimizer::Adam, Optimizer::SgdMomentum],
        min_layers: 1,
        max_layers: 5,
        ..LayerSpace::default()
    };
    let mut rng = SeededRng::seed_from_u64(7);
    let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
    let mut parent = space.sample(&mut rng);
    for i in 0..10_000 {
        if i % 50 == 0 {
            parent = space.sample(&mut rng);
        }
        let child = space.mutate(&parent, &mut rng);
        space
            .validate(&child.genome)
            .unwrap_or_else(|e| panic!("{} made an invalid child: {e}", child.mutation));
        if child.mutation != "identity" {
            assert_ne!(child.genome, parent, "{} changed nothing", child.mutation);
        } else {
            assert_eq!(child.genome, parent);
        }
        *counts.entry(child.mutation).or_default() += 1;
        parent = child.genome;
    }
    for m in LayerMutation::ALL {
        assert!(
            counts.get(m.name()).copied().unwrap_or(0) > 0,
            "{} never drawn",
            m.name()
        );
    }
}

#[test]
fn operators_that_cannot_apply_are_not_drawn() {
    let space = LayerSpace {
        min_layers: 1,
        max_layers: 1,
        ..LayerSpace::default()
    };
    let mut rng = SeededRng::seed_from_u64(1);
    let parent = genome(&[8]);
    for _ in 0..500 {
        let m = space.mutate(&parent, &mut rng).mutation;
        assert!(![
            "insert_layer",
            "remove_layer",
            "add_skip",
            "remove_skip",
            "optimizer"
        ]
        .contains(&m));
    }
}

#[test]
fn learning_rate_moves_one_step_on_its_grid() {
    let space = LayerSpace::default();
    let mut rng = SeededRng::seed_from_u64(3);
    let parent = genome(&[8]);
    for _ in 0..50 {
        let child = LayerMutation::LearningRate.apply(&space, &parent, &mut rng);
        let lr = child.training.learning_rate;
        assert!(lr == 3e-4 || lr == 3e-3, "1e-3 stepped to {lr}");
    }
}

#[test]
fn add_skip_makes_widths_equal_and_width_change_drops_broken_skips() {
    let space = LayerSpace::default();
    let mut rng = SeededRng::seed_from_u64(5);
    let parent = genome(&[16, 40]);
    let child = LayerMutation::AddSkip.apply(&space, &parent, &mut rng);
    assert_eq!(child.layers[1].width, 16);
    assert!(child.layers[1].residual);
    space.validate(&child).unwrap();
    for _ in 0..20 {
        let grandchild = LayerMutation::Width.apply(&space, &child, &mut rng);
        space.validate(&grandchild).unwrap();
        if grandchild.layers[0].width != grandchild.layers[1].width {
            assert!(!grandchild.layers[1].residual);
        }
    }
}

#[test]
fn ids_are_stable_and_follow_the_canonical_form() {
    let a = genome(&[8, 8]);
    let text = r#"{ "training": {"batch_size": 32, "learning_rate": 0.001},
                    "layers": [{"width": 8, "activation": "relu"}, {"activation": "relu", "width": 8}] }"#;
    let b = LayerGenome::from_json(text, "b.json").unwrap();
    assert_eq!(a, b);
    assert_eq!(a.id(), b.id());
    assert_eq!(a.id().len(), 12);
    assert_ne!(a.id(), genome(&[8, 9]).id());
    let back = LayerGenome::from_json(&a.canonical_json(), "a").unwrap();
    assert_eq!(back.canonical_json(), a.canonical_json());
}

#[test]
fn validation_names_the_field_and_the_allowed_range() {
    let space = LayerSpace::default();
    let cases: Vec<(LayerGenome, &str)> = vec![
        (genome(&[0]), "layers[0].width is 0"),
        (
            genome(&[4000]),
            "layers[0].width is 4000, allowed range is 4..=128",
        ),
        (genome(&[]), "layers has 0 entries, allowed range is 1..=4"),
        (
            {
                let mut g = genome(&[8]);
                g.training.learning_rate = 0.5;
                g
            },
            "training.learning_rate is 0.5, allowed values are [0.0001,",
        ),
        (
            {
                let mut g = genome(&[8, 9]);
                g.layers[1].residual = true;
                g
            },
            "layers[1].residual is true but its input width is 8 and its width is 9",
        ),
        (
            {
                let mut g = genome(&[8]);
                g.layers[0].residual = true;
                g
            },
            "layers[0].residual is true",
        ),
    ];
    for (g, expected) in cases {
        let err = space.validate(&g).unwrap_err();
        assert_eq!(err.exit_code(), 2);
        assert!(err.to_string().contains(expected), "{err} lacks {expected}");
    }
    let err = LayerGenome::from_json(r#"{"layers":[{"width":8,"activation":"swish"}],"training":{"learning_rate":0.001,"batch_size":8}}"#, "g.json").unwrap_err();
    assert!(err.to_string().starts_with("g.json:1:"), "{err}");
    assert!(err.to_string().contains("swish"), "{err}");
    let err = LayerGenome::from_json(
        r#"{"layers":[],"training":{"learning_rate":0.001,"batch_size":8},"colour":1}"#,
        "g.json",
    )
    .unwrap_err();
    assert!(err.to_string().contains("colour"), "{err}");
}
