//! Outputs a person reads at the bench: shortlist.json in the order of
//! shortlist.csv, eval tables rounded with their repeated warnings stated
//! once, a settable melting viscosity stated wherever a melting temperature
//! is shown, and one rounding rule for CSV and text.

use crate::util::{root, run_in, temp_dir};
use quenchwise::composition::{Basis, Composition};
use quenchwise::properties::{ModelSet, ViscosityCurve};

fn frame(path: &std::path::Path) -> polars::prelude::DataFrame {
    quenchwise::files::table::read_frame(path).unwrap()
}

fn floats(df: &polars::prelude::DataFrame, c: &str) -> Vec<f64> {
    df.column(c)
        .unwrap_or_else(|_| panic!("no column {c}"))
        .cast(&polars::prelude::DataType::Float64)
        .unwrap()
        .f64()
        .unwrap()
        .iter()
        .map(|v| v.unwrap_or(f64::NAN))
        .collect()
}

fn texts(df: &polars::prelude::DataFrame, c: &str) -> Vec<String> {
    df.column(c)
        .unwrap_or_else(|_| panic!("no column {c}"))
        .str()
        .unwrap()
        .iter()
        .map(|s| s.unwrap_or("").to_string())
        .collect()
}

fn header(path: &std::path::Path) -> Vec<String> {
    std::fs::read_to_string(path)
        .unwrap()
        .lines()
        .next()
        .unwrap()
        .split(',')
        .map(str::to_string)
        .collect()
}

/// The temperature (K) where a VFT curve reaches log10(η / Pa·s) = `level`,
/// by the inverse of the VFT law itself: T = C + B / (level − A).
fn vft_inverse_k(m: &ModelSet, c: &Composition, level: f64) -> f64 {
    let (curve, _) = m.viscosity.curve(c).unwrap();
    match curve {
        ViscosityCurve::Vft { a, b_k, c_k } => c_k + b_k / (level - a),
        other => panic!("not a VFT curve: {other:?}"),
    }
}

/// `screen::SMALL` melting at 10^1.5 Pa·s instead of 10 Pa·s.
fn small_melting_at_31_6() -> String {
    let t = crate::screen::SMALL.replace(
        "liquidus_margin_c = 465.0\n",
        "liquidus_margin_c = 465.0\nmelting_viscosity_pa_s = 31.62\n",
    );
    assert!(t.contains("melting_viscosity_pa_s = 31.62"));
    t
}

/// The keys of the first object of a pretty-printed JSON array, in the
/// order written.
fn first_object_keys(json: &str) -> Vec<String> {
    let mut keys = Vec::new();
    for l in json.lines().skip(2) {
        let l = l.trim();
        if l.starts_with('}') {
            break;
        }
        if let Some(rest) = l.strip_prefix('"') {
            keys.push(rest.split('"').next().unwrap().to_string());
        }
    }
    keys
}

/// The °C value a batch sheet's text gives on the line starting `label`.
fn sheet_celsius(text: &str, label: &str) -> String {
    let line = text
        .lines()
        .find(|l| l.trim_start().starts_with(label))
        .unwrap_or_else(|| panic!("no line {label}:\n{text}"));
    let rest = &line[line.find(label).unwrap() + label.len()..];
    let at = rest.find("°C").unwrap();
    rest[..at]
        .split_whitespace()
        .last()
        .unwrap_or_else(|| panic!("{line}"))
        .to_string()
}

