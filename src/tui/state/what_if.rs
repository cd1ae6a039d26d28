//! What-if profiles: ratings that belong to no fitted member, and the vector folded in
//! from them against the fixed item vectors. The vector, suggestions and explanations
//! follow every edit at once.

use sextant::analysis::foldin::{Folded, fold_in, suggest_profile};
use sextant::data::RatingScale;

use super::shared::Shared;
use crate::tui::app::App;
use crate::tui::screens::ScreenId;
use crate::tui::screens::member::{MemberPane, MemberView, RatedRow};

/// A what-if profile.
#[derive(Debug, Clone, PartialEq)]
pub struct WhatIf {
    /// The member it started from, if any.
    pub origin: Option<u32>,
    /// (item, rating), in the order added.
    pub ratings: Vec<(u32, f64)>,
    /// The folded-in vector (zeros when it cannot be determined).
    pub vector: Vec<f64>,
    /// The folded-in offset (0 without biases or when it cannot be determined).
    pub bias: f64,
    /// Why there is no vector, when there is none.
    pub problem: Option<String>,
}

/// One step up or down the rating scale from `value`.
pub fn step(scale: &RatingScale, value: f64, up: bool) -> f64 {
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

/// One step up or down from `value` for `model`: along its rating scale, or for implicit
/// feedback one count more or fewer (never below 1: removing an item is `d`).
fn step_value(model: &sextant::model::Model, value: f64, up: bool) -> f64 {
    if model.implicit().is_some() {
        if up {
            value + 1.0
        } else {
            (value - 1.0).max(1.0)
        }
    } else {
        step(&model.manifest.scale, value, up)
    }
}

/// Folds the profile of `view` in again and rebuilds its rows, suggestions and
/// explanation, keeping `keep` highlighted when given.
fn refresh(view: &mut MemberView, shared: &Shared, keep: Option<u32>) {
    let Some(w) = &mut view.what_if else { return };
    let model = &shared.model;
    let f = &model.factors;
    let (folded, problem) = match fold_in(model, &w.ratings) {
        Ok(v) => (v, None),
        Err(e) => (
            Folded {
                vector: vec![0.0; f.rank],
                bias: 0.0,
            },
            Some(e.to_string()),
        ),
    };
    view.rated = w
        .ratings
        .iter()
        .map(|&(item, actual)| {
            let predicted = f.predict_for(&folded.vector, folded.bias, item);
            RatedRow {
                item,
                actual,
                predicted,
                rounded: model.round(predicted),
                residual: actual - predicted,
                holdout: false,
            }
        })
        .collect();
    view.suggestions = if problem.is_none() {
        suggest_profile(
            model,
            shared.suggestion_index(),
            &folded.profile(&w.ratings),
            10,
        )
    } else {
        Vec::new()
    };
    w.vector = folded.vector;
    w.bias = folded.bias;
    w.problem = problem;
    view.suggestion_selected = view
        .suggestion_selected
        .min(view.suggestions.len().saturating_sub(1));
    view.sort(shared);
    if let Some(item) = keep {
        view.highlight_rating(item, shared);
    }
}

impl App {
    fn what_if_view(&mut self) -> Option<&mut MemberView> {
        self.screens.member.as_mut().filter(|m| m.what_if.is_some())
    }

    /// Starts a what-if from the open member (or from nobody), or leaves the open one.
    pub(crate) fn toggle_what_if(&mut self) {
        if let Some(origin) = self
            .screens
            .member
            .as_ref()
            .and_then(|m| m.what_if.as_ref())
            .map(|w| w.origin)
        {
            // Leave the what-if: back to the member it came from, or to no member.
            match origin {
                Some(user) => self.open_member(user, None),
                None => self.screens.member = None,
            }
            self.status = "left the what-if profile (nothing was saved)".into();
            return;
        }
        let origin = self.screens.member.as_ref().and_then(|m| m.user);
        let ratings = origin
            .map(|u| sextant::analysis::explain::training_ratings(&self.shared.model, u))
            .unwrap_or_default();
        self.start_what_if(origin, ratings);
        self.shown = ScreenId::Member;
        let value = if self.shared.model.implicit().is_some() {
            "count"
        } else {
            "rating"
        };
        self.status = format!(
            "what-if: a adds a suggestion, < > change the highlighted {value}, d removes it, w leaves"
        );
    }

    fn start_what_if(&mut self, origin: Option<u32>, ratings: Vec<(u32, f64)>) {
        let mut view = MemberView::empty(
            origin,
            Some(WhatIf {
                origin,
                ratings,
                vector: vec![0.0; self.shared.model.factors.rank],
                bias: 0.0,
                problem: None,
            }),
        );
        refresh(&mut view, &self.shared, None);
        self.screens.member = Some(view);
    }

    /// Adds `item` to the what-if profile at the profile's own predicted rating (starting a
    /// profile from nobody when none is open). The screen shown stays as it is, so a
    /// curator can add several items from the catalogue in a row.
    pub(crate) fn add_to_profile(&mut self, item: u32) {
        if self.what_if_view().is_none() {
            self.start_what_if(None, Vec::new());
        }
        let title = self.shared.title(item).to_owned();
        let shared = &self.shared;
        let Some(view) = self.screens.member.as_mut() else {
            return;
        };
        let Some(w) = view.what_if.as_mut() else {
            return;
        };
        if w.ratings.iter().any(|&(j, _)| j == item) {
            self.status = format!("{title} is already in the what-if profile");
            return;
        }
        // A rating at the profile's own prediction; one interaction for implicit feedback.
        let value = shared
            .model
            .round(shared.model.factors.predict_for(&w.vector, w.bias, item))
            .unwrap_or(1.0);
        w.ratings.push((item, value));
        let count = w.ratings.len();
        refresh(view, shared, Some(item));
        view.focus = MemberPane::Ratings;
        self.status = if self.shown == ScreenId::Member {
            format!("added {title} at {value}; < > change it, d removes it")
        } else {
            format!("added {title} at {value} to the what-if profile ({count} ratings; 2 shows it)")
        };
    }

    /// The highlighted what-if rating, when the ratings list has focus.
    fn highlighted_rating(&self) -> Option<u32> {
        let m = self.screens.member.as_ref()?;
        m.what_if.as_ref()?;
        if m.focus != MemberPane::Ratings {
            return None;
        }
        m.rated.get(m.rated_selected).map(|r| r.item)
    }

    pub(crate) fn step_rating(&mut self, up: bool) {
        let Some(item) = self.highlighted_rating() else {
            self.status =
                "what-if only: highlight one of the profile's ratings (w starts a what-if)".into();
            return;
        };
        let shared = &self.shared;
        let Some(view) = self.screens.member.as_mut() else {
            return;
        };
        if let Some(w) = &mut view.what_if
            && let Some(r) = w.ratings.iter_mut().find(|(j, _)| *j == item)
        {
            r.1 = step_value(&shared.model, r.1, up);
        }
        refresh(view, shared, Some(item));
    }

    pub(crate) fn remove_rating(&mut self) {
        let Some(item) = self.highlighted_rating() else {
            self.status = "what-if only: highlight one of the profile's ratings".into();
            return;
        };
        let shared = &self.shared;
        let Some(view) = self.screens.member.as_mut() else {
            return;
        };
        if let Some(w) = &mut view.what_if {
            w.ratings.retain(|&(j, _)| j != item);
        }
        refresh(view, shared, None);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

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
    }
}
