//! `sextant notes`: list or edit a model's curator notes from the command line (the same
//! notes the explorer keeps, saved the same way: locked, merged, atomic).

use std::fmt::Write as _;

use clap::Args;
use serde::Serialize;
use sextant::model::notes::{NoteError, load_with_notes};

use super::UsageError;
use super::args::{ModelArg, OutputArgs};
use super::output::{self, Format};

/// List a model's curator notes, or change one: an item note, a factor label, a flag on a
/// pair of items that should not be neighbours. Empty text removes a note or label.
#[derive(Debug, Args)]
pub struct NotesArgs {
    #[command(flatten)]
    model: ModelArg,
    /// Set the note on an item: --item ID TEXT.
    #[arg(long, num_args = 2, value_names = ["ID", "TEXT"])]
    item: Option<Vec<String>>,
    /// Set the label of a factor (numbered from 1): --factor N TEXT.
    #[arg(long, num_args = 2, value_names = ["N", "TEXT"])]
    factor: Option<Vec<String>>,
    /// Flag two items as wrong neighbours: --flag ID ID (with --text for a note).
    #[arg(long, num_args = 2, value_names = ["ID", "ID"])]
    flag: Option<Vec<String>>,
    /// Remove the flag on two items: --unflag ID ID.
    #[arg(long, num_args = 2, value_names = ["ID", "ID"])]
    unflag: Option<Vec<String>>,
    /// The note that goes with --flag.
    #[arg(long, default_value = "")]
    text: String,
    #[command(flatten)]
    output: OutputArgs,
}

#[derive(Serialize)]
struct Row<'a> {
    kind: &'static str,
    subject: String,
    other: Option<&'a str>,
    note: &'a str,
}

pub fn run(args: &NotesArgs) -> anyhow::Result<()> {
    // The model and its notes from one generation; the reading lock is let go before the
    // save takes the writing one.
    let (model, mut notes) = load_with_notes(&args.model.model)?;
    let refused = |what: &str, e: NoteError| UsageError(format!("{what}: {e}"));
    // Items are named by id or by exact title; notes are kept by id.
    let known = |typed: &str| -> Result<String, UsageError> {
        super::lookup::resolve_item(&model, typed).map(|j| model.ratings.items.name(j).to_owned())
    };
    let mut changed = false;
    if let Some(v) = &args.item {
        let id = known(&v[0])?;
        notes
            .current
            .set_item_note(&id, &v[1])
            .map_err(|e| refused("--item", e))?;
        changed = true;
    }
    if let Some(v) = &args.factor {
        let f: usize = v[0]
            .parse()
            .ok()
            .filter(|f| (1..=model.factors.rank).contains(f))
            .ok_or_else(|| {
                UsageError(format!(
                    "--factor: '{}' is not a factor number from 1 to {}",
                    v[0], model.factors.rank
                ))
            })?;
        notes
            .current
            .set_factor_label(f, &v[1])
            .map_err(|e| refused("--factor", e))?;
        changed = true;
    }
    for (pair, flag) in [(&args.flag, true), (&args.unflag, false)] {
        if let Some(v) = pair {
            let (a, b) = (known(&v[0])?, known(&v[1])?);
            if a == b {
                return Err(UsageError("a pair needs two different items".into()).into());
            }
            if flag {
                notes
                    .current
                    .flag_pair(&a, &b, &args.text)
                    .map_err(|e| refused("--text", e))?;
            } else {
                notes.current.unflag_pair(&a, &b);
            }
            changed = true;
        }
    }
    if changed {
        let merge = notes.save()?;
        if merge.taken > 0 {
            eprintln!("merged {} note(s) saved elsewhere meanwhile", merge.taken);
        }
        if merge.model_replaced {
            eprintln!("the model was refitted while this ran; the notes went into the new model");
        }
        for what in &merge.joined {
            eprintln!("{what} was edited elsewhere too: both texts are kept, joined by ‖");
        }
    }
    let a = &notes.current;
    let mut rows: Vec<Row<'_>> = Vec::new();
    for (f, label) in &a.factors {
        rows.push(Row {
            kind: "factor",
            subject: f.to_string(),
            other: None,
            note: label,
        });
    }
    for (id, note) in &a.items {
        rows.push(Row {
            kind: "item",
            subject: id.clone(),
            other: None,
            note,
        });
    }
    for ((x, y), note) in &a.pairs {
        rows.push(Row {
            kind: "pair",
            subject: x.clone(),
            other: Some(y),
            note,
        });
    }
    let text = match args.output.format {
        Format::Json => serde_json::to_string_pretty(&serde_json::json!({ "notes": rows }))? + "\n",
        Format::Csv => {
            let mut out = String::from("kind,subject,other,note\n");
            for r in &rows {
                output::csv_row(
                    &mut out,
                    &[r.kind, &r.subject, r.other.unwrap_or(""), r.note],
                );
            }
            out
        }
        Format::Table => {
            let mut out = String::new();
            if rows.is_empty() {
                out.push_str("no curator notes yet\n");
            }
            for r in &rows {
                let subject = match r.other {
                    Some(o) => format!("{} – {}", r.subject, o),
                    None => r.subject.clone(),
                };
                let _ = writeln!(out, "{:<7} {subject:<24} {}", r.kind, r.note);
            }
            let orphans = a.orphans(&model.ratings.items, model.factors.rank);
            if !orphans.is_empty() {
                let _ = writeln!(out, "note: {}", orphans.describe());
            }
            out
        }
    };
    output::print(&text, args.output.format)
}
