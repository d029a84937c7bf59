//! Speed of the screen's first pass, as a user runs it: the demo config
//! (configs/demo-screen.toml), every chunk of its space-filling pass evaluated
//! and flattened to rows (what `screen` stores), on 1 and on 2 threads, in
//! candidates per second; and its pieces: the kinetics of one melt card phase,
//! the batch cost of one candidate (kept basis and full programme), the whole
//! chain for one candidate.
//!
//! Each figure is the median of several runs in this one process; the ratio
//! of 2 to 1 threads comes from the same process. The anchors printed beside
//! the figures are what issue 12 measured before this work and the targets it
//! sets. The machine is shared: compare the figures of one run, and expect
//! a few % of noise between runs (the min–max of the repeats is printed).
//!
//! Run: cargo bench --bench screen_speed
//! (QUENCHWISE_BENCH_POINTS=N overrides the number of first-pass points.)

use quenchwise::assess::{evaluate_composition, Calibration};
use quenchwise::composition::{Basis, Composition};
use quenchwise::error::Error;
use quenchwise::kinetics::{KineticOptions, Kinetics};
use quenchwise::screen::{run_chunks, Row, ScreenStore, Unobserved};
use std::hint::black_box;
use std::time::Instant;

/// A store that keeps nothing: the first pass alone, no disk.
struct Discard;
impl ScreenStore for Discard {
    fn has_chunk(&self, _k: usize) -> bool {
        false
    }
    fn load_chunk(&mut self, _k: usize) -> Result<Option<Vec<Row>>, Error> {
        Ok(None)
    }
    fn save_chunk(&mut self, _k: usize, rows: &[Row]) -> Result<(), Error> {
        black_box(rows);
        Ok(())
    }
    fn load_refined(&mut self, _i: usize) -> Result<Option<Row>, Error> {
        Ok(None)
    }
    fn save_refined(&mut self, _i: usize, _row: &Row) -> Result<(), Error> {
        Ok(())
    }
}

/// Median, min and max of `runs` timings of `f`, in seconds.
fn time(runs: usize, mut f: impl FnMut()) -> (f64, f64, f64) {
    let mut t: Vec<f64> = (0..runs)
        .map(|_| {
            let s = Instant::now();
            f();
            s.elapsed().as_secs_f64()
        })
        .collect();
    t.sort_by(f64::total_cmp);
    (t[t.len() / 2], t[0], t[t.len() - 1])
}

/// Seconds per call of `f`, median over `runs` batches of `n` calls.
fn per_call(runs: usize, n: usize, mut f: impl FnMut()) -> (f64, f64, f64) {
    let (m, lo, hi) = time(runs, || {
        for _ in 0..n {
            f();
        }
    });
    (m / n as f64, lo / n as f64, hi / n as f64)
}

fn main() {
    // `cargo bench` passes --bench; nothing else is read from the command line.
    let mut plan =
        quenchwise::files::screen_config::load(std::path::Path::new("configs/demo-screen.toml"))
            .expect("the demo config loads");
    if let Some(n) = std::env::var("QUENCHWISE_BENCH_POINTS")
        .ok()
        .and_then(|v| v.parse().ok())
    {
        plan.search.first_pass_points = n;
    }
    let problem = &plan.problem;
    let search = &plan.search;
    let points = search.first_pass_points;
    let chunks = quenchwise::screen::chunk_count(search);
    println!("screen first pass, configs/demo-screen.toml: {points} candidates in {chunks} chunks");
    println!("  anchors: before this work ~10 000 candidates/s on 1 thread and no faster on 2 (issue 12);");
    println!("           target >= 100 000 candidates/s on 2 threads");
    let mut rates = Vec::new();
    for threads in [1, 2] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .expect("a thread pool");
        let mut pass = || {
            pool.install(|| {
                run_chunks(problem, search, 0..chunks, &mut Discard, &mut Unobserved)
                    .expect("the first pass runs")
            });
        };
        pass(); // warm-up (page faults, kept bases)
        let (m, lo, hi) = time(5, &mut pass);
        let rate = points as f64 / m;
        rates.push(rate);
        println!(
            "  {threads} thread(s): {rate:>9.0} candidates/s  (median of 5 passes: {m:.3} s; range {lo:.3}-{hi:.3} s)"
        );
    }
    println!(
        "  2 threads / 1 thread: {:.2} (ideal 2.00 on this 2-core machine)",
        rates[1] / rates[0]
    );

    println!("pieces, 1 thread (median of 7 batches):");
    let opts = KineticOptions::default();
    let text = std::fs::read_to_string("demo-datasets/melt-card.toml").expect("the demo card");
    let src = quenchwise::files::source::Source::new("demo-datasets/melt-card.toml", &text);
    let (melt, _) = quenchwise::files::melt_card::parse_melt_card(&src, &opts).expect("card");
    let phases = melt.phases.len().max(1);
    let (m, lo, hi) = per_call(7, 2000, || {
        black_box(
            Kinetics::new(black_box(&melt), &opts)
                .unwrap()
                .critical_rate()
                .unwrap(),
        );
    });
    println!(
        "  kinetics, critical rate per phase (demo melt card, {phases} phase): {:.2} µs  (range {:.2}-{:.2}; anchors: 4.4 µs per melt before, target <= 2 µs)",
        m * 1e6 / phases as f64,
        lo * 1e6 / phases as f64,
        hi * 1e6 / phases as f64
    );
    let comp = Composition::parse("SiO2=72 Na2O=14 CaO=10 Al2O3=4", Basis::MolPercent, 2.0)
        .expect("composition");
    let models = &problem.models;
    let (m, lo, hi) = per_call(7, 500, || {
        black_box(
            evaluate_composition(
                models,
                black_box(&comp),
                &problem.kinetic_options,
                None,
                &Calibration::None,
            )
            .unwrap(),
        );
    });
    println!(
        "  whole chain for one candidate (properties, all phases, nose, R_c): {:.2} µs  (range {:.2}-{:.2})",
        m * 1e6,
        lo * 1e6,
        hi * 1e6
    );
    if let Some(cost) = &problem.cost {
        let model = &cost.model;
        // Nearby compositions, as a screen visits them: the kept basis answers.
        let glasses: Vec<Composition> = (0..64)
            .map(|j| {
                let na = 14.0 + 0.02 * j as f64;
                Composition::parse(
                    &format!("SiO2={} Na2O={na} CaO=10 Al2O3=4", 72.0 - 0.02 * j as f64),
                    Basis::MolPercent,
                    2.0,
                )
                .expect("composition")
            })
            .collect();
        let (m, lo, hi) = per_call(7, 100, || {
            for g in &glasses {
                black_box(model.cost_per_kg_glass(black_box(g)).unwrap());
            }
        });
        println!(
            "  batch cost per candidate (demo shelf, as the screen calls it): {:.2} µs  (range {:.2}-{:.2})",
            m * 1e6 / 64.0,
            lo * 1e6 / 64.0,
            hi * 1e6 / 64.0
        );
    }
    let raws = quenchwise::files::raw_materials::read_raw_materials(None).expect("demo shelf");
    let (m, lo, hi) = per_call(7, 200, || {
        black_box(
            quenchwise::batch::least_cost_batch(&raws, black_box(&comp), 1.0, &Default::default())
                .unwrap(),
        );
    });
    println!(
        "  full batch programme (good_lp/microlp, a batch sheet, demo shelf): {:.2} µs  (range {:.2}-{:.2})",
        m * 1e6,
        lo * 1e6,
        hi * 1e6
    );
}
