//! Nucleation and growth rates of a prepared melt, phase by phase: diffusion
//! (Stokes–Einstein, or fractional below the decoupling temperature), the
//! driving force (Turnbull with ΔC_p, or Hoffman), the classical barrier,
//! steady nucleation in the volume and on the sample's walls, and
//! interface-controlled growth. Every rate is kept as a natural logarithm
//! because I(T) spans hundreds of decades, or, for the quadrature, in a
//! split form whose linear values need no logarithm ([`SplitRates`]). See
//! docs/science.md, "Nucleation and growth", "Transport near the glass
//! transition" and "The adaptive Gauss–Legendre quadrature".

use super::melt::{wetting_factor, DrivingForce, KineticOptions, Melt, Transport};
use super::quadrature::QuadratureSettings;
use super::KineticsError;
use crate::properties::{GrowthMode, GLASS_TRANSITION_LOG_VISCOSITY};
use crate::units::{Kelvin, Log10PaS, AVOGADRO, BOLTZMANN, GAS_CONSTANT};
use std::f64::consts::{LN_10, LN_2, PI};

/// Rates at one temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rates {
    /// ln(I / (m⁻³ s⁻¹)); −∞ at and above the liquidus.
    pub ln_nucleation: f64,
    /// ln(U / (m s⁻¹)); −∞ at and above the liquidus.
    pub ln_growth: f64,
}

impl Rates {
    /// No nucleation and no growth.
    pub const NONE: Rates = Rates {
        ln_nucleation: f64::NEG_INFINITY,
        ln_growth: f64::NEG_INFINITY,
    };
    /// I in m⁻³ s⁻¹ (may underflow to 0).
    pub fn nucleation_per_m3_s(&self) -> f64 {
        self.ln_nucleation.exp()
    }
    /// U in m/s.
    pub fn growth_m_per_s(&self) -> f64 {
        self.ln_growth.exp()
    }
}

/// Rates at one temperature split so that their linear values need no
/// logarithm: ln I = `ln_i` + ln `m`, ln U = `ln_u` + ln(`m`·`f`), with `m`
/// positive (T under Stokes–Einstein, 1 below T_d with fractional
/// transport) and `f` in (0, 1] (the growth's kinetic factor 1 − e^(−ΔG/RT),
/// times ΔT/(2π T_L) for screw growth; small just below T_L). The
/// quadrature sums e^(ln_i − shift)·m and takes the logarithms only at the
/// few nodes a decision needs them (docs/science.md, "The adaptive
/// Gauss–Legendre quadrature").
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct SplitRates {
    pub(crate) ln_i: f64,
    pub(crate) ln_u: f64,
    pub(crate) m: f64,
    pub(crate) f: f64,
}

impl SplitRates {
    /// No nucleation and no growth.
    pub(crate) const NONE: SplitRates = SplitRates {
        ln_i: f64::NEG_INFINITY,
        ln_u: f64::NEG_INFINITY,
        m: 1.0,
        f: 1.0,
    };

    /// Rates given as logarithms (factors 1).
    pub(crate) fn from_logs(r: Rates) -> SplitRates {
        SplitRates {
            ln_i: r.ln_nucleation,
            ln_u: r.ln_growth,
            m: 1.0,
            f: 1.0,
        }
    }
}

/// ln(e^a + e^b) without overflow.
pub(crate) fn log_add(a: f64, b: f64) -> f64 {
    let m = a.max(b);
    if m == f64::NEG_INFINITY {
        return m;
    }
    m + ((a - m).exp() + (b - m).exp()).ln()
}

/// Linear values and weights at or above this keep full relative precision
/// (far above the subnormal range, below 2.2e-308), so products and ratios
/// of them are exact to rounding; below it the logarithms are taken.
pub(crate) const PRECISE_LINEAR: f64 = 1e-290;

/// A running ln Σ_k e^(x_k), one exponential per term: the sum is kept
/// scaled by its largest term so far (where [`log_add`] takes two
/// exponentials and a logarithm per term); the TTT sums over phases use it
/// (docs/science.md, "The adaptive Gauss–Legendre quadrature").
#[derive(Debug, Clone, Copy)]
pub(crate) struct LogSum {
    max: f64,
    scaled: f64,
}

