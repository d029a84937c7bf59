//! Liquidus surfaces fitted to measured liquidus temperatures (DSC or
//! gradient furnace), each row naming the primary phase that crystallised.
//! Each phase with rows gets, by linear least squares, either a full surface
//! T_L = Σ a_i x_i over the oxides its rows contain (mole fractions; the
//! constant is implied, since Σ x_i = 1), or a shift of the base set's surface
//! by one constant. A measured liquidus at or above the phase's melting point
//! is refused, and the largest value the fitted surface reaches over its
//! domain is reported against the melting point (the model clips there).
//!
//! Held-out check: each row in turn is left out, its phase's surface refitted,
//! and the row's primary phase predicted as the phase with the highest
//! liquidus there: how often the fitted set names the right primary phase
//! for a glass it has not seen. See docs/science.md, "Fitting".

use super::{FitError, FitRecord, Provenance};
use crate::composition::{Oxide, N_OXIDES};
use crate::numeric::least_squares::{fit_linear, LeastSquaresError, Noise, Solution};
use crate::properties::liquidus::LiquidusSurface;
use crate::properties::mixture::{Domain, FractionBasis, MixtureModel, Term};
use crate::properties::model_set::ModelSet;
use crate::units::Kelvin;
use nalgebra::DMatrix;

/// One measured liquidus.
#[derive(Debug, Clone, PartialEq)]
pub struct LiquidusPoint {
    /// Data row (1-based), for messages.
    pub row: usize,
    /// Mole fractions.
    pub x: [f64; N_OXIDES],
    pub liquidus: Kelvin,
    /// Index of the primary phase in the model set.
    pub phase: usize,
}

/// What is fitted for a phase.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SurfaceFit {
    /// T_L = Σ a_i x_i over the oxides its rows contain.
    Full,
    /// The base surface plus one fitted constant.
    Shift,
}

/// One phase's fit.
#[derive(Debug, Clone, PartialEq)]
pub struct PhaseFit {
    /// Index of the phase in the model set.
    pub phase: usize,
    pub form: SurfaceFit,
    /// Indices into the points.
    pub points: Vec<usize>,
    pub terms: Vec<Term>,
    pub solution: Solution,
    /// Root-mean-square of the leave-one-out residuals, K (None if a row
    /// alone fixes a coefficient).
    pub loo_rmse: Option<f64>,
    /// The highest value of the fitted surface over its domain, K, where it
    /// can be found exactly (a linear surface); with the composition, mol%.
    pub max_over_domain: Option<(f64, [f64; N_OXIDES])>,
}

/// The liquidus fit of a model set.
#[derive(Debug, Clone, PartialEq)]
pub struct LiquidusFit {
    /// The base set with the fitted surfaces, domains and fit records.
    pub set: ModelSet,
    pub phases: Vec<PhaseFit>,
    /// Per point: fitted liquidus of its phase, and left out, K.
    pub fitted: Vec<f64>,
    pub loo_predicted: Vec<Option<f64>>,
    /// Per point: the primary phase the fitted set names (all rows in), and
    /// with the row left out.
    pub primary_in_sample: Vec<usize>,
    pub primary_held_out: Vec<Option<usize>>,
    pub warnings: Vec<String>,
}

impl LiquidusFit {
    /// Held-out rows whose primary phase the refitted set named right, and
    /// rows that could be held out.
    pub fn held_out_hits(&self, points: &[LiquidusPoint]) -> (usize, usize) {
        let tried: Vec<(usize, usize)> = self
            .primary_held_out
            .iter()
            .zip(points)
            .filter_map(|(p, pt)| p.map(|p| (p, pt.phase)))
            .collect();
        (tried.iter().filter(|(a, b)| a == b).count(), tried.len())
    }
}

fn phi(t: Term, x: &[f64; N_OXIDES]) -> f64 {
    match t {
        Term::Constant => 1.0,
        Term::Linear(o) => x[o.index()],
        Term::Pair(a, b) => x[a.index()] * x[b.index()],
    }
}

