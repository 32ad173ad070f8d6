//! The review's state, its messages and its one `update` function.
//!
//! Elm-style: every input (a key, a resize, a spectrum the worker finished,
//! the result of writing the log) is a [`Msg`]; [`App::update`] changes the
//! state and returns [`Effect`]s for the runtime to carry out (write the
//! log, ask the worker for targets, re-measure a nudged redshift, quit).
//! Widgets only read `&App`. Nothing here touches a file or the terminal, so
//! key sequences are tested directly.

use super::keys::{Action, CLASS_KEYS, Key, KeyMap, PROMPT_CANCEL, PROMPT_CONFIRM};
use super::theme::Theme;
use crate::identify::{Analysis, Candidate, Grade};
use crate::lines::{Catalogue, ObjectClass};
use crate::physics::bary::{BaryError, BaryOverrides, Correction};
use crate::physics::constants::C_KM_S;
use crate::spectrum::Spectrum;
use crossterm::event::{KeyCode, KeyEvent, KeyEventKind};
use std::collections::HashMap;
use std::path::PathBuf;
use std::sync::Arc;

/// Fine redshift nudge, km/s.
pub const FINE_STEP_KMS: f64 = 25.0;
/// Coarse redshift nudge, km/s.
pub const COARSE_STEP_KMS: f64 = 500.0;
/// Smoothing levels (box-car width in pixels); 1 = none.
pub const SMOOTHING: [usize; 5] = [1, 3, 5, 9, 17];
/// Longest note or subclass accepted from the keyboard, in characters.
pub const MAX_TEXT: usize = 200;
/// How many targets ahead of the current one the worker prepares.
pub const PREFETCH_AHEAD: usize = 2;

/// One entry of the review queue.
#[derive(Debug, Clone, PartialEq)]
pub struct Target {
    /// Target name as shown (already cleaned).
    pub name: String,
    /// The spectrum file.
    pub path: PathBuf,
    /// What the queue file's row supplies for the barycentric correction
    /// (its values win over the file's), if anything.
    pub bary: Option<BaryOverrides>,
}

impl Target {
    /// A queue entry with nothing but a name and a file.
    pub fn new(name: impl Into<String>, path: impl Into<PathBuf>) -> Target {
        Target {
            name: name.into(),
            path: path.into(),
            bary: None,
        }
    }
}

/// A target read and analysed by the worker.
#[derive(Debug, Clone, PartialEq)]
pub struct Loaded {
    /// The spectrum as read.
    pub spectrum: Spectrum,
    /// The identifier's answer.
    pub analysis: Analysis,
    /// The barycentric correction from the file's metadata and what the
    /// user supplied, or why it cannot be computed.
    pub bary: Result<Correction, BaryError>,
}

/// The barycentric values shown for the candidate on screen.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BaryShown {
    /// The correction, km/s.
    pub correction_kms: f64,
    /// Barycentric redshift of the shown candidate (nudged z if nudged).
    pub z_bary: Option<f64>,
    /// Barycentric velocity of the shown candidate, km/s (relativistic).
    pub velocity_bary_kms: Option<f64>,
}

/// The state of one target's data.
#[derive(Debug, Clone, PartialEq)]
pub enum Slot {
    /// Asked for, not there yet.
    Waiting,
    /// Read and analysed.
    Ready(Arc<Loaded>),
    /// Could not be read or analysed; the message says why (cleaned).
    Failed(String),
}

/// What the person decided about a target.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Verdict {
    /// A redshift / class was accepted.
    Accept,
    /// No usable redshift.
    Reject,
    /// Observe again.
    Reobserve,
    /// Observers' standing verdicts disagree (only ever read from the log).
    Conflict,
}

