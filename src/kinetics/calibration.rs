//! Calibration of the kinetic factor: the Turnbull α (or σ) that makes the
//! model reproduce one measured critical cooling rate or nose time. The
//! mismatch is monotone in α, so a bracket on a geometric grid and Brent's
//! method find it. See docs/science.md, "Calibration".

use super::melt::{KineticOptions, Melt};
use super::rates::Kinetics;
use super::KineticsError;
use crate::error::positive;
use crate::numeric::brent_root;
use crate::properties::Interface;
use crate::units::KelvinPerSecond;

impl Kinetics {
    /// Turnbull α (or σ, if the melt gives σ) that makes the model reproduce a
    /// measured critical cooling rate.
    ///
    /// # Errors
    /// A non-positive rate, no α in [0.01, 10] that reproduces it, or a numerical failure.
    pub fn calibrate_to_critical_rate(
        melt: &Melt,
        opts: &KineticOptions,
        measured: KelvinPerSecond,
    ) -> Result<Melt, KineticsError> {
        positive("measured critical cooling rate", measured.0, "K/s")?;
        let target = measured.0.ln();
        Self::calibrate(melt, opts, |k| Ok(k.critical_rate()?.0.ln() - target))
    }

    /// Turnbull α (or σ) that makes the model reproduce a measured nose time.
    ///
    /// # Errors
    /// As [`Kinetics::calibrate_to_critical_rate`].
    pub fn calibrate_to_nose_time(
        melt: &Melt,
        opts: &KineticOptions,
        nose_time_s: f64,
    ) -> Result<Melt, KineticsError> {
        positive("measured nose time", nose_time_s, "s")?;
        let target = nose_time_s.ln();
        Self::calibrate(melt, opts, |k| Ok(k.analyse()?.nose_time_s.ln() - target))
    }

    fn calibrate<F>(melt: &Melt, opts: &KineticOptions, mismatch: F) -> Result<Melt, KineticsError>
    where
        F: Fn(&Kinetics) -> Result<f64, KineticsError>,
    {
        let with_alpha = |alpha: f64| -> Melt {
            match melt.interface {
                Interface::TurnbullAlpha(_) => melt.with_interface(Interface::TurnbullAlpha(alpha)),
                Interface::EnergyJPerM2(_) => {
                    let sigma = melt
                        .with_interface(Interface::TurnbullAlpha(alpha))
                        .interface_energy_j_per_m2();
                    melt.with_interface(Interface::EnergyJPerM2(sigma))
                }
            }
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
        let k = bracket.ok_or(KineticsError::CalibrationBracket { lo, hi })?;
        let alpha =
            brent_root(eval, grid[k], grid[k + 1], 1e-10).map_err(KineticsError::Numerical)?;
        Ok(with_alpha(alpha))
    }
}
