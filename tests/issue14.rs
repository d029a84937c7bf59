//! Issue 14, the input side: "nothing silently wrong". One regression test
//! per item (named after it: s1_…, n1_…, p1_…), each run as a user would,
//! or on the library where that shows the defect more directly. Before the
//! fixes every one of them failed: a bad cell read as 0, a NaN option taken,
//! an infinite critical rate printed, a panic.

use crate::util::{fixture, root, run_in, temp_dir};
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

// ---------------------------------------------------------------- S1, S8, S9

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
fn s9_a_list_column_bound_for_csv_is_refused_before_the_evaluation() {
    let d = temp_dir("s9-list");
    let tags = Series::new(
        "tags".into(),
        [
            Series::new("".into(), [1i64, 2]),
            Series::new("".into(), [3i64]),
        ],
    );
    let df = DataFrame::new(
        2,
        vec![
            tags.into_column(),
            Column::new("SiO2".into(), [72.0, 71.0]),
            Column::new("Na2O".into(), [14.0, 14.0]),
            Column::new("CaO".into(), [10.0, 11.0]),
            Column::new("Al2O3".into(), [4.0, 4.0]),
        ],
    )
    .unwrap();
    let t = write_parquet(&d, "c.parquet", df);
    let r = run_in(&d, &["eval", "--compositions", &t, "--out", "o.csv"]);
    r.code(2)
        .stderr_has("o.csv: column 'tags'")
        .stderr_has("cannot be written to CSV");
    // Refused before any row ran: no summary table, no file.
    assert!(r.stdout.is_empty(), "{}", r.stdout);
    assert!(!d.join("o.csv").exists());
    // Parquet holds lists: the same table written as Parquet works.
    run_in(&d, &["eval", "--compositions", &t, "--out", "o.parquet"])
        .code(0)
        .stderr_has("2 rows evaluated, 0 failed");
}

// ---------------------------------------------------------------- S2, P1

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

#[test]
fn p1_list_or_binary_columns_in_a_raw_materials_parquet_are_errors_not_panics() {
    let d = temp_dir("p1");
    let price = Series::new(
        "price_per_kg".into(),
        [
            Series::new("".into(), [0.1f64]),
            Series::new("".into(), [0.4f64]),
        ],
    );
    let df = DataFrame::new(
        2,
        vec![
            Column::new("name".into(), ["sand", "soda"]),
            Column::new("formula".into(), ["SiO2", "Na2CO3"]),
            price.into_column(),
        ],
    )
    .unwrap();
    let t = write_parquet(&d, "list.parquet", df);
    let r = run_in(
        &d,
        &["batch", "--mol", "SiO2=75 Na2O=25", "--raw-materials", &t],
    );
    r.code(2)
        .stderr_has("list.parquet: column 'price_per_kg' holds lists, not numbers");
    assert!(!r.stderr.contains("panicked"), "{}", r.stderr);

    let name = Series::new("name".into(), [b"sand".as_ref(), b"soda".as_ref()]);
    let df = DataFrame::new(
        2,
        vec![
            name.into_column(),
            Column::new("formula".into(), ["SiO2", "Na2CO3"]),
            Column::new("price_per_kg".into(), [0.1, 0.4]),
        ],
    )
    .unwrap();
    let t = write_parquet(&d, "binary.parquet", df);
    let r = run_in(
        &d,
        &["batch", "--mol", "SiO2=75 Na2O=25", "--raw-materials", &t],
    );
    r.code(2)
        .stderr_has("binary.parquet: column 'name' holds binary data, not text");
    assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
    // `check` reads the same table through a config.
    let cfg = std::fs::read_to_string(root().join("configs/demo-screen.toml"))
        .unwrap()
        .replace(
            "raw_materials = \"demo\"",
            "raw_materials = \"binary.parquet\"",
        );
    let c = write(&d, "screen.toml", &cfg);
    let line = cfg
        .lines()
        .position(|l| l.starts_with("raw_materials = \"binary.parquet\""))
        .unwrap()
        + 1;
    run_in(&d, &["check", &c])
        .code(2)
        .stderr_has(&format!(
            "screen.toml:{line}: [cost] raw_materials = \"binary.parquet\" cannot be used"
        ))
        .stderr_has("column 'name' holds binary data");
}

