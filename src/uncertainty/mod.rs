//! How sure: Monte Carlo propagation of what the models do not know into the
//! critical cooling rate. Each uncertain input has a stated distribution
//! ([`Distribution`]); [`propagate`] draws a seeded Latin hypercube
//! ([`sampling`]), maps it through each distribution (the normal quantile
//! from statrs, a Cholesky factor from nalgebra for correlated
//! coefficients), runs the model for every draw in parallel and summarises
//! log10 R_c: quantiles, spread, the probability that a quench rate is fast
//! enough, and the share of the variance each input explains. [`melt`]
//! builds the inputs of a melt card or a model set and runs the kinetics for
//! a draw. No I/O. See docs/science.md, "Uncertainty".
//!
//! References
//! - M. Stein, "Large sample properties of simulations using Latin hypercube
//!   sampling", Technometrics 29 (1987) 143–151, doi:10.2307/1269769, and
//!   A. B. Owen, "Monte Carlo variance of scrambled net quadrature", SIAM J.
//!   Numer. Anal. 34 (1997) 1884–1910, doi:10.1137/S0036142994277468: a
//!   Latin hypercube mean has variance at most that of plain Monte Carlo of
//!   the same size times n/(n − 1) (from memory).
//! - E. Plischke, E. Borgonovo, C. L. Smith, "Global sensitivity measures from
//!   given data", Eur. J. Oper. Res. 226 (2013) 536–550,
//!   doi:10.1016/j.ejor.2012.11.047: first-order indices from one sample by
//!   partitioning an input's range (from memory).

pub mod melt;
pub mod sampling;

use crate::assess::VOUCH_CRITICAL_RATE_K_PER_S;
use crate::error::Diagnostic;
use nalgebra::{DMatrix, DVector};
use rayon::prelude::*;
use statrs::distribution::{ContinuousCDF, Normal};
use statrs::statistics::{Data, OrderStatistics};

/// The distribution of one uncertain input.
#[derive(Debug, Clone, PartialEq)]
pub enum Distribution {
    /// Normal with this mean and standard deviation (sd 0: fixed).
    Normal { mean: f64, sd: f64 },
    /// log-uniform on [lo, hi], 0 < lo ≤ hi: ln X uniform on [ln lo, ln hi].
    LogUniform { lo: f64, hi: f64 },
    /// Multivariate normal with this mean and covariance (positive
    /// semi-definite), drawn as mean + L z with L L^T = covariance.
    MultiNormal {
        mean: Vec<f64>,
        covariance: Vec<Vec<f64>>,
    },
}

impl Distribution {
    /// The number of values one draw gives.
    pub fn dims(&self) -> usize {
        match self {
            Distribution::MultiNormal { mean, .. } => mean.len(),
            _ => 1,
        }
    }

    /// The central value(s) the point estimate uses: the mean of a normal,
    /// the geometric mean (the median) of a log-uniform range.
    pub fn centre(&self) -> Vec<f64> {
        match self {
            Distribution::Normal { mean, .. } => vec![*mean],
            Distribution::LogUniform { lo, hi } => vec![(lo * hi).sqrt()],
            Distribution::MultiNormal { mean, .. } => mean.clone(),
        }
    }
}

/// An uncertain input: a name the user reads and its distribution.
#[derive(Debug, Clone, PartialEq)]
pub struct UncertainInput {
    /// E.g. "turnbull_alpha of crystal", "heterogeneous_nuclei_per_m3".
    pub name: String,
    pub distribution: Distribution,
}

/// How many draws, from which seed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Settings {
    pub draws: usize,
    pub seed: u64,
}

/// Default seed of the draws.
pub const DEFAULT_SEED: u64 = 20_261_202;
/// Fewest draws a summary is made from.
pub const MIN_DRAWS: usize = 20;
/// Most draws one propagation holds in memory (every draw's values are kept
/// until the summary).
pub const MAX_DRAWS: usize = 1_000_000;

/// Why a propagation was refused or failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum UncertaintyError {
    #[error("{input}: {what}")]
    BadDistribution { input: String, what: String },
    #[error("{0} draws are too few: give at least {MIN_DRAWS}")]
    TooFewDraws(usize),
    #[error("{0} draws are too many: give at most {MAX_DRAWS}")]
    TooManyDraws(usize),
    #[error("every one of the {draws} draws failed; the first: {first}")]
    AllFailed { draws: usize, first: String },
    #[error("{failed} of the {draws} draws failed (more than {} %), so the draws left are no random sample; the first: {first}", MAX_FAILED_SHARE * 100.0)]
    TooManyFailed {
        failed: usize,
        draws: usize,
        first: String,
    },
}

