//! A small, self-contained pseudo-random number generator, so that seeded
//! Monte Carlo results stay the same across crate versions and platforms.
//!
//! * [`SplitMix64`] — Steele, Lea & Flood, "Fast splittable pseudorandom
//!   number generators", OOPSLA 2014 (the `splitmix64.c` reference by Vigna);
//!   used only to expand one 64-bit seed into a generator state.
//! * [`Xoshiro256StarStar`] — Blackman & Vigna, "Scrambled linear pseudorandom
//!   number generators", arXiv:1805.01407 (2018); ACM Trans. Math. Softw. 47
//!   (2021) 36.
//! * Standard normal deviates by the polar method of Marsaglia & Bray, SIAM
//!   Review 6 (1964) 260–264.

/// The SplitMix64 generator (Steele, Lea & Flood 2014), used to seed
/// [`Xoshiro256StarStar`] as its authors recommend.
#[derive(Debug, Clone)]
pub struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    /// A generator whose internal state starts at `seed`.
    pub fn new(seed: u64) -> Self {
        SplitMix64 { state: seed }
    }

    /// Next 64-bit output.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
}

/// The xoshiro256** generator (Blackman & Vigna 2018): period 2^256 − 1,
/// passes BigCrush; plenty for Monte Carlo resampling.
#[derive(Debug, Clone)]
pub struct Xoshiro256StarStar {
    s: [u64; 4],
    /// Second normal deviate of the last polar-method pair, if unused.
    spare_normal: Option<f64>,
}

impl Xoshiro256StarStar {
    /// Generator seeded from one 64-bit seed through four SplitMix64 outputs.
    pub fn seed_from_u64(seed: u64) -> Self {
        let mut sm = SplitMix64::new(seed);
        let s = [sm.next_u64(), sm.next_u64(), sm.next_u64(), sm.next_u64()];
        Self::from_state(s)
    }

    /// Generator with the given raw state. An all-zero state (the one fixed
    /// point of the generator) is replaced by a SplitMix64 expansion of 0.
    pub fn from_state(s: [u64; 4]) -> Self {
        if s == [0; 4] {
            return Self::seed_from_u64(0);
        }
        Xoshiro256StarStar {
            s,
            spare_normal: None,
        }
    }

    /// Next 64-bit output.
    pub fn next_u64(&mut self) -> u64 {
        let result = self.s[1].wrapping_mul(5).rotate_left(7).wrapping_mul(9);
        let t = self.s[1] << 17;
        self.s[2] ^= self.s[0];
        self.s[3] ^= self.s[1];
        self.s[1] ^= self.s[2];
        self.s[0] ^= self.s[3];
        self.s[2] ^= t;
        self.s[3] = self.s[3].rotate_left(45);
        result
    }

    /// Uniform deviate in [0, 1) with 53 random bits (the conversion
    /// recommended by Blackman & Vigna).
    pub fn next_f64(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Standard normal deviate N(0, 1) by the Marsaglia–Bray polar method.
    pub fn next_normal(&mut self) -> f64 {
        if let Some(z) = self.spare_normal.take() {
            return z;
        }
        loop {
            let u = 2.0 * self.next_f64() - 1.0;
            let v = 2.0 * self.next_f64() - 1.0;
            let s = u * u + v * v;
            if s > 0.0 && s < 1.0 {
                let factor = (-2.0 * s.ln() / s).sqrt();
                self.spare_normal = Some(v * factor);
                return u * factor;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Reference outputs of splitmix64.c for seed 1234567 (Rosetta Code task
    /// "Pseudo-random numbers/Splitmix64"), and for seed 0.
    #[test]
    fn splitmix64_reference_outputs() {
        let mut sm = SplitMix64::new(1_234_567);
        let expected = [
            6457827717110365317u64,
            3203168211198807973,
            9817491932198370423,
            4593380528125082431,
            16408922859458223821,
        ];
        for e in expected {
            assert_eq!(sm.next_u64(), e);
        }
        let mut sm0 = SplitMix64::new(0);
        assert_eq!(sm0.next_u64(), 0xe220a8397b1dcdaf);
        assert_eq!(sm0.next_u64(), 0x6e789e6aa1b965f4);
        assert_eq!(sm0.next_u64(), 0x06c45d188009454f);
    }

    /// Reference outputs of Vigna's xoshiro256starstar.c for the state
    /// {1, 2, 3, 4} (as used in the rand_xoshiro crate's reference test).
    #[test]
    fn xoshiro256starstar_reference_outputs() {
        let mut r = Xoshiro256StarStar::from_state([1, 2, 3, 4]);
        let expected = [
            11520u64,
            0,
            1509978240,
            1215971899390074240,
            1216172134540287360,
            607988272756665600,
            16172922978634559625,
            8476171486693032832,
            10595114339597558777,
            2904607092377533576,
        ];
        for e in expected {
            assert_eq!(r.next_u64(), e);
        }
    }

    #[test]
    fn normals_have_unit_moments() {
        let mut r = Xoshiro256StarStar::seed_from_u64(7);
        let n = 200_000;
        let (mut s1, mut s2) = (0.0, 0.0);
        for _ in 0..n {
            let z = r.next_normal();
            s1 += z;
            s2 += z * z;
        }
        let mean = s1 / n as f64;
        let var = s2 / n as f64 - mean * mean;
        assert!(mean.abs() < 0.01, "mean {mean}");
        assert!((var - 1.0).abs() < 0.01, "var {var}");
    }

    #[test]
    fn uniform_in_unit_interval() {
        let mut r = Xoshiro256StarStar::seed_from_u64(1);
        for _ in 0..10_000 {
            let u = r.next_f64();
            assert!((0.0..1.0).contains(&u));
        }
    }
}
