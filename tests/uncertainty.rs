//! `eval --uncertainty` and the library's Monte Carlo against answers known
//! in closed form: with only one input uncertain and R_c monotone in it,
//! P(R_c ≤ R) and the quantiles of R_c follow from the input's own
//! distribution through the root α* (or N*) of R_c = R.
//!
//! The melt is the demo melt card (invented numbers).

use crate::tolerances::MONTE_CARLO_STANDARD_ERRORS;
use crate::util::{root, run_in, temp_dir};
use quenchwise::files::melt_card::parse_melt_card_spreads;
use quenchwise::files::source::Source;
use quenchwise::kinetics::{KineticOptions, Kinetics, Melt};
use quenchwise::properties::{GrowthMode, Interface, ViscosityCurve};
use quenchwise::uncertainty::melt::{inputs_of, melt_critical_rate, melt_inputs, MeltSpreads};
use quenchwise::uncertainty::{propagate, Propagation, Settings};
use quenchwise::units::Kelvin;
use statrs::distribution::{Continuous, ContinuousCDF, Normal};

const MU: f64 = 0.33;

/// The demo melt card's melt (invented numbers) with α.
fn melt(alpha: f64) -> Melt {
    Melt::new(
        ViscosityCurve::vft(-2.8, 4500.0, 480.0).unwrap(),
        Kelvin(1300.0),
        60_000.0,
        6.0e-5,
        Interface::TurnbullAlpha(alpha),
        GrowthMode::Normal,
    )
    .unwrap()
}

fn rc(alpha: f64, nuclei: f64) -> f64 {
    let opts = KineticOptions {
        heterogeneous_nuclei_per_m3: nuclei,
        ..KineticOptions::default()
    };
    Kinetics::new(&melt(alpha), &opts)
        .unwrap()
        .critical_rate()
        .unwrap()
        .0
}

/// The root of f on [lo, hi] by bisection (f changes sign there).
fn bisect(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64) -> f64 {
    let flo = f(lo);
    assert!(flo * f(hi) < 0.0, "no sign change on [{lo}, {hi}]");
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if (f(mid) > 0.0) == (flo > 0.0) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}

fn run(spreads: &MeltSpreads, nuclei: f64, draws: usize, seed: u64, quench: f64) -> Propagation {
    let m = melt(MU);
    let opts = KineticOptions {
        heterogeneous_nuclei_per_m3: nuclei,
        ..KineticOptions::default()
    };
    let inputs = melt_inputs(&m, spreads).unwrap();
    propagate(
        &inputs_of(&inputs),
        Settings { draws, seed },
        Some(quench),
        |v| melt_critical_rate(&m, &opts, &inputs, v),
    )
    .unwrap()
}

fn alpha_spread(sd: f64) -> MeltSpreads {
    MeltSpreads {
        turnbull_alpha_sd: vec![Some(sd)],
        interface_energy_sd_j_per_m2: vec![None],
        nuclei_range_per_m3: None,
    }
}

#[test]
fn alpha_alone_gives_the_closed_form_probability_and_quantiles() {
    let (s, n) = (0.01, 2000);
    // The premise: R_c falls as α rises (a larger barrier), strictly.
    let grid: Vec<f64> = (0..=8)
        .map(|i| rc(MU - 4.0 * s + i as f64 * s, 0.0))
        .collect();
    assert!(grid.windows(2).all(|w| w[1] < w[0]), "{grid:?}");
    // A quench rate a third of R_c at the mean α.
    let quench = rc(MU, 0.0) / 3.0;
    let alpha_star = bisect(
        |a| rc(a, 0.0).log10() - quench.log10(),
        MU - 6.0 * s,
        MU + 6.0 * s,
    );
    let normal = Normal::standard();
    // Source: R_c decreasing in α, so {R_c ≤ R} = {α ≥ α*} and
    // P = 1 − Φ((α* − μ)/s) (monotone transform of a normal variable;
    // standard probability). Φ from statrs.
    let exact = 1.0 - normal.cdf((alpha_star - MU) / s);
    assert!(
        exact > 0.05 && exact < 0.95,
        "{exact}: the check would be weak"
    );
    let p = run(&alpha_spread(s), 0.0, n, 7, quench);
    let got = p.probability_glassy.unwrap();
    let se = (exact * (1.0 - exact) / n as f64).sqrt();
    assert!(
        (got - exact).abs() <= MONTE_CARLO_STANDARD_ERRORS * se,
        "Monte Carlo {got} vs closed form {exact} (SE {se})"
    );
    assert_eq!(p.failed_draws, 0);
    // Source: quantiles map through a decreasing transform as
    // q_p(R_c) = R_c(q_{1−p}(α)), q_{1−p}(α) = μ + s Φ⁻¹(1 − p) (standard
    // probability). The sample p-quantile of α has standard error
    // s √(p(1 − p)/n)/φ(z) (asymptotic normality of order statistics;
    // standard), carried to log10 R_c by the local slope.
    for (pp, got) in [
        (0.05, p.critical_rate_p05_k_per_s),
        (0.50, p.critical_rate_p50_k_per_s),
        (0.95, p.critical_rate_p95_k_per_s),
    ] {
        let z = normal.inverse_cdf(1.0 - pp);
        let a = MU + s * z;
        let want = rc(a, 0.0).log10();
        let h = 1e-4;
        let slope = (rc(a + h, 0.0).log10() - rc(a - h, 0.0).log10()) / (2.0 * h);
        let se_alpha = s * (pp * (1.0 - pp) / n as f64).sqrt() / normal.pdf(z);
        let tol = MONTE_CARLO_STANDARD_ERRORS * slope.abs() * se_alpha;
        assert!(
            (got.log10() - want).abs() <= tol,
            "quantile {pp}: {} vs {want} (tolerance {tol})",
            got.log10()
        );
    }
    assert!(
        (p.variance_shares[0].share - 1.0).abs() < 0.02,
        "{:?}",
        p.variance_shares
    );
}

