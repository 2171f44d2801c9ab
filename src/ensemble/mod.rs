//! Conformer ensembles: weights and populations of the conformers.

pub mod weights;
