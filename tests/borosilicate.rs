//! The invented demo-borosilicate model set against the data sheets of
//! published borosilicate 3.3 glasses, its domains, and the model-set template.

use crate::tolerances::BOROSILICATE_FIXPOINT_RESIDUAL_K;
use crate::util::{root, run_in, temp_dir};
use quenchwise::assess::{evaluate_composition, Calibration};
use quenchwise::composition::{Basis, Composition};
use quenchwise::files::model_set::{load_model_set, parse_model_set, BOROSILICATE_MODELS};
use quenchwise::files::source::Source;
use quenchwise::kinetics::KineticOptions;
use quenchwise::properties::ModelSet;
use quenchwise::units::{Celsius, Log10PaS};

fn set() -> ModelSet {
    parse_model_set(&Source::new("demo-borosilicate", BOROSILICATE_MODELS)).unwrap()
}

/// The temperature (K) at which the set gives log10(η / Pa·s) = `level`.
fn isokom_k(m: &ModelSet, wt: &str, level: f64) -> f64 {
    let c = Composition::parse(wt, Basis::WtPercent, 2.0).unwrap();
    let (curve, flags) = m.viscosity.curve(&c).unwrap();
    assert!(flags.is_empty(), "{wt}: {flags:?}");
    curve.temperature_at(Log10PaS(level)).unwrap().0
}

/// TGI borosilicate glass I-330 (tgi-glas.com, "Material data"): composition
/// and fixpoints from the same data sheet. SCHOTT DURAN (borosilicate glass
/// 3.3 to ISO 3585, data sheet as listed by matmatch.com): fixpoints; that page
/// gives no composition, so the typical borosilicate 3.3 composition of Arbor
/// Scientific's glassware page (≈81 SiO2, 13 B2O3, 4 Na2O, 2 Al2O3 wt%,
/// ASTM E438 Type 1 Class A) stands in. The sheets give η in dPa·s: 10^4,
/// 10^7.6, 10^13 and 10^14.7 dPa·s are 10^3, 10^6.6, 10^12 and 10^13.7 Pa·s.
/// (name, wt%, [(log10 η / Pa·s, °C)])
type DataSheet = (&'static str, &'static str, Vec<(f64, f64)>);

fn data_sheets() -> Vec<DataSheet> {
    vec![
        (
            "TGI I-330",
            "SiO2=80 B2O3=13 Na2O=4 Al2O3=2 K2O=1",
            vec![(3.0, 1250.0), (6.6, 815.0), (12.0, 560.0), (13.7, 510.0)],
        ),
        (
            "DURAN",
            "SiO2=81 B2O3=13 Na2O=4 Al2O3=2",
            vec![(3.0, 1260.0), (6.6, 825.0), (12.0, 560.0)],
        ),
    ]
}

#[test]
fn fixpoints_of_the_published_borosilicate_3_3_glasses() {
    // Source: the data sheets above (working, softening, annealing and strain
    // points). A fit residual, not a validation: A and the SiO2 terms of the
    // invented set were least-squares tuned to these 7 points; measured at
    // most 6.3 K (DURAN annealing point), RMS 4.0 K.
    let m = set();
    let mut worst: f64 = 0.0;
    for (name, wt, points) in data_sheets() {
        for (level, want_c) in points {
            let got = isokom_k(&m, wt, level);
            let want = Celsius(want_c).to_kelvin().0;
            worst = worst.max((got - want).abs());
            assert!(
                (got - want).abs() < BOROSILICATE_FIXPOINT_RESIDUAL_K,
                "{name} at 10^{level} Pa·s: {got:.1} K vs published {want:.1} K"
            );
        }
    }
    // The set is tuned, not exact: a residual of zero would mean the test
    // compares the set with itself.
    assert!(worst > 1.0, "{worst}");
}