/// Fit the phase's surface to the given points; returns the terms and solution.
fn fit_phase(
    set: &ModelSet,
    phase: usize,
    form: SurfaceFit,
    pts: &[&LiquidusPoint],
) -> Result<(Vec<Term>, Solution), FitError> {
    let p = &set.phases[phase];
    match form {
        SurfaceFit::Full => {
            let terms: Vec<Term> = Oxide::ALL
                .into_iter()
                .filter(|o| pts.iter().any(|q| q.x[o.index()] > 0.0))
                .map(Term::Linear)
                .collect();
            let x = DMatrix::from_fn(pts.len(), terms.len(), |i, j| phi(terms[j], &pts[i].x));
            let y: Vec<f64> = pts.iter().map(|q| q.liquidus.0).collect();
            let names: Vec<String> = terms.iter().map(|t| format!("{}: {t}", p.name)).collect();
            match fit_linear(&x, &y, &names, Noise::Estimated) {
                Ok(s) => Ok((terms, s)),
                Err(LeastSquaresError::TooFewPoints { points, needed, .. }) => Err(FitError::Hinted {
                    message: format!(
                        "{} has {points} rows, too few for its surface's {} coefficients (one per oxide its rows contain: {}): at least {needed} rows are needed",
                        p.name,
                        terms.len(),
                        terms.iter().map(|t| t.to_string()).collect::<Vec<_>>().join(", ")
                    ),
                    hint: format!(
                        "add rows of {0}, or fit only a shift of the base surface with --shift \"{0}\"",
                        p.name
                    ),
                }),
                Err(e) => Err(e.into()),
            }
        }
        SurfaceFit::Shift => {
            let x = DMatrix::from_element(pts.len(), 1, 1.0);
            let y: Vec<f64> = pts
                .iter()
                .map(|q| {
                    q.liquidus.0
                        - p.liquidus
                            .at(&q.x, p.melting_point.0, p.enthalpy_of_fusion_j_per_mol)
                            .surface_k
                })
                .collect();
            let s = fit_linear(&x, &y, &[format!("{}: shift", p.name)], Noise::Estimated)?;
            Ok((vec![Term::Constant], s))
        }
    }
}

/// The surface a fit gives.
fn surface(
    set: &ModelSet,
    phase: usize,
    form: SurfaceFit,
    terms: &[Term],
    beta: &[f64],
) -> LiquidusSurface {
    match form {
        SurfaceFit::Full => {
            let mut m = MixtureModel::constant(0.0);
            m.basis = FractionBasis::MoleFraction;
            for (t, b) in terms.iter().zip(beta) {
                m.set_coefficient(*t, *b);
            }
            LiquidusSurface::Mixture(m)
        }
        SurfaceFit::Shift => match &set.phases[phase].liquidus {
            LiquidusSurface::Mixture(m) => {
                let mut m = m.clone();
                m.constant += beta[0];
                LiquidusSurface::Mixture(m)
            }
            other => other.clone(),
        },
    }
}

/// The maximum of a linear mixture model over a domain box intersected with
/// the simplex (Σ mol% = 100): start every oxide at its minimum and give the
/// rest of the 100 mol% to the oxides with the largest coefficients first
/// (a continuous knapsack, whose greedy solution is optimal). None for a
/// surface with pair or product terms, or an empty domain.
pub fn linear_max_over_domain(m: &MixtureModel, d: &Domain) -> Option<(f64, [f64; N_OXIDES])> {
    if !m.pairs.is_empty() || !m.products.is_empty() {
        return None;
    }
    let mut pct = d.min;
    let mut rest = 100.0 - pct.iter().sum::<f64>();
    if rest < -1e-9 || d.max.iter().sum::<f64>() < 100.0 - 1e-9 {
        return None;
    }
    let mut order: Vec<usize> = (0..N_OXIDES).collect();
    order.sort_by(|a, b| m.linear[*b].total_cmp(&m.linear[*a]));
    for i in order {
        let add = (d.max[i] - d.min[i]).min(rest).max(0.0);
        pct[i] += add;
        rest -= add;
    }
    let x: [f64; N_OXIDES] = std::array::from_fn(|i| pct[i] / 100.0);
    Some((m.eval(&x), pct))
}

