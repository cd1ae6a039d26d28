//! Every style the explorer uses. Colours stay within the 16 basic ones, and `NO_COLOR`
//! (any non-empty value) turns them off, leaving bold, reverse and underline.

use ratatui::style::{Color, Modifier, Style};

/// The explorer's styles. Methods take `self` even where the style does not depend on the
/// colour setting, so callers never need to know which ones do.
#[derive(Debug, Clone, Copy)]
pub struct Theme {
    color: bool,
}

#[allow(clippy::unused_self)]
impl Theme {
    /// Colours unless `NO_COLOR` is set to a non-empty value.
    pub fn from_env() -> Self {
        if std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty()) {
            Self::plain()
        } else {
            Self { color: true }
        }
    }

    /// A theme without colours (tests, `NO_COLOR`).
    pub fn plain() -> Self {
        Self { color: false }
    }

    fn fg(self, color: Color) -> Style {
        if self.color {
            Style::new().fg(color)
        } else {
            Style::new()
        }
    }

    /// Pane borders.
    pub fn border(self, focused: bool) -> Style {
        if focused {
            self.fg(Color::Yellow).add_modifier(Modifier::BOLD)
        } else {
            self.fg(Color::DarkGray)
        }
    }

    /// Pane titles.
    pub fn title(self) -> Style {
        Style::new().add_modifier(Modifier::BOLD)
    }

    /// The highlighted row.
    pub fn selected(self) -> Style {
        Style::new().add_modifier(Modifier::REVERSED)
    }

    /// Secondary text (ids, counts).
    pub fn muted(self) -> Style {
        self.fg(Color::DarkGray)
    }

    /// Category names.
    pub fn category(self) -> Style {
        self.fg(Color::Cyan)
    }

    /// Positive loadings.
    pub fn positive(self) -> Style {
        self.fg(Color::Green)
    }

    /// Negative loadings.
    pub fn negative(self) -> Style {
        self.fg(Color::Magenta)
    }

    /// Warnings (low support, errors in the status line).
    pub fn warning(self) -> Style {
        self.fg(Color::Red).add_modifier(Modifier::BOLD)
    }

    /// The top line.
    pub fn header(self) -> Style {
        if self.color {
            Style::new()
                .fg(Color::Black)
                .bg(Color::Cyan)
                .add_modifier(Modifier::BOLD)
        } else {
            Style::new().add_modifier(Modifier::REVERSED | Modifier::BOLD)
        }
    }

    /// Key names in hints.
    pub fn key(self) -> Style {
        self.fg(Color::Yellow).add_modifier(Modifier::BOLD)
    }
}
