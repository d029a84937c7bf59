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

/// `screen::SMALL` with recipes snapped to a 0.5 mol% grid, amounts below
/// 0.2 mol% left out, and 200 g batch sheets.
fn snapped_small() -> String {
    crate::screen::SMALL.replace(
        "min_distance_mol_pct = 1.5\n",
        "min_distance_mol_pct = 1.5\nresolution_mol_pct = 0.5\nmin_amount_mol_pct = 0.2\n\n[batch]\nglass_kg = 0.2\n",
    )
}

fn parquet_rows(path: &std::path::Path) -> polars::prelude::DataFrame {
    quenchwise::files::table::read_frame(path).unwrap()
}

fn floats(df: &polars::prelude::DataFrame, c: &str) -> Vec<f64> {
    df.column(c)
        .unwrap()
        .cast(&polars::prelude::DataType::Float64)
        .unwrap()
        .f64()
        .unwrap()
        .iter()
        .map(|v| v.unwrap_or(f64::NAN))
        .collect()
}

/// The snapping rule (docs/science.md, "Snapping the shortlist"): each oxide
/// but the balance one to a neighbouring grid point, amounts below the
/// minimum to zero, the balance oxide takes the rest; nearest first.
#[test]
fn snapping_rounds_to_the_grid_drops_traces_and_closes_the_sum() {
    use quenchwise::composition::{Oxide, N_OXIDES};
    use quenchwise::screen::snap::snapped_neighbours;
    let d = temp_dir("snap-rule");
    std::fs::write(d.join("s.toml"), snapped_small()).unwrap();
    let plan = quenchwise::files::screen_config::load(&d.join("s.toml")).unwrap();
    let mut x = [0.0; N_OXIDES];
    x[Oxide::SiO2.index()] = 76.32;
    x[Oxide::Na2O.index()] = 13.13;
    x[Oxide::CaO.index()] = 10.4;
    x[Oxide::Al2O3.index()] = 0.15;
    let n = snapped_neighbours(&plan.problem, &x);
    // Three free oxides (SiO2 has the widest range and is the balance), two
    // grid points each; Al2O3's 0 and 0.5 (0.15 < 0.2 goes to 0 anyway).
    assert_eq!(n.len(), 8, "{n:?}");
    let first = n[0];
    // Source: the rule itself, worked by hand: 13.13 → 13.0, 10.4 → 10.5,
    // 0.15 → 0, SiO2 = 100 − 23.5 = 76.5.
    assert_eq!(first[Oxide::Na2O.index()], 13.0);
    assert_eq!(first[Oxide::CaO.index()], 10.5);
    assert_eq!(first[Oxide::Al2O3.index()], 0.0);
    assert_eq!(first[Oxide::SiO2.index()], 76.5);
    for p in &n {
        let sum: f64 = p.iter().sum();
        assert!((sum - 100.0).abs() < 1e-9, "{p:?}");
        for v in p {
            assert!((v * 2.0 - (v * 2.0).round()).abs() < 1e-9, "{p:?}");
        }
    }
    let d2 = |p: &[f64; N_OXIDES]| -> f64 { p.iter().zip(&x).map(|(a, b)| (a - b).powi(2)).sum() };
    assert!(n.windows(2).all(|w| d2(&w[0]) <= d2(&w[1])));
}

