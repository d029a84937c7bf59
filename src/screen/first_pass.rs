//! The space-filling first pass: a Sobol sequence (Joe & Kuo direction
//! numbers) randomised by the seed, mapped into the feasible composition
//! polytope (oxide limits, balance oxide, linear constraints) by the
//! triangular map of [`super::polytope`], so no candidate is spent on
//! composition limits; evaluated in chunks addressable by index (for
//! checkpoints and cluster shards): point n depends on n and the seed alone.
//!
//! References
//! - I. M. Sobol', USSR Comput. Math. Math. Phys. 7 (1967) 86–112,
//!   doi:10.1016/0041-5553(67)90144-9; S. Joe, F. Y. Kuo, SIAM J. Sci. Comput.
//!   30 (2008) 2635–2654, doi:10.1137/070709359.
//! - R. Cranley, T. N. L. Patterson, SIAM J. Numer. Anal. 13 (1976) 904–914,
//!   doi:10.1137/0713071 (random shift of a lattice rule).

use super::candidate::{evaluate_candidate, Candidate, Pass, Row};
use super::polytope::Polytope;
use super::problem::{ScreenProblem, Search};
use super::simplex::Simplex;
use crate::numeric::splitmix64;
use sobol::params::JoeKuoD6;
use sobol::{Sobol, SobolType};

/// The sobol crate's direction-number parameters, read once: the crate
/// unpacks them from a compressed table on every call, which was most
/// of the time spent entering the sequence for each chunk.
fn joe_kuo() -> &'static JoeKuoD6 {
    static PARAMS: std::sync::OnceLock<JoeKuoD6> = std::sync::OnceLock::new();
    PARAMS.get_or_init(JoeKuoD6::minimal)
}

/// The unit-cube points of one chunk of the space-filling pass: a Sobol sequence
/// randomised by the seed with a Cranley–Patterson rotation (u + s mod 1, one
/// shift s per dimension; Cranley & Patterson 1976, SIAM J. Numer. Anal. 13, 904).
///
/// The sequence is the `sobol` crate's (its direction numbers, its Gray-code
/// order, its 53-bit rendering), entered at point `start` directly: in Gray-code
/// order point n is the XOR of the direction numbers at the bits set in
/// n ⊕ (n >> 1) (Antonov & Saleev 1979, USSR Comput. Math. Math. Phys. 19,
/// 252–256, doi:10.1016/0041-5553(79)90085-5), so a chunk costs the same
/// wherever it sits, where stepping the crate's iterator to `start` made the
/// first pass quadratic in its length.
pub fn sobol_points(dims: usize, seed: u64, start: usize, count: usize) -> Vec<Vec<f64>> {
    let shift: Vec<f64> = (0..dims)
        .map(|d| (splitmix64(seed ^ splitmix64(d as u64)) >> 11) as f64 / (1u64 << 53) as f64)
        .collect();
    let dirs = Sobol::<f64>::init_direction_vals::<u32>(
        dims.max(1),
        <f64 as SobolType>::MAX_RESOLUTION,
        joe_kuo(),
    );
    let gray = (start ^ (start >> 1)) as u64;
    let mut x: Vec<u64> = dirs
        .iter()
        .map(|v| {
            v.iter()
                .enumerate()
                .filter(|(j, _)| (gray >> j) & 1 == 1)
                .fold(0, |acc, (_, &d)| acc ^ d)
        })
        .collect();
    let mut out = Vec::with_capacity(count);
    for n in start..start + count {
        if n > start {
            // The crate's step: the direction number at the rightmost zero bit of n − 1.
            let c = (!(n - 1)).trailing_zeros() as usize;
            for (xi, v) in x.iter_mut().zip(&dirs) {
                *xi ^= v[c];
            }
        }
        out.push(
            x.iter()
                .zip(&shift)
                .map(|(&u, s)| (<f64 as SobolType>::render(u) + s).fract())
                .collect(),
        );
    }
    out
}

/// Evaluate chunk `k` of the space-filling pass (points k·size … (k+1)·size − 1).
pub fn space_filling_chunk(
    problem: &ScreenProblem,
    search: &Search,
    simplex: &Simplex,
    k: usize,
) -> Vec<Candidate> {
    map_chunk(problem, search, simplex, k, |c| c)
}

/// Chunk `k` of the space-filling pass evaluated and flattened to rows, both
/// on the worker threads (what the run stores and streams).
pub fn space_filling_rows(
    problem: &ScreenProblem,
    search: &Search,
    simplex: &Simplex,
    k: usize,
) -> Vec<Row> {
    map_chunk(problem, search, simplex, k, |c| Row::new(&c, problem))
}

/// Evaluate chunk `k` on the worker threads and turn each candidate into
/// what the caller keeps, there too; in point order.
fn map_chunk<T: Send>(
    problem: &ScreenProblem,
    search: &Search,
    simplex: &Simplex,
    k: usize,
    keep: impl Fn(Candidate) -> T + Sync,
) -> Vec<T> {
    use rayon::prelude::*;
    let start = k * search.chunk_size;
    let count = search
        .chunk_size
        .min(search.first_pass_points.saturating_sub(start));
    let pts = sobol_points(simplex.dims(), search.seed, start, count);
    let polytope = Polytope::new(problem, simplex);
    pts.par_iter()
        .enumerate()
        .map(|(j, u)| {
            // An empty polytope (constraints no composition meets) keeps the
            // box map: every point is then rejected on composition limits.
            let y = polytope.map_unit(u).unwrap_or_else(|| simplex.from_unit(u));
            let x = simplex.compose(&y);
            keep(evaluate_candidate(
                problem,
                (start + j) as u64,
                Pass::SpaceFilling,
                x,
            ))
        })
        .collect()
}

/// Number of chunks in the space-filling pass.
pub fn chunk_count(search: &Search) -> usize {
    search.first_pass_points.div_ceil(search.chunk_size)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The points as the `sobol` crate's iterator gives them, stepped to `start`.
    fn stepped(dims: usize, seed: u64, start: usize, count: usize) -> Vec<Vec<f64>> {
        let shift: Vec<f64> = (0..dims)
            .map(|d| (splitmix64(seed ^ splitmix64(d as u64)) >> 11) as f64 / (1u64 << 53) as f64)
            .collect();
        Sobol::<f64>::new(dims.max(1), &JoeKuoD6::minimal())
            .skip(start)
            .take(count)
            .map(|u| u.iter().zip(&shift).map(|(u, s)| (u + s).fract()).collect())
            .collect()
    }

    #[test]
    fn entering_the_sequence_at_a_point_gives_the_crates_points() {
        // Source: the sobol crate's own iterator (the reference here), bit for bit.
        for dims in [0, 1, 2, 6, 9] {
            for (start, count) in [
                (0, 70),
                (1, 5),
                (511, 3),
                (512, 40),
                (4095, 2),
                (98_304, 17),
            ] {
                assert_eq!(
                    sobol_points(dims, 20261202, start, count),
                    stepped(dims, 20261202, start, count),
                    "dims {dims}, start {start}"
                );
            }
        }
    }
}