/// The largest share of draws that may fail before a propagation is refused:
/// failed draws are left out of the band and counted as not glassy in the
/// probability, which is honest only while they are few (docs/science.md,
/// "Uncertainty").
pub const MAX_FAILED_SHARE: f64 = 0.01;

impl Diagnostic for UncertaintyError {
    fn hint(&self) -> Option<String> {
        match self {
            UncertaintyError::AllFailed { .. } => Some(
                "the point estimate may sit at the edge of what the models accept; check the spreads".into(),
            ),
            UncertaintyError::TooManyFailed { .. } => Some(
                "a spread reaches values the models cannot evaluate (e.g. a Turnbull alpha at or below 0): narrow it".into(),
            ),
            _ => None,
        }
    }
}

/// The share of the variance of log10 R_c one input explains.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct VarianceShare {
    pub input: String,
    /// First-order index in [0, 1] (see [`first_order_share`]).
    pub share: f64,
}

/// The summary of a propagation.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Propagation {
    pub draws: usize,
    pub seed: u64,
    /// Draws the model refused (not counted in the statistics).
    pub failed_draws: usize,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub first_failure: Option<String>,
    pub critical_rate_p05_k_per_s: f64,
    pub critical_rate_p50_k_per_s: f64,
    pub critical_rate_p95_k_per_s: f64,
    pub log10_critical_rate_mean: f64,
    pub log10_critical_rate_sd: f64,
    /// The quench rate the probability is for, K/s.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub quench_rate_k_per_s: Option<f64>,
    /// P(R_c ≤ quench rate): the share of successful draws whose R_c the
    /// quench reaches.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub probability_glassy: Option<f64>,
    /// Its binomial standard error √(p(1 − p)/n) (an upper bound for a
    /// Latin hypercube up to n/(n − 1)).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub probability_glassy_se: Option<f64>,
    /// A one-sided 95 % lower bound on it ([`probability_lower95`]): the
    /// rule of three where every draw is glassy, else Wilson's score bound.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub probability_glassy_lower95: Option<f64>,
    pub variance_shares: Vec<VarianceShare>,
    /// Whether the 5 % quantile of R_c lies within what the model can vouch
    /// for (at least `assess::VOUCH_CRITICAL_RATE_K_PER_S`), as the point
    /// estimate's `vouched` says for R_c itself.
    pub critical_rate_p05_vouched: bool,
    /// The same for the 95 % quantile.
    pub critical_rate_p95_vouched: bool,
    /// log10 R_c of every successful draw, in draw order (not written).
    #[serde(skip)]
    pub log10_rates: Vec<f64>,
    /// P(R_c ≤ rate) at further rates a caller asks for from the same
    /// draws (a screen's quench options; not written).
    #[serde(skip)]
    pub probability_glassy_at: Vec<f64>,
}

/// The one-sided standard normal quantile of a 95 % bound, Φ⁻¹(0.95).
// Source: statrs Normal::inverse_cdf(0.95) = 1.6448536269514722 (also any
// normal table: 1.645).
pub const Z_ONE_SIDED_95: f64 = 1.644_853_626_951_472_2;

/// The rule of three: with no event in `n` trials, the one-sided 95 % upper
/// bound on the event's probability is about 3/n (Hanley & Lippman-Hand 1983,
/// JAMA 249, 1743). `n` of 0 is taken as 1.
pub fn rule_of_three(n: usize) -> f64 {
    3.0 / n.max(1) as f64
}

/// A one-sided 95 % lower bound on a probability of which `glassy` of `n`
/// draws are glassy (docs/science.md, "What is reported"): 0 where none is;
/// where every draw is, the rule of three, 1 − 3/n (Hanley &
/// Lippman-Hand 1983, JAMA 249, 1743), the bound README and the text report
/// give; otherwise the lower end of Wilson's score interval with z = Φ⁻¹(0.95)
/// (Wilson 1927, JASA 22, 209):
/// (p̂ + z²/2n − z √(p̂(1 − p̂)/n + z²/4n²)) / (1 + z²/n).
/// Never above p̂. 0 draws give 0.
pub fn probability_lower95(glassy: usize, n: usize) -> f64 {
    if n == 0 || glassy == 0 {
        return 0.0;
    }
    if glassy >= n {
        return (1.0 - rule_of_three(n)).max(0.0);
    }
    wilson_lower(glassy, n, Z_ONE_SIDED_95)
}

