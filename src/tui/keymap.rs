//! The key tables: key handling, the status-line hints and the help overlay are all
//! generated from them, so what a key does is what the help says, on every screen.
//!
//! Contexts: [`GLOBAL`] keys work in every mode; a screen's own tables (rows of
//! `screens::SCREENS`) and [`EVERY_SCREEN`] work while a screen is shown; [`HELP`] while
//! the help is open; [`TYPING`] while a filter or a line of text is typed (any other
//! printable key is typed).

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

use super::action::{Action, Move};
use super::screens::{SCREENS, ScreenId, screen};

/// Where keys are read right now.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Context {
    /// Browsing a screen.
    Screen(ScreenId),
    /// The help overlay is open.
    Help,
    /// Typing a catalogue filter.
    Search,
    /// Typing a line for a prompt (member id, note, label, directory, a yes or no).
    Prompt,
}

/// One binding: keys, action, a short label for the status line and a description.
#[derive(Debug, Clone, Copy)]
pub struct Binding {
    /// Keys that trigger it.
    pub keys: &'static [(KeyCode, KeyModifiers)],
    /// How the keys are written in hints and help.
    pub key_label: &'static str,
    /// What happens.
    pub action: Action,
    /// Short label for the status line (empty: not shown there).
    pub hint: &'static str,
    /// Full description for the help overlay.
    pub description: &'static str,
}

const NONE: KeyModifiers = KeyModifiers::NONE;
const SHIFT: KeyModifiers = KeyModifiers::SHIFT;
const CTRL: KeyModifiers = KeyModifiers::CONTROL;

/// A plain character key (with or without Shift, which terminals report either way for
/// upper-case letters and symbols).
macro_rules! chars {
    ($($c:literal),+) => {
        &[$(
            (
                ratatui::crossterm::event::KeyCode::Char($c),
                ratatui::crossterm::event::KeyModifiers::NONE,
            ),
            (
                ratatui::crossterm::event::KeyCode::Char($c),
                ratatui::crossterm::event::KeyModifiers::SHIFT,
            )
        ),+]
    };
}
pub(crate) use chars;

/// Shorthand for a table row.
pub const fn bind(
    keys: &'static [(KeyCode, KeyModifiers)],
    key_label: &'static str,
    action: Action,
    hint: &'static str,
    description: &'static str,
) -> Binding {
    Binding {
        keys,
        key_label,
        action,
        hint,
        description,
    }
}

/// Keys that work in every mode.
pub const GLOBAL: &[Binding] = &[bind(
    &[(KeyCode::Char('c'), CTRL)],
    "Ctrl-C",
    Action::QuitNow,
    "",
    "quit at once, from anywhere (notes not saved are kept in your state directory)",
)];

/// Keys of every screen.
pub const EVERY_SCREEN: &[Binding] = &[
    bind(
        &[(KeyCode::Char('q'), NONE), (KeyCode::Esc, NONE)],
        "q/Esc",
        Action::Quit,
        "quit",
        "quit",
    ),
    bind(
        chars!('?'),
        "?",
        Action::ToggleHelp,
        "help",
        "show this help",
    ),
    bind(
        &[(KeyCode::Char('u'), NONE)],
        "u",
        Action::FindMember,
        "",
        "open a member by id",
    ),
    bind(
        &[(KeyCode::Char('w'), NONE)],
        "w",
        Action::WhatIf,
        "",
        "start a what-if profile from the open member (or from nobody); again to leave it",
    ),
    bind(
        chars!('S'),
        "S",
        Action::SaveNotesElsewhere,
        "",
        "save the curator notes to another directory (when the model's own cannot take them)",
    ),
];

/// Moving in lists, on the screens that have them.
pub const LISTS: &[Binding] = &[
    bind(
        &[(KeyCode::Tab, NONE)],
        "Tab",
        Action::FocusNext,
        "next list",
        "focus the next list",
    ),
    bind(
        &[(KeyCode::BackTab, SHIFT), (KeyCode::BackTab, NONE)],
        "Shift-Tab",
        Action::FocusPrevious,
        "",
        "focus the previous list",
    ),
    bind(
        &[(KeyCode::Down, NONE), (KeyCode::Char('j'), NONE)],
        "↓/j",
        Action::Select(Move::Next),
        "",
        "next row",
    ),
    bind(
        &[(KeyCode::Up, NONE), (KeyCode::Char('k'), NONE)],
        "↑/k",
        Action::Select(Move::Previous),
        "",
        "previous row",
    ),
    bind(
        &[(KeyCode::PageDown, NONE)],
        "PgDn",
        Action::Select(Move::PageDown),
        "",
        "one page down",
    ),
    bind(
        &[(KeyCode::PageUp, NONE)],
        "PgUp",
        Action::Select(Move::PageUp),
        "",
        "one page up",
    ),
    bind(
        &[(KeyCode::Char('g'), NONE), (KeyCode::Home, NONE)],
        "g/Home",
        Action::Select(Move::First),
        "",
        "first row",
    ),
    bind(
        &[
            (KeyCode::Char('G'), SHIFT),
            (KeyCode::Char('G'), NONE),
            (KeyCode::End, NONE),
        ],
        "G/End",
        Action::Select(Move::Last),
        "",
        "last row",
    ),
    bind(
        &[(KeyCode::Enter, NONE)],
        "Enter",
        Action::Open,
        "open",
        "open the highlighted row",
    ),
];

