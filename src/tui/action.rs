//! Everything that can change the explorer's state: what a person asks for through keys
//! (`keymap.rs`) and the mouse, and what the terminal reports (a new size).
//! `App::update` is the only place they take effect.

use super::screens::ScreenId;

/// A movement of the highlight in a list.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Move {
    /// One row down.
    Next,
    /// One row up.
    Previous,
    /// One page down.
    PageDown,
    /// One page up.
    PageUp,
    /// The first row.
    First,
    /// The last row.
    Last,
}

impl Move {
    /// The row this movement lands on from `selected` in a list of `len` rows, `page`
    /// rows to a page (0 for an empty list).
    pub fn apply(self, selected: usize, len: usize, page: usize) -> usize {
        if len == 0 {
            return 0;
        }
        let page = page.max(1) as isize;
        let delta = match self {
            Move::Next => 1,
            Move::Previous => -1,
            Move::PageDown => page,
            Move::PageUp => -page,
            Move::First => isize::MIN / 2,
            Move::Last => isize::MAX / 2,
        };
        (selected as isize)
            .saturating_add(delta)
            .clamp(0, len as isize - 1) as usize
    }
}

/// A direction to pan the map.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    /// Towards larger y.
    Up,
    /// Towards smaller y.
    Down,
    /// Towards smaller x.
    Left,
    /// Towards larger x.
    Right,
}

/// One intent or report.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Action {
    /// Leave at once, from any mode.
    QuitNow,
    /// Leave (asks first when curator notes could not be saved).
    Quit,
    /// Show or hide the key overlay.
    ToggleHelp,
    /// Scroll the key overlay.
    ScrollHelp(Move),
    /// Show a screen.
    Show(ScreenId),
    /// Move focus to the next list of the screen.
    FocusNext,
    /// Move focus to the previous list of the screen.
    FocusPrevious,
    /// Move the highlight in the focused list.
    Select(Move),
    /// Open the highlighted row of the focused list.
    Open,
    /// Go back to the previously viewed item.
    Back,
    /// Go forward again after going back.
    Forward,
    /// Start typing a filter for the catalogue.
    StartSearch,
    /// Clear the catalogue filter.
    ClearSearch,
    /// Switch the neighbour metric between Euclidean and cosine.
    ToggleMetric,
    /// Show more neighbours.
    MoreNeighbours,
    /// Show fewer neighbours.
    FewerNeighbours,
    /// Cycle the catalogue order (title, category, rating count).
    CycleSort,
    /// Pan the map.
    Pan(Direction),
    /// Zoom the map in.
    ZoomIn,
    /// Zoom the map out.
    ZoomOut,
    /// Type a member id to open.
    FindMember,
    /// Order the member's ratings by size of residual, or by item.
    ToggleResidualOrder,
    /// Write or edit a curator's note on the highlighted item.
    NoteItem,
    /// Write or edit the label of the highlighted factor.
    LabelFactor,
    /// Flag (or unflag) the highlighted neighbour pair as wrong.
    FlagPair,
    /// Write the plain explanation of the highlighted item to a file.
    WritePlain,
    /// Start a what-if profile (from the open member, or from nobody), or leave it.
    WhatIf,
    /// Add the highlighted item to the what-if profile.
    AddToProfile,
    /// Raise the highlighted what-if rating one step.
    RaiseRating,
    /// Lower the highlighted what-if rating one step.
    LowerRating,
    /// Remove the highlighted what-if rating.
    RemoveRating,
    /// Save the curator notes to another directory.
    SaveNotesElsewhere,
    /// Typing: add a character to the line being typed.
    Type(char),
    /// Typing: remove the last character.
    DeleteChar,
    /// Typing: keep what was typed.
    Accept,
    /// Typing: drop what was typed.
    Cancel,
    /// The terminal's size, in columns and rows.
    Resize(u16, u16),
    /// A left click at a column and row of the terminal.
    Click(u16, u16),
}
