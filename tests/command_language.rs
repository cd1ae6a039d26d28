//! One command language: what a command says when it is pointed at the wrong thing,
//! the machine-readable output scripts read, renamed flags that still work for a release,
//! limits shared by every command that makes a model, and the completions and manual pages
//! derived from the same definitions as `--help`.
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use std::path::Path;

use common::{repo, sextant};
use serde_json::Value;

fn demo_model() -> String {
    repo("demo-data/model").display().to_string()
}

fn stdout(out: &std::process::Output) -> String {
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn stderr(out: &std::process::Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn ok(args: &[&str]) -> String {
    let out = sextant(args);
    assert!(out.status.success(), "{args:?}: {}", stderr(&out));
    stdout(&out)
}

fn refused(args: &[&str]) -> String {
    let out = sextant(args);
    assert_eq!(out.status.code(), Some(2), "{args:?}: {}", stderr(&out));
    assert!(out.stdout.is_empty(), "{args:?} printed {}", stdout(&out));
    stderr(&out)
}

// ---------------------------------------------------------------------------------------
// A data folder or a CSV where a model is expected

#[test]
fn a_data_folder_given_as_a_model_gets_the_command_that_makes_one() {
    let tmp = tempfile::tempdir().unwrap();
    let data = tmp.path().join("shop-export");
    std::fs::create_dir(&data).unwrap();
    std::fs::write(data.join("ratings.csv"), "user,item,rating\nu1,i1,4\n").unwrap();
    std::fs::write(data.join("items.csv"), "item,title\ni1,Plum Tart\n").unwrap();
    let d = data.display().to_string();
    for command in [
        vec!["info", &d],
        vec!["suggest", &d, "u1"],
        vec!["neighbours", &d, "i1"],
        vec!["audit", &d],
    ] {
        let err = refused(&command);
        assert!(err.contains("is not a model directory"), "{err}");
        let expected = format!(
            "to make one: sextant fit {d}/ratings.csv --catalogue {d}/items.csv --out MODEL"
        );
        assert!(err.contains(&expected), "{command:?}: {err}");
    }
    // A folder that holds models one level down names them.
    let err = refused(&["info", &repo("demo-data").display().to_string()]);
    assert!(
        err.contains(&format!(
            "it holds models at {} and {}: name one of those instead",
            repo("demo-data/implicit-model").display(),
            repo("demo-data/model").display()
        )),
        "{err}"
    );
    // The ratings file itself.
    let file = data.join("ratings.csv").display().to_string();
    let err = refused(&["info", &file]);
    assert!(
        err.contains(&format!(
            "is a file, not a model directory; to make one: sextant fit {file} --out MODEL"
        )),
        "{err}"
    );
    // An empty folder gets the general form.
    let empty = tmp.path().join("empty");
    std::fs::create_dir(&empty).unwrap();
    let err = refused(&["info", &empty.display().to_string()]);
    assert!(
        err.contains("to make one: sextant fit RATINGS.csv --out MODEL"),
        "{err}"
    );
}

// ---------------------------------------------------------------------------------------
// fold-in and the inferred scale

#[test]
fn a_profile_of_only_unknown_items_is_refused_like_an_empty_one() {
    let tmp = tempfile::tempdir().unwrap();
    let profile = tmp.path().join("profile.csv");
    std::fs::write(&profile, "item,rating\nnot-an-item,5\nnor-this,3\n").unwrap();
    let err = refused(&["fold-in", &demo_model(), &profile.display().to_string()]);
    assert!(err.contains("profile.csv"), "{err}");
    assert!(
        err.contains("none of its 2 rated item(s) is in the model ('not-an-item' (line 2), 'nor-this' (line 3))"),
        "{err}"
    );
    // One known item is enough; the others are named and skipped.
    std::fs::write(&profile, "item,rating\nnot-an-item,5\nr001,4\n").unwrap();
    let out = sextant(&["fold-in", &demo_model(), &profile.display().to_string()]);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(
        stderr(&out).contains("skipped 1 rating(s)"),
        "{}",
        stderr(&out)
    );
}

#[test]
fn a_scale_inferred_from_two_values_is_reported_with_the_flag_to_give_it() {
    let tmp = tempfile::tempdir().unwrap();
    let ratings = tmp.path().join("tiny.csv");
    std::fs::write(
        &ratings,
        "user,item,rating\nu1,a,3\nu1,b,4\nu2,a,4\nu2,b,3\nu3,a,4\n",
    )
    .unwrap();
    let out_dir = tmp.path().join("m");
    let args = [
        "fit",
        ratings.to_str().unwrap(),
        "--rank",
        "1",
        "--holdout",
        "0",
        "--out",
        out_dir.to_str().unwrap(),
    ];
    let out = sextant(&args);
    assert!(out.status.success(), "{}", stderr(&out));
    let err = stderr(&out);
    assert!(
        err.contains("the ratings use only 2 value(s) (3, 4)")
            && err.contains("--scale MIN:MAX:STEP"),
        "{err}"
    );
    // Given explicitly, nothing is said.
    let mut given = args.to_vec();
    given.extend(["--scale", "1:5:1"]);
    let out = sextant(&given);
    assert!(out.status.success(), "{}", stderr(&out));
    assert!(!stderr(&out).contains("--scale"), "{}", stderr(&out));
}

// ---------------------------------------------------------------------------------------
// Machine-readable output

#[test]
fn explain_csv_carries_mu_and_the_prediction_on_every_row() {
    let m = demo_model();
    let json: Value =
        serde_json::from_str(&ok(&["explain", &m, "m0001", "r010", "--format", "json"])).unwrap();
    let csv = ok(&["explain", &m, "m0001", "r010", "--format", "csv"]);
    let mut lines = csv.lines();
    assert_eq!(
        lines.next(),
        Some(
            "factor,value,label,mu,predicted,rounded,predictive_sd,actual,user_bias,item_bias,score"
        )
    );
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), json["contributions"].as_array().unwrap().len());
    let number = |s: &str| s.parse::<f64>().unwrap();
    for row in &rows {
        assert_eq!(number(row[3]), json["mu"].as_f64().unwrap());
        assert_eq!(number(row[4]), json["predicted"].as_f64().unwrap());
        assert_eq!(number(row[5]), json["rounded"].as_f64().unwrap());
        assert_eq!(number(row[6]), json["predictive_sd"].as_f64().unwrap());
    }
    // μ plus the contributions is the prediction (the definition of the decomposition).
    let sum: f64 = rows.iter().map(|r| number(r[1])).sum::<f64>() + number(rows[0][3]);
    assert!(
        (sum - number(rows[0][4])).abs() < 1e-9,
        "{sum} vs {}",
        rows[0][4]
    );
    // A title names the same item and the output gives its id and title.
    let title = json["title"].as_str().unwrap().to_owned();
    let by_title: Value =
        serde_json::from_str(&ok(&["explain", &m, "m0001", &title, "--format", "json"])).unwrap();
    assert_eq!(by_title["item"], "r010");
    assert_eq!(by_title["predicted"], json["predicted"]);
    assert!(json["support"]["user_held_out"].as_u64().is_some());
}

