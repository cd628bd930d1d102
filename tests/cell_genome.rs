//! Cell genomes and their search spaces: size formula, validation, sampling,
//! mutations, ids, and the parameter / multiply-add counts of their networks.

use gemmule::genome::{
    Block, Cell, CellGenome, CellMutation, CellOp, ConvOp, DenseOp, ImageCellGenome,
    ImageCellSpace, Optimizer, SearchSpace, SeededRng, Skeleton, TableCellGenome, TableCellSpace,
    TrainGenes,
};
use gemmule::net::{cell_cost, table_cell_cost, Cost};
use num_bigint::BigUint;
use rand::SeedableRng;
use std::collections::{BTreeMap, BTreeSet};

fn training() -> TrainGenes {
    TrainGenes {
        learning_rate: 1e-3,
        batch_size: 32,
        weight_decay: 0.0,
        optimizer: Optimizer::Adam,
    }
}

fn block<Op: CellOp>(inputs: [u8; 2], ops: [Op; 2]) -> Block<Op> {
    Block { inputs, ops }
}

fn genome<Op: CellOp>(normal: Vec<Block<Op>>, reduction: Vec<Block<Op>>) -> CellGenome<Op> {
    CellGenome {
        normal: Cell { blocks: normal },
        reduction: Cell { blocks: reduction },
        skeleton: Skeleton {
            channels: 8,
            normal_cells: 1,
            repeats: 2,
        },
        training: training(),
    }
}

/// A valid member of the default image space (B = 3).
fn image_genome() -> ImageCellGenome {
    use ConvOp::*;
    let cell = vec![
        block([0, 1], [Conv3x3, Identity]),
        block([1, 2], [SepConv3x3, MaxPool3x3]),
        block([0, 3], [AvgPool3x3, DilConv3x3]),
    ];
    genome(cell.clone(), cell)
}

fn tiny_space() -> ImageCellSpace {
    ImageCellSpace {
        blocks: 2,
        ops: vec![ConvOp::Identity, ConvOp::Conv3x3],
        channels: vec![8],
        normal_cells: vec![1],
        repeats: vec![2],
        learning_rates: vec![1e-3],
        batch_sizes: vec![32],
        weight_decays: vec![0.0],
        optimizers: vec![Optimizer::Adam],
        ..ImageCellSpace::default()
    }
}

/// Every ordered (input, op, input, op) choice for block `i`, canonical or not.
fn all_ordered_blocks(i: u8, ops: &[ConvOp]) -> Vec<Block<ConvOp>> {
    let mut out = Vec::new();
    for a in 0..=i + 1 {
        for b in 0..=i + 1 {
            for &x in ops {
                for &y in ops {
                    out.push(block([a, b], [x, y]));
                }
            }
        }
    }
    out
}

/// Brute force over every ordered choice of a tiny space (B = 2, K = 2, one
/// F/N/R, one training combination), kept when the space accepts it.
#[test]
fn brute_force_enumeration_matches_size_formula() {
    let space = tiny_space();
    let mut cells = Vec::new();
    for b0 in all_ordered_blocks(0, &space.ops) {
        for b1 in all_ordered_blocks(1, &space.ops) {
            cells.push(vec![b0, b1]);
        }
    }
    let mut seen = BTreeSet::new();
    for normal in &cells {
        for reduction in &cells {
            let g = genome(normal.clone(), reduction.clone());
            if space.validate(&g).is_ok() {
                seen.insert(g.canonical_json());
            }
        }
    }
    // Hand arithmetic: K = 2; block 0 has m = 2·2 = 4 pairs → 4·5/2 = 10
    // blocks; block 1 has m = 3·2 = 6 → 6·7/2 = 21; a cell 10·21 = 210;
    // the genome 210² = 44 100.
    assert_eq!(space.cell_count(), BigUint::from(210u32));
    assert_eq!(space.size(), BigUint::from(44_100u32));
    assert_eq!(BigUint::from(seen.len()), space.size());
}

