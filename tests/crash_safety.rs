//! Crash safety, proven by killing: a fit writing into a directory that holds a model, and
//! a notes save, are killed with SIGKILL at random (seeded) moments; after every kill the
//! directory holds exactly the old model or exactly the new one, and the notes file exactly
//! the old notes or the new ones. Leftovers of killed saves are cleaned up by the next save.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::fmt::Write as _;
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use common::{copy_dir, repo, snapshot};
use sextant::model::notes::read_notes;
use sextant::rng::Rng;

const KILLS: usize = 100;

fn fit_args(out: &Path, seed: u64) -> Vec<String> {
    [
        "fit",
        repo("demo-data/ratings.csv").to_str().unwrap(),
        "--catalogue",
        repo("demo-data/items.csv").to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--max-iters",
        "15",
        "--seed",
        &seed.to_string(),
        "-q",
    ]
    .iter()
    .map(|s| (*s).to_owned())
    .collect()
}

fn run_to_end(args: &[String]) -> Duration {
    let start = Instant::now();
    let status = Command::new(env!("CARGO_BIN_EXE_sextant"))
        .args(args)
        .stdout(Stdio::null())
        .status()
        .unwrap();
    assert!(status.success());
    start.elapsed()
}

/// Starts `args` and kills it with SIGKILL after `delay` (or lets it end first).
fn kill_after(args: &[String], delay: Duration) -> bool {
    let mut child = Command::new(env!("CARGO_BIN_EXE_sextant"))
        .args(args)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    std::thread::sleep(delay);
    let killed = child.try_wait().unwrap().is_none();
    if killed {
        child.kill().unwrap(); // SIGKILL on Unix
    }
    child.wait().unwrap();
    killed
}

/// A delay for kill number `k`: half spread over the whole run, half over its last third,
/// where the files are written and swapped in.
fn delay(rng: &mut Rng, k: usize, full: Duration) -> Duration {
    let share = if k.is_multiple_of(2) {
        rng.uniform()
    } else {
        0.67 + rng.uniform() * 0.33
    };
    full.mul_f64(share)
}

