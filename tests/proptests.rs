//! Issue 14, deliverable 2: property-based tests over the parsers and the
//! numeric chain. For compositions, table cells, CSV tables, linear
//! expressions, recipes, melt cards, model sets and screen configs drawn at
//! random (mostly plausible values mixed with NaN, infinities, zero,
//! negatives, 1e±300 and text that is not a number): nothing panics, and every
//! input that is accepted gives finite outputs all the way to the critical
//! cooling rate, the TTT curve and the glassy slab.
//!
//! The case counts are kept small (48 to 256 per property) so CI stays fast;
//! `PROPTEST_CASES` raises them for a longer hunt. The nastiest cases found
//! are kept in tests/fixtures/hostile/ (run by tests/hostile.rs).

use crate::util::{root, temp_dir};
use proptest::prelude::*;
use proptest::test_runner::Config;
use quenchwise::assess::{evaluate_composition, evaluate_melt, Calibration, SlabQuench};
use quenchwise::composition::expr::parse_linear;
use quenchwise::composition::{Basis, Composition};
use quenchwise::files::melt_card::read_melt_card;
use quenchwise::files::model_set::parse_model_set;
use quenchwise::files::recipe::parse_recipe;
use quenchwise::files::screen_config::load_with_base;
use quenchwise::files::source::Source;
use quenchwise::files::table::{parse_number_cell, read_composition_table, read_csv_text};
use quenchwise::kinetics::KineticOptions;
use quenchwise::units::Kelvin;

fn cases(n: u32) -> Config {
    Config {
        cases: std::env::var("PROPTEST_CASES")
            .ok()
            .and_then(|v| v.parse().ok())
            .unwrap_or(n),
        // Failures are reported with their input; no files in the tree.
        failure_persistence: None,
        ..Config::default()
    }
}

/// The values a hostile or unlucky user types.
const NASTY: [f64; 14] = [
    0.0,
    -0.0,
    -1.0,
    1e-300,
    -1e-300,
    1e300,
    -1e300,
    f64::MAX,
    f64::MIN_POSITIVE,
    f64::NAN,
    f64::INFINITY,
    f64::NEG_INFINITY,
    1e100,
    1e35,
];

/// Mostly a value inside `lo..hi`, sometimes a nasty one, sometimes any f64.
fn value(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
    prop_oneof![
        6 => lo..hi,
        2 => proptest::sample::select(NASTY.to_vec()),
        1 => any::<f64>(),
    ]
}

/// A float as TOML writes it (nan, inf, -inf, or with an exponent).
fn toml_float(v: f64) -> String {
    if v.is_nan() {
        "nan".into()
    } else if v.is_infinite() {
        if v > 0.0 { "inf" } else { "-inf" }.into()
    } else {
        format!("{v:e}")
    }
}

/// Every number in a JSON value is finite and none is null.
fn json_finite(v: &serde_json::Value, at: &str) -> Result<(), String> {
    match v {
        serde_json::Value::Null => Err(format!("{at} is null")),
        serde_json::Value::Number(n) => match n.as_f64() {
            Some(x) if x.is_finite() => Ok(()),
            _ => Err(format!("{at} = {n} is not finite")),
        },
        serde_json::Value::Array(a) => a
            .iter()
            .enumerate()
            .try_for_each(|(i, x)| json_finite(x, &format!("{at}[{i}]"))),
        serde_json::Value::Object(m) => m
            .iter()
            .try_for_each(|(k, x)| json_finite(x, &format!("{at}.{k}"))),
        _ => Ok(()),
    }
}

fn assert_composition_finite(c: &Composition) {
    let sum: f64 = c.fractions().iter().sum();
    assert!((sum - 1.0).abs() < 1e-9, "fractions sum to {sum}");
    for x in c.fractions() {
        assert!(x.is_finite() && *x >= 0.0, "fraction {x}");
    }
    for x in c.mol_percent().iter().chain(c.wt_percent().iter()) {
        assert!(x.is_finite() && *x >= 0.0, "percent {x}");
    }
    let m = c.mean_molar_mass();
    assert!(m.is_finite() && m > 0.0, "molar mass {m}");
    let _ = c.describe();
}

