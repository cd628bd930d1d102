//! Time facts of a run from its `timings.jsonl`: CPU seconds spent on
//! evaluations and the best-so-far objective against elapsed search time.
//!
//! Elapsed search time counts only the time sessions were running: an
//! evaluation's time is when it finished, measured from the start of its
//! session, plus the spans of the earlier sessions (from their start to their
//! last finished evaluation). Pauses between a stop and a resume do not
//! count. Evaluations without a timing line (the log is best effort) are left
//! out of the time curve; when an index was timed twice, the last line wins.

use crate::search::{compare_objectives, EvaluationRecord, TimingEntry};
use serde_json::Value;
use std::collections::BTreeMap;

/// Sum of the seconds of every timing line (training time summed over candidates).
pub fn cpu_seconds(timings: &[TimingEntry]) -> f64 {
    timings
        .iter()
        .map(|entry| match entry {
            TimingEntry::Timing { seconds, .. } if seconds.is_finite() => *seconds,
            _ => 0.0,
        })
        .sum()
}

/// Seconds of each timed evaluation, by journal index (the last line per index).
pub fn seconds_by_index(timings: &[TimingEntry]) -> BTreeMap<u64, f64> {
    timings
        .iter()
        .filter_map(|entry| match entry {
            TimingEntry::Timing { index, seconds, .. } => Some((*index, *seconds)),
            TimingEntry::Session { .. } => None,
        })
        .collect()
}

/// Elapsed search seconds at which each timed evaluation finished, by index
/// (see the module docs).
pub fn finish_times(timings: &[TimingEntry]) -> BTreeMap<u64, f64> {
    let mut finished = BTreeMap::new();
    let mut earlier_sessions = 0.0;
    let mut session_start: Option<f64> = None;
    let mut session_last = 0.0f64;
    for entry in timings {
        match entry {
            TimingEntry::Session { started_unix, .. } if started_unix.is_finite() => {
                if let Some(start) = session_start {
                    earlier_sessions += (session_last - start).max(0.0);
                }
                session_start = Some(*started_unix);
                session_last = *started_unix;
            }
            TimingEntry::Session { .. } => {}
            TimingEntry::Timing {
                index,
                seconds,
                finished_unix,
            } if finished_unix.is_finite() && seconds.is_finite() => {
                let start = *session_start.get_or_insert(finished_unix - seconds.max(0.0));
                session_last = session_last.max(*finished_unix);
                let elapsed = earlier_sessions + (finished_unix - start).max(0.0);
                finished.insert(*index, elapsed);
            }
            TimingEntry::Timing { .. } => {}
        }
    }
    finished
}

/// The best-so-far objective against elapsed search seconds: one point per
/// timed evaluation that raised the best, in time order.
pub fn best_over_time(
    records: &[EvaluationRecord<Value>],
    timings: &[TimingEntry],
) -> Vec<(f64, f64)> {
    let finished = finish_times(timings);
    let mut timed: Vec<(f64, u64, Option<f64>)> = records
        .iter()
        .filter_map(|r| finished.get(&r.index).map(|&t| (t, r.index, r.objective)))
        .collect();
    timed.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    let mut best: Option<f64> = None;
    let mut points = Vec::new();
    for (time, _, objective) in timed {
        if compare_objectives(objective, best).is_gt() {
            best = objective;
            if let Some(value) = best {
                points.push((time, value));
            }
        }
    }
    points
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::search::Budget;

    fn session(start: f64) -> TimingEntry {
        TimingEntry::Session {
            started_unix: start,
            evaluations_before: 0,
            budget: Budget::evaluations(3),
            tool_version: "test".to_string(),
        }
    }

    fn timing(index: u64, seconds: f64, finished_unix: f64) -> TimingEntry {
        TimingEntry::Timing {
            index,
            seconds,
            finished_unix,
        }
    }

    #[test]
    fn pauses_between_sessions_do_not_count() {
        let log = [
            session(100.0),
            timing(0, 1.0, 101.0),
            timing(1, 2.0, 104.0),
            session(500.0),
            timing(2, 1.5, 502.0),
        ];
        let times = finish_times(&log);
        assert_eq!(times.get(&0), Some(&1.0));
        assert_eq!(times.get(&1), Some(&4.0));
        assert_eq!(times.get(&2), Some(&6.0));
        assert_eq!(cpu_seconds(&log), 4.5);
    }
}