/// The lower end of Wilson's score interval for `k` successes in `n`
/// trials at normal quantile `z`, clamped to [0, k/n].
pub fn wilson_lower(k: usize, n: usize, z: f64) -> f64 {
    if n == 0 {
        return 0.0;
    }
    let nf = n as f64;
    let p = k.min(n) as f64 / nf;
    let z2 = z * z;
    let centre = p + z2 / (2.0 * nf);
    let half = z * (p * (1.0 - p) / nf + z2 / (4.0 * nf * nf)).sqrt();
    ((centre - half) / (1.0 + z2 / nf)).clamp(0.0, p)
}

/// P(R_c ≤ rate) from log10 R_c of the successful draws out of `n` (a
/// failed draw counts as not glassy), and the number of glassy draws.
pub fn share_glassy(log10_rates: &[f64], n: usize, rate_k_per_s: f64) -> (f64, usize) {
    let lr = rate_k_per_s.log10();
    let k = log10_rates.iter().filter(|&&v| v <= lr).count();
    (k as f64 / n.max(1) as f64, k)
}

impl Propagation {
    /// Both ends of the 5–95 % band lie within what the model can vouch for.
    pub fn band_vouched(&self) -> bool {
        self.critical_rate_p05_vouched && self.critical_rate_p95_vouched
    }

    /// The ends of the band the model cannot vouch for, as phrases in the
    /// words of the point estimate's note ("a 5 % quantile of R_c of
    /// 5.9e-7 K/s"); empty when it can vouch for both.
    pub fn beyond_vouching(&self) -> Vec<String> {
        let mut out = Vec::new();
        for (vouched, what, r) in [
            (
                self.critical_rate_p05_vouched,
                "5 %",
                self.critical_rate_p05_k_per_s,
            ),
            (
                self.critical_rate_p95_vouched,
                "95 %",
                self.critical_rate_p95_k_per_s,
            ),
        ] {
            if !vouched {
                out.push(format!("a {what} quantile of R_c of {r:.1e} K/s"));
            }
        }
        out
    }
}

/// A prepared input: its distribution with a square root of its covariance.
struct Prepared {
    dist: Distribution,
    /// L with L L^T = covariance (multivariate normal only).
    root: Option<DMatrix<f64>>,
}

fn bad(input: &UncertainInput, what: impl Into<String>) -> UncertaintyError {
    UncertaintyError::BadDistribution {
        input: input.name.clone(),
        what: what.into(),
    }
}

/// A square root of a positive semi-definite matrix: the Cholesky factor,
/// or, when the matrix is singular (a coefficient with zero variance, say),
/// V √Λ from its symmetric eigen-decomposition with negative round-off
/// eigenvalues set to zero.
fn covariance_root(c: &DMatrix<f64>) -> DMatrix<f64> {
    if let Some(ch) = c.clone().cholesky() {
        return ch.l();
    }
    let e = c.clone().symmetric_eigen();
    let mut v = e.eigenvectors;
    for (j, lam) in e.eigenvalues.iter().enumerate() {
        let s = lam.max(0.0).sqrt();
        v.column_mut(j).scale_mut(s);
    }
    v
}

fn prepare(input: &UncertainInput) -> Result<Prepared, UncertaintyError> {
    let root = match &input.distribution {
        Distribution::Normal { mean, sd } => {
            if !mean.is_finite() || !sd.is_finite() || *sd < 0.0 {
                return Err(bad(
                    input,
                    format!("a normal needs a finite mean and a standard deviation ≥ 0 (got {mean}, {sd})"),
                ));
            }
            None
        }
        Distribution::LogUniform { lo, hi } => {
            if !(lo.is_finite() && hi.is_finite() && *lo > 0.0 && lo <= hi) {
                return Err(bad(
                    input,
                    format!("a log-uniform range needs 0 < lo ≤ hi (got [{lo}, {hi}])"),
                ));
            }
            None
        }
        Distribution::MultiNormal { mean, covariance } => {
            let n = mean.len();
            if n == 0
                || covariance.len() != n
                || covariance.iter().any(|r| r.len() != n)
                || mean.iter().any(|m| !m.is_finite())
            {
                return Err(bad(
                    input,
                    format!(
                        "a multivariate normal needs {n} finite means and an {n} × {n} covariance"
                    ),
                ));
            }
            let c = DMatrix::from_fn(n, n, |i, j| covariance[i][j]);
            if c.iter().any(|v| !v.is_finite()) {
                return Err(bad(
                    input,
                    "the covariance holds a value that is not finite",
                ));
            }
            let sym = (&c + c.transpose()) * 0.5;
            let eig = sym.clone().symmetric_eigenvalues();
            let (lo, hi) = (eig.min(), eig.max());
            if lo < -1e-9 * hi.abs().max(f64::MIN_POSITIVE) {
                return Err(bad(
                    input,
                    format!("the covariance is not positive semi-definite (eigenvalue {lo:.3e})"),
                ));
            }
            Some(covariance_root(&sym))
        }
    };
    Ok(Prepared {
        dist: input.distribution.clone(),
        root,
    })
}

