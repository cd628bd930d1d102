//! Worker threads that evaluate candidates, one at a time each.
//!
//! Workers are detached: when a search stops early the pool is dropped, the
//! workers finish the evaluation they are running, find the task queue
//! closed and exit; their results are discarded.

use super::evaluation::{EvalStatus, Evaluation, Evaluator};
use crate::{Error, Result};
use std::any::Any;
use std::collections::BTreeMap;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::mpsc::{channel, Receiver, RecvTimeoutError, Sender};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

/// Stack size of a worker thread (the main thread's usual size; deep
/// networks recurse more than the 2 MiB default of spawned threads allows).
const WORKER_STACK_BYTES: usize = 8 << 20;

/// A candidate to evaluate.
struct Task<G> {
    index: u64,
    genome: G,
    seed: u64,
}

/// A finished evaluation.
pub(crate) struct Finished {
    pub index: u64,
    pub evaluation: Evaluation,
    pub seconds: f64,
    pub finished_unix: f64,
}

/// The pool: a task queue shared by the workers, and their results.
pub(crate) struct WorkerPool<G> {
    tasks: Sender<Task<G>>,
    results: Receiver<Finished>,
}

impl<G: Send + 'static> WorkerPool<G> {
    /// Starts `workers` threads evaluating with `evaluator`.
    pub fn start<E: Evaluator<G> + 'static>(evaluator: Arc<E>, workers: usize) -> Result<Self> {
        let (tasks, queue) = channel::<Task<G>>();
        let (report, results) = channel();
        let queue = Arc::new(Mutex::new(queue));
        for number in 0..workers {
            let (evaluator, queue, report) = (evaluator.clone(), queue.clone(), report.clone());
            std::thread::Builder::new()
                .name(format!("gemmule-eval-{number}"))
                .stack_size(WORKER_STACK_BYTES)
                .spawn(move || work(evaluator.as_ref(), &queue, &report))
                .map_err(|e| Error::internal(format!("cannot start a worker thread: {e}")))?;
        }
        Ok(WorkerPool { tasks, results })
    }

    /// Queues a candidate.
    pub fn dispatch(&self, index: u64, genome: G, seed: u64) -> Result<()> {
        self.tasks
            .send(Task {
                index,
                genome,
                seed,
            })
            .map_err(|_| Error::internal("the evaluation workers are gone"))
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

fn work<G, E: Evaluator<G> + ?Sized>(
    evaluator: &E,
    queue: &Mutex<Receiver<Task<G>>>,
    report: &Sender<Finished>,
) {
    loop {
        let task = {
            let receiver = queue
                .lock()
                .unwrap_or_else(|poisoned| poisoned.into_inner());
            receiver.recv()
        };
        let Ok(task) = task else { return };
        let started = Instant::now();
        let outcome = catch_unwind(AssertUnwindSafe(|| {
            evaluator.evaluate(&task.genome, task.seed)
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
    }
}
