//! A small seeded random source, so a run is reproducible from `--seed`
//! alone and no random-number crate is needed.
//!
//! xoshiro256** seeded through SplitMix64 (Blackman and Vigna, "Scrambled
//! linear pseudorandom number generators", ACM TOMS 2021; constants as
//! published there, written from memory). Normal deviates by the Box–Muller
//! transform (Box and Muller 1958).

/// One SplitMix64 step: a well-mixed 64-bit value from `state`.
fn splitmix64(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// xoshiro256** generator.
#[derive(Debug, Clone)]
pub struct Rng {
    s: [u64; 4],
}

impl Rng {
    /// The stream for `seed` and a purpose tag (`stream`), so the plant
    /// perturbation, the noise and the input signal draw from independent
    /// streams and adding one does not shift the others.
    pub fn new(seed: u64, stream: u64) -> Self {
        let mut sm = seed ^ splitmix64(&mut stream.wrapping_mul(0x2545_f491_4f6c_dd1d));
        let s = [
            splitmix64(&mut sm),
            splitmix64(&mut sm),
            splitmix64(&mut sm),
            splitmix64(&mut sm),
        ];
        Self { s }
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        let [s0, s1, s2, s3] = self.s;
        let result = s1.wrapping_mul(5).rotate_left(7).wrapping_mul(9);
        let t = s1 << 17;
        let s2 = s2 ^ s0;
        let s3 = s3 ^ s1;
        let s1 = s1 ^ s2;
        let s0 = s0 ^ s3;
        self.s = [s0, s1, s2 ^ t, s3.rotate_left(45)];
        result
    }

    /// Uniform in [0, 1) with 53 random bits.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Uniform in [−1, 1).
    pub fn symmetric(&mut self) -> f64 {
        2.0 * self.uniform() - 1.0
    }

    /// A standard normal deviate (Box–Muller; one of the pair is used).
    pub fn normal(&mut self) -> f64 {
        // 1 − uniform is in (0, 1], so the logarithm is finite.
        let r = (-2.0 * (1.0 - self.uniform()).ln()).sqrt();
        r * (std::f64::consts::TAU * self.uniform()).cos()
    }

    /// True with probability `p`.
    pub fn chance(&mut self, p: f64) -> bool {
        self.uniform() < p
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Moments of 200 000 uniform and normal draws: the sample mean has
    /// standard error 1/sqrt(12·n) ≈ 6.5e-4 (uniform) and 1/sqrt(n) ≈ 2.2e-3
    /// (normal); 5 standard errors are allowed.
    #[test]
    fn draws_have_the_moments_of_their_distribution() {
        let mut rng = Rng::new(7, 0);
        let n = 200_000;
        let mean_u = (0..n).map(|_| rng.uniform()).sum::<f64>() / n as f64;
        assert!((mean_u - 0.5).abs() < 5.0 * 6.5e-4, "{mean_u}");
        let draws: Vec<f64> = (0..n).map(|_| rng.normal()).collect();
        let mean = draws.iter().sum::<f64>() / n as f64;
        let var = draws.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
        assert!(mean.abs() < 5.0 * 2.2e-3, "{mean}");
        // Variance of the sample variance of a normal: 2/n → s.e. 3.2e-3.
        assert!((var - 1.0).abs() < 5.0 * 3.2e-3, "{var}");
    }

    #[test]
    fn streams_differ_and_repeat() {
        let a: Vec<u64> = (0..4).map(|_| Rng::new(1, 0).next_u64()).collect();
        assert!(a.windows(2).all(|w| w[0] == w[1]));
        assert_ne!(Rng::new(1, 0).next_u64(), Rng::new(1, 1).next_u64());
        assert_ne!(Rng::new(1, 0).next_u64(), Rng::new(2, 0).next_u64());
    }
}
