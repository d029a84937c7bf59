//! The adaptive quadrature of the kinetic integrals, and the Gauss–Legendre
//! panels with a spectral integration matrix it is built on.
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

use super::rates::{SplitRates, PRECISE_LINEAR};
use super::ttt::solve_quartic_cubic;
use super::KineticsError;
use std::f64::consts::PI;
use std::sync::OnceLock;

/// Nodes per panel.
pub(crate) const NODES: usize = 8;

/// A Gauss–Legendre rule on [-1, 1] with its integration matrix.
#[derive(Debug)]
pub(crate) struct Rule {
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
pub(crate) fn rule() -> &'static Rule {
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
    pub(crate) fn nodes_on(&self, lo: f64, hi: f64) -> [f64; NODES] {
        let (m, h) = (0.5 * (lo + hi), 0.5 * (hi - lo));
        self.x.map(|x| m + h * x)
    }
}

/// Cooling-rate law for the integrals.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Cooling {
    /// dT/dt = −R, constant.
    Constant,
    /// dT/dt = −k (T − T_s): Newtonian cooling towards T_s.
    Newtonian { surface: f64 },
}

/// Integrals along a cooling law, in logarithms: J and the total growth length.
#[derive(Debug, Clone, Copy)]
pub(super) struct CoolingIntegrals {
    /// ln J, J = ∫ I w [∫ U w]³ dT, w the rate-shape factor (1 or 1/(T − T_s)).
    pub(super) ln_j: f64,
    /// ln ∫_{T_e}^{T_L} U w dT.
    pub(super) ln_g_total: f64,
    /// The node with the shortest isothermal time to X_c, as (temperature,
    /// −ln y, half-width of its panel) ([`nose_node`]): the nose bracket.
    pub(super) nose_guess: (f64, f64, f64),
    /// Number of temperatures at which I and U were evaluated.
    pub(super) evaluations: usize,
}

/// Where a finished quadrature left its panels, with I and U at their
/// nodes before any rate-shape factor, so that the integrals along a second
/// cooling law start from them instead of from two bare panels: the rates,
/// which cost most, are not evaluated again, and refinement goes on from
/// there with the same rule (docs/science.md, "The adaptive Gauss–Legendre
/// quadrature").
#[derive(Debug, Clone, Default)]
pub(super) struct Layout {
    panels: Vec<RawPanel>,
}

#[derive(Debug, Clone)]
struct RawPanel {
    lo: f64,
    hi: f64,
    rates: [SplitRates; NODES],
}

impl Cooling {
    /// The rate-shape factor at temperature t.
    fn shape(self, t: f64) -> f64 {
        match self {
            Cooling::Constant => 1.0,
            Cooling::Newtonian { surface } => 1.0 / (t - surface),
        }
    }
}

/// Largest number of panels the adaptive quadrature may use.
const MAX_PANELS: usize = 512;

/// Refinement rule of the adaptive quadrature. The defaults meet the 0.1 %
/// target for R_c: within a quarter of it on the curated families of
/// tests/kinetics_reference.rs, within 0.84 of it (8.4e-4) on 300 random
/// melts and options; the tests tighten them to show convergence.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct QuadratureSettings {
    /// Panels laid evenly across [T_e, T_L] before refinement.
    pub initial_panels: usize,
    /// A panel is halved when its log-integrand varies by more than this (nats).
    pub log_range_split: f64,
    /// A panel feeding the running growth integral is halved when ln U varies by
    /// more than this across it: the running integral at interior nodes is less
    /// accurate than the panel integral, so this is tighter.
    pub growth_log_range_split: f64,
    /// Panels whose share of the integral is below this are never refined.
    pub negligible_share: f64,
}

impl Default for QuadratureSettings {
    fn default() -> Self {
        QuadratureSettings {
            initial_panels: 2,
            log_range_split: 24.0,
            growth_log_range_split: 6.0,
            negligible_share: 1e-5,
        }
    }
}

/// One Gauss–Legendre panel of the adaptive quadrature, with everything that
/// does not change when other panels are refined.
#[derive(Clone, Copy)]
struct Panel {
    lo: f64,
    hi: f64,
    /// I and U at the nodes, before the rate-shape factor.
    rates: [SplitRates; NODES],
    /// The rate-shape factor at the nodes.
    shape: [f64; NODES],
    /// I and U times the shape, scaled by exp(−shift), so no logarithm is
    /// needed per refinement.
    i_lin: [f64; NODES],
    u_lin: [f64; NODES],
    /// Running ∫ U from the panel start to each node, scaled (S·u, without h/2).
    g_inc: [f64; NODES],
    /// ∫ U over the panel, scaled (w·u, without h/2).
    g_tot: f64,
    /// max / min of U over the nodes (e^(range of ln U)).
    u_spread: f64,
}

