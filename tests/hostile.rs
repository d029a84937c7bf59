//! Issue 14, deliverable 2: the corpus of the nastiest inputs found so far
//! (tests/fixtures/hostile/, see its README) run through the command a user
//! would use on each. Every file must end in a clean refusal naming the file,
//! or in outputs that hold only finite numbers: no panic, no inf, no NaN, no
//! null, and no empty cell where a number is promised.

use crate::util::{root, run_in, temp_dir, Run};
use std::path::{Path, PathBuf};

const GLASS: &str = "SiO2=72 Na2O=14 CaO=10 Al2O3=4";

fn corpus() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(root().join("tests/fixtures/hostile"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.file_name().unwrap() != "README.md")
        .collect();
    files.sort();
    files
}

/// Text a user reads or a program parses: no token of a non-number, except
/// on a line that reports a row's error (it may say what came out as inf).
fn assert_finite_text(what: &str, text: &str) {
    let values = text
        .lines()
        .filter(|l| !l.contains("error: "))
        .collect::<Vec<_>>()
        .join("\n");
    for word in values.split(|c: char| !(c.is_alphanumeric() || c == '_')) {
        let w = word.to_ascii_lowercase();
        assert!(
            !matches!(w.as_str(), "inf" | "infinity" | "nan" | "null" | "never"),
            "{what} holds {word:?}:\n{text}"
        );
    }
}

/// A run ended as a refusal (naming the file) or finished; never a panic.
fn assert_clean(r: &Run, file: &Path) {
    assert!(
        !r.stderr.contains("panicked") && !r.stderr.contains("RUST_BACKTRACE"),
        "{}: {}",
        file.display(),
        r.stderr
    );
    assert!(
        [0, 1, 2].contains(&r.code),
        "{}: exit {}\n{}",
        file.display(),
        r.code,
        r.stderr
    );
    if r.code != 0 {
        let name = file.file_name().unwrap().to_str().unwrap();
        assert!(
            r.stderr.contains(name),
            "{name}: the refusal does not name the file:\n{}",
            r.stderr
        );
    } else {
        assert_finite_text(&format!("stdout for {}", file.display()), &r.stdout);
    }
}

/// A results table written by `eval --out`: every row whose `error` is empty
/// holds a finite number in every numeric column, except a per-phase
/// critical rate of a phase whose liquidus lies at or below T_g (it cannot
/// crystallise from that melt: the cell is empty by design).
fn assert_results_table(path: &Path) {
    let text = std::fs::read_to_string(path).unwrap();
    let (df, _) = quenchwise::files::table::read_csv_text(&text, "out").unwrap();
    // Text columns other than the error (which may say what came out as
    // inf) and the warnings hold no non-number either.
    for col in df.columns() {
        if let (Ok(values), false) = (
            col.str(),
            ["error", "warnings"].contains(&col.name().as_str()),
        ) {
            for v in values.iter().flatten() {
                assert_finite_text(&format!("{} column {}", path.display(), col.name()), v);
            }
        }
    }
    let error = df.column("error").unwrap().str().unwrap().clone();
    // A column no row fills (every row failed) reads back as text.
    let tg = df
        .column("glass_transition_k")
        .ok()
        .and_then(|c| c.f64().ok().cloned());
    for col in df.columns() {
        let name = col.name().to_string();
        let Ok(values) = col.f64() else { continue };
        for (i, v) in values.iter().enumerate() {
            if error.get(i).is_some_and(|e| !e.is_empty()) {
                continue;
            }
            match v {
                Some(v) => assert!(v.is_finite(), "{name} row {i}: {v}"),
                None => {
                    let phase = name
                        .strip_prefix("critical_rate_")
                        .and_then(|s| s.strip_suffix("_k_per_s"));
                    let liquidus = phase.and_then(|p| {
                        df.column(&format!("liquidus_{p}_k"))
                            .ok()
                            .and_then(|c| c.f64().ok().and_then(|c| c.get(i)))
                    });
                    let below_tg = match (liquidus, tg.as_ref().and_then(|t| t.get(i))) {
                        (Some(l), Some(t)) => l <= t,
                        _ => false,
                    };
                    assert!(
                        below_tg,
                        "{}: column {name} is empty in row {i}, which has no error",
                        path.display()
                    );
                }
            }
        }
    }
}

#[test]
fn every_file_of_the_hostile_corpus_is_refused_cleanly_or_gives_finite_outputs() {
    let files = corpus();
    assert!(files.len() >= 40, "the corpus lost files: {}", files.len());
    let mut finished = 0;
    for f in &files {
        let d = temp_dir(&format!(
            "hostile-{}",
            f.file_stem().unwrap().to_string_lossy()
        ));
        let path = f.to_str().unwrap();
        let name = f.file_name().unwrap().to_str().unwrap();
        let runs: Vec<Vec<&str>> = match name.split('-').next().unwrap() {
            "card" => vec![vec![
                "eval", "--melt", path, "--json", "--ttt", "ttt.csv", "--plot", "p.svg",
            ]],
            "compositions" => vec![vec!["eval", "--compositions", path, "--out", "o.csv"]],
            "melts" => vec![vec!["eval", "--melt-cards", path, "--out", "o.csv"]],
            "models" => vec![
                vec!["models", "--models", path],
                vec!["eval", "--mol", GLASS, "--models", path, "--json"],
            ],
            "screen" => vec![vec!["check", path]],
            "shelf" => vec![vec![
                "batch",
                "--mol",
                "SiO2=75 Na2O=15 CaO=10",
                "--raw-materials",
                path,
            ]],
            other => panic!("{name}: no command for files named {other}-*"),
        };
        for args in runs {
            let r = run_in(&d, &args);
            assert_clean(&r, f);
            if r.code == 0 {
                finished += 1;
                if args.contains(&"--json") {
                    let _: serde_json::Value = r.json();
                }
            }
        }
        for written in ["ttt.csv", "p.svg"] {
            let p = d.join(written);
            if p.exists() {
                let text = std::fs::read_to_string(&p).unwrap();
                assert_finite_text(&p.display().to_string(), &text);
                assert!(!text.contains(",,"), "{}: an empty number", p.display());
            }
        }
        if d.join("o.csv").exists() {
            assert_results_table(&d.join("o.csv"));
        }
    }
    // Some of the corpus is accepted (with warnings): those outputs were checked.
    assert!(finished >= 5, "only {finished} runs finished");
}
