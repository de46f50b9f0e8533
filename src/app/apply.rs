//! How the workbench reacts: results of background work arriving, and commands from the
//! regions and keys. Also the selection helpers the regions read.

use std::sync::Arc;

use crate::campaign::{Episode, StepTable};

use super::commands::Command;
use super::playback::next_speed;
use super::series::{EpisodeSeries, SeriesInput, SeriesKey};
use super::state::ShelfSort;
use super::views::{DemoView, RoundView, summarize};
use super::workbench::{Loaded, Workbench};

impl Workbench {
    /// The selected round's table.
    pub fn table(&self) -> Option<&StepTable> {
        Some(&self.campaign.as_ref()?.round(self.ui.round?)?.steps)
    }

    /// The selected episode's index and record.
    pub fn episode(&self) -> Option<(usize, &Episode)> {
        let t = self.table()?;
        let i = t.episode_index(self.ui.episode.as_deref()?)?;
        Some((i, &t.episodes[i]))
    }

    /// The table row under the playhead.
    pub fn current_row(&self) -> Option<usize> {
        let (_, e) = self.episode()?;
        Some(e.start + self.ui.step.min(e.len.saturating_sub(1)))
    }

    /// Episode indices in the shelf's order, after the filter.
    pub fn shelf_order(&self) -> Vec<usize> {
        let needle = self.ui.filter.to_lowercase();
        let mut v: Vec<&super::views::EpisodeSummary> = self
            .summaries
            .iter()
            .filter(|s| needle.is_empty() || s.name.to_lowercase().contains(&needle))
            .collect();
        let key = |o: Option<f32>| o.unwrap_or(f32::NEG_INFINITY);
        match self.ui.sort {
            ShelfSort::WorstNovelty => {
                v.sort_by(|a, b| key(b.peak_novelty).total_cmp(&key(a.peak_novelty)))
            }
            ShelfSort::MostFlagged => {
                v.sort_by(|a, b| key(b.flagged_share).total_cmp(&key(a.flagged_share)))
            }
            ShelfSort::MostInterventions => v.sort_by_key(|s| std::cmp::Reverse(s.interventions)),
            ShelfSort::Name => v.sort_by(|a, b| a.name.cmp(&b.name)),
        }
        v.into_iter().map(|s| s.index).collect()
    }

    pub(super) fn poll_work(&mut self) {
        if let Some(r) = self.work.load.take_result() {
            match r {
                Ok(loaded) => self.on_loaded(loaded),
                Err(()) => self
                    .status
                    .error("the loader stopped without a result".into()),
            }
        }
        if let Some(Ok(Some(view))) = self.work.demo.take_result() {
            self.demo = Some(Arc::new(view));
            self.density_texture = None;
            self.start_round_view();
        }
        if let Some(Ok(Some(view))) = self.work.round.take_result()
            && Some(view.round) == self.ui.round
        {
            self.round_view = Some(Arc::new(view));
            self.series.key = None;
        }
        match self.work.score.take_result() {
            Some(Ok(Ok(Some(scored)))) => {
                let flagged = scored.signals.flagged.iter().filter(|&&f| f).count();
                self.status.info(format!(
                    "round {}: {flagged} of {} steps flagged ({})",
                    scored.signals.round,
                    scored.signals.flagged.len(),
                    scored.source
                ));
                if scored.model.is_some() {
                    self.model = scored.model;
                }
                if Some(scored.signals.round) == self.ui.round {
                    self.set_signals(scored.signals);
                }
            }
            Some(Ok(Err(msg))) => self.status.error(format!("scoring failed: {msg}")),
            _ => {}
        }
        if let Some(Ok(t)) = self.work.tally.take_result() {
            self.on_tally(t);
        }
    }

    fn on_loaded(&mut self, l: Loaded) {
        if let Some(msg) = l.failure {
            self.status.error(msg);
            return;
        }
        self.status.set_problems(l.problems, l.more);
        let Some(c) = l.campaign else {
            let n = self.status.error_count();
            self.status.error(format!(
                "{}: {n} error(s); the campaign cannot be opened as it is",
                l.dir.display()
            ));
            return;
        };
        self.ui.remember_campaign(&l.dir);
        self.install(c);
    }