/// A snapped screen: every shortlisted amount on the grid, no trace below
/// the minimum, sums of 100 mol%, ranges kept, and every recipe meets every
/// limit when evaluated again independently; summary.txt counts what was
/// kept and dropped.
#[test]
fn a_snapped_shortlist_can_be_weighed_and_still_passes() {
    use quenchwise::assess::{evaluate_composition, Calibration};
    use quenchwise::composition::{Basis, Composition};
    let d = temp_dir("snap-screen");
    std::fs::write(d.join("s.toml"), snapped_small()).unwrap();
    let r = run_in(&d, &["screen", "s.toml", "--out", "out", "--no-report"]);
    r.code(0).stdout_has("snapping to weighable amounts");
    let plan = quenchwise::files::screen_config::load(&d.join("s.toml")).unwrap();
    let short = parquet_rows(&d.join("out/shortlist.parquet"));
    assert!(short.height() >= 1);
    let summary = std::fs::read_to_string(d.join("out/summary.txt")).unwrap();
    let dropped = summary.matches("\n  dropped: place").count();
    // Places dropped are refilled from the next-ranked candidates.
    let refilled = summary.matches("\n  refilled from (").count();
    assert!(
        summary.contains(&format!(
            "{} of 4 shortlisted recipes kept, {dropped} dropped",
            short.height() - refilled
        )),
        "{summary}"
    );
    let oxides = [
        ("SiO2", 66.0, 78.0),
        ("Na2O", 11.0, 17.0),
        ("CaO", 7.0, 13.0),
        ("Al2O3", 0.0, 3.0),
    ];
    for i in 0..short.height() {
        let mut sum = 0.0;
        let mut text = String::new();
        for (o, lo, hi) in oxides {
            let v = floats(&short, &format!("{o}_mol_pct"))[i];
            // Source: the config's own grid, minimum and ranges.
            assert!((v * 2.0 - (v * 2.0).round()).abs() < 1e-9, "{o} = {v}");
            assert!(v == 0.0 || v >= 0.2, "{o} = {v}");
            assert!(v >= lo - 1e-9 && v <= hi + 1e-9, "{o} = {v}");
            sum += v;
            text.push_str(&format!("{o}={v} "));
        }
        assert!((sum - 100.0).abs() < 1e-9, "{text}");
        // Independent re-evaluation through the public chain: the limits of
        // screen::SMALL worked by hand (R_c ≤ 2/10 K/s, melting temperature
        // ≤ 1460 °C, liquidus ≤ 1480 − 465 = 1015 °C, cost ≤ 0.24).
        let c = Composition::parse(text.trim(), Basis::MolPercent, 1e-6).unwrap();
        let e = evaluate_composition(
            &plan.problem.models,
            &c,
            &plan.problem.kinetic_options,
            None,
            &Calibration::None,
        )
        .unwrap();
        assert!(e.critical_rate_k_per_s <= 0.2, "{text}");
        assert!(
            e.melting_temperature_k.unwrap() <= 1460.0 + 273.15,
            "{text}"
        );
        assert!(e.liquidus_k <= 1015.0 + 273.15, "{text}");
        let cost = plan.problem.cost.as_ref().unwrap();
        assert!(cost.model.cost_per_kg_glass(&c).unwrap() <= 0.24, "{text}");
        let na_ca = floats(&short, "Na2O_mol_pct")[i] + floats(&short, "CaO_mol_pct")[i];
        assert!(na_ca <= 26.0 + 1e-9, "{text}");
    }
    // Without the keys the shortlist is what the optimiser found: off the grid.
    std::fs::write(d.join("plain.toml"), crate::screen::SMALL).unwrap();
    run_in(
        &d,
        &["screen", "plain.toml", "--out", "plain", "--no-report"],
    )
    .code(0);
    let plain = parquet_rows(&d.join("plain/shortlist.parquet"));
    let off_grid = (0..plain.height()).any(|i| {
        let v = floats(&plain, "Na2O_mol_pct")[i];
        (v * 2.0 - (v * 2.0).round()).abs() > 1e-6
    });
    assert!(
        off_grid,
        "the unsnapped shortlist happens to lie on the grid"
    );
    assert!(!std::fs::read_to_string(d.join("plain/summary.txt"))
        .unwrap()
        .contains("snapping"));
}

