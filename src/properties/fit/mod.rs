//! Fitting the property models to a user's measurements: the viscosity
//! model (VFT or MYEGA with mixture-model parameters) by non-linear least
//! squares ([`viscosity`]), and the liquidus surface of each crystal phase by
//! linear least squares ([`liquidus`]). No I/O: points come in as validated
//! values, results go out as model parts with a [`FitRecord`] each (the
//! covariance of the fitted coefficients, the statistics, the data's
//! provenance), which model files store and uncertainty draws can sample.
//! See docs/science.md, "Fitting".

pub mod liquidus;
pub mod viscosity;

pub use liquidus::{fit_liquidus, LiquidusFit, LiquidusPoint, PhaseFit, SurfaceFit};
pub use viscosity::{fit_viscosity, CurveForm, ViscosityFit, ViscosityPoint, ViscosityTerms};

use crate::error::Diagnostic;
use crate::numeric::least_squares::{LeastSquaresError, Solution};

/// Where the fitted data came from.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Provenance {
    /// The data file as the user named it.
    pub data: String,
    /// SHA-256 of its bytes, hexadecimal.
    pub data_sha256: String,
    /// The date of the fit, YYYY-MM-DD.
    pub date: String,
}

/// How a model part was fitted: provenance, statistics, and the covariance
/// of the fitted coefficients in the order of `coefficients`.
#[derive(Debug, Clone, PartialEq)]
pub struct FitRecord {
    pub data: String,
    pub data_sha256: String,
    pub date: String,
    /// The method in a few words (e.g. "Levenberg–Marquardt, VFT in log10 η").
    pub method: String,
    /// Measured points used.
    pub points: usize,
    /// Distinct glasses among them, where that matters.
    pub glasses: Option<usize>,
    /// The unit of the residuals: "log10 Pa s", "K" or "log10".
    pub unit: String,
    /// √(SSR/n).
    pub rmse: f64,
    /// σ behind the covariance: √(SSR/(n − p)), or the σ the user gave.
    pub residual_sd: f64,
    /// n − p, or None when σ was given rather than estimated.
    pub dof: Option<usize>,
    pub r_squared: Option<f64>,
    /// How the prediction error was cross-validated, e.g. "leave one glass out".
    pub cv_method: Option<String>,
    /// Root-mean-square error of held-out predictions, in `unit`.
    pub cv_rmse: Option<f64>,
    /// The same as a temperature error at the measured isokoms, K (viscosity).
    pub cv_rmse_k: Option<f64>,
    /// Names of the fitted coefficients (e.g. "b_k.SiO2", "constant").
    pub coefficients: Vec<String>,
    /// Their covariance, row by row.
    pub covariance: Vec<Vec<f64>>,
}

impl FitRecord {
    /// A record of a least-squares solution (cross-validation left empty).
    pub fn of(
        solution: &Solution,
        coefficients: Vec<String>,
        provenance: &Provenance,
        method: impl Into<String>,
        unit: impl Into<String>,
    ) -> FitRecord {
        let s = &solution.statistics;
        FitRecord {
            data: provenance.data.clone(),
            data_sha256: provenance.data_sha256.clone(),
            date: provenance.date.clone(),
            method: method.into(),
            points: s.n,
            glasses: None,
            unit: unit.into(),
            rmse: s.rmse,
            residual_sd: s.sigma,
            dof: s.dof,
            r_squared: s.r_squared.is_finite().then_some(s.r_squared),
            cv_method: None,
            cv_rmse: None,
            cv_rmse_k: None,
            coefficients,
            covariance: solution.covariance.clone(),
        }
    }

    /// Standard error of the coefficient named `name`, if it was fitted.
    pub fn standard_error(&self, name: &str) -> Option<f64> {
        let i = self.coefficients.iter().position(|c| c == name)?;
        Some(self.covariance[i][i].max(0.0).sqrt())
    }

