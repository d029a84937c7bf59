//! `quenchwise fit`: the three commands on the invented demo measurements
//! make a model set that eval, models and screen load; the held-out glass is
//! predicted within the fit's stated error; bad data get messages naming the
//! file, the row and the column.

use crate::util::{check_xml, fixture, root, run_in, temp_dir};
use quenchwise::files::model_set::parse_model_set;
use quenchwise::files::source::Source;
use std::path::Path;

fn demo(name: &str) -> String {
    root()
        .join("demo-datasets")
        .join(name)
        .display()
        .to_string()
}

/// The three fit commands of the README, into `dir/lab.toml`.
fn fit_demo(dir: &Path) {
    run_in(
        dir,
        &[
            "fit",
            "viscosity",
            &demo("fit-viscosity.csv"),
            "--models",
            "demo-soda-lime",
            "--name",
            "lab-soda-lime",
            "--out",
            "lab.toml",
            "--residuals",
            "visc.csv",
            "--plot",
            "visc.svg",
        ],
    )
    .code(0)
    .stdout_has("leave one glass out: RMSE")
    .stdout_has("95 % interval");
    run_in(
        dir,
        &[
            "fit",
            "liquidus",
            &demo("fit-liquidus.csv"),
            "--models",
            "lab.toml",
            "--shift",
            "cristobalite",
            "--out",
            "lab.toml",
            "--residuals",
            "liq.csv",
            "--plot",
            "liq.svg",
        ],
    )
    .code(0)
    .stdout_has("primary phase   named right on");
    run_in(
        dir,
        &[
            "fit",
            "kinetics",
            &demo("fit-critical-rates.csv"),
            "--models",
            "lab.toml",
            "--log10-sd",
            "0.15",
            "--out",
            "lab.toml",
            "--residuals",
            "rates.csv",
        ],
    )
    .code(0)
    .stdout_has("devitrite.turnbull_alpha")
    .stdout_has("wollastonite.turnbull_alpha");
}

/// A small CSV reader for the demo's tables (no quoted commas in them).
fn rows(path: &str) -> Vec<std::collections::HashMap<String, String>> {
    let text = std::fs::read_to_string(path).unwrap();
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .unwrap()
        .split(',')
        .map(str::to_string)
        .collect();
    lines
        .map(|l| {
            header
                .iter()
                .cloned()
                .zip(l.split(',').map(str::to_string))
                .collect()
        })
        .collect()
}

#[test]
fn the_demo_fits_and_predicts_its_held_out_glass_within_the_stated_error() {
    let d = temp_dir("fit-demo");
    fit_demo(&d);
    let text = std::fs::read_to_string(d.join("lab.toml")).unwrap();
    let set = parse_model_set(&Source::new("lab.toml", &text)).unwrap();
    // Every part was fitted and says so; the uncertainty is in the file.
    assert_eq!(set.about.name, "lab-soda-lime");
    assert_eq!(set.about.fitted.len(), 3);
    let vfit = set.viscosity.fit.as_ref().unwrap();
    assert_eq!(vfit.covariance.len(), 13);
    let devitrite = set.phases.iter().find(|p| p.name == "devitrite").unwrap();
    assert!(devitrite.turnbull_alpha_sd.unwrap() > 0.0);
    let kfit = set.kinetics_fit.as_ref().unwrap();
    assert_eq!(kfit.record.covariance.len(), 2);
    // The residual outputs: a table and a picture.
    let csv = std::fs::read_to_string(d.join("visc.csv")).unwrap();
    assert!(csv.starts_with("row,glass,temperature_k"));
    assert_eq!(csv.lines().count(), 97);
    for svg in ["visc.svg", "liq.svg"] {
        check_xml(&std::fs::read_to_string(d.join(svg)).unwrap()).unwrap();
    }
    assert!(
        std::fs::read_to_string(d.join("rates.csv"))
            .unwrap()
            .lines()
            .count()
            == 4
    );

    // The held-out glass, lab-13, evaluated with the fitted set.
    let held = &rows(&demo("fit-holdout.csv"))[0];
    let mol = ["SiO2", "Na2O", "K2O", "CaO", "MgO", "Al2O3"]
        .iter()
        .map(|o| format!("{o}={}", held[*o]))
        .collect::<Vec<_>>()
        .join(" ");
    let j = run_in(
        &d,
        &["eval", "--models", "lab.toml", "--mol", &mol, "--json"],
    )
    .code(0)
    .json();
    assert_eq!(j["model_set"], "lab-soda-lime");
    assert_eq!(j["kinetics_calibrated"], true);
    // Stated errors: the cross-validated ones of each fit (2 of them: ~95 %).
    let visc_k = vfit.cv_rmse_k.unwrap();
    let liq_k = devitrite.liquidus_fit.as_ref().unwrap().cv_rmse.unwrap();
    let rate_decades = kfit.record.residual_sd;
    let key = |level: &str| match level {
        "1.0" => "melting_temperature_k",
        "3.0" => "working_point_k",
        "6.6" => "softening_point_k",
        "12.0" => "glass_transition_k",
        other => panic!("level {other}"),
    };
    for r in rows(&demo("fit-holdout-viscosity.csv")) {
        let measured = r["temperature_c"].parse::<f64>().unwrap() + 273.15;
        let predicted = j[key(&r["log10_viscosity_pa_s"])].as_f64().unwrap();
        assert!(
            (predicted - measured).abs() <= 2.0 * visc_k,
            "10^{} Pa·s: predicted {predicted:.1} K, measured {measured:.1} K, stated error {visc_k:.1} K",
            r["log10_viscosity_pa_s"]
        );
    }
    let tl = held["liquidus_c"].parse::<f64>().unwrap() + 273.15;
    let got = j["liquidus_k"].as_f64().unwrap();
    assert_eq!(j["primary_phase"], held["primary_phase"].as_str());
    assert!(
        (got - tl).abs() <= 2.0 * liq_k,
        "liquidus {got} vs {tl} (± {liq_k})"
    );
    let rc = held["critical_rate_k_per_min"].parse::<f64>().unwrap() / 60.0;
    let got = j["critical_rate_k_per_s"].as_f64().unwrap();
    assert!(
        (got / rc).log10().abs() <= 2.0 * rate_decades,
        "R_c {got} vs {rc} K/s (± {rate_decades} decades)"
    );

    // `models FILE` shows the fits, the standard errors and the domains.
    run_in(&d, &["models", "lab.toml"])
        .code(0)
        .stdout_has("leave one glass out")
        .stdout_has("domain      SiO2 68.5–75.0")
        .stdout_has("0.1767 ± ")
        .stdout_has("kinetic factors");

    // A screen runs on the fitted set (the shipped config, pointed at it).
    let config = std::fs::read_to_string(root().join("configs/demo-screen-fitted.toml"))
        .unwrap()
        .replace("\"../lab-soda-lime.toml\"", "\"lab.toml\"");
    std::fs::write(d.join("screen.toml"), config).unwrap();
    run_in(
        &d,
        &["screen", "screen.toml", "--out", "res", "--no-report"],
    )
    .code(0)
    .stdout_has("shortlisted");
    let shortlist = std::fs::read_to_string(d.join("res/shortlist.csv")).unwrap();
    // The oxides the lab's data lack ([0, 0] in the fitted domains) are no
    // limit a recipe without them sits on.
    assert!(
        !shortlist.contains("B2O3 max of the viscosity model"),
        "{shortlist}"
    );
}

