//! The main job as a user runs it: the README's demo screen, every objective,
//! property bounds, extrapolation, rates in K/min, the report of a finished
//! run, tables in parallel, and the batch for a glass given in mol%.

use crate::util::{rel, root, run_in, temp_dir};
use std::path::Path;

/// A small screen (every limit binds somewhere; see tests/screen.rs).
const SMALL: &str = r#"
[search]
seed = 7
first_pass_points = 256
chunk_size = 64
refine_from = 2
refine_iterations = 30

[oxides]
SiO2 = [66.0, 78.0]
Na2O = [11.0, 17.0]
CaO = [7.0, 13.0]
Al2O3 = [0.0, 3.0]

[equipment]
cooling_rate = 2.0
unit = "K/s"
safety_factor = 10.0

[furnace]
max_temperature_c = 1480.0
liquidus_margin_c = 465.0

[cost]
max_per_kg_glass = 0.30

[shortlist]
size = 4
min_distance_mol_pct = 1.0
"#;

fn screen(dir: &Path, name: &str, text: &str) -> Vec<serde_json::Value> {
    let cfg = dir.join(format!("{name}.toml"));
    std::fs::write(&cfg, text).unwrap();
    run_in(
        dir,
        &[
            "screen",
            cfg.to_str().unwrap(),
            "--out",
            name,
            "--no-report",
        ],
    )
    .code(0);
    serde_json::from_str(&std::fs::read_to_string(dir.join(name).join("shortlist.json")).unwrap())
        .unwrap()
}

fn col(rows: &[serde_json::Value], key: &str) -> Vec<f64> {
    rows.iter().map(|r| r[key].as_f64().unwrap()).collect()
}

fn non_decreasing(v: &[f64]) -> bool {
    v.windows(2).all(|w| w[0] <= w[1])
}

#[test]
fn the_readme_demo_screen_runs_and_ranks_by_cost() {
    // The README's main-job command, as a user types it (the config by its path).
    let d = temp_dir("readme-demo");
    let cfg = root().join("configs/demo-screen.toml");
    let r = run_in(
        &d,
        &[
            "screen",
            cfg.to_str().unwrap(),
            "--out",
            "demo-screen-results",
        ],
    );
    // The demo snaps its 8 recipes to a 0.5 mol% grid and keeps those that
    // still pass: the summary says how many.
    r.code(0)
        .stdout_has("of 8 shortlisted recipes kept")
        .stdout_has(
            "nucleation: in the volume (homogeneous) + 1.00e9 pre-existing nuclei/m³ of each phase",
        )
        .stdout_has("report:");
    let kept: usize = r
        .stdout
        .split("replaces each one: ")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|n| n.parse().ok())
        .expect("a count of the recipes snapping kept");
    assert!(kept >= 1, "{}", r.stdout);
    // Places snapping dropped are refilled from the next-ranked candidates.
    let kept = kept + r.stdout.matches("\n  refilled from (").count();
    // The demo asks for 8 and thousands of recipes are feasible, so the
    // refills fill every place (source: the config's own size = 8).
    assert_eq!(kept, 8, "{}", r.stdout);
    let out = d.join("demo-screen-results");
    for f in [
        "shortlist.csv",
        "report.html",
        &format!("batch-sheets/rank-{kept:02}.txt"),
        "summary.txt",
    ] {
        assert!(out.join(f).exists(), "missing {f}");
    }
    assert!(!out
        .join(format!("batch-sheets/rank-{:02}.txt", kept + 1))
        .exists());
    let rows: Vec<serde_json::Value> =
        serde_json::from_str(&std::fs::read_to_string(out.join("shortlist.json")).unwrap())
            .unwrap();
    assert_eq!(rows.len(), kept);
    let cost = col(&rows, "cost_per_kg");
    assert!(non_decreasing(&cost), "{cost:?}");
    assert!(cost.iter().all(|c| *c <= 0.40), "{cost:?}");
    assert!(col(&rows, "critical_rate_k_per_s")
        .iter()
        .all(|r| *r <= 2.0));
}

