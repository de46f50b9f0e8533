//! The correction desk's working state and what its commands do: the annotator's open ledger,
//! the review sitting of the selected round, the action being entered, and the poll that
//! notices other annotators' ledgers changing on disk. Every verdict goes through the
//! library's [`Ledger`]; the list through the library's [`Sitting`].

use std::path::PathBuf;
use std::sync::Arc;
use std::time::{Duration, Instant};

use crate::ledger::{FileStamp, Ledger, check_annotator, ledger_stamps};
use crate::review::brief::{StepBrief, clamp, nudge};
use crate::workflow::analysis::covers;
use crate::workflow::{Sitting, Status, Tallied, judged_rows, judgements, verdict_for};

use super::commands::FocusTarget;
use super::workbench::Workbench;

/// How often the ledgers folder is checked for changes.
pub const POLL_EVERY: Duration = Duration::from_secs(1);

/// The desk's transient state (nothing here is persisted: verdicts live in the ledger).
#[derive(Default)]
pub struct Desk {
    /// The annotator's ledger, open for appending (holds its lock).
    pub ledger: Option<Ledger>,
    /// Why the ledger could not be opened.
    pub ledger_error: Option<String>,
    /// The review list of the selected round.
    pub sitting: Option<Sitting>,
    /// The step on the desk.
    pub brief: Option<StepBrief>,
    /// The action being entered, one value per channel.
    pub draft: Vec<f32>,
    /// Text of each channel's exact-number field.
    pub exact: Vec<String>,
    /// The note for the next verdict.
    pub note: String,
    /// The channel the keys act on.
    pub active: usize,
    /// A field to give the keyboard focus to in the next frame.
    pub focus: Option<FocusTarget>,
    /// Whether the name prompt is open.
    pub asking_name: bool,
    /// The name being typed in the prompt.
    pub name_draft: String,
    /// Budget typed in the review list.
    pub budget_text: String,
    /// Stamps of the ledger files at the last poll.
    pub stamps: Vec<(PathBuf, FileStamp)>,
    /// When the ledgers were last polled.
    pub polled: Option<Instant>,
    /// Time the last verdict took: the whole save (append with fsync, re-plan, move on).
    pub last_save: Option<Duration>,
    /// Time the last verdict's append with fsync took.
    pub last_append: Option<Duration>,
    /// Go to the first open entry as soon as the list is planned (`open --review`).
    pub start_reviewing: bool,
}

impl Workbench {
    /// Applies how the window starts: the annotator (given, remembered, or from
    /// `$COUNTERSTEER_ANNOTATOR`) and whether to start reviewing at once.
    pub fn begin(&mut self, start: super::Start) {
        let env = std::env::var("COUNTERSTEER_ANNOTATOR").ok();
        let name = start
            .annotator
            .or_else(|| (!self.ui.annotator.is_empty()).then(|| self.ui.annotator.clone()))
            .or(env)
            .filter(|n| check_annotator(n).is_ok());
        if let Some(n) = name {
            self.ui.annotator = n;
        }
        if start.review {
            self.ui.review_tab = true;
            self.desk.start_reviewing = true;
        }
    }

    /// Opens the annotator's ledger in the open campaign (after the name is known).
    pub(super) fn open_ledger(&mut self) {
        self.desk.ledger = None;
        self.desk.ledger_error = None;
        let Some(root) = self.campaign.as_ref().map(|c| c.root.clone()) else {
            return;
        };
        let name = self.ui.annotator.trim().to_string();
        if name.is_empty() {
            self.desk.asking_name = true;
            return;
        }
        match Ledger::open(&root, &name) {
            Ok((l, report)) => {
                if let Some(s) = report.set_aside {
                    self.status.error(format!(
                        "a torn last line of your ledger was moved to {}",
                        s.path.display()
                    ));
                }
                self.desk.ledger = Some(l);
            }
            Err(e) => {
                let msg = format!("your ledger cannot be opened for writing: {e}");
                self.status.error(msg.clone());
                self.desk.ledger_error = Some(msg);
            }
        }
        self.refresh_sitting();
    }