    /// Check the covariance: square, one row per coefficient, symmetric,
    /// finite, non-negative variances, and positive semi-definite (no
    /// eigenvalue below −10⁻⁹ of the largest), so a draw through a Cholesky
    /// factor is possible.
    ///
    /// # Errors
    /// The first defect, in words.
    pub fn check_covariance(&self) -> Result<(), String> {
        let n = self.coefficients.len();
        if self.covariance.len() != n || self.covariance.iter().any(|r| r.len() != n) {
            return Err(format!(
                "covariance must be a {n} × {n} matrix, one row and column per coefficient"
            ));
        }
        let c = nalgebra::DMatrix::from_fn(n, n, |i, j| self.covariance[i][j]);
        if c.iter().any(|v| !v.is_finite()) {
            return Err("covariance holds a value that is not a finite number".into());
        }
        for i in 0..n {
            if c[(i, i)] < 0.0 {
                return Err(format!(
                    "the variance of {} is negative ({})",
                    self.coefficients[i],
                    c[(i, i)]
                ));
            }
            for j in 0..i {
                let scale = (c[(i, i)] * c[(j, j)]).sqrt().max(f64::MIN_POSITIVE);
                if (c[(i, j)] - c[(j, i)]).abs() > 1e-9 * scale {
                    return Err(format!(
                        "covariance is not symmetric at ({}, {})",
                        self.coefficients[i], self.coefficients[j]
                    ));
                }
            }
        }
        if n > 0 {
            let eig = c.symmetric_eigenvalues();
            let (lo, hi) = (eig.min(), eig.max());
            if lo < -1e-9 * hi.abs().max(f64::MIN_POSITIVE) {
                return Err(format!(
                    "covariance is not positive semi-definite (eigenvalue {lo:.3e}, largest {hi:.3e})"
                ));
            }
        }
        Ok(())
    }
}

/// The joint fit of the kinetic factors: a [`FitRecord`] whose coefficients
/// are `<phase>.turnbull_alpha` (and `log10_heterogeneous_nuclei_per_m3` when
/// the nuclei density was fitted too), and the kinetic options the α hold for.
#[derive(Debug, Clone, PartialEq)]
pub struct KineticsFitRecord {
    pub record: FitRecord,
    /// The kinetic options of the fit, in words.
    pub options: String,
    /// Pre-existing nuclei of each phase per m³ in the fit (given or fitted).
    pub heterogeneous_nuclei_per_m3: f64,
}

/// The coefficient name of a phase's α in a kinetics fit.
pub fn alpha_coefficient(phase: &str) -> String {
    format!("{phase}.turnbull_alpha")
}

/// The coefficient name of the fitted nuclei density.
pub const NUCLEI_COEFFICIENT: &str = "log10_heterogeneous_nuclei_per_m3";

/// Why a fit was refused or failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    #[error(transparent)]
    LeastSquares(#[from] LeastSquaresError),
    #[error("{}", problems.join("\n"))]
    Rows {
        /// One line per bad row ("row 7: ...").
        problems: Vec<String>,
        hint: String,
    },
    #[error("{0}")]
    Spec(String),
    #[error("{message}")]
    Hinted { message: String, hint: String },
}

impl Diagnostic for FitError {
    fn hint(&self) -> Option<String> {
        match self {
            FitError::LeastSquares(e) => e.hint(),
            FitError::Rows { hint, .. } => Some(hint.clone()),
            FitError::Spec(_) => None,
            FitError::Hinted { hint, .. } => Some(hint.clone()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn record(cov: Vec<Vec<f64>>) -> FitRecord {
        FitRecord {
            data: String::new(),
            data_sha256: String::new(),
            date: String::new(),
            method: String::new(),
            points: 3,
            glasses: None,
            unit: "K".into(),
            rmse: 1.0,
            residual_sd: 1.0,
            dof: Some(1),
            r_squared: None,
            cv_method: None,
            cv_rmse: None,
            cv_rmse_k: None,
            coefficients: vec!["SiO2".into(), "Na2O".into()],
            covariance: cov,
        }
    }

    #[test]
    fn covariance_checks_bite() {
        assert!(record(vec![vec![4.0, 1.0], vec![1.0, 1.0]])
            .check_covariance()
            .is_ok());
        assert_eq!(
            record(vec![vec![4.0, 1.0], vec![1.0, 1.0]]).standard_error("SiO2"),
            Some(2.0)
        );
        let e = record(vec![vec![1.0, 2.0], vec![2.0, 1.0]])
            .check_covariance()
            .unwrap_err();
        assert!(e.contains("positive semi-definite"), "{e}");
        let e = record(vec![vec![1.0, 0.5], vec![0.2, 1.0]])
            .check_covariance()
            .unwrap_err();
        assert!(e.contains("symmetric"), "{e}");
        let e = record(vec![vec![1.0]]).check_covariance().unwrap_err();
        assert!(e.contains("2 × 2"), "{e}");
    }
}
