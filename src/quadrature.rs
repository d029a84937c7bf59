//! Gauss–Legendre panels with a spectral integration matrix.
//!
//! The kinetics need ∫ I(T′) [∫ U dT″]³ dT′: an outer integral whose integrand
//! contains a running (cumulative) inner integral. On an n-point Gauss–Legendre
//! panel both come from the same nodes: the weights give the panel integral and
//! the integration matrix S (S_ij = ∫_{-1}^{x_i} ℓ_j(x) dx, ℓ_j the Lagrange
//! basis on the nodes) gives the running integral at every node, exact for
//! polynomials of degree < n.
//!
//! References
//! - M. Abramowitz, I. A. Stegun, Handbook of Mathematical Functions (1964),
//!   §25.4.29–30 (Gauss–Legendre nodes and weights).
//! - L. Greengard, "Spectral integration and two-point boundary value problems",
//!   SIAM J. Numer. Anal. 28 (1991) 1071–1080, doi:10.1137/0728057.

use std::sync::OnceLock;

/// Nodes per panel.
pub const NODES: usize = 8;

/// A Gauss–Legendre rule on [-1, 1] with its integration matrix.
#[derive(Debug)]
pub struct Rule {
    /// Nodes in ascending order.
    pub x: [f64; NODES],
    /// Weights; they sum to 2.
    pub w: [f64; NODES],
    /// `s[i][j]` = ∫_{-1}^{x_i} ℓ_j(x) dx.
    pub s: [[f64; NODES]; NODES],
}

/// Legendre polynomials P_0..=P_n at x (three-term recurrence).
fn legendre_all(n: usize, x: f64) -> Vec<f64> {
    let mut p = vec![0.0; n + 1];
    p[0] = 1.0;
    if n >= 1 {
        p[1] = x;
    }
    for k in 1..n {
        let kf = k as f64;
        p[k + 1] = ((2.0 * kf + 1.0) * x * p[k] - kf * p[k - 1]) / (kf + 1.0);
    }
    p
}

fn build(n: usize) -> (Vec<f64>, Vec<f64>, Vec<Vec<f64>>) {
    let mut x = vec![0.0; n];
    let mut w = vec![0.0; n];
    for i in 0..n {
        // Chebyshev-like first guess, then Newton on P_n.
        let mut z = -(std::f64::consts::PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
        for _ in 0..100 {
            let p = legendre_all(n, z);
            let dp = n as f64 * (z * p[n] - p[n - 1]) / (z * z - 1.0);
            let dz = p[n] / dp;
            z -= dz;
            if dz.abs() < 1e-16 {
                break;
            }
        }
        let p = legendre_all(n, z);
        let dp = n as f64 * (z * p[n] - p[n - 1]) / (z * z - 1.0);
        x[i] = z;
        w[i] = 2.0 / ((1.0 - z * z) * dp * dp);
    }
    // ℓ_j(x) = Σ_k (2k+1)/2 w_j P_k(x_j) P_k(x) (discrete orthogonality, exact here),
    // and ∫_{-1}^{x} P_k = (P_{k+1} − P_{k−1})/(2k+1) for k ≥ 1, x + 1 for k = 0.
    let mut s = vec![vec![0.0; n]; n];
    for i in 0..n {
        let pi = legendre_all(n, x[i]);
        for j in 0..n {
            let pj = legendre_all(n, x[j]);
            let mut acc = (x[i] + 1.0) / 2.0;
            for k in 1..n {
                acc += pj[k] * (pi[k + 1] - pi[k - 1]) / 2.0;
            }
            s[i][j] = w[j] * acc;
        }
    }
    (x, w, s)
}

/// The shared 8-point rule, built once.
pub fn rule() -> &'static Rule {
    static RULE: OnceLock<Rule> = OnceLock::new();
    RULE.get_or_init(|| {
        let (x, w, s) = build(NODES);
        Rule {
            x: std::array::from_fn(|i| x[i]),
            w: std::array::from_fn(|i| w[i]),
            s: std::array::from_fn(|i| std::array::from_fn(|j| s[i][j])),
        }
    })
}

impl Rule {
    /// The nodes mapped to [lo, hi].
    pub fn nodes_on(&self, lo: f64, hi: f64) -> [f64; NODES] {
        let (m, h) = (0.5 * (lo + hi), 0.5 * (hi - lo));
        self.x.map(|x| m + h * x)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nodes_and_weights_match_the_printed_table() {
        // Source: Abramowitz & Stegun (1964), Table 25.4, n = 8 (15 digits printed
        // there; quoted here from memory of that table) → abs tol 1e-14.
        let r = rule();
        let xs = [
            0.183434642495650,
            0.525532409916329,
            0.796666477413627,
            0.960289856497536,
        ];
        let ws = [
            0.362683783378362,
            0.313706645877887,
            0.222381034453374,
            0.101228536290376,
        ];
        for k in 0..4 {
            assert!((r.x[4 + k] - xs[k]).abs() < 1e-14);
            assert!((r.x[3 - k] + xs[k]).abs() < 1e-14);
            assert!((r.w[4 + k] - ws[k]).abs() < 1e-14);
        }
    }

    #[test]
    fn exact_for_polynomials_up_to_degree_15() {
        // Gauss–Legendre with n nodes integrates degree 2n − 1 exactly (A&S §25.4.29).
        let r = rule();
        for d in 0..16 {
            let q: f64 = r.x.iter().zip(&r.w).map(|(x, w)| w * x.powi(d)).sum();
            let exact = if d % 2 == 0 {
                2.0 / (d as f64 + 1.0)
            } else {
                0.0
            };
            assert!((q - exact).abs() < 1e-14, "degree {d}");
        }
    }

    #[test]
    fn integration_matrix_is_exact_for_degree_below_8() {
        let r = rule();
        for d in 0..8 {
            for i in 0..NODES {
                let q: f64 = (0..NODES).map(|j| r.s[i][j] * r.x[j].powi(d)).sum();
                let dp = d as f64 + 1.0;
                let exact = (r.x[i].powi(d + 1) - (-1f64).powi(d + 1)) / dp;
                assert!((q - exact).abs() < 1e-13, "degree {d} node {i}");
            }
        }
    }
}
