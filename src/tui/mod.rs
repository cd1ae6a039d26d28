//! The terminal explorer: event loop, key handling and the screen layout.
//!
//! State lives in [`app::App`]; keys become [`action::Action`]s through the one table in
//! [`keymap`]; panes in [`panes`] draw from the state and change nothing.

pub mod action;
pub mod app;
pub mod event;
pub mod keymap;
pub mod panes;
pub mod theme;
pub mod workbench;

use std::io;

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::text::Line;
use ratatui::widgets::Paragraph;
use ratatui::{DefaultTerminal, Frame};

use app::{App, Mode, SearchEdit};
use theme::Theme;

/// Smallest window the explorer draws into; below it, it says so.
pub const MIN_WIDTH: u16 = 60;
/// Smallest window height.
pub const MIN_HEIGHT: u16 = 12;

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

/// Turns one key press into state changes (global keys first, then the mode's keys).
pub fn handle_key(app: &mut App, key: KeyEvent) {
    if let Some(action) = keymap::global_action(key) {
        app.update(action);
        return;
    }
    match app.mode {
        Mode::Search => {
            if let Some(edit) = text_edit(key) {
                app.search_input(edit);
            }
        }
        Mode::Prompt => {
            if let Some(edit) = text_edit(key) {
                app.prompt_edit(edit);
            }
        }
        Mode::Help => {
            if matches!(key.code, KeyCode::Esc | KeyCode::Char('?' | 'q')) {
                app.mode = Mode::Normal;
            }
        }
        Mode::Normal => {
            if let Some(action) = keymap::action_for(key) {
                app.update(action);
            }
        }
    }
}

/// What a key does to a line of text being typed (a filter or a member id).
fn text_edit(key: KeyEvent) -> Option<SearchEdit> {
    match key.code {
        KeyCode::Enter => Some(SearchEdit::Accept),
        KeyCode::Esc => Some(SearchEdit::Cancel),
        KeyCode::Backspace => Some(SearchEdit::Delete),
        KeyCode::Char(c)
            if !key
                .modifiers
                .intersects(KeyModifiers::CONTROL | KeyModifiers::ALT) =>
        {
            Some(SearchEdit::Insert(c))
        }
        _ => None,
    }
}

/// Mouse: the wheel moves the selection, a left click selects the row under it.
pub fn handle_mouse(app: &mut App, mouse: ratatui::crossterm::event::MouseEvent) {
    use ratatui::crossterm::event::{MouseButton, MouseEventKind};
    if app.mode != Mode::Normal {
        return;
    }
    match mouse.kind {
        MouseEventKind::ScrollDown => app.update(action::Action::SelectNext),
        MouseEventKind::ScrollUp => app.update(action::Action::SelectPrevious),
        MouseEventKind::Down(MouseButton::Left) => app.click(mouse.column, mouse.row),
        _ => {}
    }
}

/// The whole screen, top-down: header, body (catalogue | neighbours over loadings), status.
pub fn render(app: &mut App, frame: &mut Frame<'_>, theme: Theme) {
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
    let [header, body, status] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Min(0),
        Constraint::Length(1),
    ])
    .areas(area);
    render_header(app, frame, header, theme);
    panes::status_bar::render(app, frame, status, theme);
    match app.screen {
        app::Screen::Items => render_items(app, frame, body, theme),
        app::Screen::Member => panes::member::render(app, frame, body, theme),
        app::Screen::Map => panes::map::render(app, frame, body, theme),
        app::Screen::Fit => panes::fit::render(app, frame, body, theme),
        app::Screen::Audit => panes::audit::render(app, frame, body, theme),
    }
    if app.mode == Mode::Help {
        panes::help::render(frame, area, theme);
    }
}

