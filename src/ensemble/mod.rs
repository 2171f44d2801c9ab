//! Ensembles of conformers: reading them as one stream, weighting them, and
//! averaging couplings over them.

pub mod average;
pub mod predict;
pub mod source;
pub mod weights;