#[test]
fn nuclei_range_alone_gives_the_log_uniform_probability() {
    let (lo, hi, n) = (1e6, 1e12, 1000);
    let (r_lo, r_hi) = (rc(MU, lo), rc(MU, hi));
    assert!(
        r_hi > r_lo,
        "pre-existing nuclei must raise R_c: {r_lo} {r_hi}"
    );
    let quench = (r_lo * r_hi).sqrt();
    let ln_star = bisect(
        |ln_n| rc(MU, ln_n.exp()).ln() - quench.ln(),
        lo.ln(),
        hi.ln(),
    );
    // Source: R_c rises with N_h, so {R_c ≤ R} = {N_h ≤ N*}; for ln N_h
    // uniform on [ln lo, ln hi], P = (ln N* − ln lo)/(ln hi − ln lo)
    // (standard probability).
    let exact = (ln_star - lo.ln()) / (hi.ln() - lo.ln());
    let spreads = MeltSpreads {
        nuclei_range_per_m3: Some((lo, hi)),
        ..MeltSpreads::default()
    };
    let p = run(&spreads, 0.0, n, 5, quench);
    let got = p.probability_glassy.unwrap();
    let se = (exact * (1.0 - exact) / n as f64).sqrt();
    assert!(
        (got - exact).abs() <= MONTE_CARLO_STANDARD_ERRORS * se,
        "Monte Carlo {got} vs closed form {exact} (SE {se})"
    );
    // Source: the median of a log-uniform variable is √(lo·hi), mapped
    // through the increasing R_c(N_h) (standard probability).
    let want = rc(MU, (lo * hi).sqrt()).log10();
    assert!(
        (p.critical_rate_p50_k_per_s.log10() - want).abs() < 0.05 * (r_hi / r_lo).log10(),
        "{} vs {want}",
        p.critical_rate_p50_k_per_s.log10()
    );
}

/// Gauss quadrature nodes and weights (weights summing to 1) of the
/// probability measure whose monic orthogonal polynomials have recurrence
/// coefficients a_k = 0 and b_k = `offdiag(k)`² (k = 1..n−1), from the
/// eigen-decomposition of the Jacobi matrix: the Golub–Welsch algorithm
/// (G. H. Golub, J. H. Welsch, "Calculation of Gauss quadrature rules",
/// Math. Comp. 23 (1969) 221–230, doi:10.2307/2004418).
fn gauss_rule(n: usize, offdiag: impl Fn(usize) -> f64) -> Vec<(f64, f64)> {
    let j = nalgebra::DMatrix::from_fn(n, n, |r, c| {
        if r + 1 == c {
            offdiag(c)
        } else if c + 1 == r {
            offdiag(r)
        } else {
            0.0
        }
    });
    let e = j.symmetric_eigen();
    (0..n)
        .map(|k| (e.eigenvalues[k], e.eigenvectors[(0, k)].powi(2)))
        .collect()
}

/// First-order shares of α (normal) and N_h (log-uniform) of the demo melt
/// by tensor Gauss quadrature of the definition S_X = Var(E[Y | X]) / Var Y,
/// Y = log10 R_c: Gauss–Hermite in α (probabilists' Hermite, b_k = k) and
/// Gauss–Legendre in ln N_h (b_k = k²/(4k² − 1)), `n` nodes each.
fn shares_by_quadrature(mu: f64, s: f64, lo: f64, hi: f64, n: usize) -> (f64, f64) {
    let hermite = gauss_rule(n, |k| (k as f64).sqrt());
    let legendre = gauss_rule(n, |k| {
        let k = k as f64;
        k / (4.0 * k * k - 1.0).sqrt()
    });
    let (la, lb) = (lo.ln(), hi.ln());
    let y: Vec<Vec<f64>> = hermite
        .iter()
        .map(|&(z, _)| {
            legendre
                .iter()
                .map(|&(x, _)| rc(mu + s * z, (la + (x + 1.0) / 2.0 * (lb - la)).exp()).log10())
                .collect()
        })
        .collect();
    let mean = |w: &[(f64, f64)], v: &dyn Fn(usize) -> f64| {
        w.iter()
            .enumerate()
            .map(|(i, &(_, wi))| wi * v(i))
            .sum::<f64>()
    };
    let total = mean(&hermite, &|i| mean(&legendre, &|j| y[i][j]));
    let var = mean(&hermite, &|i| {
        mean(&legendre, &|j| (y[i][j] - total).powi(2))
    });
    let by_alpha = mean(&hermite, &|i| {
        (mean(&legendre, &|j| y[i][j]) - total).powi(2)
    });
    let by_nuclei = mean(&legendre, &|j| {
        (mean(&hermite, &|i| y[i][j]) - total).powi(2)
    });
    (by_alpha / var, by_nuclei / var)
}

