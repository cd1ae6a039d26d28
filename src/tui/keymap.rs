//! The one key table: key handling, the status-line hints and the help overlay are all
//! generated from it.

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

use super::action::Action;

/// Where a binding applies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Context {
    /// Everywhere (checked first).
    Global,
    /// While browsing (not typing a filter).
    Browse,
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
    /// Where it applies.
    pub context: Context,
}

const NONE: KeyModifiers = KeyModifiers::NONE;
const SHIFT: KeyModifiers = KeyModifiers::SHIFT;
const CTRL: KeyModifiers = KeyModifiers::CONTROL;

/// Every binding of the explorer.
pub const BINDINGS: &[Binding] = &[
    Binding {
        keys: &[(KeyCode::Char('c'), CTRL)],
        key_label: "Ctrl-C",
        action: Action::Quit,
        hint: "",
        description: "quit at once",
        context: Context::Global,
    },
    Binding {
        keys: &[(KeyCode::Char('q'), NONE), (KeyCode::Esc, NONE)],
        key_label: "q/Esc",
        action: Action::Quit,
        hint: "quit",
        description: "quit (Esc closes the help first)",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('?'), NONE), (KeyCode::Char('?'), SHIFT)],
        key_label: "?",
        action: Action::ToggleHelp,
        hint: "help",
        description: "show or hide this help",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Tab, NONE)],
        key_label: "Tab",
        action: Action::FocusNextPane,
        hint: "pane",
        description: "focus the next pane",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::BackTab, SHIFT), (KeyCode::BackTab, NONE)],
        key_label: "Shift-Tab",
        action: Action::FocusPreviousPane,
        hint: "",
        description: "focus the previous pane",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Down, NONE), (KeyCode::Char('j'), NONE)],
        key_label: "↓/j",
        action: Action::SelectNext,
        hint: "",
        description: "next row",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Up, NONE), (KeyCode::Char('k'), NONE)],
        key_label: "↑/k",
        action: Action::SelectPrevious,
        hint: "",
        description: "previous row",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::PageDown, NONE)],
        key_label: "PgDn",
        action: Action::PageDown,
        hint: "",
        description: "one page down",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::PageUp, NONE)],
        key_label: "PgUp",
        action: Action::PageUp,
        hint: "",
        description: "one page up",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('g'), NONE), (KeyCode::Home, NONE)],
        key_label: "g/Home",
        action: Action::SelectFirst,
        hint: "",
        description: "first row",
        context: Context::Browse,
    },
    Binding {
        keys: &[
            (KeyCode::Char('G'), SHIFT),
            (KeyCode::Char('G'), NONE),
            (KeyCode::End, NONE),
        ],
        key_label: "G/End",
        action: Action::SelectLast,
        hint: "",
        description: "last row",
        context: Context::Browse,
    },
    Binding {
        keys: &[
            (KeyCode::Enter, NONE),
            (KeyCode::Char('l'), NONE),
            (KeyCode::Right, NONE),
        ],
        key_label: "Enter",
        action: Action::Open,
        hint: "open",
        description: "open the highlighted neighbour as the current item",
        context: Context::Browse,
    },
    Binding {
        keys: &[
            (KeyCode::Char('['), NONE),
            (KeyCode::Char('h'), NONE),
            (KeyCode::Left, NONE),
        ],
        key_label: "[/h",
        action: Action::Back,
        hint: "back",
        description: "back to the previous item",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char(']'), NONE)],
        key_label: "]",
        action: Action::Forward,
        hint: "",
        description: "forward again",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('/'), NONE)],
        key_label: "/",
        action: Action::StartSearch,
        hint: "find",
        description: "filter the catalogue by id, title or category",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('x'), NONE)],
        key_label: "x",
        action: Action::ClearSearch,
        hint: "",
        description: "clear the filter",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('m'), NONE)],
        key_label: "m",
        action: Action::ToggleMetric,
        hint: "metric",
        description: "switch neighbours between Euclidean distance and cosine",
        context: Context::Browse,
    },
    Binding {
        keys: &[
            (KeyCode::Char('+'), NONE),
            (KeyCode::Char('+'), SHIFT),
            (KeyCode::Char('='), NONE),
        ],
        key_label: "+",
        action: Action::MoreNeighbours,
        hint: "",
        description: "more neighbours",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('-'), NONE)],
        key_label: "-",
        action: Action::FewerNeighbours,
        hint: "",
        description: "fewer neighbours",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('o'), NONE)],
        key_label: "o",
        action: Action::CycleSort,
        hint: "order",
        description: "order the catalogue by title, category or rating count",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('1'), NONE)],
        key_label: "1",
        action: Action::ShowItems,
        hint: "items",
        description: "item screen: catalogue, neighbours, loadings",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('2'), NONE)],
        key_label: "2",
        action: Action::ShowMember,
        hint: "member",
        description: "member screen: ratings, suggestions, explanation (Tab switches lists)",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('3'), NONE)],
        key_label: "3",
        action: Action::ShowMap,
        hint: "map",
        description: "2-D map of the items (↑↓ and PgUp/PgDn pan, +/- zoom)",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('4'), NONE)],
        key_label: "4",
        action: Action::ShowFit,
        hint: "fit",
        description: "fit health: likelihood, RMSE, residuals",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('5'), NONE)],
        key_label: "5",
        action: Action::ShowAudit,
        hint: "audit",
        description: "audit: neighbour coherence, least coherent items (Enter opens), worst fits, odd vectors",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('u'), NONE)],
        key_label: "u",
        action: Action::FindMember,
        hint: "",
        description: "open a member by id",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('r'), NONE)],
        key_label: "r",
        action: Action::ToggleResidualOrder,
        hint: "",
        description: "member ratings by size of residual, or by title",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('n'), NONE)],
        key_label: "n",
        action: Action::NoteItem,
        hint: "note",
        description: "curator's note on the current item (saved with the model; empty removes it)",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('L'), SHIFT), (KeyCode::Char('L'), NONE)],
        key_label: "L",
        action: Action::LabelFactor,
        hint: "",
        description: "label the highlighted factor (loadings pane)",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('f'), NONE)],
        key_label: "f",
        action: Action::FlagPair,
        hint: "",
        description: "flag the highlighted neighbour as a wrong neighbour of the current item, or unflag it",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('S'), SHIFT), (KeyCode::Char('S'), NONE)],
        key_label: "S",
        action: Action::SaveNotesElsewhere,
        hint: "",
        description: "save the curator notes to another directory (when the model's own cannot take them)",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('p'), NONE)],
        key_label: "p",
        action: Action::WritePlain,
        hint: "",
        description: "member screen: write the plain explanation of the highlighted item to a file",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('w'), NONE)],
        key_label: "w",
        action: Action::WhatIf,
        hint: "what-if",
        description: "start a what-if profile from the open member (or from nobody); again to leave it",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('a'), NONE)],
        key_label: "a",
        action: Action::AddToProfile,
        hint: "",
        description: "what-if: add the current item (items screen) or the highlighted suggestion",
        context: Context::Browse,
    },
    Binding {
        keys: &[
            (KeyCode::Char('>'), NONE),
            (KeyCode::Char('>'), SHIFT),
            (KeyCode::Char('.'), NONE),
        ],
        key_label: ">",
        action: Action::RaiseRating,
        hint: "",
        description: "what-if: raise the highlighted rating one step",
        context: Context::Browse,
    },
    Binding {
        keys: &[
            (KeyCode::Char('<'), NONE),
            (KeyCode::Char('<'), SHIFT),
            (KeyCode::Char(','), NONE),
        ],
        key_label: "<",
        action: Action::LowerRating,
        hint: "",
        description: "what-if: lower the highlighted rating one step",
        context: Context::Browse,
    },
    Binding {
        keys: &[(KeyCode::Char('d'), NONE), (KeyCode::Delete, NONE)],
        key_label: "d/Del",
        action: Action::RemoveRating,
        hint: "",
        description: "what-if: remove the highlighted rating",
        context: Context::Browse,
    },
];