const OXIDE_NAMES: [&str; 14] = [
    "SiO2", "Na2O", "CaO", "Al2O3", "MgO", "K2O", "B2O3", "sio2", "MGO", "Fe2O3", "TiO2", "Cr2O3",
    "", "Na₂O",
];

fn pairs_text() -> impl Strategy<Value = String> {
    proptest::collection::vec(
        (
            proptest::sample::select(OXIDE_NAMES.to_vec()),
            prop_oneof![
                value(0.0, 100.0).prop_map(|v| format!("{v}")),
                "[0-9a-zA-Z.,+eE-]{0,8}",
            ],
            proptest::sample::select(vec![" ", ",", ", ", "  ", "\t", ";"]),
        ),
        0..9,
    )
    .prop_map(|v| {
        v.iter()
            .map(|(o, n, sep)| format!("{o}={n}{sep}"))
            .collect::<String>()
    })
}

/// Amounts that sum to 100 (so most are accepted), one of them sometimes
/// replaced by a nasty value.
fn closed_text() -> impl Strategy<Value = String> {
    (
        proptest::collection::vec(
            (
                proptest::sample::select(OXIDE_NAMES[..7].to_vec()),
                1e-6..1.0f64,
            ),
            1..7,
        ),
        proptest::option::weighted(0.2, proptest::sample::select(NASTY.to_vec())),
    )
        .prop_map(|(v, nasty)| {
            let total: f64 = v.iter().map(|(_, w)| w).sum();
            v.iter()
                .enumerate()
                .map(|(i, (o, w))| {
                    let x = match nasty {
                        Some(n) if i == 0 => n,
                        _ => 100.0 * w / total,
                    };
                    format!("{o}={x} ")
                })
                .collect()
        })
}

proptest! {
    #![proptest_config(cases(256))]

    #[test]
    fn compositions_never_panic_and_accepted_ones_are_finite(
        text in prop_oneof![pairs_text(), closed_text(), ".{0,60}"],
        wt in any::<bool>(),
        tolerance in value(0.0, 10.0),
    ) {
        let basis = if wt { Basis::WtPercent } else { Basis::MolPercent };
        if let Ok(c) = Composition::parse(&text, basis, tolerance) {
            prop_assert!((0.0..=10.0).contains(&tolerance), "tolerance {tolerance} taken");
            assert_composition_finite(&c);
        }
    }

    #[test]
    fn table_cells_are_finite_numbers_or_errors(
        text in prop_oneof![
            "[ 0-9a-zA-Z.,+eE_-]{0,12}",
            any::<f64>().prop_map(|v| format!("{v}")),
            any::<f64>().prop_map(|v| format!("{v:e}")),
        ],
    ) {
        match parse_number_cell(&text) {
            Ok(Some(v)) => prop_assert!(v.is_finite(), "{text:?} read as {v}"),
            Ok(None) => prop_assert!(text.trim().is_empty(), "{text:?} read as empty"),
            Err(m) => prop_assert!(!m.is_empty()),
        }
    }

    #[test]
    fn every_finite_number_written_reads_back_exactly(v in any::<f64>()) {
        let r = parse_number_cell(&format!("{v}"));
        if v.is_finite() {
            prop_assert_eq!(r, Ok(Some(v)));
        } else {
            prop_assert!(r.is_err(), "{v} was taken");
        }
    }

    #[test]
    fn linear_expressions_never_panic_and_give_finite_weights(
        text in prop_oneof![
            "[A-Za-z0-9 +*.()-]{0,40}",
            (proptest::sample::select(OXIDE_NAMES.to_vec()), value(-10.0, 10.0),
             proptest::sample::select(OXIDE_NAMES.to_vec()))
                .prop_map(|(a, k, b)| format!("{a} - {k} * {b}")),
        ],
    ) {
        if let Ok(w) = parse_linear(&text) {
            for x in w {
                prop_assert!(x.is_finite(), "{text:?} gave weight {x}");
            }
        }
    }
}

