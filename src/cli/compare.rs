//! `gemmule compare`: several strategies × several seeds with equal budgets,
//! then a table (or JSON) of how they fared and whether evolution beat random search.

use super::args::{DataArgs, SpaceArgs, StrategyArg, TrainerArgs};
use super::progress::ProgressObserver;
use super::EXIT_INTERRUPTED;
use crate::genome::AnyGenome;
use crate::search::{EvaluationRecord, SearchObserver, SearchOutcome};
use crate::stats::{Summary, DEFAULT_RESAMPLES};
use crate::workflow::{
    comparison_pick, ComparePlan, ComparedStrategy, Comparison, ComparisonEnding,
    ComparisonObserver, ComparisonReport, PlannedRun, ReportOptions, RunState,
};
use crate::Error;
use anyhow::Result;
use clap::Args;
use std::collections::BTreeSet;
use std::path::PathBuf;
use std::sync::atomic::AtomicBool;

/// Options of `gemmule compare`.
#[derive(Debug, Args)]
pub struct CompareArgs {
    #[command(flatten)]
    /// The data.
    pub data: DataArgs,
    /// Comparison directory: comparison.json plus one run directory per strategy and seed.
    /// Running the same command again continues an unfinished comparison.
    #[arg(long, value_name = "CMP")]
    pub out: PathBuf,
    /// Strategies to compare, comma-separated.
    #[arg(
        long,
        value_enum,
        value_name = "LIST",
        value_delimiter = ',',
        default_value = "evolution,random"
    )]
    pub strategies: Vec<StrategyArg>,
    /// Seeds 1..=K for every strategy (default 5).
    #[arg(long, value_name = "K", conflicts_with = "seed_list")]
    pub seeds: Option<u64>,
    /// Explicit seeds, comma-separated, instead of --seeds.
    #[arg(long, value_name = "LIST", value_delimiter = ',')]
    pub seed_list: Option<Vec<u64>>,
    /// Evaluations (candidates trained) per run; every run gets the same.
    #[arg(long, value_name = "N", default_value_t = 40)]
    pub budget: u64,
    /// Candidates each run trains at once (runs go one after another; default:
    /// the recorded value when continuing, else available cores).
    #[arg(long, value_name = "N")]
    pub jobs: Option<usize>,
    #[command(flatten)]
    /// How candidates are trained and ranked.
    pub trainer: TrainerArgs,
    #[command(flatten)]
    /// The search space.
    pub space: SpaceArgs,
    /// Score to reach, on the objective's scale (log loss negated); default:
    /// the median over all runs of the best score at the budget.
    #[arg(long, value_name = "SCORE", allow_negative_numbers = true)]
    pub target: Option<f64>,
    /// Bootstrap resamples for the interval of the difference of medians.
    #[arg(long, value_name = "B", default_value_t = DEFAULT_RESAMPLES)]
    pub resamples: usize,
    /// Seed of the bootstrap.
    #[arg(long, value_name = "N", default_value_t = 0)]
    pub bootstrap_seed: u64,
    /// Print the report as JSON on standard output.
    #[arg(long)]
    pub json: bool,
    /// No progress bars or per-run lines.
    #[arg(long, short)]
    pub quiet: bool,
}

/// Runs `gemmule compare`.
pub fn compare_command(a: CompareArgs, stop: &AtomicBool) -> Result<i32> {
    let plan = plan_from(&a)?;
    let comparison = Comparison::open(&a.out, plan)?;
    let mut observer = CliComparisonObserver::new(a.quiet);
    let ending = comparison.run(&mut observer, stop);
    observer.finish();
    if ending? == ComparisonEnding::Stopped {
        eprintln!(
            "stopped; run the same command again to continue the comparison in {}",
            a.out.display()
        );
        return Ok(EXIT_INTERRUPTED);
    }
    let options = ReportOptions {
        target: a.target,
        resamples: a.resamples,
        bootstrap_seed: a.bootstrap_seed,
    };
    let report = comparison.report(&options)?;
    if a.json {
        let text = serde_json::to_string_pretty(&report)
            .map_err(|e| Error::internal(format!("comparison report: {e}")))?;
        println!("{text}");
    } else {
        print!("{}", render_report(&report, &comparison));
    }
    Ok(0)
}