#[test]
fn snapping_and_batch_keys_are_checked_with_their_line() {
    let d = temp_dir("snap-config");
    for (from, to, says) in [
        (
            "resolution_mol_pct = 0.5",
            "resolution_mol_pct = 0.3",
            "divide 100 mol% into whole steps",
        ),
        (
            "resolution_mol_pct = 0.5",
            "resolution_mol_pct = -1.0",
            "resolution_mol_pct must lie in [0.001, 10]",
        ),
        // Smaller than anyone weighs; it once passed the whole-steps test
        // (any f64 above 2^53 is whole) and overflowed the grid arithmetic.
        (
            "resolution_mol_pct = 0.5",
            "resolution_mol_pct = 1e-18",
            "resolution_mol_pct must lie in [0.001, 10]",
        ),
        (
            "min_amount_mol_pct = 0.2",
            "min_amount_mol_pct = 20.0",
            "min_amount_mol_pct must lie in [0, 10]",
        ),
        (
            "glass_kg = 0.2",
            "glass_kg = 0.0",
            "[batch] glass_kg must lie in [0.001, 1000]",
        ),
        (
            "glass_kg = 0.2",
            "glass_kg = 1e-9",
            "[batch] glass_kg must lie in [0.001, 1000]",
        ),
        // A third number was once ignored without a word.
        (
            "Al2O3 = [0.0, 3.0]",
            "Al2O3 = [0.0, 3.0, 5.0]",
            "Al2O3 limits must be two numbers [min, max] mol%, got 3",
        ),
        // Snapping gives Al2O3 0 or 0.5 mol%: neither lies in [0.05, 0.15].
        (
            "Al2O3 = [0.0, 3.0]",
            "Al2O3 = [0.05, 0.15]",
            "Al2O3 range [0.05, 0.15] mol% holds no amount snapping can give",
        ),
    ] {
        let text = snapped_small().replace(from, to);
        assert!(text.contains(to));
        std::fs::write(d.join("bad.toml"), &text).unwrap();
        let line = text.lines().position(|l| l.starts_with(to)).unwrap() + 1;
        run_in(&d, &["check", "bad.toml"])
            .code(2)
            .stderr_has(&format!("bad.toml:{line}"))
            .stderr_has(says);
    }
}

/// `[batch] glass_kg` sets the mass of the screen's batch sheets and of
/// `eval --against` sheets; the same recipe's `batch --glass-kg` sheet is
/// the reference.
#[test]
fn batch_sheets_weigh_out_the_configured_glass_mass() {
    let d = temp_dir("snap-batch");
    std::fs::write(d.join("s.toml"), snapped_small()).unwrap();
    run_in(&d, &["screen", "s.toml", "--out", "out", "--no-report"]).code(0);
    let sheet = std::fs::read_to_string(d.join("out/batch-sheets/rank-01.txt")).unwrap();
    assert!(sheet.contains("batch for 0.200 kg of glass"), "{sheet}");
    let csv = std::fs::read_to_string(d.join("out/batch-sheets/rank-01.csv")).unwrap();
    assert!(csv.starts_with("raw_material,mass_kg,cost\n"), "{csv}");
    let total: f64 = csv
        .lines()
        .skip(1)
        .map(|l| l.split(',').nth(1).unwrap().parse::<f64>().unwrap())
        .sum();
    // The same recipe through `batch` for 0.2 kg (Source: conservation of
    // mass; the batch command's own sheet, written to 1e-6 kg).
    let short = parquet_rows(&d.join("out/shortlist.parquet"));
    let mol: Vec<String> = ["SiO2", "Na2O", "CaO", "Al2O3"]
        .iter()
        .map(|o| format!("{o}={}", floats(&short, &format!("{o}_mol_pct"))[0]))
        .collect();
    let b = run_in(
        &d,
        &[
            "batch",
            "--mol",
            &mol.join(" "),
            "--glass-kg",
            "0.2",
            "--csv",
        ],
    );
    b.code(0);
    let reference: f64 = b
        .stdout
        .lines()
        .skip(1)
        .filter_map(|l| l.split(',').nth(1)?.parse::<f64>().ok())
        .sum();
    assert!((total - reference).abs() < 1e-5, "{total} vs {reference}");
    assert!(
        total > 0.2 && total < 0.3,
        "{total} kg of batch for 0.2 kg of glass"
    );
    // eval --against writes its sheets for the same mass.
    std::fs::write(
        d.join("mine.csv"),
        format!(
            "name,SiO2,Na2O,CaO,Al2O3\nmine,{}\n",
            ["SiO2", "Na2O", "CaO", "Al2O3"]
                .iter()
                .map(|o| floats(&short, &format!("{o}_mol_pct"))[0].to_string())
                .collect::<Vec<_>>()
                .join(",")
        ),
    )
    .unwrap();
    run_in(
        &d,
        &[
            "eval",
            "--compositions",
            "mine.csv",
            "--against",
            "s.toml",
            "--out",
            "checked.csv",
        ],
    )
    .code(0)
    .stdout_has("0.2 kg of glass each");
    let sheets = std::fs::read_to_string(d.join("checked-batch-sheets.txt")).unwrap();
    assert!(sheets.contains("batch for 0.200 kg of glass"), "{sheets}");
}

