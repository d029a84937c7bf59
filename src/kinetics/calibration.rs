//! Calibration of the kinetic factor: the Turnbull α (or σ) of one phase that
//! makes the model reproduce one measured critical cooling rate or nose time.
//! The phase is the one the caller names, or else the limiting phase (the
//! largest share of the crystallised volume at R_c) with the factors as given.
//! The mismatch is monotone in α, so a bracket on a geometric grid and Brent's
//! method find it. See docs/science.md, "Calibration".

use super::melt::{KineticOptions, Melt};
use super::rates::Kinetics;
use super::KineticsError;
use crate::error::positive;
use crate::numeric::brent_root;
use crate::properties::Interface;
use crate::units::KelvinPerSecond;

/// A melt whose phase `phase` was calibrated.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibrated {
    pub melt: Melt,
    /// Index of the calibrated phase in the melt.
    pub phase: usize,
}

impl Kinetics {
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
        let target = measured.0.ln();
        Self::calibrate(
            melt,
            opts,
            phase,
            |k| Ok(k.critical_rate()?.0.ln() - target),
        )
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
        let target = nose_time_s.ln();
        Self::calibrate(melt, opts, phase, |k| {
            Ok(k.analyse()?.nose_time_s.ln() - target)
        })
    }

    fn calibrate<F>(
        melt: &Melt,
        opts: &KineticOptions,
        phase: Option<usize>,
        mismatch: F,
    ) -> Result<Calibrated, KineticsError>
    where
        F: Fn(&Kinetics) -> Result<f64, KineticsError>,
    {
        let k = match phase {
            Some(k) if k < melt.phases.len() => k,
            Some(k) => return Err(KineticsError::NoSuchPhase(k)),
            None => {
                let s = Kinetics::new(melt, opts)?.analyse()?;
                s.limiting_phase().index
            }
        };
        let original = melt.phases[k].clone();
        let with_alpha = |alpha: f64| -> Melt {
            let mut p = original.clone();
            p.interface = Interface::TurnbullAlpha(alpha);
            let interface = match original.interface {
                Interface::TurnbullAlpha(_) => Interface::TurnbullAlpha(alpha),
                Interface::EnergyJPerM2(_) => {
                    Interface::EnergyJPerM2(p.interface_energy_j_per_m2())
                }
            };
            melt.with_interface(k, interface)
        };
        let eval = |alpha: f64| -> f64 {
            Kinetics::new(&with_alpha(alpha), opts)
                .and_then(|k| mismatch(&k))
                .unwrap_or(f64::NAN)
        };
        let (lo, hi) = (0.01_f64, 10.0_f64);
        // The mismatch is monotone in α (a larger barrier slows crystallisation:
        // R_c falls, the nose time rises). Walk a geometric grid to find a sign
        // change; NaN (a failed point) is skipped.
        let grid: Vec<f64> = (0..=40)
            .map(|k| lo * (hi / lo).powf(k as f64 / 40.0))
            .collect();
        let values: Vec<f64> = grid.iter().map(|&a| eval(a)).collect();
        let bracket = (0..grid.len() - 1).find(|&k| {
            values[k].is_finite() && values[k + 1].is_finite() && values[k] * values[k + 1] <= 0.0
        });
        let b = bracket.ok_or(KineticsError::CalibrationBracket { lo, hi })?;
        let alpha =
            brent_root(eval, grid[b], grid[b + 1], 1e-10).map_err(KineticsError::Numerical)?;
        Ok(Calibrated {
            melt: with_alpha(alpha),
            phase: k,
        })
    }
}
