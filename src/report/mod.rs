//! `gemmule report`: a self-contained HTML page, `summary.json` and
//! `candidates.csv` for a run directory or a comparison directory, built from
//! the journals and timings alone (nothing is trained, the sealed test split
//! is never opened).
//!
//! The plots are drawn with plotters' SVG backend and are deterministic: the
//! same files give the same bytes. Only the timings make the time plot and
//! the seconds columns differ between otherwise equal runs.

mod ancestry;
mod candidates_csv;
mod figures;
mod html_comparison;
mod html_details;
mod html_page;
mod html_results;
mod html_verdict;
mod input;
mod plot_candidates;
mod plot_frame;
mod plot_progress;
mod settings_check;
mod summary;
mod summary_build;
mod timeline;

pub use ancestry::FrontMember;
pub use candidates_csv::candidates_csv;
pub use figures::ReportFigures;
pub use html_page::escape;
pub use input::{ReportInput, ReportRun, ReportSubject};
pub use plot_candidates::{plot_lineage, plot_score_by_size, CandidatePoint, LineagePoint};
pub use plot_progress::{plot_best_by_evaluation, plot_best_by_seconds, CurveGroup, TimedCurve};
pub use settings_check::SettingsCheck;
pub use summary::{
    BestFacts, ComparisonFacts, OpeningFacts, ReportSummary, ReproducibilityFacts, RunFacts,
    SearchedFacts, StrategyFacts, TestSplitFacts, SUMMARY_FORMAT,
};

use crate::search::TOOL_VERSION;
use crate::{Error, Result};
use html_page::{figure, page, paragraph, section, PageFrame};
use std::path::{Path, PathBuf};

/// File name of the HTML report.
pub const REPORT_HTML: &str = "report.html";
/// File name of the machine-readable summary.
pub const SUMMARY_JSON: &str = "summary.json";
/// File name of the per-evaluation table.
pub const CANDIDATES_CSV: &str = "candidates.csv";

/// The three report files' contents.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportDocuments {
    /// `report.html`.
    pub html: String,
    /// `summary.json` (pretty-printed, ending with a newline).
    pub summary_json: String,
    /// `candidates.csv`.
    pub candidates_csv: String,
}

/// Where the report files were written.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportFiles {
    /// `report.html`.
    pub html: PathBuf,
    /// `summary.json`.
    pub summary: PathBuf,
    /// `candidates.csv`.
    pub candidates: PathBuf,
}

/// Builds the report of `input` in memory.
pub fn build_report(input: &ReportInput) -> Result<ReportDocuments> {
    let summary = ReportSummary::build(input);
    let figures = ReportFigures::draw(input, &summary)?;
    let mut summary_json = serde_json::to_string_pretty(&summary)
        .map_err(|e| Error::internal(format!("summary.json: {e}")))?;
    summary_json.push('\n');
    Ok(ReportDocuments {
        html: html_report(input, &summary, &figures),
        summary_json,
        candidates_csv: candidates_csv(&input.runs)?,
    })
}

/// Reads `dir` (a run or comparison directory) and writes the three report
/// files into `out` (default: `dir`), creating `out` when needed.
pub fn write_report(dir: &Path, out: Option<&Path>) -> Result<ReportFiles> {
    let input = ReportInput::load(dir)?;
    let documents = build_report(&input)?;
    let out = out.unwrap_or(dir);
    std::fs::create_dir_all(out).map_err(|e| Error::io(out, e))?;
    let files = ReportFiles {
        html: out.join(REPORT_HTML),
        summary: out.join(SUMMARY_JSON),
        candidates: out.join(CANDIDATES_CSV),
    };
    // Temporary files of an earlier report writer that was killed.
    crate::fsio::remove_stale_temps(out);
    crate::fsio::write_atomic(&files.html, documents.html.as_bytes())?;
    crate::fsio::write_atomic(&files.summary, documents.summary_json.as_bytes())?;
    crate::fsio::write_atomic(&files.candidates, documents.candidates_csv.as_bytes())?;
    Ok(files)
}