impl Prepared {
    /// The values of a draw from uniforms `u` (one per dimension), and the
    /// standardised coordinates the variance shares sort by.
    fn map(&self, u: &[f64], normal: &Normal) -> (Vec<f64>, Vec<f64>) {
        match &self.dist {
            Distribution::Normal { mean, sd } => {
                let z = normal.inverse_cdf(u[0]);
                (vec![mean + sd * z], vec![z])
            }
            Distribution::LogUniform { lo, hi } => {
                let v = (lo.ln() + u[0] * (hi.ln() - lo.ln())).exp();
                (vec![v.clamp(*lo, *hi)], vec![u[0]])
            }
            Distribution::MultiNormal { mean, .. } => {
                let z = DVector::from_iterator(u.len(), u.iter().map(|&x| normal.inverse_cdf(x)));
                let x = match &self.root {
                    Some(l) => l * &z,
                    None => DVector::zeros(u.len()),
                };
                (
                    mean.iter().zip(x.iter()).map(|(m, d)| m + d).collect(),
                    z.iter().copied().collect(),
                )
            }
        }
    }
}

/// The values of every draw (`[draw][input][coordinate]`) and, per input,
/// the standardised coordinates of every draw (`[input][draw][coordinate]`),
/// from the seeded Latin hypercube: what [`propagate`] runs the model on.
type Draws = (Vec<Vec<Vec<f64>>>, Vec<Vec<Vec<f64>>>);

fn draws(inputs: &[UncertainInput], settings: Settings) -> Result<Draws, UncertaintyError> {
    let prepared = inputs.iter().map(prepare).collect::<Result<Vec<_>, _>>()?;
    let dims: usize = inputs.iter().map(|i| i.distribution.dims()).sum();
    let n = settings.draws;
    let lhs = sampling::latin_hypercube(n, dims, settings.seed);
    let normal = Normal::standard();
    // values[i][k]: draw i, input k; coords[k][i]: the standardised coordinates.
    let mut values = Vec::with_capacity(n);
    let mut coords: Vec<Vec<Vec<f64>>> = vec![Vec::with_capacity(n); inputs.len()];
    for row in &lhs {
        let mut at = 0;
        let mut draw = Vec::with_capacity(inputs.len());
        for (k, p) in prepared.iter().enumerate() {
            let d = p.dist.dims();
            let (v, z) = p.map(&row[at..at + d], &normal);
            at += d;
            draw.push(v);
            coords[k].push(z);
        }
        values.push(draw);
    }
    Ok((values, coords))
}

/// Every draw of a propagation, made once: the values the model runs on and
/// the standardised coordinates the variance shares sort by. A screen makes
/// its draws once and runs every recipe on them (`screen::probability`).
#[derive(Debug, Clone)]
pub struct Drawn {
    settings: Settings,
    /// The inputs' names, in order.
    names: Vec<String>,
    /// `[draw][input][coordinate]`.
    values: Vec<Vec<Vec<f64>>>,
    /// `[input][draw][coordinate]`.
    coords: Vec<Vec<Vec<f64>>>,
}

impl Drawn {
    /// Draw `settings.draws` values of every input from a Latin hypercube
    /// in the seed's order (every uniform drawn serially, before any model
    /// runs).
    ///
    /// # Errors
    /// Fewer than [`MIN_DRAWS`] or more than [`MAX_DRAWS`] draws; a
    /// distribution that is not one.
    pub fn new(inputs: &[UncertainInput], settings: Settings) -> Result<Drawn, UncertaintyError> {
        if settings.draws < MIN_DRAWS {
            return Err(UncertaintyError::TooFewDraws(settings.draws));
        }
        if settings.draws > MAX_DRAWS {
            return Err(UncertaintyError::TooManyDraws(settings.draws));
        }
        let (values, coords) = draws(inputs, settings)?;
        Ok(Drawn {
            settings,
            names: inputs.iter().map(|i| i.name.clone()).collect(),
            values,
            coords,
        })
    }

