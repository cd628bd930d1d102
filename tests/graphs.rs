//! Architecture graphs (terminal text, DOT, SVG), lineage, Pareto front and
//! the compactness objective.

use gemmule::data::Dataset;
use gemmule::evaluate::{penalised_objective, TrainerSettings, TrainingEvaluator};
use gemmule::genome::{
    Activation, Block, Cell, CellGenome, CellKind, CellOp, ConvOp, DenseOp, ImageCellGenome,
    LayerGene, LayerGenome, Optimizer, Skeleton, TableCellGenome, TrainGenes,
};
use gemmule::render::{
    cell_dot, cell_genome_text, cell_svg, cell_text, layer_dot, layer_graph, layer_svg, lineage,
    lineage_lines, pareto_front, TEXT_WIDTH,
};
use gemmule::search::{
    Budget, EvalStatus, EvaluationRecord, Evaluator, Journal, RunHeader, StrategyInfo,
};
use graphviz_rust::dot_structures::{Graph as DotGraph, Stmt};
use std::collections::BTreeMap;
use std::process::Command;

mod private_dirs;

fn training() -> TrainGenes {
    TrainGenes {
        learning_rate: 0.001,
        batch_size: 32,
        weight_decay: 0.0001,
        optimizer: Optimizer::SgdMomentum,
    }
}

fn layer(width: u32, activation: Activation, residual: bool, dropout: f32) -> LayerGene {
    LayerGene {
        width,
        activation,
        residual,
        dropout,
    }
}

/// Four hidden layers, two with residual skips, some with dropout.
fn four_layer_genome() -> LayerGenome {
    LayerGenome {
        layers: vec![
            layer(4096, Activation::Sigmoid, false, 0.25),
            layer(4096, Activation::Gelu, true, 0.125),
            layer(4096, Activation::Tanh, true, 0.0),
            layer(17, Activation::Relu, false, 0.5),
        ],
        training: training(),
    }
}

/// A five-block cell with the longest op names and deep block chains.
fn five_block_cell<Op: CellOp>(ops: [Op; 5]) -> Cell<Op> {
    let b = |inputs: [u8; 2], pair: [Op; 2]| Block { inputs, ops: pair };
    Cell {
        blocks: vec![
            b([0, 1], [ops[0], ops[1]]),
            b([1, 2], [ops[2], ops[3]]),
            b([2, 3], [ops[4], ops[0]]),
            b([0, 4], [ops[1], ops[2]]),
            b([3, 5], [ops[3], ops[4]]),
        ],
    }
}

fn skeleton() -> Skeleton {
    Skeleton {
        channels: 4096,
        normal_cells: 16,
        repeats: 8,
    }
}

fn image_genome() -> ImageCellGenome {
    use ConvOp::*;
    let cell = five_block_cell([SepConv3x3, DilConv3x3, MaxPool3x3, AvgPool3x3, Conv1x1]);
    CellGenome {
        normal: cell.clone(),
        reduction: cell,
        skeleton: skeleton(),
        training: training(),
    }
}

fn table_genome() -> TableCellGenome {
    use DenseOp::*;
    let cell = five_block_cell([Gated, DenseGelu, DenseTanh, DenseRelu, Identity]);
    CellGenome {
        normal: cell.clone(),
        reduction: cell,
        skeleton: skeleton(),
        training: training(),
    }
}

fn assert_fits(text: &str) {
    for line in text.lines() {
        assert!(
            line.chars().count() <= TEXT_WIDTH,
            "{} columns: {line}",
            line.chars().count()
        );
    }
}

#[test]
fn layer_text_fits_80_columns() {
    let genome = four_layer_genome();
    for ascii in [false, true] {
        let text = layer_graph(&genome, Some(123_456), Some(1000), ascii);
        assert_fits(&text);
        assert!(
            text.contains("layer 4: dense 17, relu, dropout 0.5"),
            "{text}"
        );
        assert_eq!(text.matches("adds the layer's input").count(), 2, "{text}");
    }
}

