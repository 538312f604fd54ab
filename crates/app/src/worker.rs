//! Fits run on a worker thread; the UI polls a channel for progress and results and can cancel.

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{Receiver, Sender, channel};
use std::thread::JoinHandle;

use caldera_data::GalaxyTable;
use caldera_data::session::HaloModel;
use caldera_infer::sampler::{Control, Progress};
use caldera_infer::{FitConfig, FitResult, fit_galaxy};

/// What the worker reports.
pub enum FitMessage {
    Progress {
        model: HaloModel,
        progress: Progress,
    },
    Finished {
        model: HaloModel,
        result: Result<Box<FitResult>, String>,
    },
    AllDone,
}

/// A running fit (one galaxy, one or more models in turn).
pub struct FitJob {
    pub galaxy: String,
    pub receiver: Receiver<FitMessage>,
    pub cancel: Arc<AtomicBool>,
    pub latest: Option<(HaloModel, Progress)>,
    handle: Option<JoinHandle<()>>,
}

impl FitJob {
    /// Starts fitting `models` to `table` on a new thread.
    pub fn start(table: GalaxyTable, models: Vec<HaloModel>, config: FitConfig) -> Self {
        let (sender, receiver) = channel();
        let cancel = Arc::new(AtomicBool::new(false));
        let galaxy = table.meta.name.clone();
        let thread_cancel = Arc::clone(&cancel);
        let handle =
            std::thread::spawn(move || run(&table, &models, &config, &sender, &thread_cancel));
        Self {
            galaxy,
            receiver,
            cancel,
            latest: None,
            handle: Some(handle),
        }
    }

    /// Asks the worker to stop after the current step.
    pub fn cancel(&self) {
        self.cancel.store(true, Ordering::SeqCst);
    }
}

impl Drop for FitJob {
    fn drop(&mut self) {
        self.cancel();
        if let Some(handle) = self.handle.take() {
            let _ = handle.join();
        }
    }
}

fn run(
    table: &GalaxyTable,
    models: &[HaloModel],
    config: &FitConfig,
    sender: &Sender<FitMessage>,
    cancel: &AtomicBool,
) {
    for &model in models {
        if cancel.load(Ordering::SeqCst) {
            break;
        }
        let mut observer = |p: &Progress| {
            let _ = sender.send(FitMessage::Progress {
                model,
                progress: *p,
            });
            if cancel.load(Ordering::SeqCst) {
                Control::Stop
            } else {
                Control::Continue
            }
        };
        let result = fit_galaxy(table, model, config, &mut observer)
            .map(Box::new)
            .map_err(|e| e.to_string());
        if sender.send(FitMessage::Finished { model, result }).is_err() {
            return;
        }
    }
    let _ = sender.send(FitMessage::AllDone);
}
