//! Streamed tables (`files::table_stream`): the same rows as the whole-table
//! path, in input order, whatever the batch size and thread count; a bad
//! cell anywhere is found before any row runs; a failure part-way leaves no
//! file under the name asked for.

use crate::util::{root, send_signal, temp_dir, wait_for_file};
use quenchwise::assess::{evaluate_composition, evaluate_melt, Calibration, SlabQuench};
use quenchwise::composition::{Basis, Composition};
use quenchwise::files::model_set::{parse_model_set, DEMO_MODELS};
use quenchwise::files::source::Source;
use quenchwise::files::table::{
    append_results, read_composition_table, read_frame, read_melt_table, write_frame,
};
use quenchwise::files::table_stream::{
    stream_table, CompositionRows, Event, MeltRows, ResultPlan, StreamSettings,
};
use quenchwise::kinetics::KineticOptions;
use quenchwise::properties::ModelSet;
use std::path::Path;
use std::sync::atomic::{AtomicUsize, Ordering};

fn models() -> ModelSet {
    parse_model_set(&Source::new("demo", DEMO_MODELS)).unwrap()
}

fn melt_eval(
    v: &quenchwise::files::melt_card::MeltValues,
) -> Result<quenchwise::assess::Evaluation, String> {
    let (melt, opts) = v
        .build(&KineticOptions::default())
        .map_err(|e| e.to_string())?;
    evaluate_melt(
        &melt,
        &opts,
        Some(SlabQuench::default()),
        &Calibration::None,
    )
    .map_err(|e| e.to_string())
}

fn comp_eval(
    m: &ModelSet,
    pairs: &quenchwise::files::table::OxideAmounts,
) -> Result<quenchwise::assess::Evaluation, String> {
    let comp = Composition::new(pairs, Basis::MolPercent, 2.0).map_err(|e| e.to_string())?;
    // As `eval` does: the demo set has no fitted nuclei, so the defaults.
    assert!(m.kinetics_fit.is_none());
    let opts = KineticOptions::default();
    evaluate_composition(
        m,
        &comp,
        &opts,
        Some(SlabQuench::default()),
        &Calibration::None,
    )
    .map_err(|e| e.to_string())
}

fn composition_plan(m: &ModelSet) -> ResultPlan {
    ResultPlan {
        with_models: true,
        calibrated: m.phases.iter().any(|p| p.calibrated_against.is_some()),
        phases: m.phases.iter().map(|p| p.name.clone()).collect(),
        replaces: &[],
    }
}

/// Run `f` on a rayon pool of `n` threads.
fn on_threads<T: Send>(n: usize, f: impl FnOnce() -> T + Send) -> T {
    rayon::ThreadPoolBuilder::new()
        .num_threads(n)
        .build()
        .unwrap()
        .install(f)
}

/// The whole-table frame against the streamed one, both read back from
/// CSV: every column of the whole-table path is there with the same cells;
/// the streamed table may add only per-phase columns that no row fills.
fn assert_same_rows(whole: &Path, streamed: &Path) {
    let old = read_frame(whole).unwrap();
    let new = read_frame(streamed).unwrap();
    assert_eq!(old.height(), new.height());
    let extra: Vec<String> = new
        .get_column_names()
        .iter()
        .map(|s| s.to_string())
        .filter(|n| old.column(n).is_err())
        .collect();
    for n in &extra {
        assert!(n.starts_with("critical_rate_"), "unexpected column {n}");
        let c = new.column(n).unwrap();
        assert_eq!(c.null_count(), c.len(), "{n} has values");
    }
    let new = new.drop_many(extra);
    // The same columns; the streamed table writes them in a reading order
    // of its own (decisive numbers first), the whole-table path by name.
    let mut a: Vec<String> = old
        .get_column_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    let mut b: Vec<String> = new
        .get_column_names()
        .iter()
        .map(|s| s.to_string())
        .collect();
    a.sort();
    b.sort();
    assert_eq!(a, b);
    let new = new.select(old.get_column_names_owned()).unwrap();
    assert!(
        old.equals_missing(&new),
        "streamed rows differ from the whole-table path:\n{old}\n{new}"
    );
}