proptest! {
    #![proptest_config(cases(128))]

    #[test]
    fn recipes_never_panic_and_accepted_ones_are_finite(
        basis in proptest::sample::select(vec!["mol%", "wt%", "ppm", ""]),
        amounts in proptest::collection::vec(
            (proptest::sample::select(OXIDE_NAMES[..12].to_vec()), value(0.0, 100.0)),
            0..6,
        ),
        tolerance in value(0.0, 10.0),
    ) {
        let mut text = format!("basis = \"{basis}\"\n[oxides]\n");
        for (o, v) in &amounts {
            text.push_str(&format!("{o} = {}\n", toml_float(*v)));
        }
        if let Ok(c) = parse_recipe(&Source::new("fuzz.toml", &text), tolerance) {
            assert_composition_finite(&c);
        }
    }

    #[test]
    fn csv_tables_never_panic(text in "[a-zA-Z0-9,.\" \r\n-]{0,200}") {
        let _ = read_csv_text(&text, "fuzz.csv");
    }

    #[test]
    fn composition_tables_never_panic_and_accepted_rows_are_finite(
        header in proptest::collection::vec(
            proptest::sample::select(vec!["SiO2", "Na2O", "CaO", "Al2O3", "MGO", "name", "id", ""]),
            1..6,
        ),
        cells in proptest::collection::vec(
            prop_oneof![
                4 => value(0.0, 80.0).prop_map(|v| format!("{v}")),
                1 => "[0-9a-zA-Z.,\" -]{0,6}",
            ],
            0..24,
        ),
        line_end in proptest::sample::select(vec!["\n", "\r\n", "\r"]),
    ) {
        let d = temp_dir("prop-table");
        let width = header.len();
        let mut text = header.join(",") + line_end;
        for row in cells.chunks(width) {
            text.push_str(&row.join(","));
            text.push_str(line_end);
        }
        let p = d.join("t.csv");
        std::fs::write(&p, &text).unwrap();
        if let Ok((table, _)) = read_composition_table(&p) {
            for pairs in table.rows.iter().flatten() {
                for (_, v) in pairs {
                    prop_assert!(v.is_finite(), "{text:?}: amount {v}");
                }
                if let Ok(c) = Composition::new(pairs, Basis::MolPercent, 2.0) {
                    assert_composition_finite(&c);
                }
            }
        }
    }
}

/// A melt card with the given values (None leaves a key out).
#[allow(clippy::too_many_arguments)]
fn card_text(
    a: f64,
    b: f64,
    c: f64,
    liquidus: f64,
    dh: f64,
    vm: f64,
    alpha: f64,
    nuclei: f64,
    xc: f64,
    screw: bool,
) -> String {
    let f = toml_float;
    format!(
        "[viscosity]\na = {}\nb_k = {}\nc_k = {}\n\n[crystal]\nliquidus_k = {}\n\
         enthalpy_of_fusion_j_per_mol = {}\nmolar_volume_m3_per_mol = {}\n\
         turnbull_alpha = {}\ngrowth = \"{}\"\n\n[kinetics]\n\
         heterogeneous_nuclei_per_m3 = {}\ndetectable_fraction = {}\n",
        f(a),
        f(b),
        f(c),
        f(liquidus),
        f(dh),
        f(vm),
        f(alpha),
        if screw { "screw" } else { "normal" },
        f(nuclei),
        f(xc),
    )
}

/// Mostly a plausible value, now and then a nasty one: a card has nine
/// numbers, and most cards must get through to the kinetics.
fn mostly(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
    prop_oneof![
        24 => lo..hi,
        1 => proptest::sample::select(NASTY.to_vec()),
        1 => any::<f64>(),
    ]
}

