//! The workbench's keyboard map: one table, read both by the input handler and by the help
//! overlay, so what the overlay lists is what the keys do.

use egui::{Key, Modifiers};

use super::commands::Command;

/// One key binding.
pub struct Binding {
    /// The key.
    pub key: Key,
    /// Modifiers that must be held.
    pub modifiers: Modifiers,
    /// How the overlay names the keys.
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
