//! Fault injection on the real program: a screen killed with SIGKILL during
//! the first pass, during refinement and while writing its outputs, resumed
//! each time, ends with the files an uninterrupted run writes, byte for byte;
//! a second run on a folder in use is refused and the first is unharmed.

use crate::screen::SMALL;
use crate::util::{run_in, temp_dir};
use std::os::unix::process::ExitStatusExt;
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

/// 79 chunks of 256 candidates and three seeds refined one at a time: long
/// enough to be hit in every stage, short enough for CI.
fn long_config(dir: &Path) -> String {
    let text = SMALL
        .replace("first_pass_points = 512", "first_pass_points = 20000")
        .replace("chunk_size = 64", "chunk_size = 256");
    std::fs::write(dir.join("long.toml"), text).unwrap();
    "long.toml".into()
}

fn start(dir: &Path, extra: &[&str]) -> Child {
    Command::new(env!("CARGO_BIN_EXE_quenchwise"))
        .args(["screen", "long.toml", "--out", "out", "--threads", "1"])
        .args(extra)
        .current_dir(dir)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap()
}

/// Wait for `file` to appear (polling every 2 ms), then SIGKILL the child.
/// Returns whether the kill landed (the child had not finished already).
fn kill_when(child: &mut Child, file: &Path) -> bool {
    let t = Instant::now();
    while !file.exists() {
        if let Some(status) = child.try_wait().unwrap() {
            panic!(
                "the run ended ({status}) before {} appeared",
                file.display()
            );
        }
        assert!(
            t.elapsed() < Duration::from_secs(300),
            "{} never appeared",
            file.display()
        );
        std::thread::sleep(Duration::from_millis(2));
    }
    child.kill().unwrap();
    let status = child.wait().unwrap();
    status.signal() == Some(9)
}

fn same_files(a: &Path, b: &Path) {
    for f in [
        "shortlist.csv",
        "shortlist.json",
        "shortlist.parquet",
        "candidates/part-000000.parquet",
        "limits.csv",
        "summary.txt",
        "provenance.json",
        "config-as-run.toml",
        "report.html",
        "batch-sheets/rank-01.txt",
        "batch-sheets/rank-04.csv",
    ] {
        let x = std::fs::read(a.join(f)).unwrap_or_else(|e| panic!("{}: {e}", a.join(f).display()));
        let y = std::fs::read(b.join(f)).unwrap_or_else(|e| panic!("{}: {e}", b.join(f).display()));
        assert!(x == y, "{f} differs after the kills");
    }
}

#[test]
fn killed_in_every_stage_and_resumed_equals_uninterrupted() {
    let d = temp_dir("sigkill");
    let cfg = long_config(&d);
    run_in(&d, &["screen", &cfg, "--out", "whole", "--threads", "1"]).code(0);
    let out = d.join("out");
    let points = [
        out.join(".work/chunk-000003.parquet"), // the first pass
        out.join(".work/refine-000.json"),      // refinement (seed 1 of 3 kept)
        out.join("shortlist.csv"),              // outputs (sheets and report to come)
    ];
    let mut landed = Vec::new();
    let mut child = start(&d, &[]);
    for p in &points {
        landed.push(kill_when(&mut child, p));
        child = start(&d, &["--resume"]);
    }
    let status = child.wait().unwrap();
    assert!(status.success(), "the last resume failed: {status}");
    // The first two points cannot be missed; the last one can only if the
    // outputs after shortlist.csv took less than the polling interval.
    eprintln!("kills landed: {landed:?}");
    assert!(landed[0] && landed[1], "{landed:?}");
    same_files(&d.join("whole"), &out);
}

#[test]
fn a_second_run_on_a_folder_in_use_is_refused_and_the_first_unharmed() {
    let d = temp_dir("concurrent");
    let cfg = long_config(&d);
    let mut first = start(&d, &[]);
    let chunk = d.join("out/.work/chunk-000001.parquet");
    let t = Instant::now();
    while !chunk.exists() {
        assert!(
            t.elapsed() < Duration::from_secs(300),
            "no checkpoint appeared"
        );
        std::thread::sleep(Duration::from_millis(5));
    }
    for extra in [&["--force"][..], &["--resume"][..], &[][..]] {
        let mut args = vec!["screen", cfg.as_str(), "--out", "out"];
        args.extend_from_slice(extra);
        let r = run_in(&d, &args);
        r.code(2);
        // Until the first run ends, the folder is refused as in use (a plain
        // start is refused as "not empty" before the lock is even tried).
        if !extra.is_empty() {
            r.stderr_has("is in use by another quenchwise process");
        }
    }
    let status = first.wait().unwrap();
    assert!(status.success(), "the first run was harmed: {status}");
    run_in(&d, &["screen", &cfg, "--out", "whole", "--threads", "1"]).code(0);
    same_files(&d.join("whole"), &d.join("out"));
}
