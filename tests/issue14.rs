//! Issue 14, the input side: "nothing silently wrong". One regression test
//! per item (named after it: s1_…, n1_…, p1_…), each run as a user would,
//! or on the library where that shows the defect more directly. Before the
//! fixes every one of them failed: a bad cell read as 0, a NaN option taken,
//! an infinite critical rate printed, a panic.

use crate::util::{root, run_in, temp_dir};
use polars::prelude::*;
use std::path::Path;

const GLASS: &str = "SiO2=72 Na2O=14 CaO=10 Al2O3=4";

fn write(dir: &Path, name: &str, text: &str) -> String {
    std::fs::write(dir.join(name), text).unwrap();
    name.to_string()
}

fn write_parquet(dir: &Path, name: &str, mut df: DataFrame) -> String {
    let mut f = std::fs::File::create(dir.join(name)).unwrap();
    ParquetWriter::new(&mut f).finish(&mut df).unwrap();
    name.to_string()
}

/// No output a user reads may hold these (N1, N2).
fn assert_no_non_finite(text: &str) {
    for bad in ["inf ", "inf\n", "NaN", "null", "never"] {
        assert!(!text.contains(bad), "found {bad:?} in:\n{text}");
    }
}

#[test]
fn s1_composition_cells_that_are_not_numbers_are_errors_with_row_line_and_column() {
    let d = temp_dir("s1");
    let t = write(
        &d,
        "c.csv",
        "name,SiO2,Na2O,CaO,Al2O3\n\
         ok,72,14,10,4\n\
         typo,O.5,14,10,4\n\
         words,72,abc,NaN,4\n\
         \"two\nlines\",72,14,10,9O\n",
    );
    run_in(&d, &["eval", "--compositions", &t, "--out", "o.csv"])
        .code(2)
        .stderr_has("c.csv:3: row 2, column 'SiO2': \"O.5\" is not a number")
        .stderr_has("c.csv:4: row 3, column 'Na2O': \"abc\" is not a number")
        .stderr_has("c.csv:4: row 3, column 'CaO'")
        // A quoted name over two lines: the row starts on line 5.
        .stderr_has("c.csv:5: row 4, column 'Al2O3': \"9O\" is not a number");
    assert!(!d.join("o.csv").exists());
}

#[test]
fn s1_an_empty_oxide_cell_is_zero_as_in_a_spreadsheet() {
    let d = temp_dir("s1-empty");
    let t = write(
        &d,
        "c.csv",
        "name,SiO2,Na2O,CaO,MgO,Al2O3\nA,72,14,10,,4\nB,72,14,10,0,4\nnothing,,,,,\n",
    );
    run_in(&d, &["eval", "--compositions", &t, "--out", "o.csv"])
        .code(0)
        .stderr_has("3 rows evaluated, 1 failed");
    let out = std::fs::read_to_string(d.join("o.csv")).unwrap();
    let rows: Vec<&str> = out.lines().collect();
    // The same glass whether MgO is empty or 0: the same critical rate.
    let col = rows[0]
        .split(',')
        .position(|c| c == "critical_rate_k_per_s")
        .unwrap();
    let rate = |r: &str| r.split(',').nth(col).unwrap().to_string();
    assert_eq!(rate(rows[1]), rate(rows[2]));
    assert!(
        rows[3].contains("every oxide cell of this row is empty"),
        "{out}"
    );
}

#[test]
fn s7_two_columns_naming_one_oxide_are_refused_before_any_work() {
    let d = temp_dir("s7-cols");
    let t = write(&d, "c.csv", "SiO2,Na2O,MgO,MGO\n80,10,5,5\n");
    run_in(&d, &["eval", "--compositions", &t, "--out", "o.csv"])
        .code(2)
        .stderr_has("c.csv: the columns 'MgO' and 'MGO' both name MgO");
}

#[test]
fn s8_a_csv_with_cr_only_line_endings_reads_every_row() {
    let d = temp_dir("s8");
    let t = write(
        &d,
        "cr.csv",
        "name,SiO2,Na2O,CaO,Al2O3\rA,72,14,10,4\rB,71,14,11,4\r",
    );
    run_in(&d, &["eval", "--compositions", &t, "--out", "o.csv"])
        .code(0)
        .stderr_has("2 rows evaluated, 0 failed");
    // Lines are still counted right for messages.
    let t = write(&d, "bad.csv", "name,SiO2,Na2O\r\nA,90,10\r\nB,x,10\r\n");
    run_in(&d, &["eval", "--compositions", &t, "--out", "o2.csv"])
        .code(2)
        .stderr_has("bad.csv:3: row 2, column 'SiO2'");
    // A header and nothing else is refused, not "0 rows evaluated".
    let t = write(&d, "empty.csv", "name,SiO2,Na2O\n");
    run_in(&d, &["eval", "--compositions", &t, "--out", "o3.csv"])
        .code(2)
        .stderr_has("empty.csv: the table has no rows");
}