#[test]
fn melt_cards_never_panic_and_accepted_ones_give_finite_kinetics() {
    use std::cell::Cell;
    let evaluated = Cell::new(0u32);
    let refused_late = Cell::new(0u32);
    let mut runner = proptest::test_runner::TestRunner::new(cases(64));
    let strategy = (
        (
            mostly(-6.0, 0.0),
            mostly(2000.0, 15000.0),
            mostly(0.0, 900.0),
        ),
        (mostly(900.0, 2200.0), mostly(1e4, 3e5), mostly(1e-5, 3e-4)),
        (mostly(0.15, 0.8), mostly(0.0, 1e12), mostly(1e-8, 1e-2)),
        any::<bool>(),
        mostly(-200.0, 400.0),
    );
    runner
        .run(
            &strategy,
            |((a, b, c), (liquidus, dh, vm), (alpha, nuclei, xc), screw, surface_c)| {
                let text = card_text(a, b, c, liquidus, dh, vm, alpha, nuclei, xc, screw);
                let src = Source::new("fuzz.toml", &text);
                let Ok(card) = read_melt_card(&src, &KineticOptions::default()) else {
                    return Ok(());
                };
                let slab = (surface_c.is_finite() && surface_c > -273.15).then_some(SlabQuench {
                    surface: Kelvin(surface_c + 273.15),
                    diffusivity_m2_per_s: 5e-7,
                });
                match evaluate_melt(&card.melt, &card.options, slab, &Calibration::None) {
                    Err(e) => {
                        refused_late.set(refused_late.get() + 1);
                        // The refusal names the file (and, where it can, the line).
                        let shown = card.locate(e, &card.options).to_string();
                        prop_assert!(shown.contains("fuzz.toml"), "{shown}");
                    }
                    Ok(e) => {
                        evaluated.set(evaluated.get() + 1);
                        prop_assert!(
                            e.critical_rate_k_per_s.is_finite() && e.critical_rate_k_per_s > 0.0,
                            "R_c {} for\n{text}",
                            e.critical_rate_k_per_s
                        );
                        let v = serde_json::to_value(&e).unwrap();
                        if let Err(m) = json_finite(&v, "evaluation") {
                            prop_assert!(false, "{m} for\n{text}");
                        }
                        let k = e.kinetics().unwrap();
                        for p in k.ttt_curve(40) {
                            prop_assert!(p.temperature.0.is_finite());
                            prop_assert!(
                                p.nucleation_per_m3_s.is_finite() || p.time_s.is_infinite()
                            );
                            prop_assert!(
                                !p.time_s.is_nan(),
                                "NaN time on the TTT curve of\n{text}"
                            );
                        }
                    }
                }
                Ok(())
            },
        )
        .unwrap();
    // Not vacuous: a good share of the cards reached the kinetics.
    eprintln!(
        "melt cards: {} evaluated, {} refused by the kinetics",
        evaluated.get(),
        refused_late.get()
    );
    assert!(
        evaluated.get() >= 8,
        "only {} cards evaluated",
        evaluated.get()
    );
}

#[test]
fn a_card_whose_interface_energy_overflows_has_no_nan_on_its_ttt_curve() {
    // Found by the property above in a longer hunt: σ³ overflows, and at
    // large undercooling so does ΔG² T, so the barrier came out as ∞ · 0 =
    // NaN. The whole curve, from the freeze temperature to the liquidus.
    let path = root().join("tests/fixtures/hostile/card-enthalpy-1e153-with-nuclei.toml");
    let text = std::fs::read_to_string(&path).unwrap();
    let card =
        read_melt_card(&Source::new("card.toml", &text), &KineticOptions::default()).unwrap();
    let e = evaluate_melt(&card.melt, &card.options, None, &Calibration::None).unwrap();
    let k = e.kinetics().unwrap();
    for p in k.ttt_curve(40) {
        assert!(
            !p.time_s.is_nan() && p.nucleation_per_m3_s.is_finite(),
            "at {} K: time {} s, I {}",
            p.temperature.0,
            p.time_s,
            p.nucleation_per_m3_s
        );
    }
}

/// The numbers of a file (after `=`, or inside `{ ... }` and `[ ... ]`), as
/// byte ranges, for replacing one at random.
fn number_spans(text: &str) -> Vec<std::ops::Range<usize>> {
    let bytes = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < bytes.len() {
        let c = bytes[i];
        let starts = (c.is_ascii_digit() || c == b'-')
            && i > 0
            && matches!(bytes[i - 1], b' ' | b'[' | b'=');
        if starts {
            let j = (i + 1..bytes.len())
                .find(|&j| {
                    !matches!(
                        bytes[j],
                        b'0'..=b'9' | b'.' | b'e' | b'E' | b'-' | b'+' | b'_'
                    )
                })
                .unwrap_or(bytes.len());
            let line_start = text[..i].rfind('\n').map_or(0, |p| p + 1);
            let comment = text[line_start..i].contains('#');
            let quoted = text[line_start..i].matches('"').count() % 2 == 1;
            if !comment && !quoted && text[i..j].chars().any(|c| c.is_ascii_digit()) {
                out.push(i..j);
            }
            i = j;
        } else {
            i += 1;
        }
    }
    out
}