/// One screen with `[furnace] melting_viscosity_pa_s = 31.62`:
/// - shortlist.json has the keys of shortlist.csv in the same order;
/// - every shortlisted melting temperature is the model's own VFT isokom at
///   10^1.5 Pa·s, and summary.txt and the batch sheets state the criterion;
/// - the liquidus and melting temperature of each rank read the same in
///   shortlist.csv and in its batch sheet (one rounding rule).
#[test]
fn a_screen_states_its_melting_viscosity_and_its_json_follows_the_csv() {
    let d = temp_dir("melting-viscosity-screen");
    std::fs::write(d.join("s.toml"), small_melting_at_31_6()).unwrap();
    run_in(&d, &["screen", "s.toml", "--out", "out", "--no-report"]).code(0);
    let out = d.join("out");
    // Item 1: the JSON keys in the CSV's order (rank, composition, the
    // decisive numbers, the rest, warnings last).
    let csv_names = header(&out.join("shortlist.csv"));
    let json = std::fs::read_to_string(out.join("shortlist.json")).unwrap();
    let keys = first_object_keys(&json);
    assert_eq!(keys, csv_names, "{json}");
    assert_eq!(keys.first().map(String::as_str), Some("rank"));
    assert_eq!(keys.last().map(String::as_str), Some("warnings"));
    // Full digits in JSON, as in Parquet.
    let full = frame(&out.join("shortlist.parquet"));
    let parsed: Vec<serde_json::Value> = serde_json::from_str(&json).unwrap();
    assert_eq!(parsed.len(), full.height());
    for (i, v) in floats(&full, "SiO2_mol_pct").iter().enumerate() {
        assert_eq!(parsed[i]["SiO2_mol_pct"].as_f64().unwrap(), *v);
    }

    // Item 3: the melting temperature is the VFT inverse at 10^1.5 Pa·s.
    let plan = quenchwise::files::screen_config::load(&d.join("s.toml")).unwrap();
    let level = 31.62f64.log10();
    assert_eq!(plan.problem.models.melting_viscosity_pa_s, 31.62);
    let oxides = ["SiO2", "Na2O", "CaO", "Al2O3"];
    for i in 0..full.height() {
        let text: Vec<String> = oxides
            .iter()
            .map(|o| format!("{o}={}", floats(&full, &format!("{o}_mol_pct"))[i]))
            .collect();
        let c = Composition::parse(&text.join(" "), Basis::MolPercent, 1e-6).unwrap();
        // Source: the VFT law, log10 η = A + B/(T − C) (Fulcher, J. Am.
        // Ceram. Soc. 8 (1925) 339), solved for T.
        let want = vft_inverse_k(&plan.problem.models, &c, level);
        let got = floats(&full, "melting_temperature_k")[i];
        assert!((got - want).abs() < 1e-6, "rank {}: {got} vs {want}", i + 1);
        // Lower than at 10 Pa·s: a more viscous melt is reached at a lower
        // temperature (VFT falls with T).
        assert!(got < vft_inverse_k(&plan.problem.models, &c, 1.0) - 10.0);
        assert_eq!(floats(&full, "melting_viscosity_pa_s")[i], 31.62);
    }
    let summary = std::fs::read_to_string(out.join("summary.txt")).unwrap();
    assert!(
        summary.contains("melting temperature (viscosity 31.6 Pa·s) ≤ 1460 °C"),
        "{summary}"
    );
    // The report states it too (its limits, its tables and its axis).
    run_in(&d, &["report", "out"]).code(0);
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(
        html.contains("melting temperature (31.6 Pa·s) ≤ 1460 °C"),
        "the report's furnace line"
    );
    assert!(
        !html.contains("(10 Pa·s)"),
        "a 10 Pa·s label left in the report"
    );

    // Item 6: the same rounding in the CSV file and in the batch sheet text.
    let csv = frame(&out.join("shortlist.csv"));
    for i in 0..csv.height() {
        let sheet =
            std::fs::read_to_string(out.join(format!("batch-sheets/rank-{:02}.txt", i + 1)))
                .unwrap();
        assert!(sheet.contains("melting temperature (31.6 Pa·s)"), "{sheet}");
        for (label, col) in [
            ("liquidus T_L", "liquidus_c"),
            ("melting temperature (31.6 Pa·s)", "melting_temperature_c"),
        ] {
            assert_eq!(
                sheet_celsius(&sheet, label),
                format!("{:.1}", floats(&csv, col)[i]),
                "rank {}: {label}",
                i + 1
            );
        }
    }
}

