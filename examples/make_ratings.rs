//! A seeded generator of large synthetic ratings files, for scale tests and the scaling
//! measurements in docs/scaling.md (see `sextant::synthetic`).
//!
//! ```sh
//! cargo run --release --example make_ratings -- USERS ITEMS PER_USER SEED OUT.csv
//! cargo run --release --example make_ratings -- 200000 40000 100 7 /tmp/r20m.csv   # 20M ratings
//! ```

fn main() -> std::io::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let number = |k: usize, default: u64| {
        args.get(k)
            .map_or(default, |a| a.parse().expect("a whole number"))
    };
    let out = args.get(4).cloned().unwrap_or_else(|| "ratings.csv".into());
    let written = sextant::synthetic::write_ratings(
        std::fs::File::create(&out)?,
        number(0, 10_000) as usize,
        number(1, 2_000) as usize,
        number(2, 50),
        number(3, 7),
    )?;
    eprintln!("wrote {written} ratings to {out}");
    Ok(())
}
