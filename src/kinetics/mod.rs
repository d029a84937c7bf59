//! Crystallisation kinetics of a supercooled melt: classical nucleation and
//! growth, TTT curves, and the critical cooling rate by JMAK.
//!
//! The equations are those of docs/science.md, "Nucleation and growth" to
//! "Continuous cooling". A [`Melt`] holds what the kinetics
//! need (viscosity curve, liquidus, crystal data); [`KineticOptions`] the
//! choices (detectable fraction, driving-force form, pre-existing nuclei).
//! [`Kinetics`] is the prepared form used in the hot path: all rates are kept as
//! natural logarithms because the nucleation rate spans hundreds of decades.
//!
//! The continuous-cooling integral
//! `J = ∫_{T_e}^{T_L} I(T′) [∫_{T_e}^{T′} U dT″]³ dT′`
//! is computed on adaptive 8-point Gauss–Legendre panels: panels are halved
//! where the log-integrand (or, for the inner integral, log U) changes by more
//! than a few units across a panel that carries weight. The running inner
//! integral comes from the spectral integration matrix of [`quadrature`].
//!
//! References
//! - D. R. Uhlmann, "A kinetic treatment of glass formation", J. Non-Cryst.
//!   Solids 7 (1972) 337–348, doi:10.1016/0022-3093(72)90269-4.
//! - D. Turnbull, J. C. Fisher, "Rate of nucleation in condensed systems",
//!   J. Chem. Phys. 17 (1949) 71–73, doi:10.1063/1.1747055.
//! - D. Turnbull, "Formation of crystal nuclei in liquid metals", J. Appl. Phys.
//!   21 (1950) 1022–1028, doi:10.1063/1.1699435.
//! - J. D. Hoffman, "Thermodynamic driving force in nucleation and growth
//!   processes", J. Chem. Phys. 29 (1958) 1192–1193, doi:10.1063/1.1744688.
//! - M. Avrami, J. Chem. Phys. 7 (1939) 1103, doi:10.1063/1.1750380; 8 (1940)
//!   212, doi:10.1063/1.1750631.
//!
//! Files: [`melt`] (the melt and the options), [`rates`] (I and U),
//! [`ttt`] (isothermal curve and nose), [`cooling`] (continuous cooling,
//! critical rate, paths, slab), [`calibration`] (α from a measurement),
//! [`fit`] (α of several phases and the nuclei density from many
//! measurements), [`quadrature`] (the adaptive panels), [`plausible`] (the
//! ranges inputs are warned about).

pub mod calibration;
pub mod cooling;
pub mod fit;
pub mod melt;
pub mod plausible;
pub mod quadrature;
pub mod rates;
pub mod ttt;

pub use calibration::Calibrated;
pub use cooling::{extended_fraction_constant_rate, PathResult};
pub use melt::{
    wetting_factor, CrystalPhase, DrivingForce, KineticOptions, KineticOverrides, Melt, Transport,
    DEFAULT_DECOUPLING_RATIO, DEFAULT_DETECTABLE_FRACTION, DEFAULT_FREEZE_LOG_VISCOSITY,
    DEFAULT_SAMPLE_THICKNESS_M,
};
pub use plausible::Implausible;
pub use quadrature::QuadratureSettings;
pub use rates::{Kinetics, Rates};
pub use ttt::{KineticSummary, PhaseSummary, TttPoint};

use crate::error::{Diagnostic, ValueError};
use crate::properties::ViscosityError;

/// A temperature for a message: one decimal, or an exponent when it is far
/// outside anything a furnace reaches (a value from a unit slip).
fn kelvin(t: f64) -> String {
    if t.abs() < 1e6 {
        format!("{t:.1}")
    } else {
        format!("{t:.3e}")
    }
}

/// Why a melt or a kinetic calculation was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum KineticsError {
    #[error(transparent)]
    Value(#[from] ValueError),
    #[error(transparent)]
    Viscosity(#[from] ViscosityError),
    #[error("liquidus {} K is at or below the VFT divergence temperature c = {} K", kelvin(*liquidus), kelvin(*c))]
    LiquidusBelowDivergence { liquidus: f64, c: f64 },
    #[error(
        "liquidus {} K is at or below the glass transition {} K (η = 10^12 Pa·s)",
        kelvin(*liquidus),
        kelvin(*tg)
    )]
    LiquidusBelowGlassTransition { liquidus: f64, tg: f64 },
    #[error("the nose of the TTT curve ({} K) lies below the glass transition {} K", kelvin(*nose), kelvin(*tg))]
    NoseBelowGlassTransition { nose: f64, tg: f64 },
    #[error(
        "quench surface temperature {} K is not below the kinetic freeze temperature {} K",
        kelvin(*surface),
        kelvin(*freeze)
    )]
    SurfaceTooHot { surface: f64, freeze: f64 },
    #[error("the cooling path needs at least two points with increasing times (point {index} breaks this)")]
    BadPath { index: usize },
    #[error("no kinetic factor in [{lo}, {hi}] reproduces the measured value")]
    CalibrationBracket { lo: f64, hi: f64 },
    #[error("{0}")]
    Unreachable(String),
    #[error("numerical failure: {0}")]
    Numerical(String),
    #[error("the {quantity} comes out as {value:e} {unit}, not a finite positive number: the melt lies outside what the kinetics can represent")]
    Unrepresentable {
        quantity: &'static str,
        value: f64,
        unit: &'static str,
    },
    #[error("the result '{key}' is not a finite number: the melt lies outside what the kinetics can represent")]
    NotFiniteResult { key: String },
    #[error("a melt needs at least one crystal phase")]
    NoPhase,
    #[error("the crystal phase '{0}' is given twice")]
    DuplicatePhase(String),
    #[error("the melt has no crystal phase number {0}")]
    NoSuchPhase(usize),
}

impl Diagnostic for KineticsError {
    fn hint(&self) -> Option<String> {
        Some(
            match self {
                KineticsError::LiquidusBelowDivergence { .. } => {
                    "the viscosity curve diverges before the melt can supercool; check b_k and c_k"
                }
                KineticsError::LiquidusBelowGlassTransition { .. } => {
                    "such a melt does not crystallise from the liquid; check the liquidus and viscosity data"
                }
                KineticsError::NoseBelowGlassTransition { .. } => {
                    "CNT of the supercooled liquid does not apply there; check the viscosity curve, the liquidus and the kinetic factor"
                }
                KineticsError::Unrepresentable { .. }
                | KineticsError::NotFiniteResult { .. }
                | KineticsError::Numerical(_) => {
                    "check the inputs for unit slips or typing accidents: the VFT coefficients, the liquidus, the crystal data and the kinetic factor"
                }
                KineticsError::SurfaceTooHot { .. } => {
                    "the slab centre would sit in the crystallisation window forever; give a colder quench surface"
                }
                _ => return None,
            }
            .into(),
        )
    }
}
