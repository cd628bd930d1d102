//! One function per command.

use super::args::{
    Command, FinalizeArgs, PickArg, PredictArgs, ResumeArgs, SearchArgs, SpaceArgs, StrategyArg,
    TrainArgs,
};
use super::progress::ProgressObserver;
use super::show::show;
use super::EXIT_INTERRUPTED;
use crate::bundle::ModelBundle;
use crate::evaluate::scores_map;
use crate::genome::{AnyGenome, AnySpace, SearchSpace};
use crate::model::{genome_cost, train_genome};
use crate::search::{AgingSettings, Budget, Journal, RunVerdict, SearchEnding, SearchOutcome};
use crate::train::TrainSettings;
use crate::workflow::{
    comparison_pick, finalize, resume_job, ComparePlan, Comparison, FinalizeOptions, SearchJob,
    StrategyChoice,
};
use crate::Error;
use anyhow::{Context, Result};
use std::io::Write;
use std::sync::atomic::AtomicBool;

/// Runs one command; returns the exit code on success.
pub fn dispatch(command: Command, stop: &AtomicBool) -> Result<i32> {
    match command {
        Command::Demo(a) => super::demo::demo_command(a, stop),
        Command::Train(a) => train_command(a),
        Command::Predict(a) => predict_command(a),
        Command::Space(a) => space_command(a),
        Command::Search(a) => search_command(a, stop),
        Command::Resume(a) => resume_command(a, stop),
        Command::Show(a) => show(&a),
        Command::Finalize(a) => finalize_command(a),
        Command::Compare(a) => super::compare::compare_command(a, stop),
        Command::Report(a) => super::report::report_command(a),
    }
}

fn warn_all(warnings: &[String]) {
    for w in warnings {
        eprintln!("gemmule: warning: {w}");
    }
}

fn train_command(a: TrainArgs) -> Result<i32> {
    let source = a.data.source()?;
    let text = std::fs::read_to_string(&a.genome).map_err(|e| Error::io(&a.genome, e))?;
    let genome = AnyGenome::from_json(&text, &a.genome.display().to_string())?;
    genome
        .validate_basic()
        .map_err(|e| Error::input(format!("{}: {e}", a.genome.display())))?;
    let prepared = source.prepare()?;
    warn_all(&prepared.info.warnings);
    if a.augment && genome.encoding() != crate::genome::Encoding::ImageCells {
        return Err(Error::input(
            "--augment shifts images and applies to image cell genomes (cells_image) only",
        )
        .into());
    }
    let layout = prepared.layout();
    genome_cost(&genome, &layout, prepared.info.class_names.len())
        .map_err(|e| Error::input(format!("{}: {e}", a.genome.display())))?;
    let settings = TrainSettings::new(a.epochs, a.patience, a.seed);
    let outcome = train_genome(
        &genome,
        &prepared.train,
        Some(&prepared.valid),
        &layout,
        &settings,
        a.augment,
    )?;
    println!("genome {} on {}", genome.id(), source.path.display());
    print!(
        "{}",
        genome.text(
            Some(prepared.info.n_features),
            Some(prepared.info.class_names.len()),
            false
        )
    );
    println!(
        "rows: {} train, {} validation ({} test rows stay sealed)",
        prepared.info.rows_train, prepared.info.rows_valid, prepared.info.rows_test
    );
    println!("parameters: {}", outcome.network.param_count());
    println!(
        "status: {:?}, {} epochs (best {}), {:.2} s, {:.4} s per epoch",
        outcome.status,
        outcome.epochs_run,
        outcome.best_epoch,
        outcome.seconds,
        outcome.seconds / f64::from(outcome.epochs_run.max(1))
    );
    if let Some(scores) = &outcome.scores {
        for (name, value) in scores_map(scores) {
            println!("validation {name}: {value:.4}");
        }
    }
    let provenance = serde_json::json!({
        "made_by": "train",
        "data_fingerprint": prepared.info.fingerprint,
        "seed": a.seed,
        "epochs_run": outcome.epochs_run,
        "best_epoch": outcome.best_epoch,
        "validation_scores": outcome.scores.as_ref().map(scores_map),
    });
    ModelBundle::new(genome, outcome.network, prepared.preprocessor, provenance).save(&a.out)?;
    println!("model saved in {}", a.out.display());
    Ok(0)
}

