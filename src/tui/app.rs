//! The explorer's state, owned here and split by screen and tool under `state/`, and the
//! one place it changes: [`App::update`]. Screens' own actions go to their own update
//! (`screens::update`); this file keeps what is not any one screen's: modes, the help,
//! typing, prompts, quitting, the window size and deferred work.

use sextant::model::Model;
use sextant::model::notes::Notes;

use super::action::{Action, Move};
use super::keymap::Context;
use super::screens::{self, ScreenId, Screens};
use super::state::shared::Shared;

/// What keys currently do.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mode {
    /// Browsing a screen.
    Normal,
    /// Typing a catalogue filter.
    Search,
    /// Typing a line of text for [`App::prompt`].
    Prompt,
    /// The help overlay is open.
    Help,
}

/// What the text being typed is for.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Prompt {
    /// A member id to open.
    Member,
    /// A curator's note on an item.
    ItemNote(u32),
    /// A curator's label for a factor (0-based).
    FactorLabel(usize),
    /// A directory to save the notes to when the model's own cannot take them.
    NotesDir,
    /// Whether to replace the existing file of this name with the plain explanation.
    ReplacePlain(String),
}

/// The explorer's whole state.
pub struct App {
    /// The model and what every screen reads.
    pub shared: Shared,
    /// Curator notes of the model (saved to its directory when it has one).
    pub notes: Notes,
    /// The screen shown.
    pub shown: ScreenId,
    /// Keys' meaning.
    pub mode: Mode,
    /// Every screen's own state.
    pub screens: Screens,
    /// First line of the help shown.
    pub help_scroll: usize,
    /// What the text being typed is for.
    pub prompt: Prompt,
    /// The text being typed.
    pub prompt_input: String,
    /// A message for the status line.
    pub status: String,
    /// True once the person asked to leave.
    pub quit: bool,
    /// Set when quit was pressed once with unsaved notes (a second press quits).
    pub quit_armed: bool,
    /// The window's size (columns, rows), from the terminal.
    pub size: (u16, u16),
    /// Work that waits until input pauses.
    pub deferred: Deferred,
    /// Where `p` writes plain explanations (the working directory).
    pub plain_dir: std::path::PathBuf,
}

impl App {
    /// The explorer on `model`, with the first item of the catalogue current.
    pub fn new(model: Model, label: impl Into<String>) -> Self {
        let shared = Shared::new(model, label.into());
        let screens = Screens::new(&shared);
        let mut app = Self {
            shared,
            notes: Notes::in_memory(),
            shown: ScreenId::Items,
            mode: Mode::Normal,
            screens,
            help_scroll: 0,
            prompt: Prompt::Member,
            prompt_input: String::new(),
            status: String::new(),
            quit: false,
            quit_armed: false,
            size: (120, 40),
            deferred: Deferred::default(),
            plain_dir: std::path::PathBuf::from("."),
        };
        app.select_in_catalogue(0);
        app
    }

    /// Where keys are read now.
    pub fn context(&self) -> Context {
        match self.mode {
            Mode::Normal => Context::Screen(self.shown),
            Mode::Search => Context::Search,
            Mode::Prompt => Context::Prompt,
            Mode::Help => Context::Help,
        }
    }

    /// Applies one action.
    pub fn update(&mut self, action: Action) {
        match action {
            Action::Resize(width, height) => {
                self.size = (width, height);
                return;
            }
            Action::QuitNow => {
                self.quit = true;
                return;
            }
            _ => {}
        }
        self.status.clear();
        if action != Action::Quit {
            self.quit_armed = false;
        }
        match (self.mode, action) {
            (Mode::Help, Action::ToggleHelp) => self.mode = Mode::Normal,
            (Mode::Help, Action::ScrollHelp(movement)) => self.scroll_help(movement),
            (Mode::Search, _) => self.search_edit(action),
            (Mode::Prompt, _) => self.prompt_edit(action),
            (Mode::Normal, _) => self.browse(action),
            _ => {}
        }
    }

