//! One file per job; each returns a serialisable outcome and never prints.

pub mod audit;
pub mod camera;
pub mod sensitivity;
pub mod simulate;
