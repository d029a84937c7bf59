//! Least squares with the statistics a fit is judged by: linear fits by the
//! singular value decomposition (a rank-deficient design is reported, naming
//! the coefficients the data cannot tell apart, never solved by a silent
//! pseudo-inverse), non-linear fits by Levenberg–Marquardt, and for both the
//! covariance of the coefficients, standard errors, Student-t intervals, the
//! leverage of each point, RMSE and R². See docs/science.md, "Fitting".
//!
//! The covariance is σ² (JᵀJ)⁻¹ with J the design (or the Jacobian at the
//! solution) and σ² either estimated from the residuals, SSR/(n − p), or
//! given as a known measurement variance.
//!
//! References
//! - K. Levenberg, "A method for the solution of certain non-linear problems
//!   in least squares", Q. Appl. Math. 2 (1944) 164–168, doi:10.1090/qam/10666.
//! - D. W. Marquardt, "An algorithm for least-squares estimation of nonlinear
//!   parameters", J. SIAM 11 (1963) 431–441, doi:10.1137/0111030.
//! - K. Madsen, H. B. Nielsen, O. Tingleff, "Methods for non-linear least
//!   squares problems", 2nd ed., IMM, Technical University of Denmark (2004),
//!   Algorithm 3.16 (the damping update used here).
//! - G. H. Golub, C. F. Van Loan, Matrix Computations, 4th ed., Johns Hopkins
//!   (2013), §5.5 (least squares by the SVD, rank).
//! - D. A. Belsley, E. Kuh, R. E. Welsch, Regression Diagnostics, Wiley (1980)
//!   (leverage h_ii and the leave-one-out residual e_i/(1 − h_ii)).

use nalgebra::{DMatrix, DVector};
use statrs::distribution::{ContinuousCDF, StudentsT};

/// A singular value below this fraction of the largest (columns scaled to
/// unit length first) counts as zero: the design is rank deficient. 1e-10
/// leaves five decades above double-precision round-off on designs of a few
/// hundred rows, and flags combinations the data pin down to one part in 10¹⁰
/// of the best-determined one.
pub const RANK_TOLERANCE: f64 = 1e-10;

/// Why a least-squares fit was refused or failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LeastSquaresError {
    #[error("{points} points cannot fit {coefficients} coefficients ({names}): at least {needed} are needed")]
    TooFewPoints {
        points: usize,
        coefficients: usize,
        needed: usize,
        names: String,
    },
    #[error("the data cannot tell these coefficients apart: {}", involved.join(", "))]
    RankDeficient {
        /// The coefficients in the combination the data do not constrain.
        involved: Vec<String>,
        /// The combination, as "coefficient × weight" terms.
        combination: String,
    },
    #[error("a value is not a finite number: {0}")]
    NotFinite(String),
    #[error("the model cannot be evaluated at the starting point")]
    BadStart,
    #[error("Levenberg–Marquardt did not converge in {iterations} iterations (sum of squares {ssr:.6e})")]
    NoConvergence { iterations: usize, ssr: f64 },
}

impl crate::error::Diagnostic for LeastSquaresError {
    fn hint(&self) -> Option<String> {
        match self {
            LeastSquaresError::TooFewPoints { .. } => Some(
                "add measurements or fit fewer coefficients (fewer oxides, no pair terms, a shift of the base surface)".into(),
            ),
            LeastSquaresError::RankDeficient { combination, .. } => Some(format!(
                "along {combination} the data carry no information: vary those oxides independently in the data, or fit fewer terms"
            )),
            _ => None,
        }
    }
}

/// How the measurement noise is known.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Noise {
    /// Estimated from the residuals: σ² = SSR/(n − p) (needs n > p).
    Estimated,
    /// A known standard deviation of every measurement, in the units of y.
    Known(f64),
}

