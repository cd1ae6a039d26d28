//! The terminal explorer: the event loop, key and mouse handling, and the frame's top
//! level (header, screen, status line, help).
//!
//! State lives in [`app::App`] and `state/`; every input becomes an [`action::Action`]
//! (keys through the tables in [`keymap`]) and `App::update` is the only place state
//! changes; panes in [`panes`] draw from `&App` and change nothing; [`layout`] places
//! panes for drawing and for clicks alike; [`screens`] lists the screens.

pub mod action;
pub mod app;
pub mod event;
pub mod keymap;
pub mod layout;
pub mod panes;
pub mod screens;
pub mod state;
pub mod theme;

use std::io;

use ratatui::crossterm::event::{KeyEvent, MouseEvent};
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;
use ratatui::{DefaultTerminal, Frame};

use action::{Action, Move};
use app::{App, Mode};
use layout::{MIN_HEIGHT, MIN_WIDTH};
use screens::SCREENS;
use theme::Theme;

/// How an explorer session ended.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Ending {
    /// The person quit.
    Quit,
    /// A termination signal arrived (its number).
    Signal(i32),
    /// The terminal went away (why, in words); nobody is there to read a message.
    TerminalLost(String),
}

/// Runs the explorer until the person quits, a termination signal arrives or the terminal
/// goes away. The terminal is restored (raw mode off, main screen, mouse capture off)
/// before this returns, unless it is gone. Notes that could not be saved are rescued on
/// every ending (see [`app::App::rescue_notes`]). The app (and its indexes) must be built
/// before this is called, so that load errors print on the normal screen.
pub fn run(app: &mut App) -> io::Result<Ending> {
    // Mouse capture is ours to undo: on the way out, and in a panic before ratatui's own
    // hook restores the rest of the terminal.
    let previous = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        let _ = ratatui::crossterm::execute!(
            io::stdout(),
            ratatui::crossterm::event::DisableMouseCapture
        );
        previous(info);
    }));
    let mut events = event::Events::start()?;
    let mut terminal = ratatui::try_init()?;
    let mouse =
        ratatui::crossterm::execute!(io::stdout(), ratatui::crossterm::event::EnableMouseCapture);
    let ending = match mouse {
        Ok(()) => event_loop(&mut terminal, app, &mut events),
        Err(e) => Ending::TerminalLost(format!("setting up the terminal failed: {e}")),
    };
    if matches!(ending, Ending::TerminalLost(_)) {
        // Nothing to restore on a terminal that is gone; dropping the terminal would try
        // to show the cursor on it and complain on stderr.
        std::mem::forget(terminal);
    } else {
        let _ = ratatui::crossterm::execute!(
            io::stdout(),
            ratatui::crossterm::event::DisableMouseCapture
        );
        ratatui::try_restore()?;
    }
    Ok(ending)
}

fn event_loop(terminal: &mut DefaultTerminal, app: &mut App, events: &mut event::Events) -> Ending {
    let theme = Theme::from_env();
    app.deferred.enabled = true;
    loop {
        // Catch up on deferred work only when no input is waiting.
        if events.is_idle() {
            app.settle();
        }
        match terminal.size() {
            Ok(size) if (size.width, size.height) != app.size => {
                app.update(Action::Resize(size.width, size.height));
            }
            Ok(_) => {}
            Err(e) => return Ending::TerminalLost(format!("reading the window size failed: {e}")),
        }
        if let Err(e) = terminal.draw(|frame| render(app, frame, theme)) {
            return Ending::TerminalLost(format!("drawing failed: {e}"));
        }
        match events.next() {
            event::Event::Key(key) => handle_key(app, key),
            event::Event::Mouse(mouse) => handle_mouse(app, mouse),
            event::Event::Resize => {}
            event::Event::Signal(signal) => return Ending::Signal(signal),
            event::Event::TerminalLost(why) => return Ending::TerminalLost(why),
        }
        if app.quit {
            return Ending::Quit;
        }
    }
}