    /// Takes a new annotator name (checked as a ledger name) and opens that ledger.
    pub(super) fn set_annotator(&mut self, name: String) {
        let name = name.trim().to_string();
        if let Err(e) = check_annotator(&name) {
            self.status.error(e.to_string());
            return;
        }
        self.desk.asking_name = false;
        self.ui.annotator = name;
        self.open_ledger();
    }

    /// Builds the review sitting of the selected round from its scores: over the list
    /// `countersteer plan` saved when it is fresh, else planned with the window's budget.
    pub(super) fn start_sitting(&mut self) {
        self.begin_sitting(true);
    }

    fn begin_sitting(&mut self, prefer_saved: bool) {
        let (Some(round), Some(c)) = (self.ui.round, self.campaign.clone()) else {
            return;
        };
        let (Some(sig), Some(r)) = (self.signals.current.clone(), c.round(round)) else {
            return;
        };
        if sig.round != round || !covers(&sig.scores, &r.steps) {
            return;
        }
        let (budget, source) = (self.ui.budget.max(1), &sig.source);
        let saved = prefer_saved.then_some(source);
        let sitting = Sitting::open(&c.root, &r.steps, &sig.scores, round, saved, budget);
        self.desk.budget_text = sitting.budget.to_string();
        self.desk.sitting = Some(sitting);
        self.refresh_sitting();
        if std::mem::take(&mut self.desk.start_reviewing) {
            // The list's first open entry, even when it is the step already selected (a
            // round opens on its first episode's first step, often the top onset).
            self.go_open(false);
        }
    }

    /// Re-plans the list from the ledgers (after a verdict, an undo or a ledger change).
    pub(super) fn refresh_sitting(&mut self) {
        let (Some(c), Some(sig)) = (self.campaign.clone(), self.signals.current.clone()) else {
            return;
        };
        let Some(sitting) = self.desk.sitting.as_mut() else {
            return;
        };
        let Some(r) = c
            .round(sitting.round)
            .filter(|_| sig.round == sitting.round)
        else {
            return;
        };
        let own = self
            .desk
            .ledger
            .as_ref()
            .map(|l| judgements(&r.steps, r.number, l.records()))
            .unwrap_or_default();
        let me = self.ui.annotator.as_str();
        let others = self.tally.as_ref().map_or(Vec::new(), |t| {
            judged_rows(&r.steps, r.number, &t.ledgers, Some(me))
        });
        sitting.update(&r.steps, &sig.scores, &own, &others);
    }

    /// Brings the desk to the step under the playhead (a new step gets the suggestion).
    pub(super) fn sync_desk(&mut self) {
        let (Some(c), Some(round), Some(row)) =
            (self.campaign.clone(), self.ui.round, self.current_row())
        else {
            self.desk.brief = None;
            return;
        };
        let scores = self.signals.for_round(round).map(|s| &s.scores);
        let fresh = self.desk.brief.as_ref().is_none_or(|b| {
            b.round != round || b.row != row || b.novelty.is_some() != scores.is_some()
        });
        if !fresh {
            return;
        }
        self.desk.brief = StepBrief::of(&c, round, row, scores);
        let Some(b) = &self.desk.brief else { return };
        let standing = self.own_standing_action(&c);
        self.desk.draft = standing.unwrap_or_else(|| b.suggestion());
        self.desk.exact = self.desk.draft.iter().map(|&v| exact_text(v)).collect();
        self.desk.active = self.desk.active.min(b.channels.len().saturating_sub(1));
    }

    fn own_standing_action(&self, c: &crate::campaign::Campaign) -> Option<Vec<f32>> {
        let b = self.desk.brief.as_ref()?;
        let r = self
            .desk
            .ledger
            .as_ref()?
            .standing(b.round, &b.episode, b.t)?;
        r.correction()?.verdict.action_vector(c.spec())?.ok()
    }