#[test]
fn s9_small_integer_parquet_columns_are_read() {
    let d = temp_dir("s9-ints");
    let df = DataFrame::new(
        2,
        vec![
            Column::new("id".into(), [1i8, 2]),
            Column::new("SiO2".into(), [72i16, 71]),
            Column::new("Na2O".into(), [14u8, 14]),
            Column::new("CaO".into(), [10u16, 11]),
            Column::new("Al2O3".into(), [4.0f64, 4.0]),
        ],
    )
    .unwrap();
    let t = write_parquet(&d, "c.parquet", df);
    run_in(&d, &["eval", "--compositions", &t, "--out", "o.csv"])
        .code(0)
        .stderr_has("2 rows evaluated, 0 failed");
    let out = std::fs::read_to_string(d.join("o.csv")).unwrap();
    assert!(out.starts_with("id,SiO2,Na2O,CaO,Al2O3,"), "{out}");
}

#[test]
fn s2_raw_material_cells_that_are_not_numbers_are_errors() {
    let d = temp_dir("s2");
    let t = write(
        &d,
        "shelf.csv",
        "name,formula,price_per_kg,purity_pct,available_kg,Na2O_wt_pct,loi_wt_pct\n\
         sand,SiO2,0.1,9O,,,\n\
         soda,Na2CO3,0.4,,lots,,\n\
         soda ash lot 7,,0.4,,,5e,41.5\n",
    );
    run_in(
        &d,
        &["batch", "--mol", "SiO2=75 Na2O=25", "--raw-materials", &t],
    )
    .code(2)
    .stderr_has("shelf.csv:2: row 1, column 'purity_pct': \"9O\" is not a number")
    .stderr_has("shelf.csv:3: row 2, column 'available_kg': \"lots\" is not a number")
    .stderr_has("shelf.csv:4: row 3, column 'Na2O_wt_pct': \"5e\" is not a number");
}

#[test]
fn s2_empty_purity_and_stock_keep_their_meaning() {
    // Empty purity_pct is 100 %; empty available_kg is an unlimited stock.
    let d = temp_dir("s2-empty");
    let t = write(
        &d,
        "shelf.csv",
        "name,formula,price_per_kg,purity_pct,available_kg\nsand,SiO2,0.1,,\nsoda,Na2CO3,0.4,,\n",
    );
    let j = run_in(
        &d,
        &[
            "batch",
            "--mol",
            "SiO2=75 Na2O=25",
            "--raw-materials",
            &t,
            "--json",
        ],
    )
    .code(0)
    .json();
    // 1 kg of glass: 75 mol% SiO2, 25 mol% Na2O. By hand with IUPAC 2021
    // masses: 0.75·60.0830 = 45.0623 g, 0.25·61.9785 = 15.4946 g per mol;
    // SiO2 is 45.0623/60.5569 = 0.744131 kg of sand at purity 100 %.
    let sand = j["lines"]
        .as_array()
        .unwrap()
        .iter()
        .find(|l| l["name"] == "sand")
        .unwrap()["mass_kg"]
        .as_f64()
        .unwrap();
    assert!(
        (sand - 0.744131).abs() < crate::tolerances::LP_KG_TOL,
        "{sand}"
    );
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

#[test]
fn l1_raw_material_toml_errors_give_a_line() {
    let d = temp_dir("l1-toml");
    let text = "[[raw_material]]\nname = \"sand\"\nformula = \"SiO2\"\nprice_per_kg = 0.1\n\n\
                [[raw_material]]\nname = \"soda\"\nformula = \"Na2CO3\"\nprice_per_kg = -0.4\n\n\
                [[raw_material]]\nname = \"odd\"\nprice_per_kg = 1.0\nanalysis = { MgO = 50.0, MGO = 40.0 }\nloi_wt_pct = 0.0\n";
    let t = write(&d, "shelf.toml", text);
    run_in(
        &d,
        &["batch", "--mol", "SiO2=75 Na2O=25", "--raw-materials", &t],
    )
    .code(2)
    .stderr_has(&format!(
        "shelf.toml:{}: raw material 'soda': price per kg must be a non-negative number, got -0.4",
        line_of(text, "price_per_kg = -0.4")
    ))
    .stderr_has(&format!(
        "shelf.toml:{}: 'MGO' names MgO again",
        line_of(text, "MGO = 40.0")
    ));
}
