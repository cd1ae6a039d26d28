//! The explorer driven through its own key and mouse handling, checked on the state and
//! on an off-screen terminal.

use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};

use super::action::Action;
use super::app::{App, Mode};
use super::screens::ScreenId;
use super::screens::items::ItemsPane;
use super::screens::member::MemberPane;
use super::theme::Theme;
use super::{handle_key, render};

pub(super) fn demo_app() -> App {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/model");
    App::new(
        sextant::model::load_model(&dir).expect("demo model loads"),
        "demo",
    )
}

/// The implicit-feedback demo: how often the same members cooked each recipe.
pub(super) fn implicit_app() -> App {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/implicit-model");
    App::new(
        sextant::model::load_model(&dir).expect("implicit demo model loads"),
        "cooked",
    )
}

pub(super) fn press(app: &mut App, code: KeyCode) {
    handle_key(app, KeyEvent::new(code, KeyModifiers::NONE));
}

pub(super) fn screen(app: &mut App, width: u16, height: u16) -> String {
    app.update(Action::Resize(width, height));
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
    let first = app.screens.items.catalogue.visible[0];
    let id = app.shared.model.ratings.items.name(first).to_owned();
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
    // At 80 columns the header keeps the tabs and the numbers whole, and drops the
    // less important facts (the counts, the program's name) first.
    let rmse = app
        .shared
        .model
        .manifest
        .metrics
        .as_ref()
        .and_then(|m| m.holdout)
        .expect("held out")
        .rmse;
    assert_eq!(
        lines[0].trim_end(),
        format!(
            " [1 items] 2 member  3 map  4 fit  5 audit  · rank {} · held-out RMSE {rmse:.3}",
            app.shared.model.factors.rank
        ),
    );
    assert!(
        lines[1].contains("Catalogue · 400 items · by title"),
        "{}",
        lines[1]
    );
    // The first item by title is highlighted and is the current item.
    let first = app.screens.items.catalogue.visible[0];
    assert_eq!(app.screens.items.current, Some(first));
    assert!(
        lines[2].contains(app.shared.model.ratings.items.name(first)),
        "{}",
        lines[2]
    );
    assert!(
        text.contains(&format!("Nearest 10 to {}", app.title(first))),
        "{text}"
    );
    assert!(text.contains("# distance  cosine"), "{text}");
    // Neighbour rows carry the distance of the first neighbour.
    let d = format!("{:.4}", app.screens.items.neighbours[0].near.distance);
    assert!(text.contains(&d), "{d} in {text}");
    assert!(
        lines[23].contains("q/Esc quit") && lines[23].contains("? help"),
        "{}",
        lines[23]
    );
    // Titles keep at least 20 characters at 80 columns, in both lists.
    let title_cell = |line: &str, title: &str| line.contains(&title[..title.len().min(20)]);
    let long = app
        .screens
        .items
        .catalogue
        .visible
        .iter()
        .find(|&&j| app.title(j).len() > 20);
    if let Some(&j) = long {
        app.update(super::action::Action::Select(super::action::Move::First));
        let at = app
            .screens
            .items
            .catalogue
            .visible
            .iter()
            .position(|&v| v == j)
            .expect("visible");
        for _ in 0..at {
            press(&mut app, KeyCode::Down);
        }
        let text = screen(&mut app, 80, 24);
        assert!(text.lines().any(|l| title_cell(l, app.title(j))), "{text}");
    }
    // The neighbours share the lower half with the loadings, one at a time.
    press(&mut app, KeyCode::Tab);
    press(&mut app, KeyCode::Tab);
    let text = screen(&mut app, 80, 24);
    assert!(text.contains("Loadings"), "{text}");
    assert!(text.contains("f1 "), "{text}");
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
        app.screens.items.catalogue.visible.len() >= 2
            && app
                .screens
                .items
                .catalogue
                .visible
                .iter()
                .all(|&j| app.title(j).to_lowercase().contains("lentil"))
    );
    let start = app.screens.items.current.expect("an item is shown");
    assert_eq!(
        start, app.screens.items.catalogue.visible[0],
        "the first match is shown"
    );
    press(&mut app, KeyCode::Tab);
    assert_eq!(app.screens.items.focus, ItemsPane::Neighbours);
    press(&mut app, KeyCode::Down);
    let target = app.screens.items.neighbours[1].item;
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.screens.items.current, Some(target));
    press(&mut app, KeyCode::Char('['));
    assert_eq!(app.screens.items.current, Some(start));
    press(&mut app, KeyCode::Char(']'));
    assert_eq!(app.screens.items.current, Some(target));
    press(&mut app, KeyCode::Char('m'));
    assert!(screen(&mut app, 100, 30).contains("· cosine"));
    press(&mut app, KeyCode::Char('?'));
    let help = screen(&mut app, 100, 30);
    assert!(help.contains("On the items screen"), "{help}");
    press(&mut app, KeyCode::End);
    let help = screen(&mut app, 100, 30);
    assert!(help.contains("sends nothing anywhere"), "{help}");
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
    let m = app.screens.member.as_ref().expect("member open");
    assert_eq!(
        app.shared.model.ratings.users.name(m.user.unwrap()),
        "m0001"
    );
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
        text.contains(&format!("predicted {:.3}", e.predicted)),
        "{text}"
    );
    press(&mut app, KeyCode::Tab);
    press(&mut app, KeyCode::Down);
    let m = app.screens.member.as_ref().expect("member open");
    assert_eq!(m.focus, MemberPane::Suggestions);
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
        text.contains(&format!(
            "{:.4}",
            app.shared
                .model
                .manifest
                .metrics
                .as_ref()
                .unwrap()
                .train
                .rmse
        )),
        "{text}"
    );
    press(&mut app, KeyCode::Char('3'));
    let ratio = app
        .screens
        .map
        .projection
        .as_ref()
        .expect("projection computed on first view")
        .explained_ratio[0];
    let text = screen(&mut app, 110, 32);
    assert!(text.contains(&format!("x {:.0}%", 100.0 * ratio)), "{text}");
    press(&mut app, KeyCode::Char('+'));
    assert!(app.screens.map.zoom > 1.0);
    press(&mut app, KeyCode::Char('1'));
    assert!(screen(&mut app, 110, 32).contains("Catalogue"));
}

