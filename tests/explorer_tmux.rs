//! The real binary in a real terminal (tmux): open the demo, search, jump to a neighbour
//! and back, open a member and their explanation, open help, quit — and check the terminal came back (echo and line mode on).
//! `.ci/run` installs tmux when it is missing.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::process::Command;
use std::thread::sleep;
use std::time::{Duration, Instant};

struct Session(String);

impl Session {
    fn start(name: &str, command: &str) -> Self {
        Self::start_sized(name, command, 120, 40)
    }

    fn start_sized(name: &str, command: &str, width: u16, height: u16) -> Self {
        let _ = Command::new("tmux")
            .args(["kill-session", "-t", name])
            .output();
        let status = Command::new("tmux")
            .args([
                "new-session",
                "-d",
                "-x",
                &width.to_string(),
                "-y",
                &height.to_string(),
                "-s",
                name,
                command,
            ])
            .status()
            .expect("tmux runs (install it: apt-get install tmux)");
        assert!(status.success());
        Self(name.to_owned())
    }

    fn keys(&self, keys: &[&str]) {
        for key in keys {
            let status = Command::new("tmux")
                .args(["send-keys", "-t", &self.0, key])
                .status()
                .unwrap();
            assert!(status.success());
            sleep(Duration::from_millis(120));
        }
    }

    /// The process id of the pane's own process.
    fn pane_pid(&self) -> String {
        let pane = Command::new("tmux")
            .args(["list-panes", "-t", &self.0, "-F", "#{pane_pid}"])
            .output()
            .unwrap();
        String::from_utf8_lossy(&pane.stdout).trim().to_owned()
    }

    fn screen(&self) -> String {
        let out = Command::new("tmux")
            .args(["capture-pane", "-p", "-t", &self.0])
            .output()
            .unwrap();
        String::from_utf8_lossy(&out.stdout).into_owned()
    }

    /// Waits until the screen contains `text` (the binary may take a moment to start).
    fn wait_for(&self, text: &str) -> String {
        let start = Instant::now();
        loop {
            let screen = self.screen();
            if screen.contains(text) {
                return screen;
            }
            assert!(
                start.elapsed() < Duration::from_secs(20),
                "waited for {text:?}; screen:\n{screen}"
            );
            sleep(Duration::from_millis(100));
        }
    }
}

impl Drop for Session {
    fn drop(&mut self) {
        let _ = Command::new("tmux")
            .args(["kill-session", "-t", &self.0])
            .output();
    }
}

#[test]
fn explore_the_demo_and_leave_the_terminal_as_it_was() {
    let binary = env!("CARGO_BIN_EXE_sextant");
    let script = format!(
        "'{binary}'; echo EXITED $?; stty -a | tr ' ' '\\n' | grep -x -e echo -e icanon | tr '\\n' ' '; echo; sleep 30"
    );
    let session = Session::start(
        "sextant-e2e",
        &format!("sh -c \"{}\"", script.replace('"', "\\\"")),
    );
    session.wait_for("Catalogue · 400 items");
    session.keys(&["/", "l", "e", "n", "t", "i", "l", "Enter"]);
    let screen = session.wait_for("match 'lentil'");
    assert!(screen.contains("Lentil"), "{screen}");
    session.keys(&["Tab", "j", "Enter"]);
    let jumped = session.screen();
    session.keys(&["["]);
    let back = session.screen();
    assert_ne!(
        jumped.lines().nth(1),
        back.lines().nth(1),
        "jump and back show different items"
    );
    session.keys(&["u", "m", "0", "0", "0", "1", "Enter"]);
    let member = session.wait_for("Member m0001");
    assert!(
        member.contains("Why")
            && member.contains("predicted")
            && member.contains("support: member"),
        "{member}"
    );
    session.keys(&["1"]);
    session.wait_for("Catalogue ·");
    session.keys(&["?"]);
    session.wait_for("On the items screen");
    session.keys(&["Escape", "q"]);
    let after = session.wait_for("icanon");
    assert!(after.contains("EXITED 0"), "{after}");
    let modes = after
        .lines()
        .find(|l| l.contains("icanon"))
        .unwrap_or_default();
    assert!(
        modes.split_whitespace().any(|w| w == "echo") && modes.contains("icanon"),
        "terminal modes restored: {after}"
    );
}

/// The explorer's process id inside a session (the child of the pane's shell).
fn explorer_pid(session: &Session) -> String {
    let shell = session.pane_pid();
    let child = Command::new("pgrep")
        .args(["-P", &shell, "-x", "sextant"])
        .output()
        .unwrap();
    let pid = String::from_utf8_lossy(&child.stdout).trim().to_owned();
    assert!(
        !pid.is_empty(),
        "no sextant process under the shell {shell}"
    );
    pid
}

