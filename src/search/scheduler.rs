//! The deterministic parallel scheduler.
//!
//! Proposals are made in index order; proposal k is made only after the
//! results `0..=k - lag` were committed (in index order) and before any
//! later one is, so the strategy's view never depends on which worker
//! finishes first. The lag ([`proposal_lag`]) is 1 with one job (a
//! sequential search) and 3 × jobs with more: up to `lag` candidates are in
//! flight, `jobs` of them training and the rest queued, so a worker that
//! finishes early starts the next queued candidate instead of waiting for a
//! slower one to be committed. Results are committed strictly in index
//! order; early finishers wait in a buffer. When a time budget runs out,
//! queued candidates no worker has started are dropped (they were never
//! journaled). On resume, the first `done` proposals are re-derived and
//! checked against the journal instead of being evaluated, and their
//! journaled results are observed in the same order.

use super::evaluation::Evaluator;
use super::journal::Journal;
use super::plan::SearchPlan;
use super::pool::{Finished, WorkerPool};
use super::records::{storable, EvaluationRecord};
use super::run::{SearchContext, SearchEnding};
use super::seeds::{evaluation_seed, proposal_rng};
use super::strategy::{compare_objectives, Proposal};
use super::timings::{TimingEntry, TimingLog};
use crate::genome::SearchSpace;
use crate::{Error, Result};
use std::cmp::Ordering as Rank;
use std::collections::BTreeMap;
use std::sync::atomic::Ordering;
use std::time::{Duration, Instant};

/// How long the scheduler waits for a result before rechecking the stop flag.
const POLL: Duration = Duration::from_millis(20);

/// Candidates in flight per worker when there are several workers (see [`proposal_lag`]).
const IN_FLIGHT_PER_JOB: u64 = 3;

/// The information lag of a run with `jobs` workers: proposal k sees the
/// results `0..=k - lag`. One job gives 1 (each proposal sees every earlier
/// result). With J ≥ 2 jobs it is 3·J. A lag of J made a worker that
/// finished early wait until the slower candidate before it was committed;
/// with the spread of candidate times in a digits search (0.02–0.85 s), that
/// idled workers for about a fifth of the run at J = 2 (parallel efficiency
/// 0.78), while 3·J keeps them busy (≈ 0.98 in a simulation of the measured
/// times; benches/search_throughput.rs measures it).
pub(crate) fn proposal_lag(jobs: usize) -> u64 {
    let jobs = jobs.max(1) as u64;
    if jobs == 1 {
        1
    } else {
        IN_FLIGHT_PER_JOB.saturating_mul(jobs)
    }
}

/// A proposal that was made and not yet committed.
struct Candidate<G> {
    proposal: Proposal<G>,
    id: String,
    seed: u64,
}

/// The state of one search session.
pub(crate) struct Driver<'a, 'c, S: SearchSpace, E> {
    plan: &'a SearchPlan,
    context: SearchContext<'c, S, E>,
    journal: Journal,
    timings: TimingLog,
    /// Records already in the journal, re-derived instead of evaluated.
    replay: Vec<EvaluationRecord<S::Genome>>,
    /// The gemmule version that wrote the journal, for error messages.
    written_by: String,
    pool: WorkerPool<S::Genome>,
    ids: Vec<String>,
    in_flight: BTreeMap<u64, Candidate<S::Genome>>,
    finished: BTreeMap<u64, Finished>,
    next_proposal: u64,
    next_commit: u64,
    best: Option<(u64, f64)>,
    deadline: Option<Instant>,
    /// Proposal k waits for the results `0..=k - lag`.
    lag: u64,
}

/// Where a session writes and what it continues from.
pub(crate) struct SessionFiles<G> {
    pub journal: Journal,
    pub timings: TimingLog,
    /// Records already in the journal (empty for a new run).
    pub replay: Vec<EvaluationRecord<G>>,
    /// The gemmule version that wrote the journal.
    pub written_by: String,
    /// The run's information lag ([`RunHeader::lag`](super::RunHeader::lag)).
    pub lag: u64,
}