#[test]
fn a_viscosity_file_alone_loads_as_a_viscosity_model() {
    let d = temp_dir("fit-visc-only");
    run_in(
        &d,
        &[
            "fit",
            "viscosity",
            &demo("fit-viscosity.csv"),
            "--form",
            "myega",
            "--out",
            "v.toml",
            "--no-cv",
        ],
    )
    .code(0)
    .stdout_has("MYEGA");
    run_in(
        &d,
        &[
            "eval",
            "--mol",
            "SiO2=72 Na2O=14 K2O=0.5 CaO=9.5 MgO=3 Al2O3=1",
            "--viscosity-model",
            "v.toml",
        ],
    )
    .code(0)
    .stdout_has("glass transition T_g");
}

#[test]
fn a_fit_onto_the_built_in_set_needs_a_name() {
    let d = temp_dir("fit-name");
    run_in(
        &d,
        &[
            "fit",
            "liquidus",
            &demo("fit-liquidus.csv"),
            "--models",
            "demo-soda-lime",
            "--out",
            "x.toml",
        ],
    )
    .code(2)
    .stderr_has("--name is required when the base set is the built-in demo-soda-lime");
    assert!(!d.join("x.toml").exists());
}

fn fit_fixture(args: &[&str]) -> crate::util::Run {
    let d = temp_dir("fit-err");
    run_in(&d, args)
}

#[test]
fn a_missing_column_is_named_with_the_columns_found() {
    let f = fixture("fit-missing-column.csv");
    fit_fixture(&["fit", "viscosity", f.to_str().unwrap(), "--out", "x.toml"])
        .code(2)
        .stderr_has("fit-missing-column.csv: missing column 'log10_viscosity_pa_s (or log10_viscosity_dpa_s)'")
        .stderr_has("hint: the columns found are: glass, SiO2, Na2O, CaO, temperature_c, log10_viscocity_pa_s");
}

#[test]
fn bad_cells_are_named_by_row_line_and_column_never_read_as_zero() {
    let f = fixture("fit-bad-cells.csv");
    fit_fixture(&["fit", "viscosity", f.to_str().unwrap(), "--out", "x.toml"])
        .code(2)
        .stderr_has("row 2 (line 3), column 'temperature_c': '12OO' is not a number")
        .stderr_has("row 3 (line 4), column 'log10_viscosity_pa_s': expected a finite number, got inf")
        .stderr_has("row 4 (line 5), column 'Na2O': empty cell; write 0 for an oxide the glass does not contain")
        .stderr_has("row 5 (line 6), column 'log10_viscosity_pa_s': empty cell");
}

