//! stats (being written).