// ---------------------------------------------------------------- S3, N3, H1

#[test]
fn s3_a_nan_or_negative_sum_tolerance_is_refused() {
    let d = temp_dir("s3");
    // NaN used to turn the check off: "SiO2=1 Na2O=1" was evaluated as 50/50.
    for v in ["nan", "-1", "inf", "11"] {
        let opt = format!("--sum-tolerance={v}");
        run_in(&d, &["eval", "--mol", "SiO2=1 Na2O=1", &opt])
            .code(2)
            .stderr_has("--sum-tolerance must lie in [0, 10] percentage points");
        run_in(&d, &["batch", "--mol", "SiO2=1 Na2O=1", &opt])
            .code(2)
            .stderr_has("--sum-tolerance must lie in [0, 10] percentage points");
    }
    run_in(&d, &["batch", "--mol", GLASS, "--tolerance-wt-pct", "nan"])
        .code(2)
        .stderr_has("--tolerance-wt-pct must lie in (0, 10] wt%");
}

#[test]
fn n3_a_quench_surface_below_absolute_zero_or_nan_is_refused() {
    let d = temp_dir("n3");
    for v in ["nan", "-300", "-273.15"] {
        let opt = format!("--quench-surface-c={v}");
        run_in(&d, &["eval", "--mol", GLASS, &opt])
            .code(2)
            .stderr_has("--quench-surface-c must lie in (-273.15, inf) °C");
    }
    for (opt, v) in [
        ("--detectable-fraction", "1"),
        ("--detectable-fraction", "nan"),
        ("--nuclei-per-m3", "-1"),
        ("--contact-angle-deg", "0"),
        ("--sample-thickness-mm", "nan"),
        ("--fractional-exponent", "1.5"),
        ("--decoupling-ratio", "0.5"),
        ("--calibrate-rate", "-3"),
        ("--melt-diffusivity", "nan"),
    ] {
        run_in(&d, &["eval", "--mol", GLASS, &format!("{opt}={v}")])
            .code(2)
            .stderr_has(&format!("{opt} must lie in"));
    }
    // Liquid nitrogen is a real quench surface.
    run_in(&d, &["eval", "--mol", GLASS, "--quench-surface-c=-196"])
        .code(0)
        .stdout_has("thickest glassy slab");
}

#[test]
fn h1_threads_are_capped_at_four_per_core_with_a_message() {
    let d = temp_dir("h1");
    let t = write(&d, "c.csv", "SiO2,Na2O,CaO,Al2O3\n72,14,10,4\n");
    run_in(
        &d,
        &[
            "eval",
            "--compositions",
            &t,
            "--out",
            "o.csv",
            "--threads",
            "5000",
        ],
    )
    .code(0)
    .stderr_has("--threads 5000 capped at ")
    .stderr_has("(4 × the ");
}

// ---------------------------------------------------------------- S4, S5, S7 (config)

fn demo_config(replace: &[(&str, &str)]) -> String {
    let mut text = std::fs::read_to_string(root().join("configs/demo-screen.toml")).unwrap();
    for (a, b) in replace {
        assert!(text.contains(a), "the demo config has no {a:?}");
        text = text.replacen(a, b, 1);
    }
    text
}