#[test]
fn default_space_sizes_follow_the_formula() {
    // K = 7, B = 3: m = 14, 21, 28 → 105·231·406 = 9 847 530 cells;
    // × itself × |F| 3 × training 6·4·4·1 = 96.
    let image = ImageCellSpace::default();
    image.check().unwrap();
    let cells = BigUint::from(9_847_530u64);
    assert_eq!(image.cell_count(), cells);
    assert_eq!(image.size(), &cells * &cells * 3u32 * 96u32);
    assert_eq!(
        image.size(),
        "27928467965059200".parse::<BigUint>().unwrap()
    );
    // K = 5: m = 10, 15, 20 → 55·120·210 = 1 386 000.
    let table = TableCellSpace::default();
    table.check().unwrap();
    assert_eq!(table.cell_count(), BigUint::from(1_386_000u64));
}

#[test]
fn samples_are_valid_canonical_and_cover_every_choice() {
    let space = ImageCellSpace::default();
    let mut rng = SeededRng::seed_from_u64(11);
    let mut ops = BTreeSet::new();
    let mut inputs = BTreeSet::new();
    let mut channels = BTreeSet::new();
    for _ in 0..500 {
        let g = space.sample(&mut rng);
        space.validate(&g).unwrap();
        for b in g.normal.blocks.iter().chain(&g.reduction.blocks) {
            assert!(b.is_canonical());
            ops.extend(b.ops);
        }
        inputs.extend(g.normal.blocks[2].inputs);
        channels.insert(g.skeleton.channels);
    }
    assert_eq!(ops.len(), ConvOp::ALL.len());
    assert_eq!(inputs, BTreeSet::from([0, 1, 2, 3]));
    assert_eq!(channels, BTreeSet::from([8, 12, 16]));
    let table = TableCellSpace::default();
    table.validate(&table.sample(&mut rng)).unwrap();
}

#[test]
fn mutations_stay_in_bounds_and_every_operator_is_reachable() {
    let space = ImageCellSpace {
        normal_cells: vec![1, 2],
        repeats: vec![2, 3],
        optimizers: vec![Optimizer::Adam, Optimizer::SgdMomentum],
        ..ImageCellSpace::default()
    };
    let mut rng = SeededRng::seed_from_u64(7);
    let mut counts: BTreeMap<&str, usize> = BTreeMap::new();
    let mut parent = space.sample(&mut rng);
    for i in 0..5_000u32 {
        if i.is_multiple_of(50) {
            parent = space.sample(&mut rng);
        }
        let child = space.mutate(&parent, &mut rng);
        space
            .validate(&child.genome)
            .unwrap_or_else(|e| panic!("{} made an invalid child: {e}", child.mutation));
        if child.mutation == "identity" {
            assert_eq!(child.genome, parent);
        } else {
            assert_ne!(child.genome, parent, "{} changed nothing", child.mutation);
        }
        *counts.entry(child.mutation).or_default() += 1;
        parent = child.genome;
    }
    for m in CellMutation::ALL {
        assert!(
            counts.get(m.name()).copied().unwrap_or(0) > 0,
            "{} never drawn",
            m.name()
        );
    }
}

#[test]
fn operators_that_cannot_apply_are_not_drawn() {
    let space = ImageCellSpace {
        ops: vec![ConvOp::Conv3x3],
        ..tiny_space()
    };
    let mut rng = SeededRng::seed_from_u64(1);
    let parent = space.sample(&mut rng);
    for _ in 0..300 {
        let m = space.mutate(&parent, &mut rng).mutation;
        assert!(["hidden_state", "identity"].contains(&m), "{m} drawn");
    }
}

