//! The output folder as an unlucky user meets it: `--force` never removes what
//! quenchwise did not write, one process per folder, `--resume` checks what
//! the run means, damaged checkpoints are computed again, a stop is honoured
//! at every safe point and a kill at any moment loses nothing; a screen split
//! into shards merges into the unsplit result.

use crate::screen::SMALL;
use crate::util::{root, run_in, temp_dir};
use quenchwise::files::results::{candidate_files, read_candidates};
use quenchwise::files::run_folder::{
    merge, run, run_observed, CandidateLayout, Opening, Outcome, RunFolder, ScreenOptions, Shard,
    MANIFEST,
};
use quenchwise::files::screen_config::{self as config, RunPlan};
use quenchwise::screen::{ScreenObserver, Stage};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

fn plan_in(dir: &Path, text: &str) -> RunPlan {
    let p = dir.join("screen.toml");
    std::fs::write(&p, text).unwrap();
    config::load(&p).unwrap()
}

/// Every output file of a run folder (not the lock, the list of files or the
/// checkpoints), by path relative to it.
fn outputs(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    fn walk(base: &Path, dir: &Path, out: &mut BTreeMap<String, Vec<u8>>) {
        for e in std::fs::read_dir(dir).unwrap().flatten() {
            let p = e.path();
            let rel = p.strip_prefix(base).unwrap().to_string_lossy().to_string();
            if rel.starts_with(".work") || rel.starts_with(".quenchwise") {
                continue;
            }
            if p.is_dir() {
                walk(base, &p, out);
            } else {
                out.insert(rel, std::fs::read(&p).unwrap());
            }
        }
    }
    let mut out = BTreeMap::new();
    walk(dir, dir, &mut out);
    out
}

fn assert_same_outputs(a: &Path, b: &Path) {
    let (x, y) = (outputs(a), outputs(b));
    assert_eq!(
        x.keys().collect::<Vec<_>>(),
        y.keys().collect::<Vec<_>>(),
        "{} vs {}",
        a.display(),
        b.display()
    );
    for (k, v) in &x {
        assert!(
            v == &y[k],
            "{k} differs between {} and {}",
            a.display(),
            b.display()
        );
    }
}

// ---- R1: --force removes only what quenchwise wrote ----

#[test]
fn force_refuses_a_folder_quenchwise_did_not_make() {
    let d = temp_dir("force-foreign");
    std::fs::write(d.join("screen.toml"), SMALL).unwrap();
    std::fs::create_dir_all(d.join("thesis")).unwrap();
    std::fs::write(d.join("thesis/ch1.tex"), "\\chapter{Glass}").unwrap();
    run_in(&d, &["screen", "screen.toml", "--out", "thesis", "--force"])
        .code(2)
        .stderr_has("--force refused")
        .stderr_has("did not write");
    assert_eq!(
        std::fs::read_to_string(d.join("thesis/ch1.tex")).unwrap(),
        "\\chapter{Glass}"
    );
    // `--out .` in a working folder: refused, nothing removed or added.
    let before: Vec<_> = std::fs::read_dir(&d)
        .unwrap()
        .flatten()
        .map(|e| e.file_name())
        .collect();
    run_in(&d, &["screen", "screen.toml", "--out", ".", "--force"]).code(2);
    let after: Vec<_> = std::fs::read_dir(&d)
        .unwrap()
        .flatten()
        .map(|e| e.file_name())
        .collect();
    assert_eq!(before.len(), after.len());
    assert!(d.join("screen.toml").exists() && d.join("thesis/ch1.tex").exists());
}

