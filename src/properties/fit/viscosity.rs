//! The viscosity model fitted to measured points (composition, T, log10 η):
//! VFT, log10 η = A(x) + B(x)/(T − C(x)), or MYEGA with log10 η∞(x), T_g(x)
//! and m(x), each parameter a mixture model in mole fractions (A or log10 η∞
//! one constant or linear; the others linear over the oxides the data
//! contain; optional pair terms), by Levenberg–Marquardt on log10 η.
//!
//! Starting point. VFT is linear in A and B once C is fixed, so a scan over
//! one common C (0 K up to 20 K below the coldest point) solves the linear
//! problem at each C and keeps the best; Levenberg–Marquardt then frees every
//! coefficient. MYEGA starts from that VFT fit: each glass's T_g and m, and
//! a mean log10 η∞, regressed on composition.
//!
//! Data of one glass give that glass's curve: the three parameters are then
//! constants.
//!
//! Prediction error: each glass in turn is left out, the model refitted on
//! the rest and the left-out glass predicted (leave one glass out): the error
//! a new glass of the same system can expect. See docs/science.md, "Fitting".

use super::{FitError, FitRecord, Provenance};
use crate::composition::{Oxide, N_OXIDES};
use crate::numeric::least_squares::{
    fit_linear, fit_nonlinear, LmSettings, Model, Noise, Solution,
};
use crate::properties::mixture::{Domain, FractionBasis, MixtureModel, Term};
use crate::properties::viscosity::{
    ViscosityCoefficient, ViscosityCurve, ViscosityForm, ViscosityModel, ViscosityParam,
};
use crate::units::{Kelvin, Log10PaS};
use nalgebra::DMatrix;

/// One measured viscosity.
#[derive(Debug, Clone, PartialEq)]
pub struct ViscosityPoint {
    /// Data row (1-based), for messages.
    pub row: usize,
    /// Index of the glass (points of one glass share it).
    pub glass: usize,
    /// Mole fractions.
    pub x: [f64; N_OXIDES],
    pub temperature: Kelvin,
    pub log10_viscosity: Log10PaS,
}

/// VFT or MYEGA.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CurveForm {
    Vft,
    Myega,
}

impl CurveForm {
    fn params(self) -> [ViscosityParam; 3] {
        match self {
            CurveForm::Vft => [ViscosityParam::A, ViscosityParam::BK, ViscosityParam::CK],
            CurveForm::Myega => [
                ViscosityParam::LogEtaInf,
                ViscosityParam::TgK,
                ViscosityParam::Fragility,
            ],
        }
    }
}

/// Which terms each parameter of the form gets.
#[derive(Debug, Clone, PartialEq)]
pub struct ViscosityTerms {
    pub form: CurveForm,
    /// A (VFT) or log10 η∞ (MYEGA) linear in composition, not one constant.
    pub first_linear: bool,
    /// Pair terms x_i x_j added to a parameter.
    pub pairs: Vec<(ViscosityParam, Oxide, Oxide)>,
    /// The first parameter as one given constant, not fitted (used for a
    /// single glass, where A and B/C are otherwise hard to separate).
    pub first_fixed: Option<f64>,
}

impl ViscosityTerms {
    /// VFT with A one constant and B, C linear.
    pub fn vft() -> Self {
        ViscosityTerms {
            form: CurveForm::Vft,
            first_linear: false,
            pairs: Vec::new(),
            first_fixed: None,
        }
    }
}

/// One glass of the data after the fit.
#[derive(Debug, Clone, PartialEq)]
pub struct GlassResult {
    pub glass: usize,
    pub points: usize,
    /// The fitted curve of this glass.
    pub curve: ViscosityCurve,
    /// RMSE of its points, log10 Pa·s.
    pub rmse: f64,
    /// RMSE of its points predicted with it left out, log10 Pa·s.
    pub cv_rmse: Option<f64>,
    /// Why it could not be left out, if so.
    pub cv_note: Option<String>,
}

/// One point after the fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointResult {
    /// Fitted log10 η.
    pub fitted: f64,
    /// Fitted minus measured, log10 Pa·s.
    pub residual: f64,
    /// Predicted with its glass left out, log10 η.
    pub cv_predicted: Option<f64>,
    /// Temperature at which that prediction reaches the measured viscosity,
    /// minus the measured temperature, K.
    pub cv_residual_k: Option<f64>,
}