/// A decision about one target, as written to the log.
#[derive(Debug, Clone, PartialEq)]
pub struct Decision {
    /// Accept, reject or re-observe.
    pub verdict: Verdict,
    /// Accepted redshift (accept only; `None` when the class was set by hand
    /// without any candidate).
    pub z: Option<f64>,
    /// Its 1-sigma error, when the core measured one.
    pub z_err: Option<f64>,
    /// Accepted class.
    pub class: Option<ObjectClass>,
    /// Accepted subclass.
    pub subclass: Option<String>,
    /// Rank of the candidate it came from.
    pub candidate_rank: Option<usize>,
    /// True when the person nudged z or set the class by hand.
    pub by_hand: bool,
    /// The candidate's trust grade, when it came from a candidate.
    pub grade: Option<Grade>,
    /// Names of the matched lines supporting it.
    pub lines: Vec<String>,
    /// The barycentric correction of the target's file (km/s), when known.
    pub bary_kms: Option<f64>,
}

impl Decision {
    /// A decision with only a verdict (reject, re-observe).
    pub fn bare(verdict: Verdict) -> Decision {
        Decision {
            verdict,
            z: None,
            z_err: None,
            class: None,
            subclass: None,
            candidate_rank: None,
            by_hand: false,
            grade: None,
            lines: Vec::new(),
            bary_kms: None,
        }
    }

    /// Barycentric redshift and velocity (km/s) of the accepted z, when both
    /// z and the correction are known (`physics::bary::corrected`).
    pub fn bary(&self) -> (Option<f64>, Option<f64>) {
        match self.z {
            Some(z) => crate::physics::bary::corrected(z, self.bary_kms),
            None => (None, None),
        }
    }
}

/// One thing to append to the decision log.
#[derive(Debug, Clone, PartialEq)]
pub enum Entry {
    /// A decision about target `target` (index into the queue).
    Decide {
        /// Queue index.
        target: usize,
        /// The decision.
        decision: Decision,
    },
    /// A note.
    Note {
        /// Queue index.
        target: usize,
        /// The text (cleaned).
        text: String,
    },
    /// Undo the latest decision about `target`.
    Undo {
        /// Queue index.
        target: usize,
    },
}

impl Entry {
    /// The queue index the entry is about.
    pub fn target(&self) -> usize {
        match self {
            Entry::Decide { target, .. } | Entry::Note { target, .. } | Entry::Undo { target } => {
                *target
            }
        }
    }
}

/// Work for the runtime, returned by [`App::update`].
#[derive(Debug, Clone, PartialEq)]
pub enum Effect {
    /// Append to the log (durably), then send [`Msg::Recorded`].
    Record(Entry),
    /// Make sure these targets are read and analysed, most urgent first
    /// (latest wins: an older request may be dropped).
    Want(Vec<usize>),
    /// Re-measure the current target at `z` through the core, then send
    /// [`Msg::Remeasured`].
    Remeasure {
        /// Queue index.
        target: usize,
        /// The redshift to measure at.
        z: f64,
    },
    /// Leave the review.
    Quit,
}

/// Everything that can happen to the review.
#[derive(Debug, Clone)]
pub enum Msg {
    /// A key press.
    Key(KeyEvent),
    /// The terminal changed size.
    Resize(u16, u16),
    /// The worker finished a target.
    Loaded {
        /// Queue index.
        target: usize,
        /// The data or why it failed.
        result: Result<Arc<Loaded>, String>,
    },
    /// The core re-measured a nudged redshift.
    Remeasured {
        /// Queue index.
        target: usize,
        /// The redshift asked for.
        z: f64,
        /// The candidate there.
        candidate: Candidate,
    },
    /// The core could not re-measure a nudged redshift.
    RemeasureFailed {
        /// Queue index.
        target: usize,
        /// Why (shown to the person).
        message: String,
    },
    /// The log write of an [`Effect::Record`] finished.
    Recorded {
        /// What was written.
        entry: Entry,
        /// `Err` carries the message shown to the person.
        result: Result<(), String>,
    },
    /// A signal asked us to stop (SIGTERM, SIGHUP).
    Stop(String),
}

/// What the keyboard is talking to.
#[derive(Debug, Clone, PartialEq)]
pub enum Mode {
    /// The main screen.
    Browse,
    /// The key list.
    Help,
    /// Choosing a class by hand.
    ClassPick,
    /// Typing a subclass for a class chosen by hand.
    Subclass {
        /// The class chosen.
        class: ObjectClass,
        /// The text so far.
        text: String,
    },
    /// Typing a note.
    Note {
        /// The text so far.
        text: String,
    },
}

