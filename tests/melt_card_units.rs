//! Melt cards in the units of the trade: the liquidus in °C, log10 η in
//! dPa·s (poise), and the MYEGA viscosity form.

use crate::util::{root, run_in, temp_dir};
use quenchwise::assess::{evaluate_melt, Calibration};
use quenchwise::files::melt_card::parse_melt_card;
use quenchwise::files::source::Source;
use quenchwise::kinetics::{KineticOptions, Melt};
use quenchwise::units::Kelvin;

fn card(text: &str) -> Result<Melt, String> {
    parse_melt_card(&Source::new("card.toml", text), &KineticOptions::default())
        .map(|(m, _)| m)
        .map_err(|e| e.to_string())
}

const CRYSTAL_K: &str = r#"
[crystal]
liquidus_k = 1300.0
enthalpy_of_fusion_j_per_mol = 60000.0
molar_volume_m3_per_mol = 6.0e-5
turnbull_alpha = 0.33
growth = "normal"
"#;

/// The demo card's numbers (invented, demo-datasets/melt-card.toml) in K and
/// Pa·s, and the same melt written in °C and dPa·s.
fn kelvin_card() -> String {
    format!("[viscosity]\na = -2.8\nb_k = 4500.0\nc_k = 480.0\n{CRYSTAL_K}")
}

fn celsius_card() -> String {
    // Source: SI brochure, 9th ed. (BIPM 2019) and ISO 80000-5: T/K = t/°C + 273.15,
    // so 1300 K is 1026.85 °C; 1 P = 1 dPa·s = 0.1 Pa·s, so log10(η/dPa·s) =
    // log10(η/Pa·s) + 1 and a = -2.8 becomes -1.8 (B and C, temperatures, stay).
    let crystal = CRYSTAL_K.replace("liquidus_k = 1300.0", "liquidus_c = 1026.85");
    format!("[viscosity]\nunit = \"dPa.s\"\na = -1.8\nb_k = 4500.0\nc_k = 480.0\n{crystal}")
}

#[test]
fn a_card_in_celsius_and_poise_is_the_card_in_kelvin_and_pascal_seconds() {
    let k = card(&kelvin_card()).unwrap();
    let c = card(&celsius_card()).unwrap();
    assert!(
        (k.liquidus().0 - c.liquidus().0).abs() < 1e-9,
        "{} vs {}",
        k.liquidus().0,
        c.liquidus().0
    );
    for t in [800.0, 1000.0, 1300.0] {
        let (a, b) = (
            k.viscosity.log10_viscosity(Kelvin(t)).0,
            c.viscosity.log10_viscosity(Kelvin(t)).0,
        );
        assert!((a - b).abs() < 1e-12, "{t} K: {a} vs {b}");
    }
    let opts = KineticOptions::default();
    let ek = evaluate_melt(&k, &opts, None, &Calibration::None).unwrap();
    let ec = evaluate_melt(&c, &opts, None, &Calibration::None).unwrap();
    let r = ek.critical_rate_k_per_s / ec.critical_rate_k_per_s;
    assert!(
        (r - 1.0).abs() < 1e-9,
        "{} vs {}",
        ek.critical_rate_k_per_s,
        ec.critical_rate_k_per_s
    );
}

#[test]
fn a_myega_card_follows_the_published_equation() {
    // Source: Mauro, Yue, Ellison, Gupta & Allan, PNAS 106 (2009) 19780, eq. 6:
    // log10 η = log10 η∞ + (12 − log10 η∞)(Tg/T) exp[(m/(12 − log10 η∞) − 1)(Tg/T − 1)].
    // By hand at log10 η∞ = −3, Tg = 800 K, m = 40, T = 1000 K: Tg/T = 0.8,
    // exponent (40/15 − 1)(−0.2) = −1/3, e^(−1/3) = 0.716531, so
    // log10 η = −3 + 15 × 0.8 × 0.716531 = 5.59837.
    let text = format!(
        "[viscosity]\nform = \"myega\"\nlog_eta_inf = -3.0\ntg_k = 800.0\nfragility = 40.0\n{CRYSTAL_K}"
    );
    let m = card(&text).unwrap();
    let got = m.viscosity.log10_viscosity(Kelvin(1000.0)).0;
    assert!((got - 5.59837).abs() < 1e-5, "{got}");
    // At T = Tg the equation gives 12 exactly (Mauro et al. 2009, the definition of Tg).
    assert!((m.viscosity.log10_viscosity(Kelvin(800.0)).0 - 12.0).abs() < 1e-12);
    // The same curve in poise: log10 η∞ = −2 (dPa·s).
    let poise = text
        .replace("log_eta_inf = -3.0", "log_eta_inf = -2.0")
        .replace("form = \"myega\"", "form = \"myega\"\nunit = \"poise\"");
    let p = card(&poise).unwrap();
    assert!((p.viscosity.log10_viscosity(Kelvin(1000.0)).0 - got).abs() < 1e-12);
}

