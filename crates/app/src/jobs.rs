//! One background-job type for everything slow: fits, model comparisons, population fits and
//! file loading run on a thread; the UI polls for progress and outputs and can cancel. No egui
//! here.

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{Receiver, Sender, channel};
use std::thread::JoinHandle;

/// What a job reports.
enum JobEvent<P, T> {
    Progress(P),
    Output(T),
    Done,
}

/// What the work of a job sees: a way to report progress and outputs, and the cancel flag.
pub struct JobContext<P, T> {
    sender: Sender<JobEvent<P, T>>,
    cancel: Arc<AtomicBool>,
}

impl<P, T> JobContext<P, T> {
    /// Reports progress (dropped silently when the app has gone).
    pub fn progress(&self, progress: P) {
        let _ = self.sender.send(JobEvent::Progress(progress));
    }

    /// Reports one output; false when nobody is listening any more.
    pub fn output(&self, output: T) -> bool {
        self.sender.send(JobEvent::Output(output)).is_ok()
    }

    /// Whether the user asked to stop.
    #[must_use]
    pub fn cancelled(&self) -> bool {
        self.cancel.load(Ordering::SeqCst)
    }
}

/// A job running on its own thread, with progress `P` and outputs `T`.
pub struct Job<P, T> {
    /// What the job does, for people ("fit of Kiln D01").
    pub label: String,
    receiver: Receiver<JobEvent<P, T>>,
    cancel: Arc<AtomicBool>,
    latest: Option<P>,
    done: bool,
    handle: Option<JoinHandle<()>>,
}

impl<P: Send + 'static, T: Send + 'static> Job<P, T> {
    /// Starts `work` on a new thread.
    pub fn spawn(
        label: impl Into<String>,
        work: impl FnOnce(&JobContext<P, T>) + Send + 'static,
    ) -> Self {
        let (sender, receiver) = channel();
        let cancel = Arc::new(AtomicBool::new(false));
        let context = JobContext {
            sender,
            cancel: Arc::clone(&cancel),
        };
        let handle = std::thread::spawn(move || {
            work(&context);
            let _ = context.sender.send(JobEvent::Done);
        });
        Self {
            label: label.into(),
            receiver,
            cancel,
            latest: None,
            done: false,
            handle: Some(handle),
        }
    }
}

impl<P, T> Job<P, T> {
    /// Asks the work to stop at its next check.
    pub fn cancel(&self) {
        self.cancel.store(true, Ordering::SeqCst);
    }

    /// Whether cancelling was asked for.
    #[must_use]
    pub fn cancel_requested(&self) -> bool {
        self.cancel.load(Ordering::SeqCst)
    }

    /// Takes the outputs that arrived since the last poll, keeping the latest progress.
    pub fn poll(&mut self) -> Vec<T> {
        let mut outputs = Vec::new();
        while let Ok(event) = self.receiver.try_recv() {
            match event {
                JobEvent::Progress(p) => self.latest = Some(p),
                JobEvent::Output(t) => outputs.push(t),
                JobEvent::Done => self.done = true,
            }
        }
        outputs
    }

    /// The latest progress report.
    #[must_use]
    pub fn latest(&self) -> Option<&P> {
        self.latest.as_ref()
    }

    /// True once the work has returned (after a poll that saw it).
    #[must_use]
    pub fn is_done(&self) -> bool {
        self.done
    }
}

impl<P, T> Drop for Job<P, T> {
    fn drop(&mut self) {
        self.cancel();
        if let Some(handle) = self.handle.take() {
            let _ = handle.join();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn outputs_progress_and_cancel_arrive() {
        let mut job: Job<usize, usize> = Job::spawn("count", |ctx| {
            for i in 0..1_000_000 {
                if ctx.cancelled() {
                    return;
                }
                if i < 3 {
                    ctx.progress(i);
                    ctx.output(i * 10);
                }
                std::thread::yield_now();
            }
        });
        let mut outputs = Vec::new();
        while outputs.len() < 3 {
            outputs.extend(job.poll());
            std::thread::yield_now();
        }
        assert_eq!(outputs, vec![0, 10, 20]);
        assert_eq!(job.latest(), Some(&2));
        job.cancel();
        while !job.is_done() {
            job.poll();
            std::thread::yield_now();
        }
        assert!(job.cancel_requested());
    }
}