#[test]
fn variance_shares_of_alpha_and_nuclei_match_the_definition_by_quadrature() {
    // α = 0.29 ± 0.02 and N_h log-uniform on [10, 10⁵] m⁻³ on the demo melt
    // (invented numbers): chosen so that the homogeneous nucleation (set by
    // α) and the growth on pre-existing nuclei (set by N_h) both decide
    // R_c, so both shares are large and R_c is not additive in them.
    let (mu, s, lo, hi) = (0.29, 0.02, 1e1, 1e5);
    // Source: the first-order index is S_X = Var(E[Y | X]) / Var Y (Sobol'
    // 1993; Saltelli et al., "Global Sensitivity Analysis: The Primer",
    // Wiley 2008), computed here by Gauss quadrature (Golub & Welsch 1969)
    // instead of from draws. Two orders agree, so the quadrature has
    // converged.
    let (qa, qn) = shares_by_quadrature(mu, s, lo, hi, 24);
    let (qa16, qn16) = shares_by_quadrature(mu, s, lo, hi, 16);
    assert!(
        (qa - qa16).abs() < 2e-3 && (qn - qn16).abs() < 2e-3,
        "quadrature not converged: {qa} {qa16}, {qn} {qn16}"
    );
    assert!(qa > 0.2 && qn > 0.2 && qa + qn < 0.97, "{qa} {qn}");
    let spreads = MeltSpreads {
        turnbull_alpha_sd: vec![Some(s)],
        interface_energy_sd_j_per_m2: vec![None],
        nuclei_range_per_m3: Some((lo, hi)),
    };
    let m = melt(mu);
    let opts = KineticOptions::default();
    let inputs = melt_inputs(&m, &spreads).unwrap();
    let p = propagate(
        &inputs_of(&inputs),
        Settings {
            draws: 4000,
            seed: quenchwise::uncertainty::DEFAULT_SEED,
        },
        None,
        |v| melt_critical_rate(&m, &opts, &inputs, v),
    )
    .unwrap();
    let names: Vec<&str> = p.variance_shares.iter().map(|s| s.input.as_str()).collect();
    assert_eq!(
        names,
        ["turnbull_alpha of crystal", "heterogeneous_nuclei_per_m3"]
    );
    // The binned estimator from 4000 draws scatters by about 0.012 between
    // seeds (measured on a linear model, src/uncertainty/mod.rs); four of
    // those.
    for (got, want) in [
        (p.variance_shares[0].share, qa),
        (p.variance_shares[1].share, qn),
    ] {
        assert!(
            (got - want).abs() < 0.05,
            "{:?} vs quadrature {qa:.4}, {qn:.4}",
            p.variance_shares
        );
    }
}

#[test]
fn zero_spread_gives_the_point_estimate_in_every_draw() {
    // Source: a normal with sd 0 is the constant μ (standard probability).
    let p = run(&alpha_spread(0.0), 0.0, 50, 1, 1.0);
    let point = rc(MU, 0.0);
    assert_eq!(p.log10_critical_rate_sd, 0.0);
    for q in [
        p.critical_rate_p05_k_per_s,
        p.critical_rate_p50_k_per_s,
        p.critical_rate_p95_k_per_s,
    ] {
        assert!((q / point - 1.0).abs() < 1e-12, "{q} vs {point}");
    }
    assert_eq!(p.variance_shares[0].share, 0.0);
}

#[test]
fn the_same_seed_gives_the_same_numbers_at_any_thread_count() {
    let spreads = MeltSpreads {
        turnbull_alpha_sd: vec![Some(0.01)],
        interface_energy_sd_j_per_m2: vec![None],
        nuclei_range_per_m3: Some((1e6, 1e10)),
    };
    let at = |threads: usize, seed: u64| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| run(&spreads, 0.0, 120, seed, 1.0))
    };
    let one = at(1, 9);
    let three = at(3, 9);
    assert_eq!(one, three);
    assert_eq!(one.log10_rates.len(), 120);
    assert_ne!(one.log10_rates, at(2, 10).log10_rates);
}

#[test]
fn melt_card_spreads_are_read_and_bad_ones_named_by_line() {
    let card = std::fs::read_to_string(root().join("demo-datasets/melt-card.toml")).unwrap();
    let text = card.replace(
        "heterogeneous_nuclei_per_m3 = 0.0",
        "heterogeneous_nuclei_per_m3 = [1e6, 1e12]",
    );
    assert_ne!(text, card);
    let (_, opts, spreads) =
        parse_melt_card_spreads(&Source::new("card.toml", &text), &KineticOptions::default())
            .unwrap();
    assert_eq!(spreads.nuclei_range_per_m3, Some((1e6, 1e12)));
    assert!(spreads.turnbull_alpha_sd[0].is_some());
    // The point estimate counts the range's median (its geometric mean).
    assert!((opts.heterogeneous_nuclei_per_m3 / 1e9 - 1.0).abs() < 1e-12);
    let line_of = |t: &str, needle: &str| t.lines().position(|l| l.contains(needle)).unwrap() + 1;
    for (from, to, says) in [
        (
            "heterogeneous_nuclei_per_m3 = 0.0",
            "heterogeneous_nuclei_per_m3 = [1e12, 1e6]",
            "0 < lo ≤ hi",
        ),
        (
            "heterogeneous_nuclei_per_m3 = 0.0",
            "heterogeneous_nuclei_per_m3 = [0.0, 1e6]",
            "0 < lo ≤ hi",
        ),
        (
            "heterogeneous_nuclei_per_m3 = 0.0",
            "heterogeneous_nuclei_per_m3 = [1e6, 1e9, 1e12]",
            "0 < lo ≤ hi",
        ),
        (
            "heterogeneous_nuclei_per_m3 = 0.0",
            "heterogeneous_nuclei_per_m3 = [-1e6, 1e12]",
            "0 < lo ≤ hi",
        ),
        (
            "heterogeneous_nuclei_per_m3 = 0.0",
            "heterogeneous_nuclei_per_m3 = \"many\"",
            "a number of nuclei per m3, or a range [lo, hi]",
        ),
    ] {
        let t = card.replace(from, to);
        let e = parse_melt_card_spreads(&Source::new("card.toml", &t), &KineticOptions::default())
            .unwrap_err()
            .to_string();
        let line = line_of(&t, to);
        assert!(e.contains(&format!("card.toml:{line}")), "{e}");
        assert!(e.contains(says), "{e}");
    }
    let sd_line = card
        .lines()
        .find(|l| l.starts_with("turnbull_alpha_sd"))
        .expect("the demo card gives turnbull_alpha_sd");
    let t = card.replace(sd_line, "turnbull_alpha_sd = -0.01");
    let e = parse_melt_card_spreads(&Source::new("card.toml", &t), &KineticOptions::default())
        .unwrap_err()
        .to_string();
    assert!(
        e.contains(&format!("card.toml:{}", line_of(&t, "turnbull_alpha_sd")))
            && e.contains("turnbull_alpha_sd must be a standard deviation"),
        "{e}"
    );
    // A spread of σ for a crystal given by α.
    let t = card.replace(sd_line, "interface_energy_sd_j_per_m2 = 0.01");
    let e = parse_melt_card_spreads(&Source::new("card.toml", &t), &KineticOptions::default())
        .unwrap_err()
        .to_string();
    assert!(e.contains("does not give"), "{e}");
}

