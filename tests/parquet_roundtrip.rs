//! Parquet in and out, checked against pyarrow: tables pyarrow writes are imported
//! exactly, and what `export` writes, pyarrow reads back exactly.
//!
//! pyarrow is a pip package, which a fresh machine does not have, so these tests are
//! ignored by the README's `cargo test`; `.ci/run` installs pyarrow and runs every test,
//! these included (`cargo test -- --include-ignored`).
#![allow(clippy::unwrap_used, clippy::expect_used)]

mod common;

use common::{repo, sextant};

fn python(script: &str) -> String {
    let out = std::process::Command::new("python3")
        .args(["-c", script])
        .output()
        .expect("python3 runs");
    assert!(
        out.status.success(),
        "python failed (pyarrow is installed by .ci/run): {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

#[test]
#[ignore = "needs pyarrow (pip); .ci/run installs it and runs ignored tests"]
fn factor_tables_written_by_pyarrow_import_exactly() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path().to_str().unwrap();
    let model = repo("demo-data/model");
    let m = model.to_str().unwrap();
    // Users as D double columns under a plain id; items as one list<double> column under
    // other names (pyarrow.csv reads the committed tables as doubles).
    python(&format!(
        r#"
import pyarrow as pa, pyarrow.csv as pc, pyarrow.parquet as pq
users = pc.read_csv("{m}/users.csv", convert_options=pc.ConvertOptions(column_types={{"id": pa.string()}}))
pq.write_table(users, "{d}/users.parquet")
items = pc.read_csv("{m}/items.csv", convert_options=pc.ConvertOptions(column_types={{"id": pa.string()}}))
vectors = [list(row.values())[1:] for row in items.to_pylist()]
table = pa.table({{"recipe": items.column("id"), "embedding": pa.array(vectors, type=pa.list_(pa.float64()))}})
pq.write_table(table, "{d}/items.parquet")
"#
    ));
    let out = dir.path().join("imported");
    let (ratings, users, items) = (
        format!("{m}/ratings.csv"),
        format!("{d}/users.parquet"),
        format!("{d}/items.parquet"),
    );
    let import = |extra: &[&str]| {
        let mut args = vec![
            "import",
            "--ratings",
            &ratings,
            "--user-vectors",
            &users,
            "--item-vectors",
            &items,
            "--out",
            out.to_str().unwrap(),
            "--center",
            "global",
        ];
        args.extend_from_slice(extra);
        sextant(&args)
    };
    let result = import(&["--id-col", "recipe"]);
    // --id-col names the column in both tables; the users table has none called 'recipe'.
    assert_eq!(result.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&result.stderr);
    assert!(
        stderr.contains("users.parquet: no column 'recipe'"),
        "{stderr}"
    );
    assert!(!out.exists());
    // Naming nothing: the users' 'id' column, the items' only text column, and the items'
    // only list column are found on their own.
    {
        let result = import(&[]);
        assert!(
            result.status.success(),
            "{}",
            String::from_utf8_lossy(&result.stderr)
        );
    }
    // The vectors come through bit for bit: the written tables equal the originals.
    for table in ["users.csv", "items.csv"] {
        assert_eq!(
            std::fs::read(out.join(table)).unwrap(),
            std::fs::read(model.join(table)).unwrap(),
            "{table}"
        );
    }
}

#[test]
#[ignore = "needs pyarrow (pip); .ci/run installs it and runs ignored tests"]
fn what_export_writes_pyarrow_reads_exactly() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("export");
    let o = out.to_str().unwrap();
    let model = repo("demo-data/model");
    let m = model.to_str().unwrap();
    let result = sextant(&["export", m, "--out", o, "-k", "5"]);
    assert!(
        result.status.success(),
        "{}",
        String::from_utf8_lossy(&result.stderr)
    );
    let report = python(&format!(
        r#"
import pyarrow as pa, pyarrow.csv as pc, pyarrow.parquet as pq
items = pq.read_table("{o}/items.parquet")
csv = pc.read_csv("{m}/items.csv", convert_options=pc.ConvertOptions(column_types={{"id": pa.string()}}))
assert items.column_names == csv.column_names, (items.column_names, csv.column_names)
assert items.to_pylist() == csv.to_pylist(), "item vectors differ"
users = pq.read_table("{o}/users.parquet")
print(users.num_rows, items.num_rows, pq.read_table("{o}/holdout-predictions.parquet").num_rows, pq.read_table("{o}/neighbours.parquet").num_rows)
"#
    ));
    assert_eq!(report.trim(), "1500 400 3811 2000");
    // CSV export: the same tables as the model's own.
    let csv = dir.path().join("csv");
    let result = sextant(&[
        "export",
        m,
        "--file-format",
        "csv",
        "--out",
        csv.to_str().unwrap(),
    ]);
    assert!(result.status.success());
    assert_eq!(
        std::fs::read(csv.join("items.csv")).unwrap(),
        std::fs::read(model.join("items.csv")).unwrap()
    );
}
