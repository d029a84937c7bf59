//! Scalar root finding and minimisation (Brent's methods, through argmin),
//! shared by the property models (isokoms of a MYEGA curve) and the kinetics
//! (the TTT nose), and least squares ([`least_squares`]: linear by SVD,
//! non-linear by Levenberg–Marquardt, with the covariance of the fitted
//! coefficients) for fitting the models to measurements.
//!
//! References
//! - R. P. Brent, Algorithms for Minimization without Derivatives,
//!   Prentice-Hall (1973), chapters 4 and 5.

pub mod least_squares;

use argmin::core::{CostFunction, Error as ArgminError, Executor, State};
use argmin::solver::brent::{BrentOpt, BrentRoot};

struct Scalar<F: Fn(f64) -> f64>(F);

impl<F: Fn(f64) -> f64> CostFunction for Scalar<F> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, p: &f64) -> Result<f64, ArgminError> {
        Ok((self.0)(*p))
    }
}

/// A root of `f` in [lo, hi] (the signs at the ends must differ), to an
/// absolute tolerance `tol`.
///
/// # Errors
/// The solver fails or returns no point; the message says why.
pub(crate) fn brent_root<F: Fn(f64) -> f64>(
    f: F,
    lo: f64,
    hi: f64,
    tol: f64,
) -> Result<f64, String> {
    let res = Executor::new(Scalar(f), BrentRoot::new(lo, hi, tol))
        .configure(|s| s.max_iters(200))
        // No clock readings per iteration: these solves take microseconds.
        .timer(false)
        .run()
        .map_err(|e| e.to_string())?;
    res.state()
        .get_best_param()
        .copied()
        .ok_or_else(|| "root finder returned no point".to_string())
}

/// The minimiser of `f` in [lo, hi], to a relative tolerance `rel`.
///
/// # Errors
/// The solver fails or returns no point; the message says why.
pub(crate) fn brent_min<F: Fn(f64) -> f64>(
    f: F,
    lo: f64,
    hi: f64,
    rel: f64,
) -> Result<f64, String> {
    let res = Executor::new(Scalar(f), BrentOpt::new(lo, hi).set_tolerance(rel, 1e-3))
        .configure(|s| s.max_iters(200))
        // No clock readings per iteration: these solves take microseconds.
        .timer(false)
        .run()
        .map_err(|e| e.to_string())?;
    res.state()
        .get_best_param()
        .copied()
        .ok_or_else(|| "minimiser returned no point".to_string())
}

/// SplitMix64 (Steele, Lea & Flood 2014, doi:10.1145/2714064.2660195): a
/// seed → well-mixed 64-bit numbers; the next state is the seed plus
/// [`SPLIT_MIX_GAMMA`].
pub(crate) fn splitmix64(mut z: u64) -> u64 {
    z = z.wrapping_add(SPLIT_MIX_GAMMA);
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58476d1ce4e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d049bb133111eb);
    z ^ (z >> 31)
}

/// SplitMix64's increment, 2⁶⁴/φ.
const SPLIT_MIX_GAMMA: u64 = 0x9e3779b97f4a7c15;

/// Uniform numbers in [0, 1) from a fixed seed ([`splitmix64`]): the unit
/// tests' reproducible random cases, without a generator crate.
#[cfg(test)]
pub(crate) fn split_mix(seed: u64) -> impl FnMut() -> f64 {
    let mut z = seed;
    move || {
        let x = splitmix64(z);
        z = z.wrapping_add(SPLIT_MIX_GAMMA);
        (x >> 11) as f64 / (1u64 << 53) as f64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_a_root_and_a_minimum() {
        // x² − 2 has the root √2; (x − 1)² + 3 has its minimum at 1.
        let r = brent_root(|x| x * x - 2.0, 0.0, 3.0, 1e-12).unwrap();
        assert!((r - 2f64.sqrt()).abs() < 1e-10, "{r}");
        let m = brent_min(|x| (x - 1.0) * (x - 1.0) + 3.0, -4.0, 5.0, 1e-8).unwrap();
        assert!((m - 1.0).abs() < 1e-6, "{m}");
    }
}