/// Keys while the help is open.
pub const HELP: &[Binding] = &[
    bind(
        &[
            (KeyCode::Esc, NONE),
            (KeyCode::Char('?'), NONE),
            (KeyCode::Char('?'), SHIFT),
            (KeyCode::Char('q'), NONE),
        ],
        "Esc/?/q",
        Action::ToggleHelp,
        "close",
        "close the help",
    ),
    bind(
        &[(KeyCode::Down, NONE), (KeyCode::Char('j'), NONE)],
        "↓/j",
        Action::ScrollHelp(Move::Next),
        "scroll",
        "scroll down",
    ),
    bind(
        &[(KeyCode::Up, NONE), (KeyCode::Char('k'), NONE)],
        "↑/k",
        Action::ScrollHelp(Move::Previous),
        "",
        "scroll up",
    ),
    bind(
        &[(KeyCode::PageDown, NONE), (KeyCode::Char(' '), NONE)],
        "PgDn/Space",
        Action::ScrollHelp(Move::PageDown),
        "",
        "one page down",
    ),
    bind(
        &[(KeyCode::PageUp, NONE)],
        "PgUp",
        Action::ScrollHelp(Move::PageUp),
        "",
        "one page up",
    ),
    bind(
        &[(KeyCode::Char('g'), NONE), (KeyCode::Home, NONE)],
        "g/Home",
        Action::ScrollHelp(Move::First),
        "",
        "top",
    ),
    bind(
        &[
            (KeyCode::Char('G'), SHIFT),
            (KeyCode::Char('G'), NONE),
            (KeyCode::End, NONE),
        ],
        "G/End",
        Action::ScrollHelp(Move::Last),
        "",
        "end",
    ),
];

/// Keys while typing a filter or a line of text.
pub const TYPING: &[Binding] = &[
    bind(
        &[(KeyCode::Enter, NONE)],
        "Enter",
        Action::Accept,
        "keep",
        "keep what was typed (a filter stays; a prompt is carried out)",
    ),
    bind(
        &[(KeyCode::Esc, NONE)],
        "Esc",
        Action::Cancel,
        "cancel",
        "drop what was typed",
    ),
    bind(
        &[(KeyCode::Backspace, NONE)],
        "Backspace",
        Action::DeleteChar,
        "",
        "delete the last character",
    ),
];

fn find(table: &[Binding], key: KeyEvent) -> Option<Action> {
    table
        .iter()
        .find(|b| {
            b.keys
                .iter()
                .any(|&(code, mods)| code == key.code && mods == key.modifiers)
        })
        .map(|b| b.action)
}

/// The tables that apply in `context`, most specific first (global keys last: they are
/// checked first, but listed last).
pub fn tables(context: Context) -> Vec<(&'static str, &'static [Binding])> {
    match context {
        Context::Screen(id) => {
            let here = screen(id);
            let mut tables = vec![(here.name, here.bindings)];
            if here.lists {
                tables.push(("lists", LISTS));
            }
            tables.push(("every screen", EVERY_SCREEN));
            tables.push(("anywhere", GLOBAL));
            tables
        }
        Context::Help => vec![("help", HELP), ("anywhere", GLOBAL)],
        Context::Search | Context::Prompt => vec![("typing", TYPING), ("anywhere", GLOBAL)],
    }
}

