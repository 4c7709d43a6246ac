//! penalty (being written).
