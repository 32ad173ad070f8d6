//! The background worker: reads and analyses targets ahead of the person.
//!
//! The runtime sends [`Worker::want`] with the targets it needs, most urgent
//! first; the worker answers each with a [`Msg::Loaded`] on the same channel
//! as the key presses. Latest wins: a new request replaces the old one between
//! targets, so stepping quickly never queues stale work. A small cache keeps
//! recently finished targets so stepping back is instant.
//!
//! A panic inside a reader or the identifier is caught and reported as a
//! failed target, never as a crashed review.

use super::app::{Loaded, Msg, Target};
use crate::identify::{Candidate, Identifier};
use crate::physics::bary::BaryOverrides;
use crate::spectrum::ReadOptions;
use std::collections::VecDeque;
use std::panic::AssertUnwindSafe;
use std::sync::Arc;
use std::sync::mpsc::{Receiver, Sender, TryRecvError, channel};
use std::thread::JoinHandle;

/// The thread name of the worker (the panic hook leaves the terminal alone
/// for panics on this thread: they are caught and reported).
pub const THREAD_NAME: &str = "zsift-worker";

/// Finished targets kept for instant stepping back.
const CACHE: usize = 8;

/// What the worker does with a target: read and analyse it, and re-measure a
/// candidate at a chosen redshift.
pub trait Analyser: Send + Sync {
    /// Read and analyse `target`.
    fn load(&self, target: &Target) -> Result<Loaded, String>;
    /// Re-measure the candidate at `z` (the core's `candidate_at`).
    fn remeasure(&self, loaded: &Loaded, z: f64) -> Result<Candidate, String>;
}

/// The production analyser: `spectrum::read`, `Identifier::analyse` and the
/// barycentric correction.
#[derive(Debug)]
pub struct Core {
    /// The identifier (built once).
    pub identifier: Identifier,
    /// Reader options.
    pub read: ReadOptions,
    /// What the user supplied for the barycentric correction (command-line
    /// options and the configured named sites); a queue row's own values
    /// ([`Target::bary`]) come first.
    pub bary: BaryOverrides,
}

fn panic_text(p: Box<dyn std::any::Any + Send>) -> String {
    if let Some(s) = p.downcast_ref::<&str>() {
        (*s).to_string()
    } else if let Some(s) = p.downcast_ref::<String>() {
        s.clone()
    } else {
        "unknown panic".to_string()
    }
}

impl Analyser for Core {
    fn load(&self, target: &Target) -> Result<Loaded, String> {
        let spectrum =
            crate::spectrum::read(&target.path, &self.read).map_err(|e| e.to_string())?;
        let analysis =
            std::panic::catch_unwind(AssertUnwindSafe(|| self.identifier.analyse(&spectrum)))
                .map_err(|p| {
                    format!("the identifier failed on this spectrum: {}", panic_text(p))
                })?;
        let row = target.bary.clone().unwrap_or_default();
        let bary = crate::physics::bary::compute_layered(&spectrum.meta, &[&row, &self.bary]);
        Ok(Loaded {
            spectrum,
            analysis,
            bary,
        })
    }

    fn remeasure(&self, loaded: &Loaded, z: f64) -> Result<Candidate, String> {
        std::panic::catch_unwind(AssertUnwindSafe(|| {
            self.identifier
                .candidate_at(&loaded.spectrum, &loaded.analysis, z)
        }))
        .map_err(|p| format!("re-measuring failed: {}", panic_text(p)))
    }
}

/// Handle to the worker thread; dropping it stops the thread.
#[derive(Debug)]
pub struct Worker {
    tx: Option<Sender<Vec<usize>>>,
    handle: Option<JoinHandle<()>>,
}

impl Worker {
    /// Start the worker for `targets`; results go to `out`.
    pub fn spawn(
        analyser: Arc<dyn Analyser>,
        targets: Arc<Vec<Target>>,
        out: Sender<Msg>,
    ) -> std::io::Result<Worker> {
        let (tx, rx) = channel::<Vec<usize>>();
        let handle = std::thread::Builder::new()
            .name(THREAD_NAME.into())
            .spawn(move || work(analyser, targets, rx, out))?;
        Ok(Worker {
            tx: Some(tx),
            handle: Some(handle),
        })
    }

    /// Ask for `targets`, most urgent first; replaces any earlier request.
    pub fn want(&self, targets: Vec<usize>) {
        if let Some(tx) = &self.tx {
            let _ = tx.send(targets);
        }
    }
}

impl Drop for Worker {
    fn drop(&mut self) {
        // Closing the channel ends the loop after the current target; do not
        // wait for it (a slow file must not delay quitting).
        self.tx = None;
        let _ = self.handle.take();
    }
}

fn work(
    analyser: Arc<dyn Analyser>,
    targets: Arc<Vec<Target>>,
    rx: Receiver<Vec<usize>>,
    out: Sender<Msg>,
) {
    let mut cache: VecDeque<(usize, Result<Arc<Loaded>, String>)> = VecDeque::new();
    let mut queue: Vec<usize> = Vec::new();
    loop {
        if queue.is_empty() {
            match rx.recv() {
                Ok(q) => queue = q,
                Err(_) => return,
            }
        }
        // Latest wins.
        loop {
            match rx.try_recv() {
                Ok(q) => queue = q,
                Err(TryRecvError::Empty) => break,
                Err(TryRecvError::Disconnected) => return,
            }
        }
        if queue.is_empty() {
            continue;
        }
        let i = queue.remove(0);
        let Some(target) = targets.get(i) else {
            continue;
        };
        let result = match cache.iter().find(|(k, _)| *k == i) {
            Some((_, r)) => r.clone(),
            None => {
                let r = std::panic::catch_unwind(AssertUnwindSafe(|| analyser.load(target)))
                    .unwrap_or_else(|p| Err(format!("reading failed: {}", panic_text(p))))
                    .map(Arc::new);
                cache.push_back((i, r.clone()));
                if cache.len() > CACHE {
                    cache.pop_front();
                }
                r
            }
        };
        if out.send(Msg::Loaded { target: i, result }).is_err() {
            return;
        }
    }
}
