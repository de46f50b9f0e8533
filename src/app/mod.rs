//! The desktop workbench (eframe/egui): the only part of the crate that knows about a window.
//!
//! One file per region ([`bar`], [`shelf`], [`review_list`], [`map`], [`strip`], [`desk`],
//! [`status`], [`help`], [`export_view`]); the
//! persisted UI state ([`state`]) is kept apart from the domain data, which background jobs
//! ([`jobs`]) load, project and score. Regions push [`commands::Command`]s that the
//! [`Workbench`] applies at the end of each frame.

pub mod annotator;
mod apply;
pub mod bar;
pub mod commands;
pub mod desk;
pub mod desk_state;
pub mod export_view;
pub mod frame_view;
pub mod help;
pub mod jobs;
pub mod keys;
pub mod map;
pub mod playback;
pub mod review_list;
pub mod series;
pub mod shelf;
pub mod signals;
pub mod state;
pub mod status;
pub mod strip;
pub mod texts;
pub mod theme;
pub mod trend_view;
pub mod views;
pub mod workbench;

use std::path::{Path, PathBuf};

pub use state::UiState;
pub use workbench::{DrawOptions, Workbench};

/// Folder name of the demo campaign.
pub const DEMO_DIR: &str = "demo-data";

/// Where the first run writes the demo campaign: the platform's data folder
/// (`$XDG_DATA_HOME/countersteer/demo-data`, else `~/.local/share/countersteer/demo-data` on
/// Linux and other Unix; `~/Library/Application Support/countersteer/demo-data` on macOS;
/// `%APPDATA%\countersteer\demo-data` on Windows), never the working folder, which is the home
/// folder when the window is started from a desktop launcher. `env` looks up a variable.
pub fn demo_home_from(env: impl Fn(&str) -> Option<std::ffi::OsString>) -> Option<PathBuf> {
    let absolute = |v: Option<std::ffi::OsString>| v.map(PathBuf::from).filter(|p| p.is_absolute());
    let base = if cfg!(windows) {
        absolute(env("APPDATA"))
    } else if cfg!(target_os = "macos") {
        absolute(env("HOME")).map(|h| h.join("Library/Application Support"))
    } else {
        absolute(env("XDG_DATA_HOME"))
            .or_else(|| absolute(env("HOME")).map(|h| h.join(".local/share")))
    }?;
    Some(base.join("countersteer").join(DEMO_DIR))
}

/// [`demo_home_from`] with this process's environment, else `demo-data/` in the working folder
/// when no data folder can be named.
pub fn demo_home() -> PathBuf {
    demo_home_from(|k| std::env::var_os(k)).unwrap_or_else(|| PathBuf::from(DEMO_DIR))
}

/// The demo campaign folder, if one can be found: in the data folder ([`demo_home`]), else
/// `demo-data/` in the working folder, else beside the source tree the program was built from.
pub fn demo_campaign() -> Option<PathBuf> {
    let here = PathBuf::from(DEMO_DIR);
    let built = Path::new(env!("CARGO_MANIFEST_DIR")).join(DEMO_DIR);
    [demo_home(), here, built]
        .into_iter()
        .find(|p| p.join(crate::campaign::folder::CAMPAIGN_FILE).is_file())
}

/// Which campaign a starting window opens: the one asked for, else the last one, else the demo
/// (`None`: no demo campaign exists yet; the window writes one into [`demo_home`]).
pub fn startup_campaign(asked: Option<&Path>, remembered: &UiState) -> Option<PathBuf> {
    asked
        .map(Path::to_path_buf)
        .or_else(|| remembered.campaign.clone())
        .or_else(demo_campaign)
}

/// Why the window could not run.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// No display to open a window on.
    #[error("no display to open the workbench on ({0})")]
    NoDisplay(String),
    /// Any other failure of the window system.
    #[error("the workbench window failed: {0}")]
    Window(String),
}

struct App {
    wb: Workbench,
}

impl eframe::App for App {
    fn ui(&mut self, ui: &mut egui::Ui, _frame: &mut eframe::Frame) {
        self.wb.show(ui);
    }