/// How the status line should look.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StatusKind {
    /// Neutral information.
    Info,
    /// Something was saved.
    Saved,
    /// A write failed or an action was refused.
    Error,
}

/// The plot's view of the spectrum.
#[derive(Debug, Clone, PartialEq)]
pub struct View {
    /// Shown wavelength range; `None` = the whole spectrum.
    pub range: Option<(f64, f64)>,
    /// Index into [`SMOOTHING`].
    pub smoothing: usize,
    /// Draw the flux +/- sigma band.
    pub errors: bool,
    /// Draw the sky spectrum.
    pub sky: bool,
}

/// A redshift the person nudged away from the candidate's.
#[derive(Debug, Clone, PartialEq)]
pub struct Nudge {
    /// The nudged redshift.
    pub z: f64,
    /// The core's re-measurement at `z`, once it is back.
    pub candidate: Option<Candidate>,
}

/// The whole review state.
#[derive(Debug, Clone)]
pub struct App {
    /// The queue.
    pub targets: Vec<Target>,
    /// Index of the target on screen.
    pub pos: usize,
    /// Loaded data, by queue index (a window around `pos`).
    pub slots: HashMap<usize, Slot>,
    /// The current decision of each target (from the log, then this session).
    pub decisions: Vec<Option<Decision>>,
    /// The latest note of each target.
    pub notes: Vec<Option<String>>,
    /// Decisions made in this session, newest last, with the state they replaced.
    pub undo_stack: Vec<(usize, Option<Decision>)>,
    /// A log write in flight (the screen says "saving" until it is back).
    pub pending: Option<Entry>,
    /// The candidate cursor: a highlight in the candidate list (index into
    /// the current target's candidates). Moving it changes nothing else on
    /// screen unless [`App::follow_cursor`] is set.
    pub cand_cursor: usize,
    /// The shown candidate (index into the current target's candidates): the
    /// one the plot markers, the matched-line list and the barycentric values
    /// are for, and the one accept takes. The show key moves it to the cursor.
    pub cand_shown: usize,
    /// Show the candidate under the cursor at every cursor move (the old,
    /// live behaviour; costs a plot and list redraw per move, so off by
    /// default for slow links).
    pub follow_cursor: bool,
    /// The line cursor (index into the shown candidate's matched lines).
    pub line_cursor: Option<usize>,
    /// A nudged redshift for the current target.
    pub nudge: Option<Nudge>,
    /// The plot view.
    pub view: View,
    /// Keyboard mode.
    pub mode: Mode,
    /// Status line text and kind.
    pub status: Option<(StatusKind, String)>,
    /// The key map.
    pub keys: KeyMap,
    /// The theme.
    pub theme: Theme,
    /// Plain ASCII output (no Braille, no arrows).
    pub ascii: bool,
    /// Go on to the next undecided target after each decision.
    pub advance: bool,
    /// The catalogue (for expected lines and foreground regions).
    pub catalogue: Arc<Catalogue>,
    /// Who is deciding (shown in the header, written by the runtime).
    pub observer: String,
    /// Set once the review should end.
    pub quitting: bool,
}

/// The relativistic composition of a redshift with a velocity step:
/// 1 + z' = (1 + z) * sqrt((1 + b) / (1 - b)), b = dv / c.
pub fn shift_z(z: f64, dv_kms: f64) -> f64 {
    let b = dv_kms / C_KM_S;
    (1.0 + z) * ((1.0 + b) / (1.0 - b)).sqrt() - 1.0
}

impl App {
    /// A review of `targets` with their current decisions (`decisions[i]`
    /// for `targets[i]`; shorter vectors are padded with `None`).
    pub fn new(
        targets: Vec<Target>,
        mut decisions: Vec<Option<Decision>>,
        catalogue: Arc<Catalogue>,
    ) -> App {
        decisions.resize(targets.len(), None);
        let n = targets.len();
        App {
            targets,
            pos: 0,
            slots: HashMap::new(),
            decisions,
            notes: vec![None; n],
            undo_stack: Vec::new(),
            pending: None,
            cand_cursor: 0,
            cand_shown: 0,
            follow_cursor: false,
            line_cursor: None,
            nudge: None,
            view: View {
                range: None,
                smoothing: 0,
                errors: false,
                sky: false,
            },
            mode: Mode::Browse,
            status: None,
            keys: KeyMap::default(),
            theme: Theme::default(),
            ascii: false,
            advance: true,
            catalogue,
            observer: String::new(),
            quitting: false,
        }
    }