/// The action `key` stands for in `context`, if any.
pub fn action_for(context: Context, key: KeyEvent) -> Option<Action> {
    if let Some(action) = find(GLOBAL, key) {
        return Some(action);
    }
    match context {
        Context::Screen(id) => find(screen(id).bindings, key)
            .or_else(|| screen(id).lists.then(|| find(LISTS, key)).flatten())
            .or_else(|| find(EVERY_SCREEN, key))
            .or_else(|| match key.code {
                KeyCode::Char(c) if key.modifiers == NONE => SCREENS
                    .iter()
                    .find(|s| s.key == c)
                    .map(|s| Action::Show(s.id)),
                _ => None,
            }),
        Context::Help => find(HELP, key),
        Context::Search | Context::Prompt => find(TYPING, key).or(match key.code {
            KeyCode::Char(c)
                if !key
                    .modifiers
                    .intersects(KeyModifiers::CONTROL | KeyModifiers::ALT) =>
            {
                Some(Action::Type(c))
            }
            _ => None,
        }),
    }
}

/// The status line's hints in `context`: (keys, what); help and quit first, then the
/// context's own keys.
pub fn hints(context: Context) -> Vec<(&'static str, &'static str)> {
    let mut tables = tables(context);
    if let Context::Screen(_) = context {
        tables.retain(|(name, _)| *name != "every screen");
        tables.insert(0, ("every screen", EVERY_SCREEN));
    }
    let mut hints: Vec<(&'static str, &'static str)> = tables
        .into_iter()
        .flat_map(|(_, t)| t.iter())
        .filter(|b| !b.hint.is_empty())
        .map(|b| (b.key_label, b.hint))
        .collect();
    if let Context::Screen(_) = context {
        hints.push(("1-5", "screens"));
    }
    hints
}

#[cfg(test)]
mod tests {
    use super::*;

    fn all_tables() -> Vec<(String, &'static [Binding])> {
        let mut all: Vec<(String, &'static [Binding])> = vec![
            ("global".into(), GLOBAL),
            ("help".into(), HELP),
            ("typing".into(), TYPING),
        ];
        for s in SCREENS {
            let mut own: Vec<&'static [Binding]> = vec![s.bindings, EVERY_SCREEN];
            if s.lists {
                own.push(LISTS);
            }
            for t in own {
                all.push((s.name.to_owned(), t));
            }
        }
        all
    }

    #[test]
    fn every_binding_is_described_and_no_key_is_bound_twice_in_a_context() {
        let mut seen = std::collections::HashSet::new();
        for (context, table) in all_tables() {
            for b in table {
                assert!(
                    !b.description.is_empty() && !b.key_label.is_empty(),
                    "{:?}",
                    b.action
                );
                for key in b.keys {
                    assert!(
                        seen.insert((context.clone(), format!("{key:?}"))),
                        "{key:?} bound twice on {context}"
                    );
                    // Global keys win everywhere: nothing else may claim them.
                    assert!(
                        context == "global" || !GLOBAL.iter().any(|g| g.keys.contains(key)),
                        "{key:?} on {context} is a global key"
                    );
                }
            }
        }
        // Screen keys are not taken by any screen's own table.
        for s in SCREENS {
            for (context, table) in all_tables() {
                assert!(
                    table
                        .iter()
                        .all(|b| !b.keys.contains(&(KeyCode::Char(s.key), NONE))),
                    "{} is the key of the {} screen, bound on {context}",
                    s.key,
                    s.name
                );
            }
        }
    }

    #[test]
    fn keys_mean_what_their_context_says() {
        let key = |c| KeyEvent::new(c, NONE);
        let items = Context::Screen(ScreenId::Items);
        let map = Context::Screen(ScreenId::Map);
        assert_eq!(
            action_for(items, key(KeyCode::Char('j'))),
            Some(Action::Select(Move::Next))
        );
        assert_eq!(
            action_for(map, key(KeyCode::Down)),
            Some(Action::Pan(super::super::action::Direction::Down))
        );
        // Ctrl-C quits from every context.
        for context in [items, map, Context::Help, Context::Search, Context::Prompt] {
            assert_eq!(
                action_for(context, KeyEvent::new(KeyCode::Char('c'), CTRL)),
                Some(Action::QuitNow)
            );
        }
        assert_eq!(
            action_for(Context::Help, key(KeyCode::Char('q'))),
            Some(Action::ToggleHelp)
        );
        assert_eq!(
            action_for(Context::Prompt, key(KeyCode::Char('q'))),
            Some(Action::Type('q'))
        );
        assert_eq!(
            action_for(items, key(KeyCode::Char('3'))),
            Some(Action::Show(ScreenId::Map))
        );
        // The fit screen has no lists: arrows do nothing there.
        assert_eq!(
            action_for(Context::Screen(ScreenId::Fit), key(KeyCode::Down)),
            None
        );
        assert_eq!(
            action_for(items, KeyEvent::new(KeyCode::Char('Z'), SHIFT)),
            None
        );
    }
}