#[test]
fn suggest_and_neighbours_carry_titles_in_csv_and_json() {
    let m = demo_model();
    let model = sextant::model::load_model(Path::new(&m)).unwrap();
    let title = |id: &str| {
        let j = model.ratings.items.get(id).unwrap();
        model
            .meta
            .as_ref()
            .unwrap()
            .get(j)
            .unwrap()
            .title
            .clone()
            .unwrap()
    };
    let csv = ok(&["suggest", &m, "m0001", "-n", "3", "--format", "csv"]);
    let mut reader = csv::Reader::from_reader(csv.as_bytes());
    assert_eq!(
        reader.headers().unwrap().iter().collect::<Vec<_>>(),
        [
            "rank",
            "item",
            "predicted",
            "rounded",
            "predictive_sd",
            "title",
            "category",
            "score"
        ]
    );
    for row in reader.records() {
        let row = row.unwrap();
        assert_eq!(row[5], title(&row[1]));
    }
    let json: Value = serde_json::from_str(&ok(&[
        "suggest", &m, "m0001", "-n", "3", "--format", "json",
    ]))
    .unwrap();
    for s in json["suggestions"].as_array().unwrap() {
        assert_eq!(
            s["title"].as_str().unwrap(),
            title(s["item"].as_str().unwrap())
        );
    }
    let csv = ok(&["neighbours", &m, "r001", "-k", "3", "--format", "csv"]);
    let mut reader = csv::Reader::from_reader(csv.as_bytes());
    assert_eq!(
        reader.headers().unwrap().iter().collect::<Vec<_>>(),
        ["rank", "id", "distance", "cosine", "title", "category"]
    );
    for row in reader.records() {
        let row = row.unwrap();
        assert_eq!(row[4], title(&row[1]));
    }
    // Members have no titles: the columns stay, empty.
    let csv = ok(&[
        "neighbours",
        &m,
        "--user",
        "m0001",
        "-k",
        "2",
        "--format",
        "csv",
    ]);
    assert!(csv.lines().nth(1).unwrap().ends_with(",,"), "{csv}");
    // Named by title, the query is reported by its id.
    let json: Value = serde_json::from_str(&ok(&[
        "neighbours",
        &m,
        &title("r001"),
        "-k",
        "2",
        "--format",
        "json",
    ]))
    .unwrap();
    assert_eq!(json["query"], "r001");
}

