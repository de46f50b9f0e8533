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

/// Playhead jump for Shift + arrow.
pub const BIG_STEP: i64 = 20;

/// Keyboard steps of Shift + J / L.
pub const BIG_NUDGE: i32 = 5;

/// Every binding, in the order the help overlay lists them.
pub const BINDINGS: &[Binding] = &[
    bind(Key::Space, NONE, "Space", "play / pause", || {
        Command::TogglePlay
    }),
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
        Key::ArrowDown,
        NONE,
        "Down",
        "next episode in the shelf",
        || Command::ShelfMove(1),
    ),
    bind(
        Key::ArrowUp,
        NONE,
        "Up",
        "previous episode in the shelf",
        || Command::ShelfMove(-1),
    ),
    bind(Key::CloseBracket, NONE, "]", "play faster", || {
        Command::Speed(true)
    }),
    bind(Key::OpenBracket, NONE, "[", "play slower", || {
        Command::Speed(false)
    }),
    bind(
        Key::O,
        Modifiers::COMMAND,
        "Ctrl O",
        "open a campaign folder",
        || Command::PickFolder,
    ),
    bind(
        Key::Enter,
        NONE,
        "Enter",
        "save the desk's action as a correction, go to the next open entry",
        || Command::SaveAction,
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
    bind(Key::C, NONE, "C", "next action channel", || {
        Command::CycleChannel(1)
    }),
    bind(Key::C, SHIFT, "Shift C", "previous action channel", || {
        Command::CycleChannel(-1)
    }),
    bind(
        Key::L,
        NONE,
        "L",
        "raise the channel's value (1/50 of its range, or the next choice)",
        || Command::Nudge(1),
    ),
    bind(
        Key::J,
        NONE,
        "J",
        "lower the channel's value (1/50 of its range, or the previous choice)",
        || Command::Nudge(-1),
    ),
    bind(
        Key::L,
        SHIFT,
        "Shift L",
        "raise the channel's value by 1/10 of its range",
        || Command::Nudge(BIG_NUDGE),
    ),
    bind(
        Key::J,
        SHIFT,
        "Shift J",
        "lower the channel's value by 1/10 of its range",
        || Command::Nudge(-BIG_NUDGE),
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
    bind(
        Key::G,
        NONE,
        "G",
        "take the suggested action (experts nearby)",
        || Command::TakeSuggestion,
    ),
    bind(Key::K, NONE, "K", "take the learner's action", || {
        Command::TakeLearner
    }),
    bind(
        Key::E,
        NONE,
        "E",
        "type the channel's exact value (Enter to leave the field)",
        || Command::Focus(FocusTarget::Exact),
    ),
    bind(
        Key::M,
        NONE,
        "M",
        "write a note for the next verdict",
        || Command::Focus(FocusTarget::Note),
    ),
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
        Key::P,
        NONE,
        "P",
        "plan the review list again with the budget",
        || Command::Replan,
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