/// The demo-borosilicate set melting at 10 and at 10^2.5 Pa·s: the
/// temperatures follow the model's own VFT inverse; `eval --against`
/// states the criterion and writes it beside each melting temperature; a
/// value out of range is refused with the config's line.
#[test]
fn a_borosilicate_screen_config_sets_its_melting_viscosity() {
    let d = temp_dir("melting-viscosity-boro");
    let config = |v: &str| {
        format!(
            r#"
[search]
seed = 7
first_pass_points = 64
chunk_size = 64

[models]
set = "demo-borosilicate"

[oxides]
SiO2 = [78.0, 86.0]
B2O3 = [10.0, 14.0]
Na2O = [3.0, 5.0]
Al2O3 = [1.0, 2.0]

[equipment]
cooling_rate = 10.0
unit = "K/s"
safety_factor = 10.0

[furnace]
max_temperature_c = 1700.0
{v}
"#
        )
    };
    std::fs::write(d.join("ten.toml"), config("")).unwrap();
    std::fs::write(
        d.join("thick.toml"),
        config("melting_viscosity_pa_s = 316.2"),
    )
    .unwrap();
    let ten = quenchwise::files::screen_config::load(&d.join("ten.toml")).unwrap();
    let thick = quenchwise::files::screen_config::load(&d.join("thick.toml")).unwrap();
    // The typical borosilicate 3.3 in mol% (configs/models/demo-borosilicate.toml).
    let c = Composition::parse(
        "SiO2=83.0 B2O3=11.5 Na2O=4.1 Al2O3=1.4",
        Basis::MolPercent,
        1e-6,
    )
    .unwrap();
    let t10 = ten
        .problem
        .models
        .properties(&c)
        .unwrap()
        .melting_temperature
        .0;
    let t316 = thick
        .problem
        .models
        .properties(&c)
        .unwrap()
        .melting_temperature
        .0;
    // Source: the VFT law solved for T (Fulcher 1925), at log10 η = 1 (10
    // Pa·s, the default, common practice) and log10(316.2) ≈ 2.5.
    assert!((t10 - vft_inverse_k(&ten.problem.models, &c, 1.0)).abs() < 1e-6);
    assert!((t316 - vft_inverse_k(&thick.problem.models, &c, 316.2f64.log10())).abs() < 1e-6);
    assert!(t316 < t10 - 100.0, "{t316} K vs {t10} K");

    // eval --against: the criterion in the header and beside each value.
    std::fs::write(
        d.join("mine.csv"),
        "name,SiO2,B2O3,Na2O,Al2O3\nboro,83.0,11.5,4.1,1.4\n",
    )
    .unwrap();
    let r = run_in(
        &d,
        &[
            "eval",
            "--compositions",
            "mine.csv",
            "--against",
            "thick.toml",
            "--out",
            "res.csv",
        ],
    );
    r.code(0)
        .stdout_has("melting temperature where the viscosity is 316 Pa·s");
    let res = frame(&d.join("res.csv"));
    assert_eq!(floats(&res, "melting_viscosity_pa_s")[0], 316.2);
    let want_c = t316 - 273.15;
    assert!(
        (floats(&res, "melting_temperature_c")[0] - want_c).abs() <= 0.05 + 1e-9,
        "{} vs {want_c}",
        floats(&res, "melting_temperature_c")[0]
    );

    // Out of range: the line of the key, and what is expected.
    for bad in [
        "melting_viscosity_pa_s = 0.0",
        "melting_viscosity_pa_s = 1e6",
    ] {
        let text = config(bad);
        std::fs::write(d.join("bad.toml"), &text).unwrap();
        let line = text.lines().position(|l| l == bad).unwrap() + 1;
        run_in(&d, &["check", "bad.toml"])
            .code(2)
            .stderr_has(&format!("bad.toml:{line}"))
            .stderr_has("melting_viscosity_pa_s must lie between 0.1 and 10000 Pa·s");
    }
}