/// Goodness of fit.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Statistics {
    /// Points.
    pub n: usize,
    /// Fitted coefficients.
    pub p: usize,
    /// Sum of squared residuals.
    pub ssr: f64,
    /// √(SSR/n).
    pub rmse: f64,
    /// σ used for the covariance: √(SSR/(n − p)), or the known σ.
    pub sigma: f64,
    /// 1 − SSR/Σ(y − ȳ)² (NaN when every y is the same).
    pub r_squared: f64,
    /// Degrees of freedom of σ: n − p, or None when σ was given.
    pub dof: Option<usize>,
}

/// A fitted set of coefficients with its uncertainty.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    pub coefficients: Vec<f64>,
    /// σ² (JᵀJ)⁻¹, row by row.
    pub covariance: Vec<Vec<f64>>,
    /// Model minus data, per point.
    pub residuals: Vec<f64>,
    /// Leverage h_ii of each point (diagonal of the hat matrix J (JᵀJ)⁻¹ Jᵀ).
    pub leverage: Vec<f64>,
    pub statistics: Statistics,
    /// Accepted Levenberg–Marquardt steps (0 for a linear fit).
    pub iterations: usize,
}

impl Solution {
    /// Standard error of coefficient `i`.
    pub fn standard_error(&self, i: usize) -> f64 {
        self.covariance[i][i].max(0.0).sqrt()
    }

    /// The two-sided quantile that multiplies a standard error for a
    /// `level` interval (0.95 for 95 %): Student t with n − p degrees of
    /// freedom when σ was estimated, the normal when it was known.
    pub fn interval_factor(&self, level: f64) -> f64 {
        interval_factor(level, self.statistics.dof)
    }

    /// The `level` confidence interval of coefficient `i`.
    pub fn interval(&self, i: usize, level: f64) -> (f64, f64) {
        let h = self.interval_factor(level) * self.standard_error(i);
        (self.coefficients[i] - h, self.coefficients[i] + h)
    }

    /// The leave-one-out residual of point i, e_i/(1 − h_ii) (exact for a
    /// linear fit; None where the point alone fixes a coefficient, h_ii = 1).
    pub fn loo_residual(&self, i: usize) -> Option<f64> {
        let h = self.leverage[i];
        (h < 1.0 - 1e-9).then(|| self.residuals[i] / (1.0 - h))
    }
}

/// The two-sided quantile for a `level` interval: Student t with `dof`
/// degrees of freedom, or the standard normal when `dof` is None.
pub fn interval_factor(level: f64, dof: Option<usize>) -> f64 {
    let p = 0.5 + level / 2.0;
    match dof {
        Some(d) if d > 0 => StudentsT::new(0.0, 1.0, d as f64)
            .map(|t| t.inverse_cdf(p))
            .unwrap_or(f64::NAN),
        Some(_) => f64::NAN,
        None => statrs::distribution::Normal::standard().inverse_cdf(p),
    }
}

fn check_finite(what: &str, v: &[f64]) -> Result<(), LeastSquaresError> {
    match v.iter().position(|x| !x.is_finite()) {
        Some(i) => Err(LeastSquaresError::NotFinite(format!(
            "{what}[{i}] = {}",
            v[i]
        ))),
        None => Ok(()),
    }
}

fn needed(p: usize, noise: Noise) -> usize {
    match noise {
        Noise::Estimated => p + 1,
        Noise::Known(_) => p,
    }
}

/// The SVD of a design with unit-length columns, checked for rank.
struct Decomposed {
    /// n × p, orthonormal columns.
    u: DMatrix<f64>,
    /// Singular values.
    s: DVector<f64>,
    /// p × p.
    v: DMatrix<f64>,
    /// Column lengths of the original design.
    scale: Vec<f64>,
}