    /// Shows an already loaded campaign (projection and scoring start in the background).
    pub fn install(&mut self, c: crate::campaign::Campaign) {
        self.status.info(format!(
            "opened `{}`: {} demonstration steps, {} round(s)",
            c.file.name,
            c.demonstrations.len(),
            c.rounds.len()
        ));
        self.desk = super::desk_state::Desk {
            start_reviewing: self.desk.start_reviewing,
            ..Default::default()
        };
        self.desk.stamps = crate::ledger::ledger_stamps(&c.root);
        self.desk.polled = Some(std::time::Instant::now());
        self.tally = match crate::workflow::tally_campaign(&c) {
            Ok(t) => Some(t),
            Err(e) => {
                self.status.error(format!("ledgers: {e}"));
                None
            }
        };
        let c = Arc::new(c);
        self.campaign = Some(c.clone());
        self.open_ledger();
        (self.demo, self.round_view) = (None, None);
        self.signals = Default::default();
        self.model = None;
        self.density_texture = None;
        self.work
            .demo
            .start("project", "projecting demonstrations", move |p| {
                DemoView::build(&c, p)
            });
        let round = self.ui.round.filter(|r| {
            self.campaign
                .as_ref()
                .is_some_and(|c| c.round(*r).is_some())
        });
        let last = self
            .campaign
            .as_ref()
            .and_then(|c| c.rounds.last())
            .map(|r| r.number);
        match round.or(last) {
            Some(r) => self.select_round(r),
            None => self.refresh_round(),
        }
    }

    fn start_round_view(&mut self) {
        let (Some(c), Some(d), Some(r)) = (self.campaign.clone(), self.demo.clone(), self.ui.round)
        else {
            return;
        };
        self.work
            .round
            .start("project-round", "projecting the round", move |p| {
                RoundView::build(&c, &d, r, p)
            });
    }

    fn start_scoring(&mut self) {
        let (Some(c), Some(r)) = (self.campaign.clone(), self.ui.round) else {
            return;
        };
        let model = self.model.clone();
        let label = if model.is_some() {
            "scoring the round"
        } else {
            "indexing and scoring"
        };
        self.work.score.start("score", label, move |p| {
            super::signals::compute(&c, model, r, p)
        });
    }

    fn select_round(&mut self, r: u32) {
        let changed = self.ui.round != Some(r);
        self.ui.round = Some(r);
        if changed {
            self.desk.sitting = None;
        }
        if changed || self.round_view.is_none() {
            self.round_view = None;
            self.start_round_view();
        }
        if self.signals.for_round(r).is_none() {
            self.signals = Default::default();
            self.start_scoring();
        }
        self.refresh_round();
    }

    /// Recomputes the shelf summaries and keeps the selection valid.
    pub(super) fn refresh_round(&mut self) {
        let signals = self.ui.round.and_then(|r| self.signals.for_round(r));
        self.summaries = match self.table() {
            Some(t) => summarize(t, signals),
            None => Arc::default(),
        };
        self.series.key = None;
        if self.episode().is_none() {
            let first = self.shelf_order().first().copied();
            self.ui.episode = first.map(|i| self.summaries[i].name.clone());
            self.ui.step = 0;
        }
        self.clamp_step();
    }

    fn clamp_step(&mut self) {
        let len = self.episode().map_or(0, |(_, e)| e.len);
        self.ui.step = self.ui.step.min(len.saturating_sub(1));
    }

    /// Rebuilds the selected episode's drawing data when the selection or plot width changed.
    pub(super) fn ensure_series(&mut self) {
        let (Some((episode, _)), Some(round), Some(view)) =
            (self.episode(), self.ui.round, self.round_view.clone())
        else {
            self.series = EpisodeSeries::default();
            return;
        };
        let signals = self.signals.for_round(round);
        let strip_points = if self.draw.decimate {
            ((self.strip_width.max(64.0) * 2.0) as usize).div_ceil(256) * 256
        } else {
            0
        };
        let key = SeriesKey {
            round,
            episode,
            strip_points,
            scored: signals.is_some(),
        };
        if self.series.key == Some(key) {
            return;
        }
        let Some(table) = self.table() else { return };
        self.series = EpisodeSeries::build(&SeriesInput {
            table,
            points: &view.points,
            signals,
            key,
        });
    }

    /// Applies one command.
    pub fn apply(&mut self, c: Command) {
        match c {
            Command::Open(dir) => self.open(&dir),
            Command::PickFolder => self.pick_folder(),
            Command::CancelWork => self.cancel_work(),
            Command::SelectRound(r) => self.select_round(r),
            Command::SelectEpisode(i) => self.select_episode(i),
            Command::ShelfMove(d) => self.shelf_move(d),
            Command::SetStep(s) => self.set_step(s as i64),
            Command::StepBy(d) => self.set_step(self.ui.step as i64 + d),
            Command::StepToEnd(last) => self.set_step(if last { i64::MAX } else { 0 }),
            Command::NextExcursion(fwd) => self.next_excursion(fwd),
            Command::TogglePlay => self.toggle_play(),
            Command::Pause => self.playback.pause(),
            Command::Speed(up) => self.ui.speed = next_speed(self.ui.speed, up),
            Command::ToggleHelp => self.show_help = !self.show_help,
            Command::PutCautionAway => {
                let who = self.ui.annotator.clone();
                self.ui.caution_put_away(&who, &super::state::today());
            }
            c => self.apply_desk(c),
        }
    }

