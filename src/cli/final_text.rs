//! The text of a final evaluation (`finalize`, and `show` of a finalized
//! run): the pick, its validation estimate, the one test opening with the
//! pick and the linear baseline side by side, per-class results and the
//! cautions that go with a test score.

use crate::metrics::ClassReport;
use crate::workflow::FinalReport;
use std::fmt::Write;

/// The whole text, ending with a newline.
pub fn final_report_text(report: &FinalReport) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "chosen: evaluation {} (genome {}), {}",
        report.index, report.id, report.selection
    );
    let _ = match report.validation_standard_error {
        Some(se) => writeln!(
            out,
            "validation objective: {:.4} ± {se:.4} (k-fold mean ± standard error)",
            report.validation_objective
        ),
        None => writeln!(
            out,
            "validation objective: {:.4}",
            report.validation_objective
        ),
    };
    out.push_str(
        &report
            .genome
            .text(Some(report.n_inputs), Some(report.n_classes), false),
    );
    let _ = writeln!(
        out,
        "retrained on {} rows (train+validation) for {} epochs, seed {}",
        report.trained_rows, report.epochs, report.seed
    );
    out.push_str(&opening_line(report));
    let _ = writeln!(
        out,
        "test accuracy: {}, {} rows)",
        accuracy_with_interval(&report.test_scores, report.test_accuracy_interval)
            .trim_end_matches(')'),
        report.test_rows
    );
    for (name, value) in &report.test_scores {
        if name != "accuracy" {
            let _ = writeln!(out, "test {}: {value:.4}", name.replace('_', " "));
        }
    }
    if let Some(class_report) = &report.class_report {
        out.push_str(&class_table(report, class_report));
        if let Some(auc) = class_report.roc_auc {
            let what = match class_report.positive_class {
                Some(class) => format!(
                    "of class {}",
                    report.class_names.get(class).map_or("1", String::as_str)
                ),
                None => "macro one-vs-rest".to_string(),
            };
            let _ = writeln!(out, "test ROC AUC ({what}): {auc:.4}");
        }
    }
    if let Some(baseline) = &report.baseline {
        let _ = writeln!(
            out,
            "linear baseline (no hidden layer, {} epochs): test accuracy {}, balanced accuracy \
             {:.4}",
            baseline.epochs,
            accuracy_with_interval(&baseline.test_scores, baseline.test_accuracy_interval),
            baseline.class_report.balanced_accuracy
        );
    }
    if let Some(m) = &report.mcnemar {
        let _ = writeln!(
            out,
            "rows only the pick got right: {}, only the baseline: {}; exact McNemar p = {:.4}",
            m.pick_only_right, m.baseline_only_right, m.p_value
        );
    }
    if let Some(verdict) = report.verdict() {
        let _ = writeln!(out, "verdict: {verdict}");
    }
    if let Some(file) = &report.predictions_file {
        let _ = writeln!(
            out,
            "test predictions written to {file} (in the run folder)"
        );
    }
    out.push_str(
        "caution: a test score is an estimate for data like this test split only; small test \
         splits move in large steps, and no score here says the model is fair to every group \
         or fit for another domain\n",
    );
    out
}

/// `0.9630 (95% Wilson interval 0.8172 to 0.9934)`: a test accuracy and its interval.
fn accuracy_with_interval(
    scores: &std::collections::BTreeMap<String, f64>,
    (lo, hi): (f64, f64),
) -> String {
    let accuracy = scores.get("accuracy").copied().unwrap_or(f64::NAN);
    format!("{accuracy:.4} (95% Wilson interval {lo:.4} to {hi:.4})")
}

/// Which opening of the test split this was, and what that means.
pub fn opening_line(report: &FinalReport) -> String {
    let ledger = report
        .ledger
        .as_deref()
        .map_or(String::new(), |path| format!(" (recorded in {path})"));
    if report.opening <= 1 {
        format!(
            "test split opened: opening 1 of this test split by any run{ledger}: an unbiased \
             estimate\n"
        )
    } else {
        format!(
            "test split opened: opening {} of this test split{ledger}; only the first opening \
             is an unbiased estimate, later ones were chosen knowing earlier test scores\n",
            report.opening
        )
    }
}

/// The confusion matrix and per-class precision, recall, F1 and support.
fn class_table(report: &FinalReport, scores: &ClassReport) -> String {
    let name = |class: usize| {
        report
            .class_names
            .get(class)
            .cloned()
            .unwrap_or_else(|| class.to_string())
    };
    let width = (0..scores.n_classes)
        .map(|c| name(c).chars().count())
        .max()
        .unwrap_or(5)
        .clamp(5, 24);
    let cell = width.min(10);
    let mut out = String::new();
    let _ = writeln!(
        out,
        "per class on the test rows (rows = true class, columns = predicted):"
    );
    let _ = write!(out, "  {:width$}", "");
    for class in 0..scores.n_classes {
        let _ = write!(out, " {:>cell$}", truncate(&name(class), cell));
    }
    let _ = writeln!(out, "   precision  recall (95% Wilson)      F1  support");
    for (class, row) in scores.confusion_matrix.iter().enumerate() {
        let _ = write!(out, "  {:width$}", truncate(&name(class), width));
        for count in row {
            let _ = write!(out, " {count:>cell$}");
        }
        let per = &scores.per_class[class];
        let interval = report
            .recall_intervals
            .get(class)
            .map_or(String::new(), |(lo, hi)| format!("({lo:.2} to {hi:.2})"));
        let _ = writeln!(
            out,
            "   {:>9.4}  {:.4} {interval:<14} {:.4} {:>8}",
            per.precision, per.recall, per.f1, per.support
        );
    }
    let _ = writeln!(
        out,
        "  balanced accuracy {:.4}, macro F1 {:.4}, log loss {:.4}",
        scores.balanced_accuracy, scores.macro_f1, scores.log_loss
    );
    out
}

fn truncate(text: &str, width: usize) -> String {
    text.chars().take(width).collect()
}