/// shortlist.csv: identity, composition (mol% then wt%), the decisive
/// numbers, the rest, warnings last; numbers rounded to meaningful digits
/// (Parquet keeps every digit); a warning on every row stated once in
/// summary.txt with a code per row.
#[test]
fn the_shortlist_csv_reads_well_and_parquet_keeps_every_digit() {
    let d = temp_dir("csv-digits");
    std::fs::write(d.join("small.toml"), crate::screen::SMALL).unwrap();
    run_in(&d, &["screen", "small.toml", "--out", "out", "--no-report"]).code(0);
    let full = parquet_rows(&d.join("out/shortlist.parquet"));
    let csv = quenchwise::files::table::read_frame(&d.join("out/shortlist.csv")).unwrap();
    let names: Vec<String> = csv
        .get_column_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    let at = |n: &str| {
        names
            .iter()
            .position(|c| c == n)
            .unwrap_or_else(|| panic!("{n}: {names:?}"))
    };
    assert_eq!(at("rank"), 0);
    assert!(at("Al2O3_mol_pct") < at("SiO2_wt_pct"));
    assert!(at("Al2O3_wt_pct") < at("margin_decades"));
    assert!(at("margin_decades") < at("critical_rate_k_per_s"));
    assert!(at("cost_per_kg") < at("melting_temperature_k"));
    assert_eq!(at("warnings"), names.len() - 1);
    // Source: common practice for rounding: half a unit of the last digit.
    let close = |c: &str, half: f64| {
        for (a, b) in floats(&csv, c).iter().zip(floats(&full, c)) {
            assert!((a - b).abs() <= half * (1.0 + 1e-9), "{c}: {a} vs {b}");
        }
    };
    close("SiO2_mol_pct", 0.005);
    close("Na2O_wt_pct", 0.005);
    close("liquidus_c", 0.05);
    close("melting_temperature_k", 0.05);
    for (a, b) in floats(&csv, "critical_rate_k_per_s")
        .iter()
        .zip(floats(&full, "critical_rate_k_per_s"))
    {
        assert!(
            (a - b).abs() <= 0.5e-3 * b.abs(),
            "{a} vs {b}: 4 significant figures"
        );
        assert_eq!(format!("{a:.3e}").parse::<f64>().unwrap(), *a);
    }
    // The Parquet file is not rounded (the optimiser's amounts are not on a
    // 0.01 grid).
    assert!(floats(&full, "SiO2_mol_pct")
        .iter()
        .any(|v| (v * 100.0 - (v * 100.0).round()).abs() > 1e-6));
    // wt% from mol% with molar masses (Source: IUPAC standard atomic weights,
    // from memory: SiO2 60.08, Na2O 61.98, CaO 56.08, Al2O3 101.96 g/mol).
    let m = [
        ("SiO2", 60.08),
        ("Na2O", 61.98),
        ("CaO", 56.08),
        ("Al2O3", 101.96),
    ];
    for i in 0..full.height() {
        let mass: f64 = m
            .iter()
            .map(|(o, mm)| floats(&full, &format!("{o}_mol_pct"))[i] * mm)
            .sum();
        for (o, mm) in m {
            let wt = floats(&full, &format!("{o}_mol_pct"))[i] * mm / mass * 100.0;
            let got = floats(&full, &format!("{o}_wt_pct"))[i];
            assert!((wt - got).abs() < 0.01, "{o}: {wt} vs {got}");
        }
    }
    // The demo set's two warnings sit on every row: once in summary.txt, a
    // code in the CSV, the full text in Parquet.
    let summary = std::fs::read_to_string(d.join("out/summary.txt")).unwrap();
    assert!(
        summary.contains("warnings on every shortlisted recipe"),
        "{summary}"
    );
    assert!(
        summary.contains("  W1: model set 'demo-soda-lime' has invented coefficients"),
        "{summary}"
    );
    let w: Vec<String> = csv
        .column("warnings")
        .unwrap()
        .str()
        .unwrap()
        .iter()
        .map(|s| s.unwrap_or("").to_string())
        .collect();
    assert!(w.iter().all(|w| w.starts_with("W1; W2")), "{w:?}");
    let wf: Vec<String> = full
        .column("warnings")
        .unwrap()
        .str()
        .unwrap()
        .iter()
        .map(|s| s.unwrap_or("").to_string())
        .collect();
    assert!(wf.iter().all(|w| w.starts_with("model set")), "{wf:?}");
}

