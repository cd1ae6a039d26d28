//! The bundled demo models ("Ladle & Loaf", an invented recipe club: what members rated,
//! and how often they cooked each recipe), compiled into the binary so that `sextant` with
//! no arguments, and `sextant explore --demo implicit`, work from any directory.

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

/// The implicit-feedback demo model's files, as committed under demo-data/implicit-model:
/// how many times each member cooked each recipe.
pub const DEMO_IMPLICIT: EmbeddedSource = EmbeddedSource {
    label: "<bundled implicit demo>",
    files: &[
        (
            MANIFEST,
            include_bytes!("../../demo-data/implicit-model/manifest.ron"),
        ),
        (
            "users.csv",
            include_bytes!("../../demo-data/implicit-model/users.csv"),
        ),
        (
            "items.csv",
            include_bytes!("../../demo-data/implicit-model/items.csv"),
        ),
        (
            "ratings.csv",
            include_bytes!("../../demo-data/implicit-model/ratings.csv"),
        ),
        (
            ITEMS_META,
            include_bytes!("../../demo-data/implicit-model/items-meta.csv"),
        ),
    ],
};

/// Which bundled demo.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Demo {
    /// The members' star ratings of the recipes.
    Ratings,
    /// How many times the members cooked each recipe (implicit feedback).
    Implicit,
}

impl Demo {
    /// The demo model and the label the explorer shows.
    pub fn load(self) -> anyhow::Result<(sextant::model::Model, String)> {
        let (source, label) = match self {
            Self::Ratings => (&DEMO, "bundled demo: Ladle & Loaf"),
            Self::Implicit => (&DEMO_IMPLICIT, "bundled demo: Ladle & Loaf, cooked"),
        };
        Ok((load_model_from(source)?, label.to_owned()))
    }
}

/// Opens the explorer on the demo model, or prints its summary when there is no terminal.
pub fn run() -> anyhow::Result<()> {
    let (model, label) = Demo::Ratings.load()?;
    if super::explore::has_terminal() {
        return super::explore::open(model, label, sextant::model::notes::Notes::in_memory());
    }
    let mut text = summary::render(
        &model,
        "bundled demo: Ladle & Loaf recipe club",
        Format::Table,
    )?;
    text.push_str(
        "\nThis is the bundled demo model; run sextant in a terminal to explore it (or \
         sextant explore --demo implicit for what the members cooked). Try also: \
         sextant fit demo-data/ratings.csv --catalogue demo-data/items.csv --out my-model\n",
    );
    output::print(&text, Format::Table)
}