    /// Effects to run at start: start at the first undecided target and ask
    /// for it and the ones after it.
    pub fn start(&mut self) -> Vec<Effect> {
        let first = (0..self.targets.len())
            .find(|i| self.decisions[*i].is_none())
            .unwrap_or(0);
        self.go_to(first)
    }

    /// The current target's data slot.
    pub fn slot(&self) -> Option<&Slot> {
        self.slots.get(&self.pos)
    }

    /// The current target's data, when ready.
    pub fn loaded(&self) -> Option<&Arc<Loaded>> {
        match self.slot() {
            Some(Slot::Ready(l)) => Some(l),
            _ => None,
        }
    }

    /// The candidate the screen shows ([`App::cand_shown`]), or its
    /// re-measurement at the nudged redshift.
    pub fn shown_candidate(&self) -> Option<Candidate> {
        let l = self.loaded()?;
        let base = l.analysis.candidates.get(self.cand_shown)?;
        match &self.nudge {
            Some(Nudge {
                candidate: Some(c), ..
            }) => Some(c.clone()),
            Some(Nudge { z, candidate: None }) => {
                // Until the core answers, show the candidate moved to z with
                // no matches, so markers move at once.
                let mut c = base.clone();
                c.z = *z;
                c.matched.clear();
                Some(c)
            }
            None => Some(base.clone()),
        }
    }

    /// The barycentric correction of the target on screen and the values it
    /// gives for the shown candidate, or why there is none; `None` until the
    /// target is loaded.
    pub fn shown_bary(&self) -> Option<Result<BaryShown, &BaryError>> {
        let l = self.loaded()?;
        Some(match &l.bary {
            Ok(c) => {
                let (z_bary, velocity_bary_kms) = match self.shown_candidate() {
                    Some(cand) => crate::physics::bary::corrected(cand.z, Some(c.kms)),
                    None => (None, None),
                };
                Ok(BaryShown {
                    correction_kms: c.kms,
                    z_bary,
                    velocity_bary_kms,
                })
            }
            Err(e) => Err(e),
        })
    }

    fn bary_kms(&self) -> Option<f64> {
        self.loaded()
            .and_then(|l| l.bary.as_ref().ok())
            .map(|c| c.kms)
    }

    /// Number of targets with a decision.
    pub fn decided(&self) -> usize {
        self.decisions.iter().filter(|d| d.is_some()).count()
    }

    fn want(&self) -> Effect {
        let n = self.targets.len();
        let mut v = vec![self.pos];
        for k in 1..=PREFETCH_AHEAD {
            if self.pos + k < n {
                v.push(self.pos + k);
            }
        }
        if self.pos > 0 {
            v.push(self.pos - 1);
        }
        v.retain(|i| {
            *i < n && !matches!(self.slots.get(i), Some(Slot::Ready(_) | Slot::Failed(_)))
        });
        Effect::Want(v)
    }

    fn say(&mut self, kind: StatusKind, text: impl Into<String>) {
        self.status = Some((kind, text.into()));
    }

    fn go_to(&mut self, i: usize) -> Vec<Effect> {
        if i >= self.targets.len() {
            return Vec::new();
        }
        self.pos = i;
        self.cand_cursor = 0;
        self.cand_shown = 0;
        self.line_cursor = None;
        self.nudge = None;
        self.view.range = None;
        // Keep a small window of loaded targets; drop the rest.
        let lo = i.saturating_sub(2);
        let hi = i + PREFETCH_AHEAD + 1;
        self.slots.retain(|k, _| *k >= lo && *k <= hi);
        for k in [i]
            .into_iter()
            .chain((1..=PREFETCH_AHEAD).map(|d| i + d))
            .chain(i.checked_sub(1))
        {
            if k < self.targets.len() {
                self.slots.entry(k).or_insert(Slot::Waiting);
            }
        }
        vec![self.want()]
    }

