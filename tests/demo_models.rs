//! The invented demo model set against two published commercial glasses, and
//! against what the trade knows about soda-lime glass formation.

use crate::tolerances::{DEMO_FIXPOINT_RESIDUAL_K, DEMO_LIQUIDUS_RESIDUAL_K};
use quenchwise::assess::{evaluate_composition, Calibration};
use quenchwise::composition::{Basis, Composition};
use quenchwise::files::model_set::{parse_model_set, DEMO_MODELS};
use quenchwise::files::source::Source;
use quenchwise::kinetics::KineticOptions;
use quenchwise::properties::{fixpoints, ModelSet};
use quenchwise::units::Celsius;

fn demo() -> ModelSet {
    parse_model_set(&Source::new("demo", DEMO_MODELS)).unwrap()
}

/// Published VFT in °C with η in Pa·s: T(L) = T0 + B/(L − A).
fn published(a: f64, b: f64, t0: f64, level: f64) -> f64 {
    Celsius(t0 + b / (level - a)).to_kelvin().0
}

/// (name, wt% without SO3, VFT A, B, T0 °C, liquidus °C)
/// Source: Seward & Vascott (eds.), High temperature glass melt
/// property database for process modeling, ACerS 2005, as tabulated in a secondary
/// source (the encyclopedic "Soda–lime glass" table). The VFT constants are read
/// with η in Pa·s: read as dPa·s they would put the float glass's softening point
/// near 677 °C, far below the ≈720–730 °C known for such glass (common practice).
/// SO3 (0.2 wt% in the container glass) is left out: the demo set does not cover
/// it, so it would flag the glass as an extrapolation; the rest is renormalised
/// (a note says so).
fn published_glasses() -> Vec<(&'static str, &'static str, f64, f64, f64, f64)> {
    vec![
        (
            "container",
            "SiO2=74 Na2O=13 CaO=10.5 Al2O3=1.3 K2O=0.3 MgO=0.2 Fe2O3=0.04 TiO2=0.01",
            -2.309,
            3922.0,
            291.0,
            1040.0,
        ),
        (
            "float",
            "SiO2=73 Na2O=14 CaO=9 MgO=4 Al2O3=0.15 K2O=0.03 TiO2=0.02 Fe2O3=0.1",
            -2.585,
            4215.0,
            263.0,
            1000.0,
        ),
    ]
}

#[test]
fn viscosity_fixpoints_fit_residual_on_the_published_container_and_float_glasses() {
    // A fit residual, not a validation: the invented set was tuned to these 8
    // fixpoints. Measured: at most 4.35 K (float working point); the README says
    // 4.5 K, and this check holds it to that.
    let m = demo();
    for (name, wt, a, b, t0, _) in published_glasses() {
        let c = Composition::parse(wt, Basis::WtPercent, 2.0).unwrap();
        let p = m.properties(&c).unwrap();
        assert!(
            p.viscosity_flags.is_empty(),
            "{name}: {:?}",
            p.viscosity_flags
        );
        for (label, level, got) in [
            ("10 Pa s", fixpoints::MELTING, p.melting_temperature.0),
            ("working", fixpoints::WORKING, p.working_point.0),
            ("softening", fixpoints::SOFTENING, p.softening_point.0),
            ("T_g", fixpoints::GLASS_TRANSITION, p.glass_transition.0),
        ] {
            let want = published(a, b, t0, level);
            assert!(
                (got - want).abs() < DEMO_FIXPOINT_RESIDUAL_K,
                "{name} {label}: {got:.1} K vs published {want:.1} K"
            );
        }
    }
}

#[test]
fn liquidus_fit_residual_on_the_published_glasses() {
    // Source: Seward & Vascott (2005), liquidus 1040 °C (container) and 1000 °C (float).
    // A fit residual (the surfaces were tuned to these two): measured 2.1 K and
    // 4.1 K; the README says 5 K.
    let m = demo();
    for (name, wt, _, _, _, tl) in published_glasses() {
        let c = Composition::parse(wt, Basis::WtPercent, 2.0).unwrap();
        let p = m.properties(&c).unwrap();
        let got = p.liquidus.to_celsius().0;
        assert!(
            (got - tl).abs() < DEMO_LIQUIDUS_RESIDUAL_K,
            "{name}: {got:.1} °C vs {tl} °C"
        );
    }
}

