//! One file per job; each returns a serialisable outcome and never prints.

pub mod audit;
pub mod camera;
pub mod compare;
pub mod overlay;
pub mod sensitivity;
pub mod simulate;
pub mod survey;
