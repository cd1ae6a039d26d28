//! The help overlay, generated from the key tables: the keys of the screen shown first,
//! then the keys of every screen, of the other screens, of the help itself and of typing,
//! and the cautions every view carries. It scrolls; lines are wrapped here, to the
//! overlay's width, so the scroll position counts the rows drawn.

use ratatui::Frame;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Clear, Paragraph};

use super::framed;
use crate::tui::app::App;
use crate::tui::keymap::{Binding, EVERY_SCREEN, GLOBAL, HELP, LISTS, TYPING};
use crate::tui::screens::{SCREENS, ScreenId, screen};
use crate::tui::theme::Theme;

/// The cautions at the end of the help.
const CAUTIONS: &[&str] = &[
    "Ratings and the vectors fitted from them are personal data: handle them as your law and policy require. sextant keeps everything on this machine and sends nothing anywhere.",
    "Explanations describe the model's arithmetic, not people's motives or traits. A member's explanation uses only that member's own ratings.",
];

/// The overlay's area in a window `area`.
pub fn popup(area: Rect) -> Rect {
    let width = area.width.saturating_sub(2).min(90);
    let height = area.height.saturating_sub(2);
    Rect {
        x: area.x + (area.width - width) / 2,
        y: area.y + (area.height - height) / 2,
        width,
        height,
    }
}

/// Rows of help text visible at once in a window `height` rows high.
pub fn page_height(height: u16) -> usize {
    popup(Rect::new(0, 0, 80, height)).height.saturating_sub(2) as usize
}

const KEY_WIDTH: usize = 11;

/// `text` broken into lines of at most `width` characters, at spaces where possible.
fn wrap(text: &str, width: usize) -> Vec<String> {
    let width = width.max(8);
    let mut lines: Vec<String> = Vec::new();
    let mut current = String::new();
    for word in text.split(' ') {
        let mut word: Vec<char> = word.chars().collect();
        let used = current.chars().count();
        if used > 0 && used + 1 + word.len() > width {
            lines.push(std::mem::take(&mut current));
        }
        if !current.is_empty() {
            current.push(' ');
        }
        // A word longer than a line is split.
        while current.chars().count() + word.len() > width {
            let room = width - current.chars().count();
            current.extend(word.drain(..room));
            lines.push(std::mem::take(&mut current));
        }
        current.extend(word);
    }
    lines.push(current);
    lines
}

fn section(
    lines: &mut Vec<Line<'static>>,
    heading: String,
    table: &[Binding],
    width: usize,
    theme: Theme,
) {
    lines.push(Line::styled(heading, theme.title()));
    for b in table {
        let text = wrap(b.description, width.saturating_sub(KEY_WIDTH + 2));
        for (k, part) in text.into_iter().enumerate() {
            let key = if k == 0 { b.key_label } else { "" };
            lines.push(Line::from(vec![
                Span::styled(format!("{key:>KEY_WIDTH$}  "), theme.key()),
                Span::raw(part),
            ]));
        }
    }
    lines.push(Line::raw(""));
}

/// Every line of the help for screen `shown` in a window `width` columns wide.
pub fn lines(shown: ScreenId, width: u16, theme: Theme) -> Vec<Line<'static>> {
    let inside = popup(Rect::new(0, 0, width, 24)).width.saturating_sub(2) as usize;
    let mut lines = Vec::new();
    let here = screen(shown);
    if here.bindings.is_empty() {
        lines.push(Line::styled(
            format!("The {} screen has no keys of its own.", here.name),
            theme.muted(),
        ));
        lines.push(Line::raw(""));
    } else {
        section(
            &mut lines,
            format!("On the {} screen", here.name),
            here.bindings,
            inside,
            theme,
        );
    }
    let with_lists: Vec<&str> = SCREENS.iter().filter(|s| s.lists).map(|s| s.name).collect();
    let lists_heading = format!("In lists ({} screens)", with_lists.join(", "));
    if here.lists {
        section(&mut lines, lists_heading.clone(), LISTS, inside, theme);
    }
    section(
        &mut lines,
        "On every screen".into(),
        EVERY_SCREEN,
        inside,
        theme,
    );
    lines.push(Line::styled("Screens", theme.title()));
    for s in SCREENS {
        let parts = wrap(s.description, inside.saturating_sub(KEY_WIDTH + 2 + 9));
        for (k, part) in parts.into_iter().enumerate() {
            let (key, name) = if k == 0 {
                (s.key.to_string(), s.name)
            } else {
                (String::new(), "")
            };
            lines.push(Line::from(vec![
                Span::styled(format!("{key:>KEY_WIDTH$}  "), theme.key()),
                Span::raw(format!("{name:<8} {part}")),
            ]));
        }
    }
    lines.push(Line::raw(""));
    for s in SCREENS
        .iter()
        .filter(|s| s.id != shown && !s.bindings.is_empty())
    {
        section(
            &mut lines,
            format!("On the {} screen", s.name),
            s.bindings,
            inside,
            theme,
        );
    }
    if !here.lists {
        section(&mut lines, lists_heading, LISTS, inside, theme);
    }
    section(&mut lines, "Anywhere".into(), GLOBAL, inside, theme);
    section(&mut lines, "In this help".into(), HELP, inside, theme);
    section(
        &mut lines,
        "While typing a filter or a line (other keys type)".into(),
        TYPING,
        inside,
        theme,
    );
    lines.push(Line::styled("Cautions", theme.title()));
    for caution in CAUTIONS {
        for part in wrap(caution, inside) {
            lines.push(Line::styled(part, theme.muted()));
        }
    }
    lines
}

/// Draws the help overlay over `area`.
pub fn render(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let popup = popup(area);
    let all = lines(app.shown, area.width, theme);
    let page = popup.height.saturating_sub(2) as usize;
    let at = app.help_scroll.min(all.len().saturating_sub(page));
    let shown: Vec<Line<'static>> = all.iter().skip(at).take(page).cloned().collect();
    let more = if at + page < all.len() {
        format!("↓ {} more", all.len() - at - page)
    } else {
        "end".to_owned()
    };
    let title = format!(
        " Keys · {} screen · ↑↓ PgUp PgDn scroll · Esc or ? closes · {more} ",
        screen(app.shown).name
    );
    frame.render_widget(Clear, popup);
    frame.render_widget(
        Paragraph::new(shown).block(framed(title, true, theme)),
        popup,
    );
}