#[test]
fn sigterm_and_sighup_restore_the_terminal_like_quit() {
    let binary = env!("CARGO_BIN_EXE_sextant");
    for (signal, code) in [("TERM", 143), ("HUP", 129)] {
        let script = format!(
            "'{binary}'; echo EXITED \\$?; stty -a | tr ' ' '\\n' | grep -x -e echo -e icanon | tr '\\n' ' '; echo; sleep 30"
        );
        let session = Session::start(
            &format!("sextant-signal-{signal}"),
            &format!("sh -c \"{}\"", script.replace('"', "\\\"")),
        );
        session.wait_for("Catalogue · 400 items");
        session.keys(&["u", "m", "0"]);
        let pid = explorer_pid(&session);
        let status = Command::new("kill")
            .args([&format!("-{signal}"), &pid])
            .status()
            .unwrap();
        assert!(status.success());
        let after = session.wait_for("icanon");
        assert!(
            after.contains(&format!("EXITED {code}")),
            "{signal}: {after}"
        );
        assert!(
            !after.contains("Catalogue ·"),
            "{signal}: still on the explorer's screen: {after}"
        );
        let modes = after
            .lines()
            .find(|l| l.contains("icanon"))
            .unwrap_or_default();
        assert!(
            modes.split_whitespace().any(|w| w == "echo") && modes.contains("icanon"),
            "{signal}: terminal modes restored: {after}"
        );
    }
}

/// Whether process `pid` still runs (a zombie waiting for its parent to collect it has
/// finished: it holds no memory and uses no CPU).
fn is_running(pid: &str) -> bool {
    std::fs::read_to_string(format!("/proc/{pid}/stat")).is_ok_and(|stat| {
        // The state follows the parenthesised command name.
        let state = stat.rsplit(") ").next().and_then(|s| s.chars().next());
        !matches!(state, Some('Z' | 'X') | None)
    })
}

/// CPU time (user + system) process `pid` has used, in clock ticks.
fn cpu_ticks(pid: &str) -> u64 {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).unwrap();
    let fields: Vec<&str> = stat.rsplit(") ").next().unwrap().split(' ').collect();
    // utime and stime are fields 14 and 15 of the whole line, 12 and 13 after the name.
    fields[11].parse::<u64>().unwrap() + fields[12].parse::<u64>().unwrap()
}

#[test]
fn losing_the_terminal_ends_the_explorer_within_two_seconds() {
    let binary = env!("CARGO_BIN_EXE_sextant");
    // The explorer is the pane's own process, as under ssh: when the session goes, its
    // terminal hangs up.
    let session = Session::start("sextant-lost", &format!("'{binary}'"));
    session.wait_for("Catalogue · 400 items");
    let pid = session.pane_pid();
    assert!(is_running(&pid), "the explorer runs as the pane's process");
    // Open the help and start typing a member id: the loss must end any mode.
    session.keys(&["?", "Escape", "u", "m"]);
    let status = Command::new("tmux")
        .args(["kill-session", "-t", &session.0])
        .status()
        .unwrap();
    assert!(status.success());
    let start = Instant::now();
    while is_running(&pid) {
        assert!(
            start.elapsed() < Duration::from_secs(2),
            "the explorer still runs {:?} after its terminal went away (cpu ticks {})",
            start.elapsed(),
            cpu_ticks(&pid)
        );
        sleep(Duration::from_millis(20));
    }
}

#[test]
fn an_idle_explorer_sleeps() {
    let binary = env!("CARGO_BIN_EXE_sextant");
    let session = Session::start("sextant-idle", &format!("'{binary}'"));
    session.wait_for("Catalogue · 400 items");
    let pid = session.pane_pid();
    sleep(Duration::from_millis(500));
    let before = cpu_ticks(&pid);
    sleep(Duration::from_secs(3));
    let used = cpu_ticks(&pid) - before;
    // A tick is 10 ms: a loop that woke to poll would use several in three seconds.
    assert!(used <= 1, "idle explorer used {used} clock ticks in 3 s");
}

/// The shell command that runs the explorer, then reports its exit code and the
/// terminal's modes, and stays open so the test can read them.
fn reporting(binary: &str) -> String {
    reporting_with(binary, "")
}

/// [`reporting`] with arguments after the binary.
fn reporting_with(binary: &str, args: &str) -> String {
    let script = format!(
        "'{binary}'{args}; echo EXITED \\$?; stty -a | tr ' ' '\\n' | grep -x -e echo -e icanon | tr '\\n' ' '; echo; sleep 30"
    );
    format!("sh -c \"{}\"", script.replace('"', "\\\""))
}