#[test]
fn hidden_state_and_op_mutations_change_exactly_one_gene() {
    let space = ImageCellSpace::default();
    let parent = image_genome();
    let mut rng = SeededRng::seed_from_u64(3);
    for m in [CellMutation::HiddenState, CellMutation::Op] {
        for _ in 0..200 {
            let child = m.apply(&space, &parent, &mut rng);
            space.validate(&child).unwrap();
            assert_eq!(child.skeleton, parent.skeleton);
            let before: Vec<_> = pairs(&parent);
            let after: Vec<_> = pairs(&child);
            let changed = before.iter().zip(&after).filter(|(a, b)| a != b).count();
            // One pair changed; re-sorting may move it within its block.
            let multiset_diff = symmetric_difference(&before, &after);
            assert!(
                changed >= 1 && multiset_diff == 2,
                "{m:?}: {before:?} → {after:?}"
            );
            let (same_inputs, same_ops) = (
                inputs_of(&before) == inputs_of(&after),
                ops_of(&before) == ops_of(&after),
            );
            match m {
                CellMutation::HiddenState => assert!(same_ops && !same_inputs),
                _ => assert!(same_inputs && !same_ops),
            }
        }
    }
}

type Pair = (usize, usize, u8, ConvOp);

/// (cell, block, input, op) for every branch of a genome.
fn pairs(g: &ImageCellGenome) -> Vec<Pair> {
    let mut out = Vec::new();
    for (c, cell) in [&g.normal, &g.reduction].iter().enumerate() {
        for (i, b) in cell.blocks.iter().enumerate() {
            for (input, op) in b.pairs() {
                out.push((c, i, input, op));
            }
        }
    }
    out
}

fn symmetric_difference(a: &[Pair], b: &[Pair]) -> usize {
    let count = |v: &[Pair]| {
        let mut m: BTreeMap<Pair, i64> = BTreeMap::new();
        v.iter().for_each(|p| *m.entry(*p).or_default() += 1);
        m
    };
    let (ca, cb) = (count(a), count(b));
    let keys: BTreeSet<_> = ca.keys().chain(cb.keys()).collect();
    keys.iter()
        .map(|k| (ca.get(*k).unwrap_or(&0) - cb.get(*k).unwrap_or(&0)).unsigned_abs() as usize)
        .sum()
}

fn inputs_of(v: &[Pair]) -> BTreeMap<(usize, usize), Vec<u8>> {
    let mut m: BTreeMap<(usize, usize), Vec<u8>> = BTreeMap::new();
    v.iter()
        .for_each(|p| m.entry((p.0, p.1)).or_default().push(p.2));
    m.values_mut().for_each(|x| x.sort());
    m
}

fn ops_of(v: &[Pair]) -> BTreeMap<(usize, usize), Vec<ConvOp>> {
    let mut m: BTreeMap<(usize, usize), Vec<ConvOp>> = BTreeMap::new();
    v.iter()
        .for_each(|p| m.entry((p.0, p.1)).or_default().push(p.3));
    m.values_mut().for_each(|x| x.sort());
    m
}

#[test]
fn training_and_skeleton_genes_move_one_step() {
    let space = ImageCellSpace::default();
    let parent = image_genome();
    let mut rng = SeededRng::seed_from_u64(5);
    for _ in 0..50 {
        let lr = CellMutation::LearningRate.apply(&space, &parent, &mut rng);
        assert!([3e-4, 3e-3].contains(&lr.training.learning_rate));
        let f = CellMutation::Channels.apply(&space, &parent, &mut rng);
        assert_eq!(f.skeleton.channels, 12, "8 is first on [8, 12, 16]");
    }
}