#[test]
fn every_objective_ranks_by_what_it_says() {
    let d = temp_dir("objectives");
    let melting = screen(
        &d,
        "melting",
        &format!("{SMALL}\n[objective]\nkind = \"melting_temperature\"\n"),
    );
    assert!(non_decreasing(&col(&melting, "melting_temperature_k")));
    let cost = screen(
        &d,
        "cost",
        &format!("{SMALL}\n[objective]\nkind = \"cost\"\n"),
    );
    assert!(non_decreasing(&col(&cost, "cost_per_kg")));
    // The blend as documented (docs/science.md, "The screen"): −w_m · min(margin,
    // cap) + w_c · cost + w_T · T(10 Pa·s)/100 K, recipes the model cannot vouch
    // for moved past every other by (cap + 1) decades of margin.
    let blend = screen(
        &d,
        "blend",
        &format!(
            "{SMALL}\n[objective]\nkind = \"blend\"\n[objective.weights]\nmargin = 1.0\ncost = 2.0\nmelting_temperature = 0.5\n"
        ),
    );
    let value: Vec<f64> = blend
        .iter()
        .map(|r| {
            let m = r["margin_decades"].as_f64().unwrap().min(3.0);
            let unvouched = if r["vouched"].as_bool().unwrap() {
                0.0
            } else {
                4.0
            };
            -(m - unvouched)
                + 2.0 * r["cost_per_kg"].as_f64().unwrap()
                + 0.5 * r["melting_temperature_k"].as_f64().unwrap() / 100.0
        })
        .collect();
    assert!(non_decreasing(&value), "{value:?}");
}

#[test]
fn property_bounds_and_extrapolation_limit_the_shortlist() {
    let d = temp_dir("bounds");
    // Unbounded, the small screen shortlists a glass with T_g below 530 °C; with
    // T_g held to 530..545 °C every shortlisted glass lies inside and the limit
    // shows in limits.csv.
    let free = screen(&d, "free", SMALL);
    assert!(col(&free, "glass_transition_k")
        .iter()
        .any(|t| *t < 530.0 + 273.15));
    let rows = screen(
        &d,
        "tg",
        &format!("{SMALL}\n[properties]\nglass_transition_c = [530.0, 545.0]\n"),
    );
    assert!(!rows.is_empty());
    for tg in col(&rows, "glass_transition_k") {
        assert!((530.0 + 273.15..=545.0 + 273.15).contains(&tg), "{tg}");
    }
    let limits = std::fs::read_to_string(d.join("tg/limits.csv")).unwrap();
    assert!(
        limits.contains("glass transition outside range"),
        "{limits}"
    );
    // Without allow_extrapolation nothing shortlisted is extrapolated; with it,
    // the model-domain limit rejects nothing.
    for r in &free {
        assert!(!r["warnings"]
            .as_str()
            .unwrap()
            .contains("outside model validity"));
    }
    let loose = SMALL.replace(
        "refine_iterations = 30",
        "refine_iterations = 30\nallow_extrapolation = true",
    );
    screen(&d, "loose", &loose);
    let limits = std::fs::read_to_string(d.join("loose/limits.csv")).unwrap();
    assert!(!limits.contains("model validity domain"), "{limits}");
}

#[test]
fn a_rate_in_k_per_min_is_the_same_limit() {
    // 120 K/min = 2 K/s (K/min = 60 × K/s, exact): R_c ≤ 2/10 K/s either way.
    let d = temp_dir("kmin");
    let text = SMALL.replace(
        "cooling_rate = 2.0\nunit = \"K/s\"",
        "cooling_rate = 120.0\nunit = \"K/min\"",
    );
    std::fs::write(d.join("kmin.toml"), text).unwrap();
    run_in(&d, &["check", "kmin.toml"])
        .code(0)
        .stdout_has("R_c must be ≤ 0.2000 K/s");
}

#[test]
fn report_of_a_finished_run() {
    let d = temp_dir("report-dir");
    screen(&d, "run", SMALL);
    assert!(!d.join("run/report.html").exists());
    run_in(&d, &["report", "run"])
        .code(0)
        .stdout_has("wrote run/report.html");
    let html = std::fs::read_to_string(d.join("run/report.html")).unwrap();
    assert!(html.contains("<h2>Shortlist</h2>") && html.contains("TTT diagram, rank 1"));
    // A folder from a build that wrote the table as one candidates.parquet
    // (before 2026-12-03) reports the same.
    let run = d.join("run");
    std::fs::rename(
        run.join("candidates/part-000000.parquet"),
        run.join("candidates.parquet"),
    )
    .unwrap();
    std::fs::remove_dir(run.join("candidates")).unwrap();
    std::fs::remove_file(run.join("report.html")).unwrap();
    run_in(&d, &["report", "run"]).code(0);
    assert_eq!(
        std::fs::read_to_string(run.join("report.html")).unwrap(),
        html
    );
    // Neither layout: the error names the folder and what is missing.
    std::fs::remove_file(run.join("candidates.parquet")).unwrap();
    run_in(&d, &["report", "run"])
        .code(2)
        .stderr_has("holds no candidates table");
}

