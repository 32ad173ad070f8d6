//! The production [`Journal`]: the append-only decision log of
//! [`crate::decisions`], plus reading a log back into the review's state.

use super::app::{Decision, Entry, Target, Verdict};
use super::journal::Journal;
use crate::decisions::{Fingerprint, Log, Record, Replay, Solution, Source, Status};
use std::collections::HashMap;

/// Writes the review's entries as decision-log records (`via = "review"`).
#[derive(Debug)]
pub struct DecisionLog {
    log: Log,
    observer: String,
    /// Ids of the decision records written this session, per target name,
    /// newest last: what the review's undo cancels.
    written: HashMap<String, Vec<String>>,
}

impl DecisionLog {
    /// Wrap an open log; records are signed with `observer`.
    pub fn new(log: Log, observer: &str) -> DecisionLog {
        DecisionLog {
            log,
            observer: observer.to_string(),
            written: HashMap::new(),
        }
    }

    /// The open log.
    pub fn log(&self) -> &Log {
        &self.log
    }

    fn record(&self, target: &Target, entry: &Entry) -> Result<Record, String> {
        let name = &target.name;
        let me = &self.observer;
        let r = match entry {
            Entry::Decide { decision, .. } => match decision.verdict {
                Verdict::Reject => Record::reject(name, me),
                Verdict::Reobserve => Record::flag(name, me),
                Verdict::Conflict => return Err("a conflict is not a decision".into()),
                Verdict::Accept => {
                    // The barycentric values are the ones the screen showed:
                    // the accepted (possibly nudged) z composed with the
                    // file's correction.
                    let (z_bary, velocity_bary_kms) = decision.bary();
                    let solution = Solution {
                        z: decision.z,
                        z_err: decision.z_err,
                        class: decision.class,
                        subclass: decision.subclass.clone(),
                        grade: decision.grade,
                        lines: decision.lines.clone(),
                        z_bary,
                        velocity_bary_kms,
                        barycentric_correction_kms: decision.bary_kms,
                    };
                    match (decision.by_hand, decision.candidate_rank) {
                        (false, Some(rank)) => Record::accept(
                            name,
                            me,
                            solution,
                            Source::Candidate { rank: rank as u32 },
                        ),
                        _ => Record::reclassify(name, me, solution),
                    }
                }
            },
            Entry::Note { text, .. } => Record::note(name, me, text),
            Entry::Undo { .. } => {
                let id = self
                    .written
                    .get(name)
                    .and_then(|ids| ids.last())
                    .ok_or_else(|| format!("{name}: no decision of this session to undo"))?;
                Record::undo(name, me, id)
            }
        };
        let r = r.with_via("review");
        // The fingerprint ties the decision to the file's content; a file
        // that cannot be read now still gets its decision recorded.
        Ok(match Fingerprint::of_file(&target.path) {
            Ok(f) => r.with_input(f),
            Err(_) => r,
        })
    }
}

impl Journal for DecisionLog {
    fn write(&mut self, targets: &[Target], entry: &Entry) -> Result<(), String> {
        let target = targets
            .get(entry.target())
            .ok_or_else(|| "no such target".to_string())?;
        let record = self.record(target, entry)?;
        self.log.append(&record).map_err(|e| e.to_string())?;
        match entry {
            Entry::Decide { .. } => self
                .written
                .entry(target.name.clone())
                .or_default()
                .push(record.id),
            Entry::Undo { .. } => {
                if let Some(ids) = self.written.get_mut(&target.name) {
                    ids.pop();
                }
            }
            Entry::Note { .. } => {}
        }
        Ok(())
    }

    fn location(&self) -> Option<String> {
        Some(self.log.dir().display().to_string())
    }
}

/// The review's view of a replayed log: each target's current decision and
/// latest note, in queue order.
pub fn state_of(
    replay: &Replay,
    targets: &[Target],
) -> (Vec<Option<Decision>>, Vec<Option<String>>) {
    let mut decisions = Vec::with_capacity(targets.len());
    let mut notes = Vec::with_capacity(targets.len());
    for t in targets {
        let Some(s) = replay.state(&t.name) else {
            decisions.push(None);
            notes.push(None);
            continue;
        };
        let verdict = match s.status {
            Status::Undecided => None,
            Status::Accepted => Some(Verdict::Accept),
            Status::Rejected => Some(Verdict::Reject),
            Status::Flagged => Some(Verdict::Reobserve),
            Status::Conflict => Some(Verdict::Conflict),
        };
        decisions.push(verdict.map(|v| {
            let mut d = Decision::bare(v);
            if let Some(sol) = &s.solution {
                d.z = sol.z;
                d.z_err = sol.z_err;
                d.class = sol.class;
                d.subclass = sol.subclass.as_deref().map(crate::text::clean);
                d.grade = sol.grade;
                d.lines = sol.lines.clone();
                d.bary_kms = sol.barycentric_correction_kms;
            }
            let standing = s.verdicts.last();
            d.candidate_rank = standing.and_then(|v| match v.source {
                Some(Source::Candidate { rank }) => Some(rank as usize),
                _ => None,
            });
            d.by_hand = standing.is_some_and(|v| v.source == Some(Source::Hand));
            d
        }));
        notes.push(s.notes.last().map(|n| crate::text::clean(&n.text)));
    }
    (decisions, notes)
}
