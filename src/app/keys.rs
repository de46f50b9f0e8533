//! The workbench's keyboard map: one table, read both by the input handler and by the help
//! overlay, so what the overlay lists is what the keys do.

use egui::{Key, Modifiers};

use super::commands::{Command, FocusTarget};

/// One key binding.
pub struct Binding {
    /// The key.
    pub key: Key,
    /// Modifiers that must be held.
    pub modifiers: Modifiers,
    /// How the overlay names the keys; empty for a key listed with the binding before it.
    pub keys: &'static str,
    /// What it does, in words.
    pub does: &'static str,
    /// The command it issues.
    pub command: fn() -> Command,
}

const fn bind(
    key: Key,
    modifiers: Modifiers,
    keys: &'static str,
    does: &'static str,
    command: fn() -> Command,
) -> Binding {
    Binding {
        key,
        modifiers,
        keys,
        does,
        command,
    }
}

const NONE: Modifiers = Modifiers::NONE;
const SHIFT: Modifiers = Modifiers::SHIFT;

/// Playhead jump for Shift + Left / Right.
pub const BIG_STEP: i64 = 20;

/// Keyboard steps of Shift + Up / Down.
pub const BIG_NUDGE: i32 = 5;

/// Every binding, in the order the help overlay lists them: the desk's work first (enter a
/// value, take the suggestion, save, go on to the next open entry), then moving through the
/// round, then the rest. The arrows serve the desk: Up / Down set the active channel's value,
/// Left / Right move the playhead through the step's context; episodes change only with
/// Page Up / Page Down, and playback (P) is a side matter at the desk.
pub const BINDINGS: &[Binding] = &[
    bind(
        Key::Enter,
        NONE,
        "Enter",
        "save the desk's action as a correction, go to the next open entry",
        || Command::SaveAction,
    ),
    bind(
        Key::Enter,
        SHIFT,
        "Shift Enter",
        "take the suggested action and save it, go to the next open entry",
        || Command::SaveSuggestion,
    ),
    bind(
        Key::ArrowUp,
        NONE,
        "Up",
        "raise the channel's value (1/50 of its range, or the next choice)",
        || Command::Nudge(1),
    ),
    bind(
        Key::ArrowDown,
        NONE,
        "Down",
        "lower the channel's value (1/50 of its range, or the previous choice)",
        || Command::Nudge(-1),
    ),
    bind(
        Key::ArrowUp,
        SHIFT,
        "Shift Up",
        "raise the channel's value by 1/10 of its range",
        || Command::Nudge(BIG_NUDGE),
    ),
    bind(
        Key::ArrowDown,
        SHIFT,
        "Shift Down",
        "lower the channel's value by 1/10 of its range",
        || Command::Nudge(-BIG_NUDGE),
    ),
    bind(
        Key::E,
        NONE,
        "E",
        "enter the channel's exact value (Enter to leave the field)",
        || Command::Focus(FocusTarget::Exact),
    ),
    bind(
        Key::Num1,
        NONE,
        "1 ... 9",
        "pick the active choice channel's 1st ... 9th choice",
        || Command::Choose(0),
    ),
    bind(Key::Num2, NONE, "", "", || Command::Choose(1)),
    bind(Key::Num3, NONE, "", "", || Command::Choose(2)),
    bind(Key::Num4, NONE, "", "", || Command::Choose(3)),
    bind(Key::Num5, NONE, "", "", || Command::Choose(4)),
    bind(Key::Num6, NONE, "", "", || Command::Choose(5)),
    bind(Key::Num7, NONE, "", "", || Command::Choose(6)),
    bind(Key::Num8, NONE, "", "", || Command::Choose(7)),
    bind(Key::Num9, NONE, "", "", || Command::Choose(8)),
    bind(Key::C, NONE, "C", "next action channel", || {
        Command::CycleChannel(1)
    }),
    bind(Key::C, SHIFT, "Shift C", "previous action channel", || {
        Command::CycleChannel(-1)
    }),
    bind(
        Key::A,
        NONE,
        "A",
        "put the suggested action (experts nearby) in the desk",
        || Command::TakeSuggestion,
    ),
    bind(
        Key::L,
        NONE,
        "L",
        "put the learner's action in the desk",
        || Command::TakeLearner,
    ),
    bind(
        Key::S,
        NONE,
        "S",
        "skip this step (no judgement), go to the next open entry",
        || Command::Skip,
    ),
    bind(
        Key::U,
        NONE,
        "U",
        "this step is unrecoverable, go to the next open entry",
        || Command::Unrecoverable,
    ),
    bind(
        Key::M,
        NONE,
        "M",
        "write a note for the next verdict",
        || Command::Focus(FocusTarget::Note),
    ),
    bind(
        Key::Z,
        Modifiers::COMMAND,
        "Ctrl Z",
        "undo: retract your latest verdict and go back to its step",
        || Command::Undo,
    ),
    bind(
        Key::N,
        NONE,
        "N",
        "next open entry of the review list",
        || Command::NextOpen,
    ),
    bind(Key::ArrowRight, NONE, "Right", "one step later", || {
        Command::StepBy(1)
    }),
    bind(Key::ArrowLeft, NONE, "Left", "one step earlier", || {
        Command::StepBy(-1)
    }),
    bind(
        Key::ArrowRight,
        SHIFT,
        "Shift Right",
        "20 steps later",
        || Command::StepBy(BIG_STEP),
    ),
    bind(
        Key::ArrowLeft,
        SHIFT,
        "Shift Left",
        "20 steps earlier",
        || Command::StepBy(-BIG_STEP),
    ),
    bind(Key::Home, NONE, "Home", "first step", || {
        Command::StepToEnd(false)
    }),
    bind(Key::End, NONE, "End", "last step", || {
        Command::StepToEnd(true)
    }),
    bind(Key::X, NONE, "X", "next excursion onset", || {
        Command::NextExcursion(true)
    }),
    bind(Key::X, SHIFT, "Shift X", "previous excursion onset", || {
        Command::NextExcursion(false)
    }),
    bind(
        Key::PageDown,
        NONE,
        "Page Down",
        "next episode in the shelf",
        || Command::ShelfMove(1),
    ),
    bind(
        Key::PageUp,
        NONE,
        "Page Up",
        "previous episode in the shelf",
        || Command::ShelfMove(-1),
    ),
    bind(Key::P, NONE, "P", "play the episode / hold", || {
        Command::TogglePlay
    }),
    bind(Key::V, NONE, "V", "play faster", || Command::Speed(true)),
    bind(Key::V, SHIFT, "Shift V", "play slower", || {
        Command::Speed(false)
    }),
    bind(
        Key::F2,
        NONE,
        "F2",
        "switch between episodes and the review list",
        || Command::ToggleShelfTab,
    ),
    bind(
        Key::B,
        NONE,
        "B",
        "type a new budget for the review list",
        || Command::Focus(FocusTarget::Budget),
    ),
    bind(
        Key::R,
        NONE,
        "R",
        "plan the review list again with the budget",
        || Command::Replan,
    ),
    bind(
        Key::O,
        Modifiers::COMMAND,
        "Ctrl O",
        "open a campaign folder",
        || Command::PickFolder,
    ),
    bind(
        Key::E,
        Modifiers::COMMAND,
        "Ctrl E",
        "export the merged set",
        || Command::ToggleExport,
    ),
    bind(Key::F1, NONE, "F1", "show / hide this help", || {
        Command::ToggleHelp
    }),
];