pub(super) fn type_text(app: &mut App, text: &str) {
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
    let item = app.screens.items.current.expect("an item is shown");
    let id = app.shared.model.ratings.items.name(item).to_owned();
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
    let other = app.screens.items.neighbours[0].item;
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
    assert!(demo.has_note(demo.screens.items.current.expect("item")));
}

#[test]
fn an_explorer_saving_after_a_refit_says_so_and_loses_nothing() {
    use sextant::model::notes::{Notes, read_notes};
    let dir = tempfile::tempdir().expect("temp dir");
    let model_dir = dir.path().join("m");
    let mut app = demo_app();
    sextant::model::save_model(&model_dir, &app.shared.model).expect("saved");
    app.notes = Notes::open(&model_dir).expect("opened");
    // Another explorer notes something; then the model is refitted (saved again with a
    // changed manifest) while this one is open.
    let mut other = Notes::open(&model_dir).expect("opened");
    other
        .current
        .set_factor_label(1, "from the other window")
        .unwrap();
    other.save().expect("saved");
    let mut refit = app.shared.model.clone();
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
    let m = app.screens.member.clone().expect("what-if open");
    let w = m.what_if.clone().expect("a what-if");
    let user = app.shared.model.ratings.users.get("m0001").expect("member");
    let own = sextant::analysis::explain::training_ratings(&app.shared.model, user);
    assert_eq!(w.ratings, own);
    let folded = sextant::analysis::foldin::fold_in(&app.shared.model, &own).expect("fold in");
    assert_eq!((&w.vector, w.bias), (&folded.vector, folded.bias));
    assert_eq!(m.rated.len(), own.len());
    let text = screen(&mut app, 110, 40);
    assert!(text.contains("What-if from member m0001"), "{text}");
    assert!(text.contains("profile vector"), "{text}");
    // Raise the highlighted rating: the vector and the explanation move at once.
    let item = m.rated[0].item;
    let before = m.rated[0].actual;
    press(&mut app, KeyCode::Char('>'));
    let m2 = app.screens.member.clone().expect("still open");
    let w2 = m2.what_if.clone().expect("what-if");
    let after = w2.ratings.iter().find(|r| r.0 == item).expect("kept").1;
    assert_eq!(after, (before + 1.0).min(5.0));
    if after != before {
        assert_ne!(w2.vector, w.vector);
    }
    assert_eq!(m2.explanation.as_ref().map(|e| e.item), Some(item));
    // Add the top suggestion: it leaves the suggestions and joins the ratings.
    press(&mut app, KeyCode::Tab);
    let top = app.screens.member.as_ref().expect("open").suggestions[0].item;
    press(&mut app, KeyCode::Char('a'));
    let m3 = app.screens.member.clone().expect("open");
    assert_eq!(m3.rated.len(), own.len() + 1);
    assert!(m3.suggestions.iter().all(|s| s.item != top));
    // Remove it again; then leave the what-if, back to the member as fitted.
    press(&mut app, KeyCode::Char('d'));
    assert_eq!(
        app.screens.member.as_ref().expect("open").rated.len(),
        own.len()
    );
    assert!(
        app.plain_text()
            .expect("explained")
            .0
            .starts_with("explanation-what-if-")
    );
    press(&mut app, KeyCode::Char('w'));
    let m4 = app.screens.member.as_ref().expect("member again");
    assert!(m4.what_if.is_none());
    assert_eq!(m4.user, Some(user));
    // From nobody: add the current item on the items screen.
    let mut fresh = demo_app();
    let current = fresh.screens.items.current.expect("item");
    press(&mut fresh, KeyCode::Char('a'));
    let m5 = fresh.screens.member.as_ref().expect("what-if from nobody");
    assert_eq!(m5.user, None);
    assert_eq!(m5.what_if.as_ref().expect("what-if").ratings.len(), 1);
    assert_eq!(m5.rated[0].item, current);
    assert_eq!(m5.suggestions.len(), 10);
    // Adding from the catalogue stays on the item screen, so several can be added.
    assert_eq!(fresh.shown, ScreenId::Items);
    assert!(
        fresh.status.contains("to the what-if profile"),
        "{}",
        fresh.status
    );
    press(&mut fresh, KeyCode::Down);
    press(&mut fresh, KeyCode::Char('a'));
    assert_eq!(fresh.shown, ScreenId::Items);
    assert_eq!(
        fresh
            .screens
            .member
            .as_ref()
            .and_then(|m| m.what_if.as_ref())
            .map(|w| w.ratings.len()),
        Some(2)
    );
    press(&mut fresh, KeyCode::Char('2'));
    assert!(screen(&mut fresh, 110, 40).contains("What-if · new profile"));
}

