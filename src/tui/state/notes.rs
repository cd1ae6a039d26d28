//! Curator notes (item notes, factor labels, wrong neighbour pairs) as the explorer edits
//! and saves them, notes rescued on the way out, and plain explanations written to a file.

use crate::tui::app::{App, Prompt};
use crate::tui::screens::ScreenId;
use crate::tui::screens::items::ItemsPane;

/// An id made safe for a file name.
fn file_safe(id: &str) -> String {
    id.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c
            } else {
                '_'
            }
        })
        .take(60)
        .collect()
}

impl App {
    /// The item the note key applies to: the highlighted item of the focused list on the
    /// item, member and audit screens, else the current item.
    fn note_target(&self) -> Option<u32> {
        match self.shown {
            ScreenId::Member => self
                .screens
                .member
                .as_ref()
                .and_then(crate::tui::screens::member::MemberView::highlighted),
            ScreenId::Audit => self
                .screens
                .audit
                .as_ref()
                .and_then(crate::tui::screens::audit::AuditView::highlighted_item),
            _ => self.screens.items.current,
        }
    }

    pub(crate) fn begin_item_note(&mut self) {
        let Some(j) = self.note_target() else {
            self.status = "no item to note".into();
            return;
        };
        let id = self.shared.model.ratings.items.name(j);
        let text = self.notes.current.item_note(id).unwrap_or("").to_owned();
        self.start_prompt(Prompt::ItemNote(j), text);
    }

    pub(crate) fn begin_factor_label(&mut self) {
        if self.screens.items.focus != ItemsPane::Loadings {
            self.status = "highlight a factor in the loadings pane first (Tab to it)".into();
            return;
        }
        let f = self.screens.items.factor_selected;
        let text = self
            .notes
            .current
            .factor_label(f + 1)
            .unwrap_or("")
            .to_owned();
        self.start_prompt(Prompt::FactorLabel(f), text);
    }

    /// Sets (empty: removes) the note on item `j` and saves the notes.
    pub fn set_item_note(&mut self, j: u32, text: &str) {
        let id = self.shared.model.ratings.items.name(j).to_owned();
        match self.notes.current.set_item_note(&id, text) {
            Ok(()) => self.save_notes(&format!("note on {}", self.shared.title(j))),
            Err(e) => self.status = format!("note not kept: {e}"),
        }
    }

    /// Sets (empty: removes) the label of factor `f` (0-based) and saves the notes.
    pub fn set_factor_label(&mut self, f: usize, text: &str) {
        match self.notes.current.set_factor_label(f + 1, text) {
            Ok(()) => self.save_notes(&format!("label of factor {}", f + 1)),
            Err(e) => self.status = format!("label not kept: {e}"),
        }
    }

    pub(crate) fn toggle_pair_flag(&mut self) {
        if self.screens.items.focus != ItemsPane::Neighbours {
            self.status = "highlight a neighbour first (Tab to the neighbours pane)".into();
            return;
        }
        let (Some(a), Some(row)) = (
            self.screens.items.current,
            self.screens
                .items
                .neighbours
                .get(self.screens.items.neighbour_selected),
        ) else {
            return;
        };
        let b = row.item;
        let items = &self.shared.model.ratings.items;
        let (ia, ib) = (items.name(a).to_owned(), items.name(b).to_owned());
        let what = if self.notes.current.pair_note(&ia, &ib).is_some() {
            self.notes.current.unflag_pair(&ia, &ib);
            "flag removed"
        } else {
            self.notes
                .current
                .flag_pair(&ia, &ib, "")
                .expect("an empty note is always kept");
            "flagged as wrong neighbours"
        };
        self.save_notes(&format!(
            "{} and {}: {what}",
            self.shared.title(a),
            self.shared.title(b)
        ));
    }

    /// Saves the notes and says what happened in the status line. A note that cannot be
    /// saved stays in memory, and the status line says so.
    fn save_notes(&mut self, what: &str) {
        if self.notes.dir().is_none() {
            self.status = format!(
                "{what} — kept in memory only: the bundled demo has no directory; S saves the notes elsewhere"
            );
            return;
        }
        match self.notes.save() {
            Ok(merge) if merge.model_replaced => {
                self.status = format!(
                    "{what} — saved, into the model refitted since this window opened it; reopen to see the new model{}",
                    if merge.joined.is_empty() {
                        String::new()
                    } else {
                        format!("; both texts kept (‖): {}", merge.joined.join(", "))
                    }
                );
            }
            Ok(merge) if merge.joined.is_empty() && merge.taken == 0 => {
                self.status = format!("{what} — saved");
            }
            Ok(merge) if merge.joined.is_empty() => {
                self.status = format!(
                    "{what} — saved, with {} note(s) another session saved meanwhile",
                    merge.taken
                );
            }
            Ok(merge) => {
                self.status = format!(
                    "{what} — saved; edited elsewhere too, both texts kept (‖): {}",
                    merge.joined.join(", ")
                );
            }
            Err(e) => {
                self.status = format!(
                    "{what} — NOT saved, kept in memory ({e}); S saves the notes elsewhere"
                );
            }
        }
    }

    /// Saves the notes into directory `dir` (created when missing), which then becomes
    /// where this session's notes are saved.
    pub fn save_notes_to(&mut self, dir: &str) {
        if dir.is_empty() {
            self.status = "no directory given; the notes stay in memory".into();
            return;
        }
        let path = std::path::Path::new(dir);
        let result = std::fs::create_dir_all(path)
            .map_err(|e| e.to_string())
            .and_then(|()| self.notes.save_to(path).map_err(|e| e.to_string()));
        self.status = match result {
            Ok(_) => format!(
                "notes saved to {} (copy annotations.ron into the model directory to keep them with it)",
                path.join(sextant::model::store::ANNOTATIONS).display()
            ),
            Err(e) => format!("notes NOT saved to {dir}: {e}; they stay in memory"),
        };
    }

