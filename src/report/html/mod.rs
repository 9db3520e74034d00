//! The HTML report of a model.

pub mod mds;
