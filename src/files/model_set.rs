//! Model-set files (TOML): a viscosity model, the phases with their liquidus
//! surfaces and crystal data, and provenance, turned into a validated
//! [`ModelSet`] with every problem located by line. The two shipped files are
//! embedded in the binary, so the program runs with no files beside it.

use super::source::{read_text, Collector, DataError, Pair, Source};
use crate::composition::N_OXIDES;
use crate::properties::fit::{alpha_coefficient, NUCLEI_COEFFICIENT};
use crate::properties::{
    About, FitRecord, FractionBasis, GrowthMode, KineticsFitRecord, LiquidusSurface, MixtureModel,
    ModelSet, Phase, ProductTerm, Term, ViscosityCoefficient, ViscosityForm, ViscosityModel,
};
use crate::units::{Celsius, Kelvin};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::ops::Range;
use std::path::Path;
use toml::Spanned;

/// The demo model set, embedded.
pub const DEMO_MODELS: &str = include_str!("../../configs/models/demo-soda-lime.toml");
/// The Giordano–Russell–Dingwell (2008) viscosity model, embedded.
pub const GIORDANO2008_VISCOSITY: &str =
    include_str!("../../configs/models/giordano2008-viscosity.toml");
/// Name of the default model set.
pub const DEFAULT_MODEL_SET: &str = "demo-soda-lime";
/// The invented alkali-borosilicate model set (borosilicate 3.3 family), embedded.
pub const BOROSILICATE_MODELS: &str = include_str!("../../configs/models/demo-borosilicate.toml");
/// Name of the built-in alkali-borosilicate model set.
pub const BOROSILICATE_MODEL_SET: &str = "demo-borosilicate";

/// The built-in model sets: name and TOML text.
pub const BUILT_IN_MODEL_SETS: [(&str, &str); 2] = [
    (DEFAULT_MODEL_SET, DEMO_MODELS),
    (BOROSILICATE_MODEL_SET, BOROSILICATE_MODELS),
];