fn plan_from(a: &CompareArgs) -> Result<ComparePlan> {
    let seeds = match (&a.seed_list, a.seeds) {
        (Some(list), _) => list.clone(),
        (None, Some(0)) => return Err(Error::input("--seeds must be at least 1").into()),
        (None, count) => (1..=count.unwrap_or(5)).collect(),
    };
    let strategies = a
        .strategies
        .iter()
        .map(|s| match s {
            StrategyArg::Evolution => ComparedStrategy::Evolution,
            StrategyArg::Random => ComparedStrategy::Random,
        })
        .collect();
    let jobs = match a.jobs {
        Some(0) => return Err(Error::input("--jobs must be at least 1").into()),
        Some(jobs) => jobs,
        None => match ComparePlan::read(&a.out)? {
            Some(recorded) => recorded.jobs,
            None => std::thread::available_parallelism()
                .map(|n| n.get())
                .unwrap_or(1),
        },
    };
    let trainer = a.trainer.settings();
    let source = a.data.source()?;
    let space = a.space.any_space(source.is_images())?;
    Ok(
        ComparePlan::new(source, space, trainer, strategies, seeds, a.budget, jobs)?
            .with_folds(a.trainer.folds),
    )
}

/// Per-run lines and a progress bar per run, on standard error.
pub(super) struct CliComparisonObserver {
    quiet: bool,
    search: OnceWarnings,
}

impl CliComparisonObserver {
    pub(super) fn new(quiet: bool) -> Self {
        CliComparisonObserver {
            quiet,
            search: OnceWarnings {
                bar: ProgressObserver::new(true),
                seen: BTreeSet::new(),
            },
        }
    }

    pub(super) fn finish(self) {
        self.search.bar.finish();
    }

    /// Puts `fresh` in place of the current run's bar and removes the old one.
    fn replace_bar(&mut self, fresh: ProgressObserver) {
        std::mem::replace(&mut self.search.bar, fresh).finish();
    }
}

/// The current run's progress bar; passes on each distinct warning once per
/// comparison, since every run of it reads the same data (an imputation
/// warning would otherwise repeat for every strategy and seed).
struct OnceWarnings {
    bar: ProgressObserver,
    seen: BTreeSet<String>,
}

impl SearchObserver<AnyGenome> for OnceWarnings {
    fn on_start(&mut self, already_done: u64, budget: u64) {
        self.bar.on_start(already_done, budget);
    }

    fn on_commit(
        &mut self,
        record: &EvaluationRecord<AnyGenome>,
        best_so_far: Option<f64>,
        done: u64,
        budget: u64,
    ) {
        self.bar.on_commit(record, best_so_far, done, budget);
    }

    fn on_warning(&mut self, message: &str) {
        if self.seen.insert(message.to_string()) {
            self.bar.on_warning(message);
        }
    }
}

impl ComparisonObserver for CliComparisonObserver {
    fn run_starting(&mut self, position: usize, total: usize, run: &PlannedRun, state: RunState) {
        self.replace_bar(ProgressObserver::new(self.quiet));
        if !self.quiet {
            let what = match state {
                RunState::Unfinished(done) => format!("continuing after {done} evaluations"),
                _ => "starting".to_string(),
            };
            eprintln!("run {position}/{total}: {}: {what}", run.dir_name);
        }
    }

    fn search_observer(&mut self) -> &mut dyn SearchObserver<AnyGenome> {
        &mut self.search
    }

    fn run_skipped(&mut self, position: usize, total: usize, run: &PlannedRun) {
        if !self.quiet {
            eprintln!(
                "run {position}/{total}: {}: finished before, kept",
                run.dir_name
            );
        }
    }

    fn run_ended(&mut self, run: &PlannedRun, outcome: &SearchOutcome) {
        self.replace_bar(ProgressObserver::new(true));
        if !self.quiet {
            let best = outcome
                .best
                .map_or("none scored".to_string(), |(_, v)| format!("{v:.4}"));
            eprintln!(
                "    {}: {} evaluations, best {best}",
                run.dir_name, outcome.evaluations
            );
        }
    }
}

/// The name of what candidates were ranked by: the objective's name, or
/// `NAME - λ*log10(params)` with a size penalty (as `gemmule show` writes it).
fn ranked_by(objective: &str, size_penalty: Option<f64>) -> String {
    match size_penalty {
        Some(lambda) => format!("{objective} - {lambda}*log10(params)"),
        None => objective.to_string(),
    }
}