impl<'a, 'c, S, E> Driver<'a, 'c, S, E>
where
    S: SearchSpace,
    E: Evaluator<S::Genome> + 'static,
{
    /// Prepares a session: starts the workers and the clock.
    pub fn new(
        plan: &'a SearchPlan,
        context: SearchContext<'c, S, E>,
        files: SessionFiles<S::Genome>,
    ) -> Result<Self> {
        // Never more workers than evaluations left to run; `jobs` alone fixes the lag.
        let remaining = plan
            .budget
            .evaluations
            .saturating_sub(files.replay.len() as u64);
        let workers = usize::try_from(remaining).map_or(plan.jobs, |left| plan.jobs.min(left));
        let pool = WorkerPool::start(context.evaluator.clone(), workers.max(1))?;
        let deadline = plan
            .budget
            .seconds
            .and_then(|seconds| Duration::try_from_secs_f64(seconds).ok())
            .and_then(|limit| Instant::now().checked_add(limit));
        Ok(Driver {
            plan,
            context,
            journal: files.journal,
            timings: files.timings,
            replay: files.replay,
            written_by: files.written_by,
            pool,
            ids: Vec::new(),
            in_flight: BTreeMap::new(),
            finished: BTreeMap::new(),
            next_proposal: 0,
            next_commit: 0,
            best: None,
            deadline,
            lag: files.lag.max(1),
        })
    }

    /// Evaluations in the journal, of them new in this session, and the best so far.
    pub fn tally(&self) -> (u64, u64, Option<(u64, f64)>) {
        let before = self.replay.len() as u64;
        (
            self.next_commit,
            self.next_commit.saturating_sub(before),
            self.best,
        )
    }

    fn limit(&self) -> u64 {
        self.plan.budget.evaluations.max(self.replay.len() as u64)
    }

    fn stopped(&self) -> bool {
        self.context.stop.load(Ordering::SeqCst)
    }

    fn ending(&self) -> SearchEnding {
        if self.next_commit >= self.limit() {
            SearchEnding::BudgetSpent
        } else if self.stopped() {
            SearchEnding::Stopped
        } else {
            SearchEnding::TimeUp
        }
    }

    /// Runs the session until the budget is spent, time is up or the stop flag is set.
    pub fn run(&mut self) -> Result<SearchEnding> {
        loop {
            if self.stopped() {
                return self.wind_down();
            }
            self.fill_window()?;
            if self.next_commit == self.next_proposal {
                return Ok(self.ending());
            }
            if self.next_commit < self.replay.len() as u64 {
                self.commit_replayed()?;
            } else if let Some(result) = self.finished.remove(&self.next_commit) {
                self.commit_live(result)?;
            } else {
                self.pool.wait(POLL, &mut self.finished)?;
            }
        }
    }

    /// After a stop: commits results that are already in, abandons the rest.
    fn wind_down(&mut self) -> Result<SearchEnding> {
        if self.next_commit >= self.replay.len() as u64 {
            self.pool.collect_ready(&mut self.finished);
            while let Some(result) = self.finished.remove(&self.next_commit) {
                self.commit_live(result)?;
            }
        }
        Ok(self.ending())
    }

    /// Makes every proposal the committed results allow; once the time
    /// budget is spent, takes back the queued candidates no worker started.
    fn fill_window(&mut self) -> Result<()> {
        while self.next_proposal < self.limit()
            && self.next_proposal < self.next_commit + self.lag
            && self.may_propose()
        {
            self.propose_next()?;
        }
        if self.time_up() && self.next_proposal > self.replay.len() as u64 {
            self.drop_queued();
        }
        Ok(())
    }

    /// Forgets the proposals whose candidates are still queued; they were
    /// never journaled, so a resumed run proposes them again identically.
    fn drop_queued(&mut self) {
        let cancelled = self.pool.cancel_queued();
        let Some(&first) = cancelled.iter().min() else {
            return;
        };
        for index in &cancelled {
            self.in_flight.remove(index);
        }
        self.next_proposal = first;
        self.ids
            .truncate(usize::try_from(first).unwrap_or(usize::MAX));
    }

    fn time_up(&self) -> bool {
        self.deadline
            .is_some_and(|deadline| Instant::now() >= deadline)
    }

    fn may_propose(&self) -> bool {
        if self.next_proposal < self.replay.len() as u64 {
            return true;
        }
        !self.stopped() && !self.time_up()
    }

    fn propose_next(&mut self) -> Result<()> {
        let index = self.next_proposal;
        let mut rng = proposal_rng(self.plan.seed, index);
        let proposal = self.context.strategy.propose(index, &mut rng);
        let bar = self.context.strategy.cut_bar();
        let seed = evaluation_seed(self.plan.seed, index);
        let name = self.context.strategy.name();
        if proposal.parent.is_some_and(|parent| parent >= index) {
            return Err(Error::internal(format!(
                "strategy {name} gave proposal {index} a parent that was not proposed before it"
            )));
        }
        self.context.space.validate(&proposal.genome).map_err(|e| {
            Error::internal(format!(
                "strategy {name} proposed a genome outside the space at {index}: {e}"
            ))
        })?;
        let id = self.context.space.genome_id(&proposal.genome);
        match self.replay.get(index as usize) {
            Some(record) => check_replay(record, &proposal, seed, &self.written_by)?,
            None => self
                .pool
                .dispatch(index, proposal.genome.clone(), seed, bar)?,
        }
        self.ids.push(id.clone());
        self.in_flight
            .insert(index, Candidate { proposal, id, seed });
        self.next_proposal += 1;
        Ok(())
    }

    fn take_candidate(&mut self, index: u64) -> Result<Candidate<S::Genome>> {
        self.in_flight
            .remove(&index)
            .ok_or_else(|| Error::internal(format!("no proposal {index} to commit")))
    }

    fn note_best(&mut self, index: u64, objective: Option<f64>) {
        let current = self.best.map(|(_, value)| value);
        if let Some(value) = objective {
            if compare_objectives(Some(value), current) == Rank::Greater {
                self.best = Some((index, value));
            }
        }
    }

    fn commit_replayed(&mut self) -> Result<()> {
        let index = self.next_commit;
        let candidate = self.take_candidate(index)?;
        let (evaluation, objective) = match self.replay.get(index as usize) {
            Some(record) => (record.evaluation(), record.objective),
            None => return Err(Error::internal(format!("no journal record {index}"))),
        };
        let genome = &candidate.proposal.genome;
        self.context.strategy.observe(index, genome, &evaluation);
        self.note_best(index, objective);
        self.next_commit += 1;
        Ok(())
    }

    fn commit_live(&mut self, result: Finished) -> Result<()> {
        let index = self.next_commit;
        let candidate = self.take_candidate(index)?;
        let evaluation = storable(result.evaluation);
        let parent_id = candidate
            .proposal
            .parent
            .and_then(|parent| self.ids.get(parent as usize).cloned());
        let record = EvaluationRecord {
            index,
            id: candidate.id,
            genome: candidate.proposal.genome,
            parent: candidate.proposal.parent,
            parent_id,
            mutation: candidate.proposal.mutation,
            seed: candidate.seed,
            status: evaluation.status,
            objective: evaluation.objective,
            scores: evaluation.scores.clone(),
            params: evaluation.params,
            madds: evaluation.madds,
            epochs: evaluation.epochs,
            best_epoch: evaluation.best_epoch,
            message: evaluation.message.clone(),
            folds: evaluation.folds.clone(),
        };
        self.context
            .strategy
            .observe(index, &record.genome, &evaluation);
        self.note_best(index, record.objective);
        self.next_commit += 1;
        // Queue what this result lets the strategy propose before the
        // journal write (which syncs to disk), so no worker waits for it.
        self.fill_window()?;
        self.journal.append_evaluation(&record)?;
        self.timings.append(&TimingEntry::Timing {
            index,
            seconds: result.seconds,
            finished_unix: result.finished_unix,
        })?;
        let best = self.best.map(|(_, value)| value);
        let budget = self.plan.budget.evaluations;
        self.context
            .observer
            .on_commit(&record, best, self.next_commit, budget);
        Ok(())
    }
}