#[test]
fn ordinary_soda_lime_vitrifies_when_poured_and_air_cooled() {
    // Soda-lime melts left to cool in air (about 1–10 K/s, from memory) come out
    // glassy (common practice). The invented set was tuned so that these two
    // glasses need at least a decade less than that: R_c below 0.1 K/s (measured
    // 0.055 and 0.047 K/s, homogeneous nucleation only). This is the demo's own
    // target, not a measurement.
    let m = demo();
    for (name, wt, ..) in published_glasses() {
        let c = Composition::parse(wt, Basis::WtPercent, 2.0).unwrap();
        let e = evaluate_composition(&m, &c, &KineticOptions::default(), None, &Calibration::None)
            .unwrap();
        assert!(
            e.critical_rate_k_per_s < 0.1,
            "{name}: R_c = {}",
            e.critical_rate_k_per_s
        );
        assert!(e.nose_temperature_k > e.glass_transition_k);
    }
}

#[test]
fn critical_rate_rises_by_decades_where_the_liquidus_climbs() {
    // The direction is common practice: towards lime-rich melts the wollastonite
    // liquidus climbs steeply and glass formation gets hard. The size is the
    // invented set's own target: from 10 to 17 mol% CaO (at 12 Na2O) R_c rises
    // monotonically by more than four decades (measured 4.45).
    let m = demo();
    let mut last = 0.0;
    let mut first = None;
    for cao in [10.0, 12.0, 14.0, 16.0, 17.0] {
        let text = format!("SiO2={} Na2O=12 CaO={cao} Al2O3=2", 86.0 - cao);
        let c = Composition::parse(&text, Basis::MolPercent, 0.0).unwrap();
        let e = evaluate_composition(&m, &c, &KineticOptions::default(), None, &Calibration::None)
            .unwrap();
        assert!(e.critical_rate_k_per_s > last, "{text}");
        last = e.critical_rate_k_per_s;
        first.get_or_insert(last);
    }
    let decades = (last / first.unwrap()).log10();
    assert!(decades > 4.0, "only {decades:.2} decades");
}

#[test]
fn every_phase_surface_and_alpha_is_marked_invented_in_the_file() {
    assert!(demo().about.invented);
    let phases = demo().phases.len();
    let alphas: Vec<&str> = DEMO_MODELS
        .lines()
        .filter(|l| l.trim_start().starts_with("turnbull_alpha"))
        .collect();
    assert_eq!(alphas.len(), phases);
    for line in alphas {
        assert!(line.contains("INVENTED"), "{line}");
    }
    // Every [phase.liquidus] block opens with a comment that says INVENTED.
    let blocks: Vec<&str> = DEMO_MODELS.split("[phase.liquidus]").skip(1).collect();
    assert_eq!(blocks.len(), phases);
    for b in blocks {
        let first = b.lines().find(|l| !l.trim().is_empty()).unwrap_or_default();
        assert!(
            first.starts_with('#') && first.contains("INVENTED"),
            "{first}"
        );
    }
}

/// The corners of a domain box intersected with Σ x = 100 mol%: every point
/// with all coordinates but one at a bound and that one closing the sum.
fn domain_corners(min: &[f64], max: &[f64]) -> Vec<Vec<f64>> {
    let n = min.len();
    let varying: Vec<usize> = (0..n)
        .filter(|&i| max[i] > min[i] || max[i] > 0.0)
        .collect();
    let mut out = Vec::new();
    for &free in &varying {
        let others: Vec<usize> = varying.iter().copied().filter(|&i| i != free).collect();
        for bits in 0..(1u64 << others.len()) {
            let mut x = vec![0.0; n];
            for (k, &i) in others.iter().enumerate() {
                x[i] = if bits >> k & 1 == 1 { max[i] } else { min[i] };
            }
            x[free] = 100.0 - x.iter().sum::<f64>();
            if x[free] >= min[free] - 1e-9 && x[free] <= max[free] + 1e-9 {
                out.push(x);
            }
        }
    }
    out
}

