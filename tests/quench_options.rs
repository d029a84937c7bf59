//! Several quench options in one screen config (`[[equipment]]` listed more
//! than once): the deciding one, a verdict column per option, the plots and
//! `eval --against`, and clear errors for names and rates.

use crate::screen::SMALL;
use crate::util::{run_in, temp_dir};
use serde_json::Value;

const ONE: &str = "[equipment]\ncooling_rate = 2.0\nunit = \"K/s\"\nsafety_factor = 10.0\n";

/// SMALL with a roller quench listed first and a crucible cooled in air
/// (SMALL's own 2 K/s, safety factor 10) second, marked as the one that decides.
/// The rates are invented; a roller quench gives ~1e3 K/s and a crucible in
/// air ~1 K/s (from memory).
const TWO: &str = "[[equipment]]\nname = \"roller quench\"\ncooling_rate = 1000.0\nsafety_factor = 10.0\n\n\
[[equipment]]\nname = \"crucible in air\"\ncooling_rate = 2.0\nunit = \"K/s\"\nsafety_factor = 10.0\ndecides = true\n";

fn with_two() -> String {
    assert!(SMALL.contains(ONE));
    SMALL.replace(ONE, TWO)
}

fn shortlist(dir: &std::path::Path, text: &str, out: &str) -> Vec<Value> {
    std::fs::write(dir.join(format!("{out}.toml")), text).unwrap();
    run_in(
        dir,
        &["screen", &format!("{out}.toml"), "--out", out, "--force"],
    )
    .code(0);
    let json = std::fs::read_to_string(dir.join(out).join("shortlist.json")).unwrap();
    serde_json::from_str::<Value>(&json)
        .unwrap()
        .as_array()
        .unwrap()
        .clone()
}

#[test]
fn the_deciding_option_ranks_and_every_option_gets_its_verdict() {
    let d = temp_dir("quench-options");
    let one = shortlist(&d, SMALL, "one");
    let two = shortlist(&d, &with_two(), "two");
    // The option marked decides = true is SMALL's own equipment, so the
    // screen finds the same recipes in the same order.
    assert_eq!(one.len(), two.len());
    for (a, b) in one.iter().zip(&two) {
        for ox in ["SiO2", "Na2O", "CaO", "Al2O3"] {
            let k = format!("{ox}_mol_pct");
            assert_eq!(a[&k], b[&k], "{k}");
        }
        // A single option adds no per-option column.
        assert!(a.get("glassy_with_crucible_in_air").is_none());
    }
    for r in &two {
        let rc = r["critical_rate_k_per_s"].as_f64().unwrap();
        let margin = r["margin_decades"].as_f64().unwrap();
        // Source: the margin in decades is log10(R_equipment / R_c) and a
        // quench makes a glass when R_c ≤ R / safety factor (docs/science.md,
        // "Limits" and "Objectives"; common practice for a critical cooling rate).
        let air = r["margin_with_crucible_in_air_decades"].as_f64().unwrap();
        assert!((air - (2.0 / rc).log10()).abs() < 1e-9, "{air}");
        assert!(
            (air - margin).abs() < 1e-9,
            "the deciding option's margin is margin_decades"
        );
        assert_eq!(r["glassy_with_crucible_in_air"], Value::Bool(rc <= 0.2));
        let roller = r["margin_with_roller_quench_decades"].as_f64().unwrap();
        assert!((roller - (1000.0 / rc).log10()).abs() < 1e-9, "{roller}");
        assert_eq!(r["glassy_with_roller_quench"], Value::Bool(rc <= 100.0));
    }
    // The CSV carries the same columns, right after margin_decades.
    let csv = std::fs::read_to_string(d.join("two/shortlist.csv")).unwrap();
    let head: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
    let at = head.iter().position(|c| *c == "margin_decades").unwrap();
    assert_eq!(
        &head[at + 1..at + 5],
        [
            "glassy_with_crucible_in_air",
            "margin_with_crucible_in_air_decades",
            "glassy_with_roller_quench",
            "margin_with_roller_quench_decades"
        ]
    );
    // The report draws one line per option on the TTT and fraction plots.
    run_in(&d, &["report", "two"]).code(0);
    let html = std::fs::read_to_string(d.join("two/report.html")).unwrap();
    for name in ["roller quench: 1000 K/s", "crucible in air: 2 K/s"] {
        assert!(html.matches(name).count() >= 2, "{name}");
    }
    assert!(html.contains("also reported"));
}

