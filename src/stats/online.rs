//! online (being written).