    fn next_undecided_after(&self, from: usize) -> Option<usize> {
        let n = self.targets.len();
        (1..=n)
            .map(|d| (from + d) % n)
            .find(|i| self.decisions[*i].is_none() && *i != from)
    }

    /// Handle one message; returns what the runtime must do.
    pub fn update(&mut self, msg: Msg) -> Vec<Effect> {
        match msg {
            Msg::Key(ev) => {
                if ev.kind == KeyEventKind::Release {
                    return Vec::new();
                }
                self.key(ev)
            }
            Msg::Resize(..) => Vec::new(),
            Msg::Loaded { target, result } => {
                if target < self.targets.len() {
                    let slot = match result {
                        Ok(l) => Slot::Ready(l),
                        Err(e) => Slot::Failed(crate::text::clean(&e)),
                    };
                    let near = target + 2 >= self.pos && target <= self.pos + PREFETCH_AHEAD + 1;
                    if near {
                        self.slots.insert(target, slot);
                    }
                }
                Vec::new()
            }
            Msg::Remeasured {
                target,
                z,
                candidate,
            } => {
                if target == self.pos
                    && let Some(n) = &mut self.nudge
                    && n.z == z
                {
                    n.candidate = Some(candidate);
                    self.line_cursor = None;
                }
                Vec::new()
            }
            Msg::RemeasureFailed { target, message } => {
                if target == self.pos {
                    self.say(StatusKind::Error, crate::text::clean(&message));
                }
                Vec::new()
            }
            Msg::Recorded { entry, result } => self.recorded(entry, result),
            Msg::Stop(why) => {
                self.say(StatusKind::Info, why);
                self.quitting = true;
                vec![Effect::Quit]
            }
        }
    }

    fn recorded(&mut self, entry: Entry, result: Result<(), String>) -> Vec<Effect> {
        if self.pending.as_ref() == Some(&entry) {
            self.pending = None;
        }
        if let Err(e) = result {
            self.say(
                StatusKind::Error,
                format!("NOT SAVED: {}", crate::text::clean(&e)),
            );
            return Vec::new();
        }
        let t = entry.target();
        let name = self
            .targets
            .get(t)
            .map(|x| x.name.clone())
            .unwrap_or_default();
        match entry {
            Entry::Decide { target, decision } => {
                let prev = self.decisions[target].replace(decision.clone());
                self.undo_stack.push((target, prev));
                let what = describe(&decision);
                self.say(StatusKind::Saved, format!("saved: {name} {what}"));
                if self.advance && target == self.pos {
                    if let Some(next) = self.next_undecided_after(target) {
                        return self.go_to(next);
                    }
                    self.say(
                        StatusKind::Saved,
                        format!("saved: {name} {what}; every target is decided"),
                    );
                }
                Vec::new()
            }
            Entry::Note { target, text } => {
                self.notes[target] = Some(text);
                self.say(StatusKind::Saved, format!("saved: note on {name}"));
                Vec::new()
            }
            Entry::Undo { target } => {
                if let Some(k) = self.undo_stack.iter().rposition(|(i, _)| *i == target) {
                    let (_, prev) = self.undo_stack.remove(k);
                    self.decisions[target] = prev;
                }
                self.say(StatusKind::Saved, format!("saved: undo on {name}"));
                if target != self.pos {
                    return self.go_to(target);
                }
                Vec::new()
            }
        }
    }

    fn record(&mut self, entry: Entry) -> Vec<Effect> {
        if self.pending.is_some() {
            self.say(StatusKind::Error, "still saving the last decision");
            return Vec::new();
        }
        self.pending = Some(entry.clone());
        self.say(StatusKind::Info, "saving...");
        vec![Effect::Record(entry)]
    }