/// The fitted viscosity model and how well it fits.
#[derive(Debug, Clone, PartialEq)]
pub struct ViscosityFit {
    /// The model, its domain the data's oxide ranges, with its fit record.
    pub model: ViscosityModel,
    /// The fitted coefficients, in the order of the solution.
    pub coefficients: Vec<ViscosityCoefficient>,
    pub solution: Solution,
    pub points: Vec<PointResult>,
    pub glasses: Vec<GlassResult>,
    /// RMSE of held-out predictions, log10 Pa·s, and as isokom temperatures, K.
    pub cv_rmse: Option<f64>,
    pub cv_rmse_k: Option<f64>,
    pub warnings: Vec<String>,
}

/// The terms of each parameter, and the fixed first parameter if any.
#[derive(Debug, Clone)]
struct Layout {
    form: CurveForm,
    terms: [Vec<Term>; 3],
    first_fixed: Option<f64>,
}

impl Layout {
    fn new(points: &[ViscosityPoint], spec: &ViscosityTerms) -> Result<Self, FitError> {
        let present: Vec<Oxide> = Oxide::ALL
            .into_iter()
            .filter(|o| points.iter().any(|p| p.x[o.index()] > 0.0))
            .collect();
        // One glass: its curve's three constants are all the data can give.
        let one_glass = points.iter().all(|p| {
            p.x.iter()
                .zip(&points[0].x)
                .all(|(a, b)| (a - b).abs() < 1e-12)
        });
        if one_glass && !spec.pairs.is_empty() {
            return Err(FitError::Spec(
                "the data hold one glass: pair terms need several compositions".into(),
            ));
        }
        let linear: Vec<Term> = if one_glass {
            vec![Term::Constant]
        } else {
            present.iter().map(|o| Term::Linear(*o)).collect()
        };
        let params = spec.form.params();
        let mut terms: [Vec<Term>; 3] = [
            if spec.first_fixed.is_some() {
                Vec::new()
            } else if spec.first_linear && !one_glass {
                linear.clone()
            } else {
                vec![Term::Constant]
            },
            linear.clone(),
            linear,
        ];
        for &(param, a, b) in &spec.pairs {
            let Some(k) = params.iter().position(|p| *p == param) else {
                return Err(FitError::Spec(format!(
                    "the pair term {a}*{b} names '{}', which is not a parameter of this form (give one of {})",
                    param.key(),
                    params.map(|p| p.key()).join(", ")
                )));
            };
            for o in [a, b] {
                if !present.contains(&o) {
                    return Err(FitError::Spec(format!(
                        "the pair term {}.{a}*{b} needs {o}, which no glass in the data contains",
                        param.key()
                    )));
                }
            }
            if k == 0 && spec.first_fixed.is_some() {
                return Err(FitError::Spec(
                    "a pair term on a fixed first parameter cannot be fitted".into(),
                ));
            }
            let t = Term::Pair(a, b);
            if terms[k].contains(&t) || terms[k].contains(&Term::Pair(b, a)) {
                return Err(FitError::Spec(format!(
                    "the pair term {}.{a}*{b} is given twice",
                    param.key()
                )));
            }
            terms[k].push(t);
        }
        Ok(Layout {
            form: spec.form,
            terms,
            first_fixed: spec.first_fixed,
        })
    }

    fn len(&self) -> usize {
        self.terms.iter().map(Vec::len).sum()
    }

    fn names(&self) -> Vec<ViscosityCoefficient> {
        let params = self.form.params();
        (0..3)
            .flat_map(|k| {
                self.terms[k].iter().map(move |t| ViscosityCoefficient {
                    param: params[k],
                    term: *t,
                })
            })
            .collect()
    }

    /// φ of a term at mole fractions x (mole-fraction basis).
    fn phi(t: Term, x: &[f64; N_OXIDES]) -> f64 {
        match t {
            Term::Constant => 1.0,
            Term::Linear(o) => x[o.index()],
            Term::Pair(a, b) => x[a.index()] * x[b.index()],
        }
    }

