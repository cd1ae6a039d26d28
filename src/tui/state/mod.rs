//! The explorer's state, split by screen and tool. Each file holds one screen's or tool's
//! state, its key table and the part of `App::update` that changes it.

pub mod audit;
pub mod catalogue;
pub mod fit;
pub mod items;
pub mod map;
pub mod member;
pub mod notes;
pub mod shared;
pub mod what_if;
