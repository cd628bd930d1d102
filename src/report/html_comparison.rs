//! The comparison part of the results: per-strategy statistics, search
//! speed, the Mann–Whitney test with its bootstrap interval and a plain
//! reading of what the p-value does and does not mean, and the per-run table.

use super::html_page::{escape, facts, paragraph, score, table};
use crate::stats::{PValueMethod, Summary};
use crate::workflow::{ComparisonReport, StrategyTest};

fn mean_sd(s: &Summary) -> String {
    match s.sd {
        Some(sd) => format!("{:.4} ± {sd:.4}", s.mean),
        None => format!("{:.4}", s.mean),
    }
}

/// The statistics of a finished comparison as tables and a reading.
pub fn comparison_statistics(report: &ComparisonReport) -> String {
    let objective = &report.objective;
    let mut out = format!(
        "<h3>Best validation {} at the budget of {} evaluations, over seeds</h3>\n",
        escape(objective),
        report.evaluations
    );
    let rows: Vec<Vec<String>> = report
        .strategies
        .iter()
        .map(|s| {
            let b = &s.best_at_budget;
            vec![
                s.strategy.name().to_string(),
                b.count.to_string(),
                format!("{:.4}", b.median),
                format!("{:.4} – {:.4}", b.q1, b.q3),
                mean_sd(b),
                format!("{:.4} – {:.4}", b.min, b.max),
            ]
        })
        .collect();
    out.push_str(&table(
        &[
            "strategy",
            "runs",
            "median",
            "quartiles",
            "mean ± sd",
            "range",
        ],
        &rows,
    ));
    let target_origin = if report.target_is_default {
        "the median over all runs of the best score at the budget"
    } else {
        "given with --target"
    };
    out.push_str(&format!(
        "<h3>Search speed</h3>\n{}",
        paragraph(
            &format!(
                "Target {:.4} ({target_origin}). Area = mean best-so-far score over evaluations 1..={}; it rewards finding good candidates early. Runs that never reached the target count as slower than all others.",
                report.target, report.evaluations
            ),
            Some("note"),
        )
    ));
    let rows: Vec<Vec<String>> = report
        .strategies
        .iter()
        .map(|s| {
            let r = &s.evaluations_to_target;
            vec![
                s.strategy.name().to_string(),
                format!("{}/{}", r.reached, r.runs),
                r.median
                    .map_or(format!("> {}", report.evaluations), |m| format!("{m}")),
                mean_sd(&s.area_under_curve),
                s.test_score
                    .as_ref()
                    .map_or("not finalized".to_string(), |t| {
                        let runs = if t.count == 1 { "run" } else { "runs" };
                        format!("{:.4} ({} {runs})", t.median, t.count)
                    }),
            ]
        })
        .collect();
    out.push_str(&table(
        &[
            "strategy",
            "reached target",
            "median evaluations to target",
            "area mean ± sd",
            &format!("median test {objective}"),
        ],
        &rows,
    ));
    if let Some(test) = &report.test {
        out.push_str(&strategy_test(test, objective));
    }
    out.push_str("<h3>Per run</h3>\n");
    let rows: Vec<Vec<String>> = report
        .runs
        .iter()
        .map(|r| {
            vec![
                r.dir_name.clone(),
                r.seed.to_string(),
                score(r.best_at_budget),
                r.evaluations_to_target
                    .map_or("never".to_string(), |e| e.to_string()),
                format!("{:.4}", r.area_under_curve),
                r.test_openings.to_string(),
                score(r.test_score),
            ]
        })
        .collect();
    out.push_str(&table(
        &[
            "run",
            "seed",
            "best at budget",
            "evaluations to target",
            "area",
            "test openings",
            "first test score",
        ],
        &rows,
    ));
    out
}

/// The strategy's name in a sentence.
fn long_name(short: &str) -> &str {
    match short {
        "evolution" => "aging evolution",
        "random" => "random search",
        other => other,
    }
}

/// What this p-value says about these runs, in one sentence.
fn verdict(p_value: f64, first: &str, second: &str) -> String {
    let (first, second) = (long_name(first), long_name(second));
    if p_value < 0.05 {
        format!("Here p = {p_value:.4}: below the customary 5% level, so these runs are evidence that {first} finds better candidates than {second} on this data, space and budget.")
    } else {
        format!("Here p = {p_value:.4}: at or above the customary 5% level, so these runs give no clear evidence that {first} finds better candidates than {second}; that is not evidence that the two are equally good.")
    }
}

/// Binomial coefficient as a float (for the smallest attainable p-value).
fn choose(n: usize, k: usize) -> f64 {
    let k = k.min(n.saturating_sub(k));
    (0..k).fold(1.0, |acc, i| acc * (n - i) as f64 / (i + 1) as f64)
}

fn strategy_test(test: &StrategyTest, objective: &str) -> String {
    let (first, second) = (test.first.name(), test.second.name());
    let u = &test.mann_whitney;
    let d = &test.median_difference;
    let method = match u.method {
        PValueMethod::Exact => "exact distribution",
        _ => "normal approximation",
    };
    let mut out = format!(
        "<h3>Does {} find better candidates than {}?</h3>\n",
        escape(long_name(first)),
        escape(long_name(second))
    );
    out.push_str(&facts(&[
        (
            "Mann–Whitney U, one-sided",
            format!(
                "U = {:.1}, p = {:.4} ({method}; {} {first} runs against {} {second} runs)",
                u.u, u.p_value, u.first_count, u.second_count
            ),
        ),
        (
            "Difference of medians",
            format!(
                "{first} − {second}: {:.4}, {:.0}% bootstrap interval [{:.4}, {:.4}] ({} resamples, seed {})",
                d.estimate,
                d.level * 100.0,
                d.low,
                d.high,
                d.resamples,
                d.seed
            ),
        ),
    ]));
    let floor = 1.0 / choose(u.first_count + u.second_count, u.first_count);
    let reading = format!(
        "How to read this. The p-value is the chance of a U at least this large if the two strategies' best {objective} at the budget came from one and the same distribution. \
         A small p-value means a lead of {first} as large as the one observed would be surprising if neither strategy were better; it does not measure how large the lead is, \
         and it says nothing about other data sets, search spaces or budgets. A large p-value does not show the strategies are equal: \
         with {} and {} runs even a complete separation of the two samples gives an exact p-value of {floor:.4}, so few seeds can hide a real difference. \
         The size of the difference is better read from the bootstrap interval of the difference of medians; an interval that includes 0 is consistent with no difference.",
        u.first_count, u.second_count
    );
    let reading = format!("{reading} {}", verdict(u.p_value, first, second));
    out.push_str(&paragraph(&reading, Some("reading")));
    out
}