    /// The three parameters at x.
    fn values(&self, theta: &[f64], x: &[f64; N_OXIDES]) -> [f64; 3] {
        let mut out = [0.0; 3];
        let mut j = 0;
        for (k, terms) in self.terms.iter().enumerate() {
            for t in terms {
                out[k] += theta[j] * Self::phi(*t, x);
                j += 1;
            }
        }
        if let Some(v) = self.first_fixed {
            out[0] = v;
        }
        out
    }

    /// ∂f/∂θ_j from ∂f/∂P_k.
    fn chain(&self, dp: [f64; 3], x: &[f64; N_OXIDES], row: &mut [f64]) {
        let mut j = 0;
        for (k, terms) in self.terms.iter().enumerate() {
            for t in terms {
                row[j] = dp[k] * Self::phi(*t, x);
                j += 1;
            }
        }
    }

    /// The curve at x, if the parameters make one.
    fn curve(&self, theta: &[f64], x: &[f64; N_OXIDES]) -> Option<ViscosityCurve> {
        let [p0, p1, p2] = self.values(theta, x);
        match self.form {
            CurveForm::Vft => ViscosityCurve::vft(p0, p1, p2).ok(),
            CurveForm::Myega => ViscosityCurve::myega(p0, p1, p2).ok(),
        }
    }

    /// log10 η and ∂log10η/∂(P0, P1, P2), or None outside the form's domain.
    fn eval(&self, theta: &[f64], x: &[f64; N_OXIDES], t: f64) -> Option<(f64, [f64; 3])> {
        let [p0, p1, p2] = self.values(theta, x);
        match self.form {
            CurveForm::Vft => {
                let d = t - p2;
                if d.is_nan() || d <= 0.0 {
                    return None;
                }
                Some((p0 + p1 / d, [1.0, 1.0 / d, p1 / (d * d)]))
            }
            CurveForm::Myega => {
                // f = L + K u E, K = 12 − L, u = T_g/T, g = m/K − 1, E = exp(g(u − 1)).
                let (l, tg, m) = (p0, p1, p2);
                let k = 12.0 - l;
                if !(k > 0.0 && tg > 0.0) {
                    return None;
                }
                let u = tg / t;
                let g = m / k - 1.0;
                let e = (g * (u - 1.0)).exp();
                let f = l + k * u * e;
                let d_l = 1.0 - u * e + u * e * (u - 1.0) * m / k;
                let d_tg = k * e * (1.0 + g * u) / t;
                let d_m = u * e * (u - 1.0);
                Some((f, [d_l, d_tg, d_m]))
            }
        }
    }
}

struct Problem<'a> {
    layout: &'a Layout,
    points: Vec<&'a ViscosityPoint>,
}

impl Model for Problem<'_> {
    fn predict(&self, theta: &[f64]) -> Option<Vec<f64>> {
        self.points
            .iter()
            .map(|p| {
                self.layout
                    .eval(theta, &p.x, p.temperature.0)
                    .map(|(f, _)| f)
            })
            .collect()
    }

    fn jacobian(&self, theta: &[f64]) -> Option<DMatrix<f64>> {
        let mut j = DMatrix::zeros(self.points.len(), self.layout.len());
        let mut row = vec![0.0; self.layout.len()];
        for (i, p) in self.points.iter().enumerate() {
            let (_, dp) = self.layout.eval(theta, &p.x, p.temperature.0)?;
            self.layout.chain(dp, &p.x, &mut row);
            for (k, v) in row.iter().enumerate() {
                j[(i, k)] = *v;
            }
        }
        Some(j)
    }
}

impl Problem<'_> {
    fn y(&self) -> Vec<f64> {
        self.points.iter().map(|p| p.log10_viscosity.0).collect()
    }
}

/// Grid steps of the common-C scan for the VFT starting point.
const C_SCAN_STEPS: usize = 80;