#[test]
fn corning_7740_softening_point_is_a_check_not_a_tuning_point() {
    // Source: Corning 7740 as listed by latoscientific.com ("Borosilicate"):
    // 80.6 SiO2, 13.0 B2O3, 4.0 Na2O, 2.3 Al2O3 and 0.1 printed a second time as
    // Na2O (counted as Na2O here), wt%; softening point 821 °C (10^6.6 Pa·s,
    // the Littleton point). Not used in tuning; the set gives 825.7 °C.
    let got = isokom_k(&set(), "SiO2=80.6 B2O3=13.0 Na2O=4.1 Al2O3=2.3", 6.6);
    let want = Celsius(821.0).to_kelvin().0;
    assert!(
        (got - want).abs() < BOROSILICATE_FIXPOINT_RESIDUAL_K,
        "{got:.1} K vs {want:.1} K"
    );
}

#[test]
fn a_typical_borosilicate_is_inside_every_domain() {
    // Source: the typical borosilicate 3.3 compositions of the data sheets
    // above. None of them may be flagged, and glass of this kind is melted and
    // formed by the tonne without devitrifying (common practice), so the set
    // must let it vitrify when cooled in air (about 1–10 K/s, from memory).
    let m = set();
    for wt in [
        "SiO2=80 B2O3=13 Na2O=4 Al2O3=2 K2O=1",
        "SiO2=81 B2O3=13 Na2O=4 Al2O3=2",
        "SiO2=80.6 B2O3=13.0 Na2O=4.1 Al2O3=2.3",
    ] {
        let c = Composition::parse(wt, Basis::WtPercent, 2.0).unwrap();
        let p = m.properties(&c).unwrap();
        assert!(
            p.viscosity_flags.is_empty(),
            "{wt}: {:?}",
            p.viscosity_flags
        );
        assert!(p.liquidus_flags.is_empty(), "{wt}: {:?}", p.liquidus_flags);
        let e = evaluate_composition(&m, &c, &KineticOptions::default(), None, &Calibration::None)
            .unwrap();
        assert!(
            e.critical_rate_k_per_s < 1.0,
            "{wt}: {}",
            e.critical_rate_k_per_s
        );
    }
    // The same through the command line: no line marked as extrapolated.
    let d = temp_dir("borosilicate-eval");
    let r = run_in(
        &d,
        &[
            "eval",
            "--wt",
            "SiO2=80 B2O3=13 Na2O=4 Al2O3=2 K2O=1",
            "--models",
            "demo-borosilicate",
        ],
    );
    r.code(0);
    assert!(
        !r.stdout.contains("!V") && !r.stdout.contains("!L"),
        "{}",
        r.stdout
    );
}

#[test]
fn models_domains_shows_the_borosilicate_set() {
    // Source: configs/models/demo-borosilicate.toml, [viscosity.domain] and
    // [phase.domain] (its own file).
    let d = temp_dir("borosilicate-domains");
    let file = root().join("configs/models/demo-borosilicate.toml");
    for spec in ["demo-borosilicate", file.to_str().unwrap()] {
        let r = run_in(&d, &["models", spec, "--domains"]);
        r.code(0)
            .stdout_has("validity domains of demo-borosilicate")
            .stdout_has("cristobalite liquidus");
        for (oxide, range) in [
            ("SiO2", "76.0–88.0"),
            ("B2O3", "8.0–16.0"),
            ("Na2O", "2.0–7.0"),
            ("K2O", "0.0–3.0"),
            ("Al2O3", "0.0–4.0"),
        ] {
            let line = r
                .stdout
                .lines()
                .find(|l| l.starts_with(oxide) && l[oxide.len()..].starts_with(' '))
                .unwrap_or_else(|| panic!("no {oxide} line:\n{}", r.stdout));
            assert_eq!(line.matches(range).count(), 2, "{line}");
        }
        // The fining agents are named as not covered.
        let last = r.stdout.lines().last().unwrap();
        assert!(
            last.starts_with("not covered by any model")
                && last.contains("SO3")
                && last.contains("Sb2O3")
                && last.contains("CeO2"),
            "{last}"
        );
    }
    // The built-in name and the file are the same set.
    assert_eq!(
        load_model_set(Some(std::path::Path::new("demo-borosilicate"))).unwrap(),
        load_model_set(Some(&file)).unwrap()
    );
}