#[test]
fn streamed_demo_tables_equal_the_whole_table_path_at_any_batch_size_and_thread_count() {
    let d = temp_dir("tables-same");
    // Melt cards: the whole-table path, one row after the other.
    let input = root().join("demo-datasets/melt-cards.csv");
    let t = read_melt_table(&input).unwrap();
    let results: Vec<_> = t
        .rows
        .iter()
        .map(|r| r.clone().and_then(|v| melt_eval(&v)))
        .collect();
    let mut df = append_results(t.frame, &results).unwrap();
    let whole = d.join("melts-whole.csv");
    write_frame(&whole, &mut df).unwrap();
    let mut texts = Vec::new();
    // (4, 5): fewer parts than workers (parts of 2, 2 and 1 rows).
    for (threads, batch) in [(1, 1), (2, 1), (2, 3), (4, 5), (1, 4096)] {
        let out = d.join(format!("melts-{threads}-{batch}.csv"));
        let s = on_threads(threads, || {
            stream_table(
                &input,
                &out,
                &MeltRows,
                &ResultPlan::melt_cards(),
                StreamSettings {
                    batch_rows: batch,
                    ..Default::default()
                },
                melt_eval,
                |_| {},
            )
        })
        .unwrap();
        assert_eq!(s.rows, results.len());
        assert_same_rows(&whole, &out);
        texts.push(std::fs::read(&out).unwrap());
    }
    // Byte for byte the same file at 1, 2 and 4 threads, any batch size.
    assert!(texts.windows(2).all(|w| w[0] == w[1]));

    // Compositions with the demo model set.
    let m = models();
    let input = root().join("demo-datasets/candidates.csv");
    let (t, _) = read_composition_table(&input).unwrap();
    let results: Vec<_> = t
        .rows
        .iter()
        .map(|r| r.clone().and_then(|p| comp_eval(&m, &p)))
        .collect();
    let mut df = append_results(t.frame, &results).unwrap();
    let whole = d.join("cands-whole.csv");
    write_frame(&whole, &mut df).unwrap();
    let mut texts = Vec::new();
    for (threads, batch) in [(1, 2), (2, 3), (2, 4096)] {
        let out = d.join(format!("cands-{threads}-{batch}.csv"));
        on_threads(threads, || {
            stream_table(
                &input,
                &out,
                &CompositionRows,
                &composition_plan(&m),
                StreamSettings {
                    batch_rows: batch,
                    ..Default::default()
                },
                |p| comp_eval(&m, p),
                |_| {},
            )
        })
        .unwrap();
        assert_same_rows(&whole, &out);
        texts.push(std::fs::read(&out).unwrap());
    }
    assert!(texts.windows(2).all(|w| w[0] == w[1]));

    // Parquet out holds the same rows as CSV out.
    let pq = d.join("cands.parquet");
    stream_table(
        &input,
        &pq,
        &CompositionRows,
        &composition_plan(&m),
        StreamSettings {
            batch_rows: 3,
            ..Default::default()
        },
        |p| comp_eval(&m, p),
        |_| {},
    )
    .unwrap();
    let from_pq = read_frame(&pq).unwrap();
    let csv_again = d.join("cands-from-parquet.csv");
    write_frame(&csv_again, &mut from_pq.clone()).unwrap();
    assert_eq!(std::fs::read(&csv_again).unwrap(), texts[0]);
}

/// A melt-card table of `n` copies of the first demo card, with the cells
/// of row `bad_row` (1-based) replaced by `bad_cells`.
fn melt_table(n: usize, bad_row: usize, bad_b_k: &str) -> String {
    let demo = std::fs::read_to_string(root().join("demo-datasets/melt-cards.csv")).unwrap();
    let mut lines = demo.lines();
    let header = lines.next().unwrap();
    let first = lines.next().unwrap();
    let mut s = format!("{header}\n");
    for i in 1..=n {
        if i == bad_row {
            let mut cells: Vec<&str> = first.split(',').collect();
            cells[1] = bad_b_k;
            s.push_str(&cells.join(","));
        } else {
            s.push_str(first);
        }
        s.push('\n');
    }
    s
}