fn decompose(j: &DMatrix<f64>, names: &[String]) -> Result<Decomposed, LeastSquaresError> {
    let p = j.ncols();
    let scale: Vec<f64> = (0..p).map(|k| j.column(k).norm()).collect();
    if let Some(k) = scale.iter().position(|c| *c == 0.0) {
        return Err(LeastSquaresError::RankDeficient {
            involved: vec![names[k].clone()],
            combination: format!("{} (every point gives it zero weight)", names[k]),
        });
    }
    let mut js = j.clone();
    for (k, c) in scale.iter().enumerate() {
        js.column_mut(k).scale_mut(1.0 / c);
    }
    let svd = js.svd(true, true);
    let u = svd.u.expect("U was asked for");
    let v = svd.v_t.expect("Vᵀ was asked for").transpose();
    let s = svd.singular_values;
    let smax = s.max();
    let (kmin, smin) = s.argmin();
    // Written so that NaN counts as deficient too.
    if smin.partial_cmp(&(RANK_TOLERANCE * smax)) != Some(std::cmp::Ordering::Greater) {
        let null = v.column(kmin);
        let big = null.amax();
        let mut involved = Vec::new();
        let mut terms = Vec::new();
        for k in 0..p {
            // Weight in the original units: a unit move along the scaled null
            // vector is null[k]/scale[k] in coefficient k.
            if null[k].abs() >= 0.05 * big {
                involved.push(names[k].clone());
                terms.push(format!("{:+.3}·{}", null[k] / big, names[k]));
            }
        }
        return Err(LeastSquaresError::RankDeficient {
            involved,
            combination: terms.join(" "),
        });
    }
    Ok(Decomposed { u, s, v, scale })
}

impl Decomposed {
    /// (JᵀJ)⁻¹ in the original units.
    fn inverse_normal(&self) -> DMatrix<f64> {
        let p = self.v.ncols();
        let mut w = self.v.clone();
        for k in 0..p {
            w.column_mut(k).scale_mut(1.0 / self.s[k]);
        }
        let mut inv = &w * w.transpose();
        for a in 0..p {
            for b in 0..p {
                inv[(a, b)] /= self.scale[a] * self.scale[b];
            }
        }
        inv
    }

    /// The least-squares coefficients for a right-hand side.
    fn solve(&self, y: &DVector<f64>) -> DVector<f64> {
        let uty = self.u.transpose() * y;
        let mut z = uty;
        for k in 0..z.len() {
            z[k] /= self.s[k];
        }
        let mut beta = &self.v * z;
        for k in 0..beta.len() {
            beta[k] /= self.scale[k];
        }
        beta
    }

    fn leverage(&self) -> Vec<f64> {
        (0..self.u.nrows())
            .map(|i| self.u.row(i).norm_squared())
            .collect()
    }
}

fn statistics(y: &[f64], residuals: &[f64], p: usize, noise: Noise) -> Statistics {
    let n = y.len();
    let ssr: f64 = residuals.iter().map(|r| r * r).sum();
    let mean = y.iter().sum::<f64>() / n as f64;
    let sst: f64 = y.iter().map(|v| (v - mean) * (v - mean)).sum();
    let (sigma, dof) = match noise {
        Noise::Estimated => ((ssr / (n - p) as f64).sqrt(), Some(n - p)),
        Noise::Known(s) => (s, None),
    };
    Statistics {
        n,
        p,
        ssr,
        rmse: (ssr / n as f64).sqrt(),
        sigma,
        r_squared: if sst > 0.0 { 1.0 - ssr / sst } else { f64::NAN },
        dof,
    }
}

fn rows(m: &DMatrix<f64>) -> Vec<Vec<f64>> {
    (0..m.nrows())
        .map(|i| m.row(i).iter().copied().collect())
        .collect()
}

fn check_sizes(
    n: usize,
    p: usize,
    names: &[String],
    noise: Noise,
) -> Result<(), LeastSquaresError> {
    assert_eq!(names.len(), p, "one name per coefficient");
    if n < needed(p, noise) {
        return Err(LeastSquaresError::TooFewPoints {
            points: n,
            coefficients: p,
            needed: needed(p, noise),
            names: names.join(", "),
        });
    }
    if let Noise::Known(s) = noise {
        if !(s > 0.0 && s.is_finite()) {
            return Err(LeastSquaresError::NotFinite(format!(
                "known standard deviation {s}"
            )));
        }
    }
    Ok(())
}

