//! Smallest set of smallest rings. (Placeholder until perception lands.)

/// The smallest set of smallest rings of a graph given by its neighbour lists;
/// each ring lists its atoms in ring order.
pub fn sssr(_neighbors: &[Vec<usize>]) -> Vec<Vec<usize>> {
    Vec::new()
}