    /// Called on the way out, however the session ends: notes with edits that are not
    /// saved are saved once more into the model's directory and, when that fails (or the
    /// model has none), into a new directory under the user's state directory
    /// (`$XDG_STATE_HOME/sextant`, else `~/.local/state/sextant`, else the system's
    /// temporary directory). Returns what happened, for the person when they can read it.
    pub fn rescue_notes(&mut self) -> Option<String> {
        let state = std::env::var_os("XDG_STATE_HOME")
            .filter(|v| !v.is_empty())
            .map(std::path::PathBuf::from)
            .or_else(|| {
                std::env::var_os("HOME")
                    .filter(|v| !v.is_empty())
                    .map(|h| std::path::PathBuf::from(h).join(".local/state"))
            })
            .unwrap_or_else(std::env::temp_dir);
        self.rescue_notes_in(&state.join("sextant"))
    }

    /// [`App::rescue_notes`], with the notes that cannot go into the model's directory
    /// saved under `base`.
    pub fn rescue_notes_in(&mut self, base: &std::path::Path) -> Option<String> {
        if !self.notes.unsaved() {
            return None;
        }
        if self.notes.dir().is_some() && self.notes.save().is_ok() {
            return Some("curator notes saved into the model directory".into());
        }
        let stamp = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_secs());
        let dir = base.join(format!("unsaved-notes-{stamp}-{}", std::process::id()));
        let saved = std::fs::create_dir_all(&dir)
            .map_err(|e| e.to_string())
            .and_then(|()| self.notes.save_to(&dir).map_err(|e| e.to_string()));
        Some(match saved {
            Ok(_) => format!(
                "curator notes that were not saved are in {} (copy it into the model directory to keep them)",
                dir.join(sextant::model::store::ANNOTATIONS).display()
            ),
            Err(e) => format!("curator notes that were not saved are lost: {e}"),
        })
    }

    /// Whether item `j` has a curator's note.
    pub fn has_note(&self, j: u32) -> bool {
        self.notes
            .current
            .item_note(self.shared.model.ratings.items.name(j))
            .is_some()
    }

    /// Whether items `a` and `b` are flagged as wrong neighbours.
    pub fn is_flagged(&self, a: u32, b: u32) -> bool {
        let items = &self.shared.model.ratings.items;
        self.notes
            .current
            .pair_note(items.name(a), items.name(b))
            .is_some()
    }

    /// The plain explanation of the member screen's highlighted item, as written by `p`.
    pub fn plain_text(&self) -> Option<(String, String)> {
        let m = self.screens.member.as_ref()?;
        let e = m.explanation.as_ref()?;
        let who = match (m.user, &m.what_if) {
            (_, Some(_)) => "what-if".to_owned(),
            (Some(u), None) => file_safe(self.shared.model.ratings.users.name(u)),
            (None, None) => return None,
        };
        let name = format!(
            "explanation-{who}-{}.txt",
            file_safe(self.shared.model.ratings.items.name(e.item))
        );
        let text =
            sextant::analysis::plain::plain_explanation(&self.shared.model, e, &self.notes.current);
        let lines: Vec<_> = text.split('\n').map(sextant::text::escaped).collect();
        let text = lines.join("\n") + "\n";
        Some((name, text))
    }

    /// Writes the plain explanation of the highlighted item to a file in
    /// [`App::plain_dir`]; asks first when the file exists, unless `replace`.
    pub(crate) fn write_plain(&mut self, replace: bool) {
        let Some((name, text)) = self.plain_text() else {
            self.status = "open a member (u) and highlight an item to explain first".into();
            return;
        };
        let path = self.plain_dir.join(&name);
        if !replace && std::fs::symlink_metadata(&path).is_ok() {
            self.start_prompt(Prompt::ReplacePlain(name), String::new());
            return;
        }
        let written = sextant::files::output::write_file(&path, text.as_bytes());
        self.status = match written {
            Ok(()) => {
                format!("wrote the plain explanation to {name} (the member's own ratings only)")
            }
            Err(e) => format!("{e}"),
        };
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn notes_left_unsaved_are_rescued_on_the_way_out() {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/model");
        let model = sextant::model::load_model(&dir).expect("demo model loads");
        let mut app = App::new(model, "demo");
        let state = tempfile::tempdir().expect("temp dir");
        assert_eq!(app.rescue_notes_in(state.path()), None, "nothing to rescue");
        // The demo has no directory: a note lives in memory only until rescued.
        app.set_factor_label(0, "spice");
        let said = app.rescue_notes_in(state.path()).expect("rescued");
        let saved: Vec<_> = std::fs::read_dir(state.path())
            .expect("rescue directory")
            .map(|e| e.expect("entry").path())
            .collect();
        assert_eq!(saved.len(), 1, "{said}");
        assert!(said.contains(&saved[0].display().to_string()), "{said}");
        let notes = sextant::model::notes::read_notes(&saved[0]).expect("readable");
        assert_eq!(notes.factor_label(1), Some("spice"));
        assert_eq!(app.rescue_notes_in(state.path()), None, "saved now");
    }

    #[test]
    fn file_names_are_safe() {
        assert_eq!(file_safe("m 01/x"), "m_01_x");
    }
}
