//! `sextant explore`: the terminal explorer on a model directory.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use clap::Args;
use sextant::model::{Model, load_model};

use super::UsageError;
use super::demo::Demo;
use crate::tui;

/// Open the terminal explorer.
#[derive(Debug, Args)]
pub struct ExploreArgs {
    /// The model directory (made by `sextant fit` or `sextant import`).
    #[arg(value_name = "MODEL", required_unless_present = "demo")]
    model: Option<PathBuf>,
    /// Open a bundled demo model instead: ratings (the default) or implicit (how often the
    /// same invented members cooked each recipe).
    #[arg(long, value_enum, value_name = "KIND", num_args = 0..=1,
          default_missing_value = "ratings", conflicts_with = "model")]
    demo: Option<Demo>,
    /// Benchmark hook: instead of opening the terminal, time loading, the first frame and
    /// this many further frames (each after a keystroke) on an off-screen 120×40 buffer, and
    /// print the times as JSON.
    #[arg(long, hide = true, value_name = "FRAMES")]
    measure_frames: Option<usize>,
}

pub fn run(args: &ExploreArgs) -> anyhow::Result<()> {
    if let Some(frames) = args.measure_frames {
        return measure(args, frames);
    }
    ensure_terminal()?;
    if let Some(demo) = args.demo {
        let (model, label) = demo.load()?;
        return open(model, label, sextant::model::notes::Notes::in_memory());
    }
    let path = args.path();
    let (model, notes) = sextant::model::notes::load_with_notes(path)?;
    open(model, path.display().to_string(), notes)
}

impl ExploreArgs {
    /// The model directory (clap requires one unless --demo is given).
    fn path(&self) -> &Path {
        self.model.as_deref().unwrap_or(Path::new("."))
    }
}

/// True when both standard input and output are terminals.
pub fn has_terminal() -> bool {
    std::io::stdin().is_terminal() && std::io::stdout().is_terminal()
}

fn ensure_terminal() -> Result<(), UsageError> {
    if has_terminal() {
        Ok(())
    } else {
        Err(UsageError("the explorer needs an interactive terminal; for scripts use info, neighbours, suggest or explain".into()))
    }
}

/// Builds the explorer's state (indexes included) on the normal screen, then opens it.
pub fn open(
    model: Model,
    label: String,
    notes: sextant::model::notes::Notes,
) -> anyhow::Result<()> {
    let mut app = tui::app::App::new(model, label);
    app.notes = notes;
    let ending = tui::run(&mut app);
    let rescued = app.rescue_notes();
    let ending = ending?;
    // The terminal may be gone: a message that cannot be written is not an error.
    let say = |text: &str| {
        use std::io::Write;
        let _ = writeln!(
            std::io::stderr(),
            "sextant: {}",
            sextant::text::escaped(text)
        );
    };
    if let Some(text) = &rescued {
        say(text);
    }
    match ending {
        tui::Ending::Quit => Ok(()),
        tui::Ending::Signal(signal) => {
            // The terminal is restored; leave the way the signal would have, by its number.
            say(&format!(
                "stopped by signal {signal}; the terminal is restored"
            ));
            std::process::exit(128 + signal);
        }
        // SIGHUP's number: the conventional exit for a session whose terminal went away.
        tui::Ending::TerminalLost(_) => std::process::exit(128 + 1),
    }
}

/// Times what a person waits for: load, first frame, and frames after keystrokes.
fn measure(args: &ExploreArgs, frames: usize) -> anyhow::Result<()> {
    use ratatui::Terminal;
    use ratatui::backend::TestBackend;
    use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
    use std::time::Instant;

    let start = Instant::now();
    let (model, label) = match args.demo {
        Some(demo) => demo.load()?,
        None => (load_model(args.path())?, args.path().display().to_string()),
    };
    let loaded = start.elapsed();
    let mut app = tui::app::App::new(model, label);
    let mut terminal = Terminal::new(TestBackend::new(120, 40))?;
    app.update(tui::action::Action::Resize(120, 40));
    let theme = tui::theme::Theme::plain();
    terminal.draw(|frame| tui::render(&app, frame, theme))?;
    let first = start.elapsed();
    let keys = [
        KeyCode::Down,
        KeyCode::Down,
        KeyCode::PageDown,
        KeyCode::Tab,
        KeyCode::Down,
        KeyCode::Enter,
        KeyCode::Char('['),
    ];
    // As in the event loop: searches wait until input pauses. Every fourth key is followed
    // by a pause; the search then runs and its frame is timed separately.
    app.deferred.enabled = true;
    let (mut times, mut settles) = (Vec::with_capacity(frames), Vec::new());
    for k in 0..frames {
        let t = Instant::now();
        tui::handle_key(
            &mut app,
            KeyEvent::new(keys[k % keys.len()], KeyModifiers::NONE),
        );
        terminal.draw(|frame| tui::render(&app, frame, theme))?;
        times.push(t.elapsed().as_secs_f64());
        if k % 4 == 3 {
            let t = Instant::now();
            app.settle();
            terminal.draw(|frame| tui::render(&app, frame, theme))?;
            settles.push(t.elapsed().as_secs_f64());
        }
    }
    let quantile = |values: &mut Vec<f64>, q: f64| {
        values.sort_by(f64::total_cmp);
        let at = ((values.len() as f64 * q) as usize).min(values.len().saturating_sub(1));
        values.get(at).copied().unwrap_or(0.0) * 1e3
    };
    println!(
        "{{\"load_s\": {}, \"first_frame_s\": {}, \"keystroke_frame_ms_median\": {}, \"keystroke_frame_ms_p99\": {}, \"after_pause_search_and_frame_ms_median\": {}}}",
        loaded.as_secs_f64(),
        first.as_secs_f64(),
        quantile(&mut times, 0.5),
        quantile(&mut times, 0.99),
        quantile(&mut settles, 0.5)
    );
    Ok(())
}
