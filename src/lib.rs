//! mountdrift: audits the camera-to-probe mount of a two-object vision navigation system.
//!
//! Data flows one way through the modules, each importing only those above it:
//! `tol` → `geometry` → `camera` → `model`, `session` → `sim` → `pnp` → `offset` → `stats`
//! → `commands` → `report`. `stats` takes plain numbers and knows no cameras. The binary
//! (`main.rs`, `cli.rs`) is a thin layer: argument parsing, files, renderers, exit codes.

#![deny(clippy::float_cmp)]

pub mod tol;

pub mod geometry;

pub mod camera;

pub mod model;

pub mod session;

pub mod sim;

pub mod pnp;

pub mod offset;

pub mod stats;

pub mod commands;

pub mod report;