#[test]
fn every_json_fixpoint_is_also_in_celsius() {
    // Source: ISO 80000-5 / SI brochure (9th ed.): t/°C = T/K − 273.15.
    let d = temp_dir("json-celsius");
    let j = run_in(
        &d,
        &["eval", "--mol", "SiO2=72 Na2O=14 CaO=10 Al2O3=4", "--json"],
    )
    .code(0)
    .json();
    for t in [
        "melting_temperature",
        "working_point",
        "softening_point",
        "strain_point",
        "glass_transition",
        "liquidus",
        "nose_temperature",
    ] {
        let k = j[format!("{t}_k")]
            .as_f64()
            .unwrap_or_else(|| panic!("{t}_k: {j}"));
        let c = j[format!("{t}_c")]
            .as_f64()
            .unwrap_or_else(|| panic!("{t}_c: {j}"));
        assert!((k - 273.15 - c).abs() < 1e-9, "{t}: {k} K, {c} °C");
    }
}

/// An `eval` table repeats no input column with an `_out` twin: a result
/// named like an input column (a melt card's liquidus_k, turnbull_alpha)
/// takes its place with the value in force.
#[test]
fn eval_tables_write_each_column_once() {
    let d = temp_dir("no-out-columns");
    let cards = root().join("demo-datasets/melt-cards.csv");
    run_in(
        &d,
        &[
            "eval",
            "--melt-cards",
            cards.to_str().unwrap(),
            "--out",
            "m.csv",
        ],
    )
    .code(0);
    let text = std::fs::read_to_string(d.join("m.csv")).unwrap();
    let head: Vec<&str> = text.lines().next().unwrap().split(',').collect();
    assert!(!head.iter().any(|c| c.ends_with("_out")), "{head:?}");
    let mut unique = head.clone();
    unique.sort();
    unique.dedup();
    assert_eq!(unique.len(), head.len(), "{head:?}");
    // Source: demo-datasets/melt-cards.csv (its own first row: liquidus_k
    // 1300, turnbull_alpha 0.33); one crystal, so the liquidus in force is
    // the card's.
    let df = quenchwise::files::table::read_frame(&d.join("m.csv")).unwrap();
    assert_eq!(floats(&df, "liquidus_k")[0], 1300.0);
    assert_eq!(floats(&df, "turnbull_alpha")[0], 0.33);
    assert!(head.contains(&"critical_rate_k_per_s"));
}

/// With `[uncertainty]` a snapped recipe's probability of a glass is drawn
/// again and must still reach min_probability.
#[test]
fn a_snapped_probability_screen_keeps_the_least_probability() {
    let d = temp_dir("snap-probability");
    let demo =
        std::fs::read_to_string(root().join("configs/demo-screen-probability.toml")).unwrap();
    let text = snapped_probability_demo(&demo);
    std::fs::write(d.join("p.toml"), &text).unwrap();
    run_in(&d, &["screen", "p.toml", "--out", "out", "--no-report"])
        .code(0)
        .stdout_has("snapping to weighable amounts");
    let short = parquet_rows(&d.join("out/shortlist.parquet"));
    assert!(short.height() >= 1);
    // Source: the config's own min_probability = 0.9 and grid.
    for p in floats(&short, "probability_glassy") {
        assert!(p >= 0.9, "P = {p}");
    }
    for o in ["Na2O", "CaO", "MgO", "K2O", "Al2O3", "B2O3"] {
        for v in floats(&short, &format!("{o}_mol_pct")) {
            assert!((v * 2.0 - (v * 2.0).round()).abs() < 1e-9, "{o} = {v}");
        }
    }
    snapped_shortlist_is_ranked_and_apart(&short, &text);
}