fn mean_sd(summary: &Summary) -> String {
    match summary.sd {
        Some(sd) => format!("{:.4} ± {sd:.4}", summary.mean),
        None => format!("{:.4}", summary.mean),
    }
}

/// The report as text tables.
pub(super) fn render_report(report: &ComparisonReport, comparison: &Comparison) -> String {
    let plan = comparison.plan();
    // What the runs ranked by: the validation score, or with --size-penalty
    // the penalised value (the test scores below stay the raw score).
    let objective = ranked_by(&report.objective, plan.trainer.size_penalty);
    let score = &report.objective;
    let mut out = format!(
        "comparison in {}: {} strategies × {} seeds, {} evaluations per run, objective {objective}{}\n",
        comparison.dir().display(),
        plan.strategies.len(),
        plan.seeds.len(),
        report.evaluations,
        if plan.trainer.size_penalty.is_some() {
            " (size penalty)"
        } else {
            ""
        }
    );
    out.push_str(&format!(
        "\nbest validation {objective} at the budget (over seeds)\n{:<10} {:>4}  {:<17} {:>7} {:>7} {:>7}\n",
        "strategy", "runs", "mean ± sd", "median", "min", "max"
    ));
    for s in &report.strategies {
        let b = &s.best_at_budget;
        out.push_str(&format!(
            "{:<10} {:>4}  {:<17} {:>7.4} {:>7.4} {:>7.4}\n",
            s.strategy.name(),
            b.count,
            mean_sd(b),
            b.median,
            b.min,
            b.max
        ));
    }
    let target_origin = if report.target_is_default {
        "median best at the budget over all runs"
    } else {
        "--target"
    };
    out.push_str(&format!(
        "\nsearch speed: evaluations to reach {:.4} ({target_origin}); area = mean best-so-far over evaluations 1..={}\n{:<10} {:>8} {:>14}  {:<17} {:>7}\n",
        report.target, report.evaluations, "strategy", "reached", "median evals", "area mean ± sd", "median"
    ));
    for s in &report.strategies {
        let r = &s.evaluations_to_target;
        // Undefined when half the runs or more never reached the target.
        let median = r
            .median
            .map_or(format!("> {}", report.evaluations), |m| format!("{m}"));
        out.push_str(&format!(
            "{:<10} {:>8} {:>14}  {:<17} {:>7.4}\n",
            s.strategy.name(),
            format!("{}/{}", r.reached, r.runs),
            median,
            mean_sd(&s.area_under_curve),
            s.area_under_curve.median
        ));
    }
    out.push_str(&format!(
        "\ntest {score} (first test opening of finalized runs)\n"
    ));
    if report.strategies.iter().all(|s| s.test_score.is_none()) {
        out.push_str(&format!(
            "  no run is finalized; `gemmule finalize {}/<run>` opens a run's test split\n",
            comparison.dir().display()
        ));
    } else {
        for s in &report.strategies {
            let line = match &s.test_score {
                Some(t) => format!(
                    "{} finalized, {}, median {:.4}",
                    t.count,
                    mean_sd(t),
                    t.median
                ),
                None => "none finalized".to_string(),
            };
            out.push_str(&format!("{:<10} {line}\n", s.strategy.name()));
        }
    }
    if let Some(test) = &report.test {
        let u = &test.mann_whitney;
        let d = &test.median_difference;
        let method = match u.method {
            crate::stats::PValueMethod::Exact => "exact",
            _ => "normal approximation",
        };
        out.push_str(&format!(
            "\n{first} > {second}? one-sided Mann–Whitney U on the best {objective} at the budget\n  U = {:.1}, p = {:.4} ({method}, {} vs {} runs)\n  median difference {first} − {second}: {:.4}, bootstrap 95% interval [{:.4}, {:.4}] ({} resamples, seed {})\n",
            u.u,
            u.p_value,
            u.first_count,
            u.second_count,
            d.estimate,
            d.low,
            d.high,
            d.resamples,
            d.seed,
            first = test.first.name(),
            second = test.second.name(),
        ));
    }
    if let Ok(Some(pick)) = comparison_pick(comparison, None) {
        out.push_str(&format!("\n{}\n", pick.describe()));
        if let Some(gap) = &pick.baseline_gap {
            out.push_str(&format!("  {}\n", gap.text));
        }
        out.push_str(&format!(
            "  `gemmule finalize {}` opens the comparison's test split once, for this pick and \
             the linear baseline\n",
            comparison.dir().display()
        ));
    }
    out
}