/// The item screen: catalogue on the left, neighbours over loadings on the right.
fn render_items(app: &mut App, frame: &mut Frame<'_>, body: Rect, theme: Theme) {
    let [left, right] =
        Layout::horizontal([Constraint::Percentage(48), Constraint::Percentage(52)]).areas(body);
    let loadings_height = (app.model.factors.rank as u16 + 2)
        .min(right.height / 2)
        .max(4);
    let [upper, lower] =
        Layout::vertical([Constraint::Min(0), Constraint::Length(loadings_height)]).areas(right);
    app.page = panes::inner(left).height.max(1) as usize;
    app.catalogue_area = left;
    app.neighbours_area = upper;
    panes::catalogue::render(app, frame, left, theme);
    panes::neighbours::render(app, frame, upper, theme);
    panes::loadings::render(app, frame, lower, theme);
}

fn render_header(app: &App, frame: &mut Frame<'_>, area: Rect, theme: Theme) {
    let m = &app.model.manifest;
    let tab = |screen: app::Screen, name: &str| {
        if app.screen == screen {
            format!("[{name}]")
        } else {
            format!(" {name} ")
        }
    };
    let tabs = format!(
        "{}{}{}{}{}",
        tab(app::Screen::Items, "1 items"),
        tab(app::Screen::Member, "2 member"),
        tab(app::Screen::Map, "3 map"),
        tab(app::Screen::Fit, "4 fit"),
        tab(app::Screen::Audit, "5 audit")
    );
    let text = format!(
        " sextant {tabs} · {} · {} items · {} members · rank {} · held-out RMSE {}",
        app.label,
        m.counts.items,
        m.counts.users,
        m.rank,
        m.metrics
            .holdout
            .map_or_else(|| "–".to_owned(), |h| format!("{:.3}", h.rmse))
    );
    frame.render_widget(Paragraph::new(Line::from(text)).style(theme.header()), area);
}

#[cfg(test)]
mod tests {
    use ratatui::Terminal;
    use ratatui::backend::TestBackend;
    use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

    use super::app::{App, Mode, Pane};
    use super::theme::Theme;
    use super::{handle_key, render};

    fn demo_app() -> App {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/model");
        App::new(
            sextant::model::load_model(&dir).expect("demo model loads"),
            "demo",
        )
    }

    fn press(app: &mut App, code: KeyCode) {
        handle_key(app, KeyEvent::new(code, KeyModifiers::NONE));
    }

    fn screen(app: &mut App, width: u16, height: u16) -> String {
        let mut terminal = Terminal::new(TestBackend::new(width, height)).expect("test backend");
        terminal
            .draw(|frame| render(app, frame, Theme::plain()))
            .expect("draw");
        let buffer = terminal.backend().buffer().clone();
        (0..height)
            .map(|y| {
                (0..width)
                    .map(|x| buffer[(x, y)].symbol().to_owned())
                    .collect::<String>()
            })
            .collect::<Vec<_>>()
            .join("\n")
    }

    #[test]
    fn control_characters_in_titles_and_notes_are_shown_escaped() {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/model");
        let mut model = sextant::model::load_model(&dir).expect("demo model loads");
        let meta = model.meta.as_mut().expect("the demo has metadata");
        for row in meta.rows.iter_mut().flatten() {
            row.title = Some(format!("\x1b[2J{}\x07", row.title.as_deref().unwrap_or("")));
            row.category = Some("soups\x1b]0;owned\x07".into());
        }
        let mut app = App::new(model, "demo");
        let first = app.visible[0];
        let id = app.model.ratings.items.name(first).to_owned();
        app.notes
            .current
            .set_item_note(&id, "two\nlines")
            .expect("line breaks are kept");
        let text = screen(&mut app, 120, 30);
        assert!(
            !text.contains('\x1b') && !text.contains('\x07'),
            "raw control characters reached the screen"
        );
        assert!(text.contains("\\x1b[2J"), "{text}");
        assert!(text.contains("note: two\\nlines"), "{text}");
    }