#[test]
fn h1_a_config_thread_count_is_capped_with_a_note_or_refused_beyond_1024() {
    let d = temp_dir("h1-config");
    let cores = std::thread::available_parallelism().map_or(1, |n| n.get());
    let text = demo_config(&[("# threads = 2 ", "threads = 1024 ")]);
    let c = write(&d, "s.toml", &text);
    let r = run_in(&d, &["check", &c]);
    r.code(0);
    if 4 * cores < 1024 {
        r.stderr_has(&format!(
            "s.toml: threads = 1024 capped at {} (4 × the cores of this machine)",
            4 * cores
        ));
    }
    let text = demo_config(&[("# threads = 2 ", "threads = 5000 ")]);
    let c = write(&d, "s.toml", &text);
    run_in(&d, &["check", &c]).code(2).stderr_has(&format!(
        "s.toml:{}: threads must be between 1 and 1024, got 5000",
        line_of(&text, "threads = 5000")
    ));
}

fn line_of(text: &str, needle: &str) -> usize {
    text.lines().position(|l| l.contains(needle)).unwrap() + 1
}

#[test]
fn s4_absurd_counts_are_refused_by_check_with_their_range() {
    let d = temp_dir("s4");
    let text = demo_config(&[
        ("size = 8 ", "size = 18446744073709551615 "),
        ("refine_from = 6 ", "refine_from = 18446744073709551615 "),
        ("refine_iterations = 60 ", "refine_iterations = 1000000000 "),
        ("chunk_size = 512 ", "chunk_size = 100000000 "),
    ]);
    let c = write(&d, "s.toml", &text);
    run_in(&d, &["check", &c])
        .code(2)
        .stderr_has(&format!(
            "s.toml:{}: [shortlist] size must be between 1 and 1000, got 18446744073709551615",
            line_of(&text, "size = 1844")
        ))
        .stderr_has(&format!(
            "s.toml:{}: refine_from must be between 0 and 1000",
            line_of(&text, "refine_from = 1844")
        ))
        .stderr_has("refine_iterations must be between 0 and 100000")
        .stderr_has("chunk_size must be between 1 and 1000000");
}

#[test]
fn every_two_number_range_refuses_a_longer_list_where_it_stands() {
    // A third number was once dropped without a word by every [min, max]
    // key read as a fixed pair; each is now refused with its line.
    let d = temp_dir("pairs");
    for (from, to) in [
        (
            "# glass_transition_c = [520.0, 600.0]",
            "glass_transition_c = [520.0, 600.0, 700.0]",
        ),
        (
            "# working_range_k = [250.0, 400.0]",
            "working_range_k = [250.0]",
        ),
    ] {
        let text = demo_config(&[(from, to), ("# [properties]", "[properties]")]);
        let c = write(&d, "s.toml", &text);
        let (key, n, unit) = if to.contains("700") {
            ("glass_transition_c", 3, "°C")
        } else {
            ("working_range_k", 1, "K")
        };
        run_in(&d, &["check", &c]).code(2).stderr_has(&format!(
            "s.toml:{}: {key} must be two numbers [min, max] {unit}, got {n}",
            line_of(&text, to)
        ));
    }
    // A model set's validity domain.
    let text = quenchwise::files::model_set::DEMO_MODELS.replacen(
        "Na2O = [9.0, 20.0]",
        "Na2O = [9.0, 20.0, 30.0]",
        1,
    );
    assert_ne!(text, quenchwise::files::model_set::DEMO_MODELS);
    let err = quenchwise::files::model_set::parse_model_set(
        &quenchwise::files::source::Source::new("lab.toml", &text),
    )
    .unwrap_err()
    .to_string();
    assert!(
        err.contains(&format!(
            "lab.toml:{}",
            line_of(&text, "Na2O = [9.0, 20.0, 30.0]")
        )) && err.contains("domain of Na2O must be two numbers [min, max] mol%, got 3"),
        "{err}"
    );
}