#[test]
fn eval_prints_and_writes_the_band_and_the_probability() {
    let d = temp_dir("eval-uncertainty");
    let card = root().join("demo-datasets/melt-card.toml");
    let card = card.to_str().unwrap();
    let args = [
        "eval",
        "--melt",
        card,
        "--uncertainty",
        "200",
        "--quench-rate",
        "60",
        "--rate-unit",
        "K/min",
    ];
    let r = run_in(&d, &args);
    r.code(0)
        .stdout_has("critical rate  5 %:")
        .stdout_has("P(glassy at 60.0 K/min)")
        .stdout_has("turnbull_alpha of crystal");
    let mut json_args = args.to_vec();
    json_args.extend(["--json", "--threads", "1"]);
    let one = run_in(&d, &json_args);
    one.code(0);
    let v: serde_json::Value = serde_json::from_str(&one.stdout).unwrap();
    let u = &v["uncertainty"];
    for key in [
        "critical_rate_p05_k_per_s",
        "critical_rate_p50_k_per_s",
        "critical_rate_p95_k_per_s",
        "log10_critical_rate_sd",
        "probability_glassy",
    ] {
        assert!(u[key].is_number(), "{key} missing: {u}");
    }
    assert_eq!(u["quench_rate_k_per_s"].as_f64(), Some(1.0));
    assert!(u["variance_shares"][0]["share"].is_number());
    json_args.pop();
    json_args.push("2");
    assert_eq!(run_in(&d, &json_args).stdout, one.stdout);
    run_in(&d, &["eval", "--melt", card, "--uncertainty", "5"])
        .code(2)
        .stderr_has("at least 20");
    run_in(&d, &["eval", "--melt", card, "--uncertainty", "2000000"])
        .code(2)
        .stderr_has("at most 1000000");
    run_in(&d, &["eval", "--melt", card, "--quench-rate", "1"]).code(2);
}

fn record(coefficients: &[&str], covariance: Vec<Vec<f64>>) -> quenchwise::properties::FitRecord {
    quenchwise::properties::FitRecord {
        data: "invented".into(),
        data_sha256: String::new(),
        date: "2026-12-02".into(),
        method: "test".into(),
        points: 10,
        glasses: None,
        unit: "log10 Pa s".into(),
        rmse: 0.0,
        residual_sd: 0.0,
        dof: Some(8),
        r_squared: None,
        cv_method: None,
        cv_rmse: None,
        cv_rmse_k: None,
        coefficients: coefficients.iter().map(|c| c.to_string()).collect(),
        covariance,
    }
}

#[test]
fn a_composition_whose_coefficients_have_zero_variance_has_zero_spread() {
    use quenchwise::composition::{Basis, Composition};
    use quenchwise::files::model_set::load_model_set;
    use quenchwise::uncertainty::melt::{composition_critical_rate, model_set_inputs};
    let mut set = load_model_set(None).unwrap();
    let glass =
        Composition::parse("SiO2=72 Na2O=14 CaO=10 Al2O3=4", Basis::MolPercent, 0.0).unwrap();
    let opts = KineticOptions::default();
    let names = ["a.constant", "b_k.SiO2"];
    let point = {
        let props = set.properties(&glass).unwrap();
        let melt = quenchwise::assess::composition_melt(&set, &props).unwrap();
        Kinetics::new(&melt, &opts)
            .unwrap()
            .critical_rate()
            .unwrap()
            .0
    };
    let draw = |set: &quenchwise::properties::ModelSet| {
        let (inputs, notes) = model_set_inputs(set, &opts, None).unwrap();
        assert!(notes.is_empty(), "{notes:?}");
        propagate(
            &inputs_of(&inputs),
            Settings { draws: 40, seed: 2 },
            None,
            |v| composition_critical_rate(set, &glass, &opts, &inputs, v),
        )
        .unwrap()
    };
    // Source: N(θ̂, 0) is the constant θ̂ (standard probability).
    set.viscosity.fit = Some(record(&names, vec![vec![0.0; 2]; 2]));
    let p = draw(&set);
    assert_eq!(p.log10_critical_rate_sd, 0.0);
    assert!((p.critical_rate_p50_k_per_s / point - 1.0).abs() < 1e-12);
    // A spread in the viscosity constant does spread R_c, and it is the
    // only input, so it explains (almost) all of it.
    set.viscosity.fit = Some(record(&names, vec![vec![0.01, 0.0], vec![0.0, 0.0]]));
    let p = draw(&set);
    assert!(p.log10_critical_rate_sd > 0.01, "{p:?}");
    assert!(p.variance_shares[0].share > 0.9, "{:?}", p.variance_shares);
}

