//! The file-system boundary: what sextant does to the user's folders and files, under
//! races, with hostile names and endless inputs. Each test is named after what went wrong
//! before it was fixed.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::format_push_string)]

mod common;

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use common::{repo, sextant};

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

/// A small ratings file: `members` × 12 items, every member rating most items.
fn small_ratings(dir: &Path, members: usize, item_prefix: &str) -> PathBuf {
    let mut csv = String::from("user,item,rating\n");
    for m in 0..members {
        for i in 0..12 {
            if (m + i) % 5 != 0 {
                csv.push_str(&format!(
                    "m{m},{item_prefix}{i},{}\n",
                    1 + (m * 7 + i * 3) % 5
                ));
            }
        }
    }
    let path = dir.join(format!("ratings-{members}.csv"));
    std::fs::write(&path, csv).unwrap();
    path
}

fn fit(ratings: &Path, out: &Path, seed: &str) -> std::process::Output {
    sextant(&[
        "fit",
        ratings.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--rank",
        "2",
        "--seed",
        seed,
        "--max-iters",
        "5",
        "-q",
    ])
}

fn names(dir: &Path) -> Vec<String> {
    let mut n: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    n.sort();
    n
}

#[test]
fn export_into_a_folder_of_the_users_own_files_is_refused_and_nothing_changes() {
    let tmp = tempfile::tempdir().unwrap();
    let mine = tmp.path().join("mine");
    std::fs::create_dir(&mine).unwrap();
    std::fs::write(mine.join("items.csv"), "my own items").unwrap();
    let model = repo("demo-data/model");
    let args = |out: &Path| {
        sextant(&[
            "export",
            model.to_str().unwrap(),
            "--file-format",
            "csv",
            "--out",
            out.to_str().unwrap(),
        ])
    };
    let result = args(&mine);
    assert_eq!(result.status.code(), Some(2), "{}", text(&result.stderr));
    assert!(
        text(&result.stderr).contains("'items.csv'"),
        "{}",
        text(&result.stderr)
    );
    assert_eq!(names(&mine), ["items.csv"]);
    assert_eq!(
        std::fs::read_to_string(mine.join("items.csv")).unwrap(),
        "my own items"
    );
    // A new folder, then the same folder again (an earlier export), are fine.
    let out = tmp.path().join("export");
    assert_eq!(args(&out).status.code(), Some(0));
    assert_eq!(args(&out).status.code(), Some(0));
    assert!(names(&out).contains(&"sextant-export.ron".to_owned()));
    assert!(!names(&out).iter().any(|n| n.starts_with(".sextant-tmp")));
}

#[test]
fn fit_out_never_replaces_a_folder_that_only_looks_like_a_model() {
    let tmp = tempfile::tempdir().unwrap();
    let ratings = small_ratings(tmp.path(), 30, "r");
    let other = tmp.path().join("other-tool");
    std::fs::create_dir(&other).unwrap();
    std::fs::write(other.join("manifest.ron"), "(tool: \"someone else's\")").unwrap();
    std::fs::write(other.join("ratings.csv"), "their data").unwrap();
    let result = fit(&ratings, &other, "0");
    assert_eq!(result.status.code(), Some(2), "{}", text(&result.stderr));
    let stderr = text(&result.stderr);
    assert!(stderr.contains("not a sextant model's"), "{stderr}");
    assert!(
        !stderr.contains(".sextant-tmp"),
        "no internal names: {stderr}"
    );
    assert_eq!(names(&other), ["manifest.ron", "ratings.csv"]);
    assert_eq!(
        std::fs::read_to_string(other.join("ratings.csv")).unwrap(),
        "their data"
    );
}