/// Distance and cosine of two vectors with the Python standard library (`math.dist`,
/// `math.fsum`): an outside check of the export's arithmetic that needs no pip package.
const PYTHON_CHECK: &str = r"
import csv, math, sys
folder = sys.argv[1]
with open(folder + '/items.csv') as f:
    rows = list(csv.reader(f))
vectors = {r[0]: [float(x) for x in r[1:]] for r in rows[1:]}
worst = 0.0
count = 0
with open(folder + '/neighbours.csv') as f:
    reader = csv.DictReader(f)
    for row in reader:
        a, b = vectors[row['query']], vectors[row['id']]
        distance = math.dist(a, b)
        cosine = math.fsum(x * y for x, y in zip(a, b)) / math.sqrt(
            math.fsum(x * x for x in a) * math.fsum(y * y for y in b))
        worst = max(worst, abs(distance - float(row['distance'])), abs(cosine - float(row['cosine'])))
        count += 1
print(count, worst)
";

#[test]
fn export_writes_distance_and_cosine_by_either_ranking() {
    let tmp = tempfile::tempdir().unwrap();
    for metric in ["euclidean", "cosine"] {
        let out = tmp.path().join(metric);
        let o = out.display().to_string();
        let _ = ok(&[
            "export",
            &demo_model(),
            "--file-format",
            "csv",
            "--metric",
            metric,
            "-k",
            "4",
            "--out",
            &o,
        ]);
        let text = std::fs::read_to_string(out.join("neighbours.csv")).unwrap();
        assert!(
            text.starts_with("query,rank,id,distance,cosine\n"),
            "{text}"
        );
        // Each list is ordered by the metric asked for.
        let mut reader = csv::Reader::from_reader(text.as_bytes());
        let rows: Vec<csv::StringRecord> = reader.records().map(Result::unwrap).collect();
        for pair in rows.windows(2) {
            if pair[0][0] == pair[1][0] {
                let key = |r: &csv::StringRecord| match metric {
                    "euclidean" => r[3].parse::<f64>().unwrap(),
                    _ => -r[4].parse::<f64>().unwrap(),
                };
                assert!(key(&pair[0]) <= key(&pair[1]) + 1e-12, "{metric}: {pair:?}");
            }
        }
        let check = std::process::Command::new("python3")
            .args(["-c", PYTHON_CHECK, &o])
            .output()
            .unwrap();
        assert!(
            check.status.success(),
            "{}",
            String::from_utf8_lossy(&check.stderr)
        );
        let said = String::from_utf8(check.stdout).unwrap();
        let mut parts = said.split_whitespace();
        let count: usize = parts.next().unwrap().parse().unwrap();
        let worst: f64 = parts.next().unwrap().parse().unwrap();
        assert_eq!(count, rows.len());
        assert!(
            worst < 1e-12,
            "{metric}: largest difference from Python's math {worst}"
        );
    }
}

// ---------------------------------------------------------------------------------------
// Renamed flags and shared limits

