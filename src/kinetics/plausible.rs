//! Ranges inside which the inputs of the kinetics are physically plausible
//! for oxide melts. A value outside its range is accepted (an unusual melt
//! may really have it) but named in a warning with the range and where the
//! range comes from. Values that cannot be right at all (zero or negative
//! where a positive quantity is needed, X_c outside (0, 1)) are refused by
//! the constructors, not here.
//!
//! The ranges are deliberately wide: they catch unit slips (cm³ for m³, kJ for
//! J) and typing accidents (1e35 nuclei), not unusual chemistry. Every range
//! says where it comes from; "from memory" means the author's knowledge of
//! the literature, not a checked table.

use super::melt::{KineticOptions, Melt};
use crate::properties::{Interface, ViscosityCurve, GLASS_TRANSITION_LOG_VISCOSITY};
use crate::units::Log10PaS;
use std::fmt;

/// A plausible range of one input.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Plausible {
    pub lo: f64,
    pub hi: f64,
    pub unit: &'static str,
    /// Where the range comes from.
    pub source: &'static str,
}

/// VFT `a` (log10 η∞ in Pa·s).
pub const VFT_A: Plausible = Plausible {
    lo: -10.0,
    hi: 2.0,
    unit: "",
    source: "log10 of the high-temperature viscosity limit; VFT fits of silicate melts give about -6 to -1 (from memory), and Giordano et al. 2008 use one value, -4.55, for all their melts (configs/models/giordano2008-viscosity.toml)",
};
/// VFT `b_k`.
pub const VFT_B: Plausible = Plausible {
    lo: 500.0,
    hi: 40_000.0,
    unit: "K",
    source: "VFT fits of oxide melts give B of about 2000 to 15000 K (from memory)",
};
/// VFT `c_k`.
pub const VFT_C: Plausible = Plausible {
    lo: -200.0,
    hi: 1500.0,
    unit: "K",
    source: "VFT fits of oxide melts give C of about 0 to 1000 K (from memory)",
};
/// MYEGA fragility index m.
pub const FRAGILITY: Plausible = Plausible {
    lo: 15.0,
    hi: 150.0,
    unit: "",
    source: "oxide melts range from about 20 (silica) to about 100 (from memory)",
};
/// The glass transition (η = 10¹² Pa·s) a viscosity curve gives.
pub const GLASS_TRANSITION_K: Plausible = Plausible {
    lo: 400.0,
    hi: 1600.0,
    unit: "K",
    source: "oxide glasses have T_g from about 500 K (borates, phosphates) to about 1450 K (silica) (from memory)",
};
/// A liquidus (or a melting point) of an oxide crystal in its melt.
pub const LIQUIDUS_K: Plausible = Plausible {
    lo: 500.0,
    hi: 3200.0,
    unit: "K",
    source: "oxide crystals melt between about 720 K (B2O3) and about 3000 K (ZrO2) (from memory)",
};
/// ΔH_m per mol of formula units.
pub const ENTHALPY_J_PER_MOL: Plausible = Plausible {
    lo: 2e3,
    hi: 1e6,
    unit: "J/mol",
    source: "enthalpies of fusion of oxide crystals run from about 9 kJ/mol (cristobalite) to a few hundred kJ/mol for large formula units (from memory)",
};
/// V_m per mol of formula units.
pub const MOLAR_VOLUME_M3_PER_MOL: Plausible = Plausible {
    lo: 5e-6,
    hi: 1e-3,
    unit: "m3/mol",
    source: "oxide crystals hold about 1e-5 to 3e-5 m3 per mol of oxide units, and a formula unit a few tens of oxide units at most (from memory)",
};
/// Turnbull's α.
pub const TURNBULL_ALPHA: Plausible = Plausible {
    lo: 0.1,
    hi: 1.5,
    unit: "",
    source: "Turnbull (1950) found about 0.45 for metals and about 0.3 for non-metals; fits to oxide melts give about 0.2 to 0.6 (from memory)",
};
/// σ, the crystal–melt interface energy.
pub const INTERFACE_ENERGY_J_PER_M2: Plausible = Plausible {
    lo: 0.01,
    hi: 2.0,
    unit: "J/m2",
    source: "crystal-melt interface energies of oxides are about 0.05 to 0.3 J/m2 (from memory)",
};
/// ΔC_p = C_p(liquid) − C_p(crystal).
pub const HEAT_CAPACITY_CHANGE_J_PER_MOL_K: Plausible = Plausible {
    lo: 0.0,
    hi: 500.0,
    unit: "J/(mol K)",
    source: "a few J/(mol K) per atom of the formula unit (from memory)",
};
/// Pre-existing nuclei per m³.
pub const NUCLEI_PER_M3: Plausible = Plausible {
    lo: 0.0,
    hi: 1e15,
    unit: "per m3",
    source: "lab melts hold about 1e6 to 1e12 per m3 (from memory, see configs/demo-screen.toml); 1e15 is one per (10 um)3, more makes a crystal suspension, not a supercooled melt",
};
/// X_c, the detectable crystallised fraction.
pub const DETECTABLE_FRACTION: Plausible = Plausible {
    lo: 1e-9,
    hi: 0.05,
    unit: "",
    source: "Uhlmann (1972) takes 1e-6 (optical microscopy); X-ray diffraction detects about 1e-2 (common practice); no method detects less than about 1e-9",
};
/// The thickness of the sample whose walls nucleate.
pub const SAMPLE_THICKNESS_M: Plausible = Plausible {
    lo: 1e-5,
    hi: 1.0,
    unit: "m",
    source: "from a 10 um splat to a 1 m block (common practice)",
};
/// The melt's thermal diffusivity.
pub const MELT_DIFFUSIVITY_M2_PER_S: Plausible = Plausible {
    lo: 1e-7,
    hi: 5e-6,
    unit: "m2/s",
    source: "silicate melts have about 4e-7 to 8e-7 m2/s, radiative transfer in clear melts adds up to a few 1e-6 (from memory)",
};