    #[test]
    fn every_pane_shows_what_a_person_reads_at_80_by_24() {
        let mut app = demo_app();
        let text = screen(&mut app, 80, 24);
        let lines: Vec<&str> = text.lines().collect();
        assert!(
            lines[0].starts_with(
                " sextant [1 items] 2 member  3 map  4 fit  5 audit  · demo · 400 items"
            ),
            "{}",
            lines[0]
        );
        assert!(
            lines[1].contains("Catalogue · 400 items · by title"),
            "{}",
            lines[1]
        );
        // The first item by title is highlighted and is the current item.
        let first = app.visible[0];
        assert_eq!(app.current, Some(first));
        assert!(
            lines[2].contains(app.model.ratings.items.name(first)),
            "{}",
            lines[2]
        );
        assert!(
            text.contains(&format!("Nearest 10 to {}", app.title(first))),
            "{text}"
        );
        assert!(text.contains("# distance  cosine"), "{text}");
        assert!(text.contains("Loadings"), "{text}");
        assert!(text.contains("f1 "), "{text}");
        assert!(
            lines[23].contains("q/Esc quit") && lines[23].contains("? help"),
            "{}",
            lines[23]
        );
        // Neighbour rows carry the distance of the first neighbour.
        let d = format!("{:.4}", app.neighbours[0].distance);
        assert!(text.contains(&d), "{d} in {text}");
    }

    #[test]
    fn search_open_back_and_forward() {
        let mut app = demo_app();
        press(&mut app, KeyCode::Char('/'));
        assert_eq!(app.mode, Mode::Search);
        for c in "lentil".chars() {
            press(&mut app, KeyCode::Char(c));
        }
        press(&mut app, KeyCode::Enter);
        assert_eq!(app.mode, Mode::Normal);
        assert!(
            app.visible.len() >= 2
                && app
                    .visible
                    .iter()
                    .all(|&j| app.title(j).to_lowercase().contains("lentil"))
        );
        let start = app.current.expect("an item is shown");
        assert_eq!(start, app.visible[0], "the first match is shown");
        press(&mut app, KeyCode::Tab);
        assert_eq!(app.focus, Pane::Neighbours);
        press(&mut app, KeyCode::Down);
        let target = app.neighbours[1].item;
        press(&mut app, KeyCode::Enter);
        assert_eq!(app.current, Some(target));
        press(&mut app, KeyCode::Char('['));
        assert_eq!(app.current, Some(start));
        press(&mut app, KeyCode::Char(']'));
        assert_eq!(app.current, Some(target));
        press(&mut app, KeyCode::Char('m'));
        assert!(screen(&mut app, 100, 30).contains("· cosine"));
        press(&mut app, KeyCode::Char('?'));
        assert!(screen(&mut app, 100, 30).contains("show or hide this help"));
        press(&mut app, KeyCode::Esc);
        assert_eq!(app.mode, Mode::Normal);
        assert!(!app.quit);
        press(&mut app, KeyCode::Char('q'));
        assert!(app.quit);
    }