/// Stream the melt-card table `input` to `out`, counting in `ran` the rows
/// evaluated.
fn stream_counted(
    input: &Path,
    out: &Path,
    settings: StreamSettings,
    ran: &AtomicUsize,
    on: impl FnMut(Event<'_>),
) -> Result<quenchwise::files::table_stream::Streamed, quenchwise::files::table::TableError> {
    stream_table(
        input,
        out,
        &MeltRows,
        &ResultPlan::melt_cards(),
        settings,
        |v| {
            ran.fetch_add(1, Ordering::Relaxed);
            melt_eval(v)
        },
        on,
    )
}

#[test]
fn a_bad_cell_in_a_late_batch_is_found_before_any_row_runs() {
    let d = temp_dir("tables-late-bad");
    let input = d.join("m.csv");
    // Row 9 of 10 (line 10) with batches of 2: the fifth batch.
    std::fs::write(&input, melt_table(10, 9, "4.5e3x")).unwrap();
    let out = d.join("o.csv");
    let ran = AtomicUsize::new(0);
    let settings = StreamSettings {
        batch_rows: 2,
        ..Default::default()
    };
    let e = stream_counted(&input, &out, settings, &ran, |_| {})
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("m.csv:10: row 9, column 'b_k': \"4.5e3x\" is not a number"),
        "{e}"
    );
    assert_eq!(ran.load(Ordering::Relaxed), 0);
    assert!(!out.exists());
    assert!(!d.join("o.csv.partial").exists());
}

#[test]
fn a_failure_after_some_batches_are_written_leaves_no_complete_looking_file() {
    let d = temp_dir("tables-fail-late");
    let input = d.join("m.csv");
    std::fs::write(&input, melt_table(10, 0, "")).unwrap();
    let out = d.join("o.csv");
    // The file is spoiled between the check and the evaluation, so the
    // second pass meets a bad cell after four batches were written.
    let written = AtomicUsize::new(0);
    let e = stream_table(
        &input,
        &out,
        &MeltRows,
        &ResultPlan::melt_cards(),
        StreamSettings {
            batch_rows: 2,
            ..Default::default()
        },
        melt_eval,
        |event| match event {
            Event::Checked(rows) => {
                assert_eq!(rows, 10);
                std::fs::write(&input, melt_table(10, 9, "abc")).unwrap();
            }
            Event::Batch(b) => {
                written.fetch_add(b.results.len(), Ordering::Relaxed);
            }
        },
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("m.csv:10: row 9, column 'b_k'"), "{e}");
    assert_eq!(written.load(Ordering::Relaxed), 8);
    assert!(!out.exists());
    assert!(!d.join("o.csv.partial").exists());
}

/// A panic while a row is evaluated (a bug) reaches the caller, on one
/// thread and on two, without a hang and without an output file (the
/// partial one, with the batches written before it, removed).
#[test]
fn a_panic_in_a_row_reaches_the_caller_and_writes_nothing() {
    let d = temp_dir("tables-panic");
    let input = d.join("m.csv");
    std::fs::write(&input, melt_table(40, 0, "")).unwrap();
    for threads in [1, 2] {
        let out = d.join(format!("o{threads}.csv"));
        // On a thread of its own, so that a hang fails the test instead of
        // stalling the run.
        let (done, finished) = std::sync::mpsc::channel();
        let (i, o) = (input.clone(), out.clone());
        std::thread::spawn(move || {
            let ran = AtomicUsize::new(0);
            let caught = std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                on_threads(threads, || {
                    stream_table(
                        &i,
                        &o,
                        &MeltRows,
                        &ResultPlan::melt_cards(),
                        StreamSettings {
                            batch_rows: 4,
                            ..Default::default()
                        },
                        |v| {
                            // The tenth row: batches before it may be written.
                            if ran.fetch_add(1, Ordering::SeqCst) == 9 {
                                panic!("a bug in row evaluation");
                            }
                            melt_eval(v)
                        },
                        |_| {},
                    )
                    .map(drop)
                    .map_err(|e| e.to_string())
                })
            }));
            let _ = done.send(caught);
        });
        let caught = finished
            .recv_timeout(std::time::Duration::from_secs(120))
            .expect("no answer within 120 s: the table hangs");
        let payload = caught.expect_err("the panic must reach the caller");
        assert_eq!(
            payload.downcast_ref::<&str>(),
            Some(&"a bug in row evaluation"),
            "{threads} threads"
        );
        assert!(!out.exists(), "{threads} threads");
        assert!(!d.join(format!("o{threads}.csv.partial")).exists());
        // (How many of the other rows ran depends on when each thread hears
        // of the panic, so no count is asserted.)
    }
}