/// An input outside its plausible range.
#[derive(Debug, Clone, PartialEq)]
pub struct Implausible {
    /// The crystal phase it belongs to (None: the melt, the options, the quench).
    pub phase: Option<String>,
    /// The key as a user writes it.
    pub key: &'static str,
    pub value: f64,
    pub range: Plausible,
}

/// A number as a user would write it: plain in [1e-3, 1e6), else with an exponent.
pub(crate) fn num(v: f64) -> String {
    if v == 0.0 || (1e-3..1e6).contains(&v.abs()) {
        format!("{v}")
    } else {
        format!("{v:e}")
    }
}

impl fmt::Display for Implausible {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let unit = |v: f64| {
            if self.range.unit.is_empty() {
                num(v)
            } else {
                format!("{} {}", num(v), self.range.unit)
            }
        };
        if let Some(p) = &self.phase {
            write!(f, "{p}: ")?;
        }
        write!(
            f,
            "{} = {} is outside {} to {}, the range plausible for oxide melts ({})",
            self.key,
            unit(self.value),
            num(self.range.lo),
            unit(self.range.hi),
            self.range.source
        )
    }
}

/// `value` against `range`: `Some` when outside.
pub fn check(
    phase: Option<&str>,
    key: &'static str,
    value: f64,
    range: Plausible,
) -> Option<Implausible> {
    (!(range.lo..=range.hi).contains(&value)).then(|| Implausible {
        phase: phase.map(str::to_string),
        key,
        value,
        range,
    })
}

