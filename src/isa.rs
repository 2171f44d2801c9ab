//! Run-time choice of instruction-set extensions for the hot loops.
//!
//! The portable code uses the x86-64 baseline (SSE2) or plain Rust; the wide
//! instances of the readers' and the trajectory's loops use the features of
//! the x86-64 machines of the last decade. Both give the same bits, and the
//! tests compare them.

/// Which instructions a hot loop may use: [`Baseline`]
/// (x86-64's SSE2, or portable code elsewhere) or [`Wide`]. A loop generic
/// over `I: Isa` takes a value of `I`, so that its wide instance can only be
/// reached with the proof that [`Wide::detect`] returns.
pub(crate) trait Isa: Copy {
    /// True for [`Wide`].
    const WIDE: bool;
}

/// The instructions every target has.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Baseline;

impl Isa for Baseline {
    const WIDE: bool = false;
}

/// Proof that this CPU has AVX, AVX2, SSSE3, POPCNT, LZCNT, BMI1 and BMI2 (the
/// x86-64 machines of the last decade); made only by [`Wide::detect`].
#[derive(Debug, Clone, Copy)]
pub(crate) struct Wide(());

impl Isa for Wide {
    const WIDE: bool = true;
}

impl Wide {
    /// `Some` when this CPU has the features (checked at run time, once per
    /// reader or evaluator).
    pub(crate) fn detect() -> Option<Wide> {
        #[cfg(target_arch = "x86_64")]
        {
            use std::arch::is_x86_feature_detected as has;
            (has!("avx")
                && has!("avx2")
                && has!("ssse3")
                && has!("popcnt")
                && has!("lzcnt")
                && has!("bmi1")
                && has!("bmi2"))
            .then_some(Wide(()))
        }
        #[cfg(not(target_arch = "x86_64"))]
        {
            None
        }
    }
}