/// The text of the built-in model set called `name`, if there is one.
pub fn built_in_model_set(name: &str) -> Option<&'static str> {
    BUILT_IN_MODEL_SETS
        .iter()
        .find(|(n, _)| *n == name)
        .map(|(_, text)| *text)
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ModelFile {
    about: AboutFile,
    viscosity: ViscosityFile,
    #[serde(default)]
    phase: Vec<PhaseFile>,
    /// The joint fit of the phases' α, written by `quenchwise fit kinetics`.
    #[serde(default)]
    kinetics_fit: Option<FitFile>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct AboutFile {
    name: String,
    description: String,
    source: String,
    date: String,
    units: String,
    #[serde(default)]
    invented: bool,
    /// What was fitted to which data, one line per fit.
    #[serde(default)]
    fitted: Vec<String>,
}

/// The viscosity forms a file may name (`form = "vft"` or `"myega"`): model
/// sets and melt cards read the same names.
#[derive(Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub(crate) enum FormName {
    Vft,
    Myega,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ViscosityFile {
    form: Spanned<FormName>,
    name: String,
    source: String,
    #[serde(default)]
    #[allow(dead_code)]
    note: Option<String>,
    #[serde(default)]
    domain: BTreeMap<Spanned<String>, Spanned<Pair>>,
    a: Option<MixtureFile>,
    b_k: Option<MixtureFile>,
    c_k: Option<MixtureFile>,
    log_eta_inf: Option<MixtureFile>,
    tg_k: Option<MixtureFile>,
    fragility: Option<MixtureFile>,
    /// How the coefficients were fitted, written by `quenchwise fit viscosity`.
    #[serde(default)]
    fit: Option<FitFile>,
}

/// A fit record: provenance, statistics, and the covariance of the fitted
/// coefficients (see `properties::FitRecord`). `options` and
/// `heterogeneous_nuclei_per_m3` belong to `[kinetics_fit]` only.
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct FitFile {
    data: String,
    data_sha256: String,
    date: String,
    method: String,
    points: usize,
    #[serde(default)]
    glasses: Option<usize>,
    unit: String,
    rmse: f64,
    residual_sd: f64,
    #[serde(default)]
    dof: Option<usize>,
    #[serde(default)]
    r_squared: Option<f64>,
    #[serde(default)]
    cv_method: Option<String>,
    #[serde(default)]
    cv_rmse: Option<f64>,
    #[serde(default)]
    cv_rmse_k: Option<f64>,
    coefficients: Spanned<Vec<Spanned<String>>>,
    covariance: Spanned<Vec<Vec<f64>>>,
    #[serde(default)]
    options: Option<Spanned<String>>,
    #[serde(default)]
    heterogeneous_nuclei_per_m3: Option<Spanned<f64>>,
}

#[derive(Deserialize, Clone, Copy, PartialEq, Eq)]
enum TemperatureUnit {
    #[serde(rename = "K")]
    Kelvin,
    #[serde(rename = "degC")]
    Celsius,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct MixtureFile {
    basis: FractionBasis,
    #[serde(default)]
    unit: Option<TemperatureUnit>,
    #[serde(default)]
    constant: Option<Spanned<f64>>,
    #[serde(default)]
    linear: BTreeMap<Spanned<String>, Spanned<f64>>,
    #[serde(default)]
    pairs: BTreeMap<Spanned<String>, Spanned<f64>>,
    #[serde(default)]
    products: Vec<ProductFile>,
    #[serde(default)]
    standard_errors: BTreeMap<Spanned<String>, Spanned<f64>>,
    #[serde(default)]
    #[allow(dead_code)]
    note: Option<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ProductFile {
    coefficient: Spanned<f64>,
    groups: Vec<Spanned<String>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct PhaseFile {
    name: Spanned<String>,
    formula: String,
    enthalpy_of_fusion_j_per_mol: Spanned<f64>,
    molar_volume_m3_per_mol: Spanned<f64>,
    melting_point_k: Spanned<f64>,
    growth: GrowthMode,
    turnbull_alpha: Spanned<f64>,
    /// Standard error of α, written by `quenchwise fit kinetics`.
    #[serde(default)]
    turnbull_alpha_sd: Option<Spanned<f64>>,
    #[serde(default)]
    calibrated_against: Option<String>,
    #[serde(default)]
    #[allow(dead_code)]
    note: Option<String>,
    #[serde(default)]
    heat_capacity_change_j_per_mol_k: Option<Spanned<f64>>,
    /// A liquidus surface as a mixture model (K or °C) ...
    #[serde(default)]
    liquidus: Option<MixtureFile>,
    /// ... or by freezing-point depression from the fusion data.
    #[serde(default)]
    freezing_point_depression: Option<FreezingFile>,
    /// How the liquidus surface was fitted, written by `quenchwise fit liquidus`.
    #[serde(default)]
    liquidus_fit: Option<FitFile>,
    #[serde(default)]
    domain: BTreeMap<Spanned<String>, Spanned<Pair>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct FreezingFile {
    /// Oxide units per formula unit, e.g. { Na2O = 1, SiO2 = 2 }.
    components: BTreeMap<Spanned<String>, Spanned<f64>>,
    /// A mixture model added to ln a (dimensionless).
    #[serde(default)]
    correction: Option<MixtureFile>,
    #[serde(default)]
    #[allow(dead_code)]
    note: Option<String>,
}

/// Parse a model set file.
///
/// # Errors
/// Syntax errors, unknown keys or oxides, missing parts, non-positive crystal data;
/// every problem is reported at once with its line.
pub fn parse_model_set(src: &Source) -> Result<ModelSet, DataError> {
    let hint = "a model set has [about], [viscosity] and one [[phase]] per crystal phase; see configs/models/demo-soda-lime.toml";
    let file: ModelFile = src.parse(hint)?;
    let mut c = Collector::new(src);
    let viscosity = viscosity_model(&mut c, &file.viscosity);
    if file.phase.is_empty() {
        c.push(
            0..0,
            "a model set needs at least one [[phase]] with a liquidus surface",
        );
    }
    let mut phases = Vec::new();
    for p in &file.phase {
        let enthalpy = c.positive(
            "enthalpy_of_fusion_j_per_mol",
            &p.enthalpy_of_fusion_j_per_mol,
            "J/mol",
        );
        let volume = c.positive(
            "molar_volume_m3_per_mol",
            &p.molar_volume_m3_per_mol,
            "m3/mol",
        );
        let tm = c.positive("melting_point_k", &p.melting_point_k, "K");
        let alpha = c.positive("turnbull_alpha", &p.turnbull_alpha, "");
        if volume > 1e-2 {
            c.push(p.molar_volume_m3_per_mol.span(), format!("molar_volume_m3_per_mol = {volume} m3/mol is implausible; give m3/mol (e.g. 4.0e-5), not cm3/mol"));
        }
        let name_span = p.name.span();
        if phases.iter().any(|q: &Phase| &q.name == p.name.get_ref()) {
            c.push(
                name_span.clone(),
                format!("the phase '{}' is given twice", p.name.get_ref()),
            );
        }
        let liquidus = match (&p.liquidus, &p.freezing_point_depression) {
            (Some(m), None) => LiquidusSurface::Mixture(mixture(&mut c, m, true, name_span)),
            (None, Some(f)) => {
                let mut nu = [0.0; N_OXIDES];
                let mut seen = Vec::new();
                for (k, v) in &f.components {
                    if let Some(o) = c.oxide_once(k, &mut seen) {
                        let n = *v.get_ref();
                        if !(n.is_finite() && n > 0.0) {
                            c.push(
                                v.span(),
                                format!("{o} must count a positive number of oxide units per formula unit, got {n}"),
                            );
                        }
                        nu[o.index()] = n;
                    }
                }
                if f.components.is_empty() {
                    c.push(
                        name_span,
                        "freezing_point_depression needs components, e.g. { Na2O = 1, SiO2 = 2 }",
                    );
                }
                let correction = f
                    .correction
                    .as_ref()
                    .map(|m| mixture(&mut c, m, false, p.name.span()));
                LiquidusSurface::FreezingPointDepression {
                    stoichiometry: nu,
                    correction,
                }
            }
            _ => {
                c.push(
                    name_span,
                    format!(
                        "phase '{}' needs exactly one of [phase.liquidus] (a mixture model) and [phase.freezing_point_depression]",
                        p.name.get_ref()
                    ),
                );
                LiquidusSurface::Mixture(MixtureModel::constant(f64::NAN))
            }
        };
        let dcp = p.heat_capacity_change_j_per_mol_k.as_ref().map(|v| {
            let x = *v.get_ref();
            if !(x.is_finite() && x >= 0.0) {
                c.push(
                    v.span(),
                    format!("heat_capacity_change_j_per_mol_k must be zero or positive, got {x} J/(mol K)"),
                );
            }
            x
        });
        let domain = c.domain(&p.domain, |o| match &liquidus {
            LiquidusSurface::Mixture(m) => m.uses(o),
            LiquidusSurface::FreezingPointDepression {
                stoichiometry,
                correction,
            } => stoichiometry[o.index()] != 0.0 || correction.as_ref().is_some_and(|m| m.uses(o)),
        });
        let alpha_sd = p.turnbull_alpha_sd.as_ref().map(|v| {
            let x = *v.get_ref();
            if !(x.is_finite() && x >= 0.0) {
                c.push(
                    v.span(),
                    format!("turnbull_alpha_sd must be zero or positive, got {x}"),
                );
            }
            x
        });
        let liquidus_fit = p.liquidus_fit.as_ref().map(|f| {
            let record = fit_record(&mut c, f, false);
            for (name, span) in record.coefficients.iter().zip(&f.coefficients.get_ref()[..]) {
                let known = match (&liquidus, name.parse::<Term>()) {
                    (LiquidusSurface::Mixture(m), Ok(t)) => m.coefficient(t).is_some(),
                    _ => false,
                };
                if !known {
                    c.push(
                        span.span(),
                        format!(
                            "'{name}' is not a coefficient of the {} liquidus surface (write constant, an oxide, or OXIDE*OXIDE of its [phase.liquidus])",
                            p.name.get_ref()
                        ),
                    );
                }
            }
            record
        });
        phases.push(Phase {
            name: p.name.get_ref().clone(),
            formula: p.formula.clone(),
            enthalpy_of_fusion_j_per_mol: enthalpy,
            molar_volume_m3_per_mol: volume,
            melting_point: Kelvin(tm),
            growth: p.growth,
            turnbull_alpha: alpha,
            turnbull_alpha_sd: alpha_sd,
            calibrated_against: p.calibrated_against.clone(),
            heat_capacity_change_j_per_mol_k: dcp,
            liquidus,
            domain,
            liquidus_fit,
        });
    }
    let kinetics_fit = file.kinetics_fit.as_ref().map(|f| {
        let record = fit_record(&mut c, f, true);
        for (name, span) in record.coefficients.iter().zip(&f.coefficients.get_ref()[..]) {
            let known = name == NUCLEI_COEFFICIENT
                || phases.iter().any(|p| &alpha_coefficient(&p.name) == name);
            if !known {
                c.push(
                    span.span(),
                    format!("'{name}' is not a kinetic factor of this set (write PHASE.turnbull_alpha with a phase's name, or {NUCLEI_COEFFICIENT})"),
                );
            }
        }
        KineticsFitRecord {
            record,
            options: f
                .options
                .as_ref()
                .map(|o| o.get_ref().clone())
                .unwrap_or_default(),
            heterogeneous_nuclei_per_m3: f
                .heterogeneous_nuclei_per_m3
                .as_ref()
                .map(|v| *v.get_ref())
                .unwrap_or(0.0),
        }
    });
    c.finish(hint)?;
    // A missing viscosity part was recorded as a problem above.
    let viscosity = viscosity.ok_or_else(|| {
        src.error(
            vec![src.problem(
                file.viscosity.form.span(),
                "the viscosity model is incomplete",
            )],
            Some(hint.to_string()),
        )
    })?;
    Ok(ModelSet {
        about: About {
            name: file.about.name,
            description: file.about.description,
            source: file.about.source,
            date: file.about.date,
            units: file.about.units,
            invented: file.about.invented,
            fitted: file.about.fitted,
        },
        viscosity,
        phases,
        kinetics_fit,
        melting_viscosity_pa_s: 10f64.powf(crate::properties::fixpoints::MELTING),
    })
}

/// Parse a file that holds (at least) a viscosity model; its phases are ignored.
///
/// # Errors
/// As [`parse_model_set`], for the viscosity part.
pub fn parse_viscosity_model(src: &Source) -> Result<ViscosityModel, DataError> {
    let hint =
        "a viscosity file has [about] and [viscosity]; see configs/models/giordano2008-viscosity.toml";
    let file: ModelFile = src.parse(hint)?;
    let mut c = Collector::new(src);
    let v = viscosity_model(&mut c, &file.viscosity);
    c.finish(hint)?;
    v.ok_or_else(|| {
        src.error(
            vec![src.problem(
                file.viscosity.form.span(),
                "the viscosity model is incomplete",
            )],
            Some(hint.to_string()),
        )
    })
}

fn viscosity_model(c: &mut Collector, v: &ViscosityFile) -> Option<ViscosityModel> {
    let span = v.form.span();
    let need = |c: &mut Collector, m: &Option<MixtureFile>, key: &str, temp: bool| match m {
        Some(m) => Some(mixture(c, m, temp, span.clone())),
        None => {
            c.push(
                span.clone(),
                format!("this viscosity form needs [viscosity.{key}]"),
            );
            None
        }
    };
    let form = match v.form.get_ref() {
        FormName::Vft => {
            for (k, m) in [
                ("log_eta_inf", &v.log_eta_inf),
                ("tg_k", &v.tg_k),
                ("fragility", &v.fragility),
            ] {
                if m.is_some() {
                    c.push(
                        span.clone(),
                        format!("[viscosity.{k}] belongs to form = \"myega\", not \"vft\""),
                    );
                }
            }
            let a = need(c, &v.a, "a", false);
            let b = need(c, &v.b_k, "b_k", true);
            let cc = need(c, &v.c_k, "c_k", true);
            match (a, b, cc) {
                (Some(a), Some(b_k), Some(c_k)) => Some(ViscosityForm::Vft { a, b_k, c_k }),
                _ => None,
            }
        }
        FormName::Myega => {
            let l = need(c, &v.log_eta_inf, "log_eta_inf", false);
            let t = need(c, &v.tg_k, "tg_k", true);
            let m = need(c, &v.fragility, "fragility", false);
            match (l, t, m) {
                (Some(log_eta_inf), Some(tg_k), Some(fragility)) => Some(ViscosityForm::Myega {
                    log_eta_inf,
                    tg_k,
                    fragility,
                }),
                _ => None,
            }
        }
    };
    // A B coefficient in °C would be wrong: B is a temperature *difference*.
    if let (Some(ViscosityForm::Vft { .. }), Some(b)) = (&form, &v.b_k) {
        if b.unit == Some(TemperatureUnit::Celsius) {
            c.push(
                span.clone(),
                "b_k is a temperature difference: give it in K (unit = \"K\")",
            );
        }
    }
    let domain = c.domain(&v.domain, |o| match &form {
        Some(ViscosityForm::Vft { a, b_k, c_k }) => [a, b_k, c_k].iter().any(|m| m.uses(o)),
        Some(ViscosityForm::Myega {
            log_eta_inf,
            tg_k,
            fragility,
        }) => [log_eta_inf, tg_k, fragility].iter().any(|m| m.uses(o)),
        None => true,
    });
    let fit = v.fit.as_ref().map(|f| fit_record(c, f, false));
    if let (Some(form), Some(rec), Some(f)) = (&form, &fit, &v.fit) {
        for (name, span) in rec.coefficients.iter().zip(&f.coefficients.get_ref()[..]) {
            let known = name
                .parse::<ViscosityCoefficient>()
                .ok()
                .and_then(|k| form.mixture(k.param)?.coefficient(k.term))
                .is_some();
            if !known {
                c.push(
                    span.span(),
                    format!("'{name}' is not a coefficient of this viscosity model (write PARAMETER.TERM, e.g. b_k.SiO2, a.constant, c_k.Na2O*CaO)"),
                );
            }
        }
    }
    form.map(|form| ViscosityModel {
        name: v.name.clone(),
        source: v.source.clone(),
        form,
        domain,
        fit,
    })
}

/// A fit record read and checked: non-negative counts and statistics, a
/// covariance that matches the coefficients and can be sampled.
fn fit_record(c: &mut Collector, f: &FitFile, kinetics: bool) -> FitRecord {
    let record = FitRecord {
        data: f.data.clone(),
        data_sha256: f.data_sha256.clone(),
        date: f.date.clone(),
        method: f.method.clone(),
        points: f.points,
        glasses: f.glasses,
        unit: f.unit.clone(),
        rmse: f.rmse,
        residual_sd: f.residual_sd,
        dof: f.dof,
        r_squared: f.r_squared,
        cv_method: f.cv_method.clone(),
        cv_rmse: f.cv_rmse,
        cv_rmse_k: f.cv_rmse_k,
        coefficients: f
            .coefficients
            .get_ref()
            .iter()
            .map(|s| s.get_ref().clone())
            .collect(),
        covariance: f.covariance.get_ref().clone(),
    };
    let span = f.covariance.span();
    for (k, v) in [
        ("rmse", Some(f.rmse)),
        ("residual_sd", Some(f.residual_sd)),
        ("cv_rmse", f.cv_rmse),
        ("cv_rmse_k", f.cv_rmse_k),
    ] {
        if let Some(v) = v {
            if !(v.is_finite() && v >= 0.0) {
                c.push(
                    span.clone(),
                    format!("{k} must be zero or positive, got {v}"),
                );
            }
        }
    }
    if let Err(e) = record.check_covariance() {
        c.push(span.clone(), e);
    }
    match (kinetics, &f.options, &f.heterogeneous_nuclei_per_m3) {
        (true, None, _) => c.push(
            f.coefficients.span(),
            "[kinetics_fit] needs options (the kinetic options the fitted α hold for)",
        ),
        (false, Some(o), _) => c.push(o.span(), "options belongs to [kinetics_fit] only"),
        (false, None, Some(n)) => c.push(
            n.span(),
            "heterogeneous_nuclei_per_m3 belongs to [kinetics_fit] only",
        ),
        _ => {}
    }
    if let Some(n) = &f.heterogeneous_nuclei_per_m3 {
        let v = *n.get_ref();
        if !(v.is_finite() && v >= 0.0) {
            c.push(
                n.span(),
                format!("heterogeneous_nuclei_per_m3 must be zero or positive, got {v} per m3"),
            );
        }
    }
    record
}

/// The model set named `name` (built in) or read from a file path.
///
/// # Errors
/// An unknown name, an unreadable or invalid file.
pub fn load_model_set(spec: Option<&Path>) -> Result<ModelSet, DataError> {
    load_model_set_text(spec).map(|(set, _)| set)
}

/// As [`load_model_set`], with the text it was read from (for writing a
/// fitted copy that keeps the base's notes).
///
/// # Errors
/// As [`load_model_set`].
pub fn load_model_set_text(spec: Option<&Path>) -> Result<(ModelSet, String), DataError> {
    let name = spec.map_or(Some(DEFAULT_MODEL_SET), |p| p.to_str());
    match name.and_then(|n| built_in_model_set(n).map(|t| (n, t))) {
        Some((n, text)) => {
            let set = parse_model_set(&Source::new(format!("<built-in {n}>"), text))?;
            Ok((set, text.to_string()))
        }
        None => {
            // `spec` is Some here: None names the default, which is built in.
            let p = spec.unwrap_or(Path::new(DEFAULT_MODEL_SET));
            let text = read_text(p)?;
            let set = parse_model_set(&Source::new(p.display().to_string(), &text))?;
            Ok((set, text))
        }
    }
}

/// Whether a model-set argument names a built-in set.
pub fn is_built_in(spec: Option<&Path>) -> bool {
    spec.is_none_or(|p| p.to_str().and_then(built_in_model_set).is_some())
}

/// A viscosity model by built-in name (`giordano2008`, `demo-soda-lime`) or file path.
///
/// # Errors
/// An unreadable or invalid file.
pub fn load_viscosity_model(spec: &Path) -> Result<ViscosityModel, DataError> {
    match spec.to_str() {
        Some("giordano2008") => parse_viscosity_model(&Source::new(
            "<built-in giordano2008>",
            GIORDANO2008_VISCOSITY,
        )),
        Some(n) if built_in_model_set(n).is_some() => {
            let text = built_in_model_set(n).unwrap_or_default();
            parse_viscosity_model(&Source::new(format!("<built-in {n}>"), text))
        }
        _ => {
            let text = read_text(spec)?;
            parse_viscosity_model(&Source::new(spec.display().to_string(), &text))
        }
    }
}

fn mixture(
    c: &mut Collector,
    m: &MixtureFile,
    want_temperature: bool,
    span: Range<usize>,
) -> MixtureModel {
    // S6: every coefficient a finite number, located.
    let coef = |c: &mut Collector, what: &str, v: &Spanned<f64>| -> f64 {
        let x = *v.get_ref();
        if !x.is_finite() {
            c.push(v.span(), format!("{what} must be a finite number, got {x}"));
        }
        x
    };
    let constant = m
        .constant
        .as_ref()
        .map_or(0.0, |v| coef(c, "the constant", v));
    let mut out = MixtureModel::constant(constant);
    out.basis = m.basis;
    let mut seen = Vec::new();
    for (k, v) in &m.linear {
        if let Some(o) = c.oxide_once(k, &mut seen) {
            out.linear[o.index()] = coef(c, &format!("the coefficient of {o}"), v);
        }
    }
    let mut seen_pairs: Vec<(usize, usize, &Spanned<String>)> = Vec::new();
    for (k, v) in &m.pairs {
        match k.get_ref().split_once('*') {
            Some((a, b)) => {
                let a = Spanned::new(k.span(), a.trim().to_string());
                let b = Spanned::new(k.span(), b.trim().to_string());
                if let (Some(a), Some(b)) = (c.oxide(&a), c.oxide(&b)) {
                    let (i, j) = (a.index().min(b.index()), a.index().max(b.index()));
                    if let Some((.., first)) =
                        seen_pairs.iter().find(|(p, q, _)| (*p, *q) == (i, j))
                    {
                        let line = c.src.problem(first.span(), "").line;
                        c.push(
                            k.span(),
                            format!(
                                "pair '{}' names {a}*{b} again (first as '{}' on line {line})",
                                k.get_ref(),
                                first.get_ref()
                            ),
                        );
                    }
                    seen_pairs.push((i, j, k));
                    let x = coef(c, &format!("the coefficient of {a}*{b}"), v);
                    out.pairs.push((a.index(), b.index(), x));
                }
            }
            None => c.push(
                k.span(),
                format!("pair '{}' must be written OXIDE*OXIDE", k.get_ref()),
            ),
        }
    }
    for p in &m.products {
        let groups: Vec<_> = p.groups.iter().filter_map(|g| c.expr(g)).collect();
        out.products.push(ProductTerm {
            coefficient: coef(c, "a product coefficient", &p.coefficient),
            groups,
        });
    }
    if !m.standard_errors.is_empty() {
        let mut se = [0.0; N_OXIDES];
        let mut seen = Vec::new();
        for (k, v) in &m.standard_errors {
            if let Some(o) = c.oxide_once(k, &mut seen) {
                let x = coef(c, &format!("the standard error of {o}"), v);
                if x < 0.0 {
                    c.push(
                        v.span(),
                        format!("the standard error of {o} must not be negative, got {x}"),
                    );
                }
                se[o.index()] = x;
            }
        }
        out.linear_standard_errors = Some(se);
    }
    match (want_temperature, m.unit) {
        (true, None) => c.push(span, "a temperature model needs unit = \"K\" or \"degC\""),
        (true, Some(TemperatureUnit::Celsius)) => {
            // Convert once, here: an additive model in °C is the same model in K
            // with the constant shifted (fractions sum to one).
            out.constant = Celsius(out.constant).to_kelvin().0;
        }
        _ => {}
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn built_in_files_parse() {
        let m = parse_model_set(&Source::new("demo", DEMO_MODELS)).unwrap();
        let names: Vec<&str> = m.phases.iter().map(|p| p.name.as_str()).collect();
        assert_eq!(
            names,
            [
                "devitrite",
                "wollastonite",
                "cristobalite",
                "diopside",
                "sodium disilicate"
            ]
        );
        // Values as written in the file.
        assert_eq!(m.phases[2].enthalpy_of_fusion_j_per_mol, 8900.0);
        assert_eq!(m.phases[2].melting_point.0, 1999.0);
        let v =
            parse_viscosity_model(&Source::new("giordano2008", GIORDANO2008_VISCOSITY)).unwrap();
        assert!(v.name.contains("Giordano"), "{}", v.name);
    }

    #[test]
    fn regression_s6_nan_and_infinite_coefficients_are_located() {
        // TOML writes NaN and the infinities as nan and inf: a model set
        // with one used to load and then fail every evaluation.
        let located = |from: &str, to: &str, message: &str| {
            let text = DEMO_MODELS.replacen(from, to, 1);
            assert_ne!(
                text, DEMO_MODELS,
                "the demo file changed: pick another value"
            );
            let err = parse_model_set(&Source::new("m.toml", &text))
                .unwrap_err()
                .to_string();
            let line = text.lines().position(|l| l.contains(to)).unwrap() + 1;
            assert!(err.contains(&format!("m.toml:{line}: {message}")), "{err}");
        };
        located(
            "constant = -2.45",
            "constant = nan",
            "the constant must be a finite number, got NaN",
        );
        located(
            "SiO2 = 6464.0",
            "SiO2 = -inf",
            "the coefficient of SiO2 must be a finite number, got -inf",
        );
    }

    #[test]
    fn regression_s7_an_oxide_named_twice_in_other_case_is_located() {
        let text = DEMO_MODELS.replacen("SiO2 = 6464.0,", "SiO2 = 6464.0, SIO2 = 1.0,", 1);
        assert_ne!(
            text, DEMO_MODELS,
            "the demo file changed: pick another value"
        );
        let err = parse_model_set(&Source::new("m.toml", &text))
            .unwrap_err()
            .to_string();
        let line = text.lines().position(|l| l.contains("SIO2 = 1.0")).unwrap() + 1;
        assert!(
            err.contains(&format!(
                "m.toml:{line}: 'SIO2' names SiO2 again (first as 'SiO2' on line {line})"
            )),
            "{err}"
        );
    }

    #[test]
    fn unknown_oxide_is_located() {
        let text = DEMO_MODELS.replacen("SiO2 = [", "SiO3 = [", 1);
        let err = parse_model_set(&Source::new("m.toml", &text))
            .unwrap_err()
            .to_string();
        let line = text.lines().position(|l| l.contains("SiO3 = [")).unwrap() + 1;
        assert!(
            err.contains(&format!("m.toml:{line}: unknown oxide 'SiO3'")),
            "{err}"
        );
    }
}