#[test]
fn force_removes_only_the_listed_files() {
    let d = temp_dir("force-own");
    let p = plan_in(&d, SMALL);
    let out = d.join("out");
    let mut o = ScreenOptions::new(&out);
    o.keep_checkpoints = true;
    run(&p, &o).unwrap();
    // The user keeps notes and a picture of their own in the results folder.
    std::fs::write(out.join("my-notes.txt"), "melted rank 1 on Tuesday").unwrap();
    std::fs::write(out.join("batch-sheets/photo.jpg"), [0xff, 0xd8]).unwrap();
    let listed = std::fs::read_to_string(out.join(MANIFEST)).unwrap();
    assert!(listed.contains("shortlist.csv") && listed.contains(".work/chunk-000000.parquet"));
    assert!(!listed.contains("my-notes"));
    let mut o = ScreenOptions::new(&out);
    o.force = true;
    o.stop_after_chunks = Some(1);
    assert!(matches!(run(&p, &o).unwrap(), Outcome::Interrupted { .. }));
    assert!(
        !out.join("shortlist.csv").exists(),
        "the old outputs are gone"
    );
    assert!(
        !out.join(".work/chunk-000005.parquet").exists(),
        "the old checkpoints are gone"
    );
    assert_eq!(
        std::fs::read_to_string(out.join("my-notes.txt")).unwrap(),
        "melted rank 1 on Tuesday"
    );
    assert!(out.join("batch-sheets/photo.jpg").exists());
}

#[test]
fn a_list_naming_paths_outside_the_folder_removes_nothing() {
    let d = temp_dir("force-tampered");
    let p = plan_in(&d, SMALL);
    let out = d.join("out");
    run(&p, &ScreenOptions::new(&out)).unwrap();
    std::fs::write(d.join("precious.txt"), "keep").unwrap();
    let mut listed = std::fs::read_to_string(out.join(MANIFEST)).unwrap();
    listed.push_str("../precious.txt\n");
    std::fs::write(out.join(MANIFEST), listed).unwrap();
    let mut o = ScreenOptions::new(&out);
    o.force = true;
    let e = run(&p, &o).unwrap_err();
    assert!(
        e.to_string().contains("not a path inside the folder"),
        "{e}"
    );
    assert!(d.join("precious.txt").exists() && out.join("shortlist.csv").exists());
}

// ---- R2: one process per folder ----

#[test]
fn a_folder_in_use_is_refused_and_left_alone() {
    let d = temp_dir("lock");
    let p = plan_in(&d, SMALL);
    let out = d.join("out");
    let mut o = ScreenOptions::new(&out);
    o.stop_after_chunks = Some(2);
    run(&p, &o).unwrap();
    let kept = std::fs::read_dir(out.join(".work")).unwrap().count();
    // Another process holds the folder (an OS lock on another open file
    // description behaves as another process would).
    let held = RunFolder::open(&out, Opening::Resume).unwrap();
    for how in [
        &["screen", "screen.toml", "--out", "out", "--force"][..],
        &["screen", "screen.toml", "--out", "out", "--resume"][..],
        &["report", "out"][..],
    ] {
        run_in(&d, how)
            .code(2)
            .stderr_has("is in use by another quenchwise process (pid ")
            .stderr_has("nothing was changed");
    }
    let still = std::fs::read_dir(out.join(".work")).unwrap().count();
    assert_eq!(kept, still, "the checkpoints are untouched");
    drop(held);
    let mut o = ScreenOptions::new(&out);
    o.resume = true;
    assert!(matches!(run(&p, &o).unwrap(), Outcome::Finished { .. }));
}

// ---- R3: --resume checks what the run means ----