#[test]
fn ctrl_c_quits_from_the_help_and_from_a_prompt() {
    let binary = env!("CARGO_BIN_EXE_sextant");
    for (name, keys) in [
        ("help", &["?"][..]),
        ("prompt", &["u", "m", "0"][..]),
        ("search", &["/", "s", "o"][..]),
    ] {
        let session = Session::start(&format!("sextant-ctrl-c-{name}"), &reporting(binary));
        session.wait_for("Catalogue · 400 items");
        session.keys(keys);
        session.keys(&["C-c"]);
        let after = session.wait_for("icanon");
        assert!(after.contains("EXITED 0"), "{name}: {after}");
    }
}

#[test]
fn enter_on_a_largest_miss_opens_that_member_at_that_item() {
    let binary = env!("CARGO_BIN_EXE_sextant");
    let session = Session::start("sextant-miss", &format!("'{binary}'"));
    session.wait_for("Catalogue · 400 items");
    session.keys(&["5"]);
    let audit = session.wait_for("Largest misses");
    // The first miss row: rated, predicted, residual, member, item.
    let row = audit
        .lines()
        .skip_while(|l| !l.contains("resid  member"))
        .nth(1)
        .expect("a miss row");
    let fields: Vec<&str> = row.split('│').collect();
    let cells: Vec<&str> = fields
        .iter()
        .find(|f| f.contains(" m"))
        .expect("the misses pane")
        .split_whitespace()
        .collect();
    let member = cells[3].to_owned();
    let title_start = cells[4];
    session.keys(&["Tab", "Enter"]);
    let screen = session.wait_for(&format!("Member {member}"));
    // The Why pane explains the missed item, highlighted in the ratings.
    let why = screen
        .lines()
        .skip_while(|l| !l.contains("Why"))
        .nth(1)
        .unwrap_or_default();
    assert!(
        why.contains(title_start),
        "{title_start} in {why}\n{screen}"
    );
}

#[test]
fn a_walk_through_every_screen_at_80_by_24() {
    let binary = env!("CARGO_BIN_EXE_sextant");
    let session = Session::start_sized("sextant-walk", &reporting(binary), 80, 24);
    let first = session.wait_for("Catalogue · 400 items");
    // Numbers are never cut: the header keeps the held-out RMSE whole.
    assert!(
        first
            .lines()
            .next()
            .unwrap()
            .contains("held-out RMSE 0.734"),
        "{first}"
    );
    session.keys(&["/", "s", "o", "u", "p", "Enter", "Tab", "j", "Enter"]);
    session.wait_for("match 'soup'");
    // Focus is on the neighbours after Enter: one Tab reaches the loadings.
    session.keys(&["Tab"]);
    session.wait_for("Loadings");
    session.keys(&["u", "m", "0", "0", "0", "1", "Enter"]);
    session.wait_for("Member m0001");
    session.keys(&["Tab", "Tab", "G"]);
    session.wait_for("support: member");
    session.keys(&["w"]);
    session.wait_for("What-if from member m0001");
    session.keys(&["w", "3"]);
    session.wait_for("Map · principal components");
    session.keys(&["+", "Left"]);
    session.wait_for("zoom 1.5×");
    session.keys(&["4"]);
    session.wait_for("326 iterations, converged");
    session.keys(&["5"]);
    session.wait_for("Coherence");
    session.keys(&["Tab", "Tab"]);
    session.wait_for("Vector lengths");
    session.keys(&["?", "End"]);
    let help = session.wait_for("Cautions");
    assert!(help.contains("sends nothing anywhere"), "{help}");
    session.keys(&["Escape", "q"]);
    let after = session.wait_for("icanon");
    assert!(after.contains("EXITED 0"), "{after}");
}

#[test]
fn the_implicit_demo_speaks_of_scores_at_80_by_24() {
    let binary = env!("CARGO_BIN_EXE_sextant");
    let command = reporting_with(binary, " explore --demo implicit");
    let session = Session::start_sized("sextant-implicit", &command, 80, 24);
    let first = session.wait_for("Catalogue · 400 items");
    assert!(
        first
            .lines()
            .next()
            .unwrap()
            .contains("held-out rank 12.5%"),
        "{first}"
    );
    session.keys(&["u", "m", "0", "0", "0", "1", "Enter"]);
    let member = session.wait_for("most chosen first");
    assert!(member.contains("count  score"), "{member}");
    session.keys(&["Tab"]);
    session.wait_for("not chosen, highest score first");
    session.keys(&["Tab", "G"]);
    session.wait_for("support: member");
    session.keys(&["w", ">"]);
    session.wait_for("What-if from member m0001");
    session.keys(&["w", "4"]);
    session.wait_for("620 iterations, converged");
    session.keys(&["5", "Tab"]);
    session.wait_for("Lowest scores");
    session.keys(&["q"]);
    let after = session.wait_for("icanon");
    assert!(after.contains("EXITED 0"), "{after}");
}
