//! The fits against things outside the program: known coefficients plus
//! noise (coverage of the stated intervals over many seeded draws), an
//! independent NumPy/SciPy fit of the demo data, published VFT constants,
//! and closed forms for the kinetic factor.

use crate::tolerances::{
    COVERAGE_BINOMIAL_SDS, EXACT_DATA_RTOL, LINEAR_ORACLE_RTOL, NONLINEAR_ORACLE_SE_FRACTION,
    PRINTED_10SF_RTOL, SE_ORACLE_RTOL,
};
use crate::util::{rel, root};
use quenchwise::composition::{Composition, Oxide, N_OXIDES};
use quenchwise::files::fit_data::{read_liquidus_data, read_viscosity_data, CompositionColumns};
use quenchwise::files::model_set::{parse_model_set, DEMO_MODELS};
use quenchwise::files::source::Source;
use quenchwise::kinetics::fit::{
    fit_kinetics, KineticFitError, KineticFitSpec, KineticPoint, Measurement,
};
use quenchwise::kinetics::{KineticOptions, Kinetics, Melt};
use quenchwise::numeric::least_squares::interval_factor;
use quenchwise::properties::fit::{
    fit_liquidus, fit_viscosity, FitError, LiquidusPoint, Provenance, ViscosityPoint,
    ViscosityTerms,
};
use quenchwise::properties::{
    GrowthMode, Interface, ModelSet, ViscosityCoefficient, ViscosityCurve,
};
use quenchwise::units::{Kelvin, KelvinPerSecond, Log10PaS};
use statrs::distribution::{ContinuousCDF, StudentsT};

/// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014) with Box–Muller normals
/// (Box & Muller, Ann. Math. Stat. 29, 1958): a seeded, dependency-free
/// source of noise for the tests, checked below.
struct Rng(u64);

