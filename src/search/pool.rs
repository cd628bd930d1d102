//! Worker threads that evaluate candidates, one at a time each.
//!
//! Candidates wait in a shared first-in-first-out queue, so workers start
//! them in index order. Queued candidates that no worker has started can be
//! taken back ([`WorkerPool::cancel_queued`]), which is how a session that
//! runs out of time avoids training candidates it will not commit.
//!
//! Workers are detached: when the pool is dropped, the queue is emptied and
//! closed, each worker finishes the evaluation it is running (its result is
//! discarded) and exits.

use super::evaluation::{EvalStatus, Evaluation, Evaluator};
use crate::{Error, Result};
use std::any::Any;
use std::collections::{BTreeMap, VecDeque};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::mpsc::{channel, Receiver, RecvTimeoutError, Sender};
use std::sync::{Arc, Condvar, Mutex, MutexGuard};
use std::time::{Duration, Instant};

/// Stack size of a worker thread (the main thread's usual size; deep
/// networks recurse more than the 2 MiB default of spawned threads allows).
const WORKER_STACK_BYTES: usize = 8 << 20;

/// A candidate to evaluate.
struct Task<G> {
    index: u64,
    genome: G,
    seed: u64,
    /// The strategy's bar for this candidate ([`Evaluator::evaluate_with_bar`]).
    bar: Option<f64>,
}

/// A finished evaluation.
pub(crate) struct Finished {
    pub index: u64,
    pub evaluation: Evaluation,
    pub seconds: f64,
    pub finished_unix: f64,
}

/// The tasks no worker has started yet, and whether the pool is gone.
struct QueueState<G> {
    tasks: VecDeque<Task<G>>,
    closed: bool,
}

/// The queue shared by the pool and its workers.
struct TaskQueue<G> {
    state: Mutex<QueueState<G>>,
    ready: Condvar,
}

impl<G> TaskQueue<G> {
    /// The queue state; a worker that panicked while holding the lock
    /// cannot have left it half-changed (every change is one push, pop or clear).
    fn lock(&self) -> MutexGuard<'_, QueueState<G>> {
        self.state
            .lock()
            .unwrap_or_else(|poisoned| poisoned.into_inner())
    }

    /// The next task, waiting while the queue is empty; `None` once closed.
    fn next(&self) -> Option<Task<G>> {
        let mut state = self.lock();
        loop {
            if state.closed {
                return None;
            }
            if let Some(task) = state.tasks.pop_front() {
                return Some(task);
            }
            state = self
                .ready
                .wait(state)
                .unwrap_or_else(|poisoned| poisoned.into_inner());
        }
    }
}

/// The pool: a task queue shared by the workers, and their results.
pub(crate) struct WorkerPool<G> {
    queue: Arc<TaskQueue<G>>,
    results: Receiver<Finished>,
}

impl<G: Send + 'static> WorkerPool<G> {
    /// Starts `workers` threads evaluating with `evaluator`.
    pub fn start<E: Evaluator<G> + 'static>(evaluator: Arc<E>, workers: usize) -> Result<Self> {
        let queue = Arc::new(TaskQueue {
            state: Mutex::new(QueueState {
                tasks: VecDeque::new(),
                closed: false,
            }),
            ready: Condvar::new(),
        });
        let (report, results) = channel();
        let pool = WorkerPool { queue, results };
        for number in 0..workers {
            let (evaluator, queue, report) =
                (evaluator.clone(), pool.queue.clone(), report.clone());
            std::thread::Builder::new()
                .name(format!("gemmule-eval-{number}"))
                .stack_size(WORKER_STACK_BYTES)
                .spawn(move || work(evaluator.as_ref(), &queue, &report))
                .map_err(|e| Error::internal(format!("cannot start a worker thread: {e}")))?;
        }
        Ok(pool)
    }

    /// Queues a candidate with the strategy's bar for it; workers start
    /// queued candidates in the order they were queued.
    pub fn dispatch(&self, index: u64, genome: G, seed: u64, bar: Option<f64>) -> Result<()> {
        let mut state = self.queue.lock();
        if state.closed {
            return Err(Error::internal("the evaluation workers are gone"));
        }
        state.tasks.push_back(Task {
            index,
            genome,
            seed,
            bar,
        });
        drop(state);
        self.queue.ready.notify_one();
        Ok(())
    }

    /// Takes back every queued candidate no worker has started, returning
    /// their indices in queue order; their results will never arrive.
    pub fn cancel_queued(&self) -> Vec<u64> {
        let mut state = self.queue.lock();
        state.tasks.drain(..).map(|task| task.index).collect()
    }

    /// Waits up to `timeout` for a result and files it into `finished`.
    pub fn wait(&self, timeout: Duration, finished: &mut BTreeMap<u64, Finished>) -> Result<()> {
        match self.results.recv_timeout(timeout) {
            Ok(result) => {
                finished.insert(result.index, result);
                Ok(())
            }
            Err(RecvTimeoutError::Timeout) => Ok(()),
            Err(RecvTimeoutError::Disconnected) => {
                Err(Error::internal("the evaluation workers are gone"))
            }
        }
    }

    /// Files every result already delivered into `finished`, without waiting.
    pub fn collect_ready(&self, finished: &mut BTreeMap<u64, Finished>) {
        while let Ok(result) = self.results.try_recv() {
            finished.insert(result.index, result);
        }
    }
}

