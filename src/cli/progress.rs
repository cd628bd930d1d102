//! The search progress bar (on standard error; hidden when it is not a terminal).

use crate::genome::LayerGenome;
use crate::search::{EvaluationRecord, SearchObserver};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::time::Instant;

/// Draws evaluations done / budget, best score so far, evaluations per minute and ETA.
pub struct ProgressObserver {
    bar: ProgressBar,
    started: Instant,
    first_done: u64,
    warnings: Vec<String>,
}

impl ProgressObserver {
    /// A bar on standard error (`quiet` hides it).
    pub fn new(quiet: bool) -> Self {
        let bar = ProgressBar::with_draw_target(
            Some(0),
            if quiet {
                ProgressDrawTarget::hidden()
            } else {
                ProgressDrawTarget::stderr()
            },
        );
        if let Ok(style) =
            ProgressStyle::with_template("{bar:30} {pos}/{len} evaluations  {msg}  eta {eta}")
        {
            bar.set_style(style.progress_chars("=> "));
        }
        ProgressObserver {
            bar,
            started: Instant::now(),
            first_done: 0,
            warnings: Vec::new(),
        }
    }

    /// Removes the bar and returns the warnings received.
    pub fn finish(self) -> Vec<String> {
        self.bar.finish_and_clear();
        self.warnings
    }
}

impl SearchObserver<LayerGenome> for ProgressObserver {
    fn on_start(&mut self, already_done: u64, budget: u64) {
        self.first_done = already_done;
        self.bar.set_length(budget);
        self.bar.set_position(already_done);
        self.started = Instant::now();
    }

    fn on_commit(
        &mut self,
        _record: &EvaluationRecord<LayerGenome>,
        best: Option<f64>,
        done: u64,
        budget: u64,
    ) {
        self.bar.set_length(budget);
        self.bar.set_position(done);
        let minutes = self.started.elapsed().as_secs_f64() / 60.0;
        let rate = (done - self.first_done) as f64 / minutes.max(1e-9);
        let best = best.map_or("-".to_string(), |b| format!("{b:.4}"));
        self.bar.set_message(format!("best {best}  {rate:.1}/min"));
    }

    fn on_warning(&mut self, message: &str) {
        self.bar
            .suspend(|| eprintln!("gemmule: warning: {message}"));
        self.warnings.push(message.to_string());
    }
}
