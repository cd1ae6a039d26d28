//! The explorer's working tools: curator notes (item notes, factor labels, wrong neighbour
//! pairs), plain explanations written to a file, and what-if profiles whose vector,
//! suggestions and explanations follow every edit at once.

use sextant::analysis::explain::Profile;
use sextant::analysis::foldin::{fold_in, suggest_profile};
use sextant::data::RatingScale;
use sextant::index::{InnerProductIndex, Path};
use sextant::model::dot;

use super::action::Action;
use super::app::{App, MemberView, Pane, Prompt, RatedRow, Screen};

/// A what-if profile: ratings that belong to no fitted member, and the vector folded in
/// from them against the fixed item vectors.
#[derive(Debug, Clone, PartialEq)]
pub struct WhatIf {
    /// The member it started from, if any.
    pub origin: Option<u32>,
    /// (item, rating), in the order added.
    pub ratings: Vec<(u32, f64)>,
    /// The folded-in vector (zeros when it cannot be determined).
    pub vector: Vec<f64>,
    /// Why there is no vector, when there is none.
    pub problem: Option<String>,
}

/// One step up or down the rating scale from `value`.
fn step(scale: &RatingScale, value: f64, up: bool) -> f64 {
    match scale {
        RatingScale::Levels(levels) => {
            let at = levels
                .iter()
                .position(|&l| l >= value)
                .unwrap_or(levels.len() - 1);
            let next = if up {
                (at + 1).min(levels.len() - 1)
            } else {
                at.saturating_sub(1)
            };
            levels[next]
        }
        RatingScale::Continuous { min, max } => {
            let delta = (max - min) / 10.0;
            let v = if up { value + delta } else { value - delta };
            v.clamp(*min, *max)
        }
    }
}

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
    /// Carries out one of the working tools' actions.
    pub fn workbench(&mut self, action: Action) {
        match action {
            Action::NoteItem => self.begin_item_note(),
            Action::LabelFactor => self.begin_factor_label(),
            Action::FlagPair => self.toggle_pair_flag(),
            Action::WritePlain => self.write_plain(),
            Action::WhatIf => self.toggle_what_if(),
            Action::AddToProfile => self.add_to_profile(),
            Action::RaiseRating => self.step_rating(true),
            Action::LowerRating => self.step_rating(false),
            Action::RemoveRating => self.remove_rating(),
            Action::SaveNotesElsewhere => {
                let suggestion = std::env::current_dir()
                    .map(|d| d.join("sextant-notes").display().to_string())
                    .unwrap_or_default();
                self.start_prompt(Prompt::NotesDir, suggestion);
            }
            _ => {}
        }
    }

    /// The item the note key applies to: the member screen's highlighted item there, else
    /// the current item.
    fn note_target(&self) -> Option<u32> {
        if self.screen == Screen::Member {
            self.member_item()
        } else {
            self.current
        }
    }

    fn begin_item_note(&mut self) {
        let Some(j) = self.note_target() else {
            self.status = "no item to note".into();
            return;
        };
        let id = self.model.ratings.items.name(j);
        let text = self.notes.current.item_note(id).unwrap_or("").to_owned();
        self.start_prompt(Prompt::ItemNote(j), text);
    }

    fn begin_factor_label(&mut self) {
        if self.screen != Screen::Items || self.focus != Pane::Loadings {
            self.status = "highlight a factor in the loadings pane first (Tab to it)".into();
            return;
        }
        let f = self.factor_selected;
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
        let id = self.model.ratings.items.name(j).to_owned();
        match self.notes.current.set_item_note(&id, text) {
            Ok(()) => self.save_notes(&format!("note on {}", self.title(j))),
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

    fn toggle_pair_flag(&mut self) {
        if self.screen != Screen::Items || self.focus != Pane::Neighbours {
            self.status = "highlight a neighbour first (Tab to the neighbours pane)".into();
            return;
        }
        let (Some(a), Some(row)) = (self.current, self.neighbours.get(self.neighbour_selected))
        else {
            return;
        };
        let b = row.item;
        let items = &self.model.ratings.items;
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
        self.save_notes(&format!("{} and {}: {what}", self.title(a), self.title(b)));
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
            .item_note(self.model.ratings.items.name(j))
            .is_some()
    }

    /// Whether items `a` and `b` are flagged as wrong neighbours.
    pub fn is_flagged(&self, a: u32, b: u32) -> bool {
        let items = &self.model.ratings.items;
        self.notes
            .current
            .pair_note(items.name(a), items.name(b))
            .is_some()
    }

    /// The plain explanation of the member screen's highlighted item, as written by `p`.
    pub fn plain_text(&self) -> Option<(String, String)> {
        let m = self.member.as_ref()?;
        let e = m.explanation.as_ref()?;
        let who = match (m.user, &m.what_if) {
            (_, Some(_)) => "what-if".to_owned(),
            (Some(u), None) => file_safe(self.model.ratings.users.name(u)),
            (None, None) => return None,
        };
        let name = format!(
            "explanation-{who}-{}.txt",
            file_safe(self.model.ratings.items.name(e.item))
        );
        let text = sextant::analysis::plain::plain_explanation(&self.model, e);
        let lines: Vec<_> = text.split('\n').map(sextant::text::escaped).collect();
        let text = lines.join("\n") + "\n";
        Some((name, text))
    }

    fn write_plain(&mut self) {
        if self.screen != Screen::Member {
            self.status = "open a member (u) and highlight an item first".into();
            return;
        }
        let Some((name, text)) = self.plain_text() else {
            self.status = "highlight an item to explain first".into();
            return;
        };
        let written =
            sextant::files::output::write_file(std::path::Path::new(&name), text.as_bytes());
        self.status = match written {
            Ok(()) => {
                format!("wrote the plain explanation to {name} (the member's own ratings only)")
            }
            Err(e) => format!("{e}"),
        };
    }

    fn toggle_what_if(&mut self) {
        if let Some(origin) = self
            .member
            .as_ref()
            .and_then(|m| m.what_if.as_ref())
            .map(|w| w.origin)
        {
            // Leave the what-if: back to the member it came from, or to no member.
            match origin {
                Some(user) => self.open_member(user),
                None => self.member = None,
            }
            self.status = "left the what-if profile (nothing was saved)".into();
            return;
        }
        let origin = self.member.as_ref().and_then(|m| m.user);
        let ratings = origin
            .map(|u| sextant::analysis::explain::training_ratings(&self.model, u))
            .unwrap_or_default();
        self.start_what_if(origin, ratings);
        self.status =
            "what-if: a adds items, < > change the highlighted rating, d removes it, w leaves"
                .into();
    }

    fn start_what_if(&mut self, origin: Option<u32>, ratings: Vec<(u32, f64)>) {
        self.member = Some(MemberView {
            user: origin,
            what_if: Some(WhatIf {
                origin,
                ratings,
                vector: vec![0.0; self.model.factors.rank],
                problem: None,
            }),
            rated: Vec::new(),
            suggestions: Vec::new(),
            selected: 0,
            in_suggestions: false,
            by_residual: false,
            explanation: None,
        });
        self.refresh_what_if(None);
        self.screen = Screen::Member;
    }

    fn what_if_mut(&mut self) -> Option<&mut WhatIf> {
        self.member.as_mut().and_then(|m| m.what_if.as_mut())
    }

    fn add_to_profile(&mut self) {
        let item = match self.screen {
            Screen::Member => self
                .member
                .as_ref()
                .filter(|m| m.in_suggestions)
                .and_then(|m| m.suggestions.get(m.selected))
                .map(|s| s.item),
            _ => self.current,
        };
        let Some(item) = item else {
            self.status =
                "highlight a suggestion (member screen) or an item (items screen) to add".into();
            return;
        };
        if self.member.as_ref().is_none_or(|m| m.what_if.is_none()) {
            self.start_what_if(None, Vec::new());
        }
        let scale = self.model.manifest.scale.clone();
        let mu = self.model.factors.mu;
        let v = self.model.factors.item(item).to_vec();
        let Some(w) = self.what_if_mut() else { return };
        if w.ratings.iter().any(|&(j, _)| j == item) {
            self.status = "already in the what-if profile".into();
            return;
        }
        let value = scale.round(mu + dot(&w.vector, &v));
        w.ratings.push((item, value));
        let title = self.title(item).to_owned();
        if let Some(m) = &mut self.member {
            m.in_suggestions = false;
        }
        self.refresh_what_if(Some(item));
        self.screen = Screen::Member;
        self.status = format!("added {title} at {value}; < > change it, d removes it");
    }

    fn highlighted_rating(&self) -> Option<u32> {
        let m = self.member.as_ref()?;
        m.what_if.as_ref()?;
        if m.in_suggestions {
            return None;
        }
        m.rated.get(m.selected).map(|r| r.item)
    }

    fn step_rating(&mut self, up: bool) {
        let Some(item) = self.highlighted_rating() else {
            self.status =
                "what-if only: highlight one of the profile's ratings (w starts a what-if)".into();
            return;
        };
        let scale = self.model.manifest.scale.clone();
        if let Some(w) = self.what_if_mut()
            && let Some(r) = w.ratings.iter_mut().find(|(j, _)| *j == item)
        {
            r.1 = step(&scale, r.1, up);
        }
        self.refresh_what_if(Some(item));
    }

    fn remove_rating(&mut self) {
        let Some(item) = self.highlighted_rating() else {
            self.status = "what-if only: highlight one of the profile's ratings".into();
            return;
        };
        if let Some(w) = self.what_if_mut() {
            w.ratings.retain(|&(j, _)| j != item);
        }
        self.refresh_what_if(None);
    }

    /// Folds the profile in again and rebuilds its rows, suggestions and explanation,
    /// keeping `keep` highlighted when given.
    fn refresh_what_if(&mut self, keep: Option<u32>) {
        let Some(ratings) = self
            .member
            .as_ref()
            .and_then(|m| m.what_if.as_ref())
            .map(|w| w.ratings.clone())
        else {
            return;
        };
        let (vector, problem) = match fold_in(&self.model, &ratings) {
            Ok(v) => (v, None),
            Err(e) => (vec![0.0; self.model.factors.rank], Some(e.to_string())),
        };
        let f = &self.model.factors;
        let scale = &self.model.manifest.scale;
        let rated: Vec<RatedRow> = ratings
            .iter()
            .map(|&(item, actual)| {
                let predicted = f.mu + dot(&vector, f.item(item));
                RatedRow {
                    item,
                    actual,
                    predicted,
                    rounded: scale.round(predicted),
                    residual: actual - predicted,
                    holdout: false,
                }
            })
            .collect();
        let index = self
            .suggestions_index
            .get_or_insert_with(|| InnerProductIndex::build(&f.items, f.rank, Path::Auto));
        let suggestions = if problem.is_none() {
            suggest_profile(
                &self.model,
                index,
                &Profile {
                    vector: &vector,
                    rated: &ratings,
                },
                10,
            )
        } else {
            Vec::new()
        };
        if let Some(m) = &mut self.member {
            m.rated = rated;
            m.suggestions = suggestions;
            if let Some(w) = &mut m.what_if {
                w.vector = vector;
                w.problem = problem;
            }
        }
        self.sort_member_ratings();
        if let (Some(item), Some(m)) = (keep, &mut self.member)
            && let Some(at) = m.rated.iter().position(|r| r.item == item)
        {
            m.selected = at;
        }
        self.explain_selected();
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
    fn steps_stay_on_the_scale() {
        let levels = RatingScale::Levels(vec![1.0, 2.0, 3.0, 4.0, 5.0]);
        assert_eq!(step(&levels, 3.0, true), 4.0);
        assert_eq!(step(&levels, 5.0, true), 5.0);
        assert_eq!(step(&levels, 1.0, false), 1.0);
        let cont = RatingScale::Continuous {
            min: 0.0,
            max: 10.0,
        };
        assert_eq!(step(&cont, 9.5, true), 10.0);
        assert_eq!(step(&cont, 5.0, false), 4.0);
        assert_eq!(file_safe("m 01/x"), "m_01_x");
    }
}