impl LogSum {
    /// The empty sum, ln 0 = −∞.
    pub(crate) const EMPTY: LogSum = LogSum {
        max: f64::NEG_INFINITY,
        scaled: 0.0,
    };

    /// Add e^x (a NaN makes the sum NaN, as in [`log_add`]).
    #[inline]
    pub(crate) fn add(&mut self, x: f64) {
        self.add_weighted(x, 1.0);
    }

    /// Add w·e^x for a weight w > 0 held to full precision (at least
    /// [`PRECISE_LINEAR`]), one exponential.
    #[inline]
    pub(crate) fn add_weighted(&mut self, x: f64, w: f64) {
        debug_assert!(w >= PRECISE_LINEAR);
        if x > self.max {
            self.scaled = self.scaled * (self.max - x).exp() + w;
            self.max = x;
        } else if x > f64::NEG_INFINITY {
            self.scaled += w * (x - self.max).exp();
        } else if x.is_nan() {
            self.scaled = f64::NAN;
        }
    }

    /// ln of the sum.
    pub(crate) fn ln(self) -> f64 {
        if self.max == f64::NEG_INFINITY {
            self.max + self.scaled
        } else {
            self.max + self.scaled.ln()
        }
    }
}

/// 1 − e^(−x) for x > 0: directly where e^(−x) ≤ ½, which leaves no
/// cancellation (the difference is exact to an ulp), and by expm1 below,
/// which costs about twice an exponential (docs/science.md, "The adaptive
/// Gauss–Legendre quadrature").
#[inline]
fn one_minus_exp_neg(x: f64) -> f64 {
    if x > LN_2 {
        1.0 - (-x).exp()
    } else {
        -(-x).exp_m1()
    }
}

/// ln((4π/3) N_h) for N_h pre-existing nuclei per m³, −∞ for none; a sum
/// of logarithms, as the product would overflow for N_h above 4e307.
pub(super) fn ln_nuclei_sphere(nuclei_per_m3: f64) -> f64 {
    if nuclei_per_m3 > 0.0 {
        (4.0 * PI / 3.0).ln() + nuclei_per_m3.ln()
    } else {
        f64::NEG_INFINITY
    }
}

/// One phase prepared for fast evaluation.
#[derive(Debug, Clone)]
pub(super) struct PhaseRates {
    /// T_L of this phase, K.
    pub(super) tl: f64,
    /// ΔH_m/T_L and ΔH_m/T_L², J/(mol K) and J/(mol K²).
    dh_per_tl: f64,
    dh_per_tl2: f64,
    /// 1/(2π T_L), 1/K: the screw-growth site fraction is ΔT times this.
    screw_per_k: f64,
    dcp: f64,
    /// ln(k_B / (3π λ)): D = exp(this) · T/η.
    ln_d_pref: f64,
    /// ln(N_v / λ²).
    ln_i_pref: f64,
    /// ln(2/d · λ⁻² / λ²): wall sites per volume over λ².
    ln_wall_pref: f64,
    /// ln(1/λ).
    ln_u_pref: f64,
    /// W*/(k_B T) = kw / (ΔG_m² T) in the volume, ΔG_m in J/mol.
    kw: f64,
    /// The same on the walls (× f(θ)); None without wall nucleation.
    kw_wall: Option<f64>,
    screw: bool,
    /// Pre-existing nuclei per m³.
    pub(super) nuclei: f64,
    /// ln((4π/3) N_h), −∞ without pre-existing nuclei.
    pub(super) ln_nuclei_sphere: f64,
}

/// A melt prepared for fast evaluation of I(T) and U(T) of every phase.
#[derive(Debug, Clone)]
pub struct Kinetics<'m> {
    /// The melt, borrowed: a screen prepares one per candidate, and a copy
    /// would clone every phase's name.
    pub(super) melt: &'m Melt,
    pub(super) opts: KineticOptions,
    /// The phases that can crystallise (liquidus above T_g), with their index in the melt.
    pub(super) phases: Vec<(usize, PhaseRates)>,
    /// The melt's liquidus (the highest of its phases'), K.
    pub(super) tl: f64,
    /// Lower end T_e of the kinetic window (η = 10^freeze).
    pub(super) freeze: f64,
    pub(super) quad: QuadratureSettings,
    /// T_g (η = 10^12 Pa·s).
    pub(super) tg: f64,
    /// Fractional transport below T_d: (T_d, ln(T_d/η(T_d)), exponent).
    decoupling: Option<(f64, f64, f64)>,
}