    fn key(&mut self, ev: KeyEvent) -> Vec<Effect> {
        let key = Key::from_event(&ev);
        // Ctrl-C leaves from anywhere, even a text prompt.
        if key.ctrl && key.code == KeyCode::Char('c') {
            self.quitting = true;
            return vec![Effect::Quit];
        }
        match self.mode.clone() {
            Mode::Browse => match self.keys.action(key) {
                Some(a) => self.act(a),
                None => Vec::new(),
            },
            Mode::Help => {
                match self.keys.action(key) {
                    Some(Action::Quit) => {
                        self.quitting = true;
                        return vec![Effect::Quit];
                    }
                    _ => self.mode = Mode::Browse,
                }
                Vec::new()
            }
            Mode::ClassPick => {
                if let KeyCode::Char(c) = key.code
                    && let Some((_, class)) = CLASS_KEYS.iter().find(|(k, _)| *k == c)
                {
                    self.mode = Mode::Subclass {
                        class: *class,
                        text: String::new(),
                    };
                    return Vec::new();
                }
                if self.keys.action(key) == Some(Action::Quit) {
                    self.quitting = true;
                    return vec![Effect::Quit];
                }
                self.mode = Mode::Browse;
                Vec::new()
            }
            Mode::Subclass { class, mut text } => match key.code {
                PROMPT_CONFIRM => {
                    self.mode = Mode::Browse;
                    self.accept_by_hand(class, text)
                }
                PROMPT_CANCEL => {
                    self.mode = Mode::Browse;
                    Vec::new()
                }
                code => {
                    edit(&mut text, code);
                    self.mode = Mode::Subclass { class, text };
                    Vec::new()
                }
            },
            Mode::Note { mut text } => match key.code {
                PROMPT_CONFIRM => {
                    self.mode = Mode::Browse;
                    let text = crate::text::clean(text.trim());
                    if text.is_empty() {
                        return Vec::new();
                    }
                    self.record(Entry::Note {
                        target: self.pos,
                        text,
                    })
                }
                PROMPT_CANCEL => {
                    self.mode = Mode::Browse;
                    Vec::new()
                }
                code => {
                    edit(&mut text, code);
                    self.mode = Mode::Note { text };
                    Vec::new()
                }
            },
        }
    }

    fn n_candidates(&self) -> usize {
        self.loaded().map_or(0, |l| l.analysis.candidates.len())
    }

    /// True when the cursor is on another candidate than the shown one.
    pub fn cursor_off_shown(&self) -> bool {
        self.cand_cursor != self.cand_shown && self.cand_cursor < self.n_candidates()
    }

    /// Show the candidate under the cursor (dropping a nudge and the line
    /// cursor, which belonged to the one shown before); false when it was
    /// already shown.
    fn show_cursor(&mut self) -> bool {
        if self.cand_cursor == self.cand_shown {
            return false;
        }
        self.cand_shown = self.cand_cursor;
        self.nudge = None;
        self.line_cursor = None;
        true
    }