impl Panel {
    /// A panel to be filled in place (its span, rates and shape, as
    /// [`Quadrature::fill_panel`] does, then [`Quadrature::scale_panel`]).
    const BLANK: Panel = Panel {
        lo: 0.0,
        hi: 0.0,
        rates: [SplitRates::NONE; NODES],
        shape: [1.0; NODES],
        i_lin: [0.0; NODES],
        u_lin: [0.0; NODES],
        g_inc: [0.0; NODES],
        g_tot: 0.0,
        u_spread: 1.0,
    };

    /// ln I and ln U (times the shape) at node j.
    fn logs(&self, j: usize) -> (f64, f64) {
        let (r, w) = (&self.rates[j], self.shape[j]);
        (r.ln_i + (r.m * w).ln(), r.ln_u + (r.m * r.f * w).ln())
    }
}

/// The working buffers of the adaptive quadrature, kept per thread.
#[derive(Default)]
struct Scratch {
    panels: Vec<Panel>,
    /// I·G³ at the nodes of each panel.
    f: Vec<[f64; NODES]>,
    /// Each panel's estimate of the integral.
    share: Vec<f64>,
    /// The running growth integral at each panel's end.
    g_end: Vec<f64>,
    /// How many pieces each panel is cut into.
    split: Vec<usize>,
}

thread_local! {
    static SCRATCH: std::cell::RefCell<Scratch> = std::cell::RefCell::default();
}

/// This thread's [`Scratch`] while a quadrature uses it; handed back on drop.
struct HeldScratch(Scratch);

impl Drop for HeldScratch {
    fn drop(&mut self) {
        let scratch = std::mem::take(&mut self.0);
        // (During thread teardown the slot may be gone: the buffers just go.)
        let _ = SCRATCH.try_with(|s| *s.borrow_mut() = scratch);
    }
}

/// Common scale factors of the linear values: I·exp(−i_shift), U·exp(−u_shift).
#[derive(Clone, Copy)]
struct Shifts {
    i: f64,
    u: f64,
}

/// Integrand values below this fraction of the largest one are treated as zero
/// when judging whether a panel is resolved.
const NEGLIGIBLE_NODE: f64 = 1e-14;

/// How far above its shift a log value may go before the linear copies are rebuilt.
const SHIFT_HEADROOM: f64 = 600.0;

/// The adaptive quadrature, independent of where I(T) and U(T) come from.
pub(super) struct Quadrature;

impl Quadrature {
    /// Set `p` to the panel [lo, hi]: I and U and the rate-shape factor at
    /// its nodes (its linear values are filled by [`Quadrature::scale_panel`]).
    /// Panels are filled where they are kept: one is half a kilobyte.
    fn fill_panel<R: Fn(f64) -> SplitRates>(
        p: &mut Panel,
        rates: &R,
        rule: &Rule,
        (lo, hi): (f64, f64),
        cooling: Cooling,
    ) {
        let ts = rule.nodes_on(lo, hi);
        p.lo = lo;
        p.hi = hi;
        for ((r, w), &t) in p.rates.iter_mut().zip(&mut p.shape).zip(&ts) {
            *r = rates(t);
            *w = cooling.shape(t);
        }
    }

    /// Append the panel [lo, hi] to `panels` (see [`Quadrature::fill_panel`]).
    fn push_panel<R: Fn(f64) -> SplitRates>(
        panels: &mut Vec<Panel>,
        rates: &R,
        rule: &Rule,
        span: (f64, f64),
        cooling: Cooling,
    ) {
        panels.push(Panel::BLANK);
        let at = panels.len() - 1;
        Quadrature::fill_panel(&mut panels[at], rates, rule, span, cooling);
    }

