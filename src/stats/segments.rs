//! segments (being written).