#[test]
fn columns_get_the_types_inference_over_the_whole_file_gives_whatever_the_batch() {
    // The first pass parses later batches with the types found so far; cells
    // that polars' number parser takes but its inference reads as text (a
    // leading '+', "1.e5", spaces, quotes, "nan", "Inf") turn a column to
    // text only in a late batch here, as do a float after integers (to a
    // float) and numbers after empty cells. The whole-table path infers over
    // every row at once: the streamed file must have the same cells.
    let d = temp_dir("tables-late-types");
    let demo = std::fs::read_to_string(root().join("demo-datasets/melt-cards.csv")).unwrap();
    let mut lines = demo.lines();
    let header = lines.next().unwrap();
    let first = lines.next().unwrap();
    let late: [(&str, &str); 10] = [
        ("plus", "+5"),
        ("dot_e", "1.e5"),
        ("space", " 7"),
        ("quoted", "\"3.5\""),
        ("nan", "nan"),
        ("inf", "Inf"),
        ("nan_as_read", "NaN"),
        ("int_then_float", "7.5"),
        ("text", "abc"),
        ("plus_exponent", "2.5e+3"),
    ];
    let mut s = String::from(header);
    for (name, _) in &late {
        s.push_str(&format!(",{name}"));
    }
    s.push_str(",empty_then_number\n");
    // Each odd cell in a row of its own, so one does not make another's
    // batch inferred.
    let rows = late.len() + 2;
    for row in 1..=rows {
        s.push_str(first);
        for (k, (name, token)) in late.iter().enumerate() {
            let v = if row == k + 3 {
                token.to_string()
            } else if *name == "int_then_float" {
                row.to_string()
            } else {
                format!("{row}.5")
            };
            s.push_str(&format!(",{v}"));
        }
        s.push_str(if row >= 6 { ",3\n" } else { ",\n" });
    }
    let input = d.join("m.csv");
    std::fs::write(&input, s).unwrap();
    let t = read_melt_table(&input).unwrap();
    let results: Vec<_> = t
        .rows
        .iter()
        .map(|r| r.clone().and_then(|v| melt_eval(&v)))
        .collect();
    let mut df = append_results(t.frame, &results).unwrap();
    let whole = d.join("whole.csv");
    write_frame(&whole, &mut df).unwrap();
    for batch in [1, 2, 3, 4096] {
        let out = d.join(format!("streamed-{batch}.csv"));
        stream_table(
            &input,
            &out,
            &MeltRows,
            &ResultPlan::melt_cards(),
            StreamSettings {
                batch_rows: batch,
                ..Default::default()
            },
            melt_eval,
            |_| {},
        )
        .unwrap();
        assert_same_rows(&whole, &out);
    }
}

