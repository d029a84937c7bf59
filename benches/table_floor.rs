//! The floor under the table benchmark (benches/tables/run.sh): the part of
//! `eval --melt-cards` that no evaluation can make faster. With polars
//! alone, nothing computed, at polars' own thread count (all cores), it
//! writes a results table that `eval` wrote (held in memory first), and
//! reads the input CSV.
//!
//! Prints the median seconds of each over RUNS runs. The write alone is
//! the floor: polars' one-shot CSV writer, with its default options, on
//! these results; quenchwise writes the same table batch by batch through
//! polars' batched writer. (Reading can overlap writing, as it does in
//! quenchwise, so the two are not added.)
//!
//! Usage: cargo bench --bench table_floor -- INPUT.csv RESULTS.csv [RUNS]
//! (run.sh builds it before its first timed run.)
use polars::prelude::*;
use std::time::Instant;

/// A CSV file as polars reads it: `infer_rows` rows for the types (`None`:
/// every row, as quenchwise does; polars' default, 100, is its fastest read).
fn read_csv(path: &str, infer_rows: Option<usize>) -> PolarsResult<DataFrame> {
    CsvReadOptions::default()
        .with_has_header(true)
        .with_infer_schema_length(infer_rows)
        .try_into_reader_with_file_path(Some(path.into()))?
        .finish()
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        (v[n / 2 - 1] + v[n / 2]) / 2.0
    }
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    // `cargo bench` adds `--bench`; only the paths and the count are ours.
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with("--"))
        .collect();
    let usage = "cargo bench --bench table_floor -- INPUT.csv RESULTS.csv [RUNS]";
    let (input, results, runs) = match args.as_slice() {
        [] => {
            // (A plain `cargo bench` runs every bench: this one has nothing
            // to read then, and is no failure.)
            eprintln!(
                "table_floor: nothing measured; it needs the tables benches/tables/run.sh makes:\n  {usage}"
            );
            return Ok(());
        }
        [i, r] => (i, r, 5),
        [i, r, n] => match n.parse::<usize>() {
            Ok(n) => (i, r, n.max(1)),
            Err(_) => return Err(format!("RUNS must be a whole number, not {n:?}: {usage}").into()),
        },
        _ => return Err(format!("expected two paths and at most a count: {usage}").into()),
    };
    let mut results_frame = read_csv(results, None)?;
    let out =
        std::env::temp_dir().join(format!("quenchwise-table-floor-{}.csv", std::process::id()));
    let (mut read, mut write) = (Vec::new(), Vec::new());
    let mut bytes = 0;
    for _ in 0..runs {
        let t = Instant::now();
        let df = read_csv(input, Some(100))?;
        read.push(t.elapsed().as_secs_f64());
        std::hint::black_box(df.height());
        // Each run writes a new file: truncating the last one would be
        // timed too.
        let _ = std::fs::remove_file(&out);
        let t = Instant::now();
        let mut f = std::fs::File::create(&out)?;
        // (Not synced to disk, where quenchwise syncs: a floor errs low.)
        CsvWriter::new(&mut f).finish(&mut results_frame)?;
        drop(f);
        write.push(t.elapsed().as_secs_f64());
        bytes = std::fs::metadata(&out)?.len();
    }
    std::fs::remove_file(&out)?;
    println!("rows {}", results_frame.height());
    println!("columns_written {}", results_frame.width());
    println!("bytes_written {bytes}");
    println!("read_seconds_median {:.4}", median(read));
    println!("write_seconds_median {:.4}", median(write));
    Ok(())
}
