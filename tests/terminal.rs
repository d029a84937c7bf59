//! What the terminal shows around the answers: the safety caution once per
//! run (and not with --quiet), and help text that states each default once.

use crate::screen::SMALL;
use crate::util::{root, run_in, temp_dir};

const GLASS: &str = "SiO2=72 Na2O=14 CaO=10 Al2O3=4";

#[test]
fn the_safety_caution_is_printed_once_per_run_and_quiet_removes_it() {
    // Source: common practice for command-line tools (a notice once per run
    // on stderr; --quiet silences notices, stdout stays the answer).
    let d = temp_dir("caution-once");
    let r = run_in(&d, &["eval", "--mol", GLASS]);
    r.code(0);
    assert_eq!(r.stderr.matches("caution:").count(), 1, "{}", r.stderr);
    assert!(!r.stdout.contains("caution:"), "{}", r.stdout);
    let q = run_in(&d, &["eval", "--mol", GLASS, "--quiet"]);
    q.code(0);
    assert!(!q.stderr.contains("caution:"), "{}", q.stderr);
    assert_eq!(q.stdout, r.stdout, "--quiet changes only stderr");
    // A table of several glasses: still once.
    let table = root().join("demo-datasets/melt-cards.csv");
    let t = run_in(
        &d,
        &[
            "eval",
            "--melt-cards",
            table.to_str().unwrap(),
            "--out",
            "cards.csv",
        ],
    );
    t.code(0);
    assert_eq!(t.stderr.matches("caution:").count(), 1, "{}", t.stderr);
    // A batch for several recipes: once (the sheet's own handling notes stay).
    std::fs::write(
        d.join("mine.csv"),
        "name,SiO2,Na2O,CaO,Al2O3\na,72,14,10,4\nb,70,15,11,4\n",
    )
    .unwrap();
    let b = run_in(&d, &["batch", "--compositions", "mine.csv"]);
    b.code(0);
    assert_eq!(b.stderr.matches("caution:").count(), 1, "{}", b.stderr);
    // A screen: the summary on stdout leaves it to stderr; summary.txt keeps it.
    std::fs::write(d.join("s.toml"), SMALL).unwrap();
    let s = run_in(&d, &["screen", "s.toml", "--out", "res", "--force"]);
    s.code(0);
    assert!(!s.stdout.contains("caution:"), "{}", s.stdout);
    assert_eq!(s.stderr.matches("caution:").count(), 1, "{}", s.stderr);
    let summary = std::fs::read_to_string(d.join("res/summary.txt")).unwrap();
    assert!(summary.contains("caution:"));
    // Commands that lead to no melt print none.
    let m = run_in(&d, &["models"]);
    m.code(0);
    assert!(!m.stderr.contains("caution:"), "{}", m.stderr);
}

#[test]
fn every_help_states_each_default_once() {
    // Source: common practice (one default per option in --help).
    let d = temp_dir("help-defaults");
    let commands: [&[&str]; 12] = [
        &[],
        &["eval"],
        &["screen"],
        &["merge"],
        &["check"],
        &["report"],
        &["batch"],
        &["models"],
        &["fit"],
        &["fit", "viscosity"],
        &["fit", "liquidus"],
        &["fit", "kinetics"],
    ];
    for c in commands {
        let mut args: Vec<&str> = c.to_vec();
        args.push("--help");
        let r = run_in(&d, &args);
        r.code(0);
        // Options start with "  -" or "      --"; each block up to the next.
        let mut block = String::new();
        let check = |b: &str| {
            assert!(
                b.matches("[default:").count() <= 1,
                "{c:?}: two defaults in\n{b}"
            );
        };
        for line in r.stdout.lines() {
            let t = line.trim_start();
            if t.starts_with('-') && line.starts_with("  ") {
                check(&block);
                block.clear();
            }
            block.push_str(line);
            block.push('\n');
        }
        check(&block);
    }
}

/// A reader that stops early (`quenchwise check c.toml | head -1`) is not
/// an error of quenchwise: it must not panic (exit 101) on the closed pipe.
/// Source: common practice of Unix command-line tools.
#[test]
fn a_closed_pipe_is_not_a_panic() {
    let bin = env!("CARGO_BIN_EXE_quenchwise");
    let cfg = crate::util::root().join("configs/demo-screen.toml");
    for _ in 0..5 {
        // `true` exits without reading, so the pipe is usually closed by the
        // time quenchwise writes.
        let status = std::process::Command::new("bash")
            .arg("-c")
            .arg(format!(
                "set -o pipefail; '{bin}' check '{}' 2>&1 | true",
                cfg.display()
            ))
            .status()
            .unwrap();
        assert_ne!(
            status.code(),
            Some(101),
            "quenchwise panicked on a closed pipe"
        );
    }
}
