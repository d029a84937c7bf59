//! `quenchwise eval` run as a user would, in a fresh folder.

use crate::tolerances::{CRITICAL_RATE_RTOL, PRINTED_5DP_ATOL};
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
        .stderr_has("caution:");
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
    // The units of the trade beside SI: K/min = 60 × K/s (exact), °C = K − 273.15
    // (exact, SI Brochure 9th ed., 2019).
    let f = |k: &str| j[k].as_f64().unwrap();
    for (per_s, per_min) in [
        ("critical_rate_k_per_s", "critical_rate_k_per_min"),
        ("nose_rate_k_per_s", "nose_rate_k_per_min"),
    ] {
        assert!(rel(f(per_min), 60.0 * f(per_s)) < 1e-14, "{per_min}");
    }
    for (k, c) in [
        ("liquidus_k", "liquidus_c"),
        ("glass_transition_k", "glass_transition_c"),
        ("nose_temperature_k", "nose_temperature_c"),
    ] {
        assert!((f(c) - (f(k) - 273.15)).abs() < 1e-9, "{c}");
    }
    // wt% → mol%, computed by hand from the IUPAC 2021 molar masses (Prohaska et al.
    // 2022, Table 1): n_i = w_i/M_i (SiO2 60.0830, Na2O 61.9785, CaO 56.0770, Al2O3
    // 101.9601, K2O 94.1956, MgO 40.3040 g/mol), normalised; printed to 5 decimals.
    let mol = &j["composition_mol_pct"];
    for (o, want) in [
        ("SiO2", 74.66596),
        ("Na2O", 12.71583),
        ("CaO", 11.35134),
        ("Al2O3", 0.77296),
        ("K2O", 0.19308),
        ("MgO", 0.30083),
    ] {
        let got = mol[o].as_f64().unwrap();
        assert!(
            (got - want).abs() < PRINTED_5DP_ATOL,
            "{o}: {got} vs {want}"
        );
    }
}

#[test]
fn glassy_thickness_is_twice_the_half_thickness_in_mm() {
    // The slab is cooled through both faces, so it is 2h thick; the output is in mm.
    let d = temp_dir("eval-slab");
    let card = root().join("demo-datasets/melt-card.toml");
    let j = run_in(&d, &["eval", "--melt", card.to_str().unwrap(), "--json"])
        .code(0)
        .json();
    let h = quenchwise::kinetics::Kinetics::new(&crate::util::demo_card(), &Default::default())
        .unwrap()
        .max_glassy_half_thickness_m(quenchwise::units::Kelvin(298.15), 5e-7)
        .unwrap();
    let mm = j["max_glassy_thickness_mm"].as_f64().unwrap();
    assert!(rel(mm, 2.0 * h * 1000.0) < 1e-12, "{mm} vs {h} m");
}

#[test]
fn melt_card_json_matches_the_independent_reference() {
    // Source: tests/reference/cnt_scipy.py (SciPy, independent of our code), card case:
    // R_c = 4.65863138e-4 K/s; to the 0.1 % the README promises.
    let d = temp_dir("eval-card");
    let card = root().join("demo-datasets/melt-card.toml");
    let r = run_in(&d, &["eval", "--melt", card.to_str().unwrap(), "--json"]);
    let j = r.code(0).json();
    for k in JSON_KEYS {
        assert!(j[k].is_f64(), "missing {k}");
    }
    assert!(rel(j["critical_rate_k_per_s"].as_f64().unwrap(), 4.65863138e-4) < CRITICAL_RATE_RTOL);
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
    assert!(rel(j["critical_rate_k_per_s"].as_f64().unwrap(), 0.5) < CRITICAL_RATE_RTOL);
}

#[test]
fn giordano2008_flags_soda_rich_melts_on_the_lines_it_affects() {
    // Source: the model's stated scope (natural melts), checked by hand.
    let d = temp_dir("eval-giordano2008");
    let r = run_in(
        &d,
        &[
            "eval",
            "--mol",
            "Na2O=33.33 SiO2=66.67",
            "--viscosity-model",
            "giordano2008",
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
    let melts = root().join("demo-datasets/melt-cards.csv");
    run_in(
        &d,
        &[
            "eval",
            "--melt-cards",
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

#[test]
fn times_and_slabs_beyond_vouching_are_printed_with_two_digits() {
    // An invented melt card of a very good glass former (nose time of about
    // 2e7 days, slab of about 1e7 mm): the warning states both in e-notation
    // with two significant digits (common practice for numbers whose digits
    // mean nothing), and they agree with the JSON fields.
    let d = temp_dir("eval-beyond");
    let card = d.join("card.toml");
    std::fs::write(
        &card,
        "[viscosity]\na = -2.674\nb_k = 4999.6\nc_k = 448.5\n\n[crystal]\nliquidus_k = 1222.2\n\
         enthalpy_of_fusion_j_per_mol = 66864.0\nmolar_volume_m3_per_mol = 5.096e-5\n\
         turnbull_alpha = 0.381\ngrowth = \"screw\"\n",
    )
    .unwrap();
    let j = run_in(&d, &["eval", "--melt", card.to_str().unwrap(), "--json"])
        .code(0)
        .json();
    let warnings = j["warnings"].to_string();
    let after = |key: &str, unit: &str| -> f64 {
        let rest = &warnings[warnings
            .find(key)
            .unwrap_or_else(|| panic!("{key}: {warnings}"))
            + key.len()..];
        let text = &rest[..rest.find(unit).unwrap()];
        assert!(text.contains('e'), "{key}{text}{unit} is not in e-notation");
        assert_eq!(
            text.split('e').next().unwrap().len(),
            3,
            "two digits: {text}"
        );
        text.parse().unwrap()
    };
    let days = after("a nose time of ", " days");
    let mm = after("a glassy slab of ", " mm");
    let want_days = j["nose_time_s"].as_f64().unwrap() / 86_400.0;
    let want_mm = j["max_glassy_thickness_mm"].as_f64().unwrap();
    assert!(
        want_days > 36_525.0 && want_mm > 1e6,
        "{want_days} days, {want_mm} mm"
    );
    assert!(rel(days, want_days) < 0.05, "{days} vs {want_days}");
    assert!(rel(mm, want_mm) < 0.05, "{mm} vs {want_mm}");
}