    /// The values of every draw, `[draw][input][coordinate]`, in draw order.
    pub fn values(&self) -> &[Vec<Vec<f64>>] {
        &self.values
    }

    /// Run `model` on every draw (values per input, in the inputs' order)
    /// in parallel and summarise log10 of the critical rates it returns
    /// (K/s), as [`propagate`] does. Results are kept in draw order, so the
    /// numbers do not depend on the thread count.
    ///
    /// # Errors
    /// Every draw failing, or more than [`MAX_FAILED_SHARE`] of them.
    pub fn propagate<M>(
        &self,
        quench_rate_k_per_s: Option<f64>,
        model: M,
    ) -> Result<Propagation, UncertaintyError>
    where
        M: Fn(&[Vec<f64>]) -> Result<f64, String> + Sync,
    {
        let (settings, values, coords) = (self.settings, &self.values, &self.coords);
        let n = settings.draws;
        let results: Vec<Result<f64, String>> = values
            .par_iter()
            .map(|v| {
                model(v).and_then(|r| {
                    if r > 0.0 && r.is_finite() {
                        Ok(r.log10())
                    } else {
                        Err(format!("critical rate {r} K/s is not a positive number"))
                    }
                })
            })
            .collect();
        let ok: Vec<usize> = (0..n).filter(|&i| results[i].is_ok()).collect();
        let first_failure = results.iter().find_map(|r| r.as_ref().err().cloned());
        if ok.is_empty() {
            return Err(UncertaintyError::AllFailed {
                draws: n,
                first: first_failure.unwrap_or_default(),
            });
        }
        let failed = n - ok.len();
        if failed as f64 > MAX_FAILED_SHARE * n as f64 {
            return Err(UncertaintyError::TooManyFailed {
                failed,
                draws: n,
                first: first_failure.unwrap_or_default(),
            });
        }
        let y: Vec<f64> = ok
            .iter()
            .map(|&i| results[i].clone().unwrap_or(f64::NAN))
            .collect();
        let m = y.len() as f64;
        let (mean, sst) = centred(&y);
        let sd = if y.len() > 1 {
            (sst / (m - 1.0)).sqrt()
        } else {
            0.0
        };
        let mut data = Data::new(y.clone());
        let q = |data: &mut Data<Vec<f64>>, p: f64| 10f64.powf(data.quantile(p));
        let (p05, p50, p95) = (q(&mut data, 0.05), q(&mut data, 0.50), q(&mut data, 0.95));
        let (probability, se, lower95) = match quench_rate_k_per_s {
            Some(r) => {
                // Over every draw: a failed draw counts as not glassy (the
                // cautious side; at most MAX_FAILED_SHARE of them).
                let all = n as f64;
                let (p, k) = share_glassy(&y, n, r);
                (
                    Some(p),
                    Some((p * (1.0 - p) / all).sqrt()),
                    Some(probability_lower95(k, n)),
                )
            }
            None => (None, None, None),
        };
        let variance_shares = self
            .names
            .iter()
            .zip(coords)
            .map(|(name, c)| {
                let c_ok: Vec<&Vec<f64>> = ok.iter().map(|&i| &c[i]).collect();
                VarianceShare {
                    input: name.clone(),
                    share: first_order_share(&c_ok, &y),
                }
            })
            .collect();
        Ok(Propagation {
            draws: n,
            seed: settings.seed,
            failed_draws: n - ok.len(),
            first_failure,
            critical_rate_p05_k_per_s: p05,
            critical_rate_p50_k_per_s: p50,
            critical_rate_p95_k_per_s: p95,
            log10_critical_rate_mean: mean,
            log10_critical_rate_sd: sd,
            quench_rate_k_per_s,
            probability_glassy: probability,
            probability_glassy_se: se,
            probability_glassy_lower95: lower95,
            variance_shares,
            critical_rate_p05_vouched: p05 >= VOUCH_CRITICAL_RATE_K_PER_S,
            critical_rate_p95_vouched: p95 >= VOUCH_CRITICAL_RATE_K_PER_S,
            log10_rates: y,
            probability_glassy_at: Vec::new(),
        })
    }
}