impl<'m> Kinetics<'m> {
    /// Prepare a melt for kinetic evaluation. Phases whose liquidus lies at or
    /// below T_g cannot crystallise from the liquid and are left out.
    ///
    /// # Errors
    /// Invalid options; every liquidus at or below T_g.
    pub fn new(melt: &'m Melt, opts: &KineticOptions) -> Result<Self, KineticsError> {
        opts.validate()?;
        let tg = melt
            .viscosity
            .temperature_at(Log10PaS(GLASS_TRANSITION_LOG_VISCOSITY))?
            .0;
        let freeze = melt
            .viscosity
            .temperature_at(Log10PaS(opts.freeze_log_viscosity))?
            .0;
        let tl = melt.liquidus().0;
        if tl <= tg {
            return Err(KineticsError::LiquidusBelowGlassTransition { liquidus: tl, tg });
        }
        let wall = (opts.contact_angle_deg < 180.0).then(|| wetting_factor(opts.contact_angle_deg));
        let phases = melt
            .phases
            .iter()
            .enumerate()
            .filter(|(_, p)| p.liquidus.0 > tg)
            .map(|(i, p)| {
                let vm = p.molar_volume_m3_per_mol;
                let lambda = (vm / AVOGADRO).cbrt();
                let nv = AVOGADRO / vm;
                let sigma = p.interface_energy_j_per_m2();
                let kw = 16.0 * PI * sigma.powi(3) * vm * vm / (3.0 * BOLTZMANN);
                let nuclei = p.nuclei_per_m3.unwrap_or(opts.heterogeneous_nuclei_per_m3);
                let rates = PhaseRates {
                    tl: p.liquidus.0,
                    dh_per_tl: p.enthalpy_of_fusion_j_per_mol / p.liquidus.0,
                    dh_per_tl2: p.enthalpy_of_fusion_j_per_mol / (p.liquidus.0 * p.liquidus.0),
                    screw_per_k: 1.0 / (2.0 * PI * p.liquidus.0),
                    dcp: p.heat_capacity_change_j_per_mol_k,
                    ln_d_pref: (BOLTZMANN / (3.0 * PI * lambda)).ln(),
                    ln_i_pref: nv.ln() - 2.0 * lambda.ln(),
                    ln_wall_pref: (2.0 / opts.sample_thickness_m).ln() - 4.0 * lambda.ln(),
                    ln_u_pref: -lambda.ln(),
                    kw,
                    kw_wall: wall.map(|f| f * kw),
                    screw: p.growth == GrowthMode::Screw,
                    nuclei,
                    ln_nuclei_sphere: ln_nuclei_sphere(nuclei),
                };
                (i, rates)
            })
            .collect();
        let decoupling = match opts.transport {
            Transport::StokesEinstein => None,
            Transport::Fractional { exponent } => {
                let td = opts.decoupling_ratio * tg;
                let ln_x = td.ln() - LN_10 * melt.viscosity.log10_eta(td);
                Some((td, ln_x, exponent))
            }
        };
        Ok(Kinetics {
            melt,
            opts: *opts,
            phases,
            tl,
            freeze,
            tg,
            quad: QuadratureSettings::default(),
            decoupling,
        })
    }

    /// The same, with another quadrature refinement rule.
    pub fn with_quadrature(mut self, q: QuadratureSettings) -> Self {
        self.quad = q;
        self
    }

