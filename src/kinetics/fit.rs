//! The kinetic factors fitted to measurements: the Turnbull α of each phase
//! the data constrain, and optionally one density of pre-existing nuclei,
//! by least squares on log10 of measured critical cooling rates, nose times,
//! isothermal times to the detectable fraction, or nucleation rates (growth
//! rates do not depend on α and are reported as checks only).
//!
//! One parameter and one measurement: a scan over the parameter's range and
//! Brent's method find the root. Otherwise scans one coordinate at a time
//! (each refined by Brent's method) find the basin and Levenberg–Marquardt
//! finishes all parameters together.
//! Standard errors come from the Jacobian at the solution (central
//! differences of the kinetic model), with σ estimated from the residuals or
//! given as the measurements' scatter. A measurement no α in range can reach
//! is refused with the range the model reaches. See docs/science.md,
//! "Fitting" and "Calibration".

use super::melt::{KineticOptions, Melt};
use super::rates::Kinetics;
use super::KineticsError;
use crate::error::Diagnostic;
use crate::numeric::least_squares::{
    fit_nonlinear, solution_at, LeastSquaresError, LmSettings, Model, Noise, Solution,
};
use crate::numeric::{brent_min, brent_root};
use crate::properties::Interface;
use crate::units::{Kelvin, KelvinPerSecond};
use nalgebra::DMatrix;

/// The range α is searched in (as the one-point calibration always did).
pub const ALPHA_RANGE: (f64, f64) = (0.01, 10.0);
/// The range of log10(N_h per m³) searched when the nuclei density is fitted.
pub const LOG10_NUCLEI_RANGE: (f64, f64) = (0.0, 20.0);
/// Points of the scan over a parameter's range.
const SCAN: usize = 41;
/// Below this |∂log10 prediction/∂parameter| at every point a parameter is
/// not identifiable: a change of 0.1 in α moves no prediction by 10⁻⁷ decades.
const IDENTIFIABLE: f64 = 1e-6;

/// A measured quantity of one melt.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Measurement {
    /// Critical cooling rate of the melt.
    CriticalRate(KelvinPerSecond),
    /// Time of the TTT nose, s.
    NoseTime(f64),
    /// Isothermal time to the detectable fraction at a temperature, s.
    TimeAt { temperature: Kelvin, time_s: f64 },
    /// Steady nucleation rate of a phase at a temperature, per m³ s.
    Nucleation { temperature: Kelvin, per_m3_s: f64 },
    /// Growth rate of a phase at a temperature, m/s.
    Growth { temperature: Kelvin, m_per_s: f64 },
}

impl Measurement {
    /// The measured value in SI.
    pub fn value(&self) -> f64 {
        match *self {
            Measurement::CriticalRate(r) => r.0,
            Measurement::NoseTime(t) => t,
            Measurement::TimeAt { time_s, .. } => time_s,
            Measurement::Nucleation { per_m3_s, .. } => per_m3_s,
            Measurement::Growth { m_per_s, .. } => m_per_s,
        }
    }

    /// What is measured, with its SI unit.
    pub fn describe(&self) -> String {
        format!("{}, {}", self.name(), self.unit())
    }

    /// What is measured, in words.
    pub fn name(&self) -> String {
        match *self {
            Measurement::CriticalRate(_) => "critical rate".into(),
            Measurement::NoseTime(_) => "nose time".into(),
            Measurement::TimeAt { temperature, .. } => {
                format!("time to X_c at {:.1} K", temperature.0)
            }
            Measurement::Nucleation { temperature, .. } => {
                format!("nucleation rate at {:.1} K", temperature.0)
            }
            Measurement::Growth { temperature, .. } => {
                format!("growth rate at {:.1} K", temperature.0)
            }
        }
    }

    /// The SI unit of the value.
    pub fn unit(&self) -> &'static str {
        match self {
            Measurement::CriticalRate(_) => "K/s",
            Measurement::NoseTime(_) | Measurement::TimeAt { .. } => "s",
            Measurement::Nucleation { .. } => "per m³ s",
            Measurement::Growth { .. } => "m/s",
        }
    }

    /// Whether α changes the model's value (growth rates do not depend on it).
    pub fn depends_on_alpha(&self) -> bool {
        !matches!(self, Measurement::Growth { .. })
    }
}