/// Draw `settings.draws` values of every input from a Latin hypercube in
/// the seed's order, run `model` on each (values per input, in the inputs'
/// order) in parallel, and summarise log10 of the critical rates it returns
/// (K/s): [`Drawn::new`], then [`Drawn::propagate`]. The same seed gives
/// the same numbers at any thread count: every uniform is drawn before any
/// model runs, and results are kept in draw order.
///
/// # Errors
/// A distribution that is not one; fewer than [`MIN_DRAWS`] draws; every
/// draw failing.
pub fn propagate<M>(
    inputs: &[UncertainInput],
    settings: Settings,
    quench_rate_k_per_s: Option<f64>,
    model: M,
) -> Result<Propagation, UncertaintyError>
where
    M: Fn(&[Vec<f64>]) -> Result<f64, String> + Sync,
{
    Drawn::new(inputs, settings)?.propagate(quench_rate_k_per_s, model)
}

/// The mean and the sum of squared deviations, computed about the first
/// value (so equal values give exactly zero, not round-off).
fn centred(y: &[f64]) -> (f64, f64) {
    let Some(&y0) = y.first() else {
        return (f64::NAN, 0.0);
    };
    let n = y.len() as f64;
    let shift = y.iter().map(|v| v - y0).sum::<f64>() / n;
    let ss = y
        .iter()
        .map(|v| (v - y0 - shift) * (v - y0 - shift))
        .sum::<f64>();
    (y0 + shift, ss)
}