#[test]
fn validation_names_the_field_and_the_allowed_range() {
    use ConvOp::*;
    let space = ImageCellSpace::default();
    let with = |edit: &dyn Fn(&mut ImageCellGenome)| {
        let mut g = image_genome();
        edit(&mut g);
        g
    };
    let cases: Vec<(ImageCellGenome, &str)> = vec![
        (
            with(&|g| g.normal.blocks[2].inputs = [0, 4]),
            "normal.blocks[2].inputs[1] is 4, allowed range is 0..=3 (h0, h1, blocks 0..1)",
        ),
        (
            with(&|g| g.reduction.blocks[0].inputs = [0, 2]),
            "reduction.blocks[0].inputs[1] is 2, allowed range is 0..=1 (h0, h1)",
        ),
        (
            with(&|g| g.normal.blocks[1] = block([2, 1], [Identity, Identity])),
            "normal.blocks[1] is not in canonical order",
        ),
        (
            with(&|g| g.normal.blocks[0] = block([1, 1], [Conv3x3, Identity])),
            "got (1, conv3x3) before (1, identity); swap them",
        ),
        (
            with(&|g| g.normal.blocks.truncate(2)),
            "normal.blocks has 2 entries, allowed range is 3..=3",
        ),
        (
            with(&|g| g.reduction.blocks.clear()),
            "reduction.blocks has 0 entries, allowed range is 1..=5",
        ),
        (
            with(&|g| g.skeleton.channels = 10),
            "skeleton.channels is 10, allowed values are [8, 12, 16]",
        ),
        (
            with(&|g| g.skeleton.repeats = 0),
            "skeleton.repeats is 0, allowed range is 1..=8",
        ),
        (
            with(&|g| g.training.batch_size = 33),
            "training.batch_size is 33, allowed values are",
        ),
    ];
    for (g, expected) in cases {
        let err = space.validate(&g).unwrap_err();
        assert_eq!(err.exit_code(), 2);
        assert!(err.to_string().contains(expected), "{err} lacks {expected}");
    }
    let narrow = ImageCellSpace {
        ops: vec![Identity, Conv3x3],
        ..ImageCellSpace::default()
    };
    let err = narrow.validate(&image_genome()).unwrap_err().to_string();
    assert!(
        err.contains(
            "normal.blocks[1].ops[0] is sep_conv3x3, allowed values are [identity, conv3x3]"
        ),
        "{err}"
    );
}