#[test]
fn cell_text_fits_80_columns_and_draws_every_branch() {
    for ascii in [false, true] {
        let image = cell_genome_text(&image_genome(), Some(1000), ascii);
        let table = cell_genome_text(&table_genome(), Some(1000), ascii);
        assert_fits(&image);
        assert_fits(&table);
        // Each block draws its two branches, and the concatenation lists the unread blocks.
        assert_eq!(image.matches(" b4").count(), 2, "{image}");
        assert!(image.contains("concat(b4)"), "{image}");
        assert!(image.contains("sep_conv3x3 (stride 2)"), "{image}");
        assert!(image.contains("global pool"), "{image}");
        assert!(!table.contains("global pool"), "{table}");
        assert!(table.contains("gated"), "{table}");
    }
    let text = cell_genome_text(&image_genome(), Some(10), false);
    assert!(text.contains("[normal ×16 → reduction] ×7"), "{text}");
    assert!(
        text.contains("cell channels by repeat: 4096, 8192"),
        "{text}"
    );
}

#[test]
fn cell_text_marks_each_sum_and_the_unread_outputs() {
    use DenseOp::*;
    let cell = Cell {
        blocks: vec![
            Block {
                inputs: [0, 1],
                ops: [DenseRelu, Identity],
            },
            Block {
                inputs: [1, 1],
                ops: [DenseTanh, Gated],
            },
        ],
    };
    let text = cell_text(&cell, CellKind::Normal, false);
    let expected = "normal cell (2 blocks; keeps shape):\n\
                    \x20 h0 ─→ dense_relu ─┐\n\
                    \x20 h1 ─→ identity ───┴─⊕─→ b0\n\
                    \x20 h1 ─→ dense_tanh ─┐\n\
                    \x20 h1 ─→ gated ──────┴─⊕─→ b1\n\
                    \x20 concat(b0, b1) ─→ affine map ─→ cell output\n";
    assert_eq!(text, expected);
}

#[test]
fn ascii_mode_has_only_ascii_characters() {
    let texts = [
        layer_graph(&four_layer_genome(), Some(13), Some(3), true),
        cell_genome_text(&image_genome(), Some(10), true),
        cell_genome_text(&table_genome(), None, true),
        lineage_lines(&lineage(&chain_records(), 4), true),
    ];
    for text in texts {
        assert!(text.is_ascii(), "{text}");
    }
}

/// Counts node statements (in clusters too) of a parsed DOT graph.
fn count_nodes(stmts: &[Stmt]) -> usize {
    stmts
        .iter()
        .map(|stmt| match stmt {
            Stmt::Node(_) => 1,
            Stmt::Subgraph(sub) => count_nodes(&sub.stmts),
            _ => 0,
        })
        .sum()
}

fn parsed_node_count(dot: &str) -> usize {
    match graphviz_rust::parse(dot) {
        Ok(DotGraph::DiGraph { stmts, .. }) => count_nodes(&stmts),
        Ok(other) => panic!("not a digraph: {other:?}"),
        Err(e) => panic!("DOT does not parse: {e}\n{dot}"),
    }
}

/// Renders `dot` with Graphviz when it is installed.
fn render_with_graphviz(dot: &str, name: &str) {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join(format!("{name}.dot"));
    std::fs::write(&path, dot).expect("write DOT");
    match Command::new("dot").arg("-Tsvg").arg(&path).output() {
        Ok(out) => assert!(
            out.status.success(),
            "dot failed: {}",
            String::from_utf8_lossy(&out.stderr)
        ),
        Err(_) => println!("note: Graphviz `dot` is not installed; skipped rendering {name}"),
    }
}