#[test]
fn resume_checks_the_files_the_config_reads_but_not_its_comments() {
    let d = temp_dir("resume-meaning");
    std::fs::copy(
        root().join("demo-datasets/raw-materials.csv"),
        d.join("shelf.csv"),
    )
    .unwrap();
    let text = SMALL.replace(
        "max_per_kg_glass = 0.24",
        "max_per_kg_glass = 0.24\nraw_materials = \"shelf.csv\"",
    );
    let p = plan_in(&d, &text);
    let out = d.join("out");
    let mut o = ScreenOptions::new(&out);
    o.stop_after_chunks = Some(2);
    run(&p, &o).unwrap();
    // A comment and a blank line: the same run.
    let commented = plan_in(&d, &format!("# tried again after lunch\n\n{text}"));
    // A changed price on the shelf: another run.
    let shelf = std::fs::read_to_string(d.join("shelf.csv")).unwrap();
    let mut lines: Vec<String> = shelf.lines().map(String::from).collect();
    let header: Vec<&str> = lines[0].split(',').collect();
    let price = header.iter().position(|c| *c == "price_per_kg").unwrap();
    let mut cells: Vec<String> = lines[1].split(',').map(String::from).collect();
    let old: f64 = cells[price].parse().unwrap();
    cells[price] = format!("{}", old * 2.0);
    lines[1] = cells.join(",");
    std::fs::write(d.join("shelf.csv"), lines.join("\n") + "\n").unwrap();
    let repriced = config::load(&d.join("screen.toml")).unwrap();
    let mut o = ScreenOptions::new(&out);
    o.resume = true;
    let e = run(&repriced, &o).unwrap_err();
    assert!(e.to_string().contains("a file it reads"), "{e}");
    std::fs::write(d.join("shelf.csv"), shelf).unwrap();
    assert!(matches!(
        run(&commented, &o).unwrap(),
        Outcome::Finished { .. }
    ));
}

// ---- R4: damaged checkpoints are computed again ----

/// Change the bits `mask` of the middle byte of the file at `path`, as a
/// fault on disk would.
fn flip_a_middle_bit(path: &Path, mask: u8) {
    let mut bytes = std::fs::read(path).unwrap();
    let mid = bytes.len() / 2;
    bytes[mid] ^= mask;
    std::fs::write(path, &bytes).unwrap();
}

#[test]
fn a_truncated_empty_or_changed_chunk_is_computed_again() {
    let d = temp_dir("damaged-chunk");
    let p = plan_in(&d, SMALL);
    run(&p, &ScreenOptions::new(d.join("whole"))).unwrap();
    let out = d.join("out");
    let mut o = ScreenOptions::new(&out);
    o.stop_after_chunks = Some(4);
    run(&p, &o).unwrap();
    let c1 = out.join(".work/chunk-000001.parquet");
    let text = std::fs::read(&c1).unwrap();
    std::fs::write(&c1, &text[..text.len() / 2]).unwrap();
    std::fs::write(out.join(".work/chunk-000002.parquet"), b"").unwrap();
    // One bit changed in the middle of a kept chunk (its data pages).
    flip_a_middle_bit(&out.join(".work/chunk-000003.parquet"), 0x10);
    let mut o = ScreenOptions::new(&out);
    o.resume = true;
    let Outcome::Finished { notices, .. } = run(&p, &o).unwrap() else {
        panic!("the resumed run did not finish");
    };
    assert_eq!(notices.len(), 3, "{notices:?}");
    assert!(
        notices[0].contains("chunk-000001.parquet was damaged") && notices[0].contains("again")
    );
    assert!(notices[1].contains("cut short (0 bytes)"), "{notices:?}");
    assert!(
        notices[2].contains("chunk-000003.parquet was damaged")
            && notices[2].contains("SHA-256 does not match"),
        "{notices:?}"
    );
    assert_same_outputs(&d.join("whole"), &out);
}

#[test]
fn leftover_partial_files_of_a_kill_do_not_get_in_the_way() {
    let d = temp_dir("leftover-partial");
    let p = plan_in(&d, SMALL);
    run(&p, &ScreenOptions::new(d.join("whole"))).unwrap();
    let out = d.join("out");
    let mut o = ScreenOptions::new(&out);
    o.stop_after_chunks = Some(3);
    run(&p, &o).unwrap();
    // What a SIGKILL in the middle of writes leaves: half a temp chunk, a
    // truncated part of the candidates table and a part beyond the ones
    // this run writes, a temp shortlist.
    std::fs::write(out.join(".work/chunk-000003.partial"), b"[{\"index\":").unwrap();
    std::fs::create_dir_all(out.join("candidates.partial")).unwrap();
    std::fs::write(out.join("candidates.partial/part-000000.parquet"), b"PAR1").unwrap();
    std::fs::write(out.join("candidates.partial/part-000007.parquet"), b"PAR1").unwrap();
    std::fs::write(out.join("shortlist.partial"), b"rank,SiO").unwrap();
    // (listed, as the run lists a file before writing it)
    let mut listed = std::fs::read_to_string(out.join(MANIFEST)).unwrap();
    listed
        .push_str("shortlist.json\ncandidates.partial/\ncandidates.partial/part-000007.parquet\n");
    std::fs::write(out.join(MANIFEST), listed).unwrap();
    let mut o = ScreenOptions::new(&out);
    o.resume = true;
    assert!(matches!(run(&p, &o).unwrap(), Outcome::Finished { .. }));
    assert_same_outputs(&d.join("whole"), &out);
    for f in [
        ".work/chunk-000003.partial",
        "candidates.partial",
        "shortlist.partial",
    ] {
        assert!(!out.join(f).exists(), "{f} left behind");
    }
}