    fn apply_desk(&mut self, c: Command) {
        use crate::workflow::Status;
        match c {
            Command::SaveAction => self.give_verdict(Status::Corrected),
            Command::SaveSuggestion => {
                self.take(false);
                self.give_verdict(Status::Corrected);
            }
            Command::Skip => self.give_verdict(Status::Skipped),
            Command::Unrecoverable => self.give_verdict(Status::Unrecoverable),
            Command::Undo => self.undo(),
            Command::NextOpen => self.go_next_open(),
            Command::GoToRow(r) => self.go_to_row(r),
            Command::CycleChannel(d) => self.cycle_channel(d),
            Command::Nudge(n) => self.nudge_active(n),
            Command::Choose(k) => self.choose_active(k),
            Command::SetValue(i, v) => self.set_value(i, v),
            Command::TakeSuggestion => self.take(false),
            Command::TakeLearner => self.take(true),
            Command::Focus(f) => {
                match f {
                    super::commands::FocusTarget::Budget => self.ui.review_tab = true,
                    // A fresh field: the number typed replaces the value.
                    super::commands::FocusTarget::Exact => {
                        if let Some(t) = self.desk.exact.get_mut(self.desk.active) {
                            t.clear();
                        }
                    }
                    super::commands::FocusTarget::Note => {}
                }
                self.desk.focus = Some(f);
            }
            Command::Replan => self.replan(),
            Command::ShowReviewList(on) => self.ui.review_tab = on,
            Command::ToggleShelfTab => self.ui.review_tab = !self.ui.review_tab,
            Command::AskAnnotator => {
                self.desk.name_draft = self.ui.annotator.clone();
                self.desk.asking_name = true;
            }
            Command::SetAnnotator(name) => self.set_annotator(name),
            Command::ToggleExport => self.export.open = !self.export.open,
            Command::ToggleTrend => self.trend.toggle(),
            Command::PickExportTarget => self.pick_export_target(),
            Command::RunExport => self.run_export(),
            _ => {}
        }
    }

    fn cancel_work(&mut self) {
        let w = &mut self.work;
        w.load.cancel();
        w.demo.cancel();
        w.round.cancel();
        w.score.cancel();
        w.tally.cancel();
        w.export.cancel();
        self.status.info("background work cancelled".into());
    }

    fn select_episode(&mut self, i: usize) {
        let Some(name) = self
            .table()
            .and_then(|t| t.episodes.get(i))
            .map(|e| e.name.clone())
        else {
            return;
        };
        if self.ui.episode.as_deref() != Some(&name) {
            self.ui.episode = Some(name);
            self.ui.step = 0;
            self.playback.pause();
        }
    }

    fn shelf_move(&mut self, d: i32) {
        let order = self.shelf_order();
        let here = self
            .episode()
            .and_then(|(i, _)| order.iter().position(|&o| o == i));
        let next = match here {
            Some(p) => (p as i64 + d as i64).clamp(0, order.len() as i64 - 1) as usize,
            None => 0,
        };
        if let Some(&i) = order.get(next) {
            self.select_episode(i);
        }
    }

    fn set_step(&mut self, s: i64) {
        let len = self.episode().map_or(0, |(_, e)| e.len) as i64;
        let s = s.clamp(0, (len - 1).max(0));
        if s == len - 1 {
            self.playback.pause();
        }
        self.ui.step = s as usize;
    }

    fn toggle_play(&mut self) {
        let len = self.episode().map_or(0, |(_, e)| e.len);
        if !self.playback.playing && self.ui.step + 1 >= len {
            self.ui.step = 0;
        }
        self.playback.toggle();
    }

    fn next_excursion(&mut self, forward: bool) {
        let (Some((ep, e)), Some(row)) = (self.episode(), self.current_row()) else {
            return;
        };
        let start = e.start;
        let Some(s) = self.ui.round.and_then(|r| self.signals.for_round(r)) else {
            self.status
                .info("no scores yet: excursions appear once the round is scored".into());
            return;
        };
        let onsets = s.excursions_of(ep).map(|x| x.onset);
        let target = if forward {
            onsets.filter(|&o| o > row).min()
        } else {
            onsets.filter(|&o| o < row).max()
        };
        match target {
            Some(o) => self.ui.step = o - start,
            None => self
                .status
                .info("no further excursion in this episode".into()),
        }
    }

    fn pick_folder(&mut self) {
        let (tx, rx) = std::sync::mpsc::channel();
        let spawned = std::thread::Builder::new()
            .name("countersteer-dialog".into())
            .spawn(move || {
                let _ = tx.send(
                    rfd::FileDialog::new()
                        .set_title("Open a campaign folder")
                        .pick_folder(),
                );
            });
        match spawned {
            Ok(_) => {
                self.dialog = Some(rx);
                self.dialog_since = Some(std::time::Instant::now());
            }
            Err(e) => self.status.error(format!(
                "cannot open the folder dialog: {e}; type the path instead"
            )),
        }
    }
}