/// How the table names the key of `command` (the first binding that issues it), for buttons
/// that show their key.
pub fn key_of(command: &Command) -> Option<&'static str> {
    BINDINGS
        .iter()
        .find(|b| !b.keys.is_empty() && (b.command)() == *command)
        .map(|b| b.keys)
}

/// A button caption with its key from the table: `Skip (S)`.
pub fn caption(text: &str, command: &Command) -> String {
    match key_of(command) {
        Some(k) => format!("{text} ({k})"),
        None => text.to_string(),
    }
}

/// Commands for the keys pressed this frame. Nothing is taken while a text field has focus.
pub fn commands(ctx: &egui::Context) -> Vec<Command> {
    if ctx.egui_wants_keyboard_input() {
        return Vec::new();
    }
    // Bindings with modifiers first: egui ignores an extra Shift when matching a plain key.
    let with_mods = BINDINGS.iter().filter(|b| !b.modifiers.is_none());
    let ordered = with_mods.chain(BINDINGS.iter().filter(|b| b.modifiers.is_none()));
    ctx.input_mut(|i| {
        ordered
            .filter(|b| i.consume_key(b.modifiers, b.key))
            .map(|b| (b.command)())
            .collect()
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn captions_take_their_key_from_the_table() {
        assert_eq!(caption("Skip", &Command::Skip), "Skip (S)");
        assert_eq!(
            caption("Save suggested", &Command::SaveSuggestion),
            "Save suggested (Shift Enter)"
        );
        assert_eq!(caption("Cancel", &Command::CancelWork), "Cancel");
    }

    /// No key and modifier pair is bound twice (one table, one meaning per key).
    #[test]
    fn every_key_has_one_meaning() {
        for (i, a) in BINDINGS.iter().enumerate() {
            for b in &BINDINGS[i + 1..] {
                assert!(
                    !(a.key == b.key && a.modifiers == b.modifiers),
                    "{:?} {:?} bound twice",
                    a.modifiers,
                    a.key
                );
            }
        }
    }

    /// The scheme is our own: none of the key lines of a dataset viewer (Space play/pause,
    /// Up/Down for episodes), a teleoperation or video-shuttle row (J/K/L) or a media
    /// player's speed keys ([ and ]).
    #[test]
    fn the_scheme_keeps_clear_of_other_programs_key_lines() {
        for key in [
            Key::Space,
            Key::J,
            Key::K,
            Key::OpenBracket,
            Key::CloseBracket,
        ] {
            assert!(BINDINGS.iter().all(|b| b.key != key), "{key:?} is bound");
        }
        for b in BINDINGS
            .iter()
            .filter(|b| matches!(b.key, Key::ArrowUp | Key::ArrowDown))
        {
            assert!(matches!((b.command)(), Command::Nudge(_)), "{}", b.keys);
        }
    }
}
