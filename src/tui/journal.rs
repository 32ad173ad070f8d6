//! Where the review's decisions go.
//!
//! The runtime hands every [`Entry`] to a [`Journal`] and only tells the
//! person "saved" after [`Journal::write`] returned `Ok`: a journal must make
//! the entry durable (written and synced) before returning. The production
//! journal is the decision log (`crate::decisions`); [`Memory`] keeps entries
//! in memory for tests and for the byte benchmark.

use super::app::{Entry, Target};

/// A durable sink for decisions.
pub trait Journal {
    /// Append `entry` (about `targets[entry.target()]`) durably; `Err` carries
    /// a message for the person (the screen then says NOT SAVED).
    fn write(&mut self, targets: &[Target], entry: &Entry) -> Result<(), String>;

    /// Where the journal lives, for the goodbye message (`None` if nowhere).
    fn location(&self) -> Option<String> {
        None
    }
}

/// A journal that keeps entries in memory (tests, benchmarks); can be told to
/// fail, to exercise the NOT SAVED path.
#[derive(Debug, Default, Clone)]
pub struct Memory {
    /// Entries written so far.
    pub entries: Vec<Entry>,
    /// When set, every write fails with this message.
    pub fail_with: Option<String>,
}

impl Journal for Memory {
    fn write(&mut self, _targets: &[Target], entry: &Entry) -> Result<(), String> {
        if let Some(e) = &self.fail_with {
            return Err(e.clone());
        }
        self.entries.push(entry.clone());
        Ok(())
    }
}