/// The MYEGA variant of the template: the VFT [viscosity] block replaced by
/// the commented lines between the markers, uncommented.
fn myega_variant(text: &str) -> String {
    let vft = text.find("\n[viscosity]\n").unwrap() + 1;
    let begin = text.find("# --- myega begin\n").unwrap();
    let end = text.find("# --- myega end\n").unwrap();
    let block: Vec<&str> = text[begin..end]
        .lines()
        .skip(1)
        .map(|l| l.strip_prefix("# ").unwrap_or(l.trim_start_matches('#')))
        .collect();
    format!("{}{}\n{}", &text[..vft], block.join("\n"), &text[end..])
}

#[test]
fn the_model_set_template_parses_and_its_myega_variant_too() {
    // Consistency check, no outside reference: every key a model-set file
    // may hold is named in the template (docs/model-set-template.toml).
    let path = root().join("docs/model-set-template.toml");
    let text = std::fs::read_to_string(&path).unwrap();
    let m = parse_model_set(&Source::new("template", &text)).unwrap();
    assert_eq!(m.phases.len(), 2);
    // Every key the parser reads appears in the template, so none is unexplained.
    for key in [
        "name",
        "description",
        "source",
        "date",
        "units",
        "invented",
        "fitted",
        "form",
        "note",
        "domain",
        "basis",
        "unit",
        "constant",
        "linear",
        "pairs",
        "products",
        "groups",
        "coefficient",
        "standard_errors",
        "formula",
        "enthalpy_of_fusion_j_per_mol",
        "molar_volume_m3_per_mol",
        "melting_point_k",
        "growth",
        "turnbull_alpha",
        "turnbull_alpha_sd",
        "calibrated_against",
        "heat_capacity_change_j_per_mol_k",
        "liquidus",
        "freezing_point_depression",
        "components",
        "correction",
        "log_eta_inf",
        "tg_k",
        "fragility",
        "b_k",
        "c_k",
        "kinetics_fit",
        "liquidus_fit",
    ] {
        // As a key (`key =`, commented out or not) or a table name
        // (`[...key]`), not merely a word in a comment.
        let is_word = |c: char| c.is_ascii_alphanumeric() || c == '_';
        let as_key = text.lines().any(|l| {
            let l = l.trim_start().trim_start_matches('#').trim_start();
            l.match_indices(key).any(|(i, _)| {
                !l[..i].ends_with(is_word) && l[i + key.len()..].trim_start().starts_with('=')
            }) || l
                .split('[')
                .skip(1)
                .filter_map(|t| t.split(']').next())
                .any(|t| t.rsplit('.').next() == Some(key))
        });
        assert!(
            as_key,
            "the template does not explain '{key}' as a key or table"
        );
    }
    // The example equals the built-in demo-borosilicate set where it says so:
    // the same viscosity and, for cristobalite, the same liquidus (given in °C).
    let boro = set();
    let c = Composition::parse(
        "SiO2=80 B2O3=13 Na2O=4 Al2O3=2 K2O=1",
        Basis::WtPercent,
        2.0,
    )
    .unwrap();
    let (a, b) = (m.properties(&c).unwrap(), boro.properties(&c).unwrap());
    assert!((a.glass_transition.0 - b.glass_transition.0).abs() < 1e-9);
    assert!((a.liquidus_by_phase[0].liquidus_k - b.liquidus_by_phase[0].liquidus_k).abs() < 1e-9);
    // The commented MYEGA block is a valid viscosity model as well.
    let variant = myega_variant(&text);
    let my = parse_model_set(&Source::new("template (MYEGA)", &variant))
        .unwrap_or_else(|e| panic!("{e}\n{variant}"));
    let p = my.properties(&c).unwrap();
    // Its T_g is written to be close to the VFT's (828 K at this glass).
    assert!((p.glass_transition.0 - a.glass_transition.0).abs() < 5.0);
    // And the command line loads the template.
    let d = temp_dir("template-models");
    run_in(&d, &["models", path.to_str().unwrap()])
        .code(0)
        .stdout_has("template-borosilicate");
}