/// One measurement of one melt.
#[derive(Debug, Clone, PartialEq)]
pub struct KineticPoint {
    /// Data row (1-based), for messages.
    pub row: usize,
    pub melt: Melt,
    pub measurement: Measurement,
    /// The phase measured (for rates) or seen crystallising, if known.
    pub phase: Option<String>,
}

/// What to fit.
#[derive(Debug, Clone, PartialEq)]
pub struct KineticFitSpec {
    /// Phases whose α is fitted.
    pub phases: Vec<String>,
    /// Fit one log10 N_h shared by every phase as well.
    pub fit_nuclei: bool,
    /// The scatter of a measurement in log10 (decades), if known; else
    /// estimated from the residuals (which needs more points than parameters).
    pub log10_sd: Option<f64>,
}

/// The fitted kinetic factors.
#[derive(Debug, Clone, PartialEq)]
pub struct KineticFit {
    /// The fitted parameters: `<phase>.turnbull_alpha`, then
    /// `log10_heterogeneous_nuclei_per_m3` if fitted.
    pub names: Vec<String>,
    pub values: Vec<f64>,
    /// Covariance and statistics, when they can be had (more points than
    /// parameters, or a given σ).
    pub solution: Option<Solution>,
    /// α of each fitted phase.
    pub alphas: Vec<(String, f64)>,
    /// N_h per m³ in force (fitted, or the options' value).
    pub nuclei_per_m3: f64,
    /// Per point: the model's log10 value at the fit, and log10(model/measured).
    pub predicted_log10: Vec<f64>,
    pub residual_log10: Vec<f64>,
    /// Per point: the phase limiting R_c or the nose at the fit, or the
    /// phase a rate belongs to.
    pub phase_of_point: Vec<String>,
    pub warnings: Vec<String>,
}

/// Why a kinetic fit was refused or failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum KineticFitError {
    #[error("row {row}: {source}")]
    Row {
        row: usize,
        #[source]
        source: KineticsError,
    },
    #[error("{}", rows.iter().map(|(r, m)| format!("row {r}: {m}")).collect::<Vec<_>>().join("\n"))]
    Unreachable {
        /// (row, why) for each measurement the model cannot reach.
        rows: Vec<(usize, String)>,
    },
    #[error("row {row}: the phase '{phase}' cannot crystallise in this melt (its liquidus lies at or below T_g, or the model set lacks it)")]
    PhaseNotInMelt { row: usize, phase: String },
    #[error("nothing to fit: {0}")]
    NothingToFit(String),
    #[error(transparent)]
    LeastSquares(#[from] LeastSquaresError),
    #[error("numerical failure: {0}")]
    Numerical(String),
}

impl Diagnostic for KineticFitError {
    fn hint(&self) -> Option<String> {
        match self {
            KineticFitError::Unreachable { .. } => Some(
                "check the unit of these measurements, or the crystal data and liquidus of the phases (the model cannot reach them with α in [0.01, 10])".into(),
            ),
            KineticFitError::NothingToFit(_) => Some(
                "give critical rates, nose times or nucleation rates of the phases whose α you want (growth rates do not depend on α)".into(),
            ),
            KineticFitError::LeastSquares(e) => e.hint(),
            KineticFitError::Row { source, .. } => source.hint(),
            _ => None,
        }
    }
}

/// The melt with α of the phase named `name` replaced (σ kept consistent if
/// the phase gives σ); a melt without that phase is returned as it is.
pub fn with_alpha(melt: &Melt, name: &str, alpha: f64) -> Melt {
    match melt.phases.iter().position(|p| p.name == name) {
        Some(k) => {
            let p = &melt.phases[k];
            let interface = match p.interface {
                Interface::TurnbullAlpha(_) => Interface::TurnbullAlpha(alpha),
                Interface::EnergyJPerM2(_) => {
                    let mut q = p.clone();
                    q.interface = Interface::TurnbullAlpha(alpha);
                    Interface::EnergyJPerM2(q.interface_energy_j_per_m2())
                }
            };
            melt.with_interface(k, interface)
        }
        None => melt.clone(),
    }
}