/// Checks that a re-derived proposal equals what the journal recorded.
fn check_replay<G: PartialEq>(
    record: &EvaluationRecord<G>,
    proposal: &Proposal<G>,
    seed: u64,
    written_by: &str,
) -> Result<()> {
    let differing = [
        ("genome", record.genome != proposal.genome),
        ("parent", record.parent != proposal.parent),
        ("mutation", record.mutation != proposal.mutation),
        ("seed", record.seed != seed),
    ];
    let names: Vec<&str> = differing
        .iter()
        .filter(|(_, differs)| *differs)
        .map(|(name, _)| *name)
        .collect();
    if names.is_empty() {
        return Ok(());
    }
    Err(Error::internal(format!(
        "resuming: proposal {} re-derived with a different {} than the journal records; \
         the search is not deterministic (the journal was written by gemmule {written_by})",
        record.index,
        names.join(", ")
    )))
}

#[cfg(test)]
mod tests {
    use super::proposal_lag;

    #[test]
    fn one_job_is_sequential_and_more_jobs_keep_three_per_worker_in_flight() {
        // The rule documented in docs/journal.md ("Parallel runs").
        assert_eq!(proposal_lag(1), 1);
        assert_eq!(proposal_lag(2), 6);
        assert_eq!(proposal_lag(8), 24);
        assert_eq!(
            proposal_lag(0),
            1,
            "0 jobs is refused earlier; never a lag of 0"
        );
    }
}
