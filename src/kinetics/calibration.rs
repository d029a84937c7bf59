//! Calibration of the kinetic factor on one measurement: the Turnbull α (or
//! σ) of one phase that makes the model reproduce one measured critical
//! cooling rate or nose time. The phase is the one the caller names, or else
//! the limiting phase (the largest share of the crystallised volume at R_c)
//! with the factors as given. This is the one-point case of [`super::fit`]:
//! the mismatch is monotone in α, so a bracket on a geometric grid and
//! Brent's method find it. See docs/science.md, "Calibration".

use super::fit::{
    fit_kinetics, with_alpha, KineticFitError, KineticFitSpec, KineticPoint, Measurement,
};
use super::melt::{KineticOptions, Melt};
use super::rates::Kinetics;
use super::KineticsError;
use crate::error::positive;
use crate::units::KelvinPerSecond;

/// A melt whose phase `phase` was calibrated.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibrated {
    pub melt: Melt,
    /// Index of the calibrated phase in the melt.
    pub phase: usize,
}

impl Kinetics<'_> {
    /// Turnbull α (or σ, if the phase gives σ) of one phase that makes the
    /// model reproduce a measured critical cooling rate.
    ///
    /// # Errors
    /// A non-positive rate, no α in [0.01, 10] that reproduces it, or a numerical failure.
    pub fn calibrate_to_critical_rate(
        melt: &Melt,
        opts: &KineticOptions,
        measured: KelvinPerSecond,
        phase: Option<usize>,
    ) -> Result<Calibrated, KineticsError> {
        positive("measured critical cooling rate", measured.0, "K/s")?;
        Self::calibrate(melt, opts, phase, Measurement::CriticalRate(measured))
    }

    /// Turnbull α (or σ) of one phase that makes the model reproduce a measured nose time.
    ///
    /// # Errors
    /// As [`Kinetics::calibrate_to_critical_rate`].
    pub fn calibrate_to_nose_time(
        melt: &Melt,
        opts: &KineticOptions,
        nose_time_s: f64,
        phase: Option<usize>,
    ) -> Result<Calibrated, KineticsError> {
        positive("measured nose time", nose_time_s, "s")?;
        Self::calibrate(melt, opts, phase, Measurement::NoseTime(nose_time_s))
    }

    fn calibrate(
        melt: &Melt,
        opts: &KineticOptions,
        phase: Option<usize>,
        measurement: Measurement,
    ) -> Result<Calibrated, KineticsError> {
        let k = match phase {
            Some(k) if k < melt.phases.len() => k,
            Some(k) => return Err(KineticsError::NoSuchPhase(k)),
            None => {
                let s = Kinetics::new(melt, opts)?.analyse()?;
                s.limiting_phase().index
            }
        };
        let name = melt.phases[k].name.clone();
        let point = KineticPoint {
            row: 1,
            melt: melt.clone(),
            measurement,
            phase: None,
        };
        let spec = KineticFitSpec {
            phases: vec![name.clone()],
            fit_nuclei: false,
            log10_sd: None,
        };
        let fit = fit_kinetics(&[point], opts, &spec).map_err(|e| match e {
            KineticFitError::Row { source, .. } => source,
            KineticFitError::Unreachable { rows } => KineticsError::Unreachable(
                rows.into_iter()
                    .map(|(_, m)| m)
                    .collect::<Vec<_>>()
                    .join("; "),
            ),
            other => KineticsError::Numerical(other.to_string()),
        })?;
        let alpha = fit.values.first().copied().ok_or_else(|| {
            KineticsError::Numerical(format!("the measurement does not depend on α of {name}"))
        })?;
        Ok(Calibrated {
            melt: with_alpha(melt, &name, alpha),
            phase: k,
        })
    }
}
