//! Nucleation and growth rates of a prepared melt: Stokes–Einstein diffusion,
//! the driving force, the classical nucleation barrier and interface-controlled
//! growth, all kept as natural logarithms because I(T) spans hundreds of
//! decades. See docs/science.md, "Nucleation and growth".

use super::melt::{wetting_factor, DrivingForce, KineticOptions, Melt};
use super::quadrature::QuadratureSettings;
use super::KineticsError;
use crate::properties::{GrowthMode, GLASS_TRANSITION_LOG_VISCOSITY};
use crate::units::{Kelvin, Log10PaS, AVOGADRO, BOLTZMANN, GAS_CONSTANT};
use std::f64::consts::{LN_10, PI};

/// Rates at one temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rates {
    /// ln(I / (m⁻³ s⁻¹)); −∞ at and above the liquidus.
    pub ln_nucleation: f64,
    /// ln(U / (m s⁻¹)); −∞ at and above the liquidus.
    pub ln_growth: f64,
}

impl Rates {
    /// I in m⁻³ s⁻¹ (may underflow to 0).
    pub fn nucleation_per_m3_s(&self) -> f64 {
        self.ln_nucleation.exp()
    }
    /// U in m/s.
    pub fn growth_m_per_s(&self) -> f64 {
        self.ln_growth.exp()
    }
}

/// A melt prepared for fast evaluation of I(T) and U(T).
#[derive(Debug, Clone)]
pub struct Kinetics {
    pub(super) melt: Melt,
    pub(super) opts: KineticOptions,
    pub(super) tl: f64,
    dh: f64,
    ln_d_pref: f64,
    ln_i_pref: f64,
    ln_u_pref: f64,
    /// W*/(k_B T) = kw / (ΔG_m² T), ΔG_m in J/mol.
    kw: f64,
    /// Lower end T_e of the kinetic window (η = 10^freeze).
    pub(super) freeze: f64,
    pub(super) quad: QuadratureSettings,
    /// T_g (η = 10^12 Pa·s).
    pub(super) tg: f64,
}

impl Kinetics {
    /// Validate and build a melt.
    ///
    /// # Errors
    /// Non-finite or non-positive ΔH_m, V_m, liquidus or interface value; a
    /// liquidus at or below the VFT divergence.
    pub fn new(melt: &Melt, opts: &KineticOptions) -> Result<Self, KineticsError> {
        opts.validate()?;
        let vm = melt.molar_volume_m3_per_mol;
        let lambda = (vm / AVOGADRO).cbrt();
        let nv = AVOGADRO / vm;
        let sigma = melt.interface_energy_j_per_m2();
        let f_theta = wetting_factor(opts.contact_angle_deg);
        let tg = melt
            .viscosity
            .temperature_at(Log10PaS(GLASS_TRANSITION_LOG_VISCOSITY))?
            .0;
        let freeze = melt
            .viscosity
            .temperature_at(Log10PaS(opts.freeze_log_viscosity))?
            .0;
        let tl = melt.liquidus.0;
        if tl <= tg {
            return Err(KineticsError::LiquidusBelowGlassTransition { liquidus: tl, tg });
        }
        Ok(Kinetics {
            melt: *melt,
            opts: *opts,
            tl,
            dh: melt.enthalpy_of_fusion_j_per_mol,
            ln_d_pref: (BOLTZMANN / (3.0 * PI * lambda)).ln(),
            ln_i_pref: nv.ln() - 2.0 * lambda.ln(),
            ln_u_pref: -lambda.ln(),
            kw: 16.0 * PI * sigma.powi(3) * f_theta * vm * vm / (3.0 * BOLTZMANN),
            freeze,
            tg,
            quad: QuadratureSettings::default(),
        })
    }

    /// The same, with another quadrature refinement rule.
    pub fn with_quadrature(mut self, q: QuadratureSettings) -> Self {
        self.quad = q;
        self
    }

    /// The melt this was prepared from.
    pub fn melt(&self) -> &Melt {
        &self.melt
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

    /// ΔG_m in J/mol at T (Turnbull or Hoffman form).
    #[inline]
    fn driving_force(&self, t: f64) -> f64 {
        let d = self.dh * (self.tl - t) / self.tl;
        match self.opts.driving_force {
            DrivingForce::Turnbull => d,
            DrivingForce::Hoffman => d * t / self.tl,
        }
    }

    /// Stokes–Einstein diffusivity D(T) in m²/s.
    pub fn diffusivity_m2_per_s(&self, t: Kelvin) -> f64 {
        (self.ln_d_pref + t.0.ln() - LN_10 * self.melt.viscosity.log10_eta(t.0)).exp()
    }

    /// ln I and ln U at T (steady homogeneous nucleation, interface-controlled growth).
    #[inline]
    pub fn rates(&self, t: Kelvin) -> Rates {
        self.rates_raw(t.0)
    }

    #[inline]
    pub(super) fn rates_raw(&self, t: f64) -> Rates {
        if t >= self.tl {
            return Rates {
                ln_nucleation: f64::NEG_INFINITY,
                ln_growth: f64::NEG_INFINITY,
            };
        }
        let dg = self.driving_force(t);
        let ln_d = self.ln_d_pref + t.ln() - LN_10 * self.melt.viscosity.log10_eta(t);
        let ln_nucleation = self.ln_i_pref + ln_d - self.kw / (dg * dg * t);
        let mut ln_growth = self.ln_u_pref + ln_d + (-(-dg / (GAS_CONSTANT * t)).exp_m1()).ln();
        if self.melt.growth == GrowthMode::Screw {
            ln_growth += ((self.tl - t) / (2.0 * PI * self.tl)).ln();
        }
        Rates {
            ln_nucleation,
            ln_growth,
        }
    }
}