#[test]
fn renamed_flags_still_work_for_a_release_and_say_what_replaces_them() {
    let tmp = tempfile::tempdir().unwrap();
    let model = repo("demo-data/model");
    let path = |name: &str| model.join(name).display().to_string();
    let out = tmp.path().join("imported").display().to_string();
    let old = sextant(&[
        "import",
        "--ratings",
        &path("ratings.csv"),
        "--users",
        &path("users.csv"),
        "--items",
        &path("items.csv"),
        "--items-meta",
        &path("items-meta.csv"),
        "--center",
        "global",
        "--out",
        &out,
        "--format",
        "json",
    ]);
    assert!(old.status.success(), "{}", stderr(&old));
    for (before, after) in [
        ("--users", "--user-vectors"),
        ("--items", "--item-vectors"),
        ("--items-meta", "--catalogue"),
    ] {
        assert!(
            stderr(&old).contains(&format!("warning: {before} is deprecated and will be removed in the next release; use {after}")),
            "{}",
            stderr(&old)
        );
    }
    let new = sextant(&[
        "import",
        "--ratings",
        &path("ratings.csv"),
        "--user-vectors",
        &path("users.csv"),
        "--item-vectors",
        &path("items.csv"),
        "--catalogue",
        &path("items-meta.csv"),
        "--center",
        "global",
        "--out",
        &out,
        "--format",
        "json",
    ]);
    assert!(new.status.success(), "{}", stderr(&new));
    assert!(!stderr(&new).contains("deprecated"), "{}", stderr(&new));
    assert_eq!(old.stdout, new.stdout);
    // Both spellings at once are refused.
    let both = refused(&[
        "import",
        "--ratings",
        &path("ratings.csv"),
        "--user-vectors",
        &path("users.csv"),
        "--users",
        &path("users.csv"),
        "--item-vectors",
        &path("items.csv"),
        "--center",
        "none",
        "--out",
        &out,
    ]);
    assert!(both.contains("cannot be used multiple times"), "{both}");
    // audit -k is now --at.
    let m = demo_model();
    let old = sextant(&["audit", &m, "-k", "5", "--sample", "20"]);
    assert!(old.status.success(), "{}", stderr(&old));
    assert!(stderr(&old).contains("-k is deprecated") && stderr(&old).contains("use --at"));
    let new = ok(&["audit", &m, "--at", "5", "--sample", "20"]);
    assert_eq!(stdout(&old), new);
    assert!(new.contains("@5"), "the cut-off reaches the report");
    // export --format is now --file-format (--format is what a command prints).
    let tmp_out = tmp.path().join("export").display().to_string();
    let old = sextant(&["export", &m, "--format", "csv", "--out", &tmp_out]);
    assert!(old.status.success(), "{}", stderr(&old));
    assert!(
        stderr(&old).contains("--format is deprecated")
            && stderr(&old).contains("use --file-format")
    );
    assert!(tmp.path().join("export/items.csv").is_file());
    // fit --items is now --catalogue.
    let fitted = tmp.path().join("fitted").display().to_string();
    let old = sextant(&[
        "fit",
        &repo("demo-data/ratings.csv").display().to_string(),
        "--items",
        &repo("demo-data/items.csv").display().to_string(),
        "--rank",
        "2",
        "--max-iters",
        "3",
        "-q",
        "--out",
        &fitted,
    ]);
    assert!(old.status.success(), "{}", stderr(&old));
    assert!(
        stderr(&old).contains("--items is deprecated") && stderr(&old).contains("use --catalogue")
    );
    let model = sextant::model::load_model(Path::new(&fitted)).unwrap();
    assert!(model.meta.is_some(), "the catalogue was read");
}

#[test]
fn the_rank_limit_is_the_same_for_fit_tune_import_and_loading() {
    let tmp = tempfile::tempdir().unwrap();
    let ratings = repo("demo-data/ratings.csv").display().to_string();
    let out = tmp.path().join("m").display().to_string();
    let err = refused(&["fit", &ratings, "--rank", "1025", "--out", &out]);
    assert!(
        err.contains("--rank must be between 1 and 1024, not 1025"),
        "{err}"
    );
    let err = refused(&["tune", &ratings, "--ranks", "5,1025"]);
    assert!(
        err.contains("--ranks") && err.contains("1024") && !err.contains("--rank "),
        "{err}"
    );
    let err = refused(&["tune", &ratings, "--ranks", "0"]);
    assert!(err.contains("--ranks"), "{err}");
    let err = refused(&["tune", &ratings, "--lambdas", "1,-1"]);
    assert!(
        err.contains("--lambdas") && !err.contains("--lambda "),
        "{err}"
    );
    // A factor table wider than the limit is refused on import, naming the file and line.
    let wide = tmp.path().join("wide.csv");
    let columns: Vec<String> = (1..=1025).map(|d| format!("f{d}")).collect();
    let text = format!("id,{}\n", columns.join(","));
    std::fs::write(&wide, text).unwrap();
    let w = wide.display().to_string();
    let err = refused(&[
        "import",
        "--ratings",
        &ratings,
        "--user-vectors",
        &w,
        "--item-vectors",
        &w,
        "--center",
        "none",
        "--out",
        &out,
    ]);
    assert!(
        err.contains("wide.csv, line 1") && err.contains("1024"),
        "{err}"
    );
    assert!(!Path::new(&out).exists(), "nothing is written");
}