impl Melt {
    /// The values of this melt outside the ranges plausible for oxide melts.
    pub fn implausible(&self) -> Vec<Implausible> {
        let mut out = Vec::new();
        match self.viscosity {
            ViscosityCurve::Vft { a, b_k, c_k } => {
                out.extend(check(None, "a", a, VFT_A));
                out.extend(check(None, "b_k", b_k, VFT_B));
                out.extend(check(None, "c_k", c_k, VFT_C));
            }
            ViscosityCurve::Myega {
                log_eta_inf,
                fragility,
                ..
            } => {
                out.extend(check(None, "log_eta_inf", log_eta_inf, VFT_A));
                out.extend(check(None, "fragility", fragility, FRAGILITY));
            }
        }
        if let Ok(tg) = self
            .viscosity
            .temperature_at(Log10PaS(GLASS_TRANSITION_LOG_VISCOSITY))
        {
            out.extend(check(None, "glass transition", tg.0, GLASS_TRANSITION_K));
        }
        for p in &self.phases {
            let n = Some(p.name.as_str());
            out.extend(check(n, "liquidus_k", p.liquidus.0, LIQUIDUS_K));
            out.extend(check(
                n,
                "enthalpy_of_fusion_j_per_mol",
                p.enthalpy_of_fusion_j_per_mol,
                ENTHALPY_J_PER_MOL,
            ));
            out.extend(check(
                n,
                "molar_volume_m3_per_mol",
                p.molar_volume_m3_per_mol,
                MOLAR_VOLUME_M3_PER_MOL,
            ));
            match p.interface {
                Interface::TurnbullAlpha(a) => {
                    out.extend(check(n, "turnbull_alpha", a, TURNBULL_ALPHA));
                }
                Interface::EnergyJPerM2(s) => {
                    out.extend(check(
                        n,
                        "interface_energy_j_per_m2",
                        s,
                        INTERFACE_ENERGY_J_PER_M2,
                    ));
                }
            }
            out.extend(check(
                n,
                "heat_capacity_change_j_per_mol_k",
                p.heat_capacity_change_j_per_mol_k,
                HEAT_CAPACITY_CHANGE_J_PER_MOL_K,
            ));
            if let Some(t) = p.melting_point {
                out.extend(check(n, "melting_point_k", t.0, LIQUIDUS_K));
            }
            if let Some(nh) = p.nuclei_per_m3 {
                out.extend(check(n, "heterogeneous_nuclei_per_m3", nh, NUCLEI_PER_M3));
            }
        }
        out
    }
}

impl KineticOptions {
    /// The options outside the ranges plausible for oxide melts.
    pub fn implausible(&self) -> Vec<Implausible> {
        let mut out = Vec::new();
        out.extend(check(
            None,
            "detectable_fraction",
            self.detectable_fraction,
            DETECTABLE_FRACTION,
        ));
        out.extend(check(
            None,
            "heterogeneous_nuclei_per_m3",
            self.heterogeneous_nuclei_per_m3,
            NUCLEI_PER_M3,
        ));
        if self.contact_angle_deg < 180.0 {
            out.extend(check(
                None,
                "sample_thickness_m",
                self.sample_thickness_m,
                SAMPLE_THICKNESS_M,
            ));
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinetics::CrystalPhase;
    use crate::properties::GrowthMode;
    use crate::units::Kelvin;

    fn melt(dh: f64, vm: f64) -> Melt {
        Melt::with_phases(
            ViscosityCurve::vft(-2.8, 4500.0, 480.0).unwrap(),
            vec![CrystalPhase::new(
                "x",
                Kelvin(1300.0),
                dh,
                vm,
                Interface::TurnbullAlpha(0.33),
                GrowthMode::Normal,
            )],
        )
        .unwrap()
    }

    #[test]
    fn a_typical_melt_raises_nothing_and_a_unit_slip_is_named() {
        assert!(melt(60_000.0, 6e-5).implausible().is_empty());
        // 60 kJ/mol written in kJ, 60 cm3/mol written as 60e-6 * 1e6.
        let w = melt(60.0, 60.0).implausible();
        let keys: Vec<&str> = w.iter().map(|i| i.key).collect();
        assert_eq!(
            keys,
            ["enthalpy_of_fusion_j_per_mol", "molar_volume_m3_per_mol"]
        );
        let text = w[0].to_string();
        assert!(
            text.starts_with(
                "x: enthalpy_of_fusion_j_per_mol = 60 J/mol is outside 2000 to 1e6 J/mol"
            ),
            "{text}"
        );
        assert!(text.contains("from memory"), "{text}");
        assert!(KineticOptions::default().implausible().is_empty());
    }
}