    /// Appends a verdict on the step on the desk to the ledger, re-plans and moves on.
    pub(super) fn give_verdict(&mut self, kind: Status) {
        let started = Instant::now();
        let Some(c) = self.campaign.clone() else {
            return;
        };
        let Some(b) = self.desk.brief.clone() else {
            self.status.info("no step on the desk".into());
            return;
        };
        let verdict = verdict_for(kind, c.spec(), &self.desk.draft);
        let Some(ledger) = self.desk.ledger.as_mut() else {
            self.no_ledger();
            return;
        };
        let appended = ledger.append(b.correction(verdict, &self.desk.note));
        self.desk.last_append = Some(started.elapsed());
        match appended {
            Ok(r) => {
                self.status.info(format!(
                    "saved #{} ({}) for {} t = {}",
                    r.seq,
                    kind.as_str(),
                    b.episode,
                    b.t
                ));
                self.desk.note.clear();
                self.refresh_sitting();
                self.go_next_open();
            }
            Err(e) => self.status.error(format!("not saved: {e}")),
        }
        self.desk.last_save = Some(started.elapsed());
    }

    fn no_ledger(&mut self) {
        let why = self
            .desk
            .ledger_error
            .clone()
            .unwrap_or_else(|| "no annotator name yet".into());
        self.status.error(format!("not saved: {why}"));
        if self.ui.annotator.is_empty() {
            self.desk.asking_name = true;
        }
    }

    /// Retracts the annotator's latest standing correction and goes back to its step.
    pub(super) fn undo(&mut self) {
        let Some(ledger) = self.desk.ledger.as_mut() else {
            self.no_ledger();
            return;
        };
        let last = ledger.last_standing().map(|(seq, c)| (seq, c.clone()));
        let Some((seq, c)) = last else {
            self.status.info("nothing to undo".into());
            return;
        };
        match ledger.retract(seq) {
            Ok(r) => {
                self.status.info(format!(
                    "retracted #{seq} (record #{}): {} t = {} is open again",
                    r.seq, c.episode, c.t
                ));
                self.refresh_sitting();
                let row = self
                    .campaign
                    .as_ref()
                    .and_then(|k| k.round(c.round))
                    .and_then(|r| r.steps.find(&c.episode, c.t));
                if let (Some(row), true) = (row, self.ui.round == Some(c.round)) {
                    self.go_to_row(row);
                }
            }
            Err(e) => self.status.error(format!("undo failed: {e}")),
        }
    }

    /// Moves the playhead to the highest-ranked open entry other than the step on the desk.
    pub(super) fn go_next_open(&mut self) {
        self.go_open(true);
    }

    /// Puts the highest-ranked open entry on the desk; with `move_on`, one that is not the
    /// step already there.
    fn go_open(&mut self, move_on: bool) {
        let here = if move_on { self.current_row() } else { None };
        let next = self
            .desk
            .sitting
            .as_ref()
            .and_then(|s| s.next_open(here))
            .map(|e| e.row);
        match next {
            Some(row) => self.go_to_row(row),
            None if self.desk.sitting.is_some() => self
                .status
                .info("the review list has no open entry left".into()),
            None => self
                .status
                .info("no review list yet: it appears once the round is scored".into()),
        }
    }

    /// Selects the episode of a row and puts the playhead on it; the desk follows.
    pub(super) fn go_to_row(&mut self, row: usize) {
        let Some(t) = self.table() else { return };
        if row >= t.len() {
            return;
        }
        let e = t.episode_of(row);
        let (name, start) = (t.episodes[e].name.clone(), t.episodes[e].start);
        self.ui.episode = Some(name);
        self.ui.step = row - start;
        self.playback.pause();
        self.sync_desk();
    }

    /// Sets a channel's value in the desk (kept within bounds).
    pub(super) fn set_value(&mut self, channel: usize, v: f32) {
        let Some(ch) = self
            .desk
            .brief
            .as_ref()
            .and_then(|b| b.channels.get(channel))
        else {
            return;
        };
        let v = clamp(&ch.channel, v);
        if let Some(d) = self.desk.draft.get_mut(channel) {
            *d = v;
        }
        if let Some(t) = self.desk.exact.get_mut(channel) {
            *t = exact_text(v);
        }
        self.desk.active = channel;
    }

