//! The floor under the table benchmark (benches/tables/run.sh): the part of
//! `eval --melt-cards` that no evaluation can make faster. It reads the
//! input CSV and writes a results table that `eval` wrote, with polars
//! alone and nothing computed, at polars' own thread count (all cores).
//!
//! Prints the median seconds of each over RUNS runs, and of their sum per
//! run: the least any process could take that reads this input and writes these
//! results with this library, on this machine, at this moment.
//!
//! Usage: cargo bench --bench table_floor -- INPUT.csv RESULTS.csv [RUNS]
//! (run.sh calls the built binary directly).
use polars::prelude::*;
use std::time::Instant;

/// Polars' fastest plain read: its default type inference (the first 100
/// rows), where quenchwise infers over every row.
fn read_csv(path: &std::path::Path) -> PolarsResult<DataFrame> {
    CsvReadOptions::default()
        .with_has_header(true)
        .try_into_reader_with_file_path(Some(path.to_path_buf()))?
        .finish()
}

/// The results as `eval` wrote them, every column typed.
fn read_results(path: &std::path::Path) -> PolarsResult<DataFrame> {
    CsvReadOptions::default()
        .with_has_header(true)
        .with_infer_schema_length(None)
        .try_into_reader_with_file_path(Some(path.to_path_buf()))?
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
    let [input, results, rest @ ..] = args.as_slice() else {
        // (A plain `cargo bench` runs every bench: this one has nothing to
        // read then, and is no failure.)
        eprintln!(
            "table_floor: nothing measured; it needs the tables benches/tables/run.sh makes:\n  \
             cargo bench --bench table_floor -- INPUT.csv RESULTS.csv [RUNS]"
        );
        return Ok(());
    };
    let runs: usize = rest.first().map_or(Ok(5), |r| r.parse())?;
    let mut results_frame = read_results(results.as_ref())?;
    let out =
        std::env::temp_dir().join(format!("quenchwise-table-floor-{}.csv", std::process::id()));
    let (mut read, mut write) = (Vec::new(), Vec::new());
    for _ in 0..runs.max(1) {
        let t = Instant::now();
        let df = read_csv(input.as_ref())?;
        read.push(t.elapsed().as_secs_f64());
        std::hint::black_box(df.height());
        let t = Instant::now();
        let mut f = std::fs::File::create(&out)?;
        // (Not synced to disk, where quenchwise syncs: a floor errs low.)
        CsvWriter::new(&mut f).finish(&mut results_frame)?;
        write.push(t.elapsed().as_secs_f64());
    }
    let bytes = std::fs::metadata(&out)?.len();
    std::fs::remove_file(&out)?;
    let both: Vec<f64> = read.iter().zip(&write).map(|(r, w)| r + w).collect();
    let (r, w, f) = (median(read), median(write), median(both));
    println!("rows {}", results_frame.height());
    println!("columns_written {}", results_frame.width());
    println!("bytes_written {bytes}");
    println!("read_seconds_median {r:.4}");
    println!("write_seconds_median {w:.4}");
    println!("floor_seconds_median {f:.4}");
    Ok(())
}