fn predict_command(a: PredictArgs) -> Result<i32> {
    let bundle = ModelBundle::load(&a.model)?;
    let delimiter = match a.delimiter {
        Some(c) if !c.is_ascii() => {
            return Err(Error::input(format!(
                "--delimiter must be one ASCII character, got {c:?}"
            ))
            .into())
        }
        other => other.map(|c| c as u8),
    };
    if bundle.description.image_preprocessor.is_none() && a.idx_labels.is_some() {
        return Err(Error::input(
            "--idx-labels applies to image models; this model reads CSV rows",
        )
        .into());
    }
    let predictions = match &bundle.description.image_preprocessor {
        None => bundle.predict_csv(&a.data, delimiter)?,
        Some(pre) => {
            let csv = crate::data::CsvOptions {
                label: a.label.clone(),
                delimiter,
                impute: false,
            };
            let images = crate::workflow::read_prediction_images(
                &a.data,
                pre,
                a.idx_labels.as_deref(),
                &csv,
            )?;
            bundle.predict_images(&images)?
        }
    };
    warn_all(&predictions.warnings);
    let with_sources = !predictions.sources.is_empty();
    let mut out = String::new();
    for name in &predictions.id_names {
        out.push_str(&csv_safe(name));
        out.push(',');
    }
    out.push_str(if with_sources {
        "row,source,predicted"
    } else {
        "row,predicted"
    });
    for name in &predictions.class_names {
        out.push_str(&format!(",p_{}", csv_safe(name)));
    }
    out.push('\n');
    let k = predictions.class_names.len();
    for (row, &class) in predictions.classes.iter().enumerate() {
        for id in predictions.ids.get(row).into_iter().flatten() {
            out.push_str(&csv_safe(id));
            out.push(',');
        }
        out.push_str(&(row + 1).to_string());
        if let Some(source) = predictions.sources.get(row) {
            out.push(',');
            out.push_str(&csv_safe(source));
        }
        out.push(',');
        out.push_str(&csv_safe(&predictions.class_names[class as usize]));
        for p in &predictions.probabilities[row * k..(row + 1) * k] {
            out.push_str(&format!(",{p:.6}"));
        }
        out.push('\n');
    }
    match &a.out {
        Some(path) => {
            crate::fsio::write_atomic(path, out.as_bytes())?;
            eprintln!(
                "{} predictions written to {}",
                predictions.classes.len(),
                path.display()
            );
        }
        None => {
            let _ = std::io::stdout().write_all(out.as_bytes());
        }
    }
    if let Some(labels) = &predictions.labels {
        let correct = labels
            .iter()
            .zip(&predictions.classes)
            .filter(|(a, b)| a == b)
            .count();
        eprintln!(
            "accuracy on the labelled rows: {:.4} ({correct} of {})",
            correct as f64 / labels.len().max(1) as f64,
            labels.len()
        );
    }
    Ok(0)
}

