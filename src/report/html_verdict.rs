//! The verdict parts of `report.html`: how candidates were scored, the pick
//! and the baselines per run, each final evaluation's per-class results with
//! a shaded confusion matrix, and the cautions that go with any result.

use super::html_page::{escape, paragraph, table};
use super::summary::ReportSummary;
use crate::metrics::ClassReport;
use crate::workflow::FinalReport;

/// "Verdict and baselines": for each run, the verdict lines of
/// [`crate::search::RunVerdict`].
pub fn verdict_section(summary: &ReportSummary) -> String {
    let mut out = paragraph(
        "Every run also scores two baselines on the same validation split or folds as its \
         candidates: the majority class and a linear model (no hidden layer). A search that \
         does not beat the linear model by more than its standard error has not shown that \
         the data needs a neural network.",
        Some("note"),
    );
    for run in &summary.runs {
        out.push_str(&format!("<h3>{}</h3>\n<ul>\n", escape(&run.name)));
        for line in run.verdict.lines() {
            let class = if line.contains("consider the linear model") {
                " class=\"warning\""
            } else {
                ""
            };
            out.push_str(&format!("<li{class}>{}</li>\n", escape(&line)));
        }
        out.push_str("</ul>\n");
    }
    out
}

/// One final evaluation: the pick against the linear baseline in the same
/// test opening, then the pick's confusion matrix and per-class scores.
pub fn final_evaluation(run: &str, report: &FinalReport) -> String {
    let mut out = format!(
        "<h3>{} — opening {} of this test split</h3>\n",
        escape(run),
        report.opening
    );
    if let Some(verdict) = report.verdict() {
        let class = if verdict.contains("consider the linear model") {
            Some("warning")
        } else {
            None
        };
        out.push_str(&paragraph(&verdict, class));
    }
    if let Some(baseline) = &report.baseline {
        let accuracy = |scores: &std::collections::BTreeMap<String, f64>| {
            scores
                .get("accuracy")
                .map_or("–".to_string(), |v| format!("{v:.4}"))
        };
        let interval = |(lo, hi): (f64, f64)| format!("{lo:.4} to {hi:.4}");
        let rows = vec![
            vec![
                format!("pick (evaluation {})", report.index),
                accuracy(&report.test_scores),
                interval(report.test_accuracy_interval),
                report
                    .class_report
                    .as_ref()
                    .map_or("–".into(), |c| format!("{:.4}", c.balanced_accuracy)),
            ],
            vec![
                "linear baseline".to_string(),
                accuracy(&baseline.test_scores),
                interval(baseline.test_accuracy_interval),
                format!("{:.4}", baseline.class_report.balanced_accuracy),
            ],
        ];
        out.push_str(&table(
            &[
                "model",
                "test accuracy",
                "95% Wilson interval",
                "balanced accuracy",
            ],
            &rows,
        ));
    }
    if let Some(scores) = &report.class_report {
        out.push_str(&confusion_matrix(&report.class_names, scores));
        out.push_str(&per_class(report, scores));
    }
    out
}

/// The confusion matrix as a table whose cells are shaded by their share
/// of the row (the true class).
fn confusion_matrix(class_names: &[String], scores: &ClassReport) -> String {
    let name = |class: usize| {
        class_names
            .get(class)
            .cloned()
            .unwrap_or_else(|| class.to_string())
    };
    let mut out = String::from(
        "<p>Confusion matrix on the test rows: rows are the true class, columns the \
         predicted class; the shade of a cell is its share of the row.</p>\n\
         <div class=\"scroll\"><table class=\"confusion\">\n<thead><tr><th>true \\ predicted</th>",
    );
    for class in 0..scores.n_classes {
        out.push_str(&format!("<th>{}</th>", escape(&name(class))));
    }
    out.push_str("</tr></thead>\n<tbody>\n");
    for (class, row) in scores.confusion_matrix.iter().enumerate() {
        let total: u64 = row.iter().sum();
        out.push_str(&format!("<tr><th>{}</th>", escape(&name(class))));
        for (predicted, &count) in row.iter().enumerate() {
            let share = if total == 0 {
                0.0
            } else {
                count as f64 / total as f64
            };
            // Teal for the diagonal (right), amber elsewhere (wrong).
            let (r, g, b) = if predicted == class {
                (11, 110, 110)
            } else {
                (190, 110, 0)
            };
            let ink = if share > 0.55 { "#ffffff" } else { "#1f2430" };
            out.push_str(&format!(
                "<td class=\"num\" style=\"background: rgba({r}, {g}, {b}, {:.2}); color: {ink}\">{count}</td>",
                0.08 + 0.85 * share
            ));
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody></table></div>\n");
    out
}

/// Per-class precision, recall (with its Wilson interval), F1 and support.
fn per_class(report: &FinalReport, scores: &ClassReport) -> String {
    let rows: Vec<Vec<String>> = scores
        .per_class
        .iter()
        .enumerate()
        .map(|(class, per)| {
            vec![
                report
                    .class_names
                    .get(class)
                    .cloned()
                    .unwrap_or_else(|| class.to_string()),
                format!("{:.4}", per.precision),
                format!("{:.4}", per.recall),
                report
                    .recall_intervals
                    .get(class)
                    .map_or("–".into(), |(lo, hi)| format!("{lo:.2} to {hi:.2}")),
                format!("{:.4}", per.f1),
                per.support.to_string(),
            ]
        })
        .collect();
    let mut out = table(
        &[
            "class",
            "precision",
            "recall",
            "recall, 95% Wilson interval",
            "F1",
            "support",
        ],
        &rows,
    );
    let auc = scores
        .roc_auc
        .map_or("not defined".to_string(), |v| format!("{v:.4}"));
    out.push_str(&paragraph(
        &format!(
            "balanced accuracy {:.4}, macro F1 {:.4}, log loss {:.4}, ROC AUC {auc}",
            scores.balanced_accuracy, scores.macro_f1, scores.log_loss
        ),
        None,
    ));
    out
}

/// "Caution": what no number in this report shows.
pub fn caution_section() -> String {
    [
        "Validation scores are not deployment evidence: the search chose the best of many \
         candidates on the same validation rows or folds, so the winner's validation score is \
         optimistic. The test score is the honest estimate, and only at the first opening of \
         its test split.",
        "Small data overfits, and a few test rows move accuracy in large steps: read the \
         Wilson intervals, not the point values.",
        "Check that the data the model will see comes from the same domain as these rows, and \
         check its errors for fairness across the groups of people or things it affects.",
        "Where decisions affect people, the rules and review practices of that domain come \
         first; a score here is not an approval.",
    ]
    .iter()
    .map(|text| paragraph(text, Some("note")))
    .collect()
}
