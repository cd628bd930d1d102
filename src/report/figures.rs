//! The report's four plots, drawn from the runs and the summary facts.

use super::input::ReportInput;
use super::plot_candidates::{plot_lineage, plot_score_by_size, CandidatePoint, LineagePoint};
use super::plot_frame::group_order;
use super::plot_progress::{plot_best_by_evaluation, plot_best_by_seconds, CurveGroup, TimedCurve};
use super::summary::ReportSummary;
use super::timeline::{best_over_time, finish_times};
use crate::search::RunSummary;
use crate::Result;

/// The plots as SVG documents.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportFigures {
    /// Best-so-far objective against evaluations.
    pub by_evaluation: String,
    /// Best-so-far objective against elapsed search seconds.
    pub by_seconds: String,
    /// Every candidate's objective against its parameters, with the Pareto front.
    pub score_by_size: String,
    /// The objective along the best candidate's lineage.
    pub lineage: String,
}

impl ReportFigures {
    /// Draws every plot of the report.
    pub fn draw(input: &ReportInput, summary: &ReportSummary) -> Result<ReportFigures> {
        let objective = summary.objective.as_str();
        let order = group_order(input.runs.iter().map(|run| run.strategy.as_str()));
        let groups: Vec<CurveGroup> = order
            .iter()
            .map(|name| CurveGroup {
                name: name.clone(),
                curves: input
                    .runs
                    .iter()
                    .filter(|run| &run.strategy == name)
                    .map(|run| RunSummary::new(&run.journal.evaluations, 0).best_so_far)
                    .collect(),
            })
            .collect();
        let timed: Vec<TimedCurve> = input
            .runs
            .iter()
            .map(|run| TimedCurve {
                group: run.strategy.clone(),
                points: best_over_time(&run.journal.evaluations, &run.timings),
                end: finish_times(&run.timings)
                    .values()
                    .copied()
                    .fold(0.0, f64::max),
            })
            .collect();
        let candidates: Vec<CandidatePoint> = input
            .runs
            .iter()
            .flat_map(|run| {
                run.journal.evaluations.iter().filter_map(|record| {
                    Some(CandidatePoint {
                        group: run.strategy.clone(),
                        params: record.params?,
                        objective: record.objective?,
                    })
                })
            })
            .collect();
        let front: Vec<(u64, f64)> = summary
            .pareto_front
            .iter()
            .map(|member| (member.params, member.objective))
            .collect();
        let chain: Vec<LineagePoint> = summary
            .lineage
            .iter()
            .map(|step| LineagePoint {
                index: step.index,
                objective: step.objective,
                mutation: step.mutation.clone(),
            })
            .collect();
        Ok(ReportFigures {
            by_evaluation: plot_best_by_evaluation(&groups, objective)?,
            by_seconds: plot_best_by_seconds(&timed, objective)?,
            score_by_size: plot_score_by_size(&candidates, &front, objective)?,
            lineage: plot_lineage(&chain, objective)?,
        })
    }
}
