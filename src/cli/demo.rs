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

/// Prints the demo model's summary (the explorer will open here once it exists).
pub fn run() -> anyhow::Result<()> {
    let model = load_model_from(&DEMO)?;
    let mut text = summary::render(
        &model,
        "bundled demo: Ladle & Loaf recipe club",
        Format::Table,
    )?;
    text.push_str(
        "\nThis is the bundled demo model. Try: sextant fit demo-data/ratings.csv \
         --items demo-data/items.csv --out my-model\n",
    );
    output::print(&text)
}