    fn act(&mut self, a: Action) -> Vec<Effect> {
        match a {
            Action::Quit => {
                self.quitting = true;
                vec![Effect::Quit]
            }
            Action::Help => {
                self.mode = Mode::Help;
                Vec::new()
            }
            Action::NextTarget => {
                if self.pos + 1 < self.targets.len() {
                    self.go_to(self.pos + 1)
                } else {
                    self.say(StatusKind::Info, "this is the last target");
                    Vec::new()
                }
            }
            Action::PrevTarget => {
                if self.pos > 0 {
                    self.go_to(self.pos - 1)
                } else {
                    self.say(StatusKind::Info, "this is the first target");
                    Vec::new()
                }
            }
            Action::NextUndecided => match self.next_undecided_after(self.pos) {
                Some(i) => self.go_to(i),
                None => {
                    self.say(StatusKind::Info, "no other target is undecided");
                    Vec::new()
                }
            },
            Action::CandidateUp | Action::CandidateDown => {
                let n = self.n_candidates();
                if n > 0 {
                    let c = if a == Action::CandidateUp {
                        self.cand_cursor.saturating_sub(1)
                    } else {
                        (self.cand_cursor + 1).min(n - 1)
                    };
                    self.cand_cursor = c;
                    if self.follow_cursor {
                        self.show_cursor();
                    }
                }
                Vec::new()
            }
            Action::ShowCandidate => {
                if self.n_candidates() == 0 {
                    self.say(StatusKind::Info, "no candidate to show");
                } else if !self.show_cursor() {
                    let rank = self.shown_candidate().map_or(0, |c| c.rank);
                    self.say(
                        StatusKind::Info,
                        format!(
                            "candidate {rank} is shown; {} accepts it",
                            self.keys.first_label(Action::Accept, self.ascii)
                        ),
                    );
                }
                Vec::new()
            }
            Action::LineNext | Action::LinePrev => {
                self.jump_line(a == Action::LineNext);
                Vec::new()
            }
            Action::Accept => self.accept(),
            Action::Reject | Action::Reobserve => {
                let verdict = if a == Action::Reject {
                    Verdict::Reject
                } else {
                    Verdict::Reobserve
                };
                self.record(Entry::Decide {
                    target: self.pos,
                    decision: Decision::bare(verdict),
                })
            }
            Action::SetClass => {
                self.mode = Mode::ClassPick;
                Vec::new()
            }
            Action::Note => {
                self.mode = Mode::Note {
                    text: self.notes[self.pos].clone().unwrap_or_default(),
                };
                Vec::new()
            }
            Action::Undo => match self.undo_stack.last() {
                Some((t, _)) => {
                    let t = *t;
                    self.record(Entry::Undo { target: t })
                }
                None => {
                    self.say(StatusKind::Info, "nothing to undo in this session");
                    Vec::new()
                }
            },
            Action::NudgeUpFine
            | Action::NudgeDownFine
            | Action::NudgeUpCoarse
            | Action::NudgeDownCoarse => {
                let step = match a {
                    Action::NudgeUpFine => FINE_STEP_KMS,
                    Action::NudgeDownFine => -FINE_STEP_KMS,
                    Action::NudgeUpCoarse => COARSE_STEP_KMS,
                    _ => -COARSE_STEP_KMS,
                };
                let Some(c) = self.shown_candidate() else {
                    self.say(StatusKind::Info, "no candidate to nudge");
                    return Vec::new();
                };
                let z = shift_z(c.z, step);
                if z <= -1.0 || !z.is_finite() {
                    return Vec::new();
                }
                self.nudge = Some(Nudge { z, candidate: None });
                vec![Effect::Remeasure {
                    target: self.pos,
                    z,
                }]
            }
            Action::NudgeReset => {
                self.nudge = None;
                self.line_cursor = None;
                Vec::new()
            }
            Action::ZoomIn | Action::ZoomOut => {
                if let Some((lo, hi)) = self.full_range() {
                    let (vlo, vhi) = self.view.range.unwrap_or((lo, hi));
                    let mid = 0.5 * (vlo + vhi);
                    let half = 0.5 * (vhi - vlo) * if a == Action::ZoomIn { 0.5 } else { 2.0 };
                    self.set_range(mid - half, mid + half);
                }
                Vec::new()
            }
            Action::PanLeft | Action::PanRight => {
                if let Some((vlo, vhi)) = self.view.range {
                    let d = 0.25 * (vhi - vlo) * if a == Action::PanLeft { -1.0 } else { 1.0 };
                    self.set_range(vlo + d, vhi + d);
                }
                Vec::new()
            }
            Action::ViewAll => {
                self.view.range = None;
                Vec::new()
            }
            Action::Smooth => {
                self.view.smoothing = (self.view.smoothing + 1) % SMOOTHING.len();
                Vec::new()
            }
            Action::ToggleErrors => {
                self.view.errors = !self.view.errors;
                Vec::new()
            }
            Action::ToggleSky => {
                self.view.sky = !self.view.sky;
                Vec::new()
            }
        }
    }

    /// The whole spectrum's wavelength range, when loaded.
    pub fn full_range(&self) -> Option<(f64, f64)> {
        let l = self.loaded()?;
        Some((*l.spectrum.wave.first()?, *l.spectrum.wave.last()?))
    }

    /// The wavelength range on screen.
    pub fn shown_range(&self) -> Option<(f64, f64)> {
        self.view.range.or_else(|| self.full_range())
    }