#[test]
fn no_liquidus_surface_rises_above_its_melting_point_in_its_domain() {
    // Thermodynamics (docs/science.md, "Liquidus"): a phase cannot be stable above
    // its own melting point (or decomposition temperature). A linear surface takes
    // its maximum over the domain at a corner, so checking the corners is exact.
    use quenchwise::composition::N_OXIDES;
    use quenchwise::properties::LiquidusSurface;
    let m = demo();
    for p in &m.phases {
        let LiquidusSurface::Mixture(surface) = &p.liquidus else {
            continue;
        };
        let corners = domain_corners(&p.domain.min, &p.domain.max);
        assert!(!corners.is_empty(), "{}: empty domain", p.name);
        let highest = corners
            .iter()
            .map(|x| {
                let f: [f64; N_OXIDES] = std::array::from_fn(|i| x[i] / 100.0);
                surface.eval(&f)
            })
            .fold(f64::NEG_INFINITY, f64::max);
        assert!(
            highest <= p.melting_point.0,
            "{}: surface reaches {highest:.0} K in its domain, above T_m = {:.0} K",
            p.name,
            p.melting_point.0
        );
    }
}

#[test]
fn critical_rate_is_continuous_across_primary_field_boundaries() {
    // Every phase counts (Avrami: extended volumes add), so R_c is a sum of
    // continuous terms and cannot jump where the primary phase changes. Before,
    // with the primary phase alone, one 0.25 mol% step at 14 Na2O (CaO 9.75 →
    // 10) jumped ×16. Common practice: no measured melt shows such a sawtooth.
    let m = demo();
    let mut last: Option<(f64, String)> = None;
    let mut fields = Vec::new();
    let mut limiting = Vec::new();
    let mut worst = 1.0_f64;
    for i in 0..=100 {
        let ca = 6.0 + 0.1 * i as f64;
        let text = format!("Na2O=14 CaO={ca} SiO2={}", 86.0 - ca);
        let c = Composition::parse(&text, Basis::MolPercent, 1e-9).unwrap();
        let e = evaluate_composition(&m, &c, &KineticOptions::default(), None, &Calibration::None)
            .unwrap();
        let primary = e.primary_phase.clone().unwrap();
        if fields.last() != Some(&primary) {
            fields.push(primary.clone());
        }
        if limiting.last() != Some(&e.limiting_phase) {
            limiting.push(e.limiting_phase.clone());
        }
        if let Some((rc, _)) = &last {
            let r = e.critical_rate_k_per_s / rc;
            worst = worst.max(r.max(1.0 / r));
        }
        last = Some((e.critical_rate_k_per_s, primary));
    }
    assert!(
        fields.len() >= 2,
        "the scan crosses no field boundary: {fields:?}"
    );
    assert!(
        limiting.len() >= 3,
        "the limiting phase changes too rarely: {limiting:?}"
    );
    assert!(worst < 1.5, "a 0.1 mol% step changes R_c ×{worst:.2}");
}

#[test]
fn crystal_data_the_demo_set_takes_from_the_literature_match_their_sources() {
    // The demo set's surfaces and alphas are invented, but its fusion data for
    // three phases are quoted from published tables; hold the file to them.
    let m = demo();
    let phase = |name: &str| {
        m.phases
            .iter()
            .find(|p| p.name == name)
            .unwrap_or_else(|| panic!("no phase {name}"))
    };
    let cases = [
        // Source: NIST-JANAF Thermochemical Tables, 4th ed. (M. W. Chase Jr.,
        // J. Phys. Chem. Ref. Data Monograph 9, 1998), Na2Si2O5 (cr,l): H − H(298.15 K)
        // steps from 196.408 to 231.972 kJ/mol at 1147 K, ΔH_m = 35.564 kJ/mol
        // (read from the tables as distributed in the PyPI package janaf 1.4.0).
        // The file rounds it to 35.6 kJ/mol.
        ("sodium disilicate", 35_564.0, 2e-3, 1147.0),
        // Source: Stebbins, Carmichael & Weill (1983), Am. Mineral. 68, 717:
        // 33.0 ± 0.5 kcal/mol at 1665 K = 138.07 kJ/mol.
        ("diopside", 138_070.0, 1e-9, 1665.0),
        // Source: Richet, Bottinga, Denielou, Petitet & Téqui (1982), Geochim.
        // Cosmochim. Acta 46, 2639: 8.9 ± 1.0 kJ/mol at 1999 K.
        ("cristobalite", 8_900.0, 1e-9, 1999.0),
    ];
    for (name, dh, rtol, tm) in cases {
        let p = phase(name);
        assert!(
            (p.enthalpy_of_fusion_j_per_mol - dh).abs() <= rtol * dh,
            "{name}: ΔH_m {} J/mol vs {dh}",
            p.enthalpy_of_fusion_j_per_mol
        );
        assert_eq!(p.melting_point.0, tm, "{name}: T_m");
    }
}
