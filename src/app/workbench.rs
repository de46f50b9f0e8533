//! The workbench: holds the UI state, the domain data handed back by background jobs, and
//! the transient caches; draws the regions each frame and applies what they ask for.

use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::sync::mpsc::Receiver;

use crate::campaign::{Campaign, LoadOptions, Problem, check_campaign};

use super::commands::Command;
use super::frame_view::FrameCache;
use super::jobs::Slot;
use super::playback::Playback;
use super::series::EpisodeSeries;
use super::signals::{RoundSignals, Signals};
use super::state::UiState;
use super::status::Status;
use super::views::{DemoView, EpisodeSummary, RoundView};

/// Result of a load job.
pub struct Loaded {
    /// The folder loaded.
    pub dir: PathBuf,
    /// The campaign, when it has no error.
    pub campaign: Option<Campaign>,
    /// Every problem found (errors and warnings).
    pub problems: Vec<Problem>,
    /// Problems beyond the per-file cap.
    pub more: usize,
    /// A folder-level failure, when the folder could not be used at all.
    pub failure: Option<String>,
}

/// Drawing switches (not persisted).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DrawOptions {
    /// Thin long series with LTTB before drawing (off only for measurement).
    pub decimate: bool,
}

impl Default for DrawOptions {
    fn default() -> Self {
        DrawOptions { decimate: true }
    }
}

/// Background work of the window, one slot per kind; starting a job replaces the old one.
#[derive(Default)]
pub struct Work {
    /// Loading a campaign.
    pub load: Slot<Loaded>,
    /// Projecting the demonstrations for the map.
    pub demo: Slot<Option<DemoView>>,
    /// Projecting the selected round.
    pub round: Slot<Option<RoundView>>,
    /// Scoring the selected round.
    pub score: Slot<Result<Option<super::signals::Scored>, String>>,
    /// Reading the ledgers again after one changed on disk.
    pub tally: Slot<Result<crate::workflow::Tallied, String>>,
    /// Exporting the merged set.
    pub export: Slot<Result<(PathBuf, crate::export::Manifest), String>>,
}

/// The desktop workbench.
pub struct Workbench {
    /// Persisted UI state.
    pub ui: UiState,
    /// Drawing switches.
    pub draw: DrawOptions,
    /// Messages and problems shown in the status area.
    pub status: Status,
    /// Whether the help overlay is open.
    pub show_help: bool,
    pub(super) campaign: Option<Arc<Campaign>>,
    pub(super) demo: Option<Arc<DemoView>>,
    pub(super) round_view: Option<Arc<RoundView>>,
    pub(super) signals: Signals,
    pub(super) model: Option<Arc<crate::novelty::NoveltyModel>>,
    pub(super) summaries: Arc<Vec<EpisodeSummary>>,
    pub(super) series: EpisodeSeries,
    pub(super) work: Work,
    pub(super) playback: Playback,
    pub(super) frames: FrameCache,
    pub(super) density_texture: Option<egui::TextureHandle>,
    pub(super) typed_path: String,
    pub(super) dialog: Option<Receiver<Option<PathBuf>>>,
    /// When the folder dialog was asked for (a dialog that answers "nothing" at once never
    /// opened: no desktop portal).
    pub(super) dialog_since: Option<std::time::Instant>,
    /// Put the keyboard on the typed path field at the next frame.
    pub(super) focus_path: bool,
    pub(super) strip_width: f32,
    /// Every annotator's corrections, aggregated when the campaign was opened and again
    /// whenever a ledger changes on disk.
    pub(super) tally: Option<crate::workflow::Tallied>,
    /// The correction desk and the review sitting.
    pub desk: super::desk_state::Desk,
    /// The export window.
    pub export: super::export_view::ExportForm,
    /// The trend window (figures per round).
    pub trend: super::trend_view::TrendView,
}

impl Workbench {
    /// Rows of a round that have at least one standing verdict, within `rows`.
    pub fn corrected_rows(
        &self,
        round: u32,
        rows: std::ops::Range<usize>,
    ) -> &[crate::consensus::StepConsensus] {
        let Some(t) = self.tally.as_ref().map(|t| &t.tally) else {
            return &[];
        };
        let lo = t
            .steps
            .partition_point(|s| (s.round, s.row) < (round, rows.start));
        let hi = t
            .steps
            .partition_point(|s| (s.round, s.row) < (round, rows.end));
        &t.steps[lo..hi]
    }

    /// A workbench with remembered UI state; nothing is loaded yet.
    pub fn new(ui: UiState) -> Self {
        Workbench {
            ui,
            draw: DrawOptions::default(),
            status: Status::default(),
            show_help: false,
            campaign: None,
            demo: None,
            round_view: None,
            signals: Signals::default(),
            model: None,
            summaries: Arc::default(),
            series: EpisodeSeries::default(),
            work: Work::default(),
            playback: Playback::default(),
            frames: FrameCache::default(),
            density_texture: None,
            typed_path: String::new(),
            dialog: None,
            dialog_since: None,
            focus_path: false,
            strip_width: 800.0,
            tally: None,
            desk: Default::default(),
            export: Default::default(),
            trend: Default::default(),
        }
    }

    /// Starts loading the campaign in `dir` on a background thread (replacing any load).
    pub fn open(&mut self, dir: &Path) {
        let dir = dir.to_path_buf();
        self.status.info(format!("opening {}", dir.display()));
        self.work
            .load
            .start("load", "loading campaign", move |p| load(dir, p));
    }