#[test]
fn s5_nan_negative_and_inverted_config_values_are_refused_with_lines() {
    let d = temp_dir("s5");
    let text = demo_config(&[
        ("min_distance_mol_pct = 2.0", "min_distance_mol_pct = -1.0"),
        ("# tolerance_wt_pct = 0.001", "tolerance_wt_pct = nan"),
        (
            "expr = \"CaO - MgO\"            # keep lime above magnesia\nmin = 0.0",
            "expr = \"CaO - MgO\"\nmin = nan",
        ),
        (
            "# glass_transition_c = [520.0, 600.0]",
            "glass_transition_c = [600.0, 520.0]",
        ),
        ("# [properties]", "[properties]"),
        ("kind = \"cost\"", "kind = \"blend\""),
        ("# [objective.weights]", "[objective.weights]"),
        ("# margin = 1.0", "margin = nan"),
        ("# cost = 2.0", "cost = -2.0"),
    ]);
    let c = write(&d, "s.toml", &text);
    run_in(&d, &["check", &c])
        .code(2)
        .stderr_has(&format!(
            "s.toml:{}: min_distance_mol_pct must lie in [0, 141.43] mol%",
            line_of(&text, "min_distance_mol_pct = -1.0")
        ))
        .stderr_has(&format!(
            "s.toml:{}: tolerance_wt_pct must lie in (0, 10] wt% of glass, got NaN",
            line_of(&text, "tolerance_wt_pct = nan")
        ))
        .stderr_has(&format!(
            "s.toml:{}: constraint min must be a finite number of mol%, got NaN",
            line_of(&text, "min = nan")
        ))
        .stderr_has(&format!(
            "s.toml:{}: glass_transition_c must be [min, max]",
            line_of(&text, "glass_transition_c = [600.0, 520.0]")
        ))
        .stderr_has(&format!(
            "s.toml:{}: weights.margin must be a finite number, zero or positive, got NaN",
            line_of(&text, "margin = nan")
        ))
        .stderr_has(&format!(
            "s.toml:{}: weights.cost must be a finite number, zero or positive, got -2",
            line_of(&text, "cost = -2.0")
        ));
    // An inverted constraint cannot be met by any recipe.
    let text = demo_config(&[("max = 18.0", "max = 18.0\nmin = 19.0")]);
    let c = write(&d, "inv.toml", &text);
    run_in(&d, &["check", &c])
        .code(2)
        .stderr_has("constraint 'Na2O + K2O' has min 19 above max 18");
}

#[test]
fn s7_oxides_differing_only_in_case_are_refused_by_check() {
    let d = temp_dir("s7");
    let text = demo_config(&[("MgO = [0.0, 5.0]", "MgO = [0.0, 5.0]\nMGO = [0.0, 5.0]")]);
    let c = write(&d, "s.toml", &text);
    run_in(&d, &["check", &c]).code(2).stderr_has(&format!(
        "s.toml:{}: 'MGO' names MgO again (first as 'MgO' on line {})",
        line_of(&text, "MGO = "),
        line_of(&text, "MgO = ")
    ));
}

// ---------------------------------------------------------------- S6

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

// ---------------------------------------------------------------- N1, N2

fn demo_card(replace: &[(&str, &str)]) -> String {
    let mut text = std::fs::read_to_string(root().join("demo-datasets/melt-card.toml")).unwrap();
    for (a, b) in replace {
        assert!(text.contains(a), "the demo card has no {a:?}");
        text = text.replacen(a, b, 1);
    }
    text
}

#[test]
fn n1_a_card_whose_rates_overflow_is_refused_at_its_line() {
    let d = temp_dir("n1");
    let text = demo_card(&[("a = -2.8", "a = -320")]);
    let c = write(&d, "card.toml", &text);
    let r = run_in(&d, &["eval", "--melt", &c, "--json"]);
    r.code(2)
        .stderr_has(&format!(
            "card.toml:{}: the critical cooling rate comes out as inf K/s, not a finite positive number",
            line_of(&text, "a = -320")
        ))
        .stderr_has("a = -320 is outside -10 to 2");
    assert!(r.stdout.is_empty(), "{}", r.stdout);
    // The same through a model set whose viscosity constant is -1e300.
    let models = std::fs::read_to_string(root().join("configs/models/demo-soda-lime.toml"))
        .unwrap()
        .replacen("constant = -2.45", "constant = -1e300", 1);
    let m = write(&d, "m.toml", &models);
    let r = run_in(&d, &["eval", "--mol", GLASS, "--models", &m, "--json"]);
    assert_eq!(r.code, 2, "{}{}", r.stdout, r.stderr);
    assert_no_non_finite(&r.stdout);
}