/// Ctrl-C between batches (here the flag it raises, raised once the first
/// batch is written, or before the first pass): the stream ends with
/// `Stopped`, saying how many rows were evaluated, and leaves no file.
#[test]
fn a_stop_between_batches_writes_nothing_and_says_how_far_it_got() {
    use quenchwise::files::table::TableError;
    use std::sync::atomic::AtomicBool;
    static STOP: AtomicBool = AtomicBool::new(false);
    let d = temp_dir("tables-stop");
    let input = d.join("m.csv");
    std::fs::write(&input, melt_table(10, 0, "")).unwrap();
    let out = d.join("o.csv");
    let ran = AtomicUsize::new(0);
    let settings = StreamSettings {
        batch_rows: 2,
        readable_csv: true,
        stop: Some(&STOP),
    };
    let e = stream_counted(&input, &out, settings, &ran, |event| {
        if let Event::Batch(_) = event {
            STOP.store(true, Ordering::SeqCst);
        }
    })
    .unwrap_err();
    let TableError::Stopped { evaluated, total } = e else {
        panic!("not a stop: {e}");
    };
    // The flag rose while the second batch was evaluated: the first is
    // counted, the second dropped (its rows skipped or done, as the race
    // fell), no third begun.
    assert_eq!((evaluated, total), (2, Some(10)));
    let ran = ran.load(Ordering::Relaxed);
    assert!((2..=4).contains(&ran), "{ran} rows ran");
    assert!(!out.exists());
    assert!(!d.join("o.csv.partial").exists());
    // Raised before the first pass: nothing runs at all.
    let ran = AtomicUsize::new(0);
    let e = stream_counted(&input, &out, settings, &ran, |_| {}).unwrap_err();
    assert!(
        matches!(
            e,
            TableError::Stopped {
                evaluated: 0,
                total: None
            }
        ),
        "{e}"
    );
    assert_eq!(
        e.to_string(),
        "stopped at your request while the table was checked, before any row was evaluated"
    );
    assert_eq!(ran.load(Ordering::Relaxed), 0);
    assert!(!out.exists());
}

/// The real program on SIGINT (what Ctrl-C sends) part-way through a table:
/// exit 130, the reason on stderr, no output file and no partial file left.
#[test]
fn ctrl_c_during_a_table_stops_it_and_leaves_no_file() {
    use std::process::{Command, Stdio};
    let d = temp_dir("tables-sigint");
    std::fs::write(d.join("m.csv"), melt_table(40_000, 0, "")).unwrap();
    let child = Command::new(env!("CARGO_BIN_EXE_quenchwise"))
        .args(["eval", "--melt-cards", "m.csv", "--out", "o.csv"])
        .args(["--threads", "1", "--batch-rows", "64"])
        .current_dir(&d)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    // The first batch is on its way to disk: the evaluation has begun.
    let partial = d.join("o.csv.partial");
    wait_for_file(&partial, "the table's first batch");
    send_signal(child.id(), "-INT");
    let run = child.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&run.stderr);
    // A run that ended with 0 finished before the signal or ignored it.
    assert_eq!(run.status.code(), Some(130), "{stderr}");
    assert!(stderr.contains("stopped at your request after"), "{stderr}");
    assert!(
        stderr.contains("of 40000 rows; nothing was written"),
        "{stderr}"
    );
    assert!(!d.join("o.csv").exists());
    assert!(!partial.exists());
    assert!(!d.join("o.warnings.txt").exists());
}

/// A stop asked for in the middle of a table's only batch: the rest of the
/// batch is skipped and nothing is written (a table of one batch has no
/// later boundary to stop at).
#[test]
fn a_stop_inside_the_only_batch_skips_its_rest() {
    use quenchwise::files::table::TableError;
    use std::sync::atomic::AtomicBool;
    static STOP: AtomicBool = AtomicBool::new(false);
    let d = temp_dir("tables-stop-one-batch");
    let input = d.join("m.csv");
    std::fs::write(&input, melt_table(64, 0, "")).unwrap();
    let out = d.join("o.csv");
    let ran = AtomicUsize::new(0);
    let e = stream_table(
        &input,
        &out,
        &MeltRows,
        &ResultPlan::melt_cards(),
        StreamSettings {
            batch_rows: 1000,
            readable_csv: true,
            stop: Some(&STOP),
        },
        |v| {
            ran.fetch_add(1, Ordering::Relaxed);
            STOP.store(true, Ordering::SeqCst);
            melt_eval(v)
        },
        |_| {},
    )
    .unwrap_err();
    assert!(
        matches!(
            e,
            TableError::Stopped {
                evaluated: 0,
                total: Some(64)
            }
        ),
        "{e}"
    );
    // Each worker finishes the row it is on, and no more.
    let ran = ran.load(Ordering::Relaxed);
    assert!(
        ran <= rayon::current_num_threads().min(32),
        "{ran} rows ran"
    );
    assert!(!out.exists());
    assert!(!d.join("o.csv.partial").exists());
}