#[test]
fn a_fitted_model_set_draws_every_fit_and_its_band_holds_the_held_out_glass() {
    // The demo fits (invented data, demo-datasets/README.md), then the
    // held-out glass lab-13: its invented measured R_c, 1.31 K/min
    // (demo-datasets/fit-holdout.csv), lies inside the 5–95 % band the
    // fitted covariances give.
    let d = temp_dir("uncertainty-fitted");
    let data = root().join("demo-datasets");
    let f = |name: &str| data.join(name).to_str().unwrap().to_string();
    for args in [
        vec![
            "fit",
            "viscosity",
            &f("fit-viscosity.csv"),
            "--models",
            "demo-soda-lime",
            "--name",
            "lab-test",
        ],
        vec![
            "fit",
            "liquidus",
            &f("fit-liquidus.csv"),
            "--models",
            "m.toml",
            "--shift",
            "cristobalite",
        ],
        vec![
            "fit",
            "kinetics",
            &f("fit-critical-rates.csv"),
            "--models",
            "m.toml",
            "--log10-sd",
            "0.15",
        ],
    ] {
        let mut a: Vec<&str> = args.iter().map(|s| s.as_ref()).collect();
        a.extend(["--out", "m.toml"]);
        run_in(&d, &a).code(0);
    }
    let r = run_in(
        &d,
        &[
            "eval",
            "--mol",
            "SiO2=71 Na2O=14.5 K2O=1 CaO=9 MgO=3 Al2O3=1.5",
            "--models",
            "m.toml",
            "--uncertainty",
            "1000",
            "--quench-rate",
            "1.31",
            "--rate-unit",
            "K/min",
            "--json",
        ],
    );
    r.code(0);
    let v: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    let u = &v["uncertainty"];
    let names: Vec<&str> = u["variance_shares"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["input"].as_str().unwrap())
        .collect();
    assert!(
        names
            .iter()
            .any(|n| n.starts_with("viscosity coefficients")),
        "{names:?}"
    );
    assert!(
        names
            .iter()
            .any(|n| n.starts_with("liquidus surface of devitrite")),
        "{names:?}"
    );
    assert!(
        names.iter().any(|n| n.starts_with("kinetic factors")),
        "{names:?}"
    );
    let measured = 1.31 / 60.0;
    let (lo, hi) = (
        u["critical_rate_p05_k_per_s"].as_f64().unwrap(),
        u["critical_rate_p95_k_per_s"].as_f64().unwrap(),
    );
    assert!(lo < measured && measured < hi, "{lo} {measured} {hi}");
    assert_eq!(u["failed_draws"].as_u64(), Some(0));
}

#[test]
fn a_nuclei_range_in_a_screen_config_without_uncertainty_is_refused_with_its_line() {
    // With an [uncertainty] table the range is drawn (tests/screen_probability.rs).
    let d = temp_dir("uncertainty-screen-range");
    let text = format!(
        "{}\n[kinetics]\nheterogeneous_nuclei_per_m3 = [1e6, 1e12]\n",
        crate::screen::SMALL
    );
    std::fs::write(d.join("screen.toml"), &text).unwrap();
    let line = text
        .lines()
        .position(|l| l.starts_with("heterogeneous_nuclei_per_m3"))
        .unwrap()
        + 1;
    run_in(&d, &["check", "screen.toml"])
        .code(2)
        .stderr_has(&format!("screen.toml:{line}: "))
        .stderr_has("is drawn only with an [uncertainty] table");
}

#[test]
fn a_spread_of_sigma_is_drawn_for_a_crystal_given_by_sigma() {
    use quenchwise::uncertainty::melt::Target;
    use quenchwise::uncertainty::Distribution;
    let m = melt(MU);
    let sigma = m.phases[0].interface_energy_j_per_m2();
    let by_sigma = m.with_interface(0, Interface::EnergyJPerM2(sigma));
    let spreads = MeltSpreads {
        turnbull_alpha_sd: vec![None],
        interface_energy_sd_j_per_m2: vec![Some(0.005)],
        nuclei_range_per_m3: None,
    };
    let inputs = melt_inputs(&by_sigma, &spreads).unwrap();
    assert_eq!(inputs[0].target, Target::InterfaceEnergy(0));
    assert_eq!(
        inputs[0].input.distribution,
        Distribution::Normal {
            mean: sigma,
            sd: 0.005
        }
    );
    // σ = α ΔH_m/(N_A^⅓ V_m^⅔) is linear in α (docs/science.md, "Crystal–liquid
    // interfacial energy"), so a σ spread of s_σ is an α spread of
    // s_σ α/σ: the two give the same draws (same seed), to round-off.
    let opts = KineticOptions::default();
    let by_s = propagate(
        &inputs_of(&inputs),
        Settings { draws: 50, seed: 4 },
        Some(1e-3),
        |v| melt_critical_rate(&by_sigma, &opts, &inputs, v),
    )
    .unwrap();
    let by_a = run(&alpha_spread(0.005 * MU / sigma), 0.0, 50, 4, 1e-3);
    for (x, y) in by_s.log10_rates.iter().zip(&by_a.log10_rates) {
        assert!((x - y).abs() < 1e-6, "{x} {y}");
    }
    // Both spreads at once, or a spread of the value the crystal lacks, are refused.
    let both = MeltSpreads {
        turnbull_alpha_sd: vec![Some(0.01)],
        ..spreads.clone()
    };
    assert!(melt_inputs(&by_sigma, &both).is_err());
    assert!(melt_inputs(&m, &spreads).is_err());
}