impl<G> Drop for WorkerPool<G> {
    /// Empties and closes the queue, so idle workers exit now and busy ones
    /// after their current evaluation, instead of training abandoned candidates.
    fn drop(&mut self) {
        let mut state = self.queue.lock();
        state.tasks.clear();
        state.closed = true;
        drop(state);
        self.queue.ready.notify_all();
    }
}

fn work<G, E: Evaluator<G> + ?Sized>(
    evaluator: &E,
    queue: &TaskQueue<G>,
    report: &Sender<Finished>,
) {
    while let Some(task) = queue.next() {
        let started = Instant::now();
        let outcome = catch_unwind(AssertUnwindSafe(|| {
            evaluator.evaluate_with_bar(&task.genome, task.seed, task.bar)
        }));
        let evaluation = outcome.unwrap_or_else(|payload| failed(payload.as_ref()));
        let finished = Finished {
            index: task.index,
            evaluation,
            seconds: started.elapsed().as_secs_f64(),
            finished_unix: super::timings::unix_now(),
        };
        if report.send(finished).is_err() {
            return;
        }
    }
}

/// The evaluation recorded for a candidate whose evaluator panicked.
fn failed(payload: &(dyn Any + Send)) -> Evaluation {
    let text = payload
        .downcast_ref::<&str>()
        .map(|text| text.to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "a panic without a message".to_string());
    Evaluation {
        status: EvalStatus::Failed,
        objective: None,
        scores: BTreeMap::new(),
        params: None,
        madds: None,
        epochs: 0,
        best_epoch: 0,
        message: Some(format!("the evaluator panicked: {text}")),
        folds: None,
    }
}

#[cfg(test)]
mod tests {
    //! Queue behaviour (common practice for a work queue, no outside source):
    //! FIFO start order, taking back unstarted candidates, quiet shutdown.

    use super::*;
    use std::sync::mpsc::sync_channel;

    /// Evaluates genome `g` by waiting for one message on `gate` first when
    /// `g` is 0, so the single worker stays busy with candidate 0 until the
    /// test lets it go.
    struct Gated {
        gate: Mutex<Receiver<()>>,
    }

    impl Evaluator<u32> for Gated {
        fn evaluate(&self, genome: &u32, _seed: u64) -> Evaluation {
            if *genome == 0 {
                let gate = self.gate.lock().unwrap_or_else(|p| p.into_inner());
                let _ = gate.recv();
            }
            Evaluation {
                status: EvalStatus::Completed,
                objective: Some(f64::from(*genome)),
                scores: BTreeMap::new(),
                params: None,
                madds: None,
                epochs: 1,
                best_epoch: 1,
                message: None,
                folds: None,
            }
        }
    }

    fn wait_for(pool: &WorkerPool<u32>, index: u64) -> Finished {
        let mut finished = BTreeMap::new();
        let started = Instant::now();
        while !finished.contains_key(&index) {
            assert!(
                started.elapsed() < Duration::from_secs(20),
                "no result {index}"
            );
            pool.wait(Duration::from_millis(20), &mut finished)
                .expect("workers alive");
        }
        finished.remove(&index).expect("present")
    }

    #[test]
    fn queued_candidates_can_be_taken_back_before_they_start() {
        let (open, gate) = sync_channel(1);
        let evaluator = Arc::new(Gated {
            gate: Mutex::new(gate),
        });
        let pool = WorkerPool::start(evaluator, 1).expect("pool");
        pool.dispatch(0, 0, 0, None).expect("dispatch");
        // The worker takes candidate 0 and blocks; wait until the queue is empty.
        let started = Instant::now();
        while !pool.queue.lock().tasks.is_empty() {
            assert!(started.elapsed() < Duration::from_secs(20));
            std::thread::yield_now();
        }
        pool.dispatch(1, 1, 0, None).expect("dispatch");
        pool.dispatch(2, 2, 0, None).expect("dispatch");
        assert_eq!(pool.cancel_queued(), vec![1, 2]);
        open.send(()).expect("release candidate 0");
        assert_eq!(wait_for(&pool, 0).evaluation.objective, Some(0.0));
        // Later candidates still run, in order, after a cancellation.
        pool.dispatch(3, 3, 0, None).expect("dispatch");
        assert_eq!(wait_for(&pool, 3).evaluation.objective, Some(3.0));
        let mut late = BTreeMap::new();
        pool.collect_ready(&mut late);
        assert!(late.is_empty(), "cancelled candidates never report");
    }

    #[test]
    fn a_dropped_pool_closes_its_queue() {
        let (_open, gate) = sync_channel(1);
        let queue = {
            let evaluator = Arc::new(Gated {
                gate: Mutex::new(gate),
            });
            let pool = WorkerPool::<u32>::start(evaluator, 2).expect("pool");
            pool.dispatch(5, 5, 0, None).expect("dispatch");
            pool.queue.clone()
        };
        let state = queue.lock();
        assert!(state.closed && state.tasks.is_empty());
    }
}
