//! The explorer on a generated 1,000,000-item, rank-32 model: time to the first frame
//! (load, state, draw) and the time to answer a keystroke with a new frame, through the
//! binary's hidden `explore --measure-frames` hook (an off-screen 120×40 buffer).
//!
//! Run: `cargo bench --bench explorer` (add `-- --quick` for 100,000 items).

use std::process::Command;

use sextant::data::{IdMap, Rating, RatingScale, Ratings};
use sextant::model::{Center, FactorModel, Model, Provenance, save_model};
use sextant::rng::Rng;

fn main() {
    let quick = std::env::args().any(|a| a == "--quick");
    let (items, users, rank) = if quick {
        (100_000, 20_000, 32)
    } else {
        (1_000_000, 50_000, 32)
    };
    let mut rng = Rng::new(5);
    let mut ratings = Ratings {
        users: IdMap::new(),
        items: IdMap::new(),
        entries: Vec::new(),
    };
    for i in 0..users {
        ratings.users.intern(&format!("u{i}"));
    }
    for j in 0..items {
        ratings.items.intern(&format!("i{j}"));
    }
    for user in 0..users as u32 {
        let mut chosen: Vec<u32> = (0..40).map(|_| rng.below(items as u64) as u32).collect();
        chosen.sort_unstable();
        chosen.dedup();
        for item in chosen {
            ratings.entries.push(Rating {
                user,
                item,
                value: 1.0 + rng.below(5) as f64,
                holdout: false,
            });
        }
    }
    let decay = |d: usize| (-(d as f64) / 8.0).exp();
    let factors = FactorModel {
        rank,
        mu: 3.0,
        users: (0..users * rank)
            .map(|k| decay(k % rank) * rng.normal() * 0.3)
            .collect(),
        items: (0..items * rank)
            .map(|k| decay(k % rank) * rng.normal() * 0.3)
            .collect(),
        biases: None,
    };
    let provenance = Provenance {
        scale: RatingScale::Levels(vec![1.0, 2.0, 3.0, 4.0, 5.0]),
        inputs: Vec::new(),
        meta: None,
    };
    let model = Model::from_import(
        ratings,
        factors,
        (1.0, 1.0),
        Center::Global,
        None,
        provenance,
    )
    .expect("training ratings");
    let dir = std::env::var_os("SEXTANT_BENCH_KEEP").map_or_else(
        || std::env::temp_dir().join(format!("sextant-bench-explorer-{}", std::process::id())),
        std::path::PathBuf::from,
    );
    save_model(&dir, &model).expect("model written");
    let binary = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("target/release/sextant");
    let output = Command::new(&binary)
        .args([
            "explore",
            &dir.display().to_string(),
            "--measure-frames",
            "300",
        ])
        .output()
        .expect("run `cargo build --release` first: the benchmark drives target/release/sextant");
    let idle = idle_cpu(&binary, &dir);
    if std::env::var_os("SEXTANT_BENCH_KEEP").is_none() {
        let _ = std::fs::remove_dir_all(&dir);
    }
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    println!(
        "{items} items, {users} members, rank {rank}: {}",
        String::from_utf8_lossy(&output.stdout).trim()
    );
    match idle {
        Some((ticks, seconds)) => println!(
            "idle explorer: {ticks} clock ticks of CPU in {seconds} s ({:.2}% of a core)",
            ticks as f64 / (seconds as f64 * 100.0) * 100.0
        ),
        None => println!("idle explorer: not measured (needs tmux and /proc)"),
    }
}

/// CPU time the explorer uses over 10 s of doing nothing, opened on `dir` in a tmux
/// session: (clock ticks, seconds). A tick is 10 ms.
fn idle_cpu(binary: &std::path::Path, dir: &std::path::Path) -> Option<(u64, u64)> {
    const SECONDS: u64 = 10;
    let session = format!("sextant-bench-idle-{}", std::process::id());
    let command = format!("'{}' explore '{}'", binary.display(), dir.display());
    let started = Command::new("tmux")
        .args([
            "new-session",
            "-d",
            "-x",
            "120",
            "-y",
            "40",
            "-s",
            &session,
            &command,
        ])
        .status()
        .ok()?;
    if !started.success() {
        return None;
    }
    let ticks = || -> Option<u64> {
        let pane = Command::new("tmux")
            .args(["list-panes", "-t", &session, "-F", "#{pane_pid}"])
            .output()
            .ok()?;
        let pid = String::from_utf8_lossy(&pane.stdout).trim().to_owned();
        let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
        let fields: Vec<&str> = stat.rsplit(") ").next()?.split(' ').collect();
        Some(fields[11].parse::<u64>().ok()? + fields[12].parse::<u64>().ok()?)
    };
    // Wait for the first frame (loading a million items takes a few seconds).
    let start = std::time::Instant::now();
    loop {
        let screen = Command::new("tmux")
            .args(["capture-pane", "-p", "-t", &session])
            .output()
            .ok()?;
        if String::from_utf8_lossy(&screen.stdout).contains("Catalogue") {
            break;
        }
        if start.elapsed().as_secs() > 120 {
            let _ = Command::new("tmux")
                .args(["kill-session", "-t", &session])
                .status();
            return None;
        }
        std::thread::sleep(std::time::Duration::from_millis(200));
    }
    std::thread::sleep(std::time::Duration::from_secs(1));
    let before = ticks();
    std::thread::sleep(std::time::Duration::from_secs(SECONDS));
    let after = ticks();
    let _ = Command::new("tmux")
        .args(["kill-session", "-t", &session])
        .status();
    Some((after? - before?, SECONDS))
}
