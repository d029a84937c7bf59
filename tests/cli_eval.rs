//! `quenchwise eval` run as a user would, in a fresh folder.

use crate::util::{rel, root, run_in, temp_dir};

const JSON_KEYS: [&str; 6] = [
    "critical_rate_k_per_s",
    "nose_rate_k_per_s",
    "nose_temperature_k",
    "nose_time_s",
    "liquidus_k",
    "glass_transition_k",
];

#[test]
fn composition_table_has_units_flags_and_caution() {
    let d = temp_dir("eval-mol");
    let r = run_in(&d, &["eval", "--mol", "SiO2=72 Na2O=14 CaO=10 Al2O3=4"]);
    r.code(0)
        .stdout_has("critical cooling rate R_c")
        .stdout_has("K/min")
        .stdout_has("°C")
        .stdout_has("primary phase: ")
        .stdout_has("limited by ")
        .stdout_has("liquidus of each phase")
        .stdout_has("NOT calibrated")
        .stdout_has("caution:");
}

#[test]
fn composition_json_has_the_contract_keys() {
    let d = temp_dir("eval-json");
    let r = run_in(
        &d,
        &[
            "eval",
            "--wt",
            "SiO2=74 Na2O=13 CaO=10.5 Al2O3=1.3 K2O=0.3 MgO=0.2",
            "--json",
        ],
    );
    let j = r.code(0).json();
    for k in JSON_KEYS.iter().chain(&[
        "primary_phase",
        "melting_temperature_k",
        "working_point_k",
        "softening_point_k",
        "reduced_glass_transition",
        "warnings",
    ]) {
        assert!(j.get(*k).is_some(), "missing {k} in {j}");
    }
    assert!(j["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w.as_str().unwrap().contains("normalised")));
    let tg = j["glass_transition_k"].as_f64().unwrap();
    let tl = j["liquidus_k"].as_f64().unwrap();
    assert!(rel(j["reduced_glass_transition"].as_f64().unwrap(), tg / tl) < 1e-12);
}

#[test]
fn melt_card_json_matches_the_independent_reference() {
    // Source: tests/reference/cnt_scipy.py (SciPy, independent of our code), card case:
    // R_c = 4.65863138e-4 K/s; the "done" bar for the card is 0.5 %.
    let d = temp_dir("eval-card");
    let card = root().join("demo-datasets/melt-card.toml");
    let r = run_in(&d, &["eval", "--melt", card.to_str().unwrap(), "--json"]);
    let j = r.code(0).json();
    for k in JSON_KEYS {
        assert!(j[k].is_f64(), "missing {k}");
    }
    assert!(rel(j["critical_rate_k_per_s"].as_f64().unwrap(), 4.65863138e-4) < 5e-3);
    assert_eq!(j["kinetics_calibrated"], false);
}

#[test]
fn ttt_curve_is_written_with_units_in_the_header() {
    let d = temp_dir("eval-ttt");
    let card = root().join("demo-datasets/melt-card.toml");
    let r = run_in(
        &d,
        &[
            "eval",
            "--melt",
            card.to_str().unwrap(),
            "--ttt",
            "ttt.csv",
            "--json",
        ],
    );
    let nose = r.code(0).json()["nose_time_s"].as_f64().unwrap();
    let text = std::fs::read_to_string(d.join("ttt.csv")).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next().unwrap(),
        "temperature_k,temperature_c,time_to_detectable_s,nucleation_rate_per_m3_s,growth_rate_m_per_s"
    );
    let times: Vec<f64> = lines
        .map(|l| l.split(',').nth(2).unwrap().parse().unwrap())
        .collect();
    assert!(times.len() > 150);
    let min = times.iter().copied().fold(f64::INFINITY, f64::min);
    // The sampled curve never dips below the nose, and comes within 5 % of it.
    assert!(
        min >= nose * (1.0 - 1e-9) && min < nose * 1.05,
        "{min} vs {nose}"
    );
}

#[test]
fn calibration_reproduces_the_measured_rate() {
    let d = temp_dir("eval-cal");
    let card = root().join("demo-datasets/melt-card.toml");
    let r = run_in(
        &d,
        &[
            "eval",
            "--melt",
            card.to_str().unwrap(),
            "--calibrate-rate",
            "30",
            "--rate-unit",
            "K/min",
            "--json",
        ],
    );
    let j = r.code(0).json();
    assert_eq!(j["kinetics_calibrated"], true);
    assert!(rel(j["critical_rate_k_per_s"].as_f64().unwrap(), 0.5) < 1e-3);
}

#[test]
fn grd2008_flags_soda_rich_melts_on_the_lines_it_affects() {
    // Source: the model's stated scope (natural melts), checked by hand.
    let d = temp_dir("eval-grd");
    let r = run_in(
        &d,
        &[
            "eval",
            "--mol",
            "Na2O=33.33 SiO2=66.67",
            "--viscosity-model",
            "grd2008",
        ],
    );
    r.code(0)
        .stdout_has("outside model validity")
        .stdout_has("glass transition T_g (10^12 Pa·s)");
    let tg_line = r
        .stdout
        .lines()
        .find(|l| l.contains("glass transition T_g"))
        .unwrap();
    assert!(tg_line.ends_with("!V"), "{tg_line}");
}

#[test]
fn melt_and_composition_tables_keep_going_past_bad_rows() {
    let d = temp_dir("eval-tables");
    let melts = root().join("demo-datasets/melts.csv");
    run_in(
        &d,
        &[
            "eval",
            "--melts",
            melts.to_str().unwrap(),
            "--out",
            "melts-out.csv",
        ],
    )
    .code(0);
    let text = std::fs::read_to_string(d.join("melts-out.csv")).unwrap();
    let rows: Vec<&str> = text.lines().collect();
    assert_eq!(rows.len(), 5, "{text}");
    assert!(rows[0].contains("critical_rate_k_per_s") && rows[0].ends_with("error"));
    assert!(
        rows[4].contains("enthalpy_of_fusion_j_per_mol must be positive"),
        "{}",
        rows[4]
    );

    let cands = root().join("demo-datasets/candidates.csv");
    let r = run_in(
        &d,
        &[
            "eval",
            "--compositions",
            cands.to_str().unwrap(),
            "--out",
            "cands.parquet",
        ],
    );
    r.code(0).stderr_has("8 rows evaluated, 1 failed");
    assert!(d.join("cands.parquet").exists());
    assert!(!d.join("cands.parquet.partial").exists());
}