#[test]
fn p_asks_before_replacing_a_file_and_writes_the_highlighted_item() {
    let dir = tempfile::tempdir().expect("temp dir");
    let mut app = demo_app();
    app.plain_dir = dir.path().to_path_buf();
    press(&mut app, KeyCode::Char('u'));
    type_text(&mut app, "m0001");
    // A what-if entered and left: p still explains the item highlighted now.
    press(&mut app, KeyCode::Char('w'));
    press(&mut app, KeyCode::Char('w'));
    press(&mut app, KeyCode::Down);
    let item = app
        .screens
        .member
        .as_ref()
        .and_then(super::screens::member::MemberView::highlighted)
        .expect("highlighted");
    let name = format!(
        "explanation-m0001-{}.txt",
        app.shared.model.ratings.items.name(item)
    );
    press(&mut app, KeyCode::Char('p'));
    let path = dir.path().join(&name);
    let first = std::fs::read_to_string(&path).expect("written");
    assert!(first.contains(app.title(item)), "{first}");
    // Again: it asks; anything but y keeps the file.
    std::fs::write(&path, "kept").expect("overwritten by the test");
    press(&mut app, KeyCode::Char('p'));
    assert_eq!(app.mode, Mode::Prompt);
    press(&mut app, KeyCode::Char('n'));
    assert_eq!(app.mode, Mode::Normal);
    assert_eq!(std::fs::read_to_string(&path).expect("file"), "kept");
    press(&mut app, KeyCode::Char('p'));
    press(&mut app, KeyCode::Char('y'));
    assert_eq!(std::fs::read_to_string(&path).expect("file"), first);
}