/// The first-order index of one input from the joint sample (the
/// correlation ratio, Plischke et al. 2013): sort the draws by the input —
/// by its one coordinate, or for a group of correlated coefficients by the
/// least-squares linear predictor of y from the group's coordinates — cut
/// them into B = ⌊√n⌋ bins of (nearly) equal count, and take the between-bin
/// share of the variance with the one-way ANOVA bias removed:
/// S = (SSB − (B − 1) SSW/(n − B)) / SST, clipped to [0, 1]. An input y does
/// not depend on scores about 0; one that fixes y scores 1.
pub fn first_order_share(coords: &[&Vec<f64>], y: &[f64]) -> f64 {
    let n = y.len();
    let bins = (n as f64).sqrt().floor() as usize;
    if n < 8 || bins < 2 || coords.len() != n {
        return f64::NAN;
    }
    let (mean, sst) = centred(y);
    if sst <= 0.0 {
        return 0.0;
    }
    let d = coords[0].len();
    let score: Vec<f64> = if d == 1 {
        coords.iter().map(|c| c[0]).collect()
    } else {
        let x = DMatrix::from_fn(n, d + 1, |i, j| if j == 0 { 1.0 } else { coords[i][j - 1] });
        let b = DVector::from_column_slice(y);
        match x.clone().svd(true, true).solve(&b, 1e-12) {
            Ok(beta) => (&x * beta).iter().copied().collect(),
            Err(_) => return f64::NAN,
        }
    };
    let mut order: Vec<usize> = (0..n).collect();
    order.sort_by(|&a, &b| score[a].total_cmp(&score[b]).then(a.cmp(&b)));
    let (mut ssb, mut ssw) = (0.0, 0.0);
    for b in 0..bins {
        let (lo, hi) = (b * n / bins, (b + 1) * n / bins);
        let members = &order[lo..hi];
        let k = members.len() as f64;
        let m = members.iter().map(|&i| y[i]).sum::<f64>() / k;
        ssb += k * (m - mean) * (m - mean);
        ssw += members
            .iter()
            .map(|&i| (y[i] - m) * (y[i] - m))
            .sum::<f64>();
    }
    let corrected = ssb - (bins as f64 - 1.0) * ssw / (n - bins) as f64;
    (corrected / sst).clamp(0.0, 1.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_lower_bound_is_wilsons_score_bound_and_the_rule_of_three_at_the_edge() {
        // Source: Newcombe 1998 (Statistics in Medicine 17, 857), Table I,
        // Wilson score 95 % intervals (z = 1.96): 81/263 → 0.2553–0.3662,
        // 15/148 → 0.0624–0.1605 (from memory; four decimals).
        let z = statrs::distribution::ContinuousCDF::inverse_cdf(
            &statrs::distribution::Normal::standard(),
            0.975,
        );
        assert!((wilson_lower(81, 263, z) - 0.2553).abs() < 6e-5);
        assert!((wilson_lower(15, 148, z) - 0.0624).abs() < 6e-5);
        // Source: Φ⁻¹(0.95) = 1.6449 (any normal table).
        let z95 = statrs::distribution::ContinuousCDF::inverse_cdf(
            &statrs::distribution::Normal::standard(),
            0.95,
        );
        assert!((z95 - Z_ONE_SIDED_95).abs() < 1e-12);
        // Source: rule of three, Hanley & Lippman-Hand 1983 (JAMA 249,
        // 1743): N of N successes bound P ≥ 1 − 3/N at 95 %, a slightly
        // cautious stand-in for the exact one-sided Clopper–Pearson bound
        // 0.05^(1/N) (Clopper & Pearson 1934, Biometrika 26, 404).
        for n in [20usize, 40, 100, 1000] {
            let b = probability_lower95(n, n);
            assert!((b - (1.0 - 3.0 / n as f64)).abs() < 1e-15);
            assert!(b <= 0.05f64.powf(1.0 / n as f64));
            // One crystallised draw gives a lower bound still, below it.
            let one_less = probability_lower95(n - 1, n);
            assert!(one_less < b && one_less > 0.0, "{n}: {one_less} {b}");
        }
        assert_eq!(probability_lower95(0, 100), 0.0);
        // Never above the share itself.
        for k in 0..=50 {
            assert!(probability_lower95(k, 50) <= k as f64 / 50.0);
        }
    }

    fn normal(name: &str, mean: f64, sd: f64) -> UncertainInput {
        UncertainInput {
            name: name.into(),
            distribution: Distribution::Normal { mean, sd },
        }
    }

    #[test]
    fn shares_of_an_additive_model_are_its_variance_fractions() {
        // Source: for y = a z1 + b z2 with independent standard normals,
        // Var(E[y | z1]) / Var(y) = a²/(a² + b²) (variance of a sum of
        // independent terms; standard probability).
        let inputs = [normal("one", 0.0, 1.0), normal("two", 0.0, 1.0)];
        let p = propagate(
            &inputs,
            Settings {
                draws: 4000,
                seed: 3,
            },
            None,
            |v| Ok(10f64.powf(2.0 * v[0][0] + 1.0 * v[1][0])),
        )
        .unwrap();
        let s: Vec<f64> = p.variance_shares.iter().map(|s| s.share).collect();
        assert!((s[0] - 0.8).abs() < 0.03, "{s:?}");
        assert!((s[1] - 0.2).abs() < 0.03, "{s:?}");
        // Source: sd of 2 z1 + z2 is √5 (same rule).
        assert!((p.log10_critical_rate_sd - 5f64.sqrt()).abs() < 0.03 * 5f64.sqrt());
    }

    #[test]
    fn shares_of_a_linear_model_are_its_analytic_first_order_indices() {
        // Source: A. Saltelli et al., "Global Sensitivity Analysis: The
        // Primer" (Wiley 2008), the linear model: for Y = Σ a_i X_i with
        // independent X_i, S_i = a_i² Var X_i / Var Y. Here the three inputs
        // have the three kinds of distribution a propagation draws:
        // - a correlated pair (x1, x2), covariance [[1, 0.5], [0.5, 1]],
        //   entering as x1 + x2: Var = 1 + 1 + 2·0.5 = 3;
        // - N log-uniform on [1, e⁶], entering as ln N, uniform on [0, 6]:
        //   Var = 6²/12 = 3 (variance of a uniform, standard probability);
        // - z ~ N(5, 1), entering as 1.5 z: Var = 2.25.
        // Var Y = 8.25, so S = 3/8.25, 3/8.25, 2.25/8.25 = 0.364, 0.364,
        // 0.273, summing to 1 (no interactions).
        let inputs = [
            UncertainInput {
                name: "pair".into(),
                distribution: Distribution::MultiNormal {
                    mean: vec![0.0, 1.0],
                    covariance: vec![vec![1.0, 0.5], vec![0.5, 1.0]],
                },
            },
            UncertainInput {
                name: "nuclei".into(),
                distribution: Distribution::LogUniform {
                    lo: 1.0,
                    hi: 6f64.exp(),
                },
            },
            normal("z", 5.0, 1.0),
        ];
        let exact = [3.0 / 8.25, 3.0 / 8.25, 2.25 / 8.25];
        for seed in [1, 2, 3] {
            let p = propagate(&inputs, Settings { draws: 4000, seed }, None, |v| {
                Ok(10f64.powf(v[0][0] + v[0][1] + v[1][0].ln() + 1.5 * v[2][0]))
            })
            .unwrap();
            let s: Vec<f64> = p.variance_shares.iter().map(|s| s.share).collect();
            // Four standard errors: over 40 seeds the estimates had means
            // 0.361, 0.366, 0.269 and standard deviations 0.011, 0.012,
            // 0.009 (measured, 4000 draws), their sum about 0.02, and the
            // sample variance of Y 8.25 ± 0.17.
            for (got, want) in s.iter().zip(exact) {
                assert!((got - want).abs() < 0.05, "seed {seed}: {s:?} vs {exact:?}");
            }
            assert!((s.iter().sum::<f64>() - 1.0).abs() < 0.08, "{s:?}");
            // Source: same rule, Var Y = 8.25.
            assert!((p.log10_critical_rate_sd.powi(2) - 8.25).abs() < 4.0 * 0.17);
        }
    }

    #[test]
    fn a_correlated_pair_is_drawn_with_its_covariance() {
        // Source: a multivariate normal drawn as mean + L z, L L^T = C, has
        // covariance C (standard probability). y = x1 + x2 has variance
        // C11 + C22 + 2 C12 = 1 + 4 + 2·1.2 = 7.4.
        let inputs = [UncertainInput {
            name: "pair".into(),
            distribution: Distribution::MultiNormal {
                mean: vec![1.0, -1.0],
                covariance: vec![vec![1.0, 1.2], vec![1.2, 4.0]],
            },
        }];
        let p = propagate(
            &inputs,
            Settings {
                draws: 4000,
                seed: 11,
            },
            None,
            |v| Ok(10f64.powf(v[0][0] + v[0][1])),
        )
        .unwrap();
        let var = p.log10_critical_rate_sd.powi(2);
        // Var of a sample variance of a normal: 2σ⁴/(n−1); 4 SE.
        assert!(
            (var - 7.4).abs() < 4.0 * 7.4 * (2.0 / 3999f64).sqrt(),
            "{var}"
        );
        assert!(p.log10_critical_rate_mean.abs() < 0.05);
        assert!(p.variance_shares[0].share > 0.97);
        // A singular covariance (one coefficient fixed) is drawn through its
        // eigen-decomposition: only the first coordinate varies.
        let fixed = [UncertainInput {
            name: "pair".into(),
            distribution: Distribution::MultiNormal {
                mean: vec![0.0, 2.0],
                covariance: vec![vec![1.0, 0.0], vec![0.0, 0.0]],
            },
        }];
        let p = propagate(
            &fixed,
            Settings {
                draws: 100,
                seed: 1,
            },
            None,
            |v| {
                assert!((v[0][1] - 2.0).abs() < 1e-12);
                Ok(10f64.powf(v[0][0]))
            },
        )
        .unwrap();
        assert!(p.log10_critical_rate_sd > 0.5);
    }

    #[test]
    fn bad_distributions_and_failed_draws_are_reported() {
        let e = propagate(
            &[normal("alpha", 0.3, -0.1)],
            Settings { draws: 50, seed: 1 },
            None,
            |_| Ok(1.0),
        )
        .unwrap_err();
        assert!(e.to_string().contains("alpha"), "{e}");
        let e = propagate(
            &[UncertainInput {
                name: "nuclei".into(),
                distribution: Distribution::LogUniform { lo: 0.0, hi: 1e6 },
            }],
            Settings { draws: 50, seed: 1 },
            None,
            |_| Ok(1.0),
        )
        .unwrap_err();
        assert!(e.to_string().contains("0 < lo"), "{e}");
        let refuse_below = |cut: f64| {
            move |v: &[Vec<f64>]| {
                if v[0][0] < cut {
                    Err("refused".to_string())
                } else {
                    Ok(0.5)
                }
            }
        };
        // Exactly half the strata of a Latin hypercube lie below the median:
        // far more failures than allowed.
        let e = propagate(
            &[normal("alpha", 0.0, 1.0)],
            Settings {
                draws: 100,
                seed: 1,
            },
            Some(1.0),
            refuse_below(0.0),
        )
        .unwrap_err();
        assert!(
            matches!(
                e,
                UncertaintyError::TooManyFailed {
                    failed: 50,
                    draws: 100,
                    ..
                }
            ),
            "{e}"
        );
        // Only the first of the 100 strata reaches below −2.33 (Φ(−2.33) ≈
        // 0.0099): with this seed its draw does, so one draw fails (1 %, the
        // most allowed) and counts as not glassy.
        let p = propagate(
            &[normal("alpha", 0.0, 1.0)],
            Settings {
                draws: 100,
                seed: 1,
            },
            Some(1.0),
            refuse_below(-2.33),
        )
        .unwrap();
        assert_eq!(p.failed_draws, 1);
        assert_eq!(p.probability_glassy, Some(0.99));
        assert!(matches!(
            propagate(&[], Settings { draws: 5, seed: 1 }, None, |_| Ok(1.0)),
            Err(UncertaintyError::TooFewDraws(5))
        ));
    }
}
