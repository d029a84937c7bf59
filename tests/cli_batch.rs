//! `quenchwise batch` run as a user would.

use crate::util::{fixture, rel, run_in, temp_dir};

#[test]
fn demo_shelf_gives_a_sheet_with_cautions() {
    let d = temp_dir("batch-sheet");
    run_in(&d, &["batch", "--mol", "SiO2=72 Na2O=14 CaO=10 Al2O3=4"])
        .code(0)
        .stdout_has("batch-to-glass ratio")
        .stdout_has("cost per kg of glass")
        .stdout_has("crystalline silica dust")
        .stdout_has("safety rules");
}

#[test]
fn json_carries_lines_cost_and_ratio_and_the_balance_closes() {
    let d = temp_dir("batch-json");
    let r = run_in(
        &d,
        &[
            "batch",
            "--wt",
            "SiO2=74 Na2O=16 CaO=10",
            "--glass-kg",
            "2.5",
            "--json",
        ],
    );
    let j = r.code(0).json();
    let lines = j["lines"].as_array().unwrap();
    assert!(lines
        .iter()
        .all(|l| l["name"].is_string() && l["mass_kg"].is_f64()));
    assert!(j["cost_per_kg_glass"].as_f64().unwrap() > 0.0);
    let ratio = j["batch_to_glass_ratio"].as_f64().unwrap();
    let total: f64 = lines.iter().map(|l| l["mass_kg"].as_f64().unwrap()).sum();
    assert!(rel(total / 2.5, ratio) < 1e-9);
    for pair in j["delivered_wt_pct"].as_array().unwrap() {
        let (name, got) = (pair[0].as_str().unwrap(), pair[1].as_f64().unwrap());
        let want = match name {
            "SiO2" => 74.0,
            "Na2O" => 16.0,
            "CaO" => 10.0,
            other => panic!("unexpected oxide {other}"),
        };
        assert!((got - want).abs() < 0.01, "{name}: {got}");
    }
}

#[test]
fn csv_output() {
    let d = temp_dir("batch-csv");
    let r = run_in(&d, &["batch", "--wt", "SiO2=74 Na2O=16 CaO=10", "--csv"]);
    r.code(0)
        .stdout_has("raw_material,mass_kg,cost\n\"quartz sand\",");
}

#[test]
fn an_oxide_nobody_supplies_is_named() {
    let d = temp_dir("batch-nosupplier");
    run_in(&d, &["batch", "--mol", "SiO2=70 Na2O=15 SrO=15"])
        .code(2)
        .stderr_has("no raw material supplies SrO");
}

#[test]
fn bad_raw_material_rows_are_all_reported_with_lines() {
    let d = temp_dir("batch-badrows");
    let f = fixture("raw-materials-two-bad-rows.csv");
    run_in(&d, &["batch", "--mol", "SiO2=75 Na2O=25", "--raw-materials", f.to_str().unwrap()])
        .code(2)
        .stderr_has("raw-materials-two-bad-rows.csv:3: mystery salt: cannot read the formula 'Xq2CO3': unknown element 'Xq'")
        .stderr_has("raw-materials-two-bad-rows.csv:4: limestone: raw material 'limestone': price per kg must be a non-negative number, got -0.09");
}

#[test]
fn toml_shelf_with_a_lot_analysis() {
    // The lot analysis (58.3 wt% Na2O) replaces the ideal 58.477: 0.16 / 0.583 = 0.27444 kg.
    let d = temp_dir("batch-toml");
    let f = fixture("shelf.toml");
    let r = run_in(
        &d,
        &[
            "batch",
            "--wt",
            "SiO2=74 Na2O=16 CaO=10",
            "--raw-materials",
            f.to_str().unwrap(),
            "--json",
        ],
    );
    let j = r.code(0).json();
    let soda = j["lines"]
        .as_array()
        .unwrap()
        .iter()
        .find(|l| l["name"] == "soda ash lot 7")
        .unwrap();
    assert!((soda["mass_kg"].as_f64().unwrap() - 0.27444).abs() < 5e-4);
}