fn replacement() -> impl Strategy<Value = String> {
    prop_oneof![
        proptest::sample::select(NASTY.to_vec()).prop_map(toml_float),
        proptest::sample::select(vec![
            "18446744073709551615".to_string(),
            "0".into(),
            "-1".into(),
            "1".into(),
            "1e-9".into(),
        ]),
        any::<f64>().prop_map(toml_float),
    ]
}

fn with_replaced(text: &str, pick: proptest::sample::Index, new: &str) -> String {
    let spans = number_spans(text);
    let s = spans[pick.index(spans.len())].clone();
    format!("{}{}{}", &text[..s.start], new, &text[s.end..])
}

proptest! {
    #![proptest_config(cases(48))]

    #[test]
    fn model_sets_never_panic_and_accepted_ones_give_finite_evaluations(
        pick in any::<proptest::sample::Index>(),
        new in replacement(),
        (si, na, ca) in (66.0..78.0f64, 10.0..18.0f64, 6.0..12.0f64),
    ) {
        let base = std::fs::read_to_string(root().join("configs/models/demo-soda-lime.toml")).unwrap();
        let text = with_replaced(&base, pick, &new);
        let Ok(models) = parse_model_set(&Source::new("fuzz.toml", &text)) else {
            return Ok(());
        };
        let al = 100.0 - si - na - ca;
        let Ok(comp) = Composition::parse(
            &format!("SiO2={si} Na2O={na} CaO={ca} Al2O3={}", al.max(0.0)),
            Basis::MolPercent,
            10.0,
        ) else {
            return Ok(());
        };
        let slab = Some(SlabQuench::default());
        if let Ok(e) = evaluate_composition(&models, &comp, &KineticOptions::default(), slab, &Calibration::None) {
            let v = serde_json::to_value(&e).unwrap();
            if let Err(m) = json_finite(&v, "evaluation") {
                prop_assert!(false, "{m} with {new} in the model set");
            }
            prop_assert!(e.critical_rate_k_per_s > 0.0);
        }
    }

    #[test]
    fn screen_configs_never_panic_and_accepted_ones_are_in_range(
        pick in any::<proptest::sample::Index>(),
        new in replacement(),
    ) {
        let base = std::fs::read_to_string(root().join("configs/demo-screen.toml")).unwrap();
        let text = with_replaced(&base, pick, &new);
        let d = temp_dir("prop-config");
        let p = d.join("screen.toml");
        std::fs::write(&p, &text).unwrap();
        if let Ok(plan) = load_with_base(&p, Some(&root().join("configs"))) {
            let s = &plan.search;
            prop_assert!((1..=50_000_000).contains(&s.first_pass_points));
            prop_assert!((1..=1_000_000).contains(&s.chunk_size));
            prop_assert!(s.refine_from <= 1000 && s.refine_iterations <= 100_000);
            let p = &plan.problem;
            prop_assert!((1..=1000).contains(&p.shortlist_size));
            prop_assert!(p.min_distance_mol_pct.is_finite() && p.min_distance_mol_pct >= 0.0);
            for (_, lo, hi) in &p.oxides {
                prop_assert!(lo.is_finite() && hi.is_finite() && lo <= hi);
            }
            prop_assert!(p.allowed_rate().0.is_finite() && p.allowed_rate().0 > 0.0);
        }
    }
}

#[test]
fn the_number_finder_sees_the_numbers_of_the_demo_files() {
    // The mutation properties above are only as good as this: they must be
    // able to reach the coefficients, the counts and the limits.
    let m = std::fs::read_to_string(root().join("configs/models/demo-soda-lime.toml")).unwrap();
    let found: Vec<&str> = number_spans(&m).into_iter().map(|s| &m[s]).collect();
    for v in ["-2.45", "6464.0", "150000.0", "0.167", "1311.66"] {
        assert!(found.contains(&v), "{v} not found in {found:?}");
    }
    let c = std::fs::read_to_string(root().join("configs/demo-screen.toml")).unwrap();
    let found: Vec<&str> = number_spans(&c).into_iter().map(|s| &c[s]).collect();
    for v in ["8192", "512", "2.0", "0.40"] {
        assert!(found.contains(&v), "{v} not found in {found:?}");
    }
}