/// The phase a point's measurement belongs to at the melt's current α: the
/// named one, else the limiting phase (R_c, nose, isothermal time) or the
/// primary phase (rates).
fn phase_of(point: &KineticPoint, opts: &KineticOptions) -> Result<String, KineticFitError> {
    if let Some(p) = &point.phase {
        return Ok(p.clone());
    }
    let row = point.row;
    Ok(match point.measurement {
        Measurement::Nucleation { .. } | Measurement::Growth { .. } => {
            point.melt.phases[point.melt.primary()].name.clone()
        }
        _ => {
            let s = Kinetics::new(&point.melt, opts)
                .and_then(|k| k.analyse())
                .map_err(|source| KineticFitError::Row { row, source })?;
            s.limiting_phase().name.clone()
        }
    })
}

/// log10 of the model's value for a measurement, and the phase it belongs to.
fn model_log10(
    point: &KineticPoint,
    melt: &Melt,
    opts: &KineticOptions,
) -> Result<(f64, String), KineticsError> {
    let k = Kinetics::new(melt, opts)?;
    let rate_of = |t: Kelvin| -> Result<(crate::kinetics::Rates, String), KineticsError> {
        let name = match &point.phase {
            Some(n) => n.clone(),
            None => melt.phases[melt.primary()].name.clone(),
        };
        let idx = melt
            .phases
            .iter()
            .position(|p| p.name == name)
            .ok_or_else(|| KineticsError::Numerical(format!("no phase '{name}' in the melt")))?;
        Ok((k.phase_rates(idx, t), name))
    };
    let ln10 = std::f64::consts::LN_10;
    match point.measurement {
        Measurement::CriticalRate(_) => {
            let s = k.analyse()?;
            Ok((s.critical_rate.0.log10(), s.limiting_phase().name.clone()))
        }
        Measurement::NoseTime(_) => {
            let s = k.analyse()?;
            Ok((s.nose_time_s.log10(), s.limiting_phase().name.clone()))
        }
        Measurement::TimeAt { temperature, .. } => {
            let ln_t = k.ln_ttt_time(temperature.0);
            let s = k.analyse()?;
            Ok((ln_t / ln10, s.limiting_phase().name.clone()))
        }
        Measurement::Nucleation { temperature, .. } => {
            let (r, name) = rate_of(temperature)?;
            Ok((r.ln_nucleation / ln10, name))
        }
        Measurement::Growth { temperature, .. } => {
            let (r, name) = rate_of(temperature)?;
            Ok((r.ln_growth / ln10, name))
        }
    }
}

/// The fitted parameters applied to the points.
struct Setup<'a> {
    points: Vec<&'a KineticPoint>,
    opts: KineticOptions,
    /// Phase names whose α is a parameter, in order; then N_h if fitted.
    alphas: Vec<String>,
    nuclei: bool,
}

impl Setup<'_> {
    fn in_range(&self, theta: &[f64]) -> bool {
        let (lo, hi) = ALPHA_RANGE;
        let (nlo, nhi) = LOG10_NUCLEI_RANGE;
        theta.iter().enumerate().all(|(i, v)| {
            if i < self.alphas.len() {
                *v >= lo && *v <= hi
            } else {
                *v >= nlo && *v <= nhi
            }
        })
    }

    fn applied(&self, point: &KineticPoint, theta: &[f64]) -> (Melt, KineticOptions) {
        let mut melt = point.melt.clone();
        for (name, a) in self.alphas.iter().zip(theta) {
            melt = with_alpha(&melt, name, *a);
        }
        let mut opts = self.opts;
        if self.nuclei {
            opts.heterogeneous_nuclei_per_m3 = 10f64.powf(theta[self.alphas.len()]);
        }
        (melt, opts)
    }

    fn one(&self, point: &KineticPoint, theta: &[f64]) -> Result<(f64, String), KineticsError> {
        let (melt, opts) = self.applied(point, theta);
        model_log10(point, &melt, &opts)
    }

    fn y(&self) -> Vec<f64> {
        self.points
            .iter()
            .map(|p| p.measurement.value().log10())
            .collect()
    }

    fn ssr(&self, theta: &[f64]) -> f64 {
        match self.predict(theta) {
            Some(f) => f.iter().zip(self.y()).map(|(a, b)| (a - b) * (a - b)).sum(),
            None => f64::INFINITY,
        }
    }

    fn range_of(&self, i: usize) -> (f64, f64) {
        if i < self.alphas.len() {
            ALPHA_RANGE
        } else {
            LOG10_NUCLEI_RANGE
        }
    }

    /// The scan values of parameter i (α geometric, log10 N_h even).
    fn scan(&self, i: usize) -> Vec<f64> {
        let (lo, hi) = self.range_of(i);
        (0..SCAN)
            .map(|k| {
                let f = k as f64 / (SCAN - 1) as f64;
                if i < self.alphas.len() {
                    lo * (hi / lo).powf(f)
                } else {
                    lo + (hi - lo) * f
                }
            })
            .collect()
    }
}

