//! Analyses the page watches while they run. A request may name a job (an identifier of
//! the page's choosing): while it runs, the page can read how far it has got and ask it to
//! stop. Every request runs under a watch, named or not, and the watch asks the analysis to
//! stop when the request ends without its answer being read (the page went away, or the
//! time limit passed), so that no abandoned analysis keeps the processor busy.

use relyard::analysis::{Progress, Task};
use std::collections::HashMap;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Arc, Mutex};

/// Analyses that may run at once (each a request, named or not).
const MAX_JOBS: usize = 32;

/// How far one analysis has got, and whether it was asked to stop.
#[derive(Debug, Default)]
pub(super) struct Watch {
    task: Mutex<Option<Task>>,
    total: AtomicU64,
    done: AtomicU64,
    stop: AtomicBool,
}

impl Watch {
    pub(super) fn ask_to_stop(&self) {
        self.stop.store(true, Ordering::Relaxed);
    }

    /// The task under way (if any), the steps done and the steps in all.
    pub(super) fn state(&self) -> (Option<Task>, u64, u64) {
        let task = *self.task.lock().unwrap_or_else(|e| e.into_inner());
        (
            task,
            self.done.load(Ordering::Relaxed),
            self.total.load(Ordering::Relaxed),
        )
    }
}

impl Progress for Watch {
    fn start(&self, task: Task, total: u64) {
        *self.task.lock().unwrap_or_else(|e| e.into_inner()) = Some(task);
        self.done.store(0, Ordering::Relaxed);
        self.total.store(total, Ordering::Relaxed);
    }
    fn advance(&self, steps: u64) {
        self.done.fetch_add(steps, Ordering::Relaxed);
    }
    fn finish(&self) {
        *self.task.lock().unwrap_or_else(|e| e.into_inner()) = None;
    }
    fn stop_asked(&self) -> bool {
        self.stop.load(Ordering::Relaxed)
    }
}

/// The analyses now running: how many, and the named ones by name.
#[derive(Debug, Default)]
pub(super) struct Jobs {
    running: Mutex<HashMap<String, Arc<Watch>>>,
    count: Mutex<usize>,
}

impl Jobs {
    /// A watch for one request, listed under `id` when the page gave one; refused while
    /// [`MAX_JOBS`] analyses run.
    pub(super) fn watch(self: &Arc<Self>, id: Option<&str>) -> Result<Watched, String> {
        if let Some(id) = id {
            let valid = !id.is_empty()
                && id.len() <= 64
                && id
                    .bytes()
                    .all(|b| b.is_ascii_alphanumeric() || b == b'-' || b == b'_');
            if !valid {
                return Err("a job is named by 1 to 64 letters, digits, - or _".into());
            }
        }
        let mut count = self.count.lock().unwrap_or_else(|e| e.into_inner());
        if *count >= MAX_JOBS {
            return Err(format!(
                "{MAX_JOBS} analyses are already running; wait for one to end"
            ));
        }
        let watch = Arc::new(Watch::default());
        if let Some(id) = id {
            let mut running = self.running.lock().unwrap_or_else(|e| e.into_inner());
            if running.contains_key(id) {
                return Err(format!("job \"{id}\" is already running"));
            }
            running.insert(id.to_string(), watch.clone());
        }
        *count += 1;
        Ok(Watched {
            jobs: self.clone(),
            id: id.map(str::to_string),
            watch,
        })
    }

    /// The watch of a running job.
    pub(super) fn get(&self, id: &str) -> Option<Arc<Watch>> {
        let running = self.running.lock().unwrap_or_else(|e| e.into_inner());
        running.get(id).cloned()
    }
}

/// One request's watch: when the request ends, however it ends, the analysis is asked to
/// stop (a finished one does not notice) and its job is no longer listed.
pub(super) struct Watched {
    jobs: Arc<Jobs>,
    id: Option<String>,
    pub(super) watch: Arc<Watch>,
}

impl Drop for Watched {
    fn drop(&mut self) {
        self.watch.ask_to_stop();
        if let Some(id) = &self.id {
            let mut running = self.jobs.running.lock().unwrap_or_else(|e| e.into_inner());
            running.remove(id);
        }
        let mut count = self.jobs.count.lock().unwrap_or_else(|e| e.into_inner());
        *count -= 1;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_job_is_listed_while_its_request_runs_and_stopped_when_it_ends() {
        let jobs = Arc::new(Jobs::default());
        let w = jobs.watch(Some("job-1")).unwrap();
        assert!(jobs.watch(Some("job-1")).is_err(), "the same name twice");
        assert!(jobs.watch(Some("no spaces")).is_err());
        let seen = jobs.get("job-1").unwrap();
        w.watch.start(Task::Permutations, 100);
        w.watch.advance(40);
        assert_eq!(seen.state(), (Some(Task::Permutations), 40, 100));
        assert!(!seen.stop_asked());
        drop(w);
        assert!(seen.stop_asked());
        assert!(jobs.get("job-1").is_none());
    }

    #[test]
    fn the_number_of_analyses_is_bounded_named_or_not() {
        let jobs = Arc::new(Jobs::default());
        let mut held: Vec<Watched> = (0..MAX_JOBS / 2)
            .map(|i| jobs.watch(Some(&format!("j{i}"))).unwrap())
            .collect();
        held.extend((MAX_JOBS / 2..MAX_JOBS).map(|_| jobs.watch(None).unwrap()));
        assert!(jobs.watch(Some("one-more")).is_err());
        assert!(jobs.watch(None).is_err());
        held.pop();
        assert!(jobs.watch(None).is_ok(), "one ended, one may start");
        drop(held);
        assert!(jobs.watch(Some("one-more")).is_ok());
    }
}
