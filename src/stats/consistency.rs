//! consistency (being written).