impl Model for Setup<'_> {
    fn predict(&self, theta: &[f64]) -> Option<Vec<f64>> {
        if !self.in_range(theta) {
            return None;
        }
        self.points
            .iter()
            .map(|p| {
                self.one(p, theta)
                    .ok()
                    .map(|v| v.0)
                    .filter(|v| v.is_finite())
            })
            .collect()
    }

    /// Central differences with a step of 10⁻⁴ of each parameter: the
    /// kinetic integrals are accurate to ~10⁻⁴ relative, so a smaller step
    /// would difference their noise.
    fn jacobian(&self, theta: &[f64]) -> Option<DMatrix<f64>> {
        let n = self.points.len();
        let mut j = DMatrix::zeros(n, theta.len());
        for k in 0..theta.len() {
            let h = 1e-4
                * theta[k]
                    .abs()
                    .max(if k < self.alphas.len() { 0.01 } else { 1.0 });
            let (mut up, mut down) = (theta.to_vec(), theta.to_vec());
            let (lo, hi) = self.range_of(k);
            up[k] = (theta[k] + h).min(hi);
            down[k] = (theta[k] - h).max(lo);
            let (fu, fd) = (self.predict(&up)?, self.predict(&down)?);
            for i in 0..n {
                j[(i, k)] = (fu[i] - fd[i]) / (up[k] - down[k]);
            }
        }
        Some(j)
    }
}

/// The phases whose α the points constrain: named phases, else the phase
/// limiting R_c or the nose at the melts' current α, or the primary phase
/// of a nucleation rate; in order of first appearance. Growth rates name none.
///
/// # Errors
/// A melt whose kinetics cannot be computed (the row is named).
pub fn constrained_phases(
    points: &[KineticPoint],
    opts: &KineticOptions,
) -> Result<Vec<String>, KineticFitError> {
    let mut out: Vec<String> = Vec::new();
    for p in points.iter().filter(|p| p.measurement.depends_on_alpha()) {
        let name = phase_of(p, opts)?;
        if !out.contains(&name) {
            out.push(name);
        }
    }
    Ok(out)
}