    /// Fill the scaled linear values of a panel, and its range of ln U.
    fn scale_panel(rule: &Rule, p: &mut Panel, sh: Shifts) {
        for j in 0..NODES {
            let (r, w) = (&p.rates[j], p.shape[j]);
            p.i_lin[j] = (r.ln_i - sh.i).exp() * (r.m * w);
            p.u_lin[j] = (r.ln_u - sh.u).exp() * (r.m * r.f * w);
        }
        let u = &p.u_lin;
        for i in 0..NODES {
            p.g_inc[i] = (0..NODES).map(|j| rule.s[i][j] * u[j]).sum();
        }
        p.g_tot = (0..NODES).map(|j| rule.w[j] * u[j]).sum();
        // The spread of U from the linear values, with no logarithm. Where
        // the smallest value is too small to be held to full precision the
        // logarithms at every node give it, unless it is zero beside a
        // precise largest one: the range of ln U is then beyond 76 nats (or
        // ∞ for a node that does not grow), more than any split decision
        // tells apart.
        let (mn, mx) = u
            .iter()
            .fold((f64::INFINITY, 0.0f64), |(a, b), &x| (a.min(x), b.max(x)));
        p.u_spread = if mn >= PRECISE_LINEAR || (mn == 0.0 && mx >= PRECISE_LINEAR) {
            mx / mn
        } else {
            let (mn, mx) = (0..NODES)
                .map(|j| p.logs(j).1)
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
                    (a.min(x), b.max(x))
                });
            (mx - mn).exp()
        };
    }

    /// J and the total growth integral along a cooling law, by adaptive panels.
    ///
    /// `ttt` = (ln((4π/3) N_h), ln X_c) locates the TTT nose among the nodes.
    pub(super) fn cooling_integrals_with<R: Fn(f64) -> SplitRates>(
        rates: &R,
        window: (f64, f64),
        cooling: Cooling,
        q: &QuadratureSettings,
        ttt: (f64, f64),
    ) -> Result<CoolingIntegrals, KineticsError> {
        Quadrature::cooling_integrals_seeded(rates, window, cooling, q, ttt, None, None, None)
    }

    /// As [`Quadrature::cooling_integrals_with`], starting from the panels of
    /// `seed` (a layout over the same window) when given, and leaving the final
    /// panels in `keep` when given. A `kink` inside the window (a temperature
    /// where the rates are continuous but their slope is not, as at the
    /// decoupling temperature) becomes a panel edge: a Gauss–Legendre panel
    /// across a kink converges only slowly (docs/science.md, "The adaptive
    /// Gauss–Legendre quadrature").
    #[allow(clippy::too_many_arguments)]
    pub(super) fn cooling_integrals_seeded<R: Fn(f64) -> SplitRates>(
        rates: &R,
        (a, b): (f64, f64),
        cooling: Cooling,
        q: &QuadratureSettings,
        ttt: (f64, f64),
        kink: Option<f64>,
        seed: Option<&Layout>,
        keep: Option<&mut Layout>,
    ) -> Result<CoolingIntegrals, KineticsError> {
        // The working buffers of this thread, held for the call and handed
        // back when it returns (or unwinds), so a screen allocates them once
        // per thread, not per phase of every candidate.
        let mut held = HeldScratch(SCRATCH.with(|s| std::mem::take(&mut *s.borrow_mut())));
        let rule = rule();
        let n0 = q.initial_panels.max(1);
        let Scratch {
            panels,
            f,
            share,
            g_end,
            split,
        } = &mut held.0;
        panels.clear();
        let mut evaluations = match seed {
            Some(l) if !l.panels.is_empty() => {
                // A seed comes from a quadrature over the same window with the
                // same kink, so the kink is already one of its edges.
                debug_assert!(kink
                    .filter(|&t| t > a && t < b)
                    .is_none_or(|t| l.panels.iter().any(|r| r.hi == t)));
                panels.resize(l.panels.len(), Panel::BLANK);
                for (p, r) in panels.iter_mut().zip(&l.panels) {
                    let ts = rule.nodes_on(r.lo, r.hi);
                    p.lo = r.lo;
                    p.hi = r.hi;
                    p.rates = r.rates;
                    p.shape = ts.map(|t| cooling.shape(t));
                }
                0
            }
            _ => {
                // Even edges a + (b − a)k/n0. A kink replaces the nearest inner
                // edge, or is added beside a window end when that edge is one.
                let edge = |k: usize| a + (b - a) * k as f64 / n0 as f64;
                let kink = kink
                    .filter(|&t| t > a && t < b)
                    .map(|t| (t, (((t - a) / (b - a)) * n0 as f64).round() as usize));
                let mut lo = a;
                for k in 1..=n0 {
                    let mut hi = edge(k);
                    if let Some((t, nearest)) = kink {
                        if nearest == k && k < n0 {
                            hi = t;
                        } else if (nearest == 0 && k == 1) || (nearest == n0 && k == n0) {
                            Quadrature::push_panel(panels, rates, rule, (lo, t), cooling);
                            lo = t;
                        }
                    }
                    Quadrature::push_panel(panels, rates, rule, (lo, hi), cooling);
                    lo = hi;
                }
                panels.len() * NODES
            }
        };
        let keep_layout = |panels: &[Panel], keep: Option<&mut Layout>| {
            if let Some(k) = keep {
                k.panels.clear();
                k.panels.extend(panels.iter().map(|p| RawPanel {
                    lo: p.lo,
                    hi: p.hi,
                    rates: p.rates,
                }));
            }
        };
        let min_width = (b - a) * 1e-9;
        // The shifts are the largest split logarithms (ln I and ln U without
        // their factors m, f and w), far from where the linear values overflow.
        let max_of = |panels: &[Panel], f: fn(&SplitRates) -> f64| {
            panels
                .iter()
                .flat_map(|p| p.rates.iter().map(f))
                .fold(f64::NEG_INFINITY, f64::max)
        };
        let mut sh = Shifts {
            i: max_of(panels, |r| r.ln_i),
            u: max_of(panels, |r| r.ln_u),
        };
        if !sh.u.is_finite() {
            return Err(KineticsError::Numerical(
                "growth rate vanishes across the kinetic window".into(),
            ));
        }
        if !sh.i.is_finite() {
            // No nucleation anywhere: J = 0; only pre-existing nuclei can crystallise.
            sh.i = 0.0;
            for p in panels.iter_mut() {
                Quadrature::scale_panel(rule, p, sh);
            }
            let g: f64 = panels.iter().map(|p| 0.5 * (p.hi - p.lo) * p.g_tot).sum();
            keep_layout(panels, keep);
            return Ok(CoolingIntegrals {
                ln_j: f64::NEG_INFINITY,
                ln_g_total: sh.u + g.ln(),
                nose_guess: (0.5 * (a + b), f64::NEG_INFINITY, b - a),
                evaluations,
            });
        }
        for p in panels.iter_mut() {
            Quadrature::scale_panel(rule, p, sh);
        }
        loop {
            // Running growth integral G and the integrand F = I G³ at every node.
            f.clear();
            share.clear();
            g_end.clear();
            let mut g_start = 0.0;
            for p in panels.iter() {
                let h = 0.5 * (p.hi - p.lo);
                let fp: [f64; NODES] = std::array::from_fn(|i| {
                    // The interpolant of a steep U can dip below zero near the panel start.
                    let g = (g_start + h * p.g_inc[i]).max(0.0);
                    p.i_lin[i] * g * g * g
                });
                share.push(h * (0..NODES).map(|i| rule.w[i] * fp[i]).sum::<f64>());
                f.push(fp);
                g_start += h * p.g_tot;
                g_end.push(g_start);
            }
            let total: f64 = share.iter().sum();
            if total.is_nan() || total <= 0.0 || total.is_infinite() {
                return Err(KineticsError::Numerical(format!(
                    "continuous-cooling integral is {total} on {} panels",
                    panels.len()
                )));
            }
            // Highest panel that carries weight: growth above it does not matter.
            let floor = q.negligible_share * total;
            let top = share.iter().rposition(|&s| s > floor).unwrap_or(0);
            let g_floor = q.negligible_share * g_end[top];
            let split_at = q.log_range_split;
            // The thresholds as ratios: a logarithm is taken only for a panel
            // that is cut, to count its pieces.
            let (f_spread_max, u_spread_max) = (split_at.exp(), q.growth_log_range_split.exp());
            // How many pieces each panel is cut into (1 = kept): enough that the
            // measured log range per piece falls to the threshold, at most 8.
            let f_peak = f.iter().flat_map(|v| v.iter().copied()).fold(0.0, f64::max);
            split.clear();
            split.resize(panels.len(), 1);
            let mut any = false;
            for (k, p) in panels.iter().enumerate() {
                if p.hi - p.lo < min_width {
                    continue;
                }
                // A coarse panel can hide a peak between its nodes, so judge its
                // weight by its largest node value times its width, not by its estimate.
                let (mn, mx) = f[k]
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                        (a.min(x), b.max(x))
                    });
                // Node values far below the global peak need no resolving.
                let f_spread = mx / mn.max(f_peak * NEGLIGIBLE_NODE);
                let weighty = (p.hi - p.lo) * mx > floor && f_spread > f_spread_max;
                let g_here = 0.5 * (p.hi - p.lo) * p.g_tot;
                let feeds = k <= top && g_here > g_floor && p.u_spread > u_spread_max;
                let mut pieces: f64 = 1.0;
                if weighty {
                    pieces = pieces.max(f_spread.ln() / split_at);
                }
                if feeds {
                    pieces = pieces.max(p.u_spread.ln() / q.growth_log_range_split);
                }
                if weighty || feeds {
                    split[k] = (pieces.ceil() as usize).clamp(2, 8);
                    any = true;
                }
            }
            if !any || panels.len() >= MAX_PANELS {
                // Nose guess: the node with the shortest isothermal time to X_c.
                let nose = nose_node(rule, panels, a, ttt, sh);
                keep_layout(panels, keep);
                return Ok(CoolingIntegrals {
                    ln_j: sh.i + 3.0 * sh.u + total.ln(),
                    ln_g_total: sh.u + g_start.ln(),
                    nose_guess: nose,
                    evaluations,
                });
            }
            // Cut in place, from the top down (so the rates are asked for
            // the new nodes in falling temperature; they are a function of
            // temperature alone): panel k's pieces go to
            // [Σ_{i<k} split_i, Σ_{i≤k} split_i), never below k, so every
            // panel is read before its slot is written, panels below the
            // first cut do not move, and each new piece is filled where it
            // stays.
            let old = panels.len();
            let mut at: usize = split.iter().sum();
            panels.resize(at, Panel::BLANK);
            let mut rebase = false;
            for k in (0..old).rev() {
                let pieces = split[k];
                if pieces == 1 {
                    at -= 1;
                    if at != k {
                        panels[at] = panels[k];
                    }
                    continue;
                }
                let (plo, phi) = (panels[k].lo, panels[k].hi);
                let w = (phi - plo) / pieces as f64;
                for j in (0..pieces).rev() {
                    let lo = plo + w * j as f64;
                    let hi = if j + 1 == pieces { phi } else { lo + w };
                    at -= 1;
                    let p = &mut panels[at];
                    Quadrature::fill_panel(p, rates, rule, (lo, hi), cooling);
                    let (mi, mu) = p
                        .rates
                        .iter()
                        .fold((f64::NEG_INFINITY, f64::NEG_INFINITY), |(a, b), r| {
                            (a.max(r.ln_i), b.max(r.ln_u))
                        });
                    if mi > sh.i + SHIFT_HEADROOM || mu > sh.u + SHIFT_HEADROOM {
                        rebase = true;
                    }
                    Quadrature::scale_panel(rule, p, sh);
                }
                evaluations += pieces * NODES;
            }
            debug_assert_eq!(at, 0);
            if rebase {
                sh = Shifts {
                    i: max_of(panels, |r| r.ln_i),
                    u: max_of(panels, |r| r.ln_u),
                };
                for p in panels.iter_mut() {
                    Quadrature::scale_panel(rule, p, sh);
                }
            }
        }
    }
}