// ---- R5: a stop is honoured at every safe point, and resumes ----

/// Asks to stop at its `at`-th question, and counts the questions.
struct StopAt {
    at: usize,
    asked: usize,
}

impl ScreenObserver for StopAt {
    fn stop_requested(&mut self) -> bool {
        self.asked += 1;
        self.asked == self.at
    }
}

#[test]
fn a_stop_at_any_safe_point_resumes_to_the_same_outputs() {
    let d = temp_dir("stop-everywhere");
    let p = plan_in(&d, SMALL);
    let whole = d.join("whole");
    let mut o = ScreenOptions::new(&whole);
    o.report = true;
    // A table of several parts, so that a stop after it is written and the
    // resume replace every part.
    let layout = CandidateLayout {
        group_rows: 64,
        part_groups: 2,
    };
    o.candidate_layout = layout;
    let mut count = StopAt { at: 0, asked: 0 };
    run_observed(&p, &o, &mut count).unwrap();
    let points = count.asked;
    // 8 chunks, refinement rounds, 4 groups of output files with the report.
    assert!(points >= 8 + 1 + 4, "{points} safe points");
    let mut stages = Vec::new();
    for at in 1..=points {
        let out = d.join(format!("stop-{at}"));
        let mut o = ScreenOptions::new(&out);
        o.report = true;
        o.candidate_layout = layout;
        match run_observed(&p, &o, &mut StopAt { at, asked: 0 }).unwrap() {
            Outcome::Interrupted { stage, .. } => stages.push(stage),
            other => panic!("stop request {at} was ignored: {other:?}"),
        }
        assert!(!out.join("report.html").exists() || stages.last() != Some(&Stage::Outputs));
        let mut o = ScreenOptions::new(&out);
        o.report = true;
        o.resume = true;
        o.candidate_layout = layout;
        assert!(matches!(run(&p, &o).unwrap(), Outcome::Finished { .. }));
        assert_same_outputs(&whole, &out);
    }
    for s in [Stage::FirstPass, Stage::Refinement, Stage::Outputs] {
        assert!(
            stages.contains(&s),
            "never stopped during {s:?}: {stages:?}"
        );
    }
}

// ---- Disk: a finished run keeps no checkpoints unless asked ----

#[test]
fn a_finished_run_removes_its_checkpoints_and_resume_has_nothing_to_do() {
    let d = temp_dir("checkpoints-removed");
    let p = plan_in(&d, SMALL);
    let out = d.join("out");
    run(&p, &ScreenOptions::new(&out)).unwrap();
    let left: Vec<String> = std::fs::read_dir(out.join(".work"))
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .collect();
    assert!(
        left.iter()
            .all(|n| !n.starts_with("chunk-") && !n.starts_with("refine-")),
        "{left:?}"
    );
    let mut o = ScreenOptions::new(&out);
    o.resume = true;
    assert_eq!(run(&p, &o).unwrap(), Outcome::AlreadyFinished);
    let kept = d.join("kept");
    let mut o = ScreenOptions::new(&kept);
    o.keep_checkpoints = true;
    run(&p, &o).unwrap();
    assert!(kept.join(".work/chunk-000007.parquet").exists());
}

