//! multivariate (being written).
