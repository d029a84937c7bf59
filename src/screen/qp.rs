//! A small dense convex quadratic programme, solved by the primal active-set
//! method from a feasible start:
//!
//! ```text
//! minimise ½ zᵀ G z + cᵀ z   subject to   C z ≤ e
//! ```
//!
//! with G symmetric positive definite. The sizes the screen needs are tiny (a
//! dozen variables, a few dozen rows), so the KKT systems are solved densely
//! by Gaussian elimination with partial pivoting.
//!
//! Reference: J. Nocedal, S. J. Wright, *Numerical Optimization*, 2nd ed.,
//! Springer (2006), Algorithm 16.3, doi:10.1007/978-0-387-40065-5.

/// The solution of a QP: the point and one multiplier per row (≥ 0; zero
/// for rows not in the final working set).
#[derive(Debug, Clone, PartialEq)]
pub struct QpSolution {
    pub z: Vec<f64>,
    pub multipliers: Vec<f64>,
    /// The working set was optimal (false: the iteration cap stopped it).
    pub optimal: bool,
}

/// Solve the QP from the feasible point `z0` (rows of `c_rows` with `e`).
///
/// `g` is G row by row. Returns `None` when a KKT system is singular, which
/// cannot happen for a positive definite G and the independent working sets
/// the method builds, unless the data are not finite.
pub fn solve(
    g: &[Vec<f64>],
    c: &[f64],
    c_rows: &[Vec<f64>],
    e: &[f64],
    z0: &[f64],
) -> Option<QpSolution> {
    let n = c.len();
    let m = c_rows.len();
    let mut z = z0.to_vec();
    let mut work: Vec<usize> = Vec::new();
    let scale = 1.0 + c.iter().fold(0.0f64, |s, v| s.max(v.abs()));
    for _ in 0..(50 + 10 * (n + m)) {
        // Gradient at z.
        let grad: Vec<f64> = (0..n)
            .map(|i| c[i] + (0..n).map(|j| g[i][j] * z[j]).sum::<f64>())
            .collect();
        let k = work.len();
        let size = n + k;
        let mut mat = vec![vec![0.0; size + 1]; size];
        for i in 0..n {
            mat[i][..n].copy_from_slice(&g[i]);
            for (w, &r) in work.iter().enumerate() {
                mat[i][n + w] = c_rows[r][i];
            }
            mat[i][size] = -grad[i];
        }
        for (w, &r) in work.iter().enumerate() {
            mat[n + w][..n].copy_from_slice(&c_rows[r]);
        }
        let sol = gauss(mat)?;
        let p = &sol[..n];
        let lambda = &sol[n..];
        let pnorm = p.iter().fold(0.0f64, |s, v| s.max(v.abs()));
        let znorm = 1.0 + z.iter().fold(0.0f64, |s, v| s.max(v.abs()));
        if pnorm <= 1e-12 * znorm {
            // Stationary on the working set: optimal if no multiplier is negative.
            let (worst, wl) =
                lambda
                    .iter()
                    .enumerate()
                    .fold((None, -1e-12 * scale), |(bi, bl), (i, &l)| {
                        if l < bl {
                            (Some(i), l)
                        } else {
                            (bi, bl)
                        }
                    });
            let _ = wl;
            match worst {
                None => {
                    let mut mult = vec![0.0; m];
                    for (w, &r) in work.iter().enumerate() {
                        mult[r] = lambda[w].max(0.0);
                    }
                    return Some(QpSolution {
                        z,
                        multipliers: mult,
                        optimal: true,
                    });
                }
                Some(i) => {
                    work.remove(i);
                    continue;
                }
            }
        }
        // Step along p as far as the rows outside the working set allow.
        let mut alpha = 1.0;
        let mut block = None;
        for r in 0..m {
            if work.contains(&r) {
                continue;
            }
            let ap: f64 = c_rows[r].iter().zip(p).map(|(a, b)| a * b).sum();
            if ap > 1e-14 * (1.0 + pnorm) {
                let slack = e[r] - c_rows[r].iter().zip(&z).map(|(a, b)| a * b).sum::<f64>();
                let t = (slack.max(0.0)) / ap;
                if t < alpha {
                    alpha = t;
                    block = Some(r);
                }
            }
        }
        for (zi, pi) in z.iter_mut().zip(p) {
            *zi += alpha * pi;
        }
        if let Some(r) = block {
            work.push(r);
        }
    }
    Some(QpSolution {
        multipliers: vec![0.0; m],
        z,
        optimal: false,
    })
}