#[test]
fn tables_keep_their_order_and_agree_with_single_evaluations_at_any_thread_count() {
    let d = temp_dir("tables-parallel");
    let cands = root().join("demo-datasets/candidates.csv");
    for t in ["1", "2"] {
        run_in(
            &d,
            &[
                "eval",
                "--compositions",
                cands.to_str().unwrap(),
                "--out",
                &format!("out{t}.csv"),
                "--threads",
                t,
            ],
        )
        .code(0);
    }
    let one = std::fs::read_to_string(d.join("out1.csv")).unwrap();
    let two = std::fs::read_to_string(d.join("out2.csv")).unwrap();
    assert_eq!(one, two);
    // Row order is input order, and each row equals its own single evaluation.
    let input = std::fs::read_to_string(&cands).unwrap();
    let header: Vec<&str> = input.lines().next().unwrap().split(',').collect();
    let out_header: Vec<&str> = one.lines().next().unwrap().split(',').collect();
    let rc_col = out_header
        .iter()
        .position(|c| *c == "critical_rate_k_per_s")
        .unwrap();
    for (line_in, line_out) in input.lines().skip(1).zip(one.lines().skip(1)) {
        let cells: Vec<&str> = line_in.split(',').collect();
        assert!(line_out.starts_with(cells[0]), "{line_out}");
        let out_cells: Vec<&str> = line_out.split(',').collect();
        let Ok(rc) = out_cells[rc_col].parse::<f64>() else {
            continue; // the row that fails, on purpose
        };
        let mol: Vec<String> = header
            .iter()
            .zip(&cells)
            .skip(1)
            .map(|(o, v)| format!("{o}={v}"))
            .collect();
        let j = run_in(&d, &["eval", "--mol", &mol.join(" "), "--json"])
            .code(0)
            .json();
        // The CSV file shows 4 significant figures of a rate.
        let full = j["critical_rate_k_per_s"].as_f64().unwrap();
        assert_eq!(
            format!("{full:.3e}").parse::<f64>().unwrap(),
            rc,
            "{line_in}"
        );
    }
}

#[test]
fn a_batch_for_a_glass_in_mol_pct_delivers_its_wt_pct() {
    // Source: mol% → wt% with the IUPAC 2021 molar masses, computed
    // independently in tests/reference/batch_highs.py (2026-12-02): 72 SiO2 /
    // 14 Na2O / 10 CaO / 4 Al2O3 mol% is 70.200833 / 14.080806 / 9.100032 /
    // 6.618328 wt%.
    let d = temp_dir("batch-mol");
    let j = run_in(
        &d,
        &["batch", "--mol", "SiO2=72 Na2O=14 CaO=10 Al2O3=4", "--json"],
    )
    .code(0)
    .json();
    let want = [
        ("SiO2", 70.200833),
        ("Na2O", 14.080806),
        ("CaO", 9.100032),
        ("Al2O3", 6.618328),
    ];
    for pair in j["delivered_wt_pct"].as_array().unwrap() {
        let (name, got) = (pair[0].as_str().unwrap(), pair[1].as_f64().unwrap());
        let w = want.iter().find(|w| w.0 == name).unwrap().1;
        assert!(
            (got - w).abs() < crate::tolerances::LP_DELIVERED_WT_PCT_TOL,
            "{name}: {got} vs {w}"
        );
    }
    assert!(rel(j["glass_kg"].as_f64().unwrap(), 1.0) < 1e-15);
}

/// The demo screen asked for the largest margin returns only recipes whose
/// numbers the model can vouch for: a nose within a day, a glassy slab of at
/// most 100 mm, R_c of at least 1e-3 K/s (docs/science.md, "What the model can
/// vouch for"; the bounds are common practice for lab melts, not measured
/// limits).
#[test]
fn the_demo_margin_screen_shortlists_only_vouched_recipes() {
    let d = temp_dir("demo-margin");
    let demo = std::fs::read_to_string(root().join("configs/demo-screen.toml")).unwrap();
    let text = demo.replace("kind = \"cost\"", "kind = \"margin\"");
    assert_ne!(text, demo, "the demo config changed shape");
    let rows = screen(&d, "margin", &text);
    assert!(!rows.is_empty());
    for r in &rows {
        assert_eq!(r["vouched"], true, "{r}");
        // Not the 1e-9 K/s, years-long noses of a margin screen that counts
        // one phase and homogeneous nucleation only.
        assert!(r["critical_rate_k_per_s"].as_f64().unwrap() >= 1e-3, "{r}");
    }
}