// ---- Memory: the candidates table in parts of a bounded size ----

#[test]
fn a_candidates_table_cut_into_parts_holds_the_rows_of_one_file() {
    let d = temp_dir("candidate-parts");
    let p = plan_in(&d, SMALL);
    let mut o = ScreenOptions::new(d.join("whole"));
    o.report = true;
    run(&p, &o).unwrap();
    let cut = d.join("cut");
    let mut o = ScreenOptions::new(&cut);
    o.report = true;
    // Row groups of the 64-row chunks, two to a part.
    o.candidate_layout = CandidateLayout {
        group_rows: 64,
        part_groups: 2,
    };
    run(&p, &o).unwrap();
    assert_eq!(candidate_files(&d.join("whole")).unwrap().len(), 1);
    let files = candidate_files(&cut).unwrap();
    let whole = read_candidates(&d.join("whole")).unwrap();
    assert_eq!(files.len(), whole.height().div_ceil(128), "{files:?}");
    let names: Vec<String> = files
        .iter()
        .map(|f| f.file_name().unwrap().to_string_lossy().to_string())
        .collect();
    assert_eq!(names[..2], ["part-000000.parquet", "part-000001.parquet"]);
    for f in &files[..files.len() - 1] {
        assert_eq!(
            quenchwise::files::table::read_frame(f).unwrap().height(),
            128
        );
    }
    assert!(read_candidates(&cut).unwrap().equals_missing(&whole));
    // The report thins the same rows of the table however it is cut.
    for f in ["report.html", "shortlist.csv", "summary.txt"] {
        assert!(
            std::fs::read(cut.join(f)).unwrap() == std::fs::read(d.join("whole").join(f)).unwrap(),
            "{f} differs"
        );
    }
    assert!(!cut.join("candidates.partial").exists());
    // A run killed after writing its table, resumed: the table is written
    // again over the old parts, and a file of the user's own put beside
    // them stays.
    let again = d.join("again");
    let mut o2 = o.clone();
    o2.out = again.clone();
    o2.keep_checkpoints = true;
    run(&p, &o2).unwrap();
    std::fs::remove_file(again.join(".work/finished")).unwrap();
    std::fs::write(again.join("candidates/notes.txt"), "melt 3 looked cloudy").unwrap();
    o2.resume = true;
    assert!(matches!(run(&p, &o2).unwrap(), Outcome::Finished { .. }));
    assert!(read_candidates(&again).unwrap().equals_missing(&whole));
    assert!(again.join("candidates/notes.txt").exists());
    assert!(!again.join("candidates.partial").exists());
    // Every part is listed: --force clears them all.
    drop(RunFolder::open(&cut, Opening::Force).unwrap());
    assert!(!cut.join("candidates").exists());
}

// ---- Shards and merge ----

fn shard_runs(p: &RunPlan, d: &Path, count: usize) -> Vec<PathBuf> {
    (0..count)
        .map(|index| {
            let dir = d.join(format!("shard-{index}"));
            let mut o = ScreenOptions::new(&dir);
            o.shard = Some(Shard { index, count });
            assert!(matches!(run(p, &o).unwrap(), Outcome::ShardDone { .. }));
            dir
        })
        .collect()
}

/// Merge `shards` into `out`, unobserved.
fn merge_into(shards: &[PathBuf], out: &Path) -> Result<Outcome, quenchwise::error::Error> {
    merge(
        shards,
        None,
        &ScreenOptions::new(out),
        &mut quenchwise::screen::Unobserved,
    )
}

#[test]
fn shards_merge_into_the_unsplit_result() {
    let d = temp_dir("shards");
    let p = plan_in(&d, SMALL);
    let whole = d.join("whole");
    run(&p, &ScreenOptions::new(&whole)).unwrap();
    // 8 chunks in 3 shards: 2, 3 and 3 chunks.
    assert_eq!(Shard { index: 0, count: 3 }.chunks(8), 0..2);
    assert_eq!(Shard { index: 2, count: 3 }.chunks(8), 5..8);
    let mut shards = shard_runs(&p, &d, 3);
    shards.reverse(); // any order
    let merged = d.join("merged");
    let end = merge_into(&shards, &merged).unwrap();
    assert!(matches!(end, Outcome::Finished { .. }), "{end:?}");
    assert_same_outputs(&whole, &merged);
}