/// The same with the cost ranking: snapping changes costs, and the snapped
/// recipes are ranked again by cost.
#[test]
fn a_snapped_screen_with_draws_ranked_by_cost_stays_in_cost_order() {
    let d = temp_dir("snap-probability-cost");
    let demo =
        std::fs::read_to_string(root().join("configs/demo-screen-probability.toml")).unwrap();
    let text = snapped_probability_demo(&demo).replace("kind = \"probability\"", "kind = \"cost\"");
    assert!(text.contains("kind = \"cost\""));
    std::fs::write(d.join("c.toml"), &text).unwrap();
    run_in(&d, &["screen", "c.toml", "--out", "out", "--no-report"]).code(0);
    let short = parquet_rows(&d.join("out/shortlist.parquet"));
    assert!(short.height() >= 2, "{}", short.height());
    snapped_shortlist_is_ranked_and_apart(&short, &text);
}

/// Ranks follow the objective of the config (cost ascending, or P
/// descending then cost), and no two recipes lie closer than the config's
/// min_distance_mol_pct. Source: the config's own ranking rule and distance.
fn snapped_shortlist_is_ranked_and_apart(short: &polars::prelude::DataFrame, config: &str) {
    let cost = floats(short, "cost_per_kg");
    if config.contains("kind = \"probability\"") {
        let p = floats(short, "probability_glassy");
        for i in 1..p.len() {
            assert!(
                p[i - 1] > p[i] || (p[i - 1] == p[i] && cost[i - 1] <= cost[i]),
                "rank {i} before rank {}: P {} / {}, cost {} / {}",
                i + 1,
                p[i - 1],
                p[i],
                cost[i - 1],
                cost[i]
            );
        }
    } else {
        assert!(cost.windows(2).all(|w| w[0] <= w[1]), "{cost:?}");
    }
    let min: f64 = config
        .lines()
        .find_map(|l| l.trim().strip_prefix("min_distance_mol_pct"))
        .and_then(|r| r.trim_start_matches([' ', '=']).split_whitespace().next())
        .and_then(|v| v.parse().ok())
        .expect("the config gives min_distance_mol_pct");
    let oxides = ["SiO2", "Na2O", "CaO", "MgO", "K2O", "Al2O3", "B2O3"];
    let cols: Vec<Vec<f64>> = oxides
        .iter()
        .map(|o| floats(short, &format!("{o}_mol_pct")))
        .collect();
    for i in 0..short.height() {
        for j in 0..i {
            let dist = cols
                .iter()
                .map(|c| (c[i] - c[j]).powi(2))
                .sum::<f64>()
                .sqrt();
            assert!(
                dist >= min - 1e-9,
                "ranks {} and {} lie {dist} mol% apart",
                j + 1,
                i + 1
            );
        }
    }
}

fn snapped_probability_demo(demo: &str) -> String {
    let text = demo
        .replace("first_pass_points = 2048", "first_pass_points = 256")
        .replace("refine_from = 6 ", "refine_from = 1 ")
        .replace(
            "[shortlist]\n",
            "[shortlist]\nresolution_mol_pct = 0.5\nmin_amount_mol_pct = 0.2\n",
        );
    assert!(text.contains("resolution_mol_pct = 0.5") && text.contains("min_probability = 0.9"));
    text
}

/// A composition table that carries the user's own measurements under the
/// names of result columns keeps them: the model's values go beside them as
/// `<name>_model`. (Only the inputs a melt card's evaluation reads, such as
/// its liquidus_k, are replaced by the value in force.)
#[test]
fn eval_tables_keep_the_users_own_columns_named_like_results() {
    let d = temp_dir("own-columns");
    // The numbers in the measured columns are invented for this test; the
    // check is only that they come back unchanged.
    std::fs::write(
        d.join("meas.csv"),
        "name,SiO2,Na2O,CaO,Al2O3,critical_rate_k_per_s,liquidus_c,warnings,error,critical_rate_k_per_s_model\n\
         plate-A,72,14,10,4,0.05,999,my own note,cracked on annealing,0.5\n",
    )
    .unwrap();
    run_in(
        &d,
        &["eval", "--compositions", "meas.csv", "--out", "out.csv"],
    )
    .code(0);
    let df = quenchwise::files::table::read_frame(&d.join("out.csv")).unwrap();
    assert_eq!(floats(&df, "critical_rate_k_per_s")[0], 0.05);
    assert_eq!(floats(&df, "liquidus_c")[0], 999.0);
    // An earlier model column of the user's own is kept too.
    assert_eq!(floats(&df, "critical_rate_k_per_s_model")[0], 0.5);
    let model = floats(&df, "critical_rate_k_per_s_model_2")[0];
    assert!(model > 0.0 && model != 0.05 && model != 0.5, "{model}");
    assert!(floats(&df, "liquidus_c_model")[0] > 500.0);
    let text = std::fs::read_to_string(d.join("out.csv")).unwrap();
    assert!(text.contains("my own note"), "{text}");
    assert!(text.contains("cracked on annealing"), "{text}");
    assert!(
        text.lines().next().unwrap().contains(",error_model"),
        "{text}"
    );
}