#[test]
fn the_plain_explanation_names_the_member_and_item() {
    let mut app = demo_app();
    press(&mut app, KeyCode::Char('u'));
    type_text(&mut app, "m0001");
    let (name, text) = app.plain_text().expect("an explanation is shown");
    let item = app
        .screens
        .member
        .as_ref()
        .and_then(super::screens::member::MemberView::highlighted)
        .expect("highlighted");
    assert_eq!(
        name,
        format!(
            "explanation-m0001-{}.txt",
            app.shared.model.ratings.items.name(item)
        )
    );
    assert!(text.contains(app.title(item)), "{text}");
}

#[test]
fn the_audit_screen_lists_the_least_coherent_items_and_opens_them() {
    let mut app = demo_app();
    press(&mut app, KeyCode::Char('5'));
    let a = app.screens.audit.clone().expect("computed on first view");
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
    let second = app.screens.audit.as_ref().expect("audit").least[1].item;
    press(&mut app, KeyCode::Enter);
    assert_eq!(app.shown, ScreenId::Items);
    assert_eq!(app.screens.items.current, Some(second));
    press(&mut app, KeyCode::Char('['));
    assert_ne!(app.screens.items.current, Some(second));
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
    let top = app.items_layout().catalogue.y;
    super::handle_mouse(
        &mut app,
        mouse(MouseEventKind::Down(MouseButton::Left), 3, top + 4),
    );
    assert_eq!(app.screens.items.catalogue.selected, 3);
    assert_eq!(
        app.screens.items.current,
        Some(app.screens.items.catalogue.visible[3])
    );
    super::handle_mouse(&mut app, mouse(MouseEventKind::ScrollDown, 3, top + 4));
    assert_eq!(app.screens.items.catalogue.selected, 4);
    // A click on the second neighbour row (below the column header) selects it.
    let n = app.items_layout().neighbours;
    super::handle_mouse(
        &mut app,
        mouse(MouseEventKind::Down(MouseButton::Left), n.x + 5, n.y + 3),
    );
    assert_eq!(app.screens.items.focus, ItemsPane::Neighbours);
    assert_eq!(app.screens.items.neighbour_selected, 1);
}

#[test]
fn the_loadings_pane_shows_what_a_factor_stands_for() {
    let mut app = demo_app();
    press(&mut app, KeyCode::Tab);
    press(&mut app, KeyCode::Tab);
    assert_eq!(app.screens.items.focus, ItemsPane::Loadings);
    press(&mut app, KeyCode::Down);
    assert_eq!(app.screens.items.factor_selected, 1);
    let (top, bottom) = app.screens.items.factor_extremes.clone();
    assert_eq!(top.len(), 4);
    let column = |j: u32| app.shared.model.factors.item(j)[1];
    let max = (0..app.shared.model.ratings.items.len() as u32)
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
    let before = app.screens.items.neighbours.clone();
    press(&mut app, KeyCode::Down);
    press(&mut app, KeyCode::Down);
    assert!(app.deferred.neighbours);
    assert_eq!(
        app.screens.items.neighbours, before,
        "no search while keys arrive"
    );
    assert!(screen(&mut app, 100, 30).contains("updating…"));
    press(&mut app, KeyCode::Char('/'));
    press(&mut app, KeyCode::Char('z'));
    assert!(app.deferred.filter);
    app.settle();
    assert!(!app.deferred.neighbours && !app.deferred.filter);
    assert!(
        app.screens
            .items
            .catalogue
            .visible
            .iter()
            .all(|&j| app.title(j).to_lowercase().contains('z'))
    );
    assert_ne!(app.screens.items.neighbours, before);
}