/// Keeps the notices a run gives.
#[derive(Default)]
struct Notes(Vec<String>);

impl ScreenObserver for Notes {
    fn notice(&mut self, text: &str) {
        self.0.push(text.to_string());
    }
}

#[test]
fn a_damaged_shard_chunk_stops_the_merge_and_a_resumed_shard_computes_it_again() {
    let d = temp_dir("shard-damaged");
    let p = plan_in(&d, SMALL);
    let whole = d.join("whole");
    run(&p, &ScreenOptions::new(&whole)).unwrap();
    let shards = shard_runs(&p, &d, 3);
    // One bit changed in a kept chunk of shard 1 (chunks 2 to 4).
    flip_a_middle_bit(&shards[1].join(".work/chunk-000003.parquet"), 0x04);
    let e = merge_into(&shards, &d.join("m1")).unwrap_err();
    assert!(
        e.message().contains("chunk-000003.parquet is damaged")
            && e.hint().is_some_and(|h| h.contains("--resume")),
        "{e}"
    );
    // What the hint says: rerun that shard with --resume.
    let mut o = ScreenOptions::new(&shards[1]);
    o.shard = Some(Shard { index: 1, count: 3 });
    o.resume = true;
    let mut notes = Notes::default();
    assert!(matches!(
        run_observed(&p, &o, &mut notes).unwrap(),
        Outcome::ShardDone { .. }
    ));
    assert!(
        notes.0.len() == 1 && notes.0[0].contains("chunk-000003.parquet was damaged"),
        "{:?}",
        notes.0
    );
    let merged = d.join("m2");
    let end = merge_into(&shards, &merged).unwrap();
    assert!(matches!(end, Outcome::Finished { .. }), "{end:?}");
    assert_same_outputs(&whole, &merged);
}

#[test]
fn merge_names_missing_doubled_unfinished_and_foreign_shards() {
    let d = temp_dir("shards-bad");
    let p = plan_in(&d, SMALL);
    let shards = shard_runs(&p, &d, 3);
    let try_merge =
        |dirs: &[PathBuf], name: &str| merge_into(dirs, &d.join(name)).unwrap_err().to_string();
    let e = try_merge(&shards[..2], "m1");
    assert!(e.contains("shard 2/3 missing: 2 of 3 given"), "{e}");
    let e = try_merge(
        &[shards[0].clone(), shards[1].clone(), shards[1].clone()],
        "m2",
    );
    assert!(e.contains("shard-1 given twice"), "{e}");
    std::fs::remove_file(shards[1].join(".work/chunk-000003.parquet")).unwrap();
    let e = try_merge(&shards, "m3");
    assert!(
        e.contains("shard 1/3") && e.contains("kept 2 of its 3 chunks"),
        "{e}"
    );
    // Rerunning that task resumes it; then the merge goes through.
    let mut o = ScreenOptions::new(&shards[1]);
    o.shard = Some(Shard { index: 1, count: 3 });
    o.resume = true;
    assert!(matches!(run(&p, &o).unwrap(), Outcome::ShardDone { .. }));
    // A shard of another screen (another seed).
    let other = plan_in(&d, &SMALL.replace("seed = 7", "seed = 8"));
    let mut o = ScreenOptions::new(d.join("foreign"));
    o.shard = Some(Shard { index: 2, count: 3 });
    run(&other, &o).unwrap();
    let e = try_merge(
        &[shards[0].clone(), shards[1].clone(), d.join("foreign")],
        "m4",
    );
    assert!(e.contains("come from different screens"), "{e}");
    merge_into(&shards, &d.join("m5")).unwrap();
}