    #[test]
    fn member_map_and_fit_screens_show_their_numbers() {
        let mut app = demo_app();
        press(&mut app, KeyCode::Char('u'));
        assert_eq!(app.mode, Mode::Prompt);
        for c in "m0001".chars() {
            press(&mut app, KeyCode::Char(c));
        }
        press(&mut app, KeyCode::Enter);
        let m = app.member.as_ref().expect("member open");
        assert_eq!(app.model.ratings.users.name(m.user.unwrap()), "m0001");
        assert!(
            m.rated
                .windows(2)
                .all(|w| w[0].residual.abs() >= w[1].residual.abs()),
            "largest misses first"
        );
        let e = m
            .explanation
            .clone()
            .expect("explanation of the highlighted rating");
        assert_eq!(e.item, m.rated[0].item);
        let text = screen(&mut app, 110, 32);
        assert!(text.contains("Member m0001"), "{text}");
        assert!(text.contains("Suggestions"), "{text}");
        assert!(
            text.contains(&format!("predicted {:.2}", e.predicted)),
            "{text}"
        );
        press(&mut app, KeyCode::Tab);
        press(&mut app, KeyCode::Down);
        let m = app.member.as_ref().expect("member open");
        assert!(m.in_suggestions);
        assert_eq!(
            m.explanation.as_ref().map(|e| e.item),
            Some(m.suggestions[1].item)
        );
        // An unknown member is reported, and the app keeps running.
        press(&mut app, KeyCode::Char('u'));
        for c in "m01".chars() {
            press(&mut app, KeyCode::Char(c));
        }
        press(&mut app, KeyCode::Enter);
        assert!(
            app.status.starts_with("no member 'm01'; closest:"),
            "{}",
            app.status
        );
        press(&mut app, KeyCode::Char('4'));
        let text = screen(&mut app, 110, 32);
        assert!(text.contains("326 iterations, converged"), "{text}");
        assert!(
            text.contains(&format!("{:.4}", app.model.manifest.metrics.train.rmse)),
            "{text}"
        );
        press(&mut app, KeyCode::Char('3'));
        let ratio = app
            .projection
            .as_ref()
            .expect("projection computed on first view")
            .explained_ratio[0];
        let text = screen(&mut app, 110, 32);
        assert!(text.contains(&format!("x {:.0}%", 100.0 * ratio)), "{text}");
        press(&mut app, KeyCode::Char('+'));
        assert!(app.map_zoom > 1.0);
        press(&mut app, KeyCode::Char('1'));
        assert!(screen(&mut app, 110, 32).contains("Catalogue"));
    }

    fn type_text(app: &mut App, text: &str) {
        for c in text.chars() {
            press(app, KeyCode::Char(c));
        }
        press(app, KeyCode::Enter);
    }

    #[test]
    fn curator_notes_are_shown_and_saved_with_the_model() {
        use sextant::model::notes::{Notes, read_notes};
        let dir = tempfile::tempdir().expect("temp dir");
        let mut app = demo_app();
        app.notes = Notes::open(dir.path()).expect("no notes yet");
        let item = app.current.expect("an item is shown");
        let id = app.model.ratings.items.name(item).to_owned();
        press(&mut app, KeyCode::Char('n'));
        assert_eq!(app.mode, Mode::Prompt);
        type_text(&mut app, "title says soup, tastes like a stew");
        assert!(app.status.ends_with("— saved"), "{}", app.status);
        assert_eq!(
            read_notes(dir.path()).expect("saved").item_note(&id),
            Some("title says soup, tastes like a stew")
        );
        let text = screen(&mut app, 110, 32);
        assert!(text.contains(&format!("{id}✎")), "{text}");
        assert!(text.contains("note: title says soup"), "{text}");
        // Flag the first neighbour as wrong, then label factor 2.
        press(&mut app, KeyCode::Tab);
        let other = app.neighbours[0].item;
        press(&mut app, KeyCode::Char('f'));
        assert!(app.is_flagged(item, other));
        assert!(screen(&mut app, 110, 32).contains('✗'));
        press(&mut app, KeyCode::Tab);
        press(&mut app, KeyCode::Down);
        press(&mut app, KeyCode::Char('L'));
        type_text(&mut app, "sweet vs savoury");
        let text = screen(&mut app, 140, 32);
        assert!(text.contains("factor 2 (sweet vs savoury)"), "{text}");
        // Demo factor 2 gathers preserves at one end and salads at the other.
        assert!(text.contains("over-represented: preserves"), "{text}");
        let saved = read_notes(dir.path()).expect("saved");
        assert_eq!(saved.factor_label(2), Some("sweet vs savoury"));
        assert_eq!(saved.len(), 3);
        // Unflag; an empty note removes the note.
        press(&mut app, KeyCode::BackTab);
        press(&mut app, KeyCode::Char('f'));
        press(&mut app, KeyCode::Char('n'));
        for _ in 0..60 {
            press(&mut app, KeyCode::Backspace);
        }
        press(&mut app, KeyCode::Enter);
        assert_eq!(read_notes(dir.path()).expect("saved").len(), 1);
        // Without a directory (the bundled demo) notes stay in memory, and it says so.
        let mut demo = demo_app();
        press(&mut demo, KeyCode::Char('n'));
        type_text(&mut demo, "x");
        assert!(
            demo.status.contains("kept in memory only"),
            "{}",
            demo.status
        );
        assert!(demo.has_note(demo.current.expect("item")));
    }