#[test]
fn dot_exports_parse() {
    let layers = layer_dot(&four_layer_genome(), Some(13), Some(3));
    // input + 4 layers + 2 skip sums + output.
    assert_eq!(parsed_node_count(&layers), 8);
    render_with_graphviz(&layers, "layers");
    let cells = cell_dot(&image_genome(), Some(10));
    // Per cell: h0, h1, 5 × (two branches + ⊕), output.
    assert_eq!(parsed_node_count(&cells), 2 * (2 + 5 * 3 + 1));
    render_with_graphviz(&cells, "cells");
    let tables = cell_dot(&table_genome(), None);
    assert_eq!(parsed_node_count(&tables), 2 * (2 + 5 * 3 + 1));
}

/// All text content of the `<text>` elements of a parsed SVG document.
fn svg_texts(svg: &str) -> Vec<String> {
    let doc = roxmltree::Document::parse(svg).unwrap_or_else(|e| panic!("not XML: {e}\n{svg}"));
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");
    assert_eq!(
        root.tag_name().namespace(),
        Some("http://www.w3.org/2000/svg")
    );
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text().map(String::from))
        .collect()
}

#[test]
fn svg_exports_are_well_formed_and_label_every_node() {
    let texts = svg_texts(&layer_svg(&four_layer_genome(), Some(13), Some(3)));
    for label in [
        "input: 13 features",
        "layer 1: dense 4096, sigmoid, dropout 0.25",
        "layer 2: dense 4096, gelu, dropout 0.125",
        "layer 3: dense 4096, tanh",
        "layer 4: dense 17, relu, dropout 0.5",
        "⊕",
        "skip",
        "output: dense 3, softmax",
    ] {
        assert!(texts.iter().any(|t| t == label), "{label} in {texts:?}");
    }
    let texts = svg_texts(&cell_svg(&image_genome(), Some(10)));
    let mut labels = vec![
        "normal cell".to_string(),
        "reduction cell".to_string(),
        "h0".to_string(),
        "h1".to_string(),
        "sep_conv3x3 (stride 2)".to_string(),
        "concat → 1x1 conv → cell output".to_string(),
    ];
    labels.extend(
        [
            ConvOp::DilConv3x3,
            ConvOp::MaxPool3x3,
            ConvOp::AvgPool3x3,
            ConvOp::Conv1x1,
        ]
        .iter()
        .map(|op| op.name().to_string()),
    );
    labels.extend((0..5).map(|j| format!("⊕ b{j}")));
    for label in labels {
        assert!(texts.contains(&label), "{label} in {texts:?}");
    }
    assert!(texts.iter().any(|t| t.contains("global pool")), "{texts:?}");
}

fn record(index: u64, parent: Option<u64>, mutation: Option<&str>) -> EvaluationRecord<()> {
    record_with((), index, parent, mutation)
}

fn record_with<G>(
    genome: G,
    index: u64,
    parent: Option<u64>,
    mutation: Option<&str>,
) -> EvaluationRecord<G> {
    EvaluationRecord {
        index,
        id: format!("genome{index:06}"),
        genome,
        parent,
        parent_id: parent.map(|p| format!("genome{p:06}")),
        mutation: mutation.map(String::from),
        seed: index,
        status: EvalStatus::Completed,
        objective: Some(0.5 + index as f64 / 100.0),
        scores: BTreeMap::new(),
        params: Some(100 * (index + 1)),
        madds: None,
        epochs: 3,
        best_epoch: 2,
        message: None,
        folds: None,
    }
}

/// 0 and 1 sampled at random; 0 → 2 → 4 and 1 → 3.
fn chain_records() -> Vec<EvaluationRecord<()>> {
    vec![
        record(0, None, None),
        record(1, None, None),
        record(2, Some(0), Some("width")),
        record(3, Some(1), Some("activation")),
        record(4, Some(2), Some("add_skip")),
    ]
}