/// A spread wide enough that many draws reach α ≤ 0 (always crystalline) is
/// refused rather than answered from the draws that happened to work: those
/// are no random sample.
#[test]
fn a_spread_that_reaches_impossible_values_is_refused() {
    // Source: with α ~ N(μ, s), P(α ≤ 0) = Φ(−μ/s) (standard probability; Φ
    // from statrs): for s = μ it is Φ(−1) ≈ 0.16, far above the 1 % allowed.
    let share = Normal::standard().cdf(-1.0);
    assert!(share > 10.0 * quenchwise::uncertainty::MAX_FAILED_SHARE);
    let m = melt(MU);
    let opts = KineticOptions::default();
    let inputs = melt_inputs(&m, &alpha_spread(MU)).unwrap();
    let r = propagate(
        &inputs_of(&inputs),
        Settings {
            draws: 400,
            seed: 3,
        },
        Some(1.0),
        |v| melt_critical_rate(&m, &opts, &inputs, v),
    );
    match r {
        Err(quenchwise::uncertainty::UncertaintyError::TooManyFailed { failed, draws, .. }) => {
            // Latin hypercube strata: the count is within a few of 400 Φ(−1).
            assert!(
                (failed as f64 - 400.0 * share).abs() < 8.0,
                "{failed} of {draws}"
            );
        }
        other => panic!("expected a refusal, got {other:?}"),
    }
}

/// A number column of a result table (empty cells as None).
fn table_column(path: &std::path::Path, col: &str) -> Vec<Option<f64>> {
    let df = quenchwise::files::table::read_frame(path).unwrap();
    df.column(col)
        .unwrap_or_else(|_| panic!("no column {col}"))
        .cast(&polars::prelude::DataType::Float64)
        .unwrap()
        .f64()
        .unwrap()
        .iter()
        .collect()
}

fn text_column(path: &std::path::Path, col: &str) -> Vec<Option<String>> {
    let df = quenchwise::files::table::read_frame(path).unwrap();
    df.column(col)
        .unwrap_or_else(|_| panic!("no column {col}"))
        .str()
        .unwrap()
        .iter()
        .map(|v| v.map(str::to_string))
        .collect()
}

