//! Issue 14, the input side: "nothing silently wrong". One regression test
//! per item (named after it: s1_…, n1_…, p1_…), each run as a user would,
//! or on the library where that shows the defect more directly. Before the
//! fixes every one of them failed: a bad cell read as 0, a NaN option taken,
//! an infinite critical rate printed, a panic.

use crate::util::{root, run_in, temp_dir};
use std::path::Path;

const GLASS: &str = "SiO2=72 Na2O=14 CaO=10 Al2O3=4";

fn write(dir: &Path, name: &str, text: &str) -> String {
    std::fs::write(dir.join(name), text).unwrap();
    name.to_string()
}

fn assert_no_non_finite(text: &str) {
    for bad in ["inf ", "inf\n", "NaN", "null", "never"] {
        assert!(!text.contains(bad), "found {bad:?} in:\n{text}");
    }
}

fn line_of(text: &str, needle: &str) -> usize {
    text.lines().position(|l| l.contains(needle)).unwrap() + 1
}

#[test]
fn s6_a_nan_coefficient_in_a_model_set_is_refused_on_load() {
    let d = temp_dir("s6");
    let text = std::fs::read_to_string(root().join("configs/models/demo-soda-lime.toml"))
        .unwrap()
        .replacen("constant = -2.45", "constant = nan", 1);
    let m = write(&d, "m.toml", &text);
    let line = line_of(&text, "constant = nan");
    for args in [
        vec!["models", "--models", &m],
        vec!["eval", "--mol", GLASS, "--models", &m],
    ] {
        run_in(&d, &args).code(2).stderr_has(&format!(
            "m.toml:{line}: the constant must be a finite number, got NaN"
        ));
    }
}

fn demo_card(replace: &[(&str, &str)]) -> String {
    let mut text = std::fs::read_to_string(root().join("demo-datasets/melt-card.toml")).unwrap();
    for (a, b) in replace {
        assert!(text.contains(a), "the demo card has no {a:?}");
        text = text.replacen(a, b, 1);
    }
    text
}

#[test]
fn n2_no_output_holds_inf_nan_null_or_never_for_any_kinetic_factor() {
    // α from ordinary to absurd, with and without pre-existing nuclei: each
    // run either prints finite numbers or refuses with a message.
    let d = temp_dir("n2");
    for alpha in ["3", "10", "1e3", "1e100"] {
        for nuclei in ["0.0", "1e9"] {
            let text = demo_card(&[
                (
                    "turnbull_alpha = 0.33",
                    &format!("turnbull_alpha = {alpha}"),
                ),
                (
                    "heterogeneous_nuclei_per_m3 = 0.0",
                    &format!("heterogeneous_nuclei_per_m3 = {nuclei}"),
                ),
            ]);
            let c = write(&d, "card.toml", &text);
            let r = run_in(&d, &["eval", "--melt", &c, "--json"]);
            match r.code {
                0 => {
                    assert_no_non_finite(&r.stdout);
                    let j = r.json();
                    assert!(j["critical_rate_k_per_s"].as_f64().unwrap() > 0.0);
                    assert!(j["nose_time_s"].as_f64().unwrap().is_finite());
                    // The absurd α is named with its plausible range.
                    let warnings = j["warnings"].to_string();
                    assert!(
                        warnings.contains(&format!("turnbull_alpha = {alpha}"))
                            && warnings.contains("outside 0.1 to 1.5"),
                        "α = {alpha}: {warnings}"
                    );
                }
                2 => {
                    assert!(r.stderr.contains("card.toml:"), "{}", r.stderr);
                    assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
                }
                other => panic!("α = {alpha}: exit {other}\n{}", r.stderr),
            }
            // The text output too.
            let r = run_in(&d, &["eval", "--melt", &c]);
            assert_no_non_finite(&r.stdout);
        }
    }
}

