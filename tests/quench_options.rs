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

/// SMALL's crucible (2 K/s, deciding) beside a thick mould at 1 K/s
/// (invented rates), ranked by cost with the probability deciding: 40
/// draws, min_probability 0.5, the nuclei density drawn over six decades.
fn probability_two() -> String {
    let options = "[[equipment]]\nname = \"crucible in air\"\ncooling_rate = 2.0\nunit = \"K/s\"\nsafety_factor = 10.0\ndecides = true\n\n\
[[equipment]]\nname = \"thick mould\"\ncooling_rate = 1.0\nsafety_factor = 10.0\n";
    assert!(SMALL.contains(ONE));
    format!(
        "{}\n[objective]\nkind = \"cost\"\n\n[uncertainty]\ndraws = 40\nmin_probability = 0.5\n\n[kinetics]\nheterogeneous_nuclei_per_m3 = [1e6, 1e12]\n",
        SMALL.replace(ONE, options)
    )
}

#[test]
fn where_the_probability_decides_every_option_is_judged_by_its_probability() {
    let d = temp_dir("quench-probability");
    let rows = shortlist(&d, &probability_two(), "p");
    assert!(!rows.is_empty());
    let mut old_rule_would_refuse = 0;
    for r in &rows {
        let p = r["probability_glassy"].as_f64().unwrap();
        let rc = r["critical_rate_k_per_s"].as_f64().unwrap();
        // The deciding option admitted the recipe: glassy with it, by the
        // rule that decided (P ≥ min_probability), its probability the
        // recipe's own.
        assert_eq!(r["glassy_with_crucible_in_air"], Value::Bool(true), "{r}");
        assert_eq!(
            r["probability_glassy_with_crucible_in_air"].as_f64(),
            Some(p)
        );
        assert!(p >= 0.5);
        if rc > 0.2 {
            old_rule_would_refuse += 1;
        }
        // The other option: glassy exactly when its own P reaches 0.5.
        let pm = r["probability_glassy_with_thick_mould"].as_f64().unwrap();
        assert_eq!(r["glassy_with_thick_mould"], Value::Bool(pm >= 0.5), "{r}");
        // Source: P(R_c ≤ r) is a distribution function, non-decreasing in
        // r (standard probability): the slower mould never does better; and
        // P is a share of 40 draws (a multiple of 1/40).
        assert!(pm <= p, "{pm} {p}");
        assert!(((pm * 40.0) - (pm * 40.0).round()).abs() < 1e-9, "{pm}");
        // Source: the one-sided 95 % bound beside P: rule of three 1 − 3/N
        // at N of N (Hanley & Lippman-Hand 1983, JAMA 249, 1743), else the
        // lower end of Wilson's score interval (Wilson 1927, JASA 22, 209)
        // with z = 1.6449 (normal table), written out here.
        let (n, z) = (40.0f64, 1.644_853_626_951_472_2f64);
        let want = if p >= 1.0 {
            1.0 - 3.0 / n
        } else {
            (p + z * z / (2.0 * n) - z * (p * (1.0 - p) / n + z * z / (4.0 * n * n)).sqrt())
                / (1.0 + z * z / n)
        };
        let lower = r["probability_glassy_lower95"].as_f64().unwrap();
        assert!((lower - want).abs() < 1e-12, "{lower} {want}");
        // The margins stay log10(rate / R_c) (docs/science.md, "Limits").
        let m = r["margin_with_thick_mould_decades"].as_f64().unwrap();
        assert!((m - (1.0 / rc).log10()).abs() < 1e-9, "{m}");
    }
    // The case the safety-factor verdict got wrong: a shortlisted recipe
    // with R_c above 2 K/s / 10, which "R_c ≤ rate / safety factor" calls
    // not glassy with the quench that admitted it.
    assert!(old_rule_would_refuse > 0, "{rows:?}");
    // The CSV order: verdict, probability, margin per option.
    let csv = std::fs::read_to_string(d.join("p/shortlist.csv")).unwrap();
    let head: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
    let at = head.iter().position(|c| *c == "margin_decades").unwrap();
    assert_eq!(
        &head[at + 1..at + 4],
        [
            "glassy_with_crucible_in_air",
            "probability_glassy_with_crucible_in_air",
            "margin_with_crucible_in_air_decades",
        ]
    );
    // The summary says which rule the columns follow.
    let summary = std::fs::read_to_string(d.join("p/summary.txt")).unwrap();
    assert!(
        summary.contains("glassy_with_… = P(R_c ≤ that option's rate) ≥ min_probability 0.5"),
        "{summary}"
    );
    // The report and eval --against say the same of the first recipe.
    run_in(&d, &["report", "p"]).code(0);
    let html = std::fs::read_to_string(d.join("p/report.html")).unwrap();
    assert!(html.contains("crucible in air: glassy (P = "), "report");
    assert!(!html.contains("crucible in air: not glassy"), "report");
    // Beside each probability, its one-sided 95 % bound (from
    // probability_glassy_lower95, read back from the shortlist).
    assert!(html.contains(" at 95 %"), "report");
    let first = &rows[0];
    let ox = ["SiO2", "Na2O", "CaO", "Al2O3"];
    let cells: Vec<String> = ox
        .iter()
        .map(|o| first[format!("{o}_mol_pct")].as_f64().unwrap().to_string())
        .collect();
    std::fs::write(
        d.join("mine.csv"),
        format!("name,{}\nrank one,{}\n", ox.join(","), cells.join(",")),
    )
    .unwrap();
    run_in(
        &d,
        &[
            "eval",
            "--compositions",
            "mine.csv",
            "--against",
            "p.toml",
            "--out",
            "mine-checked.csv",
        ],
    )
    .code(0)
    .stdout_has("glassy with crucible in air (P = ");
    let csv = std::fs::read_to_string(d.join("mine-checked.csv")).unwrap();
    let mut lines = csv.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    let row: Vec<&str> = lines.next().unwrap().split(',').collect();
    let cell = |name: &str| row[head.iter().position(|c| *c == name).unwrap()];
    assert_eq!(cell("glassy_with_crucible_in_air"), "true");
    // The same draws: the mould's probability as in the shortlist (0.001).
    let pm: f64 = cell("probability_glassy_with_thick_mould").parse().unwrap();
    let want = first["probability_glassy_with_thick_mould"]
        .as_f64()
        .unwrap();
    assert!((pm - want).abs() < 6e-4, "{pm} {want}");
}