/// Fit the kinetic factors named in `spec` to the points.
///
/// # Errors
/// A named phase missing from a melt, a row whose kinetics fail at the
/// starting α, measurements no α in range reaches (each with the range),
/// nothing to fit, or a least-squares failure (e.g. two α the data cannot
/// tell apart).
pub fn fit_kinetics(
    points: &[KineticPoint],
    opts: &KineticOptions,
    spec: &KineticFitSpec,
) -> Result<KineticFit, KineticFitError> {
    for p in points {
        if let Some(name) = &p.phase {
            if !p.melt.phases.iter().any(|q| &q.name == name) {
                return Err(KineticFitError::PhaseNotInMelt {
                    row: p.row,
                    phase: name.clone(),
                });
            }
        }
        let v = p.measurement.value();
        if !(v > 0.0 && v.is_finite()) {
            return Err(KineticFitError::Row {
                row: p.row,
                source: KineticsError::Numerical(format!(
                    "the measured {} must be a positive number, got {v} {}",
                    p.measurement.name(),
                    p.measurement.unit()
                )),
            });
        }
    }
    let fitted: Vec<&KineticPoint> = points
        .iter()
        .filter(|p| p.measurement.depends_on_alpha())
        .collect();
    if fitted.is_empty() {
        return Err(KineticFitError::NothingToFit(
            "no critical rate, nose time, isothermal time or nucleation rate among the rows".into(),
        ));
    }
    let mut warnings = Vec::new();
    // Start from each phase's own α (the first melt that has it).
    let start_alpha = |name: &str| {
        points
            .iter()
            .find_map(|p| p.melt.phases.iter().find(|q| q.name == name))
            .map(|q| q.turnbull_alpha())
    };
    let mut alphas = Vec::new();
    for name in &spec.phases {
        match start_alpha(name) {
            Some(_) => alphas.push(name.clone()),
            None => warnings.push(format!(
                "α of {name} is not fitted: no melt of the data can crystallise it"
            )),
        }
    }
    let mut setup = Setup {
        points: fitted,
        opts: *opts,
        alphas,
        nuclei: spec.fit_nuclei,
    };
    let mut theta: Vec<f64> = setup
        .alphas
        .iter()
        .map(|n| {
            start_alpha(n)
                .expect("kept above")
                .clamp(ALPHA_RANGE.0, ALPHA_RANGE.1)
        })
        .collect();
    if setup.nuclei {
        theta.push(
            opts.heterogeneous_nuclei_per_m3
                .max(1.0)
                .log10()
                .clamp(LOG10_NUCLEI_RANGE.0, LOG10_NUCLEI_RANGE.1),
        );
    }
    if theta.is_empty() {
        return Err(KineticFitError::NothingToFit(
            "no phase to fit an α for".into(),
        ));
    }
    for p in &setup.points {
        setup
            .one(p, &theta)
            .map_err(|source| KineticFitError::Row { row: p.row, source })?;
    }
    check_reachable(&setup)?;

    // Parameters the data do not move are left at their start.
    if let Some(j) = setup.jacobian(&theta) {
        let moves = |k: usize| (0..j.nrows()).any(|i| j[(i, k)].abs() > IDENTIFIABLE);
        let n_alpha = setup.alphas.len();
        let (mut kept_alphas, mut kept_theta) = (Vec::new(), Vec::new());
        for (k, (name, value)) in setup.alphas.iter().zip(&theta).enumerate() {
            if moves(k) {
                kept_alphas.push(name.clone());
                kept_theta.push(*value);
            } else {
                warnings.push(format!(
                    "α of {name} is not identifiable from these data (no fitted prediction depends on it): left at {value:.4}"
                ));
            }
        }
        let mut nuclei = false;
        if setup.nuclei {
            if moves(n_alpha) {
                kept_theta.push(theta[n_alpha]);
                nuclei = true;
            } else {
                warnings.push(
                    "the nuclei density is not identifiable from these data (no fitted prediction depends on it): left as given".into(),
                );
            }
        }
        // Dropped α are not applied: the melts carry them at their start.
        setup.alphas = kept_alphas;
        setup.nuclei = nuclei;
        theta = kept_theta;
    }
    if theta.is_empty() {
        return Err(KineticFitError::NothingToFit(
            "no fitted prediction depends on any of the parameters".into(),
        ));
    }
    let names: Vec<String> = setup
        .alphas
        .iter()
        .map(|n| crate::properties::fit::alpha_coefficient(n))
        .chain(
            setup
                .nuclei
                .then(|| crate::properties::fit::NUCLEI_COEFFICIENT.to_string()),
        )
        .collect();

    let y = setup.y();
    if theta.len() == 1 && y.len() == 1 {
        theta = one_dimensional(&setup, &y)?;
    } else {
        // Scans one coordinate at a time find the basin; Levenberg–Marquardt
        // then finishes all parameters together.
        for _sweep in 0..2 {
            for k in 0..theta.len() {
                theta = coordinate(&setup, &theta, k)?;
            }
        }
        let settings = LmSettings {
            max_iterations: 60,
            orthogonality: 1e-8,
            relative_step: 1e-10,
        };
        theta =
            fit_nonlinear(&setup, &y, &theta, &names, Noise::Known(1.0), settings)?.coefficients;
    }

    let noise = match spec.log10_sd {
        Some(s) => Some(Noise::Known(s)),
        None if y.len() > theta.len() => Some(Noise::Estimated),
        None => {
            warnings.push(format!(
                "{} measurement(s) for {} parameter(s): no scatter to estimate standard errors from; give the measurements' scatter (log10) for them",
                y.len(),
                theta.len()
            ));
            None
        }
    };
    let f = setup
        .predict(&theta)
        .ok_or_else(|| KineticFitError::Numerical("the model fails at the fitted values".into()))?;
    let solution = match noise {
        Some(noise) => {
            let j = setup.jacobian(&theta).ok_or_else(|| {
                KineticFitError::Numerical("the model fails next to the fitted values".into())
            })?;
            Some(solution_at(&theta, &f, &j, &y, &names, noise)?)
        }
        None => None,
    };
    for (k, name) in setup.alphas.iter().enumerate() {
        let (lo, hi) = ALPHA_RANGE;
        if theta[k] <= lo * 1.000_001 || theta[k] >= hi * 0.999_999 {
            warnings.push(format!(
                "α of {name} = {:.4} sits at the end of its range [{lo}, {hi}]: the data pull it beyond what the model allows",
                theta[k]
            ));
        }
    }

    // Every point (growth rates too) at the fit.
    let mut predicted_log10 = Vec::new();
    let mut residual_log10 = Vec::new();
    let mut phase_of_point = Vec::new();
    for p in points {
        let (v, phase) = setup
            .one(p, &theta)
            .map_err(|source| KineticFitError::Row { row: p.row, source })?;
        predicted_log10.push(v);
        residual_log10.push(v - p.measurement.value().log10());
        if let (Some(named), false) = (
            &p.phase,
            matches!(
                p.measurement,
                Measurement::Nucleation { .. } | Measurement::Growth { .. }
            ),
        ) {
            if named != &phase {
                warnings.push(format!(
                    "row {}: the data name {named}, but at the fitted α the model's crystallisation is limited by {phase}",
                    p.row
                ));
            }
        }
        phase_of_point.push(phase);
    }
    let alphas: Vec<(String, f64)> = setup
        .alphas
        .iter()
        .cloned()
        .zip(theta.iter().copied())
        .collect();
    let nuclei_per_m3 = if setup.nuclei {
        10f64.powf(theta[theta.len() - 1])
    } else {
        opts.heterogeneous_nuclei_per_m3
    };
    Ok(KineticFit {
        names,
        values: theta,
        solution,
        alphas,
        nuclei_per_m3,
        predicted_log10,
        residual_log10,
        phase_of_point,
        warnings,
    })
}