    /// Moves the active channel's value by keyboard steps.
    pub(super) fn nudge_active(&mut self, steps: i32) {
        let i = self.desk.active;
        let Some(ch) = self.desk.brief.as_ref().and_then(|b| b.channels.get(i)) else {
            return;
        };
        let v = nudge(
            &ch.channel,
            self.desk.draft.get(i).copied().unwrap_or(0.0),
            steps,
        );
        self.set_value(i, v);
    }

    /// Picks choice `k` of the active channel when it is a discrete channel with that many
    /// choices; says why not otherwise.
    pub(super) fn choose_active(&mut self, k: usize) {
        let i = self.desk.active;
        let Some(ch) = self.desk.brief.as_ref().and_then(|b| b.channels.get(i)) else {
            return;
        };
        match &ch.channel.kind {
            crate::campaign::ChannelKind::Discrete { choices } if k < choices.len() => {
                self.set_value(i, k as f32);
            }
            crate::campaign::ChannelKind::Discrete { choices } => self.status.info(format!(
                "`{}` has {} choices; key {} picks none",
                ch.channel.name,
                choices.len(),
                k + 1
            )),
            crate::campaign::ChannelKind::Continuous { .. } => self.status.info(format!(
                "`{}` is continuous: digits pick choices of choice channels (C moves between channels)",
                ch.channel.name
            )),
        }
    }

    /// Makes another channel the active one.
    pub(super) fn cycle_channel(&mut self, d: i32) {
        let n = self.desk.brief.as_ref().map_or(0, |b| b.channels.len()) as i32;
        if n > 0 {
            self.desk.active = (self.desk.active as i32 + d).rem_euclid(n) as usize;
        }
    }

    /// Replaces the whole draft (suggestion or learner's action).
    pub(super) fn take(&mut self, learner: bool) {
        let Some(b) = &self.desk.brief else { return };
        let v: Vec<f32> = if learner {
            b.channels
                .iter()
                .map(|c| clamp(&c.channel, c.learner))
                .collect()
        } else {
            b.suggestion()
        };
        for (i, x) in v.into_iter().enumerate() {
            let keep = self.desk.active;
            self.set_value(i, x);
            self.desk.active = keep;
        }
    }

    /// Plans the list again with the budget typed in the list.
    pub(super) fn replan(&mut self) {
        match self.desk.budget_text.trim().parse::<usize>() {
            Ok(b) if b >= 1 => {
                self.ui.budget = b;
                self.begin_sitting(false);
                self.status
                    .info(format!("review list planned again for {b} entries"));
            }
            _ => self.status.error(format!(
                "budget `{}`: needs a whole number of at least 1",
                self.desk.budget_text
            )),
        }
    }

    /// Checks the ledger files about once a second; a change starts a new tally.
    pub(super) fn poll_ledgers(&mut self) {
        if self.desk.polled.is_some_and(|t| t.elapsed() < POLL_EVERY) {
            return;
        }
        self.desk.polled = Some(Instant::now());
        let Some(c) = self.campaign.clone() else {
            return;
        };
        let stamps = ledger_stamps(&c.root);
        if stamps == self.desk.stamps {
            return;
        }
        self.desk.stamps = stamps;
        self.work
            .tally
            .start("tally", "reading the ledgers", move |_| {
                crate::workflow::tally_campaign(&c).map_err(|e| e.to_string())
            });
    }

    /// Takes a new tally (from the poll) and re-plans.
    pub(super) fn on_tally(&mut self, t: Result<Tallied, String>) {
        match t {
            Ok(t) => {
                self.tally = Some(t);
                self.refresh_sitting();
            }
            Err(e) => self.status.error(format!("ledgers: {e}")),
        }
    }

    /// The open campaign, shared.
    pub(super) fn campaign_arc(&self) -> Option<Arc<crate::campaign::Campaign>> {
        self.campaign.clone()
    }
}

/// A channel value as the exact-number field shows it (4 decimals; what is saved is the
/// value itself).
pub fn exact_text(v: f32) -> String {
    format!("{v:.4}")
}
