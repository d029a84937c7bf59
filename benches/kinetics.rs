//! Time per candidate: the melt-card kinetics alone, and the full chain
//! composition → properties → melt → nose and critical cooling rate, at the
//! default quadrature (≤ 0.1 % R_c error, see tests/kinetics_reference.rs), and
//! the batch cost function the screen calls for every candidate, and one chunk
//! of the demo screen (candidates per second on all cores).
//!
//! Run: cargo bench --bench kinetics

use criterion::{criterion_group, criterion_main, Criterion};
use quenchwise::assess::{evaluate_composition, Calibration};
use quenchwise::composition::{Basis, Composition};
use quenchwise::files::model_set::{parse_model_set, DEMO_MODELS};
use quenchwise::files::source::Source;
use quenchwise::kinetics::{KineticOptions, Kinetics, Melt};
use std::hint::black_box;

/// The shipped demo melt card (demo-datasets/melt-card.toml).
fn card() -> Melt {
    let text = std::fs::read_to_string("demo-datasets/melt-card.toml").unwrap();
    let src = quenchwise::files::source::Source::new("demo-datasets/melt-card.toml", &text);
    quenchwise::files::melt_card::parse_melt_card(&src, &KineticOptions::default())
        .unwrap()
        .0
}

fn benches(c: &mut Criterion) {
    let opts = KineticOptions::default();
    let m = card();
    let mut g = c.benchmark_group("melt_card");
    g.bench_function("critical_rate", |b| {
        b.iter(|| {
            Kinetics::new(black_box(&m), &opts)
                .unwrap()
                .critical_rate()
                .unwrap()
        })
    });
    g.bench_function("nose_and_critical_rate", |b| {
        b.iter(|| {
            Kinetics::new(black_box(&m), &opts)
                .unwrap()
                .analyse()
                .unwrap()
        })
    });
    // The thickest glassy slab beside the summary (what `eval` reports for a
    // melt card): afresh, and from the constant-rate panels.
    let (ts, kappa) = (quenchwise::units::Kelvin(298.15), 5e-7);
    g.bench_function("nose_critical_rate_and_slab_afresh", |b| {
        b.iter(|| {
            let k = Kinetics::new(black_box(&m), &opts).unwrap();
            (
                k.analyse().unwrap(),
                k.max_glassy_half_thickness_m(ts, kappa).unwrap(),
            )
        })
    });
    g.bench_function("nose_critical_rate_and_slab_from_its_panels", |b| {
        b.iter(|| {
            Kinetics::new(black_box(&m), &opts)
                .unwrap()
                .analyse_with_slab(ts, kappa)
                .unwrap()
        })
    });
    g.finish();

    let models = parse_model_set(&Source::new("demo", DEMO_MODELS)).unwrap();
    let comp =
        Composition::parse("SiO2=72 Na2O=14 CaO=10 Al2O3=4", Basis::MolPercent, 2.0).unwrap();
    let mut g = c.benchmark_group("composition");
    g.bench_function("properties_nose_and_critical_rate", |b| {
        b.iter(|| {
            let p = models.properties(black_box(&comp)).unwrap();
            let melt = quenchwise::assess::composition_melt(&models, &p).unwrap();
            Kinetics::new(&melt, &opts).unwrap().analyse().unwrap()
        })
    });
    g.bench_function("full_evaluation_with_slab", |b| {
        b.iter(|| {
            evaluate_composition(
                &models,
                black_box(&comp),
                &opts,
                Some(Default::default()),
                &Calibration::None,
            )
            .unwrap()
        })
    });
    g.finish();

    // Cost of the least-cost batch per kg of glass, demo shelf (17 raw materials).
    let cost = quenchwise::batch::CostModel {
        raws: quenchwise::files::raw_materials::read_raw_materials(None).unwrap(),
        settings: Default::default(),
    };
    let mut g = c.benchmark_group("batch");
    g.bench_function("cost_per_kg_glass_demo_shelf", |b| {
        b.iter(|| cost.cost_per_kg_glass(black_box(&comp)).unwrap())
    });
    g.finish();

    // One 512-candidate chunk of the demo screen's space-filling pass, each
    // candidate fully judged (properties, kinetics, batch cost, every limit),
    // on all cores: candidates per second = 512 / time.
    let plan =
        quenchwise::files::screen_config::load(std::path::Path::new("configs/demo-screen.toml"))
            .unwrap();
    let simplex = quenchwise::screen::Simplex::new(&plan.problem);
    let mut g = c.benchmark_group("screen");
    g.sample_size(20);
    g.bench_function("demo_chunk_of_512_candidates_all_cores", |b| {
        b.iter(|| {
            quenchwise::screen::space_filling_chunk(
                &plan.problem,
                &plan.search,
                &simplex,
                black_box(3),
            )
        })
    });
    g.finish();
}

criterion_group!(kinetics, benches);
criterion_main!(kinetics);