#[test]
fn lineage_follows_parents_back_to_a_random_start() {
    let records = chain_records();
    let steps = lineage(&records, 4);
    let indices: Vec<u64> = steps.iter().map(|s| s.index).collect();
    assert_eq!(indices, [0, 2, 4]);
    let mutations: Vec<Option<&str>> = steps.iter().map(|s| s.mutation.as_deref()).collect();
    assert_eq!(mutations, [None, Some("width"), Some("add_skip")]);
    assert_eq!(steps[1].id, "genome000002");
    assert_eq!(steps[2].objective, Some(0.54));
    let start = lineage(&records, 1);
    assert_eq!(start.len(), 1);
    assert_eq!(start[0].mutation, None);
    assert!(lineage(&records, 99).is_empty());
    let text = lineage_lines(&steps, false);
    assert!(
        text.contains("start") && text.contains("→ add_skip"),
        "{text}"
    );
    // A parent missing from the records ends the chain there.
    let orphan = vec![record(7, Some(3), Some("op"))];
    assert_eq!(lineage(&orphan, 7).len(), 1);
}

#[test]
fn long_lineages_fold_their_middle() {
    let mut records = vec![record(0, None, None)];
    for i in 1..30 {
        records.push(record(i, Some(i - 1), Some("width")));
    }
    let text = lineage_lines(&lineage(&records, 29), false);
    assert!(text.contains("(20 more steps)"), "{text}");
    assert_eq!(text.lines().count(), 1 + 2 + 1 + 8);
}

fn scored(index: u64, objective: Option<f64>, params: Option<u64>) -> EvaluationRecord<()> {
    EvaluationRecord {
        objective,
        params,
        ..record(index, None, None)
    }
}

#[test]
fn pareto_front_keeps_the_non_dominated_records() {
    let records = vec![
        scored(0, Some(0.90), Some(1000)),
        scored(1, Some(0.85), Some(500)),
        scored(2, Some(0.80), Some(800)),  // dominated by 1
        scored(3, Some(0.90), Some(1200)), // dominated by 0 (equal objective, more params)
        scored(4, Some(0.95), Some(5000)),
        scored(5, Some(0.85), Some(500)), // the same point as 1: both kept
        scored(6, None, Some(100)),       // not scored
        scored(7, Some(0.70), Some(100)),
        scored(8, Some(0.99), None),      // size unknown
        scored(9, Some(0.60), Some(100)), // dominated by 7 (same params)
    ];
    assert_eq!(pareto_front(&records), [7, 1, 5, 0, 4]);
    assert!(pareto_front::<()>(&[]).is_empty());
}

#[test]
fn size_penalty_arithmetic() {
    // 0.9 − 0.01 · log10(1000) = 0.9 − 0.03.
    assert!((penalised_objective(0.9, 1000, 0.01) - 0.87).abs() < 1e-12);
    // 0.8 − 0.05 · log10(100000) = 0.8 − 0.25.
    assert!((penalised_objective(0.8, 100_000, 0.05) - 0.55).abs() < 1e-12);
    assert_eq!(penalised_objective(0.7, 0, 0.5), 0.7);
    assert_eq!(penalised_objective(0.7, 1, 0.5), 0.7);
}

#[test]
fn size_penalty_setting_reads_old_headers_and_is_checked() {
    let old = r#"{"max_epochs":3,"patience":1,"objective":"accuracy","max_params":null,"max_madds":null}"#;
    let settings: TrainerSettings = serde_json::from_str(old).expect("old header reads");
    assert_eq!(settings.size_penalty, None);
    let written = serde_json::to_string(&settings).expect("serialises");
    assert!(!written.contains("size_penalty"), "{written}");
    let negative = TrainerSettings {
        size_penalty: Some(-0.1),
        ..TrainerSettings::default()
    };
    let error = negative.check().expect_err("negative λ is refused");
    assert!(
        matches!(error, gemmule::Error::Input(_)) && error.to_string().contains("--size-penalty"),
        "{error}"
    );
}

