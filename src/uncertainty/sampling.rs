//! Seeded, deterministic sampling: a SplitMix64 generator and a Latin
//! hypercube of uniforms in (0, 1). Every number is drawn serially from one
//! seed before any model runs, so the draws do not depend on how many
//! threads evaluate them. See docs/science.md, "Uncertainty".
//!
//! References
//! - G. L. Steele, D. Lea, C. H. Flood, "Fast splittable pseudorandom number
//!   generators", OOPSLA 2014, doi:10.1145/2660193.2660195 (SplitMix64; the
//!   constants are those of its published reference code, from memory).
//! - M. D. McKay, R. J. Beckman, W. J. Conover, "A comparison of three
//!   methods for selecting values of input variables in the analysis of
//!   output from a computer code", Technometrics 21 (1979) 239–245,
//!   doi:10.2307/1268522 (Latin hypercube sampling).

/// SplitMix64: a 64-bit counter passed through a mixing function.
#[derive(Debug, Clone)]
pub struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    pub fn new(seed: u64) -> Self {
        SplitMix64 { state: seed }
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// A uniform number strictly inside (0, 1): (k + ½)/2⁵³ for 53 random bits k.
    pub fn open01(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    /// A uniform integer in 0..n (n > 0), by the multiply-shift map of 64
    /// random bits (bias below n/2⁶⁴, negligible for any sample size here).
    pub fn below(&mut self, n: usize) -> usize {
        ((u128::from(self.next_u64()) * n as u128) >> 64) as usize
    }
}

/// A Latin hypercube of `n` points in `dims` dimensions, row by row: in each
/// dimension the n points fall one in each of the n equal strata of (0, 1),
/// the strata shuffled (Fisher–Yates) and each point uniform inside its own.
pub fn latin_hypercube(n: usize, dims: usize, seed: u64) -> Vec<Vec<f64>> {
    let mut rng = SplitMix64::new(seed);
    let mut rows = vec![vec![0.0; dims]; n];
    let mut perm: Vec<usize> = Vec::with_capacity(n);
    for d in 0..dims {
        perm.clear();
        perm.extend(0..n);
        for i in (1..n).rev() {
            let j = rng.below(i + 1);
            perm.swap(i, j);
        }
        for (i, row) in rows.iter_mut().enumerate() {
            row[d] = (perm[i] as f64 + rng.open01()) / n as f64;
        }
    }
    rows
}

/// The seed of row `row` (counted from 0) of a table evaluated with the
/// seed `seed`: the (row + 1)-th number of the SplitMix64 stream started at
/// `seed`, computed directly (the stream's n-th state is seed + n·γ). Each
/// row gets its own draws, which depend only on the seed and the row's place
/// in the file, never on the batch size or the thread count.
pub fn row_seed(seed: u64, row: usize) -> u64 {
    let mut r =
        SplitMix64::new(seed.wrapping_add((row as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15)));
    r.next_u64()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_row_seed_is_that_number_of_the_stream() {
        // Source: SplitMix64's state advances by the constant γ per number
        // (Steele, Lea & Flood 2014), so the n-th number is mix(seed + n·γ).
        let mut r = SplitMix64::new(20_261_202);
        let stream: Vec<u64> = (0..1000).map(|_| r.next_u64()).collect();
        for (row, v) in stream.iter().enumerate() {
            assert_eq!(row_seed(20_261_202, row), *v, "row {row}");
        }
        let mut seen: Vec<u64> = (0..1000).map(|i| row_seed(7, i)).collect();
        seen.sort_unstable();
        seen.dedup();
        assert_eq!(seen.len(), 1000);
    }

    #[test]
    fn every_stratum_holds_one_point_in_every_dimension() {
        // Source: McKay, Beckman & Conover (1979), the defining property of a
        // Latin hypercube sample.
        let n = 257;
        let x = latin_hypercube(n, 3, 42);
        for d in 0..3 {
            let mut seen = vec![false; n];
            for row in &x {
                assert!(row[d] > 0.0 && row[d] < 1.0);
                let k = (row[d] * n as f64).floor() as usize;
                assert!(!seen[k], "stratum {k} twice in dimension {d}");
                seen[k] = true;
            }
        }
        assert_eq!(x, latin_hypercube(n, 3, 42));
        assert_ne!(x, latin_hypercube(n, 3, 43));
    }

    #[test]
    fn uniforms_have_the_mean_and_variance_of_u01() {
        // Source: U(0,1) has mean 1/2 and variance 1/12 (standard probability);
        // the standard error of a mean of n draws is sqrt(1/(12 n)).
        let mut r = SplitMix64::new(7);
        let n = 100_000;
        let xs: Vec<f64> = (0..n).map(|_| r.open01()).collect();
        let m = xs.iter().sum::<f64>() / n as f64;
        let v = xs.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (n - 1) as f64;
        let se = (1.0 / (12.0 * n as f64)).sqrt();
        assert!((m - 0.5).abs() < 4.0 * se, "{m}");
        // Var of the sample variance of U(0,1): (1/80 − 1/144)/n ≈ 5.6e-3/n.
        assert!(
            (v - 1.0 / 12.0).abs() < 4.0 * (5.6e-3 / n as f64).sqrt(),
            "{v}"
        );
        let counts = (0..10_000).fold([0usize; 7], |mut c, _| {
            c[r.below(7)] += 1;
            c
        });
        // Binomial(10000, 1/7): sd ≈ 35.
        assert!(counts
            .iter()
            .all(|&c| (c as f64 - 10_000.0 / 7.0).abs() < 5.0 * 35.0));
    }
}