/// The VFT starting point: the best of the linear fits with one common C.
fn vft_start(problem: &Problem) -> Result<Vec<f64>, FitError> {
    let layout = problem.layout;
    let tmin = problem
        .points
        .iter()
        .map(|p| p.temperature.0)
        .fold(f64::INFINITY, f64::min);
    let y: Vec<f64> = problem
        .points
        .iter()
        .map(|p| p.log10_viscosity.0 - layout.first_fixed.unwrap_or(0.0))
        .collect();
    let (na, nb) = (layout.terms[0].len(), layout.terms[1].len());
    let names: Vec<String> = layout.names()[..na + nb]
        .iter()
        .map(|c| c.to_string())
        .collect();
    let mut best: Option<(f64, Vec<f64>)> = None;
    let mut last_err = None;
    for step in 0..C_SCAN_STEPS {
        let c0 = (tmin - 20.0).max(0.0) * step as f64 / C_SCAN_STEPS as f64;
        let x = DMatrix::from_fn(problem.points.len(), na + nb, |i, j| {
            let p = problem.points[i];
            if j < na {
                Layout::phi(layout.terms[0][j], &p.x)
            } else {
                Layout::phi(layout.terms[1][j - na], &p.x) / (p.temperature.0 - c0)
            }
        });
        match fit_linear(&x, &y, &names, Noise::Known(1.0)) {
            Ok(s) if best.as_ref().is_none_or(|b| s.statistics.ssr < b.0) => {
                let mut theta = s.coefficients.clone();
                for t in &layout.terms[2] {
                    theta.push(match t {
                        Term::Pair(..) => 0.0,
                        _ => c0,
                    });
                }
                best = Some((s.statistics.ssr, theta));
            }
            Ok(_) => {}
            Err(e) => last_err = Some(e),
        }
    }
    match (best, last_err) {
        (Some((_, theta)), _) => Ok(theta),
        (None, Some(e)) => Err(e.into()),
        (None, None) => Err(FitError::Spec("no starting point for the VFT fit".into())),
    }
}

/// The MYEGA starting point from a VFT fit of the same points.
fn myega_start(problem: &Problem, glasses: &[usize]) -> Result<Vec<f64>, FitError> {
    let vft_layout = Layout::new(
        &problem
            .points
            .iter()
            .map(|p| (*p).clone())
            .collect::<Vec<_>>(),
        &ViscosityTerms::vft(),
    )?;
    let vft = Problem {
        layout: &vft_layout,
        points: problem.points.clone(),
    };
    let names: Vec<String> = vft_layout.names().iter().map(|c| c.to_string()).collect();
    let start = vft_start(&vft)?;
    let s = fit_nonlinear(
        &vft,
        &vft.y(),
        &start,
        &names,
        Noise::Known(1.0),
        LmSettings::default(),
    )?;
    // Per glass: T_g, m and A of the VFT fit.
    let mut xs = Vec::new();
    let (mut tg, mut m, mut a) = (Vec::new(), Vec::new(), Vec::new());
    for &g in glasses {
        let p = problem
            .points
            .iter()
            .find(|p| p.glass == g)
            .expect("a glass has points");
        if let Some(c) = vft_layout.curve(&s.coefficients, &p.x) {
            if let (Ok(t), Ok(f), ViscosityCurve::Vft { a: av, .. }) =
                (c.temperature_at(Log10PaS(12.0)), c.fragility(), c)
            {
                xs.push(p.x);
                tg.push(t.0);
                m.push(f);
                a.push(av);
            }
        }
    }
    if xs.is_empty() {
        return Err(FitError::Spec(
            "the VFT fit that starts the MYEGA fit gives no glass a glass transition".into(),
        ));
    }
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    // log10 η∞ of silicate melts sits near −3 (Zheng et al. 2011, from memory);
    // the VFT A is a fair first guess and is kept below 12 − m_min.
    let l0 = mean(&a).min(0.0);
    let layout = problem.layout;
    let regress = |terms: &[Term], v: &[f64]| -> Vec<f64> {
        let x = DMatrix::from_fn(xs.len(), terms.len(), |i, j| Layout::phi(terms[j], &xs[i]));
        let names: Vec<String> = terms.iter().map(|t| t.to_string()).collect();
        match fit_linear(&x, v, &names, Noise::Known(1.0)) {
            Ok(s) => s.coefficients,
            Err(_) => terms
                .iter()
                .map(|t| match t {
                    Term::Pair(..) => 0.0,
                    _ => mean(v),
                })
                .collect(),
        }
    };
    let mut theta: Vec<f64> = layout.terms[0]
        .iter()
        .map(|t| match t {
            Term::Pair(..) => 0.0,
            _ => l0,
        })
        .collect();
    theta.extend(regress(&layout.terms[1], &tg));
    theta.extend(regress(&layout.terms[2], &m));
    Ok(theta)
}