    fn save(&mut self, storage: &mut dyn eframe::Storage) {
        eframe::set_value(storage, state::STORAGE_KEY, &self.wb.ui);
    }
}

/// How a window starts, beyond the campaign it opens.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Start {
    /// Annotator for this session (else the remembered one, then `$COUNTERSTEER_ANNOTATOR`).
    pub annotator: Option<String>,
    /// Show the review list and put its first open entry on the desk once it is planned.
    pub review: bool,
}

/// Opens the workbench window and runs it until closed. `open` is a campaign folder to open
/// instead of the remembered or demo one.
pub fn run(open: Option<PathBuf>, start: Start) -> Result<(), RunError> {
    let no_display =
        std::env::var_os("DISPLAY").is_none() && std::env::var_os("WAYLAND_DISPLAY").is_none();
    if no_display && cfg!(target_os = "linux") {
        return Err(RunError::NoDisplay(
            "neither DISPLAY nor WAYLAND_DISPLAY is set".into(),
        ));
    }
    let options = eframe::NativeOptions {
        renderer: eframe::Renderer::Glow,
        viewport: egui::ViewportBuilder::default()
            .with_title(texts::TITLE)
            .with_inner_size([1280.0, 800.0])
            .with_min_inner_size([720.0, 480.0]),
        ..Default::default()
    };
    eframe::run_native(
        texts::TITLE,
        options,
        Box::new(move |cc| {
            theme::apply(&cc.egui_ctx);
            let ui: UiState = cc
                .storage
                .and_then(|s| eframe::get_value(s, state::STORAGE_KEY))
                .unwrap_or_default();
            let mut wb = Workbench::new(ui);
            wb.begin(start);
            match startup_campaign(open.as_deref(), &wb.ui) {
                Some(dir) => wb.open(&dir),
                None => wb.open_demo(&demo_home()),
            }
            Ok(Box::new(App { wb }))
        }),
    )
    .map_err(|e| {
        let msg = e.to_string();
        if msg.contains("DISPLAY") || msg.to_lowercase().contains("display") {
            RunError::NoDisplay(msg)
        } else {
            RunError::Window(msg)
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn startup_prefers_the_asked_folder_then_the_last_one() {
        let mut remembered = UiState::default();
        remembered.remember_campaign(Path::new("/data/last"));
        let asked = startup_campaign(Some(Path::new("/data/asked")), &remembered);
        assert_eq!(asked.as_deref(), Some(Path::new("/data/asked")));
        let last = startup_campaign(None, &remembered);
        assert_eq!(last.as_deref(), Some(Path::new("/data/last")));
        // First run: whatever demo campaign can be found (none in a bare checkout).
        assert_eq!(startup_campaign(None, &UiState::default()), demo_campaign());
    }

    fn env<'a>(vars: &'a [(&'a str, &'a str)]) -> impl Fn(&str) -> Option<std::ffi::OsString> + 'a {
        move |k| vars.iter().find(|(n, _)| *n == k).map(|(_, v)| v.into())
    }

    // The XDG Base Directory Specification (version 0.8): $XDG_DATA_HOME, when set to an
    // absolute path, else $HOME/.local/share; a relative value is to be ignored.
    #[cfg(all(unix, not(target_os = "macos")))]
    #[test]
    fn the_demo_goes_to_the_xdg_data_folder() {
        let both = [("XDG_DATA_HOME", "/d/share"), ("HOME", "/h/ann")];
        assert_eq!(
            demo_home_from(env(&both)),
            Some(PathBuf::from("/d/share/countersteer/demo-data"))
        );
        let relative = [("XDG_DATA_HOME", "share"), ("HOME", "/h/ann")];
        assert_eq!(
            demo_home_from(env(&relative)),
            Some(PathBuf::from("/h/ann/.local/share/countersteer/demo-data"))
        );
        assert_eq!(demo_home_from(env(&[])), None);
    }

    #[test]
    fn a_dialog_that_answers_at_once_never_opened() {
        use std::time::Duration;
        assert!(workbench::dialog_never_opened(Duration::from_millis(5)));
        assert!(!workbench::dialog_never_opened(Duration::from_secs(2)));
    }
}