#[test]
fn a_phase_the_base_set_lacks_is_named_with_its_row() {
    let f = fixture("fit-unknown-phase.csv");
    fit_fixture(&["fit", "liquidus", f.to_str().unwrap(), "--models", "demo-soda-lime", "--name", "x", "--out", "x.toml"])
        .code(2)
        .stderr_has("row 3 (line 4), column 'primary_phase': the model set 'demo-soda-lime' has no phase 'nepheline'; its phases are 'devitrite', 'wollastonite'");
}

#[test]
fn too_few_points_for_the_coefficients_is_explained() {
    let f = fixture("fit-too-few.csv");
    fit_fixture(&["fit", "liquidus", f.to_str().unwrap(), "--models", "demo-soda-lime", "--name", "x", "--out", "x.toml"])
        .code(2)
        .stderr_has("wollastonite has 3 rows, too few for its surface's 4 coefficients")
        .stderr_has("hint: add rows of wollastonite, or fit only a shift of the base surface with --shift \"wollastonite\"");
}

#[test]
fn a_rate_the_model_cannot_reach_gives_the_range() {
    let f = fixture("fit-rates-bad-unit.csv");
    fit_fixture(&["fit", "kinetics", f.to_str().unwrap(), "--models", "demo-soda-lime", "--name", "x", "--out", "x.toml"])
        .code(2)
        .stderr_has("row 1: the measured critical rate of 1.000e9 K/s cannot be reached: with α of wollastonite in [0.01, 10] (other phases as in the model set) the model gives")
        .stderr_has("hint: check the unit of these measurements");
}

#[test]
fn a_model_file_with_a_bad_fit_record_is_located() {
    let d = temp_dir("fit-bad-record");
    let f = fixture("models-bad-fit.toml");
    run_in(&d, &["models", f.to_str().unwrap()])
        .code(2)
        .stderr_has("models-bad-fit.toml:30: covariance is not positive semi-definite")
        .stderr_has("models-bad-fit.toml:57: 'Na2O*CaO' is not a coefficient of the devitrite liquidus surface");
}

#[test]
fn a_parquet_table_fits_like_its_csv() {
    use polars::prelude::*;
    let d = temp_dir("fit-parquet");
    let csv = root().join("demo-datasets/fit-liquidus.csv");
    let mut df = CsvReadOptions::default()
        .with_has_header(true)
        .try_into_reader_with_file_path(Some(csv.clone()))
        .unwrap()
        .finish()
        .unwrap();
    let pq = d.join("liquidus.parquet");
    ParquetWriter::new(std::fs::File::create(&pq).unwrap())
        .finish(&mut df)
        .unwrap();
    let args = |data: &str, out: &str| {
        vec![
            "fit".to_string(),
            "liquidus".into(),
            data.into(),
            "--models".into(),
            "demo-soda-lime".into(),
            "--name".into(),
            "p".into(),
            "--shift".into(),
            "cristobalite".into(),
            "--out".into(),
            out.into(),
        ]
    };
    let a: Vec<String> = args(pq.to_str().unwrap(), "p.toml");
    let b: Vec<String> = args(csv.to_str().unwrap(), "c.toml");
    let a: Vec<&str> = a.iter().map(String::as_str).collect();
    let b: Vec<&str> = b.iter().map(String::as_str).collect();
    let from_pq = run_in(&d, &a).code(0).stdout.clone();
    let from_csv = run_in(&d, &b).code(0).stdout.clone();
    assert_eq!(from_pq, from_csv);
}

#[test]
fn a_set_fitted_with_nuclei_evaluates_with_them_by_default() {
    // α only hold with the nucleation they were fitted with: eval takes the
    // fit's density unless told otherwise, and warns when told otherwise.
    let d = temp_dir("fit-nuclei-default");
    run_in(
        &d,
        &[
            "fit",
            "kinetics",
            &demo("fit-critical-rates.csv"),
            "--models",
            "demo-soda-lime",
            "--name",
            "n",
            "--nuclei-per-m3",
            "1000",
            "--log10-sd",
            "0.15",
            "--out",
            "n.toml",
        ],
    )
    .code(0)
    .stdout_has("1000 pre-existing nuclei/m³");
    let mol = "SiO2=71 Na2O=13 K2O=2 CaO=11 MgO=1 Al2O3=2";
    let j = run_in(&d, &["eval", "--models", "n.toml", "--mol", mol, "--json"])
        .code(0)
        .json();
    assert_eq!(j["heterogeneous_nuclei_per_m3"], 1000.0);
    let warned = |j: &serde_json::Value| {
        j["warnings"].as_array().unwrap().iter().any(|w| {
            w.as_str()
                .unwrap()
                .contains("were fitted with 1e3 pre-existing nuclei")
        })
    };
    assert!(!warned(&j));
    let j = run_in(
        &d,
        &[
            "eval",
            "--models",
            "n.toml",
            "--mol",
            mol,
            "--nuclei-per-m3",
            "0",
            "--json",
        ],
    )
    .code(0)
    .json();
    assert!(warned(&j), "{j}");
}