#[test]
fn the_liquidus_is_given_once_and_a_bad_unit_or_form_key_names_its_line() {
    let both = kelvin_card().replace(
        "liquidus_k = 1300.0",
        "liquidus_k = 1300.0\nliquidus_c = 1026.85",
    );
    let err = card(&both).unwrap_err();
    let line = both
        .lines()
        .position(|l| l.starts_with("liquidus_c"))
        .unwrap()
        + 1;
    assert!(
        err.contains(&format!("card.toml:{line}: give the liquidus once")),
        "{err}"
    );
    // A liquidus in °C is judged in °C on its own line (absolute zero is
    // −273.15 °C: ISO 80000-5).
    for (bad, said) in [
        ("nan", "liquidus_c must be a finite number of °C"),
        ("-400", "liquidus_c must lie above absolute zero"),
    ] {
        let text = kelvin_card().replace("liquidus_k = 1300.0", &format!("liquidus_c = {bad}"));
        let err = card(&text).unwrap_err();
        let line = text
            .lines()
            .position(|l| l.starts_with("liquidus_c"))
            .unwrap()
            + 1;
        assert!(err.contains(&format!("card.toml:{line}: {said}")), "{err}");
    }
    let neither = kelvin_card().replace("liquidus_k = 1300.0\n", "");
    let err = card(&neither).unwrap_err();
    assert!(
        err.contains("needs its liquidus: liquidus_k (K) or liquidus_c (°C)"),
        "{err}"
    );
    let unit = kelvin_card().replace("[viscosity]", "[viscosity]\nunit = \"cP\"");
    let err = card(&unit).unwrap_err();
    assert!(
        err.contains("card.toml:2: unit must be \"Pa.s\" or \"dPa.s\""),
        "{err}"
    );
    let mixed = kelvin_card().replace("c_k = 480.0", "c_k = 480.0\nfragility = 40.0");
    let err = card(&mixed).unwrap_err();
    assert!(
        err.contains("card.toml:5: fragility belongs to form = \"myega\""),
        "{err}"
    );
    let short =
        format!("[viscosity]\nform = \"myega\"\nlog_eta_inf = -3.0\ntg_k = 800.0\n{CRYSTAL_K}");
    let err = card(&short).unwrap_err();
    assert!(
        err.contains("card.toml:2: [viscosity] with form = \"myega\" needs fragility"),
        "{err}"
    );
}

#[test]
fn eval_reads_a_card_in_celsius_and_poise() {
    let d = temp_dir("card-celsius");
    let p = d.join("card.toml");
    std::fs::write(&p, celsius_card()).unwrap();
    let c = run_in(&d, &["eval", "--melt", p.to_str().unwrap(), "--json"])
        .code(0)
        .json();
    std::fs::write(&p, kelvin_card()).unwrap();
    let k = run_in(&d, &["eval", "--melt", p.to_str().unwrap(), "--json"])
        .code(0)
        .json();
    assert_eq!(c["critical_rate_k_per_s"], k["critical_rate_k_per_s"]);
    assert_eq!(c["liquidus_k"], k["liquidus_k"]);
    // The demo card still reads.
    run_in(
        &d,
        &[
            "eval",
            "--melt",
            root()
                .join("demo-datasets/melt-card.toml")
                .to_str()
                .unwrap(),
        ],
    )
    .code(0);
}