fn csv_safe(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

fn space_command(a: SpaceArgs) -> Result<i32> {
    match a.any_space(false)? {
        AnySpace::Layers(space) => print_layer_space(&space),
        AnySpace::ImageCells(space) => print_cell_space(&space),
        AnySpace::TableCells(space) => print_cell_space(&space),
    }
    Ok(0)
}

fn print_cell_space<Op: crate::genome::CellOp>(space: &crate::genome::CellSpace<Op>) {
    println!(
        "{} cells: B = {} blocks per cell, ops [{}], F in {:?}, N in {:?}, R in {:?}",
        Op::TAG,
        space.blocks,
        space
            .ops
            .iter()
            .map(|op| op.name())
            .collect::<Vec<_>>()
            .join(", "),
        space.channels,
        space.normal_cells,
        space.repeats
    );
    for i in 0..space.blocks {
        println!(
            "  block {}: {} choices (unordered pairs of (input, op))",
            i + 1,
            space.block_choices(i)
        );
    }
    println!("  cells (normal or reduction): {}", space.cell_count());
    println!(
        "  training-gene combinations: {}",
        space.training_combinations()
    );
    println!("members: {}", space.size());
}

fn print_layer_space(space: &crate::genome::LayerSpace) {
    println!(
        "hidden layers {}..={}, widths {}..={}, activations [{}], residual skips {}",
        space.min_layers,
        space.max_layers,
        space.min_width,
        space.max_width,
        space
            .activations
            .iter()
            .map(|a| a.name())
            .collect::<Vec<_>>()
            .join(", "),
        if space.residual { "allowed" } else { "off" }
    );
    for depth in space.min_layers..=space.max_layers {
        println!(
            "  stacks with {depth} hidden layers: {}",
            space.stacks_at_depth(depth)
        );
    }
    println!(
        "  training-gene combinations: {}",
        space.training_combinations()
    );
    println!("members: {}", space.size());
}

fn search_command(a: SearchArgs, stop: &AtomicBool) -> Result<i32> {
    let source = a.data.source()?;
    let space = a.space.any_space(source.is_images())?;
    let strategy = match a.strategy {
        StrategyArg::Random => {
            if a.population.is_some() || a.sample_size.is_some() {
                return Err(Error::input(
                    "--population and --sample-size apply to --strategy evolution only",
                )
                .into());
            }
            if a.trainer.curve_cut {
                return Err(Error::input(
                    "--curve-cut measures candidates against the population's worst score, and \
                     random search keeps no population, so nothing would be cut: drop \
                     --curve-cut or use --strategy evolution",
                )
                .into());
            }
            StrategyChoice::Random
        }
        StrategyArg::Evolution => {
            let mut settings = AgingSettings::for_budget(a.budget);
            if let Some(p) = a.population {
                settings.population = p;
                if a.sample_size.is_none() {
                    settings.sample_size = crate::search::default_sample_size(p);
                }
            }
            if let Some(s) = a.sample_size {
                settings.sample_size = s;
            }
            StrategyChoice::Evolution(Some(settings))
        }
    };
    let jobs = match a.jobs {
        Some(0) => return Err(Error::input("--jobs must be at least 1").into()),
        Some(j) => j,
        None => std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1),
    };
    let job = SearchJob {
        source,
        space,
        strategy,
        trainer: a.trainer.settings(),
        seed: a.seed,
        jobs,
        budget: Budget {
            evaluations: a.budget,
            seconds: a.time_limit,
        },
        seed_genomes: match &a.seed_genomes {
            Some(path) => read_genome_list(path)?,
            None => Vec::new(),
        },
        folds: a.trainer.folds,
    };
    if let Some(path) = &a.seed_genomes {
        for (i, genome) in job.seed_genomes.iter().enumerate() {
            job.space.validate(genome).map_err(|e| {
                Error::input(format!(
                    "{}: genome {} is outside the search space: {e}",
                    path.display(),
                    i + 1
                ))
            })?;
        }
    }
    // Printed by the observer once the run has started, so that every
    // refusal (options, data, an existing run) prints only its error line.
    let start_line = format!(
        "searching {} members of the {} space with {} ({} evaluations, {} jobs, seed {})",
        job.space.size(),
        job.space.encoding(),
        match job.strategy {
            StrategyChoice::Random => "random search".to_string(),
            StrategyChoice::Evolution(Some(s)) =>
                format!("aging evolution P={} S={}", s.population, s.sample_size),
            StrategyChoice::Evolution(None) => "aging evolution".to_string(),
        },
        job.budget.evaluations,
        jobs,
        job.seed
    );
    let mut observer = StartLine::new(start_line, ProgressObserver::new(a.quiet));
    let outcome = job.run(&a.out, &mut observer, stop);
    observer.inner.finish();
    report_outcome(&a.out, outcome?)
}

/// Prints the search's opening line when the run really starts (the first
/// `on_start`, after every check), and holds back warnings until then, so a
/// refused search prints nothing but its error.
struct StartLine {
    line: Option<String>,
    held: Vec<String>,
    inner: ProgressObserver,
}

impl StartLine {
    fn new(line: String, inner: ProgressObserver) -> Self {
        StartLine {
            line: Some(line),
            held: Vec::new(),
            inner,
        }
    }
}

impl crate::search::SearchObserver<AnyGenome> for StartLine {
    fn on_start(&mut self, already_done: u64, budget: u64) {
        if let Some(line) = self.line.take() {
            eprintln!("{line}");
            for warning in std::mem::take(&mut self.held) {
                self.inner.on_warning(&warning);
            }
        }
        self.inner.on_start(already_done, budget);
    }

    fn on_commit(
        &mut self,
        record: &crate::search::EvaluationRecord<AnyGenome>,
        best_so_far: Option<f64>,
        done: u64,
        budget: u64,
    ) {
        self.inner.on_commit(record, best_so_far, done, budget);
    }

    fn on_warning(&mut self, message: &str) {
        if self.line.is_some() {
            self.held.push(message.to_string());
        } else {
            self.inner.on_warning(message);
        }
    }
}