/// Solve the augmented system `mat` (rows of [A | b]) by Gaussian elimination
/// with partial pivoting and one step of iterative refinement (the KKT
/// systems mix scales; the refinement keeps the working rows met to rounding
/// level); `None` when it is singular.
pub(crate) fn gauss(mat: Vec<Vec<f64>>) -> Option<Vec<f64>> {
    let n = mat.len();
    let x = eliminate(mat.clone())?;
    let residual: Vec<Vec<f64>> = mat
        .iter()
        .map(|row| {
            let mut r = row[..n].to_vec();
            let ax: f64 = row[..n].iter().zip(&x).map(|(a, b)| a * b).sum();
            r.push(row[n] - ax);
            r
        })
        .collect();
    let dx = eliminate(residual)?;
    Some(x.iter().zip(&dx).map(|(a, b)| a + b).collect())
}

fn eliminate(mut mat: Vec<Vec<f64>>) -> Option<Vec<f64>> {
    let n = mat.len();
    let big = mat
        .iter()
        .flat_map(|r| r[..n].iter())
        .fold(0.0f64, |s, v| s.max(v.abs()));
    for col in 0..n {
        let piv = (col..n).max_by(|&a, &b| mat[a][col].abs().total_cmp(&mat[b][col].abs()))?;
        let usable = mat[piv][col].abs() > 1e-14 * big;
        if !usable {
            return None;
        }
        mat.swap(col, piv);
        for r in col + 1..n {
            let f = mat[r][col] / mat[col][col];
            if f != 0.0 {
                let pivot = mat[col].clone();
                for (m, p) in mat[r][col..].iter_mut().zip(&pivot[col..]) {
                    *m -= f * p;
                }
            }
        }
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        let s: f64 = (r + 1..n).map(|k| mat[r][k] * x[k]).sum();
        x[r] = (mat[r][n] - s) / mat[r][r];
    }
    Some(x)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Source: J. Nocedal, S. J. Wright, Numerical Optimization, 2nd ed.
    /// (2006), Example 16.4: min (x1−1)² + (x2−2.5)² under five linear rows;
    /// the solution (1.4, 1.7) is given there (exact to the printed digits,
    /// the method ends on an exact vertex → 1e-9).
    #[test]
    fn textbook_example() {
        let g = vec![vec![2.0, 0.0], vec![0.0, 2.0]];
        let c = [-2.0, -5.0];
        // −x1 + 2x2 ≤ 2, x1 + 2x2 ≤ 6, x1 − 2x2 ≤ 2, x ≥ 0.
        let rows = vec![
            vec![-1.0, 2.0],
            vec![1.0, 2.0],
            vec![1.0, -2.0],
            vec![-1.0, 0.0],
            vec![0.0, -1.0],
        ];
        let e = [2.0, 6.0, 2.0, 0.0, 0.0];
        let s = solve(&g, &c, &rows, &e, &[2.0, 0.0]).unwrap();
        assert!(s.optimal);
        assert!(
            (s.z[0] - 1.4).abs() < 1e-9 && (s.z[1] - 1.7).abs() < 1e-9,
            "{:?}",
            s.z
        );
        // The first row binds with multiplier 0.8 (stationarity: 2(x−x*) + λ a = 0).
        assert!((s.multipliers[0] - 0.8).abs() < 1e-9, "{:?}", s.multipliers);
        assert_eq!(s.multipliers[1..], [0.0; 4]);
    }

    #[test]
    fn unconstrained_minimum_inside() {
        let g = vec![vec![4.0, 1.0], vec![1.0, 3.0]];
        let c = [1.0, 2.0];
        let rows = vec![vec![1.0, 0.0]];
        let s = solve(&g, &c, &rows, &[10.0], &[0.0, 0.0]).unwrap();
        // G z = −c by hand: z = (−1/11, −7/11).
        assert!((s.z[0] + 1.0 / 11.0).abs() < 1e-12 && (s.z[1] + 7.0 / 11.0).abs() < 1e-12);
    }
}