#[test]
fn without_decides_the_first_listed_option_decides() {
    let d = temp_dir("quench-first");
    let text = with_two().replace("decides = true\n", "");
    std::fs::write(d.join("s.toml"), &text).unwrap();
    // Source: README "Several quench options" (the first listed decides).
    run_in(&d, &["check", "s.toml"])
        .code(0)
        .stdout_has("roller quench");
    let plan = quenchwise::files::screen_config::load(&d.join("s.toml")).unwrap();
    assert_eq!(plan.problem.equipment.name, "roller quench");
    assert_eq!(plan.problem.more_equipment.len(), 1);
    assert_eq!(plan.problem.more_equipment[0].name, "crucible in air");
    assert!((plan.problem.allowed_rate().0 - 100.0).abs() < 1e-9);
}

#[test]
fn bad_quench_options_name_file_line_and_what_was_expected() {
    let d = temp_dir("quench-bad");
    let two = with_two();
    // (config, message, a piece of the line the message must point at)
    let cases = [
        (
            two.replace("\"crucible in air\"", "\"Roller Quench\""),
            "equipment name 'Roller Quench' is used twice (first on line",
            "name = \"Roller Quench\"",
        ),
        (
            two.replace("\"crucible in air\"", "\"roller-quench\""),
            "give the same column, glassy_with_roller_quench",
            "name = \"roller-quench\"",
        ),
        (
            two.replace("cooling_rate = 2.0", "cooling_rate = -5.0"),
            "[[equipment]] 'crucible in air': cooling_rate must be a positive number of K/s, got -5",
            "cooling_rate = -5.0",
        ),
        (
            two.replace("cooling_rate = 1000.0", "cooling_rate = 1e12"),
            "[[equipment]] 'roller quench': cooling_rate 1000000000000 K/s is above 1e9 K/s",
            "cooling_rate = 1e12",
        ),
        (
            two.replace("safety_factor = 10.0\n\n", "safety_factor = 10.0\ndecides = true\n\n"),
            "decides = true is given twice",
            "decides = true",
        ),
        (
            two.replace("name = \"crucible in air\"\n", ""),
            "with more than one [[equipment]], each needs a name",
            "cooling_rate = 2.0",
        ),
    ];
    for (text, want, at) in cases {
        std::fs::write(d.join("s.toml"), &text).unwrap();
        // The last line holding `at` (for "decides = true" the second one).
        let line = text
            .lines()
            .enumerate()
            .filter(|(_, l)| l.contains(at))
            .last()
            .unwrap()
            .0
            + 1;
        run_in(&d, &["check", "s.toml"])
            .code(2)
            .stderr_has(want)
            .stderr_has(&format!("s.toml:{line}: "));
    }
    // An empty list of quench options.
    let text = format!("equipment = []\n{}", SMALL.replace(ONE, ""));
    std::fs::write(d.join("s.toml"), &text).unwrap();
    run_in(&d, &["check", "s.toml"])
        .code(2)
        .stderr_has("equipment = [] lists no quench");
}

#[test]
fn eval_against_reports_every_quench_option() {
    let d = temp_dir("quench-against");
    std::fs::write(d.join("s.toml"), with_two()).unwrap();
    std::fs::write(
        d.join("mine.csv"),
        "name,SiO2,Na2O,CaO,Al2O3\nplate glass,72,14,12,2\n",
    )
    .unwrap();
    let r = run_in(
        &d,
        &[
            "eval",
            "--compositions",
            "mine.csv",
            "--against",
            "s.toml",
            "--out",
            "mine-checked.csv",
        ],
    );
    r.code(0)
        .stdout_has("with roller quench (")
        .stdout_has("with crucible in air (");
    let csv = std::fs::read_to_string(d.join("mine-checked.csv")).unwrap();
    let mut lines = csv.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    let row: Vec<&str> = lines.next().unwrap().split(',').collect();
    let cell = |name: &str| row[head.iter().position(|c| *c == name).unwrap()];
    let rc: f64 = cell("critical_rate_k_per_s").parse().unwrap();
    // Source: R_c ≤ R / safety factor (common practice), the margin
    // log10(R / R_c) in decades.
    assert_eq!(cell("glassy_with_roller_quench"), (rc <= 100.0).to_string());
    assert_eq!(cell("glassy_with_crucible_in_air"), (rc <= 0.2).to_string());
    let m: f64 = cell("margin_with_roller_quench_decades").parse().unwrap();
    // The CSV rounds decades to 0.001 and rates to 4 significant figures
    // (half a last digit each: 5e-4 decades plus 2.2e-4 from R_c).
    assert!((m - (1000.0 / rc).log10()).abs() < 8e-4, "{m} {rc}");
}