#[test]
fn n1_a_card_whose_driving_force_is_out_of_range_is_refused_at_its_line() {
    // Enthalpies of fusion far outside any oxide's (the interface energy,
    // ∝ ΔH_m, then makes the barrier overflow or vanish): the critical rate
    // is refused as unrepresentable at the card's line, beside the
    // implausible input, before the nose search could fail on it less
    // clearly.
    let d = temp_dir("n1-dh");
    for dh in ["1e200", "1e-200"] {
        let text = demo_card(&[(
            "enthalpy_of_fusion_j_per_mol = 60000.0",
            &format!("enthalpy_of_fusion_j_per_mol = {dh}"),
        )]);
        let c = write(&d, "card.toml", &text);
        let r = run_in(&d, &["eval", "--melt", &c, "--json"]);
        r.code(2)
            .stderr_has(&format!(
                "card.toml:{}: the critical cooling rate comes out as",
                line_of(&text, "enthalpy_of_fusion_j_per_mol =")
            ))
            .stderr_has("not a finite positive number")
            .stderr_has("is outside 2000 to 1e6 J/mol");
        assert!(r.stdout.is_empty(), "{}", r.stdout);
    }
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

// ---------------------------------------------------------------- plausibility

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

// ---------------------------------------------------------------- L1

#[test]
fn l1_errors_found_while_evaluating_a_card_name_its_line() {
    let d = temp_dir("l1-card");
    // T_g of this curve is 480 + 4500/14.8 = 784.1 K: a liquidus at 700 K is
    // below it.
    let text = demo_card(&[("liquidus_k = 1300.0", "liquidus_k = 700.0")]);
    let c = write(&d, "card.toml", &text);
    run_in(&d, &["eval", "--melt", &c])
        .code(2)
        .stderr_has(&format!(
            "card.toml:{}: liquidus 700.0 K is at or below the glass transition 784.1 K",
            line_of(&text, "liquidus_k = 700.0")
        ));
    let text = demo_card(&[("turnbull_alpha = 0.33", "turnbull_alpha = 10")]);
    let c = write(&d, "card.toml", &text);
    run_in(&d, &["eval", "--melt", &c])
        .code(2)
        .stderr_has(&format!(
            "card.toml:{}: numerical failure",
            line_of(&text, "turnbull_alpha = 10")
        ));
    // A curve that never reaches T_g: the line of the value to blame.
    let text = demo_card(&[("a = -2.8", "a = 300")]);
    let c = write(&d, "card.toml", &text);
    run_in(&d, &["eval", "--melt", &c])
        .code(2)
        .stderr_has(&format!(
            "card.toml:{}: the viscosity never reaches 10^12 Pa·s on this curve",
            line_of(&text, "a = 300")
        ));
    // The existing fixture names its line now too.
    let f = fixture("card-nose-below-tg.toml");
    let r = run_in(&d, &["eval", "--melt", f.to_str().unwrap()]);
    r.code(2).stderr_has("card-nose-below-tg.toml:");
    assert!(
        !r.stderr.contains("card-nose-below-tg.toml: "),
        "{}",
        r.stderr
    );
}

#[test]
fn l1_a_bad_raw_materials_path_names_the_config_and_its_line() {
    let d = temp_dir("l1-config");
    let text = demo_config(&[("raw_materials = \"demo\"", "raw_materials = \"nope.csv\"")]);
    let c = write(&d, "s.toml", &text);
    run_in(&d, &["check", &c])
        .code(2)
        .stderr_has(&format!(
            "s.toml:{}: [cost] raw_materials = \"nope.csv\" cannot be used",
            line_of(&text, "nope.csv")
        ))
        // The file is named once (issue 13, item 5), its reason on the same line.
        .stderr_has("cannot be used: No such file");
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