const CONTENTS: [(&str, &str); 10] = [
    ("searched", "What was searched"),
    ("results", "Results"),
    ("verdict", "Verdict and baselines"),
    ("plots", "Plots"),
    ("architecture", "Best architecture"),
    ("lineage", "Lineage"),
    ("pareto", "Pareto-optimal candidates"),
    ("test-split", "Test split"),
    ("reproducibility", "Reproducibility"),
    ("caution", "Caution"),
];

fn lede(input: &ReportInput, summary: &ReportSummary) -> String {
    let evaluations: u64 = summary.runs.iter().map(|r| r.evaluations).sum();
    let scope = if input.is_comparison() {
        format!(
            "{} strategies × {} seeds, {evaluations} evaluations in {} runs",
            summary.searched.strategies.len(),
            summary.searched.seeds.len(),
            summary.runs.len()
        )
    } else {
        format!("{evaluations} evaluations")
    };
    match &summary.best {
        Some(best) => format!(
            "{scope}. Best validation {} {}, evaluation #{} of {}.",
            summary.objective,
            best.objective
                .map_or("–".to_string(), |v| format!("{v:.4}")),
            best.index,
            best.run
        ),
        None => format!("{scope}. No evaluation has a score yet."),
    }
}

fn plots_body(figures: &ReportFigures, objective: &str) -> String {
    let mut out = figure(
        &figures.by_evaluation,
        &format!("The best validation {objective} found so far after each evaluation. For a strategy with several runs the line is the median over its runs and the shaded band spans the lower to the upper quartile (a run without a score yet is left out at that evaluation)."),
        "plot",
    );
    out.push_str(&figure(
        &figures.by_seconds,
        "The same against elapsed search time: one line per run, coloured by strategy. Time counts while a search session runs (pauses between a stop and a resume are left out); evaluations without a timing line are not shown.",
        "plot",
    ));
    out.push_str(&figure(
        &figures.score_by_size,
        "Every scored candidate by size. The dark staircase is the Pareto front: at each size, the best score reached by a candidate with at most that many parameters; ringed points are on the front.",
        "plot",
    ));
    out
}

fn html_report(input: &ReportInput, summary: &ReportSummary, figures: &ReportFigures) -> String {
    let mut body = String::new();
    body.push_str(&section(
        "searched",
        "What was searched",
        &html_results::searched_section(input, summary),
    ));
    let mut results = String::new();
    for warning in input.warnings() {
        results.push_str(&paragraph(&warning, Some("warning")));
    }
    results.push_str(&html_results::results_section(input, summary));
    body.push_str(&section("results", "Results", &results));
    body.push_str(&section(
        "verdict",
        "Verdict and baselines",
        &html_verdict::verdict_section(summary),
    ));
    body.push_str(&section(
        "plots",
        "Plots",
        &plots_body(figures, &summary.objective),
    ));
    body.push_str(&section(
        "architecture",
        "Best architecture",
        &html_details::architecture_section(input, summary),
    ));
    body.push_str(&section(
        "lineage",
        "Lineage of the best candidate",
        &html_details::lineage_section(figures, summary),
    ));
    body.push_str(&section(
        "pareto",
        "Pareto-optimal candidates",
        &html_details::pareto_section(input, summary),
    ));
    body.push_str(&section(
        "test-split",
        "Test split",
        &html_details::test_section(input, summary),
    ));
    body.push_str(&section(
        "reproducibility",
        "Reproducibility",
        &html_details::reproducibility_section(summary),
    ));
    body.push_str(&section(
        "caution",
        "Caution",
        &html_verdict::caution_section(),
    ));
    let name = input
        .dir
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| input.dir.display().to_string());
    let kind = if input.is_comparison() {
        "gemmule · strategy comparison report"
    } else {
        "gemmule · search run report"
    };
    let footer = format!(
        "Written by gemmule {TOOL_VERSION} from the journals and timings in {}. One self-contained file: no scripts, nothing fetched from elsewhere. The machine-readable facts are in {SUMMARY_JSON}, every evaluation in {CANDIDATES_CSV}.",
        input.dir.display()
    );
    page(&PageFrame {
        title: &name,
        kicker: kind,
        lede: &lede(input, summary),
        contents: &CONTENTS,
        body: &body,
        footer: &footer,
    })
}
