//! Input data: ratings CSV loading, id ↔ index maps, the rating scale, the held-out split,
//! items metadata and factor tables.

pub mod binary;
pub mod factors;
pub mod fingerprint;
pub mod ids;
pub mod lookup;
pub mod meta;
pub mod parquet;
pub mod profile;
pub mod ratings;
pub mod scale;
pub mod split;

pub use factors::{
    BiasColumn, FactorTable, load_factor_table, read_factor_table, read_factor_table_with,
    write_factor_table,
};
pub use ids::{IdMap, ItemIndex, UserIndex};
pub use meta::{ItemMeta, ItemsMeta, load_items_meta, read_items_meta, write_items_meta};
pub use ratings::{
    Duplicates, Rating, RatingColumns, Ratings, RatingsOptions, load_ratings, read_ratings,
};
pub use scale::RatingScale;
pub use split::assign_holdout;