/// The node of `panels` with the shortest isothermal time to X_c, as
/// (temperature, −ln y, half-width of its panel), y the time solving
/// A y⁴ + B y³ = X_c with A = (π/3) I U³ and B = ttt.0 · U³ (`ttt` =
/// (ln((4π/3) N_h), ln X_c)); (`a`, −∞, 0) when no node grows. `sh` are the
/// shifts of the panels' linear values.
///
/// Solving for y takes Newton iterations at every node, so nodes that cannot
/// win are ruled out first by bounds that need none: with h = the smaller of
/// the two one-term solutions ((X/A)^¼, (X/B)^⅓) in logarithms, ln y ≤ h, and
/// since one term carries at least X/2 at the root, ln y ≥ h − (ln 2)/3. A
/// node whose lower bound lies above the least upper bound is slower than
/// the fastest node, so only the others are solved; the node found is the
/// one solving every node would give.
///
/// The least upper bound is the smaller of the one-term solutions at the
/// node with the largest I U³ and at the node with the largest U, and a node
/// can pass the cut only if its I U³ or its U reaches a threshold: both are
/// found on the linear values, so logarithms are taken at those nodes alone
/// (at every node when the linear values cannot be scaled to at most one: a
/// largest value that is zero, subnormal or infinite).
fn nose_node(
    rule: &Rule,
    panels: &[Panel],
    a: f64,
    ttt: (f64, f64),
    sh: Shifts,
) -> (f64, f64, f64) {
    let ln_pi_3 = (PI / 3.0).ln();
    let upper = |(ln_i, ln_u): (f64, f64)| {
        let ln_u3 = 3.0 * ln_u;
        ((ttt.1 - (ln_pi_3 + ln_i + ln_u3)) / 4.0).min((ttt.1 - (ttt.0 + ln_u3)) / 3.0)
    };
    // The node's bound, ∞ for a node that does not grow.
    let upper_at = |p: &Panel, j: usize| {
        let logs = p.logs(j);
        if logs.1 == f64::NEG_INFINITY {
            f64::INFINITY
        } else {
            upper(logs)
        }
    };
    // The linear values divided by their largest, I' and U' in [0, 1]:
    // the shifts need not be the maxima (refinement rebuilds them only 600
    // nats beyond), and I'·U'³ can then neither overflow nor be 0·∞.
    // One pass: the largest I and U, and the nodes with the largest I·U³
    // and U on the values as they are (an overflowed or NaN product only
    // picks a node whose bound is not the least, which lowers the
    // thresholds below: more nodes are solved, none is missed).
    let (mut top_i, mut top_u) = (0.0f64, 0.0f64);
    let mut best_iu3 = (0.0, 0, 0);
    let mut best_u = (0.0, 0, 0);
    for (k, p) in panels.iter().enumerate() {
        for j in 0..NODES {
            let (i, u) = (p.i_lin[j], p.u_lin[j]);
            top_i = top_i.max(i);
            top_u = top_u.max(u);
            let iu3 = i * u * u * u;
            if iu3 > best_iu3.0 {
                best_iu3 = (iu3, k, j);
            }
            if u > best_u.0 {
                best_u = (u, k, j);
            }
        }
    }
    let scalable = top_i >= f64::MIN_POSITIVE
        && top_u >= f64::MIN_POSITIVE
        && top_i.is_finite()
        && top_u.is_finite();
    let (to_i, to_u) = (1.0 / top_i, 1.0 / top_u);
    // The best nodes' I'·U'³ and U', scaled.
    let scaled = |(_, k, j): (f64, usize, usize)| {
        let p: &Panel = &panels[k];
        let (i, u) = (p.i_lin[j] * to_i, p.u_lin[j] * to_u);
        (i * u * u * u, u)
    };
    let (best_iu3_scaled, best_u_scaled) = (scaled(best_iu3).0, scaled(best_u).1);
    // I'·U'³ can be far below 1 at every node (I and U peak apart); the
    // unit of I'' = I'/(the best I'·U'³) puts the best node at 1.
    let precise = scalable && best_iu3_scaled > 0.0 && best_u_scaled > 0.0;
    let to_i2 = to_i / best_iu3_scaled;
    let least_upper = if precise {
        upper_at(&panels[best_iu3.1], best_iu3.2).min(upper_at(&panels[best_u.1], best_u.2))
    } else {
        panels
            .iter()
            .flat_map(|p| (0..NODES).map(move |j| upper_at(p, j)))
            .fold(f64::INFINITY, f64::min)
    };
    // Far more than the rounding of Newton's root, far less than (ln 2)/3.
    let cut = least_upper + 1e-9 * (1.0 + least_upper.abs()) + std::f64::consts::LN_2 / 3.0;
    // Within the cut: ln(I U³) ≥ ln X_c − ln(π/3) − 4 cut, or
    // ln U ≥ (ln X_c − ttt.0 − 3 cut)/3; as thresholds on I''·U'³ and U',
    // lowered far beyond their rounding. They lie near 1 (the best node's
    // values, within a factor 2^(4/3)), far above the normal range's floor,
    // so comparisons with normal values are exact to rounding. A node whose
    // U' has underflowed has I''·U'³ below 2.2e-308³/2.2e-308, under the
    // threshold; one whose I' has underflowed has I''·U'³ below
    // 2.2e-308/(the best I'·U'³), under it when that is small enough
    // (`tiny_i_slower`), else it is solved.
    let (iu3_least, u_least) = if precise {
        let ln_unit_i = sh.i + top_i.ln() + best_iu3_scaled.ln();
        let ln_top_u = sh.u + top_u.ln();
        (
            (ttt.1 - ln_pi_3 - 4.0 * cut - ln_unit_i - 3.0 * ln_top_u).exp() * (1.0 - 1e-6),
            ((ttt.1 - ttt.0 - 3.0 * cut) / 3.0 - ln_top_u).exp() * (1.0 - 1e-6),
        )
    } else {
        (0.0, 0.0)
    };
    let tiny_i_slower = f64::MIN_POSITIVE / best_iu3_scaled < iu3_least;
    // (Without short-circuits: the tests mix from node to node, and the
    // branches cost more than the arithmetic.)
    let surely_slower = |r: &SplitRates, i: f64, u: f64| {
        let u = u * to_u;
        let tiny_i = i * to_i < f64::MIN_POSITIVE;
        let small_iu3 = (r.ln_i == f64::NEG_INFINITY)
            | (u < f64::MIN_POSITIVE)
            | (tiny_i & tiny_i_slower)
            | (!tiny_i & (i * to_i2 * u * u * u < iu3_least));
        precise & small_iu3 & (u < u_least)
    };
    let mut nose = (a, f64::NEG_INFINITY, 0.0);
    for p in panels {
        let ts = rule.nodes_on(p.lo, p.hi);
        for (j, (&t, (&i, &u))) in ts.iter().zip(p.i_lin.iter().zip(&p.u_lin)).enumerate() {
            // (NaN values and thresholds never rule a node out.)
            if surely_slower(&p.rates[j], i, u) {
                continue;
            }
            let (ln_i, ln_u) = p.logs(j);
            let ln_u3 = 3.0 * ln_u;
            if ln_u3 == f64::NEG_INFINITY || upper((ln_i, ln_u)) > cut {
                continue;
            }
            let v = -solve_quartic_cubic(ln_pi_3 + ln_i + ln_u3, ttt.0 + ln_u3, ttt.1);
            if v > nose.1 {
                nose = (t, v, 0.5 * (p.hi - p.lo));
            }
        }
    }
    nose
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Logarithms of order 1000 (and ranges of them), to rounding.
    const RANGE_ATOL: f64 = 1e-10;

    #[test]
    fn the_nose_node_is_the_one_solving_every_node_gives() {
        // Every node solved, as the bounds and linear thresholds in nose_node
        // skip; random split rates over wide ranges (a SplitMix-style
        // generator, fixed seed), with random factors, with and without
        // pre-existing nuclei, some nodes not growing, in a third of the
        // cases I and U so opposed that the largest scaled I·U³ underflows
        // (the path that takes every node's logarithms), and shifts up to
        // 600 nats below the largest values as refinement can leave them
        // (so that I underflows where U is large).
        // Source: the rule itself, every node solved.
        let rule = rule();
        let mut next = crate::numeric::split_mix(0x1234_5678_9abc_def0u64);
        let ln_pi_3 = (PI / 3.0).ln();
        for case in 0..600 {
            let ttt = (
                if case % 2 == 0 {
                    f64::NEG_INFINITY
                } else {
                    (4.0 * PI / 3.0 * 10f64.powf(12.0 * next())).ln()
                },
                1e-6f64.ln(),
            );
            let mut panels: Vec<Panel> = (0..1 + case % 9)
                .map(|k| {
                    let lo = 700.0 + 50.0 * k as f64;
                    let rates = std::array::from_fn(|_| {
                        // Close values often, so near-ties are tried too.
                        let spread = if case % 3 == 0 { 0.1 } else { 80.0 };
                        let x = next();
                        let (ln_i, ln_u) = if case % 3 == 1 {
                            // Up to 1500 nats of I: where U is largest, I
                            // underflows against a shift
                            // (and I·U³ is largest where I is least).
                            if case % 6 == 4 {
                                (-20.0 + 1500.0 * x, -30.0 - 600.0 * x)
                            } else {
                                (-20.0 + 400.0 * x, -30.0 - 400.0 * x)
                            }
                        } else {
                            (-20.0 + spread * x, -30.0 + spread * 0.2 * next())
                        };
                        SplitRates {
                            ln_i,
                            ln_u: if next() < 0.05 {
                                f64::NEG_INFINITY
                            } else {
                                ln_u
                            },
                            m: 1.0 + 3000.0 * next(),
                            f: (-18.0 * next()).exp(),
                        }
                    });
                    let shape = std::array::from_fn(|_| {
                        if case % 4 == 0 {
                            1.0
                        } else {
                            0.001 + 0.01 * next()
                        }
                    });
                    Panel {
                        lo,
                        hi: lo + 50.0,
                        rates,
                        shape,
                        ..Panel::BLANK
                    }
                })
                .collect();
            let max_of = |f: fn(&SplitRates) -> f64| {
                panels
                    .iter()
                    .flat_map(|p| p.rates.iter().map(f))
                    .fold(f64::NEG_INFINITY, f64::max)
            };
            let (stale_i, stale_u) = if case % 5 == 2 || case % 6 == 4 {
                (600.0 * next(), 600.0 * next())
            } else {
                (0.0, 0.0)
            };
            let sh = Shifts {
                i: max_of(|r| r.ln_i) - stale_i,
                u: max_of(|r| r.ln_u) - stale_u,
            };
            for p in panels.iter_mut() {
                Quadrature::scale_panel(rule, p, sh);
            }
            let mut every = (600.0, f64::NEG_INFINITY, 0.0);
            for p in &panels {
                let ts = rule.nodes_on(p.lo, p.hi);
                for (j, &t) in ts.iter().enumerate() {
                    let (ln_i, ln_u) = p.logs(j);
                    // The logarithms the rule uses are ln I and ln U term by
                    // term, with the cooling law's weight.
                    let (r, w) = (&p.rates[j], p.shape[j]);
                    let by_terms = (
                        r.ln_i + r.m.ln() + w.ln(),
                        r.ln_u + r.m.ln() + r.f.ln() + w.ln(),
                    );
                    for (a, b) in [(ln_i, by_terms.0), (ln_u, by_terms.1)] {
                        assert!(
                            a == b || (a - b).abs() <= RANGE_ATOL,
                            "case {case}: {a} vs {b}"
                        );
                    }
                    let ln_u3 = 3.0 * ln_u;
                    if ln_u3 == f64::NEG_INFINITY {
                        continue;
                    }
                    let v = -solve_quartic_cubic(ln_pi_3 + ln_i + ln_u3, ttt.0 + ln_u3, ttt.1);
                    if v > every.1 {
                        every = (t, v, 0.5 * (p.hi - p.lo));
                    }
                }
            }
            let found = nose_node(rule, &panels, 600.0, ttt, sh);
            assert_eq!(found, every, "case {case}");
        }
    }

    #[test]
    fn the_range_of_ln_u_is_the_same_from_linear_values_and_from_logarithms() {
        // Source: the definition, max − min of ln U over a panel's nodes
        // (ln U summed from its split terms and the cooling law's weight),
        // against scale_panel's ratio of linear values, for shifts that put
        // the values anywhere from full precision to underflow; where a
        // value underflows only the decision it feeds (the range exceeds
        // what splits a panel into the most pieces, 8 × 6 nats) must agree.
        let rule = rule();
        let mut next = crate::numeric::split_mix(0x07a1_19e5_u64);
        for case in 0..3000 {
            let spread = [0.5, 20.0, 300.0, 1000.0][case % 4];
            let rates = std::array::from_fn(|_| SplitRates {
                ln_i: -10.0,
                ln_u: if next() < 0.03 {
                    f64::NEG_INFINITY
                } else {
                    -30.0 - spread * next()
                },
                m: 1.0 + 3000.0 * next(),
                f: (-18.0 * next()).exp(),
            });
            let shape: [f64; NODES] = if case % 3 == 0 {
                [1.0; NODES]
            } else {
                std::array::from_fn(|_| 1e-4 + 0.01 * next())
            };
            let mut p = Panel {
                lo: 700.0,
                hi: 750.0,
                rates,
                shape,
                ..Panel::BLANK
            };
            let sh = Shifts {
                i: -10.0,
                u: -30.0 + 800.0 * next() - 200.0,
            };
            Quadrature::scale_panel(rule, &mut p, sh);
            // ln U = ℓ_U + ln m + ln f + ln w, term by term.
            let logs: Vec<f64> = (0..NODES)
                .map(|j| {
                    let r = &p.rates[j];
                    r.ln_u + r.m.ln() + r.f.ln() + p.shape[j].ln()
                })
                .collect();
            let exact = logs.iter().copied().fold(f64::NEG_INFINITY, f64::max)
                - logs.iter().copied().fold(f64::INFINITY, f64::min);
            let got = p.u_spread.ln();
            if exact.is_nan() || got.is_nan() {
                assert!(
                    exact.is_nan() && got.is_nan(),
                    "case {case}: {got} vs {exact}"
                );
            } else if exact > 48.0 || got > 48.0 {
                assert!(exact > 48.0 && got > 48.0, "case {case}: {got} vs {exact}");
            } else {
                assert!(
                    (got - exact).abs() <= RANGE_ATOL,
                    "case {case}: {got} vs {exact}"
                );
            }
        }
    }

    #[test]
    fn a_kink_inside_the_window_is_a_panel_edge_however_the_window_is_cut() {
        // Source: docs/science.md, "The adaptive Gauss–Legendre quadrature":
        // the kink replaces the nearest inner edge, or is added beside a
        // window end; panels stay contiguous and ordered, none empty, and
        // refinement keeps the edge. Smooth synthetic rates on [700, 1000] K.
        let rates = |t: f64| SplitRates {
            ln_i: -((t - 800.0) / 40.0).powi(2),
            ln_u: -30.0 - ((t - 900.0) / 120.0).powi(2),
            m: 1.0,
            f: 1.0,
        };
        for n0 in [1usize, 2, 5] {
            for kink in [700.3, 760.0, 850.0, 880.0, 999.7] {
                let q = QuadratureSettings {
                    initial_panels: n0,
                    ..QuadratureSettings::default()
                };
                let mut kept = Layout::default();
                Quadrature::cooling_integrals_seeded(
                    &rates,
                    (700.0, 1000.0),
                    Cooling::Constant,
                    &q,
                    (f64::NEG_INFINITY, 1e-6f64.ln()),
                    Some(kink),
                    None,
                    Some(&mut kept),
                )
                .unwrap();
                let p = &kept.panels;
                assert_eq!(p.first().unwrap().lo, 700.0, "n0 {n0} kink {kink}");
                assert_eq!(p.last().unwrap().hi, 1000.0, "n0 {n0} kink {kink}");
                for w in p.windows(2) {
                    assert_eq!(w[0].hi, w[1].lo, "n0 {n0} kink {kink}");
                }
                assert!(p.iter().all(|r| r.hi > r.lo), "n0 {n0} kink {kink}");
                assert!(
                    p.iter().any(|r| r.hi == kink),
                    "n0 {n0}: kink {kink} is not an edge"
                );
            }
        }
    }

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