fn solve(problem: &Problem, glasses: &[usize]) -> Result<Solution, FitError> {
    let names: Vec<String> = problem
        .layout
        .names()
        .iter()
        .map(|c| c.to_string())
        .collect();
    let start = match problem.layout.form {
        CurveForm::Vft => vft_start(problem)?,
        CurveForm::Myega => myega_start(problem, glasses)?,
    };
    let y: Vec<f64> = problem.y();
    Ok(fit_nonlinear(
        problem,
        &y,
        &start,
        &names,
        Noise::Estimated,
        LmSettings::default(),
    )?)
}

fn model_of(
    layout: &Layout,
    theta: &[f64],
    name: &str,
    source: &str,
    domain: Domain,
) -> ViscosityModel {
    let temperature = |_: ViscosityParam| MixtureModel {
        basis: FractionBasis::MoleFraction,
        ..MixtureModel::constant(0.0)
    };
    let params = layout.form.params();
    let mut mixtures: [MixtureModel; 3] = params.map(temperature);
    let mut j = 0;
    for (mix, terms) in mixtures.iter_mut().zip(&layout.terms) {
        for t in terms {
            mix.set_coefficient(*t, theta[j]);
            j += 1;
        }
    }
    if let Some(v) = layout.first_fixed {
        mixtures[0].constant = v;
    }
    let [m0, m1, m2] = mixtures;
    let form = match layout.form {
        CurveForm::Vft => ViscosityForm::Vft {
            a: m0,
            b_k: m1,
            c_k: m2,
        },
        CurveForm::Myega => ViscosityForm::Myega {
            log_eta_inf: m0,
            tg_k: m1,
            fragility: m2,
        },
    };
    ViscosityModel {
        name: name.to_string(),
        source: source.to_string(),
        form,
        domain,
        fit: None,
    }
}

