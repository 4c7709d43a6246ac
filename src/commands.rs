//! One file per job; each returns a serialisable outcome and never prints.
pub mod simulate;
