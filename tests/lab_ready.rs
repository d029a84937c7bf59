//! Results a person can use at the bench: no oxide silently ignored.

use crate::util::{root, run_in, temp_dir};

/// An oxide the demo model set has no term for must not vanish: the same glass
/// with 12 mol% BaO and with 12 mol% SrO are different glasses, and the model
/// can say nothing about either, so both are flagged on the lines they affect.
#[test]
fn an_oxide_the_models_do_not_cover_is_flagged_not_dropped() {
    // Source: configs/models/demo-soda-lime.toml lists no BaO or SrO in any
    // [*.domain] table and has no coefficient for them (its own file).
    let d = temp_dir("uncovered-oxide");
    let j = run_in(
        &d,
        &["eval", "--mol", "SiO2=66 Na2O=14 CaO=8 BaO=12", "--json"],
    )
    .code(0)
    .json();
    assert_eq!(j["viscosity_extrapolated"], true, "{j}");
    assert_eq!(j["liquidus_extrapolated"], true, "{j}");
    let warnings = j["warnings"].to_string();
    assert!(
        warnings.contains("BaO 12.00 mol%, an oxide the model does not cover"),
        "{warnings}"
    );
    // A glass of covered oxides only stays unflagged.
    let j = run_in(
        &d,
        &["eval", "--mol", "SiO2=72 Na2O=14 CaO=10 Al2O3=4", "--json"],
    )
    .code(0)
    .json();
    assert_eq!(j["viscosity_extrapolated"], false, "{j}");
}

/// A screen over an oxide the models leave out is refused by `check`, naming
/// the line, unless extrapolation is allowed.
#[test]
fn a_screen_over_an_uncovered_oxide_is_refused_unless_extrapolation_is_allowed() {
    let d = temp_dir("uncovered-screen");
    let demo = std::fs::read_to_string(root().join("configs/demo-screen.toml")).unwrap();
    let text = demo.replace("B2O3 = [0.0, 5.0]", "B2O3 = [0.0, 5.0]\nBaO = [0.0, 8.0]");
    assert!(
        text.contains("BaO = [0.0, 8.0]"),
        "the demo config changed shape"
    );
    let cfg = d.join("with-bao.toml");
    std::fs::write(&cfg, &text).unwrap();
    let line = text.lines().position(|l| l.starts_with("BaO")).unwrap() + 1;
    run_in(&d, &["check", cfg.to_str().unwrap()])
        .code(2)
        .stderr_has(&format!("with-bao.toml:{line}"))
        .stderr_has("BaO may reach 8 mol% here")
        .stderr_has("allow_extrapolation = true");
    let allowed = text.replace("allow_extrapolation = false", "allow_extrapolation = true");
    std::fs::write(&cfg, allowed).unwrap();
    run_in(&d, &["check", cfg.to_str().unwrap()]).code(0);
}

/// `models --domains` shows each model's range per oxide and names the oxides
/// no model covers.
#[test]
fn models_domains_shows_ranges_and_uncovered_oxides() {
    // Source: configs/models/demo-soda-lime.toml ([viscosity.domain] SiO2 =
    // [60, 80]; no model lists BaO).
    let d = temp_dir("domains");
    let r = run_in(&d, &["models", "--domains"]);
    r.code(0).stdout_has("devitrite liquidus");
    let si = r
        .stdout
        .lines()
        .find(|l| l.starts_with("SiO2"))
        .expect("a SiO2 line");
    assert!(si.contains("60.0–80.0"), "{si}");
    let none = r
        .stdout
        .lines()
        .find(|l| l.starts_with("not covered by any model"))
        .expect("a line of uncovered oxides");
    assert!(none.contains("BaO") && !none.contains("SiO2"), "{none}");
}

#[test]
fn screen_tables_give_each_temperature_in_celsius_beside_kelvin() {
    // Source: ISO 80000-5 / SI brochure (9th ed.): t/°C = T/K − 273.15.
    let d = temp_dir("celsius-columns");
    std::fs::write(d.join("small.toml"), crate::screen::SMALL).unwrap();
    run_in(&d, &["screen", "small.toml", "--out", "out"]).code(0);
    let short: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("out/shortlist.json")).unwrap())
            .unwrap();
    let rows = short.as_array().unwrap();
    assert!(!rows.is_empty());
    for r in rows {
        for t in ["melting_temperature", "liquidus", "glass_transition"] {
            let k = r[format!("{t}_k")].as_f64().unwrap();
            let c = r[format!("{t}_c")].as_f64().unwrap();
            assert!((k - 273.15 - c).abs() < 1e-9, "{t}: {k} K, {c} °C");
        }
    }
    // The CSV names the °C column right after its K column.
    let csv = std::fs::read_to_string(d.join("out/shortlist.csv")).unwrap();
    let head = csv.lines().next().unwrap();
    for t in ["melting_temperature", "liquidus", "glass_transition"] {
        assert!(head.contains(&format!("{t}_k,{t}_c")), "{head}");
    }
}