// ---------------------------------------------------------------------------------------
// Completions and manual pages

#[test]
fn completions_offer_current_flags_and_hide_deprecated_ones() {
    let bash = ok(&["completions", "bash"]);
    for flag in [
        "--catalogue",
        "--user-vectors",
        "--item-vectors",
        "--at",
        "--metric",
        "--delimiter",
    ] {
        assert!(bash.contains(flag), "bash completions lack {flag}");
    }
    assert!(
        !bash.contains("--items-meta"),
        "a deprecated flag is offered"
    );
    for shell in ["zsh", "fish", "elvish", "powershell"] {
        let script = ok(&["completions", shell]);
        assert!(script.contains("catalogue"), "{shell}");
    }
    let err = sextant(&["completions", "tcsh"]);
    assert_eq!(err.status.code(), Some(2));
}

#[test]
fn manual_pages_cover_every_command_and_flag() {
    let top = ok(&["man"]);
    assert!(
        top.contains(".TH sextant 1"),
        "{}",
        &top[..200.min(top.len())]
    );
    for command in ["fit", "import", "explain", "audit", "export", "completions"] {
        assert!(top.contains(command), "the main page lists {command}");
    }
    let fit = ok(&["man", "fit"]);
    assert!(
        fit.contains(".TH sextant-fit 1"),
        "{}",
        &fit[..200.min(fit.len())]
    );
    assert!(
        fit.contains("sextant fit \\- Fit a model"),
        "the page names the command as typed"
    );
    for flag in [
        "catalogue",
        "delimiter",
        "title\\-col",
        "max\\-iters",
        "threads",
    ] {
        assert!(
            fit.contains(&format!("\\-\\-{flag}")),
            "sextant-fit(1) lacks --{flag}"
        );
    }
    assert!(!fit.contains("\\-\\-items"), "a hidden flag is in the page");
    let err = refused(&["man", "fitt"]);
    assert!(
        err.contains("no command 'fitt'") && err.contains("fit"),
        "{err}"
    );
    // --out writes one page per command.
    let tmp = tempfile::tempdir().unwrap();
    let o = tmp.path().display().to_string();
    let said = sextant(&["man", "--out", &o]);
    assert!(said.status.success(), "{}", stderr(&said));
    for name in [
        "sextant.1",
        "sextant-fit.1",
        "sextant-tune.1",
        "sextant-man.1",
    ] {
        assert!(tmp.path().join(name).is_file(), "{name}");
    }
    let missing = tmp.path().join("nope").display().to_string();
    let err = refused(&["man", "--out", &missing]);
    assert!(err.contains("not an existing folder"), "{err}");
}

#[test]
fn import_advice_names_the_flag_that_fixes_it() {
    let tmp = tempfile::tempdir().unwrap();
    let model = repo("demo-data/model");
    let text = std::fs::read_to_string(model.join("ratings.csv")).unwrap();
    let ratings = tmp.path().join("theirs.csv");
    std::fs::write(&ratings, text.replacen("user,", "member,", 1)).unwrap();
    let path = |name: &str| model.join(name).display().to_string();
    let out = tmp.path().join("m").display().to_string();
    let args = [
        "import",
        "--ratings",
        ratings.to_str().unwrap(),
        "--user-vectors",
        &path("users.csv"),
        "--item-vectors",
        &path("items.csv"),
        "--center",
        "none",
        "--out",
        &out,
    ];
    let err = refused(&args);
    assert!(
        err.contains("theirs.csv, line 1: missing column 'user'"),
        "{err}"
    );
    assert!(err.contains("--user-col"), "{err}");
    assert!(!err.contains("fit the model again"), "{err}");
    // Following the advice works.
    let mut fixed = args.to_vec();
    fixed.extend(["--user-col", "member"]);
    let _ = ok(&fixed);
}
