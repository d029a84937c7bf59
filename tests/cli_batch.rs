//! `quenchwise batch` run as a user would.

use crate::tolerances::{LP_COST_RTOL, LP_DELIVERED_WT_PCT_TOL, LP_KG_TOL, LP_SAME_VERTEX_RTOL};
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
    // The sheet is for 2.5 kg: masses and cost scale, the ratio and the cost per
    // kg do not. Source: a hand computation with the IUPAC 2021 gravimetric
    // factors (Na2CO3/Na2O 1.71007, CaCO3/CaO 1.78480) and the demo shelf's
    // purities (99.5, 99.2, 98.0 %): sand 0.74/0.995, soda ash 0.16·1.71007/0.992,
    // limestone 0.10·1.78480/0.980 kg per kg glass.
    let per_kg = |n: &str| {
        lines.iter().find(|l| l["name"] == n).unwrap()["mass_kg"]
            .as_f64()
            .unwrap()
            / 2.5
    };
    for (name, want) in [
        ("quartz sand", 0.74 / 0.995),
        ("soda ash", 0.16 * 1.71007 / 0.992),
        ("limestone", 0.10 * 1.78480 / 0.980),
    ] {
        assert!(
            (per_kg(name) - want).abs() < LP_KG_TOL,
            "{name}: {}",
            per_kg(name)
        );
    }
    let cost = j["cost_per_kg_glass"].as_f64().unwrap();
    let want_cost =
        0.12 * 0.74 / 0.995 + 0.45 * 0.16 * 1.71007 / 0.992 + 0.09 * 0.10 * 1.78480 / 0.980;
    assert!(
        (cost - want_cost).abs() < LP_KG_TOL,
        "{cost} vs {want_cost}"
    );
    let total: f64 = lines.iter().map(|l| l["mass_kg"].as_f64().unwrap()).sum();
    assert!(rel(j["batch_to_glass_ratio"].as_f64().unwrap(), total / 2.5) < 1e-12);
    for pair in j["delivered_wt_pct"].as_array().unwrap() {
        let (name, got) = (pair[0].as_str().unwrap(), pair[1].as_f64().unwrap());
        let want = match name {
            "SiO2" => 74.0,
            "Na2O" => 16.0,
            "CaO" => 10.0,
            other => panic!("unexpected oxide {other}"),
        };
        assert!(
            (got - want).abs() < LP_DELIVERED_WT_PCT_TOL,
            "{name}: {got}"
        );
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
    run_in(&d, &["batch", "--mol", "SiO2=70 Na2O=15 MnO=15"])
        .code(2)
        .stderr_has("no raw material supplies MnO");
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
    assert!((soda["mass_kg"].as_f64().unwrap() - 0.27444).abs() < LP_KG_TOL);
}

#[test]
fn least_cost_agrees_with_an_independent_linear_programme() {
    // Source: tests/reference/batch_highs.py, an independent implementation (its
    // own formula parser, IUPAC 2021 masses, SciPy 1.17.1 HiGHS; three HiGHS
    // methods agree to 10 digits), run 2026-12-02 on the demo shelf with the same
    // ±0.001 wt% per-oxide rule. Glass 3 differs by design: the reference adds
    // 0.06 g of potash feldspar per kg to use the Al2O3 tolerance of an Al2O3-free
    // glass, which the tool never does (a raw material bringing an unwanted oxide
    // is left out), so its cost may only be higher, by at most 1e-5 relative.
    let d = temp_dir("batch-highs");
    for (glass, want, exact) in [
        ("SiO2=72 Na2O=14 CaO=10 Al2O3=4", 0.2603672675, true),
        ("SiO2=74 Na2O=13 CaO=8 MgO=4 Al2O3=1", 0.2269386945, true),
        (
            "SiO2=70 Na2O=12 K2O=2 CaO=9 MgO=2 B2O3=5",
            0.4013778229,
            false,
        ),
        (
            "SiO2=65 Na2O=15 CaO=10 BaO=5 ZnO=3 Al2O3=2",
            0.6086019368,
            true,
        ),
    ] {
        let j = run_in(&d, &["batch", "--mol", glass, "--json"])
            .code(0)
            .json();
        let got = j["cost_per_kg_glass"].as_f64().unwrap();
        if exact {
            assert!(
                rel(got, want) < LP_SAME_VERTEX_RTOL,
                "{glass}: {got} vs {want}"
            );
        } else {
            assert!(
                got >= want - 1e-10 && rel(got, want) < LP_COST_RTOL,
                "{glass}: {got} vs {want}"
            );
        }
    }
}