/// A plain `eval` table in CSV: result columns rounded to meaningful digits
/// (Parquet keeps every digit), input columns as given; the warnings the
/// first two rows share written as codes, their legend stated once beside
/// the file and on stderr; the same file whatever the batch size.
#[test]
fn eval_table_csv_rounds_and_states_repeated_warnings_once() {
    let d = temp_dir("eval-csv-readable");
    let input = root().join("demo-datasets/candidates.csv");
    let input = input.to_str().unwrap();
    let r = run_in(
        &d,
        &["eval", "--compositions", input, "--out", "c.csv", "--quiet"],
    );
    r.code(0)
        .stderr_has("W1 (on 7 of 8 rows): model set 'demo-soda-lime' has invented coefficients")
        .stderr_has("c.warnings.txt");
    run_in(
        &d,
        &[
            "eval",
            "--compositions",
            input,
            "--out",
            "c.parquet",
            "--quiet",
        ],
    )
    .code(0);
    run_in(
        &d,
        &[
            "eval",
            "--compositions",
            input,
            "--out",
            "one.csv",
            "--batch-rows",
            "1",
            "--quiet",
        ],
    )
    .code(0);
    assert_eq!(
        std::fs::read(d.join("c.csv")).unwrap(),
        std::fs::read(d.join("one.csv")).unwrap(),
        "the CSV file depends on the batch size"
    );
    let csv = frame(&d.join("c.csv"));
    let full = frame(&d.join("c.parquet"));
    // Source: common practice for rounding: half a unit of the last digit
    // kept (0.1 K and °C, 4 significant figures for rates).
    let close = |c: &str, half: f64| {
        for (a, b) in floats(&csv, c).iter().zip(floats(&full, c)) {
            if b.is_nan() {
                assert!(a.is_nan(), "{c}");
                continue;
            }
            assert!((a - b).abs() <= half * (1.0 + 1e-9), "{c}: {a} vs {b}");
        }
    };
    close("liquidus_k", 0.05);
    close("melting_temperature_c", 0.05);
    for (a, b) in floats(&csv, "critical_rate_k_per_s")
        .iter()
        .zip(floats(&full, "critical_rate_k_per_s"))
    {
        if b.is_nan() {
            continue;
        }
        assert!((a - b).abs() <= 0.5e-3 * b.abs(), "{a} vs {b}");
        assert_eq!(format!("{a:.3e}").parse::<f64>().unwrap(), *a);
    }
    // The full digits are in Parquet (a rounding that did nothing would pass
    // the checks above).
    assert!(floats(&full, "liquidus_k")
        .iter()
        .any(|v| v.is_finite() && (v * 10.0 - (v * 10.0).round()).abs() > 1e-6));
    // Input columns as given.
    assert_eq!(floats(&csv, "SiO2"), floats(&full, "SiO2"));
    // The warnings: codes in CSV, the text in Parquet, the legend once.
    let coded = texts(&csv, "warnings");
    let whole = texts(&full, "warnings");
    let errors = texts(&full, "error");
    for i in 0..coded.len() {
        if !errors[i].is_empty() {
            continue;
        }
        assert!(coded[i].starts_with("W1; W2"), "{}", coded[i]);
        assert!(
            whole[i].starts_with("model set 'demo-soda-lime'"),
            "{}",
            whole[i]
        );
        // A warning tied to one row's numbers stays in full.
        for w in whole[i].split("; ").skip(2) {
            assert!(coded[i].contains(w), "{w} coded in {}", coded[i]);
        }
    }
    let legend = std::fs::read_to_string(d.join("c.warnings.txt")).unwrap();
    assert!(
        legend.contains(
            "W2 (on 7 of 8 rows): kinetic factor (Turnbull alpha) not calibrated against a measurement"
        ),
        "{legend}"
    );
    // Two codes (the Parquet run, after the CSV one, left the legend alone).
    assert_eq!(legend.lines().count(), 3, "{legend}");
}

/// `screen::SMALL` with a 50 K/s quench, a 400 °C liquidus margin, a cost
/// ceiling of 0.30 and a 2 mol% grid: snapping drops places of the
/// optimiser's shortlist (a snapped recipe leaves the ranges or lands on
/// another's), and the next-ranked candidates refill them.
fn coarse_grid() -> String {
    let t = crate::screen::SMALL
        .replace(
            "min_distance_mol_pct = 1.5\n",
            "min_distance_mol_pct = 1.5\nresolution_mol_pct = 2.0\nmin_amount_mol_pct = 0.2\n",
        )
        .replace("cooling_rate = 2.0", "cooling_rate = 50.0")
        .replace("liquidus_margin_c = 465.0", "liquidus_margin_c = 400.0")
        .replace("max_per_kg_glass = 0.24", "max_per_kg_glass = 0.30");
    assert!(t.contains("cooling_rate = 50.0") && t.contains("max_per_kg_glass = 0.30"));
    t
}

