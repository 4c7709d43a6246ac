//! sim (being written).