    #[test]
    fn an_explorer_saving_after_a_refit_says_so_and_loses_nothing() {
        use sextant::model::notes::{Notes, read_notes};
        let dir = tempfile::tempdir().expect("temp dir");
        let model_dir = dir.path().join("m");
        let mut app = demo_app();
        sextant::model::save_model(&model_dir, &app.model).expect("saved");
        app.notes = Notes::open(&model_dir).expect("opened");
        // Another explorer notes something; then the model is refitted (saved again with a
        // changed manifest) while this one is open.
        let mut other = Notes::open(&model_dir).expect("opened");
        other
            .current
            .set_factor_label(1, "from the other window")
            .unwrap();
        other.save().expect("saved");
        let mut refit = app.model.clone();
        refit.manifest.seed = 99;
        sextant::model::save_model(&model_dir, &refit).expect("refitted");
        press(&mut app, KeyCode::Char('n'));
        type_text(&mut app, "after the refit");
        assert!(
            app.status.contains("refitted since this window opened it"),
            "{}",
            app.status
        );
        let saved = read_notes(&model_dir).expect("readable");
        assert_eq!(saved.factor_label(1), Some("from the other window"));
        assert_eq!(saved.len(), 2);
    }

    #[test]
    fn a_what_if_profile_follows_every_edit() {
        let mut app = demo_app();
        press(&mut app, KeyCode::Char('u'));
        type_text(&mut app, "m0001");
        press(&mut app, KeyCode::Char('w'));
        let m = app.member.clone().expect("what-if open");
        let w = m.what_if.clone().expect("a what-if");
        let user = app.model.ratings.users.get("m0001").expect("member");
        let own = sextant::analysis::explain::training_ratings(&app.model, user);
        assert_eq!(w.ratings, own);
        let folded = sextant::analysis::foldin::fold_in(&app.model, &own).expect("fold in");
        assert_eq!(w.vector, folded);
        assert_eq!(m.rated.len(), own.len());
        let text = screen(&mut app, 110, 40);
        assert!(text.contains("What-if from member m0001"), "{text}");
        assert!(text.contains("profile vector"), "{text}");
        // Raise the highlighted rating: the vector and the explanation move at once.
        let item = m.rated[0].item;
        let before = m.rated[0].actual;
        press(&mut app, KeyCode::Char('>'));
        let m2 = app.member.clone().expect("still open");
        let w2 = m2.what_if.clone().expect("what-if");
        let after = w2.ratings.iter().find(|r| r.0 == item).expect("kept").1;
        assert_eq!(after, (before + 1.0).min(5.0));
        if after != before {
            assert_ne!(w2.vector, w.vector);
        }
        assert_eq!(m2.explanation.as_ref().map(|e| e.item), Some(item));
        // Add the top suggestion: it leaves the suggestions and joins the ratings.
        press(&mut app, KeyCode::Tab);
        let top = app.member.as_ref().expect("open").suggestions[0].item;
        press(&mut app, KeyCode::Char('a'));
        let m3 = app.member.clone().expect("open");
        assert_eq!(m3.rated.len(), own.len() + 1);
        assert!(m3.suggestions.iter().all(|s| s.item != top));
        // Remove it again; then leave the what-if, back to the member as fitted.
        press(&mut app, KeyCode::Char('d'));
        assert_eq!(app.member.as_ref().expect("open").rated.len(), own.len());
        assert!(
            app.plain_text()
                .expect("explained")
                .0
                .starts_with("explanation-what-if-")
        );
        press(&mut app, KeyCode::Char('w'));
        let m4 = app.member.as_ref().expect("member again");
        assert!(m4.what_if.is_none());
        assert_eq!(m4.user, Some(user));
        // From nobody: add the current item on the items screen.
        let mut fresh = demo_app();
        let current = fresh.current.expect("item");
        press(&mut fresh, KeyCode::Char('a'));
        let m5 = fresh.member.as_ref().expect("what-if from nobody");
        assert_eq!(m5.user, None);
        assert_eq!(m5.what_if.as_ref().expect("what-if").ratings.len(), 1);
        assert_eq!(m5.rated[0].item, current);
        assert_eq!(m5.suggestions.len(), 10);
        assert!(screen(&mut fresh, 110, 40).contains("What-if · new profile"));
    }