/// Places snapping drops are refilled from the next-ranked candidates,
/// snapped and checked the same way: the shortlist is full again, every
/// recipe is on the grid and meets every limit when evaluated again through
/// the public chain, and summary.txt says what was refilled.
#[test]
fn places_snapping_drops_are_refilled_from_the_next_candidates() {
    use quenchwise::assess::{evaluate_composition, Calibration};
    let d = temp_dir("snap-refill");
    std::fs::write(d.join("s.toml"), coarse_grid()).unwrap();
    run_in(&d, &["screen", "s.toml", "--out", "out", "--no-report"])
        .code(0)
        .stdout_has("refill:");
    let summary = std::fs::read_to_string(d.join("out/summary.txt")).unwrap();
    let dropped = summary.matches("\n  dropped: place").count();
    let refilled = summary.matches("\n  refilled from (").count();
    assert!(dropped >= 1 && refilled >= 1, "{summary}");
    let short = frame(&d.join("out/shortlist.parquet"));
    // Source: the config's own shortlist size.
    assert_eq!(short.height(), 4, "{summary}");
    assert!(
        summary.contains(&format!(
            "{} of 4 shortlisted recipes kept, {dropped} dropped",
            4 - refilled
        )),
        "{summary}"
    );
    assert!(
        summary.contains(&format!("refill: {refilled} of {dropped} place")),
        "{summary}"
    );
    assert!(summary.contains("the shortlist holds 4 of 4"), "{summary}");
    let plan = quenchwise::files::screen_config::load(&d.join("s.toml")).unwrap();
    let oxides = [
        ("SiO2", 66.0, 78.0),
        ("Na2O", 11.0, 17.0),
        ("CaO", 7.0, 13.0),
        ("Al2O3", 0.0, 3.0),
    ];
    let mut seen: Vec<String> = Vec::new();
    for i in 0..short.height() {
        let mut text = String::new();
        let mut sum = 0.0;
        for (o, lo, hi) in oxides {
            let v = floats(&short, &format!("{o}_mol_pct"))[i];
            // Source: the config's grid (2 mol%; SiO2 takes the rest of 100,
            // a whole number of steps too) and ranges.
            assert!((v / 2.0 - (v / 2.0).round()).abs() < 1e-9, "{o} = {v}");
            assert!(v >= lo - 1e-9 && v <= hi + 1e-9, "{o} = {v}");
            sum += v;
            text.push_str(&format!("{o}={v} "));
        }
        assert!((sum - 100.0).abs() < 1e-9, "{text}");
        assert!(!seen.contains(&text), "{text} twice");
        seen.push(text.clone());
        // The limits worked by hand from the config: R_c ≤ 50/10 K/s,
        // melting temperature ≤ 1480 − 20 °C, liquidus ≤ 1480 − 400 °C,
        // cost ≤ 0.30 per kg, Na2O + CaO ≤ 26 mol%.
        let c = Composition::parse(text.trim(), Basis::MolPercent, 1e-6).unwrap();
        let e = evaluate_composition(
            &plan.problem.models,
            &c,
            &plan.problem.kinetic_options,
            None,
            &Calibration::None,
        )
        .unwrap();
        assert!(e.critical_rate_k_per_s <= 5.0, "{text}");
        assert!(
            e.melting_temperature_k.unwrap() <= 1460.0 + 273.15,
            "{text}"
        );
        assert!(e.liquidus_k <= 1080.0 + 273.15, "{text}");
        let cost = plan.problem.cost.as_ref().unwrap();
        assert!(cost.model.cost_per_kg_glass(&c).unwrap() <= 0.30, "{text}");
        let na_ca = floats(&short, "Na2O_mol_pct")[i] + floats(&short, "CaO_mol_pct")[i];
        assert!(na_ca <= 26.0 + 1e-9, "{text}");
    }
}

/// `fit viscosity --viscosity-plots DIR`: one picture per glass of the
/// table, its fitted curve with the glass's own measured points drawn as
/// rings (one per row of the table), titled with the glass.
#[test]
fn a_viscosity_fit_draws_each_glass_with_its_measured_points() {
    let d = temp_dir("fit-viscosity-plots");
    let data = root().join("demo-datasets/fit-viscosity.csv");
    let text = std::fs::read_to_string(&data).unwrap();
    // Source: the table itself (its glass column and its rows).
    let mut glasses: Vec<(String, usize)> = Vec::new();
    for l in text.lines().skip(1).filter(|l| !l.trim().is_empty()) {
        let g = l.split(',').next().unwrap().to_string();
        match glasses.iter_mut().find(|(n, _)| *n == g) {
            Some((_, k)) => *k += 1,
            None => glasses.push((g, 1)),
        }
    }
    assert!(glasses.len() >= 2);
    run_in(
        &d,
        &[
            "fit",
            "viscosity",
            data.to_str().unwrap(),
            "--out",
            "v.toml",
            "--no-cv",
            "--viscosity-plots",
            "curves",
        ],
    )
    .code(0)
    .stderr_has(&format!("wrote {} viscosity plots", glasses.len()));
    for (g, rows) in &glasses {
        let svg = std::fs::read_to_string(d.join(format!("curves/{g}.svg")))
            .unwrap_or_else(|e| panic!("{g}: {e}"));
        crate::util::check_xml(&svg).unwrap();
        assert!(
            svg.contains(&format!("Viscosity of {g}: fitted VFT")),
            "{g}"
        );
        assert!(svg.contains("measured points of the fit"), "{g}");
        // The rings: one per measured row, plus the legend's own.
        let rings = svg
            .split("<circle")
            .skip(1)
            .filter(|c| {
                let tag = c.split('>').next().unwrap_or("");
                tag.to_ascii_uppercase().contains("#D68C1E") && tag.contains("fill=\"none\"")
            })
            .count();
        assert_eq!(rings, rows + 1, "{g}");
    }
    assert_eq!(
        std::fs::read_dir(d.join("curves")).unwrap().count(),
        glasses.len()
    );
}