/// Every measurement must lie within what the model reaches with the
/// parameters at the ends of their ranges (larger α: slower; more nuclei:
/// faster), walking in from an end where the kinetics fail there.
fn check_reachable(setup: &Setup) -> Result<(), KineticFitError> {
    let p = setup.alphas.len() + usize::from(setup.nuclei);
    // `nuclei_step`: whether the nuclei density walks in with α. It stays at
    // its end unless the kinetics fail for every α there: moving it along
    // would understate the range the model reaches.
    let corner = |fast: bool, step: usize, nuclei_step: bool| -> Vec<f64> {
        (0..p)
            .map(|i| {
                let scan = setup.scan(i);
                let alpha = i < setup.alphas.len();
                // Fast: small α, many nuclei.
                let from_low = fast == alpha;
                let k = if alpha || nuclei_step {
                    step.min(SCAN - 1)
                } else {
                    0
                };
                if from_low {
                    scan[k]
                } else {
                    scan[SCAN - 1 - k]
                }
            })
            .collect()
    };
    let mut rows = Vec::new();
    for point in &setup.points {
        let value_at = |fast: bool| -> Option<f64> {
            [false, true].into_iter().find_map(|nuclei_step| {
                (0..SCAN / 2).find_map(|step| {
                    setup
                        .one(point, &corner(fast, step, nuclei_step))
                        .ok()
                        .map(|v| v.0)
                })
            })
        };
        let (Some(a), Some(b)) = (value_at(true), value_at(false)) else {
            continue;
        };
        let (lo, hi) = (a.min(b), a.max(b));
        let y = point.measurement.value().log10();
        // A hair of slack: a value the model reaches exactly at an end is reachable.
        if y < lo - 1e-9 || y > hi + 1e-9 {
            let unit = point.measurement.unit();
            let nuclei = if setup.nuclei {
                format!(
                    ", nuclei per m³ in [1e{}, 1e{}]",
                    LOG10_NUCLEI_RANGE.0, LOG10_NUCLEI_RANGE.1
                )
            } else {
                String::new()
            };
            rows.push((
                point.row,
                format!(
                    "the measured {} of {} {unit} cannot be reached: with α of {} in [{}, {}]{nuclei} (other phases as in the model set) the model gives {} to {} {unit}",
                    point.measurement.name(),
                    short(point.measurement.value()),
                    setup.alphas.join(", "),
                    ALPHA_RANGE.0,
                    ALPHA_RANGE.1,
                    short(10f64.powf(lo)),
                    short(10f64.powf(hi)),
                ),
            ));
        }
    }
    if rows.is_empty() {
        Ok(())
    } else {
        Err(KineticFitError::Unreachable { rows })
    }
}