#[test]
fn n2_a_melt_that_cannot_nucleate_gives_errors_not_a_zero_rate_or_an_infinite_slab() {
    use quenchwise::kinetics::{KineticOptions, Kinetics, KineticsError, Melt};
    use quenchwise::properties::{GrowthMode, Interface, ViscosityCurve};
    use quenchwise::units::Kelvin;
    // The demo card with α = 1e100: the nucleation barrier is astronomical,
    // I = 0 everywhere and no nuclei wait: nothing ever crystallises. The
    // critical rate used to come out as 0 K/s and the glassy slab as inf mm.
    let melt = Melt::new(
        ViscosityCurve::vft(-2.8, 4500.0, 480.0).unwrap(),
        Kelvin(1300.0),
        60_000.0,
        6e-5,
        Interface::TurnbullAlpha(1e100),
        GrowthMode::Normal,
    )
    .unwrap();
    let k = Kinetics::new(&melt, &KineticOptions::default()).unwrap();
    assert!(matches!(
        k.critical_rate(),
        Err(KineticsError::Unrepresentable { .. })
    ));
    let slab = k.max_glassy_half_thickness_m(Kelvin(298.15), 5e-7);
    assert!(
        matches!(slab, Err(KineticsError::Unrepresentable { .. })),
        "{slab:?}"
    );
    assert!(k.analyse().is_err());
}

#[test]
fn n2_a_slab_that_never_crystallises_gets_a_note_not_inf_mm() {
    // Only pre-existing nuclei grow (homogeneous nucleation is off with a huge
    // α): the critical rate stays finite, and so must the glassy slab.
    let d = temp_dir("n2-slab");
    let text = demo_card(&[
        ("turnbull_alpha = 0.33", "turnbull_alpha = 1e100"),
        (
            "heterogeneous_nuclei_per_m3 = 0.0",
            "heterogeneous_nuclei_per_m3 = 1e9",
        ),
    ]);
    let c = write(&d, "card.toml", &text);
    let r = run_in(&d, &["eval", "--melt", &c]);
    r.code(0);
    assert_no_non_finite(&r.stdout);
    assert!(!r.stdout.contains("inf mm"), "{}", r.stdout);
}

#[test]
fn implausible_card_values_are_warned_about_with_range_and_source() {
    let d = temp_dir("plausible");
    let cases = [
        (
            "enthalpy_of_fusion_j_per_mol = 60000.0",
            "enthalpy_of_fusion_j_per_mol = 100.0",
            "enthalpy_of_fusion_j_per_mol = 100 J/mol is outside 2000 to 1e6 J/mol",
        ),
        (
            "heterogeneous_nuclei_per_m3 = 0.0",
            "heterogeneous_nuclei_per_m3 = 1e35",
            "heterogeneous_nuclei_per_m3 = 1e35 per m3 is outside 0 to 1e15 per m3",
        ),
        (
            "detectable_fraction = 1e-6",
            "detectable_fraction = 1e-300",
            "detectable_fraction = 1e-300 is outside 1e-9 to 0.05",
        ),
        (
            "molar_volume_m3_per_mol = 6.0e-5",
            "molar_volume_m3_per_mol = 1.0",
            "molar_volume_m3_per_mol = 1 m3/mol is outside 5e-6 to 0.001 m3/mol",
        ),
        (
            "liquidus_k = 1300.0",
            "liquidus_k = 1e7",
            "liquidus_k = 1e7 K is outside 500 to 3200 K",
        ),
    ];
    for (from, to, warning) in cases {
        let text = demo_card(&[(from, to)]);
        let c = write(&d, "card.toml", &text);
        let r = run_in(&d, &["eval", "--melt", &c, "--json"]);
        // Either evaluated with the warning, or refused naming the value.
        match r.code {
            0 => {
                assert_no_non_finite(&r.stdout);
                let w = r.json()["warnings"].to_string();
                assert!(w.contains(warning), "{to}: {w}");
                assert!(
                    w.contains("from memory") || w.contains("common practice"),
                    "{w}"
                );
            }
            2 => {
                r.stderr_has(warning);
            }
            other => panic!("{to}: exit {other}\n{}", r.stderr),
        }
    }
}
