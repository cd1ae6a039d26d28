//! State that belongs to no one screen: what every screen reads (`shared`), the
//! catalogue, curator notes and what-if profiles. Each screen's own state lives beside
//! its drawing under `screens/`.

pub mod catalogue;
pub mod notes;
pub mod shared;
pub mod what_if;