impl Rng {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in (0, 1).
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

#[test]
fn the_test_noise_is_standard_normal() {
    // 200 000 draws: mean within 4·(1/√n) of 0, variance within 4·√(2/n) of 1,
    // and 95.45 % within ±2 (Φ(2) − Φ(−2) = 0.9545, printed tables) within 4
    // binomial standard deviations.
    let mut r = Rng(7);
    let n = 200_000;
    let z: Vec<f64> = (0..n).map(|_| r.normal()).collect();
    let mean = z.iter().sum::<f64>() / n as f64;
    let var = z.iter().map(|v| (v - mean) * (v - mean)).sum::<f64>() / n as f64;
    let inside = z.iter().filter(|v| v.abs() < 2.0).count() as f64 / n as f64;
    let nf = n as f64;
    assert!(mean.abs() < 4.0 / nf.sqrt(), "{mean}");
    assert!((var - 1.0).abs() < 4.0 * (2.0 / nf).sqrt(), "{var}");
    assert!(
        (inside - 0.9545).abs() < 4.0 * (0.9545f64 * 0.0455 / nf).sqrt(),
        "{inside}"
    );
}

fn demo_set() -> ModelSet {
    parse_model_set(&Source::new("demo", DEMO_MODELS)).unwrap()
}

fn mol(parts: &[(Oxide, f64)]) -> [f64; N_OXIDES] {
    *Composition::from_mol_percent(parts).unwrap().fractions()
}

/// Binomial bounds for a coverage estimated from `n` trials.
fn bounds(p: f64, n: usize) -> (f64, f64) {
    let h = COVERAGE_BINOMIAL_SDS * (p * (1.0 - p) / n as f64).sqrt();
    (p - h, p + h)
}

/// Count how often each true coefficient lies inside `factor` standard errors.
struct Coverage {
    inside95: Vec<usize>,
    inside1: Vec<usize>,
    draws: usize,
}

impl Coverage {
    fn new(p: usize) -> Self {
        Coverage {
            inside95: vec![0; p],
            inside1: vec![0; p],
            draws: 0,
        }
    }
    fn add(&mut self, est: &[f64], se: &[f64], truth: &[f64], t95: f64) {
        for k in 0..truth.len() {
            let z = (est[k] - truth[k]).abs() / se[k];
            self.inside95[k] += usize::from(z <= t95);
            self.inside1[k] += usize::from(z <= 1.0);
        }
        self.draws += 1;
    }
    /// Every coefficient's 95 % coverage within binomial bounds of 0.95, and
    /// its ±1 SE coverage within bounds of the exact P(|t_dof| ≤ 1).
    fn check(&self, names: &[String], dof: usize) {
        let p1 = {
            let t = StudentsT::new(0.0, 1.0, dof as f64).unwrap();
            t.cdf(1.0) - t.cdf(-1.0)
        };
        let (lo95, hi95) = bounds(0.95, self.draws);
        let (lo1, hi1) = bounds(p1, self.draws);
        for (k, name) in names.iter().enumerate() {
            let c95 = self.inside95[k] as f64 / self.draws as f64;
            let c1 = self.inside1[k] as f64 / self.draws as f64;
            eprintln!(
                "coverage {name}: {c95:.4} at 95 %, {c1:.4} at ±1 SE ({} draws)",
                self.draws
            );
            assert!(
                (lo95..=hi95).contains(&c95),
                "{name}: 95 % intervals cover the truth in {c95:.4} of {} draws, expected {lo95:.4}–{hi95:.4}",
                self.draws
            );
            assert!(
                (lo1..=hi1).contains(&c1),
                "{name}: ±1 SE covers the truth in {c1:.4} of {} draws, expected {lo1:.4}–{hi1:.4} (P(|t| ≤ 1) = {p1:.4})",
                self.draws
            );
        }
    }
}

#[test]
fn linear_liquidus_intervals_cover_known_coefficients_95_percent_of_the_time() {
    // Known surface T_L = Σ a_i x_i (x mole fractions) on 20 fixed glasses,
    // σ = 5 K (a DSC liquidus, common practice), 2000 seeded draws. With the
    // model right, the t intervals are exact: coverage 0.95 per coefficient.
    // Source: the exact t interval of ordinary least squares with normal errors
    // (e.g. Seber & Lee, Linear Regression Analysis, 2nd ed., Wiley 2003, §5.1;
    // from memory); Student t quantiles from statrs.
    let oxides = [
        Oxide::SiO2,
        Oxide::Al2O3,
        Oxide::Na2O,
        Oxide::MgO,
        Oxide::CaO,
    ];
    let truth = [1280.0, 400.0, 650.0, 1050.0, 1850.0];
    let mut r = Rng(2026);
    let glasses: Vec<[f64; N_OXIDES]> = (0..20)
        .map(|_| {
            let na = 11.0 + 6.0 * r.uniform();
            let ca = 6.0 + 7.0 * r.uniform();
            let mg = 5.0 * r.uniform();
            let al = 0.5 + 2.5 * r.uniform();
            mol(&[
                (Oxide::SiO2, 100.0 - na - ca - mg - al),
                (Oxide::Na2O, na),
                (Oxide::CaO, ca),
                (Oxide::MgO, mg),
                (Oxide::Al2O3, al),
            ])
        })
        .collect();
    let set = demo_set();
    let devitrite = set
        .phases
        .iter()
        .position(|p| p.name == "devitrite")
        .unwrap();
    let true_t = |x: &[f64; N_OXIDES]| -> f64 {
        oxides
            .iter()
            .zip(truth)
            .map(|(o, a)| a * x[o.index()])
            .sum()
    };
    assert!(
        glasses.iter().all(|x| true_t(x) < 1310.0),
        "below T_m of devitrite"
    );
    let draws = 2000;
    let mut cov = Coverage::new(5);
    let t95 = interval_factor(0.95, Some(15));
    for _ in 0..draws {
        let pts: Vec<LiquidusPoint> = glasses
            .iter()
            .enumerate()
            .map(|(i, x)| LiquidusPoint {
                row: i + 1,
                x: *x,
                liquidus: Kelvin(true_t(x) + 5.0 * r.normal()),
                phase: devitrite,
            })
            .collect();
        let fit = fit_liquidus(&set, &pts, &[], &Provenance::default()).unwrap();
        let f = &fit.phases[0];
        assert_eq!(f.solution.statistics.dof, Some(15));
        // The fit's terms come in the program's oxide order.
        let order: Vec<usize> = f
            .terms
            .iter()
            .map(|t| {
                oxides
                    .iter()
                    .position(|o| t.to_string() == o.to_string())
                    .unwrap()
            })
            .collect();
        let est: Vec<f64> = (0..5).map(|k| f.solution.coefficients[k]).collect();
        let se: Vec<f64> = (0..5).map(|k| f.solution.standard_error(k)).collect();
        let tr: Vec<f64> = order.iter().map(|&k| truth[k]).collect();
        cov.add(&est, &se, &tr, t95);
    }
    let names: Vec<String> = oxides.iter().map(|o| o.to_string()).collect();
    cov.check(&names, 15);
}

/// The made-up VFT system of the fitting demo (demo-datasets/fit/make-demo-data.py).
fn vft_truth() -> (Vec<Oxide>, f64, Vec<f64>, Vec<f64>) {
    let ox = vec![
        Oxide::SiO2,
        Oxide::Al2O3,
        Oxide::Na2O,
        Oxide::K2O,
        Oxide::MgO,
        Oxide::CaO,
    ];
    let b = vec![6700.0, 9300.0, -4100.0, -2800.0, 1900.0, -2600.0];
    let c = vec![520.0, 860.0, -230.0, -480.0, 1040.0, 1530.0];
    (ox, -2.55, b, c)
}

fn demo_glasses() -> Vec<[f64; N_OXIDES]> {
    // The twelve fitting glasses of the demo, mol%: SiO2 Na2O K2O CaO MgO Al2O3.
    let g = [
        [72.0, 14.0, 0.5, 9.5, 3.0, 1.0],
        [70.0, 16.0, 0.0, 10.0, 2.5, 1.5],
        [74.0, 12.5, 1.0, 8.0, 3.5, 1.0],
        [71.0, 13.0, 2.0, 11.0, 1.0, 2.0],
        [73.0, 15.0, 0.0, 7.0, 4.5, 0.5],
        [69.0, 14.5, 1.5, 12.0, 0.5, 2.5],
        [75.0, 13.5, 0.5, 6.5, 2.0, 2.5],
        [70.5, 12.0, 1.0, 9.0, 5.0, 2.5],
        [72.5, 16.5, 1.5, 8.5, 0.0, 1.0],
        [68.5, 15.5, 0.5, 11.5, 3.0, 1.0],
        [73.5, 11.5, 0.0, 10.5, 2.5, 2.0],
        [71.5, 14.0, 2.0, 7.5, 4.0, 1.0],
    ];
    g.iter()
        .map(|v| {
            mol(&[
                (Oxide::SiO2, v[0]),
                (Oxide::Na2O, v[1]),
                (Oxide::K2O, v[2]),
                (Oxide::CaO, v[3]),
                (Oxide::MgO, v[4]),
                (Oxide::Al2O3, v[5]),
            ])
        })
        .collect()
}

#[test]
fn vft_intervals_cover_known_coefficients_95_percent_of_the_time() {
    // Known VFT mixture (13 coefficients), the demo's 12 glasses at 8
    // temperatures each from 1450 °C down to near T_g, σ = 0.04 in log10 η
    // (a rotating-cylinder and beam-bending lab, common practice), 1000 seeded
    // draws. The intervals come from the Jacobian at the solution
    // (linearisation), so coverage is 0.95 only asymptotically; with 96
    // points and this σ the curvature is small, and the binomial bounds hold.
    // Source: asymptotic normality of non-linear least squares (e.g. Seber &
    // Wild, Nonlinear Regression, Wiley 1989, §5.1; from memory).
    let (ox, a, b, c) = vft_truth();
    let glasses = demo_glasses();
    let params = |x: &[f64; N_OXIDES]| {
        let bb: f64 = ox.iter().zip(&b).map(|(o, v)| v * x[o.index()]).sum();
        let cc: f64 = ox.iter().zip(&c).map(|(o, v)| v * x[o.index()]).sum();
        (bb, cc)
    };
    let mut temps = Vec::new();
    for x in &glasses {
        let (bb, cc) = params(x);
        let mut t: Vec<f64> = [1050.0, 1150.0, 1250.0, 1350.0, 1450.0]
            .iter()
            .map(|c| c + 273.15)
            .collect();
        for level in [6.6, 11.0, 12.5] {
            t.push(cc + bb / (level - a));
        }
        temps.push(t);
    }
    let mut names = vec!["a.constant".to_string()];
    names.extend(ox.iter().map(|o| format!("b_k.{o}")));
    names.extend(ox.iter().map(|o| format!("c_k.{o}")));
    let mut truth = vec![a];
    truth.extend(&b);
    truth.extend(&c);
    let mut r = Rng(20261205);
    let draws = 1000;
    let mut cov = Coverage::new(truth.len());
    let mut fitted_names: Vec<String> = Vec::new();
    for _ in 0..draws {
        let mut pts = Vec::new();
        for (g, x) in glasses.iter().enumerate() {
            let (bb, cc) = params(x);
            for &t in &temps[g] {
                pts.push(ViscosityPoint {
                    row: pts.len() + 1,
                    glass: g,
                    x: *x,
                    temperature: Kelvin(t),
                    log10_viscosity: Log10PaS(a + bb / (t - cc) + 0.04 * r.normal()),
                });
            }
        }
        let fit = fit_viscosity(
            &pts,
            &ViscosityTerms::vft(),
            "t",
            "t",
            &Provenance::default(),
            false,
        )
        .unwrap();
        if fitted_names.is_empty() {
            fitted_names = fit.coefficients.iter().map(|c| c.to_string()).collect();
        }
        let order: Vec<usize> = fit
            .coefficients
            .iter()
            .map(|k| names.iter().position(|n| *n == k.to_string()).unwrap())
            .collect();
        let est: Vec<f64> = fit.solution.coefficients.clone();
        let se: Vec<f64> = (0..est.len())
            .map(|k| fit.solution.standard_error(k))
            .collect();
        let tr: Vec<f64> = order.iter().map(|&k| truth[k]).collect();
        cov.add(&est, &se, &tr, fit.solution.interval_factor(0.95));
    }
    cov.check(&fitted_names, 96 - 13);
}

fn demo_file(name: &str) -> std::path::PathBuf {
    root().join("demo-datasets").join(name)
}

const MOL: CompositionColumns = CompositionColumns {
    basis: quenchwise::composition::Basis::MolPercent,
    sum_tolerance: 2.0,
};

#[test]
fn liquidus_fit_agrees_with_numpy() {
    // Source: tests/reference/fit_numpy.py (numpy.linalg.lstsq, NumPy 2.4.6),
    // run 2026-12-02 on demo-datasets/fit-liquidus.csv; printed to 10
    // significant figures. Oxide order SiO2, Al2O3, Na2O, K2O, MgO, CaO.
    // (phase, coefficients, standard errors, RMSE, leave-one-out RMSE, R²)
    type Case = (&'static str, [f64; 6], [f64; 6], f64, f64, f64);
    let cases: [Case; 2] = [
        (
            "devitrite",
            [
                1355.484304,
                238.2087472,
                564.2331103,
                1.276057013,
                1000.870887,
                1781.854691,
            ],
            [
                24.9656618,
                201.4469567,
                78.39508645,
                181.0553006,
                109.6024785,
                131.3818528,
            ],
            3.626439837,
            5.998935216,
            0.9454148038,
        ),
        (
            "wollastonite",
            [
                935.554611,
                148.7961905,
                90.0120263,
                165.1816666,
                203.4447417,
                5524.410002,
            ],
            [
                67.07777372,
                1756.036631,
                495.7730841,
                724.4813841,
                1111.513388,
                1136.559374,
            ],
            5.609089001,
            16.49870247,
            0.9050322092,
        ),
    ];
    let set = demo_set();
    let data = read_liquidus_data(&demo_file("fit-liquidus.csv"), MOL, &set).unwrap();
    let cristobalite = set
        .phases
        .iter()
        .position(|p| p.name == "cristobalite")
        .unwrap();
    let fit = fit_liquidus(&set, &data.points, &[cristobalite], &Provenance::default()).unwrap();
    for (phase, coef, se, rmse, loo, r2) in cases {
        let f = fit
            .phases
            .iter()
            .find(|f| set.phases[f.phase].name == phase)
            .unwrap();
        for k in 0..6 {
            // Coefficients near zero (K2O of devitrite) are compared on the scale of their error.
            let scale = coef[k].abs().max(se[k]);
            assert!(
                (f.solution.coefficients[k] - coef[k]).abs() < LINEAR_ORACLE_RTOL * scale,
                "{phase} {}: {} vs {}",
                f.terms[k],
                f.solution.coefficients[k],
                coef[k]
            );
            assert!(rel(f.solution.standard_error(k), se[k]) < PRINTED_10SF_RTOL);
        }
        assert!(rel(f.solution.statistics.rmse, rmse) < PRINTED_10SF_RTOL);
        assert!(rel(f.loo_rmse.unwrap(), loo) < PRINTED_10SF_RTOL);
        assert!(rel(f.solution.statistics.r_squared, r2) < PRINTED_10SF_RTOL);
    }
}

#[test]
fn vft_fit_agrees_with_scipy() {
    // Source: tests/reference/fit_numpy.py (scipy.optimize.least_squares,
    // method "lm" = MINPACK, SciPy 1.17.1, its own starting point), run
    // 2026-12-02 on demo-datasets/fit-viscosity.csv. The two solvers stop at
    // slightly different points: the coefficients must agree to a thousandth
    // of their standard error, the standard errors to 1e-4.
    let oracle = [
        ("a.constant", -2.556476381, 0.02368381423),
        ("b_k.SiO2", 6563.844112, 117.5590717),
        ("b_k.Al2O3", 10955.30047, 1185.456189),
        ("b_k.Na2O", -3348.898101, 474.483393),
        ("b_k.K2O", -1715.230839, 942.0233301),
        ("b_k.MgO", 2274.854854, 521.8532849),
        ("b_k.CaO", -3072.880528, 386.5173898),
        ("c_k.SiO2", 530.4536437, 9.021849119),
        ("c_k.Al2O3", 767.2273463, 93.82848308),
        ("c_k.Na2O", -297.8101749, 37.39819148),
        ("c_k.K2O", -599.9307459, 74.99494311),
        ("c_k.MgO", 1024.702486, 41.37782526),
        ("c_k.CaO", 1573.670585, 30.38722947),
    ];
    let data = read_viscosity_data(&demo_file("fit-viscosity.csv"), MOL).unwrap();
    let fit = fit_viscosity(
        &data.points,
        &ViscosityTerms::vft(),
        "t",
        "t",
        &Provenance::default(),
        false,
    )
    .unwrap();
    assert_eq!(fit.coefficients.len(), oracle.len());
    for (name, value, se) in oracle {
        let k = fit
            .coefficients
            .iter()
            .position(|c| c.to_string() == name)
            .unwrap();
        let got = fit.solution.coefficients[k];
        assert!(
            (got - value).abs() < NONLINEAR_ORACLE_SE_FRACTION * se,
            "{name}: {got} vs {value} (se {se})"
        );
        assert!(
            rel(fit.solution.standard_error(k), se) < SE_ORACLE_RTOL,
            "{name}"
        );
    }
    assert!(rel(fit.solution.statistics.rmse, 0.03539826087) < PRINTED_10SF_RTOL);
}

/// Points on a published VFT curve, log10(η/Pa·s) = A + B/(T[°C] − T0), every
/// 50 K over the range it was fitted on (550–1450 °C).
fn published_points(a: f64, b: f64, t0: f64, x: [f64; N_OXIDES]) -> Vec<ViscosityPoint> {
    (0..=18)
        .map(|k| {
            let t_c = 550.0 + 50.0 * k as f64;
            ViscosityPoint {
                row: k + 1,
                glass: 0,
                x,
                temperature: Kelvin(t_c + 273.15),
                log10_viscosity: Log10PaS(a + b / (t_c - t0)),
            }
        })
        .collect()
}

#[test]
fn one_glass_reproduces_published_vft_constants() {
    // Source: Seward & Vascott (eds.), High temperature glass melt property
    // database for process modeling, The American Ceramic Society (2005):
    // container glass A = −2.309, B = 3922, T0 = 291 °C; float glass
    // A = −2.585, B = 4215, T0 = 263 °C; fitted over 550–1450 °C. Read with η
    // in Pa·s (the usual fixpoints of these glasses come out only so). Points
    // on each published curve give back its constants (C = T0 + 273.15 K):
    // the fit starts from a scan, not from the answer, and must converge to it.
    let container = mol(&[
        (Oxide::SiO2, 74.0),
        (Oxide::Na2O, 13.0),
        (Oxide::CaO, 10.5),
        (Oxide::Al2O3, 1.3),
        (Oxide::K2O, 0.3),
        (Oxide::MgO, 0.2),
    ]);
    let float = mol(&[
        (Oxide::SiO2, 73.0),
        (Oxide::Na2O, 14.0),
        (Oxide::CaO, 9.0),
        (Oxide::MgO, 4.0),
    ]);
    for (a, b, t0, x) in [
        (-2.309, 3922.0, 291.0, container),
        (-2.585, 4215.0, 263.0, float),
    ] {
        let fit = fit_viscosity(
            &published_points(a, b, t0, x),
            &ViscosityTerms::vft(),
            "one glass",
            "t",
            &Provenance::default(),
            false,
        )
        .unwrap();
        // One glass: three constants.
        let names: Vec<String> = fit.coefficients.iter().map(|c| c.to_string()).collect();
        assert_eq!(names, ["a.constant", "b_k.constant", "c_k.constant"]);
        let s = &fit.solution.coefficients;
        assert!(rel(s[0], a) < EXACT_DATA_RTOL, "A {}", s[0]);
        assert!(rel(s[1], b) < EXACT_DATA_RTOL, "B {}", s[1]);
        assert!(rel(s[2], t0 + 273.15) < EXACT_DATA_RTOL, "C {}", s[2]);
    }
}

#[test]
fn a_design_the_data_cannot_resolve_is_named() {
    // Two glasses in which Na2O and CaO always move together: B and C cannot
    // tell them apart; the error names them instead of returning a solution.
    let g1 = mol(&[(Oxide::SiO2, 74.0), (Oxide::Na2O, 13.0), (Oxide::CaO, 13.0)]);
    let g2 = mol(&[(Oxide::SiO2, 70.0), (Oxide::Na2O, 15.0), (Oxide::CaO, 15.0)]);
    let mut pts = published_points(-2.3, 3900.0, 290.0, g1);
    for mut p in published_points(-2.4, 3800.0, 270.0, g2) {
        p.glass = 1;
        pts.push(p);
    }
    let err = fit_viscosity(
        &pts,
        &ViscosityTerms::vft(),
        "t",
        "t",
        &Provenance::default(),
        false,
    )
    .unwrap_err();
    let text = err.to_string();
    assert!(
        text.contains("cannot tell these coefficients apart"),
        "{text}"
    );
    assert!(text.contains("Na2O") && text.contains("CaO"), "{text}");
}

#[test]
fn too_few_rows_for_a_phase_is_an_error_that_points_to_a_shift() {
    let set = demo_set();
    let k = set
        .phases
        .iter()
        .position(|p| p.name == "wollastonite")
        .unwrap();
    let pts: Vec<LiquidusPoint> = (0..3)
        .map(|i| LiquidusPoint {
            row: i + 1,
            x: mol(&[
                (Oxide::SiO2, 70.0 - i as f64),
                (Oxide::Na2O, 14.0),
                (Oxide::CaO, 13.0 + i as f64),
                (Oxide::MgO, 3.0),
            ]),
            liquidus: Kelvin(1300.0 + 10.0 * i as f64),
            phase: k,
        })
        .collect();
    let e = fit_liquidus(&set, &pts, &[], &Provenance::default()).unwrap_err();
    assert!(e.to_string().contains("wollastonite has 3 rows"), "{e}");
    assert!(
        quenchwise::error::Diagnostic::hint(&e)
            .unwrap()
            .contains("--shift"),
        "{e}"
    );
    // The shift needs one coefficient, and works.
    let f = fit_liquidus(&set, &pts, &[k], &Provenance::default()).unwrap();
    assert_eq!(f.phases[0].solution.coefficients.len(), 1);
}

#[test]
fn a_liquidus_above_the_melting_point_is_refused() {
    let set = demo_set();
    let k = set
        .phases
        .iter()
        .position(|p| p.name == "devitrite")
        .unwrap();
    let x = mol(&[(Oxide::SiO2, 72.0), (Oxide::Na2O, 14.0), (Oxide::CaO, 14.0)]);
    let pts = vec![LiquidusPoint {
        row: 4,
        x,
        liquidus: Kelvin(1400.0),
        phase: k,
    }];
    let e = fit_liquidus(&set, &pts, &[], &Provenance::default()).unwrap_err();
    assert!(matches!(e, FitError::Rows { .. }));
    assert!(e.to_string().starts_with("row 4: liquidus 1400.0 K"), "{e}");
    assert!(e.to_string().contains("melting point of devitrite"), "{e}");
}

#[test]
fn fitted_coefficients_can_be_set_by_name_as_a_draw_would() {
    // The names in a fit record address the model's coefficients: setting
    // them to the fitted values gives the same model; moving one moves the
    // prediction by exactly its term (B per mole fraction of SiO2).
    let data = read_viscosity_data(&demo_file("fit-viscosity.csv"), MOL).unwrap();
    let fit = fit_viscosity(
        &data.points,
        &ViscosityTerms::vft(),
        "t",
        "t",
        &Provenance::default(),
        false,
    )
    .unwrap();
    let names: Vec<ViscosityCoefficient> = fit
        .model
        .fit
        .as_ref()
        .unwrap()
        .coefficients
        .iter()
        .map(|c| c.parse().unwrap())
        .collect();
    let same = fit
        .model
        .with_coefficients(&names, &fit.solution.coefficients)
        .unwrap();
    assert_eq!(same, fit.model);
    let k = names
        .iter()
        .position(|c| c.to_string() == "b_k.SiO2")
        .unwrap();
    let mut moved = fit.solution.coefficients.clone();
    moved[k] += 100.0;
    let m2 = fit.model.with_coefficients(&names, &moved).unwrap();
    let c = Composition::from_mol_percent(&[
        (Oxide::SiO2, 72.0),
        (Oxide::Na2O, 14.0),
        (Oxide::CaO, 14.0),
    ])
    .unwrap();
    let (ViscosityCurve::Vft { b_k: b0, .. }, _) = fit.model.curve(&c).unwrap() else {
        panic!()
    };
    let (ViscosityCurve::Vft { b_k: b1, .. }, _) = m2.curve(&c).unwrap() else {
        panic!()
    };
    assert!((b1 - b0 - 100.0 * c.fraction(Oxide::SiO2)).abs() < 1e-9);
}

/// A one-phase melt of the kinetic tests (invented numbers, like the demo card).
fn melt(liquidus: f64, alpha: f64) -> Melt {
    Melt::new(
        ViscosityCurve::vft(-2.8, 4500.0, 480.0).unwrap(),
        Kelvin(liquidus),
        60000.0,
        6.0e-5,
        Interface::TurnbullAlpha(alpha),
        GrowthMode::Normal,
    )
    .unwrap()
}

fn rc(m: &Melt) -> f64 {
    Kinetics::new(m, &KineticOptions::default())
        .unwrap()
        .critical_rate()
        .unwrap()
        .0
}

#[test]
fn alpha_from_exact_critical_rates_is_the_true_alpha() {
    // Three melts, R_c computed at α = 0.35, fitted from α = 0.33: the fit
    // must land on 0.35 (the data are exact).
    let liquidi = [1280.0, 1300.0, 1320.0];
    let points: Vec<KineticPoint> = liquidi
        .iter()
        .enumerate()
        .map(|(i, &tl)| KineticPoint {
            row: i + 1,
            melt: melt(tl, 0.33),
            measurement: Measurement::CriticalRate(KelvinPerSecond(rc(&melt(tl, 0.35)))),
            phase: None,
        })
        .collect();
    let spec = KineticFitSpec {
        phases: vec!["crystal".into()],
        fit_nuclei: false,
        log10_sd: None,
    };
    let fit = fit_kinetics(&points, &KineticOptions::default(), &spec).unwrap();
    assert!(
        rel(fit.values[0], 0.35) < EXACT_DATA_RTOL,
        "{}",
        fit.values[0]
    );
    assert!(fit.residual_log10.iter().all(|r| r.abs() < 1e-6));
}

#[test]
fn alpha_standard_error_is_the_scatter_over_the_slope() {
    // One parameter, known scatter s (decades): se(α) = s / √(Σ_i J_i²),
    // J_i = ∂log10 R_c,i/∂α at the fitted α — the linearised least-squares
    // error. J is computed here by a central difference with a step 10× the
    // fit's own, so the check does not share its arithmetic.
    let s = 0.15;
    let offsets = [0.05, -0.05, 0.02];
    let liquidi = [1280.0, 1300.0, 1320.0];
    let points: Vec<KineticPoint> = liquidi
        .iter()
        .zip(offsets)
        .enumerate()
        .map(|(i, (&tl, off))| KineticPoint {
            row: i + 1,
            melt: melt(tl, 0.33),
            measurement: Measurement::CriticalRate(KelvinPerSecond(
                rc(&melt(tl, 0.35)) * 10f64.powf(off),
            )),
            phase: None,
        })
        .collect();
    let spec = KineticFitSpec {
        phases: vec!["crystal".into()],
        fit_nuclei: false,
        log10_sd: Some(s),
    };
    let fit = fit_kinetics(&points, &KineticOptions::default(), &spec).unwrap();
    let alpha = fit.values[0];
    let h = 1e-3 * alpha;
    let j: Vec<f64> = liquidi
        .iter()
        .map(|&tl| {
            (rc(&melt(tl, alpha + h)).log10() - rc(&melt(tl, alpha - h)).log10()) / (2.0 * h)
        })
        .collect();
    let sum_j2: f64 = j.iter().map(|v| v * v).sum();
    let expected = s / sum_j2.sqrt();
    let got = fit.solution.as_ref().unwrap().standard_error(0);
    assert!(rel(got, expected) < 1e-3, "{got} vs {expected}");
    // At the minimum the residuals have no component along J (Σ J_i r_i = 0):
    // the fitted α is the least-squares one, not just some α near the data.
    let r = &fit.residual_log10;
    let along: f64 = j.iter().zip(r).map(|(a, b)| a * b).sum();
    let norm_r = r.iter().map(|v| v * v).sum::<f64>().sqrt();
    assert!(along.abs() < 1e-3 * sum_j2.sqrt() * norm_r, "{along}");
}

#[test]
fn a_nucleation_rate_fixes_alpha_and_a_growth_rate_is_only_a_check() {
    let t = Kelvin(950.0);
    let truth = melt(1300.0, 0.35);
    let k = Kinetics::new(&truth, &KineticOptions::default()).unwrap();
    let r = k.phase_rates(0, t);
    let points = vec![
        KineticPoint {
            row: 1,
            melt: melt(1300.0, 0.30),
            measurement: Measurement::Nucleation {
                temperature: t,
                per_m3_s: r.nucleation_per_m3_s(),
            },
            phase: None,
        },
        KineticPoint {
            row: 2,
            melt: melt(1300.0, 0.30),
            measurement: Measurement::Growth {
                temperature: t,
                m_per_s: r.growth_m_per_s() * 2.0,
            },
            phase: None,
        },
    ];
    let spec = KineticFitSpec {
        phases: vec!["crystal".into()],
        fit_nuclei: false,
        log10_sd: None,
    };
    let fit = fit_kinetics(&points, &KineticOptions::default(), &spec).unwrap();
    assert!(rel(fit.values[0], 0.35) < EXACT_DATA_RTOL);
    // The growth rate does not depend on α: the model misses the doubled
    // value by log10 2, reported, not fitted.
    assert!((fit.residual_log10[1] + 2f64.log10()).abs() < 1e-9);
    // Growth alone fits nothing.
    let e = fit_kinetics(&points[1..], &KineticOptions::default(), &spec).unwrap_err();
    assert!(matches!(e, KineticFitError::NothingToFit(_)), "{e}");
}

#[test]
fn a_rate_no_alpha_reaches_is_refused_with_the_range() {
    let points = vec![KineticPoint {
        row: 3,
        melt: melt(1300.0, 0.33),
        measurement: Measurement::CriticalRate(KelvinPerSecond(1e15)),
        phase: None,
    }];
    let spec = KineticFitSpec {
        phases: vec!["crystal".into()],
        fit_nuclei: false,
        log10_sd: None,
    };
    let e = fit_kinetics(&points, &KineticOptions::default(), &spec).unwrap_err();
    let text = e.to_string();
    assert!(
        text.starts_with("row 3: the measured critical rate"),
        "{text}"
    );
    assert!(text.contains("the model gives"), "{text}");
}

#[test]
fn myega_recovers_its_coefficients_from_exact_points() {
    // Source: the MYEGA form of Mauro et al. (2009), PNAS 106, 19780.
    // Points on known MYEGA curves: L = −2.9, T_g and m
    // linear in mole fractions (invented values), five glasses; the fit starts
    // from a VFT fit and must land on the truth.
    let glasses = [
        [74.0, 13.0, 13.0],
        [70.0, 18.0, 12.0],
        [72.0, 12.0, 16.0],
        [76.0, 16.0, 8.0],
        [68.0, 15.0, 17.0],
    ];
    let tg = [1000.0, -600.0, 1400.0];
    let m = [25.0, 60.0, 100.0];
    let l = -2.9;
    let mut pts = Vec::new();
    for (g, v) in glasses.iter().enumerate() {
        let x = mol(&[(Oxide::SiO2, v[0]), (Oxide::Na2O, v[1]), (Oxide::CaO, v[2])]);
        let xs = [
            x[Oxide::SiO2.index()],
            x[Oxide::Na2O.index()],
            x[Oxide::CaO.index()],
        ];
        let tgx: f64 = tg.iter().zip(&xs).map(|(a, b)| a * b).sum();
        let mx: f64 = m.iter().zip(&xs).map(|(a, b)| a * b).sum();
        let curve = ViscosityCurve::myega(l, tgx, mx).unwrap();
        for level in [1.0, 2.0, 3.0, 4.5, 6.6, 9.0, 11.0, 12.5] {
            let t = curve.temperature_at(Log10PaS(level)).unwrap();
            pts.push(ViscosityPoint {
                row: pts.len() + 1,
                glass: g,
                x,
                temperature: t,
                log10_viscosity: Log10PaS(level),
            });
        }
    }
    let spec = ViscosityTerms {
        form: quenchwise::properties::fit::CurveForm::Myega,
        ..ViscosityTerms::vft()
    };
    let fit = fit_viscosity(&pts, &spec, "t", "t", &Provenance::default(), false).unwrap();
    let truth = |name: &str| -> f64 {
        match name {
            "log_eta_inf.constant" => l,
            "tg_k.SiO2" => tg[0],
            "tg_k.Na2O" => tg[1],
            "tg_k.CaO" => tg[2],
            "fragility.SiO2" => m[0],
            "fragility.Na2O" => m[1],
            "fragility.CaO" => m[2],
            other => panic!("{other}"),
        }
    };
    for (c, v) in fit.coefficients.iter().zip(&fit.solution.coefficients) {
        let t = truth(&c.to_string());
        assert!(rel(*v, t) < EXACT_DATA_RTOL, "{c}: {v} vs {t}");
    }
}

/// The counts a correct coverage p gives in n trials with probability at
/// least 1 − `tail`: from the Binomial(n, p) distribution (statrs), cutting
/// at most tail/2 from each side.
fn binomial_acceptance(p: f64, n: u64, tail: f64) -> (u64, u64) {
    use statrs::distribution::{Binomial, DiscreteCDF};
    let b = Binomial::new(p, n).unwrap();
    // P(X < lo) < tail/2 and P(X > hi) ≤ tail/2.
    let lo = (0..=n).find(|&k| b.cdf(k) >= tail / 2.0).unwrap();
    let hi = (0..=n).find(|&k| b.cdf(k) >= 1.0 - tail / 2.0).unwrap();
    (lo, hi)
}

#[test]
fn a_prediction_from_the_written_covariance_covers_the_truth_at_the_nominal_rate() {
    // The liquidus surface of the coefficient check above (five oxides, 20
    // glasses, σ = 5 K), now a prediction at a glass not in the data, from
    // the fit record a model set stores (coefficients by name and their
    // covariance, what `eval --uncertainty` draws). 1000 seeded repetitions.
    // Source: for ordinary least squares with normal errors and n − p = 15
    // degrees of freedom, ŷ0 ± t(0.95, 15)·√(x0ᵀ Cov x0) is an exact 90 %
    // confidence interval for the mean response x0ᵀβ, and
    // ŷ0 ± t(0.95, 15)·√(s² + x0ᵀ Cov x0) an exact 90 % prediction interval
    // for a new measurement at x0 (N. R. Draper, H. Smith, Applied
    // Regression Analysis, 3rd ed., Wiley 1998, ch. 3; from memory); t from
    // statrs. A band drawn from N(β̂, Cov) uses the normal, not t: its 5–95 %
    // quantiles are ŷ0 ± z(0.95)·√(x0ᵀ Cov x0), which cover the mean response
    // with probability P(|t_15| ≤ z(0.95)) (the same pivot), not 0.90.
    // Each count must lie in the central 1 − 10⁻⁴ of its Binomial(1000, p)
    // (statrs), so a correct interval fails by chance with probability below
    // 10⁻⁴ per check.
    use quenchwise::uncertainty::{propagate, Distribution, Settings, UncertainInput};
    use statrs::distribution::Normal;
    let oxides = [
        Oxide::SiO2,
        Oxide::Al2O3,
        Oxide::Na2O,
        Oxide::MgO,
        Oxide::CaO,
    ];
    let truth = [1280.0, 400.0, 650.0, 1050.0, 1850.0];
    let mut r = Rng(2027);
    let glasses: Vec<[f64; N_OXIDES]> = (0..20)
        .map(|_| {
            let na = 11.0 + 6.0 * r.uniform();
            let ca = 6.0 + 7.0 * r.uniform();
            let mg = 5.0 * r.uniform();
            let al = 0.5 + 2.5 * r.uniform();
            mol(&[
                (Oxide::SiO2, 100.0 - na - ca - mg - al),
                (Oxide::Na2O, na),
                (Oxide::CaO, ca),
                (Oxide::MgO, mg),
                (Oxide::Al2O3, al),
            ])
        })
        .collect();
    let x0 = mol(&[
        (Oxide::SiO2, 72.0),
        (Oxide::Na2O, 14.0),
        (Oxide::CaO, 9.0),
        (Oxide::MgO, 3.0),
        (Oxide::Al2O3, 2.0),
    ]);
    let set = demo_set();
    let devitrite = set
        .phases
        .iter()
        .position(|p| p.name == "devitrite")
        .unwrap();
    let true_t = |x: &[f64; N_OXIDES]| -> f64 {
        oxides
            .iter()
            .zip(truth)
            .map(|(o, a)| a * x[o.index()])
            .sum()
    };
    let reps = 1000u64;
    let t90 = interval_factor(0.90, Some(15));
    let z90 = Normal::standard().inverse_cdf(0.95);
    let (mut conf, mut pred, mut band, mut diag) = (0u64, 0u64, 0u64, 0u64);
    for rep in 0..reps {
        let pts: Vec<LiquidusPoint> = glasses
            .iter()
            .enumerate()
            .map(|(i, x)| LiquidusPoint {
                row: i + 1,
                x: *x,
                liquidus: Kelvin(true_t(x) + 5.0 * r.normal()),
                phase: devitrite,
            })
            .collect();
        let fit = fit_liquidus(&set, &pts, &[], &Provenance::default()).unwrap();
        let record = fit.set.phases[devitrite].liquidus_fit.clone().unwrap();
        let f = &fit.phases[0];
        // The written record: coefficient names, their covariance; the
        // estimates by the same names.
        let x: Vec<f64> = record
            .coefficients
            .iter()
            .map(|n| x0[n.parse::<Oxide>().unwrap().index()])
            .collect();
        let beta: Vec<f64> = record
            .coefficients
            .iter()
            .map(|n| {
                let k = f.terms.iter().position(|t| t.to_string() == *n).unwrap();
                f.solution.coefficients[k]
            })
            .collect();
        let c = &record.covariance;
        let y0: f64 = x.iter().zip(&beta).map(|(a, b)| a * b).sum();
        let var: f64 = (0..x.len())
            .flat_map(|i| (0..x.len()).map(move |j| (i, j)))
            .map(|(i, j)| x[i] * c[i][j] * x[j])
            .sum();
        let var_diag: f64 = (0..x.len()).map(|i| x[i] * x[i] * c[i][i]).sum();
        let s2 = record.residual_sd.powi(2);
        let mean = true_t(&x0);
        let new = mean + 5.0 * r.normal();
        conf += u64::from((y0 - mean).abs() <= t90 * var.sqrt());
        pred += u64::from((y0 - new).abs() <= t90 * (s2 + var).sqrt());
        diag += u64::from((y0 - mean).abs() <= t90 * var_diag.sqrt());
        // The drawn band: T_L(x0) for θ ~ N(β̂, Cov), through the library's
        // Monte Carlo (it summarises log10 of a positive output, so the
        // model returns 10^(T_L/1000 K)).
        let input = UncertainInput {
            name: "liquidus surface".into(),
            distribution: Distribution::MultiNormal {
                mean: beta.clone(),
                covariance: c.clone(),
            },
        };
        let p = propagate(
            &[input],
            Settings {
                draws: 400,
                seed: rep,
            },
            None,
            |v| Ok(10f64.powf(v[0].iter().zip(&x).map(|(a, b)| a * b).sum::<f64>() / 1000.0)),
        )
        .unwrap();
        let (lo, hi) = (
            1000.0 * p.critical_rate_p05_k_per_s.log10(),
            1000.0 * p.critical_rate_p95_k_per_s.log10(),
        );
        band += u64::from(lo <= mean && mean <= hi);
    }
    let p_band = {
        let t = StudentsT::new(0.0, 1.0, 15.0).unwrap();
        t.cdf(z90) - t.cdf(-z90)
    };
    eprintln!(
        "coverage over {reps}: confidence {:.3}, prediction {:.3} (nominal 0.90), drawn 5–95 % band {:.3} (exact {p_band:.4}), variances alone {:.3}",
        conf as f64 / reps as f64,
        pred as f64 / reps as f64,
        band as f64 / reps as f64,
        diag as f64 / reps as f64
    );
    let (lo90, hi90) = binomial_acceptance(0.90, reps, 1e-4);
    eprintln!(
        "accepted counts: {lo90}–{hi90} at 0.90, {:?} for the band",
        binomial_acceptance(p_band, reps, 1e-4)
    );
    for (what, k) in [("confidence", conf), ("prediction", pred)] {
        assert!(
            (lo90..=hi90).contains(&k),
            "{what} intervals cover in {k} of {reps}, expected {lo90}–{hi90}"
        );
    }
    let (lob, hib) = binomial_acceptance(p_band, reps, 1e-4);
    assert!(
        (lob..=hib).contains(&band),
        "the drawn band covers in {band} of {reps}, expected {lob}–{hib} (P(|t_15| ≤ z) = {p_band:.4})"
    );
    // The check bites: the same intervals from the variances alone (the
    // covariances of a mixture surface's coefficients dropped) miss the
    // nominal rate.
    assert!(
        !(lo90..=hi90).contains(&diag),
        "variances alone cover in {diag} of {reps}"
    );
}
