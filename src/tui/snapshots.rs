//! Every screen drawn off-screen at 80×24 (a standard terminal, and what ssh sessions
//! often get) and at 120×40, compared with the reviewed snapshots in `snapshots/`
//! (insta: symbols only, not styles). After a deliberate change, review the new
//! drawings and accept them: `INSTA_UPDATE=always cargo test --bin sextant snapshots`,
//! then read the diff of `src/tui/snapshots/` like code.
//!
//! The README's screenshots come from here too: [`readme_screenshots_match_the_explorer`]
//! fails when `assets/explorer-*.txt` or the README's copies differ from a fresh drawing
//! (`SEXTANT_BLESS=1` rewrites the asset files; paste them into the README).

use ratatui::Terminal;
use ratatui::backend::TestBackend;
use ratatui::crossterm::event::KeyCode;

use super::app::App;
use super::tests::{demo_app, implicit_app, press, screen, type_text};
use super::theme::Theme;

/// The demo with each screen in a state worth looking at; `implicit-VIEW` is the same
/// view of the implicit-feedback demo.
fn on(name: &str) -> App {
    let (mut app, name) = match name.strip_prefix("implicit-") {
        Some(view) => (implicit_app(), view),
        None => (demo_app(), name),
    };
    match name {
        "items" => {
            press(&mut app, KeyCode::Char('/'));
            type_text(&mut app, "soup");
        }
        "loadings" => {
            press(&mut app, KeyCode::Tab);
            press(&mut app, KeyCode::Tab);
            press(&mut app, KeyCode::Down);
        }
        "member" => {
            press(&mut app, KeyCode::Char('u'));
            type_text(&mut app, "m0001");
        }
        "why" => {
            press(&mut app, KeyCode::Char('u'));
            type_text(&mut app, "m0001");
            press(&mut app, KeyCode::Tab);
            press(&mut app, KeyCode::Tab);
        }
        "what-if" => {
            press(&mut app, KeyCode::Char('u'));
            type_text(&mut app, "m0001");
            press(&mut app, KeyCode::Char('w'));
        }
        "map" => press(&mut app, KeyCode::Char('3')),
        "fit" => press(&mut app, KeyCode::Char('4')),
        "audit" => press(&mut app, KeyCode::Char('5')),
        "audit-misses" => {
            press(&mut app, KeyCode::Char('5'));
            press(&mut app, KeyCode::Tab);
        }
        "help" => press(&mut app, KeyCode::Char('?')),
        _ => unreachable!("no such view: {name}"),
    }
    app
}

const VIEWS: [&str; 15] = [
    "items",
    "loadings",
    "member",
    "why",
    "what-if",
    "map",
    "fit",
    "audit",
    "audit-misses",
    "help",
    "implicit-member",
    "implicit-why",
    "implicit-what-if",
    "implicit-fit",
    "implicit-audit-misses",
];

fn drawn(app: &mut App, width: u16, height: u16) -> TestBackend {
    app.update(super::action::Action::Resize(width, height));
    let mut terminal = Terminal::new(TestBackend::new(width, height)).expect("test backend");
    terminal
        .draw(|frame| super::render(app, frame, Theme::plain()))
        .expect("draw");
    terminal.backend().clone()
}

#[test]
fn every_screen_at_80_by_24_and_120_by_40() {
    for view in VIEWS {
        for (width, height) in [(80, 24), (120, 40)] {
            let mut app = on(view);
            insta::assert_snapshot!(
                format!("{view}-{width}x{height}"),
                drawn(&mut app, width, height)
            );
        }
    }
}

/// The screenshots the README shows: (asset file, view, width, height).
const SCREENSHOTS: [(&str, &str, u16, u16); 2] = [
    ("assets/explorer-items.txt", "items", 100, 26),
    ("assets/explorer-member.txt", "member", 80, 24),
];

#[test]
fn readme_screenshots_match_the_explorer() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let readme = std::fs::read_to_string(root.join("README.md")).expect("README");
    let drawn: Vec<(&str, String)> = SCREENSHOTS
        .iter()
        .map(|&(file, view, width, height)| {
            let mut app = on(view);
            let text = screen(&mut app, width, height)
                .lines()
                .map(str::trim_end)
                .collect::<Vec<_>>()
                .join("\n")
                + "\n";
            (file, text)
        })
        .collect();
    if std::env::var_os("SEXTANT_BLESS").is_some() {
        for (file, text) in &drawn {
            std::fs::write(root.join(file), text).expect("asset written");
        }
    }
    for (file, text) in drawn {
        let asset = std::fs::read_to_string(root.join(file)).unwrap_or_default();
        assert_eq!(
            asset, text,
            "{file} differs from the explorer as drawn now; rerun with SEXTANT_BLESS=1, review, and paste it into the README"
        );
        assert!(
            readme.contains(&format!("```text\n{text}```")),
            "the README's copy of {file} differs from the file; paste the file into the README"
        );
    }
}