#[test]
fn a_tiny_window_says_so() {
    let mut app = demo_app();
    assert!(screen(&mut app, 40, 8).contains("window too small"));
}

/// Every key of every table, in every context, plus a few no table binds. Left out: `p`
/// (writes a file into the working directory) and `S` (saves notes into one).
fn every_key() -> Vec<KeyEvent> {
    use super::keymap::{EVERY_SCREEN, GLOBAL, HELP, LISTS, TYPING};
    let mut tables = vec![GLOBAL, EVERY_SCREEN, LISTS, HELP, TYPING];
    tables.extend(super::screens::SCREENS.iter().map(|s| s.bindings));
    let mut keys: Vec<KeyEvent> = tables
        .iter()
        .flat_map(|t| t.iter())
        .flat_map(|b| b.keys.iter())
        .filter(|(code, _)| !matches!(code, KeyCode::Char('p' | 'S')))
        .map(|&(code, mods)| KeyEvent::new(code, mods))
        .collect();
    for c in ['1', '2', '3', '4', '5', 'é', 's', ' ', 'Z'] {
        keys.push(KeyEvent::new(KeyCode::Char(c), KeyModifiers::NONE));
    }
    keys.push(KeyEvent::new(KeyCode::F(5), KeyModifiers::NONE));
    keys.push(KeyEvent::new(KeyCode::Char('x'), KeyModifiers::ALT));
    keys.sort_by_key(|k| format!("{k:?}"));
    keys.dedup();
    keys
}

#[test]
fn thousands_of_random_keys_clicks_and_sizes_in_every_context_never_panic() {
    use ratatui::crossterm::event::{MouseButton, MouseEvent, MouseEventKind};
    let mut app = demo_app();
    let mut rng = sextant::rng::Rng::new(2024);
    let keys = every_key();
    let mut contexts = std::collections::HashSet::new();
    for step in 0..6000 {
        contexts.insert(format!("{:?}", app.context()));
        if step % 7 == 0 {
            let kind = match rng.below(3) {
                0 => MouseEventKind::ScrollDown,
                1 => MouseEventKind::ScrollUp,
                _ => MouseEventKind::Down(MouseButton::Left),
            };
            let (column, row) = (
                rng.below(u64::from(app.size.0)) as u16,
                rng.below(u64::from(app.size.1)) as u16,
            );
            super::handle_mouse(
                &mut app,
                MouseEvent {
                    kind,
                    column,
                    row,
                    modifiers: KeyModifiers::NONE,
                },
            );
        } else {
            handle_key(&mut app, keys[rng.below(keys.len() as u64) as usize]);
        }
        // Keep going: quitting is not the point here.
        app.quit = false;
        if step % 40 == 0 {
            let (w, h) = (1 + rng.below(160) as u16, 1 + rng.below(60) as u16);
            screen(&mut app, w, h);
        }
    }
    // Every screen, the help, the filter and a prompt were reached.
    for context in ["Help", "Search", "Prompt"] {
        assert!(
            contexts.contains(context),
            "{context} never reached: {contexts:?}"
        );
    }
    for s in super::screens::SCREENS {
        let name = format!("Screen({:?})", s.id);
        assert!(
            contexts.contains(&name),
            "{name} never reached: {contexts:?}"
        );
    }
}

/// What each screen shows, as text to compare.
fn screen_states(app: &App) -> Vec<(ScreenId, String)> {
    let items = &app.screens.items;
    vec![
        (
            ScreenId::Items,
            format!(
                "{:?} {} {:?} {} {} {:?} {:?} {} {}",
                items.current,
                items.catalogue.selected,
                items.catalogue.filter,
                items.neighbour_selected,
                items.factor_selected,
                items.focus,
                items.metric,
                items.k,
                items.catalogue.visible.len()
            ),
        ),
        (ScreenId::Member, format!("{:?}", app.screens.member)),
        (
            ScreenId::Map,
            format!("{:?} {:?}", app.screens.map.zoom, app.screens.map.centre),
        ),
        (
            ScreenId::Audit,
            format!(
                "{:?}",
                app.screens.audit.as_ref().map(|a| (a.focus, a.selected))
            ),
        ),
    ]
}

