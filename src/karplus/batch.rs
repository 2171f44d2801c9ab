//! Evaluation of a fixed list of prepared pairs on frame after frame, for
//! trajectories: the Haasnoot–de Leeuw–Altona pairs run in one flat loop
//! (no call, no `Result` and no model dispatch per pair), the other models
//! through [`PreparedPair::evaluate_j`].

use super::{hla_sum, HlaCoefficients, Kernel, PreparedPair, PreparedSub};
use crate::error::Result;
use crate::geometry::{DihedralParts, Vec3};

/// A list of pairs made ready for repeated evaluation; see the module docs.
#[derive(Debug, Clone)]
pub struct PairBatch {
    hla: Vec<HlaJob>,
    subs: Vec<PreparedSub>,
    other: Vec<usize>,
    /// Largest atom index any pair reads.
    max_index: usize,
    len: usize,
}

#[derive(Debug, Clone)]
struct HlaJob {
    /// Index of the pair in the caller's list.
    k: usize,
    /// H1, X, Y, H2.
    atoms: [usize; 4],
    p: HlaCoefficients,
    /// This pair's substituents: `subs[from..to]`.
    from: usize,
    to: usize,
}

impl PairBatch {
    /// A batch for `pairs`, evaluated in [`PairBatch::evaluate`] in this order.
    pub fn new(pairs: &[PreparedPair]) -> PairBatch {
        let mut batch = PairBatch {
            hla: Vec::new(),
            subs: Vec::new(),
            other: Vec::new(),
            max_index: 0,
            len: pairs.len(),
        };
        for (k, pair) in pairs.iter().enumerate() {
            batch.max_index = batch.max_index.max(pair.max_index);
            match &pair.kernel {
                Kernel::Hla { p, subs, n } => {
                    let from = batch.subs.len();
                    batch.subs.extend_from_slice(&subs[..*n]);
                    batch.hla.push(HlaJob {
                        k,
                        atoms: [pair.h1, pair.x, pair.y, pair.h2],
                        p: *p,
                        from,
                        to: batch.subs.len(),
                    });
                }
                _ => batch.other.push(k),
            }
        }
        batch
    }

    /// 3J in Hz of every pair of `pairs` (the list the batch was made from)
    /// in the conformer `coords`, into `out[k]` for `pairs[k]`. The values
    /// are those of [`PreparedPair::evaluate_j`], bit for bit, and so is the
    /// error: that of the first pair, in list order, that cannot be evaluated.
    pub fn evaluate(&self, pairs: &[PreparedPair], coords: &[Vec3], out: &mut [f64]) -> Result<()> {
        if coords.len() <= self.max_index || pairs.len() != self.len || out.len() != self.len {
            return evaluate_each(pairs, coords, out);
        }
        let mut ok = true;
        for job in &self.hla {
            let [h1, x, y, h2] = job.atoms;
            let (x, y) = (&coords[x], &coords[y]);
            let j = DihedralParts::new(&coords[h1], x, y, &coords[h2]).and_then(|parts| {
                hla_sum(&job.p, &self.subs[job.from..job.to], coords, x, y, &parts)
            });
            match j {
                Some(j) => {
                    ok &= j.is_finite();
                    out[job.k] = j;
                }
                None => ok = false,
            }
        }
        if !ok {
            // Some pair fails: find the first one in list order, as the
            // pair-by-pair loop would have.
            return evaluate_each(pairs, coords, out);
        }
        for &k in &self.other {
            out[k] = pairs[k].evaluate_j(coords)?;
        }
        Ok(())
    }
}

/// [`PairBatch::evaluate`] pair by pair.
fn evaluate_each(pairs: &[PreparedPair], coords: &[Vec3], out: &mut [f64]) -> Result<()> {
    for (j, p) in out.iter_mut().zip(pairs) {
        *j = p.evaluate_j(coords)?;
    }
    Ok(())
}