#[test]
fn a_melt_card_table_draws_every_row_with_its_own_seed_and_matches_the_closed_form() {
    use quenchwise::uncertainty::sampling::row_seed;
    let d = temp_dir("eval-uncertainty-table");
    // The demo melt (invented numbers) with two α spreads, a row with no
    // spread (point estimate only), a nuclei range, and a row whose range
    // lacks its upper end (that row's error), and a row with an α spread
    // and a nuclei range.
    let head = "name,a,b_k,c_k,liquidus_k,enthalpy_of_fusion_j_per_mol,molar_volume_m3_per_mol,turnbull_alpha,growth,turnbull_alpha_sd,heterogeneous_nuclei_lo_per_m3,heterogeneous_nuclei_hi_per_m3";
    let card = "-2.8,4500.0,480.0,1300.0,60000.0,6.0e-5";
    let rows = [
        format!("narrow,{card},0.33,normal,0.01,,"),
        format!("wide,{card},0.34,normal,0.015,,"),
        format!("none,{card},0.33,normal,,,"),
        format!("nuclei,{card},0.33,normal,,1e6,1e12"),
        format!("half,{card},0.33,normal,,1e6,"),
        format!("both,{card},0.29,normal,0.02,1e1,1e5"),
    ];
    std::fs::write(
        d.join("cards.csv"),
        format!("{head}\n{}\n", rows.join("\n")),
    )
    .unwrap();
    let (n, seed) = (1000usize, 11u64);
    let quench = rc(MU, 0.0) / 3.0;
    let q = format!("{quench:e}");
    let ns = n.to_string();
    let args = |threads: &'static str, batch: &'static str, out: &'static str| {
        vec![
            "eval",
            "--melt-cards",
            "cards.csv",
            "--uncertainty",
            ns.as_str(),
            "--seed",
            "11",
            "--quench-rate",
            q.as_str(),
            "--threads",
            threads,
            "--batch-rows",
            batch,
            "--out",
            out,
        ]
        .into_iter()
        .map(str::to_string)
        .collect::<Vec<_>>()
    };
    let call = |a: Vec<String>| {
        let a: Vec<&str> = a.iter().map(String::as_str).collect();
        run_in(&d, &a)
    };
    call(args("1", "1", "one.csv")).code(0);
    call(args("2", "3", "two.csv")).code(0);
    // Every digit (a CSV file shows meaningful digits only).
    call(args("1", "1", "one.parquet")).code(0);
    // Source (determinism): the draws depend only on the seed and the row's
    // place, not on the thread count or the batch size (docs/science.md,
    // "Seeded Latin hypercube draws").
    assert_eq!(
        std::fs::read_to_string(d.join("one.csv")).unwrap(),
        std::fs::read_to_string(d.join("two.csv")).unwrap()
    );
    let out = d.join("one.parquet");
    let p = table_column(&out, "probability_glassy");
    let se = table_column(&out, "probability_glassy_se");
    let lower95 = table_column(&out, "probability_glassy_lower95");
    let p50 = table_column(&out, "critical_rate_p50_k_per_s");
    let note = text_column(&out, "band_note");
    let error = text_column(&out, "error");
    // Source: P = 1 − Φ((α* − μ)/s) for R_c decreasing in α (standard
    // probability; α* by bisection, Φ from statrs), as in
    // alpha_alone_gives_the_closed_form_probability_and_quantiles; α* is
    // the same for both rows (same melt, same quench).
    let alpha_star = bisect(|a| rc(a, 0.0).log10() - quench.log10(), 0.2, 0.45);
    let normal = Normal::standard();
    for (row, mu, s) in [(0usize, 0.33, 0.01), (1, 0.34, 0.015)] {
        let exact = 1.0 - normal.cdf((alpha_star - mu) / s);
        let got = p[row].unwrap();
        let bse = (exact * (1.0 - exact) / n as f64).sqrt();
        assert!(
            (got - exact).abs() <= MONTE_CARLO_STANDARD_ERRORS * bse,
            "row {row}: {got} vs closed form {exact} (SE {bse})"
        );
        assert!((se[row].unwrap() - (got * (1.0 - got) / n as f64).sqrt()).abs() < 1e-12);
        // Source: the lower end of Wilson's score interval (Wilson 1927,
        // JASA 22, 209) with z = Φ⁻¹(0.95) (statrs), written out here; 1 − 3/N
        // where every draw is glassy (rule of three, Hanley & Lippman-Hand
        // 1983, JAMA 249, 1743). The CSV keeps 0.001.
        let (nf, z) = (n as f64, normal.inverse_cdf(0.95));
        let wilson = if got >= 1.0 {
            1.0 - 3.0 / nf
        } else {
            (got + z * z / (2.0 * nf)
                - z * (got * (1.0 - got) / nf + z * z / (4.0 * nf * nf)).sqrt())
                / (1.0 + z * z / nf)
        };
        assert!(
            (lower95[row].unwrap() - wilson).abs() <= 5e-4 + 1e-12,
            "row {row}: {:?} vs {wilson}",
            lower95[row]
        );
        assert!(lower95[row].unwrap() <= got);
        // Row i is drawn with seed row_seed(seed, i): the library's
        // propagation with that seed gives the same band (to the digits a
        // CSV keeps).
        let m = melt(mu);
        let opts = KineticOptions::default();
        let inputs = melt_inputs(&m, &alpha_spread(s)).unwrap();
        let lib = propagate(
            &inputs_of(&inputs),
            Settings {
                draws: n,
                seed: row_seed(seed, row),
            },
            Some(quench),
            |v| melt_critical_rate(&m, &opts, &inputs, v),
        )
        .unwrap();
        assert_eq!(lib.probability_glassy, p[row]);
        assert!((lib.critical_rate_p50_k_per_s / p50[row].unwrap() - 1.0).abs() < 1e-12);
    }
    // Different seeds per row: two rows of the same melt and spread would
    // not share draws; here the two rows differ and so do their bands.
    assert_ne!(p50[0], p50[1]);
    // No spread: the point estimate, no band, and a note saying why.
    assert!(p[2].is_none() && error[2].is_none());
    assert!(
        note[2].as_deref().unwrap().contains("no spread"),
        "{note:?}"
    );
    // A nuclei range: the point estimate uses its geometric mean, 10⁹ m⁻³
    // (the median of a log-uniform range; standard probability), and with
    // R_c increasing in N_h the band straddles it.
    let point = table_column(&out, "critical_rate_k_per_s");
    assert!((point[3].unwrap() / rc(MU, 1e9) - 1.0).abs() < 1e-9);
    let (lo, hi) = (
        table_column(&out, "critical_rate_p05_k_per_s")[3].unwrap(),
        table_column(&out, "critical_rate_p95_k_per_s")[3].unwrap(),
    );
    assert!(
        lo < point[3].unwrap() && point[3].unwrap() < hi,
        "{lo} {hi}"
    );
    // Half a range is that row's error, named.
    assert!(
        error[4]
            .as_deref()
            .unwrap()
            .contains("heterogeneous_nuclei_hi_per_m3"),
        "{error:?}"
    );
    // One column of variance shares per input the header can give, in the
    // order the inputs are drawn, after the band's numbers (no
    // interface_energy_sd_j_per_m2 column, so no share of σ).
    let header: Vec<String> = quenchwise::files::table::read_frame(&out)
        .unwrap()
        .get_column_names()
        .iter()
        .map(|c| c.to_string())
        .collect();
    let from = header
        .iter()
        .position(|c| c == "probability_glassy_lower95")
        .unwrap();
    assert_eq!(header[from - 1], "probability_glassy_se");
    assert_eq!(
        header[from + 1..from + 4],
        [
            "variance_share_turnbull_alpha_of_crystal",
            "variance_share_heterogeneous_nuclei_per_m3",
            "band_note"
        ]
    );
    let s_alpha = table_column(&out, "variance_share_turnbull_alpha_of_crystal");
    let s_nuclei = table_column(&out, "variance_share_heterogeneous_nuclei_per_m3");
    // Source: S_X = Var(E[Y | X]) / Var Y is 1 when Y depends on X alone
    // (definition of the first-order index; Saltelli et al., "Global
    // Sensitivity Analysis: The Primer", Wiley 2008); the binned estimate
    // loses the within-bin variance, under 3 % here.
    for (row, share, other) in [
        (0, &s_alpha, &s_nuclei),
        (1, &s_alpha, &s_nuclei),
        (3, &s_nuclei, &s_alpha),
    ] {
        assert!(share[row].unwrap() > 0.97, "row {row}: {share:?}");
        assert!(
            other[row].is_none(),
            "row {row} does not draw it: {other:?}"
        );
    }
    // No band, no shares.
    assert!(s_alpha[2].is_none() && s_nuclei[2].is_none() && s_alpha[4].is_none());
    // Both drawn: each row's shares are the library's for its seed (the
    // single-melt eval's estimator), to the digits a CSV keeps.
    let m = melt(0.29);
    let opts = KineticOptions::default();
    let spreads = MeltSpreads {
        turnbull_alpha_sd: vec![Some(0.02)],
        interface_energy_sd_j_per_m2: vec![None],
        nuclei_range_per_m3: Some((1e1, 1e5)),
    };
    let inputs = melt_inputs(&m, &spreads).unwrap();
    let lib = propagate(
        &inputs_of(&inputs),
        Settings {
            draws: n,
            seed: row_seed(seed, 5),
        },
        Some(quench),
        |v| melt_critical_rate(&m, &opts, &inputs, v),
    )
    .unwrap();
    for (k, col) in [&s_alpha, &s_nuclei].into_iter().enumerate() {
        let got = col[5].unwrap();
        assert!(
            (lib.variance_shares[k].share - got).abs() < 1e-12,
            "{col:?} vs {lib:?}"
        );
        assert!(got > 0.2, "{col:?}");
    }
}