/// `--nuclei-per-m3` on the command line wins over a melt-card table's
/// column, as it does over a single card's key, with and without
/// `--uncertainty`.
#[test]
fn the_command_line_nuclei_density_wins_over_a_table_row() {
    let d = temp_dir("cli-wins");
    let cards = root().join("demo-datasets/melt-cards.csv");
    for extra in [&[][..], &["--uncertainty", "20"][..]] {
        let mut args = vec![
            "eval",
            "--melt-cards",
            cards.to_str().unwrap(),
            "--out",
            "m.csv",
            "--nuclei-per-m3",
            "1e10",
        ];
        args.extend_from_slice(extra);
        // With --uncertainty the demo cards give no spread: every row says
        // why it has no band, and the point estimate is still written.
        run_in(&d, &args).code(0);
        let df = quenchwise::files::table::read_frame(&d.join("m.csv")).unwrap();
        // Rows the demo file makes fail on purpose have no value.
        let set: Vec<f64> = floats(&df, "heterogeneous_nuclei_per_m3")
            .into_iter()
            .filter(|v| !v.is_nan())
            .collect();
        assert!(!set.is_empty());
        assert!(set.iter().all(|&v| v == 1e10), "{extra:?}: {set:?}");
    }
}

/// The options that write one glass's outputs are refused for tables
/// instead of being ignored.
#[test]
fn single_glass_outputs_are_refused_for_tables() {
    let d = temp_dir("table-plots");
    let cards = root().join("demo-datasets/melt-cards.csv");
    let comps = root().join("demo-datasets/candidates.csv");
    for (input, file) in [("--melt-cards", &cards), ("--compositions", &comps)] {
        for flag in ["--viscosity-plot", "--plot", "--ttt"] {
            run_in(
                &d,
                &[
                    "eval",
                    input,
                    file.to_str().unwrap(),
                    "--out",
                    "t.csv",
                    flag,
                    "x.svg",
                ],
            )
            .code(2)
            .stderr_has(&format!("{flag} draws or prints one glass"));
        }
    }
    run_in(
        &d,
        &[
            "eval",
            "--melt",
            root()
                .join("demo-datasets/melt-card.toml")
                .to_str()
                .unwrap(),
            "--uncertainty",
            "40",
            "--viscosity-plot",
            "v.svg",
        ],
    )
    .code(2)
    .stderr_has("--viscosity-plot draws the point estimate");
}

