//! Everything a person can ask the explorer to do. Keys map to these (`keymap.rs`);
//! `App::update` is the only place they take effect.

/// One user intent.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Action {
    /// Leave the explorer.
    Quit,
    /// Show or hide the key overlay.
    ToggleHelp,
    /// Move focus to the next pane.
    FocusNextPane,
    /// Move focus to the previous pane.
    FocusPreviousPane,
    /// Move the selection down one row.
    SelectNext,
    /// Move the selection up one row.
    SelectPrevious,
    /// Move the selection down one page.
    PageDown,
    /// Move the selection up one page.
    PageUp,
    /// Jump to the first row.
    SelectFirst,
    /// Jump to the last row.
    SelectLast,
    /// Open the highlighted neighbour (or confirm a search).
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
    /// Show the item screen (catalogue, neighbours, loadings).
    ShowItems,
    /// Show the member screen.
    ShowMember,
    /// Show the 2-D map.
    ShowMap,
    /// Show the fit's health.
    ShowFit,
    /// Show the audit screen.
    ShowAudit,
    /// Type a member id to open.
    FindMember,
    /// Order the member's ratings by size of residual, or by item.
    ToggleResidualOrder,
    /// Write or edit a curator's note on the current item.
    NoteItem,
    /// Write or edit the label of the highlighted factor.
    LabelFactor,
    /// Flag (or unflag) the highlighted neighbour pair as wrong.
    FlagPair,
    /// Write the plain explanation of the highlighted item to a file.
    WritePlain,
    /// Start a what-if profile (from the open member, or from nobody), or leave it.
    WhatIf,
    /// Add the current or highlighted item to the what-if profile.
    AddToProfile,
    /// Raise the highlighted what-if rating one step.
    RaiseRating,
    /// Lower the highlighted what-if rating one step.
    LowerRating,
    /// Remove the highlighted what-if rating.
    RemoveRating,
    /// Save the curator notes to another directory.
    SaveNotesElsewhere,
}
