//! # vicinal
//!
//! Vicinal proton–proton couplings 3J(H,H) from conformer ensembles. Data flow
//! one way: conformer files ([`io`]) → molecule and topology ([`topology`],
//! [`fragments`]) → couplings per conformer → Boltzmann or time averages over
//! the ensemble → population fits → reports.
//!
//! Predicted couplings are model estimates: every Karplus-type equation carries
//! an error of its own (about 0.5–1 Hz RMS for the Haasnoot–de Leeuw–Altona
//! equation on its training set), and more where conformer geometries or
//! energies are poor. Assignments made with them should be confirmed by
//! independent evidence.

#![warn(missing_docs)]

pub mod assign;
pub mod atomref;
pub mod check;
pub mod elements;
pub mod ensemble;
pub mod error;
pub mod fit;
pub mod fragments;
pub mod geometry;
pub mod io;
mod isa;
pub mod karplus;
pub mod observed;
pub mod output;
pub mod plot;
pub mod populations;
pub mod pucker;
pub mod rank;
pub mod report;
pub mod states;
pub mod timeseries;
pub mod topology;
pub mod trajectory;

pub use error::{Error, Result};