/// Turns one key press into an action, through the key tables of the current context.
pub fn handle_key(app: &mut App, key: KeyEvent) {
    if let Some(action) = keymap::action_for(app.context(), key) {
        app.update(action);
    }
}

/// Mouse: the wheel moves the highlight of the focused list, a left click focuses the
/// pane under it and selects the row.
pub fn handle_mouse(app: &mut App, mouse: MouseEvent) {
    use ratatui::crossterm::event::{MouseButton, MouseEventKind};
    if app.mode != Mode::Normal {
        return;
    }
    let action = match mouse.kind {
        MouseEventKind::ScrollDown => Action::Select(Move::Next),
        MouseEventKind::ScrollUp => Action::Select(Move::Previous),
        MouseEventKind::Down(MouseButton::Left) => Action::Click(mouse.column, mouse.row),
        _ => return,
    };
    app.update(action);
}

/// The whole frame, top-down: header, the screen shown, status line; the help over it.
pub fn render(app: &App, frame: &mut Frame<'_>, theme: Theme) {
    let area = frame.area();
    if area.width < MIN_WIDTH || area.height < MIN_HEIGHT {
        let message = format!(
            "window too small: {}×{}; sextant needs at least {MIN_WIDTH}×{MIN_HEIGHT}",
            area.width, area.height
        );
        frame.render_widget(
            Paragraph::new(message).wrap(ratatui::widgets::Wrap { trim: true }),
            area,
        );
        return;
    }
    let [header, body, status] = layout::frame(area);
    render_header(app, frame, header, theme);
    screens::render(app.shown, app, frame, body, theme);
    panes::status_bar::render(app, frame, status, theme);
    if app.mode == Mode::Help {
        panes::help::render(app, frame, area, theme);
    }
}

/// The header: the tabs, then as many facts about the model as fit, most important
/// first, each whole or not at all (numbers are never cut).
fn render_header(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let m = &app.shared.model.manifest;
    let mut tabs = Vec::new();
    let mut used = 1;
    for s in SCREENS {
        let text = if s.id == app.shown {
            format!("[{} {}]", s.key, s.name)
        } else {
            format!(" {} {} ", s.key, s.name)
        };
        used += text.chars().count();
        tabs.push(if s.id == app.shown {
            Span::styled(text, theme.title())
        } else {
            Span::raw(text)
        });
    }
    let holdout = match &m.implicit {
        Some(implicit) => implicit.holdout_percentile_rank.map_or_else(
            || "no held-out interactions".to_owned(),
            |p| format!("held-out rank {:.1}%", 100.0 * p),
        ),
        None => m.metrics.as_ref().and_then(|f| f.holdout).map_or_else(
            || "no held-out ratings".to_owned(),
            |h| format!("held-out RMSE {:.3}", h.rmse),
        ),
    };
    // (text, importance): shown in display order, chosen by importance.
    let facts = [
        (sextant::text::escaped(&app.shared.label).into_owned(), 4),
        (format!("{} items", m.counts.items), 2),
        (format!("{} members", m.counts.users), 3),
        (format!("rank {}", m.rank), 1),
        (holdout, 0),
    ];
    let mut keep = [false; 5];
    let mut by_importance: Vec<usize> = (0..facts.len()).collect();
    by_importance.sort_by_key(|&k| facts[k].1);
    for k in by_importance {
        let width = facts[k].0.chars().count() + 3;
        if used + width <= area.width as usize {
            keep[k] = true;
            used += width;
        }
    }
    // The program's name comes last in importance.
    let name = used + 8 <= area.width as usize;
    let mut spans = vec![Span::raw(if name { " sextant " } else { " " })];
    spans.extend(tabs);
    for (k, (text, _)) in facts.iter().enumerate() {
        if keep[k] {
            spans.push(Span::raw(format!(" · {text}")));
        }
    }
    frame.render_widget(
        Paragraph::new(Line::from(spans)).style(theme.header()),
        area,
    );
}

#[cfg(test)]
mod snapshots;
#[cfg(test)]
mod tests;