/// Linear least squares: the coefficients β minimising ‖Xβ − y‖², one name
/// per column of `x` (for messages).
///
/// # Errors
/// Fewer points than needed (p + 1 with an estimated σ, p with a known one),
/// a non-finite value, or a rank-deficient design.
pub fn fit_linear(
    x: &DMatrix<f64>,
    y: &[f64],
    names: &[String],
    noise: Noise,
) -> Result<Solution, LeastSquaresError> {
    let (n, p) = x.shape();
    assert_eq!(n, y.len(), "one observation per design row");
    check_sizes(n, p, names, noise)?;
    check_finite("y", y)?;
    check_finite("design", x.as_slice())?;
    let d = decompose(x, names)?;
    let yv = DVector::from_column_slice(y);
    let beta = d.solve(&yv);
    let residuals: Vec<f64> = (x * &beta - &yv).iter().copied().collect();
    let statistics = statistics(y, &residuals, p, noise);
    let covariance = d.inverse_normal() * (statistics.sigma * statistics.sigma);
    Ok(Solution {
        coefficients: beta.iter().copied().collect(),
        covariance: rows(&covariance),
        residuals,
        leverage: d.leverage(),
        statistics,
        iterations: 0,
    })
}

/// A model whose coefficients are fitted by non-linear least squares.
pub trait Model {
    /// The prediction for every point, or None where the coefficients lie
    /// outside the model's domain (e.g. T ≤ C in VFT); the solver then
    /// shortens its step.
    fn predict(&self, theta: &[f64]) -> Option<Vec<f64>>;

    /// ∂prediction_i/∂θ_k (n × p). The default takes central differences
    /// with a step of 10⁻⁶ of each coefficient (10⁻⁶ absolute near zero).
    fn jacobian(&self, theta: &[f64]) -> Option<DMatrix<f64>> {
        let f0 = self.predict(theta)?;
        let mut j = DMatrix::zeros(f0.len(), theta.len());
        for k in 0..theta.len() {
            let h = 1e-6 * theta[k].abs().max(1.0);
            let mut up = theta.to_vec();
            let mut down = theta.to_vec();
            up[k] += h;
            down[k] -= h;
            let (fu, fd) = (self.predict(&up)?, self.predict(&down)?);
            for i in 0..f0.len() {
                j[(i, k)] = (fu[i] - fd[i]) / (2.0 * h);
            }
        }
        Some(j)
    }
}

/// When Levenberg–Marquardt stops.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LmSettings {
    pub max_iterations: usize,
    /// Stop when every column of J is this close to orthogonal to the
    /// residuals: |Jₖᵀr| ≤ tol ‖Jₖ‖ ‖r‖ (MINPACK's gtol).
    pub orthogonality: f64,
    /// Stop when a step changes no coefficient by more than this fraction.
    pub relative_step: f64,
}

impl Default for LmSettings {
    fn default() -> Self {
        LmSettings {
            max_iterations: 500,
            orthogonality: 1e-10,
            relative_step: 1e-12,
        }
    }
}

fn ssr_of(f: &[f64], y: &[f64]) -> f64 {
    f.iter().zip(y).map(|(a, b)| (a - b) * (a - b)).sum()
}