    fn set_range(&mut self, lo: f64, hi: f64) {
        let Some((flo, fhi)) = self.full_range() else {
            return;
        };
        let full = fhi - flo;
        let width = (hi - lo).clamp(full / 256.0, full);
        if width >= full {
            self.view.range = None;
            return;
        }
        let lo = lo.clamp(flo, fhi - width);
        self.view.range = Some((lo, lo + width));
    }

    fn jump_line(&mut self, forward: bool) {
        let Some(c) = self.shown_candidate() else {
            return;
        };
        let n = c.matched.len();
        if n == 0 {
            self.say(StatusKind::Info, "no matched lines to jump to");
            return;
        }
        let i = match (self.line_cursor, forward) {
            (None, true) => 0,
            (None, false) => n - 1,
            (Some(i), true) => (i + 1) % n,
            (Some(i), false) => (i + n - 1) % n,
        };
        self.line_cursor = Some(i);
        let w = c.matched[i].observed_wavelength;
        if let Some((flo, fhi)) = self.full_range() {
            let width = match self.view.range {
                Some((lo, hi)) => hi - lo,
                None => (fhi - flo) / 4.0,
            };
            self.set_range(w - width / 2.0, w + width / 2.0);
        }
    }

    fn accept(&mut self) -> Vec<Effect> {
        let Some(c) = self.shown_candidate() else {
            self.say(
                StatusKind::Error,
                format!(
                    "nothing to accept here: {} sets a class by hand, {} rejects",
                    self.keys.first_label(Action::SetClass, self.ascii),
                    self.keys.first_label(Action::Reject, self.ascii)
                ),
            );
            return Vec::new();
        };
        let by_hand = self.nudge.is_some();
        self.record(Entry::Decide {
            target: self.pos,
            decision: Decision {
                verdict: Verdict::Accept,
                z: Some(c.z),
                z_err: Some(c.z_err).filter(|e| e.is_finite() && *e > 0.0),
                class: Some(c.class),
                subclass: c.subclass.clone(),
                candidate_rank: Some(c.rank),
                by_hand,
                grade: (!by_hand).then_some(c.grade),
                lines: c.matched.iter().map(|m| m.line.clone()).collect(),
                bary_kms: self.bary_kms(),
            },
        })
    }

    fn accept_by_hand(&mut self, class: ObjectClass, subclass: String) -> Vec<Effect> {
        let subclass = crate::text::clean(subclass.trim());
        let c = self.shown_candidate();
        self.record(Entry::Decide {
            target: self.pos,
            decision: Decision {
                verdict: Verdict::Accept,
                z: c.as_ref().map(|c| c.z),
                z_err: c
                    .as_ref()
                    .map(|c| c.z_err)
                    .filter(|e| e.is_finite() && *e > 0.0),
                class: Some(class),
                subclass: (!subclass.is_empty()).then_some(subclass),
                candidate_rank: c.as_ref().map(|c| c.rank),
                by_hand: true,
                grade: None,
                lines: c
                    .as_ref()
                    .map(|c| c.matched.iter().map(|m| m.line.clone()).collect())
                    .unwrap_or_default(),
                bary_kms: self.bary_kms(),
            },
        })
    }
}

fn edit(text: &mut String, code: KeyCode) {
    match code {
        KeyCode::Backspace => {
            text.pop();
        }
        KeyCode::Char(c) if !c.is_control() && text.chars().count() < MAX_TEXT => text.push(c),
        _ => {}
    }
}

/// A short description of a decision, as the status line says it.
pub fn describe(d: &Decision) -> String {
    match d.verdict {
        Verdict::Reject => "rejected".into(),
        Verdict::Reobserve => "flagged for re-observation".into(),
        Verdict::Conflict => "in conflict between observers".into(),
        Verdict::Accept => {
            let mut s = String::from("accepted");
            if let Some(c) = d.class {
                s.push(' ');
                s.push_str(c.as_str());
            }
            if let Some(sc) = &d.subclass {
                s.push(' ');
                s.push_str(sc);
            }
            if let Some(z) = d.z {
                s.push_str(&format!(" z={z:.5}"));
            }
            if d.by_hand {
                s.push_str(" (by hand)");
            }
            s
        }
    }
}