    /// The melt this was prepared from.
    pub fn melt(&self) -> &'m Melt {
        self.melt
    }

    /// The options in force.
    pub fn options(&self) -> &KineticOptions {
        &self.opts
    }

    /// T_g at η = 10^12 Pa·s.
    pub fn glass_transition(&self) -> Kelvin {
        Kelvin(self.tg)
    }

    /// The lower end T_e of the kinetic window.
    pub fn freeze_temperature(&self) -> Kelvin {
        Kelvin(self.freeze)
    }

    /// The melt's liquidus (the highest of its phases').
    pub fn liquidus(&self) -> Kelvin {
        Kelvin(self.tl)
    }

    /// The indices (into the melt's phases) of the phases that can crystallise.
    pub fn active_phases(&self) -> impl Iterator<Item = usize> + '_ {
        self.phases.iter().map(|(i, _)| *i)
    }

    /// T_d, below which the fractional transport law holds (None: Stokes–Einstein throughout).
    pub(super) fn decoupling_temperature(&self) -> Option<f64> {
        self.decoupling.map(|(td, _, _)| td)
    }

    /// ln(T/η) with the transport law in force, as (ℓ, m) with ln(T/η) =
    /// ℓ + ln m: Stokes–Einstein gives D = (k_B/3πλ)·T/η, so ℓ = −ln η and
    /// m = T, which needs no logarithm; below T_d the fractional law scales
    /// it as (T/η)^ξ, and ℓ carries the whole of it (m = 1).
    #[inline]
    pub(super) fn mobility(&self, t: f64) -> (f64, f64) {
        let ln_inv_eta = -LN_10 * self.melt.viscosity.log10_eta(t);
        match self.decoupling {
            Some((td, ln_xd, xi)) if t < td => (ln_xd + xi * (t.ln() + ln_inv_eta - ln_xd), 1.0),
            _ => (ln_inv_eta, t),
        }
    }

    /// ln(T/η) with the transport law in force.
    fn ln_mobility(&self, t: f64) -> f64 {
        let (l, m) = self.mobility(t);
        l + m.ln()
    }

    /// Diffusivity D(T) in m²/s controlling phase `k`'s kinetics.
    pub fn diffusivity_m2_per_s(&self, k: usize, t: Kelvin) -> Option<f64> {
        let (_, p) = self.phases.iter().find(|(i, _)| *i == k)?;
        Some((p.ln_d_pref + self.ln_mobility(t.0)).exp())
    }

    /// ΔG_m in J/mol of phase `p` at T (positive below its liquidus).
    #[inline]
    fn driving_force(&self, p: &PhaseRates, t: f64) -> f64 {
        let dt = p.tl - t;
        match self.opts.driving_force {
            DrivingForce::Turnbull => {
                let linear = p.dh_per_tl * dt;
                if p.dcp > 0.0 {
                    linear - p.dcp * (dt - t * (p.tl / t).ln())
                } else {
                    linear
                }
            }
            DrivingForce::Hoffman => p.dh_per_tl2 * dt * t,
        }
    }

    /// ln I and ln U of the phase with index `k` at T; zero rates for a phase
    /// that cannot crystallise.
    pub fn phase_rates(&self, k: usize, t: Kelvin) -> Rates {
        match self.phases.iter().find(|(i, _)| *i == k) {
            Some((_, p)) => self.rates_of(p, t.0),
            None => Rates::NONE,
        }
    }

    /// ln I and ln U summed over the phases (the nucleation rate of any crystal,
    /// and the fastest growth), at T.
    pub fn rates(&self, t: Kelvin) -> Rates {
        let mut mobility = None;
        self.phases
            .iter()
            .map(|(_, p)| self.rates_sharing(p, t.0, &mut mobility))
            .fold(Rates::NONE, |acc, r| Rates {
                ln_nucleation: log_add(acc.ln_nucleation, r.ln_nucleation),
                ln_growth: acc.ln_growth.max(r.ln_growth),
            })
    }

    #[inline]
    pub(super) fn rates_of(&self, p: &PhaseRates, t: f64) -> Rates {
        self.rates_sharing(p, t, &mut None)
    }

    /// As [`Kinetics::rates_of`], with the mobility at T and its logarithm
    /// kept in `mobility` once some phase has computed them, for the other
    /// phases at the same T (they do not depend on the phase).
    #[inline]
    fn rates_sharing(
        &self,
        p: &PhaseRates,
        t: f64,
        mobility: &mut Option<(f64, f64, f64)>,
    ) -> Rates {
        if t >= p.tl {
            return Rates::NONE;
        }
        let &mut (l, m, ln_m) = mobility.get_or_insert_with(|| {
            let (l, m) = self.mobility(t);
            (l, m, m.ln())
        });
        let s = self.split_rates_with(p, t, (l, m));
        Rates {
            ln_nucleation: s.ln_i + ln_m,
            ln_growth: s.ln_u + (s.f).ln() + ln_m,
        }
    }

    /// I and U of phase `p` at T in the split form the quadrature sums
    /// ([`SplitRates`]): no logarithm is taken.
    #[inline]
    pub(super) fn split_rates(&self, p: &PhaseRates, t: f64) -> SplitRates {
        if t >= p.tl {
            return SplitRates::NONE;
        }
        self.split_rates_with(p, t, self.mobility(t))
    }

    /// As [`Kinetics::split_rates`], with the mobility at T given
    /// ([`Kinetics::mobility`]), as phases at one temperature share it.
    #[inline]
    pub(super) fn split_rates_with(
        &self,
        p: &PhaseRates,
        t: f64,
        (l, m): (f64, f64),
    ) -> SplitRates {
        if t >= p.tl {
            return SplitRates::NONE;
        }
        let dg = self.driving_force(p, t);
        if dg.is_nan() || dg <= 0.0 {
            return SplitRates::NONE;
        }
        let ln_d = p.ln_d_pref + l;
        let barrier = 1.0 / (dg * dg * t);
        // W*/(k_B T) = kw · barrier. An interface energy so large that kw
        // overflows comes with a driving force whose square can overflow
        // too (both grow with the enthalpy of fusion), and ∞ · 0 would be
        // NaN; the barrier, ∝ σ³/ΔG², is then beyond any finite one.
        let over_kt = |kw: f64| {
            if kw == f64::INFINITY {
                f64::INFINITY
            } else {
                kw * barrier
            }
        };
        let mut ln_i = p.ln_i_pref + ln_d - over_kt(p.kw);
        if let Some(kw_wall) = p.kw_wall {
            ln_i = log_add(ln_i, p.ln_wall_pref + ln_d - over_kt(kw_wall));
        }
        // U = (D/λ)(1 − e^(−ΔG/RT)), times ΔT/(2π T_L) for screw growth.
        // ΔG/(RT) from the barrier, without a division, except where that
        // is infinite or zero (ΔG below 1e-150 or above 1e150 J/mol).
        let x = dg * (dg * dg * barrier) * (1.0 / GAS_CONSTANT);
        let x = if x > 0.0 && x.is_finite() {
            x
        } else {
            dg / (GAS_CONSTANT * t)
        };
        let kinetic = one_minus_exp_neg(x);
        let site_fraction = if p.screw {
            (p.tl - t) * p.screw_per_k
        } else {
            1.0
        };
        SplitRates {
            ln_i,
            ln_u: p.ln_u_pref + ln_d,
            m,
            f: kinetic * site_fraction,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A few units of rounding relative to the value.
    const FEW_ULPS: f64 = 4.0 * f64::EPSILON;

    /// Sums of logarithms of order 1 to 700, to rounding.
    const LOG_SUM_RTOL: f64 = 1e-14;

    #[test]
    fn one_minus_exp_neg_agrees_with_a_form_free_of_cancellation() {
        // Source: the identity 1 − e^(−x) = 2 tanh(x/2) / (1 + tanh(x/2)),
        // which has no cancellation anywhere (libm's tanh, not the exp or
        // expm1 the function uses); x from 1e-12 to 700 on a log grid, and
        // densely around the switch at ln 2.
        let xs = (0..20_000)
            .map(|k| 1e-12 * (700e12f64).powf(k as f64 / 19_999.0))
            .chain((0..2001).map(|k| LN_2 * (0.999 + 0.002 * k as f64 / 2000.0)));
        for x in xs {
            let h = (0.5 * x).tanh();
            let reference = 2.0 * h / (1.0 + h);
            let got = one_minus_exp_neg(x);
            assert!(
                (got - reference).abs() <= FEW_ULPS * reference,
                "x = {x}: {got} vs {reference}"
            );
        }
    }

    #[test]
    fn the_growth_factor_holds_for_driving_forces_beyond_the_barrier_range() {
        // Source: the definition, 1 − e^(−ΔG/RT) (here against the same
        // identity in tanh), for ΔG from 1e-200 to 1e200 J/mol at 1000 K,
        // where the barrier 1/(ΔG² T) is subnormal, zero or infinite at
        // the ends: the growth factor stays in (0, 1].
        let melt = Melt::new(
            crate::properties::ViscosityCurve::Vft {
                a: -2.8,
                b_k: 4500.0,
                c_k: 480.0,
            },
            Kelvin(1300.0),
            60_000.0,
            6e-5,
            crate::properties::Interface::TurnbullAlpha(0.33),
            GrowthMode::Normal,
        )
        .unwrap();
        let k = Kinetics::new(&melt, &KineticOptions::default()).unwrap();
        let (_, p) = &k.phases[0];
        let t = 1000.0;
        for e in -200..=200 {
            let dg = 10f64.powi(e);
            // The same phase with ΔH_m/T_L set so that ΔG(T) = dg.
            let q = PhaseRates {
                dh_per_tl: dg / (p.tl - t),
                ..p.clone()
            };
            let s = k.split_rates_with(&q, t, k.mobility(t));
            let h = (0.5 * dg / (GAS_CONSTANT * t)).tanh();
            let want = 2.0 * h / (1.0 + h);
            assert!(s.f > 0.0 && s.f <= 1.0, "ΔG = {dg}: f = {}", s.f);
            // (ΔG itself is computed from ΔH_m/T_L · ΔT, a few roundings.)
            assert!(
                (s.f - want).abs() <= 4.0 * FEW_ULPS * want,
                "ΔG = {dg}: {} vs {want}",
                s.f
            );
        }
    }

    #[test]
    fn a_running_log_sum_is_the_log_of_the_sum() {
        // Source: the definition, ln Σ e^x, summed directly where the terms
        // are representable, and by log_add (pairwise) across ±700 nats, on
        // a fixed SplitMix-style sequence; −∞ terms add nothing, a NaN spoils.
        let mut next = crate::numeric::split_mix(0x5eed_1095_u64);
        for case in 0..2000 {
            let n = 1 + case % 7;
            let wide = case % 2 == 0;
            let xs: Vec<f64> = (0..n)
                .map(|_| match (next() * 10.0) as u32 {
                    0 => f64::NEG_INFINITY,
                    _ if wide => -700.0 + 1400.0 * next(),
                    _ => -30.0 + 60.0 * next(),
                })
                .collect();
            let mut s = LogSum::EMPTY;
            xs.iter().for_each(|&x| s.add(x));
            let pairwise = xs.iter().fold(f64::NEG_INFINITY, |a, &x| log_add(a, x));
            if pairwise == f64::NEG_INFINITY {
                assert_eq!(s.ln(), f64::NEG_INFINITY, "{xs:?}");
                continue;
            }
            let scale = 1.0 + pairwise.abs();
            assert!((s.ln() - pairwise).abs() <= LOG_SUM_RTOL * scale, "{xs:?}");
            if !wide {
                let direct = xs.iter().map(|x| x.exp()).sum::<f64>().ln();
                assert!((s.ln() - direct).abs() <= LOG_SUM_RTOL * scale, "{xs:?}");
            }
        }
        // With weights down to the least precise one (1e-290): Σ w e^x
        // against the direct sum, the exponents kept so that it is
        // representable.
        for case in 0..2000 {
            let n = 1 + case % 7;
            let terms: Vec<(f64, f64)> = (0..n)
                .map(|_| {
                    let w = (PRECISE_LINEAR.ln() * next()).exp().max(PRECISE_LINEAR);
                    (-30.0 + 60.0 * next() - w.ln() * next(), w)
                })
                .collect();
            let mut s = LogSum::EMPTY;
            terms.iter().for_each(|&(x, w)| s.add_weighted(x, w));
            let direct = terms.iter().map(|(x, w)| w * x.exp()).sum::<f64>().ln();
            // Rounding relative to the largest logarithm in the sum.
            let scale = terms
                .iter()
                .map(|(x, w)| x.abs() + w.ln().abs())
                .fold(1.0 + direct.abs(), f64::max);
            assert!((s.ln() - direct).abs() <= LOG_SUM_RTOL * scale, "{terms:?}");
        }
        let mut s = LogSum::EMPTY;
        s.add(1.0);
        s.add(f64::NAN);
        s.add(2.0);
        assert!(s.ln().is_nan());
    }
}