/// The action bound to `key` in browsing mode (global bindings first).
pub fn action_for(key: KeyEvent) -> Option<Action> {
    let matches = |b: &&Binding| {
        b.keys
            .iter()
            .any(|&(code, mods)| code == key.code && mods == key.modifiers)
    };
    BINDINGS
        .iter()
        .filter(|b| b.context == Context::Global)
        .find(matches)
        .or_else(|| {
            BINDINGS
                .iter()
                .filter(|b| b.context == Context::Browse)
                .find(matches)
        })
        .map(|b| b.action)
}

/// True when `key` is a global binding (checked even while typing a filter).
pub fn global_action(key: KeyEvent) -> Option<Action> {
    BINDINGS
        .iter()
        .filter(|b| b.context == Context::Global)
        .find(|b| {
            b.keys
                .iter()
                .any(|&(code, mods)| code == key.code && mods == key.modifiers)
        })
        .map(|b| b.action)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_binding_is_described_and_no_key_is_bound_twice_in_a_context() {
        let mut seen = std::collections::HashSet::new();
        for b in BINDINGS {
            assert!(
                !b.description.is_empty() && !b.key_label.is_empty(),
                "{:?}",
                b.action
            );
            for key in b.keys {
                assert!(
                    seen.insert((format!("{:?}", b.context), format!("{key:?}"))),
                    "{key:?} bound twice"
                );
            }
        }
    }

    #[test]
    fn lookups() {
        let key = |c, m| KeyEvent::new(c, m);
        assert_eq!(
            action_for(key(KeyCode::Char('j'), NONE)),
            Some(Action::SelectNext)
        );
        assert_eq!(
            action_for(key(KeyCode::Char('c'), CTRL)),
            Some(Action::Quit)
        );
        assert_eq!(global_action(key(KeyCode::Char('q'), NONE)), None);
        assert_eq!(action_for(key(KeyCode::Char('Z'), SHIFT)), None);
    }
}
