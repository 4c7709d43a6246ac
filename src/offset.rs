//! offset (being written).