#[test]
fn a_fit_killed_at_random_moments_leaves_the_old_model_or_the_new_one() {
    let tmp = tempfile::tempdir().unwrap();
    let (a, b, target) = (
        tmp.path().join("a"),
        tmp.path().join("b"),
        tmp.path().join("target"),
    );
    run_to_end(&fit_args(&a, 1));
    run_to_end(&fit_args(&b, 2));
    let mut full = run_to_end(&fit_args(&target, 1));
    // Curator notes in the target must come through every kill untouched.
    let notes = "(format: \"sextant-notes\", version: 1, items: {\"r001\": \"kept\"})\n";
    std::fs::write(target.join("annotations.ron"), notes).unwrap();
    let with_notes = |dir: &Path| {
        let mut s = snapshot(dir);
        s.insert("annotations.ron".into(), notes.as_bytes().to_vec());
        s
    };
    let (old, new) = (with_notes(&a), with_notes(&b));
    assert_ne!(old, new);
    let mut rng = Rng::new(20_261_202);
    let (mut killed, mut as_old, mut as_new) = (0, 0, 0);
    let mut k = 0;
    while killed < KILLS {
        k += 1;
        assert!(k <= 5 * KILLS, "only {killed} of {k} runs could be killed");
        // Fit towards whichever model the directory does not hold now.
        let holds_old = snapshot(&target) == old;
        let seed = if holds_old { 2 } else { 1 };
        let was_killed = kill_after(&fit_args(&target, seed), delay(&mut rng, k, full));
        killed += usize::from(was_killed);
        if !was_killed {
            // It ended before the kill: runs are faster now than when timed (the machine
            // is shared), so aim earlier.
            full = full.mul_f64(0.8);
        }
        let now = snapshot(&target);
        if now == old {
            as_old += 1;
        } else if now == new {
            as_new += 1;
        } else {
            panic!(
                "kill {k}: the directory holds neither model: {:?}",
                now.keys().collect::<Vec<_>>()
            );
        }
        sextant::model::load_model(&target).unwrap();
    }
    eprintln!(
        "{killed} of {k} runs killed; afterwards {as_old} held the old model, {as_new} the new"
    );
    assert!(
        as_old > 0 && as_new > 0,
        "kills landed both before and after the swap"
    );
    // The next complete save clears what killed ones left beside the directory.
    run_to_end(&fit_args(&target, 1));
    let mut names: Vec<String> = std::fs::read_dir(tmp.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(names, ["a", "b", "target"]);
}

#[test]
fn a_notes_save_killed_at_random_moments_leaves_the_old_notes_or_the_new_ones() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("model");
    copy_dir(&repo("demo-data/model"), &target);
    // A large notes file, so that writing it takes a measurable moment.
    let mut text = String::from("(format: \"sextant-notes\", version: 1, items: {\n");
    for j in 1..=400 {
        let _ = writeln!(text, "\"r{j:03}\": \"{}\",", "long note ".repeat(300));
    }
    text.push_str("})\n");
    std::fs::write(target.join("annotations.ron"), &text).unwrap();
    let set = |k: usize| -> Vec<String> {
        vec![
            "notes".into(),
            target.to_str().unwrap().into(),
            "--item".into(),
            format!("r{:03}", 1 + k % 400),
            format!("edit {k}"),
        ]
    };
    let start = Instant::now();
    let status = Command::new(env!("CARGO_BIN_EXE_sextant"))
        .args(set(0))
        .stdout(Stdio::null())
        .status()
        .unwrap();
    assert!(status.success());
    let mut full = start.elapsed();
    let mut before = read_notes(&target).unwrap();
    let mut rng = Rng::new(7);
    let (mut killed, mut kept, mut saved) = (0, 0, 0);
    let mut k = 0;
    while killed < KILLS {
        k += 1;
        assert!(k <= 5 * KILLS, "only {killed} of {k} saves could be killed");
        let id = format!("r{:03}", 1 + k % 400);
        let was_killed = kill_after(&set(k), delay(&mut rng, k, full));
        killed += usize::from(was_killed);
        if !was_killed {
            full = full.mul_f64(0.8);
        }
        let now = read_notes(&target).unwrap_or_else(|e| panic!("kill {k}: notes unreadable: {e}"));
        let mut after = before.clone();
        after.set_item_note(&id, &format!("edit {k}")).unwrap();
        if now == before {
            kept += 1;
        } else if now == after {
            saved += 1;
        } else {
            panic!("kill {k}: the notes are neither the old nor the new ones");
        }
        before = now;
    }
    eprintln!("{killed} of {k} notes saves killed; {kept} left the old notes, {saved} the new");
    // Temporary files of killed saves are removed by the next save (under its lock).
    let status = Command::new(env!("CARGO_BIN_EXE_sextant"))
        .args(set(0))
        .stdout(Stdio::null())
        .status()
        .unwrap();
    assert!(status.success());
    let stray: Vec<String> = std::fs::read_dir(&target)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(stray.is_empty(), "{stray:?}");
}

#[test]
fn two_writers_saving_notes_at_once_lose_none() {
    let tmp = tempfile::tempdir().unwrap();
    let target = tmp.path().join("model");
    copy_dir(&repo("demo-data/model"), &target);
    let writer = |offset: usize| {
        let target = target.clone();
        std::thread::spawn(move || {
            for k in 0..15 {
                let id = format!("r{:03}", 1 + offset + k);
                let status = Command::new(env!("CARGO_BIN_EXE_sextant"))
                    .args([
                        "notes",
                        target.to_str().unwrap(),
                        "--item",
                        &id,
                        &format!("writer {offset}"),
                    ])
                    .stdout(Stdio::null())
                    .stderr(Stdio::null())
                    .status()
                    .unwrap();
                assert!(status.success());
            }
        })
    };
    let (one, two) = (writer(0), writer(100));
    one.join().unwrap();
    two.join().unwrap();
    let notes = read_notes(&target).unwrap();
    assert_eq!(notes.items.len(), 30, "every note of both writers is kept");
    assert_eq!(notes.item_note("r001"), Some("writer 0"));
    assert_eq!(notes.item_note("r115"), Some("writer 100"));
}
