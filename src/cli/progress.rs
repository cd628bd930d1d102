//! The search progress bar (on standard error; hidden when it is not a terminal).
//!
//! Colour follows <https://no-color.org>: the bar is coloured only when
//! standard error is a terminal and `NO_COLOR` is unset or empty. Every other
//! line gemmule prints is plain text.

use crate::genome::AnyGenome;
use crate::search::{EvaluationRecord, SearchObserver};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use std::ffi::OsStr;
use std::io::IsTerminal;
use std::time::Instant;

/// The bar without any style: indicatif writes no colour codes for it.
pub const PLAIN_TEMPLATE: &str = "{bar:30} {pos}/{len} evaluations  {msg}  eta {eta}";

/// The bar with a cyan filled part on a blue track.
pub const COLOUR_TEMPLATE: &str = "{bar:30.cyan/blue} {pos}/{len} evaluations  {msg}  eta {eta}";

/// Whether the bar may use colour: `stderr_is_terminal`, and `no_color` (the
/// value of `NO_COLOR`) unset or empty, as no-color.org specifies.
pub fn colour_allowed(no_color: Option<&OsStr>, stderr_is_terminal: bool) -> bool {
    stderr_is_terminal && no_color.is_none_or(OsStr::is_empty)
}

/// The bar template: [`COLOUR_TEMPLATE`] when `colour`, else [`PLAIN_TEMPLATE`].
pub fn bar_template(colour: bool) -> &'static str {
    if colour {
        COLOUR_TEMPLATE
    } else {
        PLAIN_TEMPLATE
    }
}

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
        let terminal = std::io::stderr().is_terminal();
        // Nothing is drawn when standard error is a file or a pipe, so no
        // cursor or colour codes end up in logs.
        let bar = ProgressBar::with_draw_target(
            Some(0),
            if quiet || !terminal {
                ProgressDrawTarget::hidden()
            } else {
                ProgressDrawTarget::stderr()
            },
        );
        let colour = colour_allowed(std::env::var_os("NO_COLOR").as_deref(), terminal);
        if let Ok(style) = ProgressStyle::with_template(bar_template(colour)) {
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

impl SearchObserver<AnyGenome> for ProgressObserver {
    fn on_start(&mut self, already_done: u64, budget: u64) {
        self.first_done = already_done;
        self.bar.set_length(budget);
        self.bar.set_position(already_done);
        self.started = Instant::now();
    }

    fn on_commit(
        &mut self,
        _record: &EvaluationRecord<AnyGenome>,
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

#[cfg(test)]
mod tests {
    use super::*;

    /// The `{key.style}` parts of a template: indicatif colours only those.
    fn styled_keys(template: &str) -> Vec<&str> {
        template
            .split('{')
            .skip(1)
            .filter_map(|part| part.split('}').next())
            .filter(|key| key.contains('.') || key.contains('/'))
            .collect()
    }

    #[test]
    fn no_color_set_and_non_empty_turns_colour_off() {
        // Source: https://no-color.org ("when present and not an empty string").
        assert!(!colour_allowed(Some(OsStr::new("1")), true));
        assert!(!colour_allowed(Some(OsStr::new("false")), true));
        assert!(colour_allowed(Some(OsStr::new("")), true));
        assert!(colour_allowed(None, true));
    }

    #[test]
    fn no_colour_without_a_terminal() {
        // Common practice, no source: no colour codes in pipes and log files.
        assert!(!colour_allowed(None, false));
        assert!(!colour_allowed(Some(OsStr::new("1")), false));
    }

    #[test]
    fn the_plain_template_has_no_style() {
        assert!(styled_keys(bar_template(false)).is_empty());
        assert_eq!(styled_keys(bar_template(true)), vec!["bar:30.cyan/blue"]);
        for template in [PLAIN_TEMPLATE, COLOUR_TEMPLATE] {
            assert!(ProgressStyle::with_template(template).is_ok(), "{template}");
        }
    }
}