/// Non-linear least squares by Levenberg–Marquardt with Marquardt's
/// diagonal scaling (so coefficients of very different sizes, such as A ≈ −3
/// and B ≈ 5000 K in VFT, are damped alike) and the damping update of Madsen,
/// Nielsen & Tingleff (2004). The covariance is taken at the solution from
/// the Jacobian, with the same rank check as [`fit_linear`].
///
/// # Errors
/// Too few points, the model undefined at `start`, no convergence, or a
/// rank-deficient Jacobian at the solution.
pub fn fit_nonlinear(
    model: &dyn Model,
    y: &[f64],
    start: &[f64],
    names: &[String],
    noise: Noise,
    settings: LmSettings,
) -> Result<Solution, LeastSquaresError> {
    let (n, p) = (y.len(), start.len());
    check_sizes(n, p, names, noise)?;
    check_finite("y", y)?;
    check_finite("start", start)?;
    let mut theta = start.to_vec();
    let mut f = model.predict(&theta).ok_or(LeastSquaresError::BadStart)?;
    let mut j = model.jacobian(&theta).ok_or(LeastSquaresError::BadStart)?;
    if f.iter().chain(j.as_slice()).any(|v| !v.is_finite()) {
        return Err(LeastSquaresError::BadStart);
    }
    let yv = DVector::from_column_slice(y);
    let mut cost = ssr_of(&f, y);
    let normal = |j: &DMatrix<f64>, f: &[f64]| {
        let r = DVector::from_column_slice(f) - &yv;
        (j.transpose() * j, j.transpose() * r)
    };
    let (mut a, mut g) = normal(&j, &f);
    let diag_floor = |a: &DMatrix<f64>| {
        let m = (0..p).map(|k| a[(k, k)]).fold(0.0, f64::max);
        (0..p)
            .map(|k| a[(k, k)].max(1e-12 * m).max(f64::MIN_POSITIVE))
            .collect::<Vec<f64>>()
    };
    let mut dscale = diag_floor(&a);
    let converged = |g: &DVector<f64>, a: &DMatrix<f64>, cost: f64, tol: f64| {
        cost == 0.0
            || (0..p).all(|k| g[k].abs() <= tol * (a[(k, k)] * cost).sqrt() || a[(k, k)] == 0.0)
    };
    let mut mu = 1e-3;
    let mut nu = 2.0;
    let mut iterations = 0;
    let mut done = converged(&g, &a, cost, settings.orthogonality);
    let mut tries = 0;
    while !done {
        tries += 1;
        if tries > settings.max_iterations * 10 || iterations >= settings.max_iterations {
            return Err(LeastSquaresError::NoConvergence {
                iterations,
                ssr: cost,
            });
        }
        let mut m = a.clone();
        for k in 0..p {
            m[(k, k)] += mu * dscale[k];
        }
        let Some(h) = m.clone().cholesky().map(|c| c.solve(&(-&g))) else {
            mu *= nu;
            nu *= 2.0;
            continue;
        };
        let small = (0..p).all(|k| {
            h[k].abs() <= settings.relative_step * (theta[k].abs() + settings.relative_step)
        });
        if small {
            break;
        }
        let trial: Vec<f64> = theta.iter().zip(h.iter()).map(|(t, d)| t + d).collect();
        let fnew = model
            .predict(&trial)
            .filter(|v| v.iter().all(|x| x.is_finite()));
        // Gain ratio: actual over predicted decrease of the sum of squares.
        let predicted: f64 = (0..p).map(|k| h[k] * (mu * dscale[k] * h[k] - g[k])).sum();
        let accepted = fnew.and_then(|fnew| {
            let c = ssr_of(&fnew, y);
            let rho = (cost - c) / predicted.max(f64::MIN_POSITIVE);
            (c < cost && rho > 0.0).then_some((fnew, c, rho))
        });
        match accepted {
            Some((fnew, c, rho)) => {
                let Some(jn) = model
                    .jacobian(&trial)
                    .filter(|m| m.iter().all(|x| x.is_finite()))
                else {
                    mu *= nu;
                    nu *= 2.0;
                    continue;
                };
                iterations += 1;
                let relative_cost = (cost - c) / cost.max(f64::MIN_POSITIVE);
                theta = trial;
                f = fnew;
                j = jn;
                cost = c;
                (a, g) = normal(&j, &f);
                let d = diag_floor(&a);
                for k in 0..p {
                    dscale[k] = dscale[k].max(d[k]);
                }
                mu *= (1.0 / 3.0f64).max(1.0 - (2.0 * rho - 1.0).powi(3));
                nu = 2.0;
                done = converged(&g, &a, cost, settings.orthogonality) || relative_cost < 1e-15;
            }
            None => {
                mu *= nu;
                nu *= 2.0;
                if !mu.is_finite() {
                    break;
                }
            }
        }
    }
    let mut s = solution_at(&theta, &f, &j, y, names, noise)?;
    s.iterations = iterations;
    Ok(s)
}

