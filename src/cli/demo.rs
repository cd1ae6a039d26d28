//! The bundled demo model ("Ladle & Loaf", an invented recipe club), compiled into the
//! binary so that `sextant` with no arguments works from any directory.

use sextant::model::store::{EmbeddedSource, ITEMS_META, MANIFEST, load_model_from};

use super::output::{self, Format};
use super::summary;

/// The demo model's files, as committed under demo-data/model.
pub const DEMO: EmbeddedSource = EmbeddedSource {
    label: "<bundled demo>",
    files: &[
        (
            MANIFEST,
            include_bytes!("../../demo-data/model/manifest.ron"),
        ),
        (
            "users.csv",
            include_bytes!("../../demo-data/model/users.csv"),
        ),
        (
            "items.csv",
            include_bytes!("../../demo-data/model/items.csv"),
        ),
        (
            "ratings.csv",
            include_bytes!("../../demo-data/model/ratings.csv"),
        ),
        (
            ITEMS_META,
            include_bytes!("../../demo-data/model/items-meta.csv"),
        ),
    ],
};

/// Opens the explorer on the demo model, or prints its summary when there is no terminal.
pub fn run() -> anyhow::Result<()> {
    let model = load_model_from(&DEMO)?;
    if super::explore::has_terminal() {
        return super::explore::open(
            model,
            "bundled demo: Ladle & Loaf".to_owned(),
            sextant::model::notes::Notes::in_memory(),
        );
    }
    let mut text = summary::render(
        &model,
        "bundled demo: Ladle & Loaf recipe club",
        Format::Table,
    )?;
    text.push_str(
        "\nThis is the bundled demo model; run sextant in a terminal to explore it. Try also: \
         sextant fit demo-data/ratings.csv --catalogue demo-data/items.csv --out my-model\n",
    );
    output::print(&text, Format::Table)
}