/// `eval --melting-viscosity` moves the melting temperature to where the
/// viscosity model reaches that viscosity.
#[test]
fn eval_takes_a_melting_viscosity_of_its_own() {
    let d = temp_dir("eval-melting-viscosity");
    let glass = "SiO2=81 B2O3=13 Na2O=4 Al2O3=2";
    let json = |extra: &[&str]| -> serde_json::Value {
        let mut args = vec![
            "eval",
            "--models",
            "demo-borosilicate",
            "--mol",
            glass,
            "--json",
        ];
        args.extend_from_slice(extra);
        let r = run_in(&d, &args);
        r.code(0);
        serde_json::from_str(&r.stdout).unwrap()
    };
    let at10 = json(&[]);
    let at316 = json(&["--melting-viscosity", "316.2"]);
    let t10 = at10["melting_temperature_k"].as_f64().unwrap();
    let t316 = at316["melting_temperature_k"].as_f64().unwrap();
    assert_eq!(at316["melting_viscosity_pa_s"].as_f64(), Some(316.2));
    // Source: the set's own viscosity curve solved for T at log10 η =
    // log10 316.2 (the VFT law inverted, Fulcher 1925), through the library.
    use quenchwise::composition::{Basis, Composition};
    use quenchwise::files::model_set::{parse_model_set, BOROSILICATE_MODELS};
    use quenchwise::files::source::Source;
    let m = parse_model_set(&Source::new("demo-borosilicate", BOROSILICATE_MODELS)).unwrap();
    let c = Composition::parse(glass, Basis::MolPercent, 2.0).unwrap();
    let (curve, _) = m.viscosity.curve(&c).unwrap();
    for (t, eta) in [(t316, 316.2_f64), (t10, 10.0)] {
        let expect = curve
            .temperature_at(quenchwise::units::Log10PaS(eta.log10()))
            .unwrap()
            .0;
        assert!((t - expect).abs() < 0.05, "{t} vs {expect} K at {eta} Pa·s");
    }
    assert!(
        t316 < t10 - 200.0,
        "{t10} K at 10 Pa·s, {t316} K at 316 Pa·s"
    );
    run_in(&d, &["eval", "--mol", glass, "--melting-viscosity", "1e6"])
        .code(2)
        .stderr_has("--melting-viscosity must lie between 0.1 and 10000 Pa·s");
}

/// A CSV row with more cells than the header, past the first batch, is
/// named by its line, in words a user can act on.
#[test]
fn a_ragged_row_far_into_a_table_is_named_by_its_line() {
    let d = temp_dir("ragged");
    let mut text = String::from("name,SiO2,Na2O,CaO,Al2O3\n");
    for i in 0..5000 {
        text.push_str(&format!("x{i},72,14,10,4\n"));
    }
    text.push_str("bad,72,14,10,4,5\n");
    std::fs::write(d.join("rag.csv"), text).unwrap();
    run_in(&d, &["eval", "--compositions", "rag.csv", "--out", "o.csv"])
        .code(2)
        .stderr_has("rag.csv: line 5002 has 6 cells but the header names 5 columns");
}

/// A table that names one oxide twice in its header is refused, not read
/// with the second column passed through under another name.
#[test]
fn a_repeated_oxide_column_is_refused() {
    let d = temp_dir("repeated-oxide");
    std::fs::write(d.join("rep.csv"), "name,SiO2,Na2O,CaO,SiO2\nA,72,14,10,4\n").unwrap();
    run_in(&d, &["eval", "--compositions", "rep.csv", "--out", "o.csv"])
        .code(2)
        .stderr_has("both name SiO2");
}

/// A melt-card table may give the liquidus in °C, as a melt-card file may.
/// Source: the same card with liquidus_k = liquidus_c + 273.15 (ISO 80000-5).
#[test]
fn a_melt_card_table_reads_the_liquidus_in_celsius() {
    let d = temp_dir("cards-celsius");
    let head =
        "a,b_k,c_k,{},enthalpy_of_fusion_j_per_mol,molar_volume_m3_per_mol,turnbull_alpha,growth\n";
    let row = "-2.8,4500.0,480.0,{},60000.0,6.0e-5,0.33,normal\n";
    std::fs::write(
        d.join("k.csv"),
        head.replace("{}", "liquidus_k") + &row.replace("{}", "1300.0"),
    )
    .unwrap();
    std::fs::write(
        d.join("c.csv"),
        head.replace("{}", "liquidus_c") + &row.replace("{}", "1026.85"),
    )
    .unwrap();
    for f in ["k", "c"] {
        run_in(
            &d,
            &[
                "eval",
                "--melt-cards",
                &format!("{f}.csv"),
                "--out",
                &format!("{f}.parquet"),
            ],
        )
        .code(0);
    }
    let k = quenchwise::files::table::read_frame(&d.join("k.parquet")).unwrap();
    let c = quenchwise::files::table::read_frame(&d.join("c.parquet")).unwrap();
    let (rk, rc) = (
        floats(&k, "critical_rate_k_per_s")[0],
        floats(&c, "critical_rate_k_per_s")[0],
    );
    assert!(rk > 0.0 && ((rk - rc) / rk).abs() < 1e-9, "{rk} vs {rc}");
    assert_eq!(floats(&c, "liquidus_k")[0], floats(&k, "liquidus_k")[0]);
}