    /// Writes the demo campaign into `dir` (unless a campaign is already there) on a background
    /// thread, then opens it: a new user sees real data at once.
    pub fn open_demo(&mut self, dir: &Path) {
        let dir = dir.to_path_buf();
        self.status
            .info(format!("writing the demo campaign to {}", dir.display()));
        self.work
            .load
            .start("demo", "writing the demo campaign", move |p| {
                if !dir.join(crate::campaign::folder::CAMPAIGN_FILE).is_file() {
                    let cfg = crate::sim::DemoConfig::default();
                    if let Err(e) = crate::sim::write_demo_campaign(&dir, &cfg, p) {
                        let failure = Some(format!("cannot write the demo campaign: {e}"));
                        return Loaded {
                            dir,
                            campaign: None,
                            problems: Vec::new(),
                            more: 0,
                            failure,
                        };
                    }
                }
                load(dir, p)
            });
    }

    /// The open campaign.
    pub fn campaign(&self) -> Option<&Campaign> {
        self.campaign.as_deref()
    }

    /// Whether any background work is running.
    pub fn busy(&self) -> bool {
        let w = &self.work;
        w.load.running().is_some()
            || w.demo.running().is_some()
            || w.round.running().is_some()
            || w.score.running().is_some()
            || w.tally.running().is_some()
            || w.export.running().is_some()
    }

    /// Stops scoring (the benchmark gives its own scores; a user cancels from the bar).
    pub fn cancel_scoring(&mut self) {
        self.work.score.cancel();
    }

    /// Width (points) the strip's plots were last drawn at.
    pub fn strip_width(&self) -> f32 {
        self.strip_width
    }

    /// Whether the episode is playing.
    pub fn playing(&self) -> bool {
        self.playback.playing
    }

    /// The selected round's signals, once scored.
    pub fn round_signals(&self) -> Option<&RoundSignals> {
        self.ui.round.and_then(|r| self.signals.for_round(r))
    }

    /// Gives the selected round scores from elsewhere (tests, or a caller that scored already).
    pub fn set_signals(&mut self, signals: RoundSignals) {
        self.signals.current = Some(Arc::new(signals));
        self.refresh_round();
        self.start_sitting();
    }

    /// Draws one frame of the whole window into `ui` and applies what it asked for.
    pub fn show(&mut self, ui: &mut egui::Ui) {
        self.poll_work();
        self.poll_ledgers();
        self.poll_export();
        self.sync_desk();
        let mut cmds = super::keys::commands(ui.ctx());
        self.tick_playback(ui.ctx(), &mut cmds);
        super::bar::bar_ui(self, ui, &mut cmds);
        super::status::status_ui(self, ui, &mut cmds);
        // The desk first: it takes the full height on the right, beside the strip.
        super::desk::desk_ui(self, ui, &mut cmds);
        super::strip::strip_ui(self, ui, &mut cmds);
        super::shelf::shelf_ui(self, ui, &mut cmds);
        egui::CentralPanel::default().show(ui, |ui| super::map::centre_ui(self, ui, &mut cmds));
        super::help::help_ui(self, ui.ctx(), &mut cmds);
        super::annotator::name_prompt_ui(self, ui.ctx(), &mut cmds);
        super::export_view::export_ui(self, ui.ctx(), &mut cmds);
        super::trend_view::trend_ui(&mut self.trend, self.campaign.as_ref(), ui.ctx());
        for c in cmds {
            self.apply(c);
        }
        self.sync_desk();
        self.poll_dialog();
        let waiting = self.dialog.is_some() || self.export.dialog.is_some();
        if self.busy() || self.playback.playing || self.frames.busy() || waiting {
            ui.ctx()
                .request_repaint_after(std::time::Duration::from_millis(30));
        } else if self.campaign.is_some() {
            // Keep polling the ledgers while idle.
            ui.ctx()
                .request_repaint_after(super::desk_state::POLL_EVERY);
        }
    }

    fn tick_playback(&mut self, ctx: &egui::Context, cmds: &mut Vec<Command>) {
        let dt = ctx.input(|i| i.stable_dt) as f64;
        let step_seconds = self.campaign.as_ref().and_then(|c| c.file.step_seconds);
        let n = self.playback.advance(dt, self.ui.speed, step_seconds);
        if n > 0 {
            cmds.push(Command::StepBy(n as i64));
        }
    }

    fn poll_dialog(&mut self) {
        let Some(rx) = &self.dialog else { return };
        match rx.try_recv() {
            Ok(Some(dir)) => {
                self.dialog = None;
                self.open(&dir);
            }
            Ok(None) | Err(std::sync::mpsc::TryRecvError::Disconnected) => {
                self.dialog = None;
                let waited = self.dialog_since.map(|t| t.elapsed());
                if waited.is_some_and(dialog_never_opened) {
                    self.status.error(
                        "no folder dialog could open here (no desktop portal answered); \
                         type the folder's path in the field beside Open path"
                            .into(),
                    );
                    self.focus_path = true;
                }
            }
            Err(std::sync::mpsc::TryRecvError::Empty) => {}
        }
    }
}

/// Whether a dialog that answered "nothing" after `waited` never opened: nobody closes a
/// dialog within a quarter second, while a missing portal answers at once.
pub fn dialog_never_opened(waited: std::time::Duration) -> bool {
    waited < std::time::Duration::from_millis(250)
}

fn load(dir: PathBuf, progress: &crate::progress::Progress) -> Loaded {
    let mut out = Loaded {
        dir: dir.clone(),
        campaign: None,
        problems: Vec::new(),
        more: 0,
        failure: None,
    };
    if !dir.is_dir() {
        out.failure = Some(format!("{}: is not a folder", dir.display()));
        return out;
    }
    let report = check_campaign(&dir, &LoadOptions::default(), progress);
    if progress.is_cancelled() {
        out.failure = Some("loading cancelled".into());
        return out;
    }
    out.campaign = report.campaign;
    out.problems = report.problems;
    out.more = report.more;
    out
}