    fn browse(&mut self, action: Action) {
        match action {
            Action::Quit => {
                if self.notes.unsaved() && !self.quit_armed {
                    // Notes that could not be saved are not dropped without a word.
                    self.quit_armed = true;
                    self.status =
                        "curator notes are not saved: S saves them elsewhere; q again quits (they go to your state directory)"
                            .into();
                } else {
                    self.quit = true;
                }
            }
            Action::ToggleHelp => {
                self.mode = Mode::Help;
                self.help_scroll = 0;
            }
            Action::Show(id) => {
                self.shown = id;
                screens::update(id, self, action);
            }
            Action::FindMember => self.start_prompt(Prompt::Member, String::new()),
            Action::WhatIf => self.toggle_what_if(),
            Action::NoteItem => self.begin_item_note(),
            Action::SaveNotesElsewhere => {
                let suggestion = std::env::current_dir()
                    .map(|d| d.join("sextant-notes").display().to_string())
                    .unwrap_or_default();
                self.start_prompt(Prompt::NotesDir, suggestion);
            }
            _ => screens::update(self.shown, self, action),
        }
    }

    fn scroll_help(&mut self, movement: Move) {
        let (width, height) = self.size;
        let lines = super::panes::help::lines(self.shown, width, super::theme::Theme::plain());
        let page = super::panes::help::page_height(height);
        let last = lines.len().saturating_sub(page);
        self.help_scroll = match movement {
            Move::First => 0,
            Move::Last => last,
            _ => movement.apply(self.help_scroll, last + 1, page),
        };
    }

    fn search_edit(&mut self, action: Action) {
        let mut filter = self.screens.items.catalogue.filter.clone();
        match action {
            Action::Type(c) => {
                filter.push(c);
                self.set_filter(filter);
            }
            Action::DeleteChar => {
                filter.pop();
                self.set_filter(filter);
            }
            Action::Accept => self.mode = Mode::Normal,
            Action::Cancel => {
                self.mode = Mode::Normal;
                self.set_filter(String::new());
            }
            _ => {}
        }
    }

    /// Starts typing a line of text for `prompt`, starting from `text`.
    pub fn start_prompt(&mut self, prompt: Prompt, text: String) {
        self.mode = Mode::Prompt;
        self.prompt = prompt;
        self.prompt_input = text;
    }

    fn prompt_edit(&mut self, action: Action) {
        match action {
            Action::Type(c) => {
                if let Prompt::ReplacePlain(_) = self.prompt {
                    // A yes-or-no question: one key answers it.
                    self.mode = Mode::Normal;
                    if c == 'y' || c == 'Y' {
                        self.write_plain(true);
                    } else {
                        self.status = "kept the existing file; nothing written".into();
                    }
                } else if self.prompt_input.chars().count() < sextant::model::notes::MAX_NOTE_CHARS
                {
                    self.prompt_input.push(c);
                }
            }
            Action::DeleteChar => {
                self.prompt_input.pop();
            }
            Action::Cancel => {
                self.mode = Mode::Normal;
                if let Prompt::ReplacePlain(_) = self.prompt {
                    self.status = "kept the existing file; nothing written".into();
                }
            }
            Action::Accept => {
                self.mode = Mode::Normal;
                let text = std::mem::take(&mut self.prompt_input);
                match self.prompt.clone() {
                    Prompt::Member => self.open_member_by_id(text.trim()),
                    Prompt::ItemNote(j) => self.set_item_note(j, &text),
                    Prompt::FactorLabel(f) => self.set_factor_label(f, &text),
                    Prompt::NotesDir => self.save_notes_to(text.trim()),
                    Prompt::ReplacePlain(_) => {
                        self.status = "kept the existing file; nothing written".into();
                    }
                }
            }
            _ => {}
        }
    }

    /// Brings deferred work up to date (called by the event loop when no input is waiting).
    pub fn settle(&mut self) {
        if self.deferred.factor {
            self.deferred.factor = false;
            self.screens.items.refresh_factor(&self.shared);
        }
        if self.deferred.filter {
            self.deferred.filter = false;
            self.refilter();
        }
        if self.deferred.neighbours {
            self.deferred.neighbours = false;
            self.refresh_neighbours();
        }
    }

    /// Title of item `j` (its id when there is no metadata).
    pub fn title(&self, j: u32) -> &str {
        self.shared.title(j)
    }

    /// Category of item `j`, if known.
    pub fn category(&self, j: u32) -> Option<&str> {
        self.shared.category(j)
    }
}

/// Work that waits until input pauses ([`App::settle`]), so that holding a key over a
/// large catalogue never waits on a search.
// Independent pending-work flags: a bool each is the plain way to say it.
#[allow(clippy::struct_excessive_bools)]
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Deferred {
    /// Defer at all (the event loop turns this on; tests and scripts leave it off).
    pub enabled: bool,
    /// The neighbour list belongs to an earlier item.
    pub neighbours: bool,
    /// The catalogue does not reflect the filter text yet.
    pub filter: bool,
    /// The highlighted factor's extreme items are not computed yet.
    pub factor: bool,
}
