//! drift (being written).