#[test]
fn evaluator_records_raw_scores_and_the_penalised_objective() {
    let rows = 24;
    let x: Vec<f32> = (0..rows * 2)
        .map(|i| ((i * 7) % 11) as f32 / 11.0)
        .collect();
    let y: Vec<u32> = (0..rows).map(|i| (i % 2) as u32).collect();
    let data = Dataset::new(x, y, 2, 2).expect("dataset");
    let settings = TrainerSettings {
        max_epochs: 1,
        patience: 0,
        size_penalty: Some(0.02),
        ..TrainerSettings::default()
    };
    let evaluator = TrainingEvaluator::new(data.clone(), data, settings);
    let genome = LayerGenome {
        layers: vec![layer(3, Activation::Relu, false, 0.0)],
        training: training(),
    };
    let evaluation = evaluator.evaluate(&genome, 5);
    let accuracy = evaluation.scores["accuracy"];
    let params = evaluation.params.expect("params known");
    assert_eq!(params, 2 * 3 + 3 + 3 * 2 + 2);
    let objective = evaluation.objective.expect("scored");
    assert!((objective - (accuracy - 0.02 * (params as f64).log10())).abs() < 1e-12);
}

/// A journal with one image-cell candidate and one derived from it.
fn write_cell_run(dir: &std::path::Path) {
    let header = RunHeader {
        lag: None,
        format: gemmule::search::JOURNAL_FORMAT,
        tool_version: gemmule::search::TOOL_VERSION.to_string(),
        strategy: StrategyInfo {
            name: "aging_evolution".to_string(),
            settings: serde_json::json!({}),
        },
        seed: 1,
        jobs: 1,
        budget: Budget::evaluations(2),
        space: serde_json::json!({}),
        data: serde_json::json!({"classes": ["a", "b", "c"]}),
        trainer: serde_json::json!({"objective": "accuracy", "size_penalty": 0.01}),
    };
    let mut journal = Journal::create(dir, &header).expect("journal");
    let genome = image_genome();
    for (index, parent, mutation) in [(0, None, None), (1, Some(0), Some("op"))] {
        let record = EvaluationRecord {
            id: genome.id(),
            ..record_with(genome.clone(), index, parent, mutation)
        };
        journal.append_evaluation(&record).expect("append");
    }
}

#[test]
fn show_draws_a_cell_run_and_writes_dot_and_svg() {
    let dir = tempfile::tempdir().expect("temp dir");
    let run = dir.path().join("run");
    std::fs::create_dir(&run).expect("run dir");
    write_cell_run(&run);
    let (dot, svg) = (dir.path().join("best.dot"), dir.path().join("best.svg"));
    let out = private_dirs::isolate(&mut Command::new(env!("CARGO_BIN_EXE_gemmule")))
        .arg("show")
        .arg(&run)
        .arg("--ascii")
        .arg("--dot")
        .arg(&dot)
        .arg("--svg")
        .arg(&svg)
        .output()
        .expect("the binary runs");
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{stdout}{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(stdout.is_ascii(), "{stdout}");
    let drawn = stdout.split("best architecture").nth(1).unwrap_or_default();
    assert_fits(drawn);
    for expected in [
        "best architecture (evaluation 1",
        "lineage of evaluation 1",
        "Pareto front",
        "accuracy - 0.01*log10(params)",
    ] {
        assert!(stdout.contains(expected), "{expected} in {stdout}");
    }
    let dot = std::fs::read_to_string(dot).expect("DOT written");
    assert_eq!(parsed_node_count(&dot), 2 * (2 + 5 * 3 + 1));
    let svg = std::fs::read_to_string(svg).expect("SVG written");
    assert!(svg_texts(&svg).contains(&"normal cell".to_string()));
    let missing = private_dirs::isolate(&mut Command::new(env!("CARGO_BIN_EXE_gemmule")))
        .arg("show")
        .arg(&run)
        .args(["--index", "9"])
        .output()
        .expect("the binary runs");
    assert_eq!(missing.status.code(), Some(2));
}