/// A number in 4 significant figures.
pub(crate) fn short(v: f64) -> String {
    if v != 0.0 && (v.abs() < 1e-3 || v.abs() >= 1e5) {
        format!("{v:.3e}")
    } else if v == 0.0 {
        "0".into()
    } else {
        // Decimals so that four significant figures show (1e-3 ≤ |v| < 1e5).
        let decimals = (3 - v.abs().log10().floor() as i32).max(0) as usize;
        format!("{v:.decimals$}")
    }
}

/// One parameter and one measurement: the root of the residual, bracketed on
/// the scan and refined by Brent's method (as the one-point calibration
/// always did).
fn one_dimensional(setup: &Setup, y: &[f64]) -> Result<Vec<f64>, KineticFitError> {
    let scan = setup.scan(0);
    let r = |v: f64| setup.predict(&[v]).map(|f| f[0] - y[0]).unwrap_or(f64::NAN);
    let values: Vec<f64> = scan.iter().map(|&v| r(v)).collect();
    let bracket = (0..SCAN - 1).find(|&k| {
        values[k].is_finite() && values[k + 1].is_finite() && values[k] * values[k + 1] <= 0.0
    });
    let (lo, hi) = setup.range_of(0);
    let b = bracket.ok_or(KineticFitError::Row {
        row: setup.points[0].row,
        source: KineticsError::CalibrationBracket { lo, hi },
    })?;
    let v = brent_root(r, scan[b], scan[b + 1], 1e-10 * scan[b].abs().max(1e-10))
        .map_err(KineticFitError::Numerical)?;
    Ok(vec![v])
}

/// Minimise the sum of squares along coordinate k: the best scan point,
/// then Brent's method between its neighbours.
fn coordinate(setup: &Setup, theta: &[f64], k: usize) -> Result<Vec<f64>, KineticFitError> {
    let scan = setup.scan(k);
    let at = |v: f64| {
        let mut t = theta.to_vec();
        t[k] = v;
        setup.ssr(&t)
    };
    let values: Vec<f64> = scan.iter().map(|&v| at(v)).collect();
    let (best, bv) =
        values.iter().enumerate().fold(
            (0, f64::INFINITY),
            |b, (i, v)| if *v < b.1 { (i, *v) } else { b },
        );
    if !bv.is_finite() {
        return Err(KineticFitError::Numerical(
            "the model fails over the whole range of a parameter".into(),
        ));
    }
    let lo = scan[best.saturating_sub(1)];
    let hi = scan[(best + 1).min(SCAN - 1)];
    let v = brent_min(at, lo, hi, 1e-9).map_err(KineticFitError::Numerical)?;
    let mut t = theta.to_vec();
    t[k] = if at(v) <= bv { v } else { scan[best] };
    Ok(t)
}

#[cfg(test)]
mod tests {
    use super::short;

    #[test]
    fn short_numbers_keep_four_significant_figures() {
        assert_eq!(short(72664.8698), "72665");
        assert_eq!(short(0.0225), "0.02250");
        assert_eq!(short(1.5), "1.500");
        assert_eq!(short(2.5e-5), "2.500e-5");
        assert_eq!(short(0.0), "0");
    }
}