    #[test]
    fn the_plain_explanation_names_the_member_and_item() {
        let mut app = demo_app();
        press(&mut app, KeyCode::Char('u'));
        type_text(&mut app, "m0001");
        let (name, text) = app.plain_text().expect("an explanation is shown");
        let item = app.member_item().expect("highlighted");
        assert_eq!(
            name,
            format!(
                "explanation-m0001-{}.txt",
                app.model.ratings.items.name(item)
            )
        );
        assert!(text.contains(app.title(item)), "{text}");
    }

    #[test]
    fn the_audit_screen_lists_the_least_coherent_items_and_opens_them() {
        let mut app = demo_app();
        press(&mut app, KeyCode::Char('5'));
        let a = app.audit.clone().expect("computed on first view");
        let c = a.coherence.as_ref().expect("the demo has categories");
        assert!(!a.sampled);
        let text = screen(&mut app, 120, 36);
        assert!(
            text.contains(&format!("same-category share {:.3}", c.mean)),
            "{text}"
        );
        assert!(text.contains("Largest misses · held-out ratings"), "{text}");
        assert!(text.contains(app.title(a.least[0].item)), "{text}");
        press(&mut app, KeyCode::Down);
        let second = app.audit.as_ref().expect("audit").least[1].item;
        press(&mut app, KeyCode::Enter);
        assert_eq!(app.screen, super::app::Screen::Items);
        assert_eq!(app.current, Some(second));
        press(&mut app, KeyCode::Char('['));
        assert_ne!(app.current, Some(second));
    }

    #[test]
    fn mouse_clicks_select_rows_and_the_wheel_scrolls() {
        use ratatui::crossterm::event::{MouseButton, MouseEvent, MouseEventKind};
        let mut app = demo_app();
        screen(&mut app, 80, 24);
        let mouse = |kind, column, row| MouseEvent {
            kind,
            column,
            row,
            modifiers: KeyModifiers::NONE,
        };
        // Catalogue rows start one line below the pane's top border.
        let top = app.catalogue_area.y;
        super::handle_mouse(
            &mut app,
            mouse(MouseEventKind::Down(MouseButton::Left), 3, top + 4),
        );
        assert_eq!(app.catalogue_selected, 3);
        assert_eq!(app.current, Some(app.visible[3]));
        super::handle_mouse(&mut app, mouse(MouseEventKind::ScrollDown, 3, top + 4));
        assert_eq!(app.catalogue_selected, 4);
        // A click on the second neighbour row (below the column header) selects it.
        let n = app.neighbours_area;
        super::handle_mouse(
            &mut app,
            mouse(MouseEventKind::Down(MouseButton::Left), n.x + 5, n.y + 3),
        );
        assert_eq!(app.focus, Pane::Neighbours);
        assert_eq!(app.neighbour_selected, 1);
    }

