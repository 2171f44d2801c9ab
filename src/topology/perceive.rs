//! Building a [`Topology`] from the first conformer, and checking the others
//! against it. (Placeholder until perception lands.)

use super::Topology;
use crate::error::{Error, Result};
use crate::io::Frame;

/// Builds the topology of a molecule from one frame: bonds from the file when
/// it has them, else from distances with Cordero et al. (2008) covalent radii;
/// then rings and hybridisation.
pub fn build(_frame: &Frame) -> Result<Topology> {
    Err(Error::Structure("topology perception not built yet".into()))
}

/// Checks that `frame` (1-based `conformer` in the ensemble) has the same
/// elements in the same order as `top` and the same bonding.
pub fn check_frame(_top: &Topology, _frame: &Frame, _conformer: usize) -> Result<()> {
    Err(Error::Structure("topology check not built yet".into()))
}