#[test]
fn report_to_a_fifo_is_streamed_and_the_fifo_stays() {
    let tmp = tempfile::tempdir().unwrap();
    let fifo = tmp.path().join("pipe");
    assert!(
        Command::new("mkfifo")
            .arg(&fifo)
            .status()
            .unwrap()
            .success()
    );
    let reader = {
        let fifo = fifo.clone();
        std::thread::spawn(move || std::fs::read_to_string(fifo).unwrap())
    };
    let model = repo("demo-data/model");
    let result = sextant(&[
        "audit",
        model.to_str().unwrap(),
        "--report",
        fifo.to_str().unwrap(),
    ]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    let got = reader.join().unwrap();
    assert!(got.contains("coherence"), "{}", &got[..got.len().min(200)]);
    assert!(std::os::unix::fs::FileTypeExt::is_fifo(
        &std::fs::metadata(&fifo).unwrap().file_type()
    ));
}

#[test]
fn report_to_a_full_device_fails_with_exit_1_and_dash_means_stdout() {
    let model = repo("demo-data/model");
    let m = model.to_str().unwrap();
    // Only the real device (a character device) shows a full disk.
    if std::fs::metadata("/dev/full").is_ok_and(|m| !m.is_file() && !m.is_dir()) {
        let result = sextant(&["audit", m, "--report", "/dev/full"]);
        assert_eq!(result.status.code(), Some(1), "{}", text(&result.stderr));
        assert!(text(&result.stderr).contains("/dev/full: cannot write: the disk is full"));
    }
    let result = sextant(&["audit", m, "--report", "-"]);
    assert_eq!(result.status.code(), Some(0));
    assert!(text(&result.stdout).contains("coherence"));
    assert!(!Path::new("-").exists());
}

#[test]
fn a_symlink_at_the_report_path_keeps_the_link_and_replaces_the_file_it_names() {
    let tmp = tempfile::tempdir().unwrap();
    let real = tmp.path().join("real.md");
    let link = tmp.path().join("report.md");
    std::fs::write(&real, "old").unwrap();
    std::os::unix::fs::symlink(&real, &link).unwrap();
    let model = repo("demo-data/model");
    let result = sextant(&[
        "audit",
        model.to_str().unwrap(),
        "--report",
        link.to_str().unwrap(),
    ]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    assert!(
        std::fs::read_to_string(&real)
            .unwrap()
            .contains("coherence")
    );
    assert_eq!(names(tmp.path()), ["real.md", "report.md"]);
}

/// Two models of the same shape that differ in every vector, saved alternately into one
/// directory while readers load it: every load must be one model or the other, whole.
#[test]
fn readers_never_see_half_of_one_model_and_half_of_another() {
    let tmp = tempfile::tempdir().unwrap();
    let ratings = small_ratings(tmp.path(), 40, "r");
    let (a, b) = (tmp.path().join("a"), tmp.path().join("b"));
    assert!(fit(&ratings, &a, "1").status.success());
    assert!(fit(&ratings, &b, "2").status.success());
    let model_a = sextant::model::load_model(&a).unwrap();
    let model_b = sextant::model::load_model(&b).unwrap();
    assert_ne!(model_a.factors, model_b.factors);
    let target = tmp.path().join("live");
    sextant::model::save_model(&target, &model_a).unwrap();
    // What the command line answers from each model alone.
    let suggest = |dir: &Path| sextant(&["suggest", dir.to_str().unwrap(), "m1", "-n", "5"]);
    let (answer_a, answer_b) = (suggest(&a).stdout, suggest(&b).stdout);
    assert_ne!(answer_a, answer_b);
    let stop = std::sync::atomic::AtomicBool::new(false);
    let swaps = std::sync::atomic::AtomicUsize::new(0);
    let deadline = Instant::now() + Duration::from_secs(90);
    let (answers, mixtures, failures, refits) = std::thread::scope(|s| {
        let writer = s.spawn(|| {
            let mut refits = 0usize;
            while !stop.load(std::sync::atomic::Ordering::Relaxed) {
                let m = if refits.is_multiple_of(2) {
                    &model_b
                } else {
                    &model_a
                };
                sextant::model::save_model(&target, m).unwrap();
                refits += 1;
                swaps.store(refits, std::sync::atomic::Ordering::Relaxed);
            }
            refits
        });
        let readers: Vec<_> = (0..2)
            .map(|_| {
                s.spawn(|| {
                    let (mut answers, mut mixtures, mut failures) = (0usize, 0usize, 0usize);
                    let busy = || swaps.load(std::sync::atomic::Ordering::Relaxed) < 50;
                    while (answers < 300 || busy()) && Instant::now() < deadline {
                        match sextant::model::load_model(&target) {
                            Ok(m) if m == model_a || m == model_b => {}
                            Ok(_) => mixtures += 1,
                            Err(e) => {
                                eprintln!("load failed: {e}");
                                failures += 1;
                            }
                        }
                        answers += 1;
                    }
                    (answers, mixtures, failures)
                })
            })
            .collect();
        // The command line, as a user would run it during refits.
        let cli = s.spawn(|| {
            let (mut answers, mut mixtures, mut failures) = (0usize, 0usize, 0usize);
            while answers < 40 && Instant::now() < deadline {
                let out = suggest(&target);
                if !out.status.success() {
                    eprintln!("suggest failed: {}", text(&out.stderr));
                    failures += 1;
                } else if out.stdout != answer_a && out.stdout != answer_b {
                    mixtures += 1;
                }
                answers += 1;
            }
            (answers, mixtures, failures)
        });
        let mut total = (0, 0, 0);
        for r in readers.into_iter().chain([cli]) {
            let (x, y, z) = r.join().unwrap();
            total = (total.0 + x, total.1 + y, total.2 + z);
        }
        stop.store(true, std::sync::atomic::Ordering::Relaxed);
        let refits = writer.join().unwrap();
        (total.0, total.1, total.2, refits)
    });
    eprintln!(
        "{answers} answers (40 of them from the command line), {mixtures} mixtures, \
         {failures} failures, {refits} refits"
    );
    assert!(answers >= 500, "only {answers} answers before the deadline");
    assert!(refits >= 50, "only {refits} refits ran");
    assert_eq!((mixtures, failures), (0, 0));
}

#[test]
fn refits_and_note_saves_race_without_failing_or_losing_a_note() {
    use sextant::model::notes::{Notes, read_notes};
    let tmp = tempfile::tempdir().unwrap();
    let ratings = small_ratings(tmp.path(), 30, "r");
    let source = tmp.path().join("source");
    assert!(fit(&ratings, &source, "1").status.success());
    let model = sextant::model::load_model(&source).unwrap();
    let target = tmp.path().join("live");
    sextant::model::save_model(&target, &model).unwrap();
    // A notes writer killed mid-save left its temporary file (the old naming and the new).
    std::fs::write(target.join(".annotations.ron.4242.tmp"), "half").unwrap();
    std::fs::write(
        target.join(".sextant-tmp-0123456789abcdef-annotations.ron"),
        "half",
    )
    .unwrap();
    let (refit_failures, note_failures) = std::thread::scope(|s| {
        let refit = s.spawn(|| {
            (0..60)
                .filter(|_| sextant::model::save_model(&target, &model).is_err())
                .count()
        });
        let notes = s.spawn(|| {
            let mut failed = 0;
            for k in 0..60 {
                let mut notes = Notes::open(&target).unwrap();
                notes
                    .current
                    .set_item_note(&format!("r{}", k % 12), &format!("note {k}"))
                    .unwrap();
                notes
                    .current
                    .set_factor_label(1 + k % 2, &format!("label {k}"))
                    .unwrap();
                if notes.save().is_err() {
                    failed += 1;
                }
            }
            failed
        });
        (refit.join().unwrap(), notes.join().unwrap())
    });
    assert_eq!((refit_failures, note_failures), (0, 0));
    let notes = read_notes(&target).unwrap();
    for i in 0..12 {
        let last = (0..60).filter(|k| k % 12 == i).max().unwrap();
        assert_eq!(
            notes.item_note(&format!("r{i}")),
            Some(format!("note {last}").as_str())
        );
    }
    assert!(
        !names(&target).iter().any(|n| n.starts_with('.')),
        "{:?}",
        names(&target)
    );
}

#[test]
fn two_fits_into_one_new_target_take_turns() {
    let tmp = tempfile::tempdir().unwrap();
    let ratings = small_ratings(tmp.path(), 30, "r");
    let target = tmp.path().join("model");
    let spawn = |seed: &str| {
        Command::new(env!("CARGO_BIN_EXE_sextant"))
            .args([
                "fit",
                ratings.to_str().unwrap(),
                "--out",
                target.to_str().unwrap(),
            ])
            .args(["--rank", "2", "--max-iters", "5", "-q", "--seed", seed])
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap()
    };
    for round in 0..5 {
        let (one, two) = (spawn("1"), spawn("2"));
        for child in [one, two] {
            let out = child.wait_with_output().unwrap();
            assert_eq!(
                out.status.code(),
                Some(0),
                "round {round}: {}",
                text(&out.stderr)
            );
        }
        sextant::model::load_model(&target).unwrap();
    }
    assert_eq!(names(tmp.path()), ["model", "ratings-30.csv"]);
}

#[test]
fn notes_are_kept_with_their_line_breaks_or_refused_with_the_limit() {
    let tmp = tempfile::tempdir().unwrap();
    let model = tmp.path().join("model");
    common::copy_dir(&repo("demo-data/model"), &model);
    let m = model.to_str().unwrap();
    let long = "x".repeat(4001);
    let result = sextant(&["notes", m, "--item", "r001", &long]);
    assert_eq!(result.status.code(), Some(2));
    assert!(
        text(&result.stderr).contains("at most 4000"),
        "{}",
        text(&result.stderr)
    );
    let result = sextant(&["notes", m, "--item", "r001", "first line\nsecond line"]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    let notes = sextant::model::notes::read_notes(&model).unwrap();
    assert_eq!(notes.item_note("r001"), Some("first line\nsecond line"));
    let result = sextant(&["notes", m, "--item", "r001", "bell\x07"]);
    assert_eq!(result.status.code(), Some(2));
    assert!(
        text(&result.stderr).contains("\\x07"),
        "{}",
        text(&result.stderr)
    );
}

#[test]
fn a_notes_file_that_is_a_symlink_is_refused_not_read_or_copied() {
    let tmp = tempfile::tempdir().unwrap();
    let model = tmp.path().join("model");
    common::copy_dir(&repo("demo-data/model"), &model);
    let secret = tmp.path().join("secret.txt");
    std::fs::write(&secret, "someone's private text").unwrap();
    std::os::unix::fs::symlink(&secret, model.join("annotations.ron")).unwrap();
    let result = sextant(&["notes", model.to_str().unwrap()]);
    assert_eq!(result.status.code(), Some(2));
    let stderr = text(&result.stderr);
    assert!(
        stderr.contains("annotations.ron: is a symbolic link"),
        "{stderr}"
    );
    assert!(!stderr.contains("private"), "{stderr}");
    // A refit refuses to carry it over (and names it) rather than copy the file it names.
    let refit = sextant(&[
        "fit",
        repo("demo-data/ratings.csv").to_str().unwrap(),
        "--out",
        model.to_str().unwrap(),
        "--max-iters",
        "2",
        "-q",
    ]);
    assert_eq!(refit.status.code(), Some(2), "{}", text(&refit.stderr));
    assert!(
        text(&refit.stderr).contains("annotations.ron"),
        "{}",
        text(&refit.stderr)
    );
}

#[test]
fn an_endless_line_is_refused_quickly_with_bounded_memory() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("out");
    let start = Instant::now();
    let mut child = Command::new(env!("CARGO_BIN_EXE_sextant"))
        .args(["fit", "/dev/zero", "--out", out.to_str().unwrap(), "-q"])
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    while child.try_wait().unwrap().is_none() {
        if start.elapsed() > Duration::from_secs(30) {
            child.kill().unwrap();
            panic!("reading /dev/zero did not stop within 30 s");
        }
        std::thread::sleep(Duration::from_millis(50));
    }
    let result = child.wait_with_output().unwrap();
    assert_eq!(result.status.code(), Some(2));
    let stderr = text(&result.stderr);
    assert!(
        stderr.contains("/dev/zero, line 1: the line is longer than 1048576 bytes"),
        "{stderr}"
    );
    assert!(!out.exists());
}

#[test]
fn utf16_without_a_byte_order_mark_is_named_not_dumped() {
    let tmp = tempfile::tempdir().unwrap();
    let path = tmp.path().join("ratings-utf16.csv");
    let bytes: Vec<u8> = "user,item,rating\nm1,r1,4\n"
        .encode_utf16()
        .flat_map(u16::to_le_bytes)
        .collect();
    std::fs::write(&path, bytes).unwrap();
    let out = tmp.path().join("out");
    let result = sextant(&[
        "fit",
        path.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(result.status.code(), Some(2));
    assert!(!result.stderr.contains(&0), "NUL bytes in the message");
    assert!(
        text(&result.stderr).contains("the file is UTF-16 (little-endian); save it as UTF-8"),
        "{}",
        text(&result.stderr)
    );
}

#[test]
fn absurd_list_sizes_list_everything_instead_of_aborting() {
    let model = repo("demo-data/model");
    let m = model.to_str().unwrap();
    let result = sextant(&[
        "neighbours",
        m,
        "--all",
        "-k",
        "999999999",
        "--format",
        "csv",
    ]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    // 400 items, each with the 399 others.
    assert_eq!(text(&result.stdout).lines().count(), 1 + 400 * 399);
    let result = sextant(&[
        "neighbours",
        m,
        "r001",
        "-k",
        "999999999",
        "--format",
        "csv",
    ]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    assert_eq!(text(&result.stdout).lines().count(), 1 + 399);
    let result = sextant(&["suggest", m, "m0001", "-n", "999999999", "--format", "csv"]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
    let result = sextant(&["explain", m, "m0001", "r001", "--evidence", "999999999"]);
    assert_eq!(result.status.code(), Some(0), "{}", text(&result.stderr));
}

#[test]
fn control_characters_in_ids_are_escaped_in_tables_and_kept_in_csv() {
    let tmp = tempfile::tempdir().unwrap();
    let hostile = "r\x1b[2Jred\x07";
    let mut csv = String::from("user,item,rating\n");
    for m in 0..20 {
        for i in 0..6 {
            let item = if i == 0 {
                hostile.to_owned()
            } else {
                format!("r{i}")
            };
            csv.push_str(&format!("m{m},\"{item}\",{}\n", 1 + (m + i) % 5));
        }
    }
    let ratings = tmp.path().join("hostile.csv");
    std::fs::write(&ratings, csv).unwrap();
    let model = tmp.path().join("model");
    assert!(fit(&ratings, &model, "0").status.success());
    let m = model.to_str().unwrap();
    let table = sextant(&["neighbours", m, "r1", "-k", "5"]);
    assert_eq!(table.status.code(), Some(0), "{}", text(&table.stderr));
    let shown = text(&table.stdout);
    assert!(
        !shown.contains('\x1b') && !shown.contains('\x07'),
        "{shown:?}"
    );
    assert!(shown.contains("r\\x1b[2Jred\\x07"), "{shown}");
    let csv = sextant(&["neighbours", m, "r1", "-k", "5", "--format", "csv"]);
    assert!(text(&csv.stdout).contains(hostile));
    // An error that quotes the id escapes it too.
    let err = sextant(&["neighbours", m, "nope\x1b[2J"]);
    assert_eq!(err.status.code(), Some(2));
    assert!(!err.stderr.contains(&0x1b), "{}", text(&err.stderr));
}

#[test]
fn import_asks_for_mu_and_labels_a_given_one_as_given() {
    let tmp = tempfile::tempdir().unwrap();
    let model = repo("demo-data/model");
    let path = |n: &str| model.join(n).to_str().unwrap().to_owned();
    let out = tmp.path().join("imported");
    let run = |extra: &[&str]| {
        let mut args = vec![
            "import".to_owned(),
            "--ratings".into(),
            path("ratings.csv"),
            "--user-vectors".into(),
            path("users.csv"),
            "--item-vectors".into(),
            path("items.csv"),
            "--out".into(),
            out.to_str().unwrap().to_owned(),
        ];
        args.extend(extra.iter().map(|s| (*s).to_owned()));
        sextant(&args.iter().map(String::as_str).collect::<Vec<_>>())
    };
    let refused = run(&[]);
    assert_eq!(refused.status.code(), Some(2));
    assert!(
        text(&refused.stderr).contains("--mu VALUE"),
        "{}",
        text(&refused.stderr)
    );
    assert!(!out.exists());
    assert_eq!(run(&["--mu", "2.5"]).status.code(), Some(0));
    let info = sextant(&["info", out.to_str().unwrap()]);
    let shown = text(&info.stdout);
    assert!(shown.contains("given with --mu"), "{shown}");
    assert!(
        !shown.contains("global mean of the training ratings"),
        "{shown}"
    );
}

#[test]
fn a_missing_parent_folder_is_named_with_what_to_do() {
    let tmp = tempfile::tempdir().unwrap();
    let ratings = small_ratings(tmp.path(), 20, "r");
    let out = tmp.path().join("no-such-folder").join("model");
    let result = fit(&ratings, &out, "0");
    assert_eq!(result.status.code(), Some(1));
    let stderr = text(&result.stderr);
    assert!(stderr.contains(out.to_str().unwrap()), "{stderr}");
    assert!(stderr.contains("does not exist"), "{stderr}");
    assert!(
        !stderr.contains("sextant-tmp") && !stderr.contains("os error"),
        "{stderr}"
    );
}

#[test]
fn a_device_named_like_a_parquet_table_is_refused_not_streamed_forever() {
    let tmp = tempfile::tempdir().unwrap();
    let fake = tmp.path().join("users.parquet");
    std::os::unix::fs::symlink("/dev/zero", &fake).unwrap();
    let model = repo("demo-data/model");
    let out = tmp.path().join("out");
    let result = sextant(&[
        "import",
        "--ratings",
        model.join("ratings.csv").to_str().unwrap(),
        "--user-vectors",
        fake.to_str().unwrap(),
        "--item-vectors",
        model.join("items.csv").to_str().unwrap(),
        "--center",
        "none",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(result.status.code(), Some(2));
    assert!(
        text(&result.stderr).contains("users.parquet: is not a regular file"),
        "{}",
        text(&result.stderr)
    );
    assert!(!out.exists());
}
