//! Seeded random numbers for Monte Carlo yield: xoshiro256** seeded by
//! splitmix64 (Blackman and Vigna's published generators, written from
//! their reference description), so the same seed gives the same builds on
//! every platform, native and WebAssembly alike.

/// Monte Carlo builds run when the need's basis is `yield` (the yield
/// decides whether the target is met, so the run is sized for a tight
/// interval: at 99 % yield the 95 % Wilson interval is about +/-0.14 %).
pub const YIELD_BASIS_BUILDS: u64 = 20_000;

/// A small, fast, reproducible generator.
#[derive(Debug, Clone)]
pub struct Rng {
    s: [u64; 4],
}

impl Rng {
    /// A generator from a 64-bit seed.
    pub fn new(seed: u64) -> Self {
        let mut z = seed;
        let mut next = || {
            z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut x = z;
            x = (x ^ (x >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            x = (x ^ (x >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            x ^ (x >> 31)
        };
        Rng {
            s: [next(), next(), next(), next()],
        }
    }

    /// The next 64 random bits.
    #[inline]
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

    /// Uniform in [0, 1).
    #[inline]
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }

    /// Uniform in [-1, 1).
    #[inline]
    pub fn symmetric(&mut self) -> f64 {
        2.0 * self.uniform() - 1.0
    }
}

/// Wilson score interval for a binomial proportion at about 95 %
/// confidence (z = 1.96; Wilson 1927, as given in common statistics
/// texts). Returns `(low, high)` as fractions.
pub fn wilson_interval(successes: u64, trials: u64) -> (f64, f64) {
    if trials == 0 {
        return (0.0, 1.0);
    }
    let z = 1.959_963_984_540_054_f64;
    let n = trials as f64;
    let p = successes as f64 / n;
    let denom = 1.0 + z * z / n;
    let centre = (p + z * z / (2.0 * n)) / denom;
    let half = z * ((p * (1.0 - p) / n + z * z / (4.0 * n * n)).sqrt()) / denom;
    ((centre - half).max(0.0), (centre + half).min(1.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn same_seed_same_numbers() {
        let mut a = Rng::new(42);
        let mut b = Rng::new(42);
        for _ in 0..100 {
            assert_eq!(a.next_u64(), b.next_u64());
        }
        let mut c = Rng::new(43);
        assert_ne!(Rng::new(42).next_u64(), c.next_u64());
    }

    /// The mean and variance of U(-1,1) are 0 and 1/3 (closed form).
    #[test]
    fn symmetric_moments() {
        let mut r = Rng::new(7);
        let n = 200_000;
        let (mut s, mut s2) = (0.0, 0.0);
        for _ in 0..n {
            let x = r.symmetric();
            assert!((-1.0..1.0).contains(&x));
            s += x;
            s2 += x * x;
        }
        let mean = s / n as f64;
        let var = s2 / n as f64 - mean * mean;
        assert!(mean.abs() < 0.01, "{mean}");
        assert!((var - 1.0 / 3.0).abs() < 0.005, "{var}");
    }

    /// Wilson interval for 50 of 100: about 0.404 to 0.596 (the textbook
    /// example value, from memory).
    #[test]
    fn wilson_known_value() {
        let (lo, hi) = wilson_interval(50, 100);
        assert!(
            (lo - 0.4038).abs() < 0.001 && (hi - 0.5962).abs() < 0.001,
            "{lo} {hi}"
        );
    }
}
