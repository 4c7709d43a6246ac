//! noise (being written).