/// Reads one genome or a JSON array of genomes.
fn read_genome_list(path: &std::path::Path) -> Result<Vec<AnyGenome>> {
    let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
    let name = path.display().to_string();
    if text.trim_start().starts_with('[') {
        let values: Vec<serde_json::Value> = serde_json::from_str(&text).map_err(|e| {
            Error::input(format!(
                "{name}:{}:{}: not a JSON array of genomes: {e}",
                e.line(),
                e.column()
            ))
        })?;
        values
            .iter()
            .enumerate()
            .map(|(i, v)| {
                AnyGenome::from_json(&v.to_string(), &format!("{name} (genome {})", i + 1))
                    .map_err(Into::into)
            })
            .collect()
    } else {
        Ok(vec![AnyGenome::from_json(&text, &name)?])
    }
}

fn resume_command(a: ResumeArgs, stop: &AtomicBool) -> Result<i32> {
    let budget = match (a.budget, a.time_limit) {
        (None, None) => None,
        (evaluations, seconds) => {
            let (recorded, _) = SearchJob::from_run_dir(&a.run)?;
            Some(Budget {
                evaluations: evaluations.unwrap_or(recorded.budget.evaluations),
                seconds: seconds.or(recorded.budget.seconds),
            })
        }
    };
    let opened = Journal::read::<serde_json::Value>(&Journal::path_in(&a.run))
        .map(|c| c.openings.len())
        .unwrap_or(0);
    if opened > 0 {
        eprintln!(
            "gemmule: warning: the test split of this run was already opened {opened} time(s); a test score after more searching is no longer an unbiased estimate"
        );
    }
    let mut observer = ProgressObserver::new(a.quiet);
    let outcome = resume_job(&a.run, a.data.clone(), budget, &mut observer, stop);
    observer.finish();
    report_outcome(&a.run, outcome?)
}

fn report_outcome(run: &std::path::Path, outcome: SearchOutcome) -> Result<i32> {
    // Warnings (stale lock, torn line) already went through the observer.
    let best = outcome.best.map_or("none scored".to_string(), |(i, v)| {
        format!("{v:.4} (evaluation {i})")
    });
    println!(
        "{} evaluations in the journal ({} new); best validation objective {best}",
        outcome.evaluations, outcome.new_evaluations
    );
    if let Ok(contents) = Journal::read::<serde_json::Value>(&Journal::path_in(run)) {
        for line in RunVerdict::new(&contents, None).lines() {
            println!("{line}");
        }
    }
    match outcome.ending {
        SearchEnding::BudgetSpent => {
            println!(
                "see `gemmule show {0}`, then `gemmule finalize {0}`",
                run.display()
            );
            Ok(0)
        }
        SearchEnding::TimeUp => {
            println!(
                "time limit reached; continue with `gemmule resume {}`",
                run.display()
            );
            Ok(0)
        }
        SearchEnding::Stopped => {
            println!("stopped; continue with `gemmule resume {}`", run.display());
            Ok(EXIT_INTERRUPTED)
        }
    }
}

fn finalize_command(a: FinalizeArgs) -> Result<i32> {
    let mut options = FinalizeOptions {
        top_k: a.top_k,
        repeats: a.repeats,
        reopen: a.reopen,
        data: a.data.clone(),
        index: a.index,
        pick: a.pick.map(PickArg::rule),
        positive_class: a.positive.clone(),
        ledger: None,
    };
    // A comparison directory: finalize the run holding the comparison's
    // pick, so the comparison's test split is opened once.
    let mut run = a.run.clone();
    if ComparePlan::path_in(&a.run).is_file() {
        if a.index.is_some() {
            return Err(Error::input(
                "--index names an evaluation of one run; give that run's folder \
                 (COMPARISON/STRATEGY-seedN) instead of the comparison folder",
            )
            .into());
        }
        let comparison = Comparison::load(&a.run)?;
        let Some(pick) = comparison_pick(&comparison, options.pick)? else {
            return Err(Error::input(format!(
                "{}: no run of this comparison has a scored candidate yet; run `gemmule compare` first",
                a.run.display()
            ))
            .into());
        };
        println!("{}", pick.describe());
        options.index = Some(pick.index);
        run = pick.run_dir;
    }
    let report = finalize(&run, &options).context("finalize")?;
    print!("{}", super::final_text::final_report_text(&report));
    println!(
        "final model saved in {}",
        run.join(&report.model_dir).display()
    );
    Ok(0)
}