#[test]
fn keys_never_act_on_a_screen_that_is_not_shown() {
    let keys = every_key();
    for shown in super::screens::SCREENS {
        for &key in &keys {
            // The demo with every screen visited and something open on each.
            let mut app = demo_app();
            for k in ['5', '3', '4', '2'] {
                press(&mut app, KeyCode::Char(k));
            }
            press(&mut app, KeyCode::Char('u'));
            type_text(&mut app, "m0001");
            press(&mut app, KeyCode::Char(shown.key));
            let before = screen_states(&app);
            handle_key(&mut app, key);
            if app.shown != shown.id {
                continue; // The key switched screens (a screen key, Enter, w, u…).
            }
            // Adding the current item to the what-if is the item screen's own tool.
            let allowed = |id: ScreenId| {
                id == shown.id
                    || (shown.id == ScreenId::Items
                        && id == ScreenId::Member
                        && key.code == KeyCode::Char('a'))
            };
            for ((id, a), (_, b)) in before.iter().zip(screen_states(&app)) {
                assert!(
                    allowed(*id) || *a == b,
                    "{key:?} on the {} screen changed the {id:?} screen",
                    shown.name
                );
            }
        }
    }
}

/// The demo ratings refitted with member and item offsets (a few iterations).
fn biased_app() -> App {
    let demo = demo_app().shared.model.clone();
    let options = sextant::model::FitOptions {
        rank: demo.factors.rank,
        lambda_bias: Some(1.0),
        max_iters: 5,
        ..sextant::model::FitOptions::default()
    };
    let result = sextant::model::fit(&demo.ratings, &options, None, |_| {}).expect("fit");
    let run = demo.manifest.options.clone().expect("fitted");
    let provenance = sextant::model::Provenance {
        scale: demo.manifest.scale.clone(),
        inputs: Vec::new(),
        meta: demo.meta.clone(),
    };
    let model = sextant::model::Model::from_fit(demo.ratings, &options, run, result, provenance)
        .expect("a model");
    App::new(model, "biased")
}

#[test]
fn a_model_with_biases_shows_its_offsets_in_the_why_pane_what_if_and_fit() {
    let mut app = biased_app();
    press(&mut app, KeyCode::Char('u'));
    type_text(&mut app, "m0001");
    let e = app
        .screens
        .member
        .as_ref()
        .and_then(|m| m.explanation.clone())
        .expect("an explanation");
    let (b, c) = (e.user_bias.expect("offset"), e.item_bias.expect("offset"));
    let text = screen(&mut app, 120, 40);
    assert!(
        text.contains(&format!("{b:+8.3}  the member's offset")),
        "{text}"
    );
    assert!(
        text.contains(&format!("{c:+8.3}  the item's offset")),
        "{text}"
    );
    assert!(
        text.contains("the prediction (μ + offsets + factors)"),
        "{text}"
    );
    press(&mut app, KeyCode::Char('w'));
    let w = app
        .screens
        .member
        .as_ref()
        .and_then(|m| m.what_if.clone())
        .expect("what-if");
    let text = screen(&mut app, 120, 40);
    assert!(text.contains(&format!("off {:>+7.3}", w.bias)), "{text}");
    press(&mut app, KeyCode::Char('4'));
    assert!(screen(&mut app, 120, 40).contains("offsets λ_b 1"));
    // The smallest supported window draws every screen of a model with biases.
    press(&mut app, KeyCode::Char('w'));
    for key in ['1', '2', '3', '4', '5'] {
        press(&mut app, KeyCode::Char(key));
        let text = screen(&mut app, 80, 24);
        assert!(text.contains("rank 10"), "{text}");
    }
}
