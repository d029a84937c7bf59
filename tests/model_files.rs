//! Model-file paths a user's own files take: a MYEGA viscosity model, a
//! liquidus written in °C, a primary phase that switches, extrapolation flags,
//! a melt card giving σ instead of α.

use crate::tolerances::PRINTED_5SF_RTOL;
use crate::util::rel;
use quenchwise::assess::{evaluate_composition, evaluate_melt, Calibration};
use quenchwise::composition::{Basis, Composition};
use quenchwise::files::melt_card::parse_melt_card;
use quenchwise::files::model_set::parse_model_set;
use quenchwise::files::source::Source;
use quenchwise::kinetics::KineticOptions;
use quenchwise::properties::ModelSet;

/// A small model set of our own (numbers illustrative): MYEGA viscosity with
/// constant parameters, two phases whose surfaces cross at 15 mol% CaO, one
/// of them written in °C.
const SET: &str = r#"
[about]
name = "test-myega"
description = "illustrative"
source = "written for this test"
date = "2026-12-02"
units = "K"
invented = true

[viscosity]
form = "myega"
name = "constant MYEGA"
source = "illustrative"
[viscosity.domain]
SiO2 = [60.0, 80.0]
Na2O = [10.0, 20.0]
CaO = [3.0, 20.0]
[viscosity.log_eta_inf]
basis = "mole_fraction"
constant = -2.9
[viscosity.tg_k]
basis = "mole_fraction"
unit = "K"
constant = 820.0
[viscosity.fragility]
basis = "mole_fraction"
constant = 38.0

[[phase]]
name = "lime phase"
formula = "CaSiO3"
enthalpy_of_fusion_j_per_mol = 57000.0
molar_volume_m3_per_mol = 4.0e-5
melting_point_k = 1800.0
growth = "screw"
turnbull_alpha = 0.30
[phase.liquidus]
basis = "mol_percent"
unit = "degC"
constant = 850.0
linear = { CaO = 20.0 }
[phase.domain]
SiO2 = [60.0, 80.0]
Na2O = [10.0, 25.0]
CaO = [12.0, 20.0]

[[phase]]
name = "silica phase"
formula = "SiO2"
enthalpy_of_fusion_j_per_mol = 8900.0
molar_volume_m3_per_mol = 2.6e-5
melting_point_k = 1999.0
growth = "normal"
turnbull_alpha = 0.50
[phase.liquidus]
basis = "mol_percent"
unit = "K"
constant = 1423.15
linear = { CaO = 0.0 }
[phase.domain]
SiO2 = [60.0, 80.0]
Na2O = [10.0, 25.0]
CaO = [5.0, 15.0]
"#;

fn set() -> ModelSet {
    parse_model_set(&Source::new("test.toml", SET)).unwrap()
}

fn eval(text: &str) -> quenchwise::assess::Evaluation {
    let c = Composition::parse(text, Basis::MolPercent, 1e-9).unwrap();
    evaluate_composition(
        &set(),
        &c,
        &KineticOptions::default(),
        None,
        &Calibration::None,
    )
    .unwrap()
}

#[test]
fn a_myega_model_gives_its_own_glass_transition_and_fragility() {
    // Source: Mauro et al. (2009), PNAS 106, 19780: log η(T_g) = 12 by construction,
    // and m is the slope at T_g.
    let e = eval("SiO2=75 Na2O=15 CaO=10");
    assert!(
        (e.glass_transition_k - 820.0).abs() < 1e-6,
        "{}",
        e.glass_transition_k
    );
    assert!((e.fragility - 38.0).abs() < 1e-9, "{}", e.fragility);
}

#[test]
fn a_liquidus_in_celsius_is_read_as_kelvin_and_the_primary_phase_switches() {
    // The lime surface is 850 °C + 20 K per mol% CaO = 1123.15 + 20·CaO K (°C
    // converted once, SI Brochure: T/K = t/°C + 273.15); the silica surface is
    // 1423.15 K flat. They cross at 15 mol% CaO.
    let lo = eval("SiO2=75 Na2O=15 CaO=10");
    assert_eq!(lo.primary_phase.as_deref(), Some("silica phase"));
    assert!((lo.liquidus_k - 1423.15).abs() < 1e-9);
    assert!((lo.liquidus_by_phase_k["lime phase"] - 1323.15).abs() < 1e-9);
    let hi = eval("SiO2=67 Na2O=15 CaO=18");
    assert_eq!(hi.primary_phase.as_deref(), Some("lime phase"));
    assert!((hi.liquidus_k - (1123.15 + 20.0 * 18.0)).abs() < 1e-9);
}

#[test]
fn extrapolation_is_flagged_on_the_model_it_concerns() {
    // Inside every domain: no flag. Outside the viscosity domain (Na2O 22): the
    // viscosity flag only. Outside the primary phase's domain (CaO 4 with the
    // silica phase primary, whose domain starts at 5): the liquidus flag only.
    let inside = eval("SiO2=75 Na2O=15 CaO=10");
    assert!(!inside.viscosity_extrapolated && !inside.liquidus_extrapolated);
    let soda = eval("SiO2=68 Na2O=22 CaO=10");
    assert!(soda.viscosity_extrapolated && !soda.liquidus_extrapolated);
    assert!(soda
        .warnings
        .iter()
        .any(|w| w.contains("Na2O") && w.contains("above 20")));
    let silica = eval("SiO2=79 Na2O=17 CaO=4");
    assert!(!silica.viscosity_extrapolated);
    assert!(silica.liquidus_extrapolated, "{:?}", silica.warnings);
    assert!(silica
        .warnings
        .iter()
        .any(|w| w.contains("silica phase liquidus")));
}

#[test]
fn a_card_giving_sigma_equals_the_card_giving_the_same_alpha() {
    // Skapski–Turnbull: σ = α ΔH_m / (N_A^(1/3) V_m^(2/3)). For the demo card
    // (α 0.33, ΔH_m 60 kJ/mol, V_m 6.0e-5 m³/mol), by hand:
    // N_A^(1/3) = 8.444688e7 mol^(-1/3), V_m^(2/3) = 1.532619e-3 m² mol^(-2/3)
    // → σ = 19800 / 129424.3 = 0.1529845 J/m².
    let alpha_card = crate::util::demo_card();
    let text = std::fs::read_to_string(crate::util::root().join("demo-datasets/melt-card.toml"))
        .unwrap()
        .replace(
            "turnbull_alpha = 0.33",
            "interface_energy_j_per_m2 = 0.1529845",
        );
    let (sigma_card, opts) = parse_melt_card(
        &Source::new("sigma.toml", &text),
        &KineticOptions::default(),
    )
    .unwrap();
    let by_alpha = evaluate_melt(&alpha_card, &opts, None, &Calibration::None).unwrap();
    let by_sigma = evaluate_melt(&sigma_card, &opts, None, &Calibration::None).unwrap();
    assert!(
        (by_sigma.turnbull_alpha - 0.33).abs() < 1e-6,
        "{}",
        by_sigma.turnbull_alpha
    );
    // σ is written to 7 digits: R_c goes as exp(−σ³ …), so allow 1e-4.
    assert!(
        rel(
            by_sigma.critical_rate_k_per_s,
            by_alpha.critical_rate_k_per_s
        ) < PRINTED_5SF_RTOL,
        "{} vs {}",
        by_sigma.critical_rate_k_per_s,
        by_alpha.critical_rate_k_per_s
    );
}
