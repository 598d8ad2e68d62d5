//! A tiny deterministic generator (xorshift64*) with Box–Muller normals, so noisy fits are
//! reproducible without a dependency.

pub struct Rng(u64);

impl Rng {
    pub fn new(seed: u64) -> Self {
        Rng(seed.wrapping_mul(0x9E37_79B9_7F4A_7C15) | 1)
    }
    pub fn uniform(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        let x = self.0.wrapping_mul(0x2545_F491_4F6C_DD1D);
        ((x >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    pub fn normal(&mut self) -> f64 {
        let (u1, u2) = (self.uniform(), self.uniform());
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// Least-squares theory (common practice): with Gaussian noise an estimate lies within one
/// standard error of the truth about 68 % of the time. `within_one[c]` counts the trials of
/// parameter `c` that did.
pub fn assert_honest_errors(within_one: &[usize], trials: u64) {
    for (c, n) in within_one.iter().enumerate() {
        let f = *n as f64 / trials as f64;
        // 60 trials at p = 0.68: the binomial spread is ±0.06, so 0.5–0.85 is a wide margin.
        assert!(
            (0.5..=0.85).contains(&f),
            "parameter {c}: {n} of {trials} within one SE"
        );
    }
}