#[test]
fn a_composition_table_draws_the_model_sets_spreads_per_row() {
    use quenchwise::composition::{Basis, Composition};
    use quenchwise::files::model_set::load_model_set;
    use quenchwise::files::model_writer::{model_set_toml, Notes};
    use quenchwise::uncertainty::melt::{composition_critical_rate, model_set_inputs};
    use quenchwise::uncertainty::sampling::row_seed;
    let d = temp_dir("eval-uncertainty-compositions");
    // The built-in demo set (invented numbers) with a standard error of α
    // on every phase.
    let mut set = load_model_set(None).unwrap();
    for p in &mut set.phases {
        p.turnbull_alpha_sd = Some(0.05 * p.turnbull_alpha);
    }
    std::fs::write(
        d.join("set.toml"),
        model_set_toml(&set, &Notes::default(), &[]),
    )
    .unwrap();
    let glasses = ["72,14,10,4", "74,13,10,3", "70,16,12,2"];
    std::fs::write(
        d.join("comps.csv"),
        format!("SiO2,Na2O,CaO,Al2O3\n{}\n", glasses.join("\n")),
    )
    .unwrap();
    let base = [
        "eval",
        "--compositions",
        "comps.csv",
        "--models",
        "set.toml",
        "--uncertainty",
        "60",
        "--quench-rate",
        "1",
    ];
    let mut one = base.to_vec();
    one.extend([
        "--threads",
        "1",
        "--batch-rows",
        "1",
        "--out",
        "one.parquet",
    ]);
    run_in(&d, &one).code(0);
    let mut two = base.to_vec();
    two.extend(["--threads", "2", "--out", "two.parquet"]);
    run_in(&d, &two).code(0);
    let (a, b) = (d.join("one.parquet"), d.join("two.parquet"));
    for col in [
        "critical_rate_p05_k_per_s",
        "critical_rate_p50_k_per_s",
        "critical_rate_p95_k_per_s",
        "log10_critical_rate_sd",
        "probability_glassy",
    ] {
        assert_eq!(table_column(&a, col), table_column(&b, col), "{col}");
    }
    // The variance shares too, one column per phase's α (five phases).
    let shares: Vec<String> = quenchwise::files::table::read_frame(&a)
        .unwrap()
        .get_column_names()
        .iter()
        .map(|c| c.to_string())
        .filter(|c| c.starts_with("variance_share_"))
        .collect();
    assert_eq!(shares.len(), 5, "{shares:?}");
    for col in &shares {
        assert_eq!(table_column(&a, col), table_column(&b, col), "{col}");
    }
    // Source (per-row seed): each row equals the library's propagation with
    // seed row_seed(default seed, i); the spread is non-zero, so the check
    // can fail.
    let file_set = load_model_set(Some(&d.join("set.toml"))).unwrap();
    let opts = KineticOptions::default();
    let (inputs, _) = model_set_inputs(&file_set, &opts, None).unwrap();
    let sd = table_column(&a, "log10_critical_rate_sd");
    let p50 = table_column(&a, "critical_rate_p50_k_per_s");
    for (i, g) in glasses.iter().enumerate() {
        let v: Vec<&str> = g.split(',').collect();
        let text = format!("SiO2={} Na2O={} CaO={} Al2O3={}", v[0], v[1], v[2], v[3]);
        let comp = Composition::parse(&text, Basis::MolPercent, 0.0).unwrap();
        let lib = propagate(
            &inputs_of(&inputs),
            Settings {
                draws: 60,
                seed: row_seed(quenchwise::uncertainty::DEFAULT_SEED, i),
            },
            Some(1.0),
            |x| composition_critical_rate(&file_set, &comp, &opts, &inputs, x),
        )
        .unwrap();
        assert!(sd[i].unwrap() > 0.0);
        assert!((lib.log10_critical_rate_sd - sd[i].unwrap()).abs() < 1e-12);
        // The shares, one column per input of the set in the order drawn,
        // are the library's (the single-composition eval's estimator).
        assert_eq!(lib.variance_shares.len(), file_set.phases.len());
        for s in &lib.variance_shares {
            let col = format!("variance_share_{}", s.input.replace(' ', "_"));
            assert_eq!(table_column(&a, &col)[i], Some(s.share), "{col}");
        }
        assert!((lib.critical_rate_p50_k_per_s / p50[i].unwrap() - 1.0).abs() < 1e-12);
    }
    // --json belongs to one input; a table needs --out.
    let mut json = base.to_vec();
    json.extend(["--json", "--out", "x.csv"]);
    run_in(&d, &json).code(2).stderr_has("--json");
    run_in(&d, &base).code(2).stderr_has("--out");
}