/// Fit a viscosity model to measured points.
///
/// `name` and `source` label the model; `provenance` goes into its fit
/// record; `cross_validate` leaves each glass out in turn (one refit per glass).
///
/// # Errors
/// Fewer points than coefficients + 1, a non-finite value, a design the data
/// cannot resolve (named), a pair term on an oxide the data lack, or no
/// convergence.
pub fn fit_viscosity(
    points: &[ViscosityPoint],
    spec: &ViscosityTerms,
    name: &str,
    source: &str,
    provenance: &Provenance,
    cross_validate: bool,
) -> Result<ViscosityFit, FitError> {
    let bad: Vec<String> = points
        .iter()
        .filter(|p| {
            !(p.temperature.0 > 0.0
                && p.temperature.0.is_finite()
                && p.log10_viscosity.0.is_finite())
        })
        .map(|p| {
            format!(
                "row {}: T = {} K and log10 η = {} must be finite, with T above 0 K",
                p.row, p.temperature.0, p.log10_viscosity.0
            )
        })
        .collect();
    if !bad.is_empty() {
        return Err(FitError::Rows {
            problems: bad,
            hint: "give temperatures in K (or °C in a temperature_c column) and finite viscosities"
                .into(),
        });
    }
    let layout = Layout::new(points, spec)?;
    let mut glasses: Vec<usize> = points.iter().map(|p| p.glass).collect();
    glasses.sort_unstable();
    glasses.dedup();
    let problem = Problem {
        layout: &layout,
        points: points.iter().collect(),
    };
    let solution = solve(&problem, &glasses)?;
    let coefficients = layout.names();
    let theta = &solution.coefficients;
    let mut warnings = Vec::new();

    // Each glass's curve must be a viscosity (B > 0, or a valid MYEGA set).
    let mut glass_results = Vec::new();
    for &g in &glasses {
        let pts: Vec<&ViscosityPoint> = points.iter().filter(|p| p.glass == g).collect();
        let Some(curve) = layout.curve(theta, &pts[0].x) else {
            let [p0, p1, p2] = layout.values(theta, &pts[0].x);
            return Err(FitError::Rows {
                problems: vec![format!(
                    "row {}: the fitted parameters of this glass ({p0:.3}, {p1:.1}, {p2:.1}) do not make a viscosity curve",
                    pts[0].row
                )],
                hint: "fit fewer terms (no pair terms), or check the glass's points".into(),
            });
        };
        let rmse = (pts
            .iter()
            .map(|p| (curve.log10_viscosity(p.temperature).0 - p.log10_viscosity.0).powi(2))
            .sum::<f64>()
            / pts.len() as f64)
            .sqrt();
        glass_results.push(GlassResult {
            glass: g,
            points: pts.len(),
            curve,
            rmse,
            cv_rmse: None,
            cv_note: None,
        });
    }
    let fitted: Vec<f64> = problem
        .predict(theta)
        .expect("the solution is inside the domain");
    let mut point_results: Vec<PointResult> = points
        .iter()
        .zip(&fitted)
        .map(|(p, f)| PointResult {
            fitted: *f,
            residual: f - p.log10_viscosity.0,
            cv_predicted: None,
            cv_residual_k: None,
        })
        .collect();

    let (mut cv_rmse, mut cv_rmse_k) = (None, None);
    if cross_validate && glasses.len() > 1 {
        let (mut sq, mut sq_k, mut n, mut n_k) = (0.0, 0.0, 0usize, 0usize);
        for gr in glass_results.iter_mut() {
            let g = gr.glass;
            let rest: Vec<ViscosityPoint> =
                points.iter().filter(|p| p.glass != g).cloned().collect();
            let held: Vec<usize> = (0..points.len())
                .filter(|&i| points[i].glass == g)
                .collect();
            let alone: Vec<String> = Oxide::ALL
                .into_iter()
                .filter(|o| {
                    points[held[0]].x[o.index()] > 0.0 && rest.iter().all(|p| p.x[o.index()] == 0.0)
                })
                .map(|o| o.to_string())
                .collect();
            if !alone.is_empty() {
                gr.cv_note = Some(format!(
                    "not left out: the only glass with {}",
                    alone.join(", ")
                ));
                continue;
            }
            let fold = Problem {
                layout: &layout,
                points: rest.iter().collect(),
            };
            let names: Vec<String> = coefficients.iter().map(|c| c.to_string()).collect();
            let fold_fit = fit_nonlinear(
                &fold,
                &fold.y(),
                theta,
                &names,
                Noise::Estimated,
                LmSettings::default(),
            );
            let fold_theta = match fold_fit {
                Ok(s) => s.coefficients,
                Err(e) => {
                    gr.cv_note = Some(format!("not left out: without it, {e}"));
                    continue;
                }
            };
            let curve = layout.curve(&fold_theta, &points[held[0]].x);
            let mut g_sq = 0.0;
            for &i in &held {
                let p = &points[i];
                let Some((f, _)) = layout.eval(&fold_theta, &p.x, p.temperature.0) else {
                    continue;
                };
                let r = f - p.log10_viscosity.0;
                g_sq += r * r;
                sq += r * r;
                n += 1;
                point_results[i].cv_predicted = Some(f);
                if let Some(t) = curve.and_then(|c| c.temperature_at(p.log10_viscosity).ok()) {
                    let dt = t.0 - p.temperature.0;
                    point_results[i].cv_residual_k = Some(dt);
                    sq_k += dt * dt;
                    n_k += 1;
                }
            }
            gr.cv_rmse = Some((g_sq / held.len() as f64).sqrt());
        }
        if n > 0 {
            cv_rmse = Some((sq / n as f64).sqrt());
        }
        if n_k > 0 {
            cv_rmse_k = Some((sq_k / n_k as f64).sqrt());
        }
        let skipped: Vec<String> = glass_results
            .iter()
            .filter_map(|g| {
                g.cv_note
                    .as_ref()
                    .map(|n| format!("glass {}: {n}", g.glass + 1))
            })
            .collect();
        if !skipped.is_empty() {
            warnings.push(format!(
                "cross-validation left out {} of {} glasses ({})",
                glasses.len() - skipped.len(),
                glasses.len(),
                skipped.join("; ")
            ));
        }
    }

    let domain = Domain::of_data(points.iter().map(|p| &p.x));
    let mut model = model_of(&layout, theta, name, source, domain);
    // Standard errors of the linear terms, where a mixture keeps them.
    for (k, param) in layout.form.params().into_iter().enumerate() {
        let mut se = [0.0; N_OXIDES];
        let mut any = false;
        for (j, c) in coefficients.iter().enumerate() {
            if let (true, Term::Linear(o)) = (c.param == param, c.term) {
                se[o.index()] = solution.standard_error(j);
                any = true;
            }
        }
        if any {
            if let Some(m) = model.form.mixture_mut(layout.form.params()[k]) {
                m.linear_standard_errors = Some(se);
            }
        }
    }
    let method = match spec.form {
        CurveForm::Vft => "Levenberg–Marquardt on log10 η, VFT log10 η = A + B/(T − C), coefficients per mole fraction",
        CurveForm::Myega => "Levenberg–Marquardt on log10 η, MYEGA (Mauro et al. 2009), coefficients per mole fraction",
    };
    let mut record = FitRecord::of(
        &solution,
        coefficients.iter().map(|c| c.to_string()).collect(),
        provenance,
        method,
        "log10 Pa s",
    );
    record.glasses = Some(glasses.len());
    if cross_validate && glasses.len() > 1 {
        record.cv_method = Some("leave one glass out".into());
    }
    record.cv_rmse = cv_rmse;
    record.cv_rmse_k = cv_rmse_k;
    model.fit = Some(record);
    Ok(ViscosityFit {
        model,
        coefficients,
        solution,
        points: point_results,
        glasses: glass_results,
        cv_rmse,
        cv_rmse_k,
        warnings,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::composition::Composition;

    fn glass(parts: &[(Oxide, f64)]) -> [f64; N_OXIDES] {
        *Composition::from_mol_percent(parts).unwrap().fractions()
    }

    #[test]
    fn analytic_jacobians_match_central_differences() {
        // Both forms, at a point inside their domains, against central differences.
        // Two glasses, so B and C are linear (one glass gives constants).
        let pts: Vec<ViscosityPoint> = [
            glass(&[(Oxide::SiO2, 72.0), (Oxide::Na2O, 16.0), (Oxide::CaO, 12.0)]),
            glass(&[(Oxide::SiO2, 70.0), (Oxide::Na2O, 15.0), (Oxide::CaO, 15.0)]),
        ]
        .iter()
        .enumerate()
        .map(|(g, x)| ViscosityPoint {
            row: g + 1,
            glass: g,
            x: *x,
            temperature: Kelvin(1100.0 - 50.0 * g as f64),
            log10_viscosity: Log10PaS(4.0),
        })
        .collect();
        for (form, theta) in [
            (
                CurveForm::Vft,
                vec![-2.5, 6000.0, 3000.0, 2000.0, 500.0, 100.0, 900.0, 50.0],
            ),
            (
                CurveForm::Myega,
                vec![-2.9, 850.0, 700.0, 900.0, 35.0, 20.0, 40.0, 30.0],
            ),
        ] {
            let mut spec = ViscosityTerms::vft();
            spec.form = form;
            spec.pairs.push((form.params()[2], Oxide::Na2O, Oxide::CaO));
            let layout = Layout::new(&pts, &spec).unwrap();
            assert_eq!(layout.len(), theta.len());
            let prob = Problem {
                layout: &layout,
                points: pts.iter().collect(),
            };
            let j = prob.jacobian(&theta).unwrap();
            for k in 0..theta.len() {
                let h = 1e-6 * theta[k].abs().max(1.0);
                let (mut up, mut down) = (theta.clone(), theta.clone());
                up[k] += h;
                down[k] -= h;
                let (fu, fl) = (prob.predict(&up).unwrap(), prob.predict(&down).unwrap());
                for i in 0..pts.len() {
                    let fd = (fu[i] - fl[i]) / (2.0 * h);
                    assert!(
                        (j[(i, k)] - fd).abs() <= 1e-6 * fd.abs().max(1e-6),
                        "{form:?} point {i} coefficient {k}: {} vs {fd}",
                        j[(i, k)]
                    );
                }
            }
        }
    }
}