// The config names its raw materials by a path relative to itself, the
// shards ran from one folder with a relative config path, their folders then
// moved, and the merge runs from somewhere else: it reads the same files the
// shards read, records where they are, and its report can be written again.
#[test]
fn a_merge_elsewhere_of_moved_shards_reads_the_files_the_shards_read() {
    let d = temp_dir("merge-elsewhere");
    let lab = d.join("lab");
    std::fs::create_dir_all(lab.join("cfg")).unwrap();
    std::fs::copy(
        root().join("demo-datasets/raw-materials.csv"),
        lab.join("cfg/shelf.csv"),
    )
    .unwrap();
    let text = SMALL.replace(
        "max_per_kg_glass = 0.24",
        "max_per_kg_glass = 0.24\nraw_materials = \"shelf.csv\"",
    );
    assert_ne!(text, SMALL);
    std::fs::write(lab.join("cfg/screen.toml"), text).unwrap();
    for k in 0..2 {
        let (out, shard) = (format!("shards/shard-{k}"), format!("{k}/2"));
        run_in(
            &lab,
            &[
                "screen",
                "cfg/screen.toml",
                "--out",
                &out,
                "--shard",
                &shard,
            ],
        )
        .code(0);
    }
    run_in(&lab, &["screen", "cfg/screen.toml", "--out", "whole"]).code(0);
    let away = d.join("away");
    std::fs::create_dir_all(&away).unwrap();
    std::fs::rename(lab.join("shards"), away.join("moved")).unwrap();
    run_in(
        &away,
        &["merge", "--out", "merged", "moved/shard-1", "moved/shard-0"],
    )
    .code(0)
    .stdout_has("report: merged/report.html");
    let merged = away.join("merged");
    let whole = lab.join("whole");
    for f in [
        "shortlist.csv",
        "summary.txt",
        "candidates/part-000000.parquet",
        "limits.csv",
    ] {
        assert!(
            std::fs::read(merged.join(f)).unwrap() == std::fs::read(whole.join(f)).unwrap(),
            "{f} differs"
        );
    }
    let dir_of = |p: &Path| {
        let prov: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(p.join("provenance.json")).unwrap())
                .unwrap();
        prov["config_dir"].as_str().unwrap().to_string()
    };
    assert_eq!(dir_of(&merged), dir_of(&whole));
    assert_eq!(
        PathBuf::from(dir_of(&merged)),
        std::fs::canonicalize(lab.join("cfg")).unwrap()
    );
    run_in(&d, &["report", "away/merged"]).code(0);
}

#[test]
fn a_shard_is_read_as_k_of_n() {
    assert_eq!(Shard::parse("3/4").unwrap(), Shard { index: 3, count: 4 });
    for bad in ["4/4", "1", "-1/4", "a/b", "0/0", "1/4/2"] {
        let e = Shard::parse(bad).unwrap_err().to_string();
        assert!(e.contains("expected K/N"), "{bad}: {e}");
    }
}

// Rows are what checkpoints hold; a chunk read back equals the chunk written.
#[test]
fn a_chunk_checkpoint_is_compact() {
    // A checkpoint is what a run needs on disk until it finishes: as JSON
    // text it took about 1 250 bytes per candidate (measured 2026-12-03 on
    // the demo config; Parquet about 140), which a 10⁸-candidate screen
    // could not afford.
    // Chunks of 512, as the demo config has: a Parquet file's schema and
    // footer (about 10 kB) would dominate a chunk of 64.
    let d = temp_dir("compact-checkpoint");
    let p = plan_in(
        &d,
        &SMALL
            .replace("first_pass_points = 512", "first_pass_points = 1024")
            .replace("chunk_size = 64", "chunk_size = 512"),
    );
    let out = d.join("out");
    let mut o = ScreenOptions::new(&out);
    o.stop_after_chunks = Some(1);
    run(&p, &o).unwrap();
    let bytes = std::fs::metadata(out.join(".work/chunk-000000.parquet"))
        .unwrap()
        .len();
    let rows = p.search.chunk_size as u64;
    assert!(bytes < 250 * rows, "{bytes} bytes for {rows} candidates");
}