/// Fit the liquidus surfaces of the phases the points name. `shift` lists
/// phases fitted as a shift of the base surface; the others get a full
/// surface. The base set's other phases are kept as they are.
///
/// # Errors
/// A measured liquidus at or above its phase's melting point (every such row
/// named), a shift asked for a surface that is not a mixture model, too few
/// rows for a phase's coefficients, or a design its rows cannot resolve.
pub fn fit_liquidus(
    base: &ModelSet,
    points: &[LiquidusPoint],
    shift: &[usize],
    provenance: &Provenance,
) -> Result<LiquidusFit, FitError> {
    if points.is_empty() {
        return Err(FitError::Spec("the data hold no liquidus to fit".into()));
    }
    let mut problems = Vec::new();
    for q in points {
        let p = &base.phases[q.phase];
        if !(q.liquidus.0 > 0.0 && q.liquidus.0.is_finite()) {
            problems.push(format!(
                "row {}: liquidus {} K must be a positive number",
                q.row, q.liquidus.0
            ));
        } else if q.liquidus.0 >= p.melting_point.0 {
            problems.push(format!(
                "row {}: liquidus {:.1} K ({:.1} °C) is at or above the melting point of {} ({:.1} K): {} cannot be the primary phase there",
                q.row,
                q.liquidus.0,
                q.liquidus.to_celsius().0,
                p.name,
                p.melting_point.0,
                p.name
            ));
        }
    }
    if !problems.is_empty() {
        return Err(FitError::Rows {
            problems,
            hint: "check the temperature unit (liquidus_k or liquidus_c) and the primary_phase of these rows".into(),
        });
    }
    for &k in shift {
        if !matches!(base.phases[k].liquidus, LiquidusSurface::Mixture(_)) {
            return Err(FitError::Spec(format!(
                "the liquidus of {} is a freezing-point-depression surface: only a mixture-model surface can be shifted",
                base.phases[k].name
            )));
        }
    }
    let mut phases: Vec<usize> = points.iter().map(|q| q.phase).collect();
    phases.sort_unstable();
    phases.dedup();
    let mut set = base.clone();
    let mut fits = Vec::new();
    let mut fitted = vec![f64::NAN; points.len()];
    let mut loo_predicted = vec![None; points.len()];
    let mut warnings = Vec::new();
    for &k in &phases {
        let form = if shift.contains(&k) {
            SurfaceFit::Shift
        } else {
            SurfaceFit::Full
        };
        let idx: Vec<usize> = (0..points.len())
            .filter(|&i| points[i].phase == k)
            .collect();
        let pts: Vec<&LiquidusPoint> = idx.iter().map(|&i| &points[i]).collect();
        let (terms, mut solution) = fit_phase(base, k, form, &pts)?;
        if form == SurfaceFit::Shift {
            // R² of the liquidus itself, not of its offset from the base surface.
            let mean = pts.iter().map(|q| q.liquidus.0).sum::<f64>() / pts.len() as f64;
            let sst: f64 = pts.iter().map(|q| (q.liquidus.0 - mean).powi(2)).sum();
            solution.statistics.r_squared = if sst > 0.0 {
                1.0 - solution.statistics.ssr / sst
            } else {
                f64::NAN
            };
        }
        let new_surface = surface(base, k, form, &terms, &solution.coefficients);
        let phase = &base.phases[k];
        let mut loo_sq = 0.0;
        let mut loo_all = true;
        for (n, &i) in idx.iter().enumerate() {
            let at = new_surface.at(
                &points[i].x,
                phase.melting_point.0,
                phase.enthalpy_of_fusion_j_per_mol,
            );
            fitted[i] = at.surface_k;
            match solution.loo_residual(n) {
                Some(r) => {
                    loo_sq += r * r;
                    loo_predicted[i] = Some(points[i].liquidus.0 + r);
                }
                None => loo_all = false,
            }
        }
        let loo_rmse = loo_all.then(|| (loo_sq / idx.len() as f64).sqrt());
        if !loo_all {
            warnings.push(format!(
                "{}: some rows alone fix a coefficient of the surface, so they cannot be held out; add rows that vary those oxides",
                phase.name
            ));
        }
        let domain = match form {
            SurfaceFit::Full => Domain::of_data(pts.iter().map(|q| &q.x)),
            SurfaceFit::Shift => phase.domain.clone(),
        };
        let max_over_domain = match &new_surface {
            LiquidusSurface::Mixture(m) => linear_max_over_domain(m, &domain),
            _ => None,
        };
        if let Some((tmax, _)) = max_over_domain {
            if tmax > phase.melting_point.0 {
                warnings.push(format!(
                    "{}: the fitted surface reaches {:.0} K in its domain, above the melting point {:.0} K; the model clips it there",
                    phase.name, tmax, phase.melting_point.0
                ));
            }
        }
        let (method, names) = match form {
            SurfaceFit::Full => (
                "linear least squares (SVD), T_L = sum of a_i x_i, x_i mole fractions".to_string(),
                terms.iter().map(|t| t.to_string()).collect(),
            ),
            SurfaceFit::Shift => (
                format!(
                    "linear least squares: the base surface of {} shifted by one constant",
                    phase.name
                ),
                vec!["constant".to_string()],
            ),
        };
        let mut record = FitRecord::of(&solution, names, provenance, method, "K");
        record.cv_method = loo_rmse.map(|_| "leave one row out".to_string());
        record.cv_rmse = loo_rmse;
        let target = &mut set.phases[k];
        if let (SurfaceFit::Full, LiquidusSurface::Mixture(_)) = (form, &new_surface) {
            let mut se = [0.0; N_OXIDES];
            for (j, t) in terms.iter().enumerate() {
                if let Term::Linear(o) = t {
                    se[o.index()] = solution.standard_error(j);
                }
            }
            let mut s = new_surface.clone();
            if let LiquidusSurface::Mixture(m) = &mut s {
                m.linear_standard_errors = Some(se);
            }
            target.liquidus = s;
        } else {
            target.liquidus = new_surface;
        }
        target.domain = domain;
        target.liquidus_fit = Some(record);
        fits.push(PhaseFit {
            phase: k,
            form,
            points: idx,
            terms,
            solution,
            loo_rmse,
            max_over_domain,
        });
    }

    // Primary phase: the phase with the highest (clipped) liquidus.
    let primary = |s: &ModelSet, x: &[f64; N_OXIDES]| -> usize {
        let mut best = (0, f64::NEG_INFINITY);
        for (k, p) in s.phases.iter().enumerate() {
            let l = p
                .liquidus
                .at(x, p.melting_point.0, p.enthalpy_of_fusion_j_per_mol)
                .liquidus_k;
            if l > best.1 {
                best = (k, l);
            }
        }
        best.0
    };
    let primary_in_sample: Vec<usize> = points.iter().map(|q| primary(&set, &q.x)).collect();
    let mut primary_held_out = vec![None; points.len()];
    for f in &fits {
        for &i in &f.points {
            let rest: Vec<&LiquidusPoint> = f
                .points
                .iter()
                .filter(|&&j| j != i)
                .map(|&j| &points[j])
                .collect();
            let Ok((terms, s)) = fit_phase(base, f.phase, f.form, &rest) else {
                continue;
            };
            let mut held = set.clone();
            held.phases[f.phase].liquidus = surface(base, f.phase, f.form, &terms, &s.coefficients);
            primary_held_out[i] = Some(primary(&held, &points[i].x));
        }
    }
    Ok(LiquidusFit {
        set,
        phases: fits,
        fitted,
        loo_predicted,
        primary_in_sample,
        primary_held_out,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_greedy_maximum_is_the_best_vertex() {
        // Source: worked by hand. T = 1000 + 10·SiO2% − 5·Na2O% + 2·CaO% over
        // SiO2 60–75, Na2O 10–20, CaO 5–15: minima sum to 75, the 25 left go
        // to SiO2 (+15, its range) then CaO (+10): 75 / 10 / 15 →
        // 1000 + 750 − 50 + 30 = 1730.
        let mut m = MixtureModel::constant(1000.0);
        m.basis = FractionBasis::MolPercent;
        m.linear[Oxide::SiO2.index()] = 10.0;
        m.linear[Oxide::Na2O.index()] = -5.0;
        m.linear[Oxide::CaO.index()] = 2.0;
        let mut d = Domain {
            min: [0.0; N_OXIDES],
            max: [0.0; N_OXIDES],
        };
        for (o, lo, hi) in [
            (Oxide::SiO2, 60.0, 75.0),
            (Oxide::Na2O, 10.0, 20.0),
            (Oxide::CaO, 5.0, 15.0),
        ] {
            d.min[o.index()] = lo;
            d.max[o.index()] = hi;
        }
        let (t, pct) = linear_max_over_domain(&m, &d).unwrap();
        assert!((t - 1730.0).abs() < 1e-9, "{t}");
        assert_eq!(
            [
                pct[Oxide::SiO2.index()],
                pct[Oxide::Na2O.index()],
                pct[Oxide::CaO.index()]
            ],
            [75.0, 10.0, 15.0]
        );
    }
}