#[test]
fn ids_are_stable_tagged_and_follow_the_canonical_form() {
    let g = image_genome();
    let json = g.canonical_json();
    assert!(
        json.starts_with(
            r#"{"ops":"conv","normal":{"blocks":[{"inputs":[0,1],"ops":["conv3x3","identity"]}"#
        ),
        "{json}"
    );
    let back = ImageCellGenome::from_json(&json, "g.json").unwrap();
    assert_eq!(back, g);
    assert_eq!(back.id(), g.id());
    assert_eq!(g.id().len(), 12);
    assert!(g.id().chars().all(|c| c.is_ascii_hexdigit()));

    // The same wiring with identity ops only exists in both catalogues.
    let image: ImageCellGenome = genome(
        vec![block([0, 1], [ConvOp::Identity; 2])],
        vec![block([0, 1], [ConvOp::Identity; 2])],
    );
    let table: TableCellGenome = genome(
        vec![block([0, 1], [DenseOp::Identity; 2])],
        vec![block([0, 1], [DenseOp::Identity; 2])],
    );
    assert_ne!(image.id(), table.id());
    let err = TableCellGenome::from_json(&image.canonical_json(), "i.json").unwrap_err();
    assert_eq!(err.exit_code(), 2);
    assert!(
        err.to_string()
            .contains(r#"ops is "conv", allowed value here is "dense""#),
        "{err}"
    );

    let unknown = json.replacen(r#""ops":"conv","#, r#""ops":"conv","colour":1,"#, 1);
    let err = ImageCellGenome::from_json(&unknown, "g.json").unwrap_err();
    assert!(
        err.to_string().starts_with("g.json:1:") && err.to_string().contains("colour"),
        "{err}"
    );

    // Canonicalising a swapped block gives back the same genome and id.
    let mut swapped = g.clone();
    swapped.normal.blocks[0] = block([1, 0], [ConvOp::Identity, ConvOp::Conv3x3]);
    assert_ne!(swapped.id(), g.id());
    swapped.canonicalise();
    assert_eq!(swapped.id(), g.id());
}

#[test]
fn spaces_describe_themselves_and_reject_bad_bounds() {
    let image = ImageCellSpace::default();
    assert_eq!(image.describe()["encoding"], "cells_image");
    assert_eq!(
        TableCellSpace::default().describe()["encoding"],
        "cells_table"
    );
    let text = serde_json::to_string(&image).unwrap();
    assert_eq!(ImageCellSpace::from_json(&text, "s.json").unwrap(), image);
    let bad = [
        (
            ImageCellSpace {
                blocks: 6,
                ..ImageCellSpace::default()
            },
            "blocks is 6, allowed range is 1..=5",
        ),
        (
            ImageCellSpace {
                ops: vec![],
                ..ImageCellSpace::default()
            },
            "ops must list at least one op",
        ),
        (
            ImageCellSpace {
                ops: vec![ConvOp::Conv3x3, ConvOp::Conv3x3],
                ..ImageCellSpace::default()
            },
            "ops[1] repeats conv3x3",
        ),
        (
            ImageCellSpace {
                channels: vec![16, 8],
                ..ImageCellSpace::default()
            },
            "channels must be strictly ascending",
        ),
        (
            ImageCellSpace {
                repeats: vec![9],
                ..ImageCellSpace::default()
            },
            "repeats holds 9, allowed range is 1..=8",
        ),
    ];
    for (space, expected) in bad {
        let err = space.check().unwrap_err();
        assert_eq!(err.exit_code(), 2);
        assert!(err.to_string().contains(expected), "{err} lacks {expected}");
    }
}

#[test]
fn unused_blocks_form_the_cell_output() {
    use ConvOp::*;
    let cell = Cell {
        blocks: vec![
            block([0, 1], [Identity, Identity]),
            block([0, 1], [Identity, Identity]),
            block([1, 2], [Identity, Identity]),
        ],
    };
    assert_eq!(cell.unused_blocks(), vec![1, 2]);
    assert!(cell.reads_state(0) && cell.reads_state(1));
}

/// Image genome counted by hand: F = 4, N = 1, R = 2 (normal, reduction,
/// normal), one block per cell, input 3×8×8, 10 classes.
///
/// Stem 3×3, 3 → 4: 108 weights + 8 BN = 116 params; 8·8·4·3·9 = 6912 madds.
/// Normal 0 (C 4, 8×8, h0 = h1 = stem, no preprocessing):
///   conv3x3 4→4: 144 + 8 = 152, 64·16·9 = 9216; identity 0;
///   output 1×1 (k = 1) 4→4: 16 + 8 = 24, 64·16 = 1024.       → 176, 10 240
/// Reduction (C 8, 8×8 → 4×4; h0 = stem 4ch, h1 = normal 0 4ch):
///   h1 1×1 4→8: 32 + 16 = 48, 64·32 = 2048; h0 the same: 48, 2048;
///   identity on h0, stride 2 → factorised 8→8: 64 + 16 = 80, 16·64 = 1024;
///   sep_conv3x3 on h1, stride 2: 72 + 64 + 16 = 152, 16·(72 + 64) = 2176;
///   output 1×1 8→8: 80, 1024.                                  → 408, 8320
/// Normal 1 (C 8, 4×4; h0 = normal 0 at 4×8×8, h1 = reduction 8×4×4):
///   h0 factorised reduction 4→8: 32 + 16 = 48, 16·32 = 512;
///   conv3x3 8→8: 576 + 16 = 592, 16·64·9 = 9216; output 80, 1024. → 720, 10 752
/// Head 8→10: 80 + 10 = 90, 80.
/// Total params 116 + 176 + 408 + 720 + 90 = 1510;
/// madds 6912 + 10 240 + 8320 + 10 752 + 80 = 36 304.
#[test]
fn image_cost_matches_a_hand_count() {
    use ConvOp::*;
    let mut g = genome(
        vec![block([0, 1], [Conv3x3, Identity])],
        vec![block([0, 1], [Identity, SepConv3x3])],
    );
    g.skeleton.channels = 4;
    let cost = cell_cost(&g, (3, 8, 8), 10);
    assert_eq!(
        cost,
        Cost {
            params: 1510,
            madds: 36_304
        }
    );
}

/// Table genome counted by hand: F = 6, N = 1, R = 2, 5 features, 3 classes.
/// Normal: block 0 = (h0, dense_relu) + (h1, gated); block 1 =
/// (h1, identity) + (block 0, dense_tanh) → only block 1 is unused (k = 1).
/// Reduction: block 0 = (h1, identity) + (h1, dense_gelu), reads only h1.
///
/// Stem 5→6: 30 + 6 = 36, 30.
/// Normal 0 (w 6): dense_relu 42, 36; gated 84, 72; dense_tanh 42, 36;
///   output 6→6: 42, 36.                                           → 210, 180
/// Reduction (w ⌈6/2⌉ = 3): h1 map 6→3: 21, 18 (h0 unread: none);
///   dense_gelu 12, 9; output 12, 9.                               → 45, 36
/// Normal 1 (w 3; h0 = normal 0 at 6): h0 map 6→3: 21, 18;
///   dense_relu 12, 9; gated 24, 18; dense_tanh 12, 9; output 12, 9. → 81, 63
/// Head 3→3: 12, 9.
/// Total params 36 + 210 + 45 + 81 + 12 = 384; madds 30 + 180 + 36 + 63 + 9 = 318.
#[test]
fn table_cost_matches_a_hand_count() {
    use DenseOp::*;
    let mut g = genome(
        vec![
            block([0, 1], [DenseRelu, Gated]),
            block([1, 2], [Identity, DenseTanh]),
        ],
        vec![block([1, 1], [Identity, DenseGelu])],
    );
    g.skeleton.channels = 6;
    let cost = table_cell_cost(&g, 5, 3);
    assert_eq!(
        cost,
        Cost {
            params: 384,
            madds: 318
        }
    );
}

#[test]
fn costs_are_consistent() {
    use ConvOp::*;
    let space = ImageCellSpace {
        blocks: 4,
        ..ImageCellSpace::default()
    };
    let mut rng = SeededRng::seed_from_u64(9);
    for _ in 0..100 {
        let g = space.sample(&mut rng);
        let small = cell_cost(&g, (3, 8, 8), 10);
        let large = cell_cost(&g, (3, 16, 16), 10);
        // Parameters do not depend on the image size; every conv's
        // multiply-adds scale with the area (×4), the head's (C·classes) do not.
        assert_eq!(small.params, large.params);
        let c_last = u64::from(g.skeleton.channels) * 2;
        assert_eq!(large.madds - c_last * 10, 4 * (small.madds - c_last * 10));
        // A block reading only h0/h1 adds one more unused output: never fewer params.
        let mut bigger = g.clone();
        bigger
            .normal
            .blocks
            .push(block([0, 1], [MaxPool3x3, Identity]));
        let more = cell_cost(&bigger, (3, 8, 8), 10);
        assert!(more.params > small.params && more.madds > small.madds);
        // Swapping an identity on a normal-cell block output for a conv3x3
        // adds exactly 9C² + 2C per normal cell (stride 1).
        let mut conv = g.clone();
        let mut swapped = false;
        for b in &mut conv.normal.blocks {
            if !swapped && b.inputs[0] >= 2 && b.ops[0] == Identity {
                b.ops[0] = Conv3x3;
                b.canonicalise();
                swapped = true;
            }
        }
        if swapped {
            let f = u64::from(g.skeleton.channels);
            let expected = (9 * f * f + 2 * f) + (9 * 4 * f * f + 4 * f);
            assert_eq!(
                cell_cost(&conv, (3, 8, 8), 10).params - small.params,
                expected
            );
        }
        // One more normal cell per repeat never lowers either count.
        let mut deeper = g.clone();
        deeper.skeleton.normal_cells += 1;
        let deep = cell_cost(&deeper, (3, 8, 8), 10);
        assert!(deep.params > small.params && deep.madds > small.madds);
    }
    let table = TableCellSpace::default();
    for _ in 0..50 {
        let g = table.sample(&mut rng);
        let base = table_cell_cost(&g, 7, 3);
        let mut deeper = g.clone();
        deeper.skeleton.normal_cells += 1;
        assert!(table_cell_cost(&deeper, 7, 3).params > base.params);
    }
}