/// The statistics and covariance of coefficients found by any means (e.g.
/// a one-dimensional search), from the predictions `f` and the Jacobian `j`
/// at `theta`.
///
/// # Errors
/// Too few points for an estimated σ, or a rank-deficient Jacobian.
pub fn solution_at(
    theta: &[f64],
    f: &[f64],
    j: &DMatrix<f64>,
    y: &[f64],
    names: &[String],
    noise: Noise,
) -> Result<Solution, LeastSquaresError> {
    let p = theta.len();
    check_sizes(y.len(), p, names, noise)?;
    let d = decompose(j, names)?;
    let residuals: Vec<f64> = f.iter().zip(y).map(|(a, b)| a - b).collect();
    let statistics = statistics(y, &residuals, p, noise);
    let covariance = d.inverse_normal() * (statistics.sigma * statistics.sigma);
    Ok(Solution {
        coefficients: theta.to_vec(),
        covariance: rows(&covariance),
        residuals,
        leverage: d.leverage(),
        statistics,
        iterations: 0,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(k: usize) -> Vec<String> {
        (0..k).map(|i| format!("b{i}")).collect()
    }

    #[test]
    fn straight_line_by_hand() {
        // Source: worked by hand. y = 1, 3, 4, 6 at x = 0, 1, 2, 3:
        // x̄ = 1.5, ȳ = 3.5, Sxx = 5, Sxy = 8 → slope 1.6, intercept 1.1;
        // data − model = −0.1, 0.3, −0.3, 0.1, SSR = 0.2, s² = 0.1,
        // se(slope) = √(0.1/5) = 0.1414214, se(intercept) = √(0.1 (1/4 + 2.25/5))
        // = √0.07 = 0.2645751, SST = 13, R² = 1 − 0.2/13.
        let x = DMatrix::from_row_slice(4, 2, &[1.0, 0.0, 1.0, 1.0, 1.0, 2.0, 1.0, 3.0]);
        let s = fit_linear(&x, &[1.0, 3.0, 4.0, 6.0], &names(2), Noise::Estimated).unwrap();
        assert!((s.coefficients[0] - 1.1).abs() < 1e-12);
        assert!((s.coefficients[1] - 1.6).abs() < 1e-12);
        assert!((s.statistics.ssr - 0.2).abs() < 1e-12);
        assert!((s.standard_error(1) - 0.02f64.sqrt()).abs() < 1e-12);
        assert!((s.standard_error(0) - 0.07f64.sqrt()).abs() < 1e-12);
        assert!((s.statistics.r_squared - (1.0 - 0.2 / 13.0)).abs() < 1e-12);
        // t(0.975, 2) = 4.302653 (printed tables, e.g. NIST/SEMATECH e-Handbook 1.3.6.7.2).
        assert!((s.interval_factor(0.95) - 4.302_653).abs() < 1e-6);
        // Leverage sums to p.
        assert!((s.leverage.iter().sum::<f64>() - 2.0).abs() < 1e-12);
    }

    #[test]
    fn loo_residuals_match_refitting() {
        // The closed form e_i/(1 − h_ii) against dropping each point and refitting.
        let xs = [0.0, 0.7, 1.1, 2.0, 2.9, 3.3, 4.8];
        let ys = [0.2, 1.9, 2.1, 4.4, 5.5, 7.1, 9.0];
        let design = |idx: &[usize]| {
            DMatrix::from_fn(idx.len(), 2, |r, c| if c == 0 { 1.0 } else { xs[idx[r]] })
        };
        let all: Vec<usize> = (0..xs.len()).collect();
        let s = fit_linear(&design(&all), &ys, &names(2), Noise::Estimated).unwrap();
        for i in 0..xs.len() {
            let rest: Vec<usize> = all.iter().copied().filter(|&k| k != i).collect();
            let y: Vec<f64> = rest.iter().map(|&k| ys[k]).collect();
            let r = fit_linear(&design(&rest), &y, &names(2), Noise::Estimated).unwrap();
            let pred = r.coefficients[0] + r.coefficients[1] * xs[i];
            assert!((s.loo_residual(i).unwrap() - (pred - ys[i])).abs() < 1e-10);
        }
    }

    #[test]
    fn a_rank_deficient_design_names_the_coefficients() {
        // Columns 0 and 1 always sum to column 2: the data cannot separate them.
        let x = DMatrix::from_row_slice(
            4,
            3,
            &[0.2, 0.8, 1.0, 0.5, 0.5, 1.0, 0.3, 0.7, 1.0, 0.9, 0.1, 1.0],
        );
        let err = fit_linear(&x, &[1.0, 2.0, 3.0, 4.0], &names(3), Noise::Estimated).unwrap_err();
        match err {
            LeastSquaresError::RankDeficient { involved, .. } => {
                assert_eq!(involved, vec!["b0", "b1", "b2"])
            }
            e => panic!("{e}"),
        }
        let x = DMatrix::from_row_slice(3, 2, &[1.0, 0.0, 1.0, 0.0, 1.0, 0.0]);
        let err = fit_linear(&x, &[1.0, 2.0, 3.0], &names(2), Noise::Estimated).unwrap_err();
        assert!(err.to_string().contains("b1"), "{err}");
    }

    #[test]
    fn too_few_points_is_an_error() {
        let x = DMatrix::from_row_slice(2, 2, &[1.0, 0.0, 1.0, 1.0]);
        let e = fit_linear(&x, &[1.0, 2.0], &names(2), Noise::Estimated).unwrap_err();
        assert!(matches!(
            e,
            LeastSquaresError::TooFewPoints { needed: 3, .. }
        ));
        // With a known σ, two points fix two coefficients.
        let s = fit_linear(&x, &[1.0, 2.0], &names(2), Noise::Known(0.1)).unwrap();
        assert!((s.standard_error(0) - 0.1).abs() < 1e-12);
        assert_eq!(s.statistics.dof, None);
    }

    struct Exponential {
        t: Vec<f64>,
    }

    impl Model for Exponential {
        fn predict(&self, th: &[f64]) -> Option<Vec<f64>> {
            Some(self.t.iter().map(|t| th[0] * (-th[1] * t).exp()).collect())
        }
    }

    #[test]
    fn levenberg_marquardt_recovers_an_exact_curve_from_a_poor_start() {
        let t: Vec<f64> = (0..12).map(|k| k as f64 * 0.5).collect();
        let y: Vec<f64> = t.iter().map(|t| 3.0 * (-0.7 * t).exp()).collect();
        let m = Exponential { t };
        let s = fit_nonlinear(
            &m,
            &y,
            &[1.0, 3.0],
            &names(2),
            Noise::Known(1.0),
            LmSettings::default(),
        )
        .unwrap();
        assert!(
            (s.coefficients[0] - 3.0).abs() < 1e-9,
            "{:?}",
            s.coefficients
        );
        assert!(
            (s.coefficients[1] - 0.7).abs() < 1e-9,
            "{:?}",
            s.coefficients
        );
    }

    #[test]
    fn nonlinear_fit_of_a_linear_model_equals_the_linear_fit() {
        struct Line(Vec<f64>);
        impl Model for Line {
            fn predict(&self, th: &[f64]) -> Option<Vec<f64>> {
                Some(self.0.iter().map(|x| th[0] + th[1] * x).collect())
            }
        }
        let xs = vec![0.0, 1.0, 2.0, 3.0];
        let y = [1.0, 3.0, 4.0, 6.0];
        let s = fit_nonlinear(
            &Line(xs),
            &y,
            &[0.0, 0.0],
            &names(2),
            Noise::Estimated,
            LmSettings::default(),
        )
        .unwrap();
        assert!((s.coefficients[1] - 1.6).abs() < 1e-9);
        assert!((s.standard_error(1) - 0.02f64.sqrt()).abs() < 1e-9);
    }
}
