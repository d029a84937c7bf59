//! Units at the boundary: newtypes for temperatures, viscosity and rates.
//!
//! Inside the program every temperature is a [`Kelvin`], every cooling rate a
//! [`KelvinPerSecond`] and every viscosity a [`Log10PaS`]. Users type °C, K/min
//! and poise-free Pa·s; the conversion happens once, here, when a value enters
//! or leaves. Keeping Kelvin and Celsius in different types makes the classic
//! "added 273.15 twice" bug a compile error.

use std::fmt;

/// Offset between the Celsius and Kelvin scales (exact, SI Brochure 9th ed., 2019).
pub const CELSIUS_OFFSET: f64 = 273.15;

/// Avogadro constant in 1/mol (exact, SI 2019).
pub const AVOGADRO: f64 = 6.022_140_76e23;
/// Boltzmann constant in J/K (exact, SI 2019).
pub const BOLTZMANN: f64 = 1.380_649e-23;
/// Molar gas constant in J/(mol K) = N_A k_B (exact, SI 2019).
pub const GAS_CONSTANT: f64 = AVOGADRO * BOLTZMANN;

/// A temperature in kelvin, given as a bare number, in degrees Celsius.
pub fn kelvin_to_celsius(k: f64) -> f64 {
    k - CELSIUS_OFFSET
}

/// An absolute temperature in kelvin.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, serde::Serialize)]
pub struct Kelvin(pub f64);

/// A temperature in degrees Celsius.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, serde::Serialize)]
pub struct Celsius(pub f64);

/// A cooling (or heating) rate in K/s.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, serde::Serialize)]
pub struct KelvinPerSecond(pub f64);

/// Decadic logarithm of a dynamic viscosity in Pa·s.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, serde::Serialize)]
pub struct Log10PaS(pub f64);

impl Kelvin {
    /// The same temperature on the Celsius scale.
    pub fn to_celsius(self) -> Celsius {
        Celsius(self.0 - CELSIUS_OFFSET)
    }
}

impl Celsius {
    /// The same temperature on the Kelvin scale.
    pub fn to_kelvin(self) -> Kelvin {
        Kelvin(self.0 + CELSIUS_OFFSET)
    }
}

impl From<Celsius> for Kelvin {
    fn from(c: Celsius) -> Self {
        c.to_kelvin()
    }
}

impl From<Kelvin> for Celsius {
    fn from(k: Kelvin) -> Self {
        k.to_celsius()
    }
}

impl KelvinPerSecond {
    /// Build a rate from K/min.
    pub fn from_per_minute(k_per_min: f64) -> Self {
        KelvinPerSecond(k_per_min / 60.0)
    }
    /// The rate in K/min.
    pub fn per_minute(self) -> f64 {
        self.0 * 60.0
    }
}

/// A rate unit a user may type.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Deserialize)]
pub enum RateUnit {
    /// kelvin per second
    #[serde(rename = "K/s")]
    PerSecond,
    /// kelvin per minute
    #[serde(rename = "K/min")]
    PerMinute,
}

impl RateUnit {
    /// Convert a number in this unit to K/s.
    pub fn to_si(self, value: f64) -> KelvinPerSecond {
        match self {
            RateUnit::PerSecond => KelvinPerSecond(value),
            RateUnit::PerMinute => KelvinPerSecond::from_per_minute(value),
        }
    }

    /// The unit as it is written: "K/s" or "K/min".
    pub fn symbol(self) -> &'static str {
        match self {
            RateUnit::PerSecond => "K/s",
            RateUnit::PerMinute => "K/min",
        }
    }
}

impl fmt::Display for Kelvin {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:.1} K", self.0)
    }
}

impl fmt::Display for Celsius {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:.1} °C", self.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn celsius_kelvin_round_trip() {
        // Source: SI Brochure, 9th ed. (BIPM 2019), §2.3.1: T/°C = T/K − 273.15 exactly.
        for c in [-273.15, -40.0, 0.0, 25.0, 1450.0, 1700.5] {
            let back = Celsius(c).to_kelvin().to_celsius().0;
            assert!((back - c).abs() < 1e-12, "{c} -> {back}");
        }
        assert_eq!(Celsius(0.0).to_kelvin().0, 273.15);
    }

    #[test]
    fn rate_units() {
        assert!((RateUnit::PerMinute.to_si(60.0).0 - 1.0).abs() < 1e-15);
        assert!((KelvinPerSecond(2.0).per_minute() - 120.0).abs() < 1e-12);
    }
}
