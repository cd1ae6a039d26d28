//! The fit screen's state: the training residuals in bins, computed the first time the
//! screen is shown. The screen has no keys of its own.

pub mod pane;

use sextant::analysis::metrics::residual_histogram;

use crate::tui::action::Action;
use crate::tui::app::App;
use crate::tui::keymap::Binding;

/// The fit screen has no lists, so no keys of its own.
pub const BINDINGS: &[Binding] = &[];

/// The fit screen's state.
#[derive(Debug, Clone, Default)]
pub struct FitView {
    /// Training residuals in bins (centre, count), once computed.
    pub histogram: Vec<(f64, u64)>,
}

impl App {
    /// The fit screen's own actions.
    pub fn update_fit(&mut self, action: Action) {
        if let Action::Show(_) = action
            && self.screens.fit.histogram.is_empty()
        {
            let m = &self.shared.model;
            self.screens.fit.histogram = if m.implicit().is_some() {
                residual_histogram(&m.factors, &m.ratings, true, (21, 1.5))
            } else {
                residual_histogram(&m.factors, &m.ratings, false, (21, 3.0))
            };
        }
    }
}