    #[test]
    fn the_loadings_pane_shows_what_a_factor_stands_for() {
        let mut app = demo_app();
        press(&mut app, KeyCode::Tab);
        press(&mut app, KeyCode::Tab);
        assert_eq!(app.focus, Pane::Loadings);
        press(&mut app, KeyCode::Down);
        assert_eq!(app.factor_selected, 1);
        let (top, bottom) = app.factor_extremes.clone();
        assert_eq!(top.len(), 4);
        let column = |j: u32| app.model.factors.item(j)[1];
        let max = (0..app.model.ratings.items.len() as u32)
            .map(column)
            .fold(f64::MIN, f64::max);
        assert_eq!(top[0].1, max);
        assert!(bottom[0].1 <= bottom[1].1);
        let text = screen(&mut app, 120, 40);
        assert!(text.contains("factor 2 — most positive:"), "{text}");
        assert!(text.contains(app.title(top[0].0)), "{text}");
    }

    #[test]
    fn searches_wait_for_a_pause_when_deferred() {
        let mut app = demo_app();
        app.deferred.enabled = true;
        let before = app.neighbours.clone();
        press(&mut app, KeyCode::Down);
        press(&mut app, KeyCode::Down);
        assert!(app.deferred.neighbours);
        assert_eq!(app.neighbours, before, "no search while keys arrive");
        assert!(screen(&mut app, 100, 30).contains("updating…"));
        press(&mut app, KeyCode::Char('/'));
        press(&mut app, KeyCode::Char('z'));
        assert!(app.deferred.filter);
        app.settle();
        assert!(!app.deferred.neighbours && !app.deferred.filter);
        assert!(
            app.visible
                .iter()
                .all(|&j| app.title(j).to_lowercase().contains('z'))
        );
        assert_ne!(app.neighbours, before);
    }

    #[test]
    fn a_tiny_window_says_so() {
        let mut app = demo_app();
        assert!(screen(&mut app, 40, 8).contains("window too small"));
    }

    #[test]
    fn thousands_of_random_keys_and_sizes_never_panic() {
        let mut app = demo_app();
        let mut rng = sextant::rng::Rng::new(2024);
        let keys = [
            KeyCode::Up,
            KeyCode::Down,
            KeyCode::Left,
            KeyCode::Right,
            KeyCode::PageUp,
            KeyCode::PageDown,
            KeyCode::Home,
            KeyCode::End,
            KeyCode::Enter,
            KeyCode::Tab,
            KeyCode::BackTab,
            KeyCode::Backspace,
            KeyCode::Esc,
            KeyCode::Char('/'),
            KeyCode::Char('?'),
            KeyCode::Char('['),
            KeyCode::Char(']'),
            KeyCode::Char('m'),
            KeyCode::Char('+'),
            KeyCode::Char('-'),
            KeyCode::Char('o'),
            KeyCode::Char('x'),
            KeyCode::Char('g'),
            KeyCode::Char('G'),
            KeyCode::Char('s'),
            KeyCode::Char('é'),
            KeyCode::F(5),
            // Screens and the working tools ('p' is left out: it writes a file).
            KeyCode::Char('1'),
            KeyCode::Char('2'),
            KeyCode::Char('3'),
            KeyCode::Char('4'),
            KeyCode::Char('5'),
            KeyCode::Char('n'),
            KeyCode::Char('f'),
            KeyCode::Char('L'),
            KeyCode::Char('w'),
            KeyCode::Char('a'),
            KeyCode::Char('>'),
            KeyCode::Char('<'),
            KeyCode::Char('d'),
            KeyCode::Delete,
        ];
        for step in 0..4000 {
            let code = keys[rng.below(keys.len() as u64) as usize];
            if code == KeyCode::Esc && app.mode == Mode::Normal {
                continue; // Esc would quit; the point is to keep going.
            }
            handle_key(&mut app, KeyEvent::new(code, KeyModifiers::NONE));
            app.quit = false;
            if step % 50 == 0 {
                let (w, h) = (1 + rng.below(160) as u16, 1 + rng.below(60) as u16);
                screen(&mut app, w, h);
            }
        }
    }
}
