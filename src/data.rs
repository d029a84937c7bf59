//! Data files: model sets (TOML), melt cards (TOML) and composition recipes,
//! turned into the core's validated types with errors that name the file, the
//! line and what was expected.
//!
//! The built-in model files are embedded in the binary, so the program runs
//! with no files beside it.

use crate::composition::{Basis, Composition, CompositionError, Oxide, N_OXIDES};
use crate::kinetics::{
    DrivingForce, GrowthMode, Interface, KineticOptions, KineticsError, Melt, ViscosityCurve,
};
use crate::models::{
    About, Domain, FractionBasis, MixtureModel, ModelSet, Phase, ProductTerm, ViscosityForm,
    ViscosityModel,
};
use crate::units::{Celsius, Kelvin};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::fmt;
use std::ops::Range;
use std::path::Path;
use toml::Spanned;

/// The demo model set, embedded.
pub const DEMO_MODELS: &str = include_str!("../configs/models/demo-soda-lime.toml");
/// The Giordano–Russell–Dingwell (2008) viscosity model, embedded.
pub const GRD2008_VISCOSITY: &str = include_str!("../configs/models/grd2008-viscosity.toml");
/// Name of the default model set.
pub const DEFAULT_MODEL_SET: &str = "demo-soda-lime";

/// One problem in a data file, located.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    pub line: usize,
    pub message: String,
    /// The offending line with its neighbours and a caret.
    pub snippet: String,
}

/// Why a data file was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DataError {
    #[error("{path}: cannot read the file: {message}")]
    Read { path: String, message: String },
    #[error("{}", format_problems(path, problems, hint))]
    Invalid {
        path: String,
        problems: Vec<Problem>,
        hint: Option<String>,
    },
}

fn format_problems(path: &str, problems: &[Problem], hint: &Option<String>) -> String {
    let mut s = String::new();
    for (k, p) in problems.iter().enumerate() {
        if k > 0 {
            s.push('\n');
        }
        s.push_str(&format!("{path}:{}: {}\n{}", p.line, p.message, p.snippet));
    }
    if let Some(h) = hint {
        s.push_str(&format!("\nhint: {h}"));
    }
    s
}

/// A source text with its name, for locating byte offsets.
pub struct Source<'a> {
    pub path: String,
    pub text: &'a str,
}

impl<'a> Source<'a> {
    /// Name a text.
    pub fn new(path: impl Into<String>, text: &'a str) -> Self {
        Source {
            path: path.into(),
            text,
        }
    }

    /// A problem at a byte span.
    pub fn problem(&self, span: Range<usize>, message: impl Into<String>) -> Problem {
        let start = span.start.min(self.text.len());
        let line_no = self.text[..start].matches('\n').count() + 1;
        let lines: Vec<&str> = self.text.lines().collect();
        let line_start = self.text[..start].rfind('\n').map_or(0, |i| i + 1);
        let col = self.text[line_start..start].chars().count();
        let mut snippet = String::new();
        let width = (line_no + 1).to_string().len();
        if line_no >= 2 {
            if let Some(prev) = lines.get(line_no - 2) {
                snippet.push_str(&format!("  {:>width$} | {prev}\n", line_no - 1));
            }
        }
        if let Some(cur) = lines.get(line_no - 1) {
            snippet.push_str(&format!("  {line_no:>width$} | {cur}\n"));
            let len = (span.end.min(line_start + cur.len()).saturating_sub(start)).max(1);
            snippet.push_str(&format!(
                "  {:>width$} | {}{}",
                "",
                " ".repeat(col),
                "^".repeat(len.min(60))
            ));
        }
        if let Some(next) = lines.get(line_no) {
            snippet.push_str(&format!("\n  {:>width$} | {next}", line_no + 1));
        }
        Problem {
            line: line_no,
            message: message.into(),
            snippet,
        }
    }

    fn error(&self, problems: Vec<Problem>, hint: Option<String>) -> DataError {
        DataError::Invalid {
            path: self.path.clone(),
            problems,
            hint,
        }
    }

    /// Deserialize TOML, mapping a syntax or shape error to a located problem.
    fn parse<T: for<'de> Deserialize<'de>>(&self, hint: &str) -> Result<T, DataError> {
        toml::from_str(self.text).map_err(|e| {
            let span = e.span().unwrap_or(0..0);
            let message = e.message().trim().replace('\n', " ");
            self.error(vec![self.problem(span, message)], Some(hint.to_string()))
        })
    }
}

/// Read a text file, naming it in the error.
///
/// # Errors
/// The file cannot be read.
pub fn read_text(path: &Path) -> Result<String, DataError> {
    std::fs::read_to_string(path).map_err(|e| DataError::Read {
        path: path.display().to_string(),
        message: e.to_string(),
    })
}

// ---------------------------------------------------------------------------
// Model files

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ModelFile {
    about: AboutFile,
    viscosity: ViscosityFile,
    #[serde(default)]
    phase: Vec<PhaseFile>,
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
}

#[derive(Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
enum FormName {
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
    domain: BTreeMap<Spanned<String>, Spanned<[f64; 2]>>,
    a: Option<MixtureFile>,
    b_k: Option<MixtureFile>,
    c_k: Option<MixtureFile>,
    log_eta_inf: Option<MixtureFile>,
    tg_k: Option<MixtureFile>,
    fragility: Option<MixtureFile>,
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
    constant: f64,
    #[serde(default)]
    linear: BTreeMap<Spanned<String>, f64>,
    #[serde(default)]
    pairs: BTreeMap<Spanned<String>, f64>,
    #[serde(default)]
    products: Vec<ProductFile>,
    #[serde(default)]
    standard_errors: BTreeMap<Spanned<String>, f64>,
    #[serde(default)]
    #[allow(dead_code)]
    note: Option<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ProductFile {
    coefficient: f64,
    groups: Vec<Spanned<String>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct PhaseFile {
    name: String,
    formula: String,
    enthalpy_of_fusion_j_per_mol: Spanned<f64>,
    molar_volume_m3_per_mol: Spanned<f64>,
    melting_point_k: Spanned<f64>,
    growth: GrowthMode,
    turnbull_alpha: Spanned<f64>,
    #[serde(default)]
    calibrated_against: Option<String>,
    #[serde(default)]
    #[allow(dead_code)]
    note: Option<String>,
    liquidus: MixtureFile,
    #[serde(default)]
    domain: BTreeMap<Spanned<String>, Spanned<[f64; 2]>>,
}

struct Collector<'s, 'a> {
    src: &'s Source<'a>,
    problems: Vec<Problem>,
}

impl Collector<'_, '_> {
    fn push(&mut self, span: Range<usize>, msg: impl Into<String>) {
        self.problems.push(self.src.problem(span, msg));
    }

    fn oxide(&mut self, name: &Spanned<String>) -> Option<Oxide> {
        match name.get_ref().parse::<Oxide>() {
            Ok(o) => Some(o),
            Err(_) => {
                self.push(
                    name.span(),
                    format!(
                        "unknown oxide '{}'; known oxides are {}",
                        name.get_ref(),
                        Oxide::known_list()
                    ),
                );
                None
            }
        }
    }

    /// Parse "SiO2+TiO2-P2O5" or "2*Fe2O3+FeO" into oxide weights.
    fn group(&mut self, g: &Spanned<String>) -> Option<[f64; N_OXIDES]> {
        let mut w = [0.0; N_OXIDES];
        let text = g.get_ref().replace(' ', "");
        let mut sign = 1.0;
        let mut term = String::new();
        let mut ok = true;
        let flush = |term: &str, sign: f64, w: &mut [f64; N_OXIDES], this: &mut Self| {
            if term.is_empty() {
                this.push(g.span(), format!("empty term in group '{}'", g.get_ref()));
                return false;
            }
            let (k, name) = match term.split_once('*') {
                Some((k, n)) => match k.parse::<f64>() {
                    Ok(k) => (k, n),
                    Err(_) => {
                        this.push(
                            g.span(),
                            format!("cannot read the factor '{k}' in '{}'", g.get_ref()),
                        );
                        return false;
                    }
                },
                None => (1.0, term),
            };
            match name.parse::<Oxide>() {
                Ok(o) => {
                    w[o.index()] += sign * k;
                    true
                }
                Err(_) => {
                    this.push(
                        g.span(),
                        format!(
                            "unknown oxide '{name}' in group '{}'; known oxides are {}",
                            g.get_ref(),
                            Oxide::known_list()
                        ),
                    );
                    false
                }
            }
        };
        for ch in text.chars() {
            if (ch == '+' || ch == '-') && !term.is_empty() {
                ok &= flush(&term, sign, &mut w, self);
                term.clear();
                sign = if ch == '+' { 1.0 } else { -1.0 };
            } else if ch == '-' && term.is_empty() {
                sign = -sign;
            } else if ch != '+' {
                term.push(ch);
            }
        }
        ok &= flush(&term, sign, &mut w, self);
        ok.then_some(w)
    }

    fn domain(&mut self, d: &BTreeMap<Spanned<String>, Spanned<[f64; 2]>>) -> Domain {
        let mut out = Domain::default();
        for (k, v) in d {
            if let Some(o) = self.oxide(k) {
                let [lo, hi] = *v.get_ref();
                if !(lo.is_finite() && hi.is_finite() && 0.0 <= lo && lo <= hi && hi <= 100.0) {
                    self.push(v.span(), format!("domain of {o} must be [min, max] with 0 <= min <= max <= 100 mol%, got [{lo}, {hi}]"));
                }
                out.min[o.index()] = lo;
                out.max[o.index()] = hi;
            }
        }
        out
    }

    fn mixture(
        &mut self,
        m: &MixtureFile,
        want_temperature: bool,
        span: Range<usize>,
    ) -> MixtureModel {
        let mut out = MixtureModel::constant(m.constant);
        out.basis = m.basis;
        for (k, v) in &m.linear {
            if let Some(o) = self.oxide(k) {
                out.linear[o.index()] = *v;
            }
        }
        for (k, v) in &m.pairs {
            match k.get_ref().split_once('*') {
                Some((a, b)) => {
                    let a = Spanned::new(k.span(), a.trim().to_string());
                    let b = Spanned::new(k.span(), b.trim().to_string());
                    if let (Some(a), Some(b)) = (self.oxide(&a), self.oxide(&b)) {
                        out.pairs.push((a.index(), b.index(), *v));
                    }
                }
                None => self.push(
                    k.span(),
                    format!("pair '{}' must be written OXIDE*OXIDE", k.get_ref()),
                ),
            }
        }
        for p in &m.products {
            let groups: Vec<_> = p.groups.iter().filter_map(|g| self.group(g)).collect();
            out.products.push(ProductTerm {
                coefficient: p.coefficient,
                groups,
            });
        }
        if !m.standard_errors.is_empty() {
            let mut se = [0.0; N_OXIDES];
            for (k, v) in &m.standard_errors {
                if let Some(o) = self.oxide(k) {
                    se[o.index()] = *v;
                }
            }
            out.linear_standard_errors = Some(se);
        }
        match (want_temperature, m.unit) {
            (true, None) => self.push(span, "a temperature model needs unit = \"K\" or \"degC\""),
            (true, Some(TemperatureUnit::Celsius)) => {
                // Convert once, here: an additive model in °C is the same model in K
                // with the constant shifted (fractions sum to one).
                out.constant = Celsius(out.constant).to_kelvin().0;
            }
            _ => {}
        }
        out
    }

    fn positive(&mut self, name: &str, v: &Spanned<f64>, unit: &str) -> f64 {
        let x = *v.get_ref();
        if !(x > 0.0 && x.is_finite()) {
            self.push(v.span(), format!("{name} must be positive, got {x} {unit}"));
        }
        x
    }
}

/// Parse a model set file.
///
/// # Errors
/// Syntax errors, unknown keys or oxides, missing parts, non-positive crystal data;
/// every problem is reported at once with its line.
pub fn parse_model_set(src: &Source) -> Result<ModelSet, DataError> {
    let hint = "a model set has [about], [viscosity] and one [[phase]] per crystal phase; see configs/models/demo-soda-lime.toml";
    let file: ModelFile = src.parse(hint)?;
    let mut c = Collector {
        src,
        problems: Vec::new(),
    };
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
        let liquidus = c.mixture(&p.liquidus, true, p.turnbull_alpha.span());
        let domain = c.domain(&p.domain);
        phases.push(Phase {
            name: p.name.clone(),
            formula: p.formula.clone(),
            enthalpy_of_fusion_j_per_mol: enthalpy,
            molar_volume_m3_per_mol: volume,
            melting_point: Kelvin(tm),
            growth: p.growth,
            turnbull_alpha: alpha,
            calibrated_against: p.calibrated_against.clone(),
            liquidus_k: liquidus,
            domain,
        });
    }
    if !c.problems.is_empty() {
        return Err(src.error(c.problems, Some(hint.to_string())));
    }
    Ok(ModelSet {
        about: About {
            name: file.about.name,
            description: file.about.description,
            source: file.about.source,
            date: file.about.date,
            units: file.about.units,
            invented: file.about.invented,
        },
        viscosity: viscosity.expect("no problems were recorded"),
        phases,
    })
}

/// Parse a file that holds (at least) a viscosity model; its phases are ignored.
///
/// # Errors
/// As [`parse_model_set`], for the viscosity part.
pub fn parse_viscosity_model(src: &Source) -> Result<ViscosityModel, DataError> {
    let hint =
        "a viscosity file has [about] and [viscosity]; see configs/models/grd2008-viscosity.toml";
    let file: ModelFile = src.parse(hint)?;
    let mut c = Collector {
        src,
        problems: Vec::new(),
    };
    let v = viscosity_model(&mut c, &file.viscosity);
    if !c.problems.is_empty() {
        return Err(src.error(c.problems, Some(hint.to_string())));
    }
    Ok(v.expect("no problems were recorded"))
}

fn viscosity_model(c: &mut Collector, v: &ViscosityFile) -> Option<ViscosityModel> {
    let span = v.form.span();
    let domain = c.domain(&v.domain);
    let need = |c: &mut Collector, m: &Option<MixtureFile>, key: &str, temp: bool| match m {
        Some(m) => Some(c.mixture(m, temp, span.clone())),
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
    form.map(|form| ViscosityModel {
        name: v.name.clone(),
        source: v.source.clone(),
        form,
        domain,
    })
}

/// The model set named `name` (built in) or read from a file path.
///
/// # Errors
/// An unknown name, an unreadable or invalid file.
pub fn load_model_set(spec: Option<&Path>) -> Result<ModelSet, DataError> {
    match spec {
        None => parse_model_set(&Source::new("<built-in demo-soda-lime>", DEMO_MODELS)),
        Some(p) if p.as_os_str() == DEFAULT_MODEL_SET => {
            parse_model_set(&Source::new("<built-in demo-soda-lime>", DEMO_MODELS))
        }
        Some(p) => {
            let text = read_text(p)?;
            parse_model_set(&Source::new(p.display().to_string(), &text))
        }
    }
}

/// A viscosity model by built-in name (`grd2008`, `demo-soda-lime`) or file path.
///
/// # Errors
/// An unreadable or invalid file.
pub fn load_viscosity_model(spec: &Path) -> Result<ViscosityModel, DataError> {
    match spec.to_str() {
        Some("grd2008") => {
            parse_viscosity_model(&Source::new("<built-in grd2008>", GRD2008_VISCOSITY))
        }
        Some(DEFAULT_MODEL_SET) => {
            parse_viscosity_model(&Source::new("<built-in demo-soda-lime>", DEMO_MODELS))
        }
        _ => {
            let text = read_text(spec)?;
            parse_viscosity_model(&Source::new(spec.display().to_string(), &text))
        }
    }
}

// ---------------------------------------------------------------------------
// Melt cards

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardFile {
    viscosity: CardViscosity,
    crystal: CardCrystal,
    #[serde(default)]
    kinetics: Option<CardKinetics>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardViscosity {
    a: Spanned<f64>,
    b_k: Spanned<f64>,
    c_k: Spanned<f64>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardCrystal {
    liquidus_k: Spanned<f64>,
    enthalpy_of_fusion_j_per_mol: Spanned<f64>,
    molar_volume_m3_per_mol: Spanned<f64>,
    turnbull_alpha: Option<Spanned<f64>>,
    interface_energy_j_per_m2: Option<Spanned<f64>>,
    growth: Spanned<GrowthMode>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardKinetics {
    detectable_fraction: Option<Spanned<f64>>,
    driving_force: Option<DrivingForce>,
    heterogeneous_nuclei_per_m3: Option<Spanned<f64>>,
    contact_angle_deg: Option<Spanned<f64>>,
}

/// The values of a melt card or a table row, before validation.
#[derive(Debug, Clone, PartialEq)]
pub struct MeltValues {
    pub a: f64,
    pub b_k: f64,
    pub c_k: f64,
    pub liquidus_k: f64,
    pub enthalpy_of_fusion_j_per_mol: f64,
    pub molar_volume_m3_per_mol: f64,
    pub turnbull_alpha: Option<f64>,
    pub interface_energy_j_per_m2: Option<f64>,
    pub growth: GrowthMode,
    pub detectable_fraction: Option<f64>,
    pub driving_force: Option<DrivingForce>,
    pub heterogeneous_nuclei_per_m3: Option<f64>,
    pub contact_angle_deg: Option<f64>,
}

/// Why a set of melt values was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MeltValueError {
    #[error("give exactly one of turnbull_alpha and interface_energy_j_per_m2")]
    InterfaceChoice,
    #[error(transparent)]
    Kinetics(#[from] KineticsError),
}

impl MeltValues {
    /// Validate into a melt and its kinetic options (starting from `base` options).
    ///
    /// # Errors
    /// Both or neither interface values; anything [`Melt::new`] or
    /// [`KineticOptions::validate`] refuses.
    pub fn build(&self, base: &KineticOptions) -> Result<(Melt, KineticOptions), MeltValueError> {
        let interface = match (self.turnbull_alpha, self.interface_energy_j_per_m2) {
            (Some(a), None) => Interface::TurnbullAlpha(a),
            (None, Some(s)) => Interface::EnergyJPerM2(s),
            _ => return Err(MeltValueError::InterfaceChoice),
        };
        let melt = Melt::new(
            ViscosityCurve::vft(self.a, self.b_k, self.c_k)?,
            Kelvin(self.liquidus_k),
            self.enthalpy_of_fusion_j_per_mol,
            self.molar_volume_m3_per_mol,
            interface,
            self.growth,
        )?;
        let mut opts = *base;
        if let Some(v) = self.detectable_fraction {
            opts.detectable_fraction = v;
        }
        if let Some(v) = self.driving_force {
            opts.driving_force = v;
        }
        if let Some(v) = self.heterogeneous_nuclei_per_m3 {
            opts.heterogeneous_nuclei_per_m3 = v;
        }
        if let Some(v) = self.contact_angle_deg {
            opts.contact_angle_deg = v;
        }
        opts.validate()?;
        Ok((melt, opts))
    }
}

/// Parse a melt card.
///
/// # Errors
/// Syntax, missing or unknown keys, values the kinetics refuse — with the line.
pub fn parse_melt_card(
    src: &Source,
    base: &KineticOptions,
) -> Result<(Melt, KineticOptions), DataError> {
    let hint = "a melt card has [viscosity] a, b_k, c_k; [crystal] liquidus_k, enthalpy_of_fusion_j_per_mol, molar_volume_m3_per_mol, turnbull_alpha (or interface_energy_j_per_m2), growth; optional [kinetics]";
    let card: CardFile = src.parse(hint)?;
    let k = card.kinetics.as_ref();
    let values = MeltValues {
        a: *card.viscosity.a.get_ref(),
        b_k: *card.viscosity.b_k.get_ref(),
        c_k: *card.viscosity.c_k.get_ref(),
        liquidus_k: *card.crystal.liquidus_k.get_ref(),
        enthalpy_of_fusion_j_per_mol: *card.crystal.enthalpy_of_fusion_j_per_mol.get_ref(),
        molar_volume_m3_per_mol: *card.crystal.molar_volume_m3_per_mol.get_ref(),
        turnbull_alpha: card.crystal.turnbull_alpha.as_ref().map(|v| *v.get_ref()),
        interface_energy_j_per_m2: card
            .crystal
            .interface_energy_j_per_m2
            .as_ref()
            .map(|v| *v.get_ref()),
        growth: *card.crystal.growth.get_ref(),
        detectable_fraction: k.and_then(|k| k.detectable_fraction.as_ref().map(|v| *v.get_ref())),
        driving_force: k.and_then(|k| k.driving_force),
        heterogeneous_nuclei_per_m3: k
            .and_then(|k| k.heterogeneous_nuclei_per_m3.as_ref().map(|v| *v.get_ref())),
        contact_angle_deg: k.and_then(|k| k.contact_angle_deg.as_ref().map(|v| *v.get_ref())),
    };
    values.build(base).map_err(|e| {
        // Point at the key the error is about.
        let span = match &e {
            MeltValueError::InterfaceChoice => card.crystal.growth.span(),
            MeltValueError::Kinetics(ke) => {
                let name = match ke {
                    KineticsError::NotFinite { name, .. }
                    | KineticsError::NotPositive { name, .. }
                    | KineticsError::OutOfRange { name, .. } => *name,
                    KineticsError::LiquidusBelowDivergence { .. } => "liquidus_k",
                    _ => "",
                };
                let pick = |o: Option<&Spanned<f64>>| o.map(|s| s.span());
                match name {
                    "a" => Some(card.viscosity.a.span()),
                    "b_k" => Some(card.viscosity.b_k.span()),
                    "c_k" => Some(card.viscosity.c_k.span()),
                    "liquidus_k" => Some(card.crystal.liquidus_k.span()),
                    "enthalpy_of_fusion_j_per_mol" => {
                        Some(card.crystal.enthalpy_of_fusion_j_per_mol.span())
                    }
                    "molar_volume_m3_per_mol" => Some(card.crystal.molar_volume_m3_per_mol.span()),
                    "turnbull_alpha" => pick(card.crystal.turnbull_alpha.as_ref()),
                    "interface_energy_j_per_m2" => {
                        pick(card.crystal.interface_energy_j_per_m2.as_ref())
                    }
                    "detectable_fraction" => pick(k.and_then(|k| k.detectable_fraction.as_ref())),
                    "heterogeneous_nuclei_per_m3" => {
                        pick(k.and_then(|k| k.heterogeneous_nuclei_per_m3.as_ref()))
                    }
                    "contact_angle_deg" => pick(k.and_then(|k| k.contact_angle_deg.as_ref())),
                    _ => None,
                }
                .unwrap_or(0..0)
            }
        };
        src.error(
            vec![src.problem(span, crate::report::first_line(&e.to_string()))],
            e.to_string()
                .lines()
                .nth(1)
                .map(|h| h.trim_start_matches("hint: ").to_string())
                .or(Some(hint.to_string())),
        )
    })
}

// ---------------------------------------------------------------------------
// Recipe files (one composition)

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RecipeFile {
    basis: Spanned<String>,
    #[serde(default)]
    #[allow(dead_code)]
    name: Option<String>,
    oxides: BTreeMap<Spanned<String>, Spanned<f64>>,
}

/// Parse a one-composition recipe file:
/// `basis = "mol%"` (or `"wt%"`) and an `[oxides]` table.
///
/// # Errors
/// Unknown basis or oxide, bad amounts, a sum far from 100 — with the line.
pub fn parse_recipe(src: &Source, tolerance: f64) -> Result<Composition, DataError> {
    let hint =
        "a recipe file has basis = \"mol%\" or \"wt%\" and an [oxides] table, e.g. SiO2 = 72.0";
    let file: RecipeFile = src.parse(hint)?;
    let mut c = Collector {
        src,
        problems: Vec::new(),
    };
    let basis = match file.basis.get_ref().as_str() {
        "mol%" => Basis::MolPercent,
        "wt%" => Basis::WtPercent,
        other => {
            c.push(
                file.basis.span(),
                format!("basis must be \"mol%\" or \"wt%\", got \"{other}\""),
            );
            Basis::MolPercent
        }
    };
    let mut pairs = Vec::new();
    for (k, v) in &file.oxides {
        if let Some(o) = c.oxide(k) {
            let x = *v.get_ref();
            if x.is_nan() || x < 0.0 || x.is_infinite() {
                c.push(
                    v.span(),
                    format!("{o} amount must be a non-negative number, got {x}"),
                );
            }
            pairs.push((o, x));
        }
    }
    if !c.problems.is_empty() {
        return Err(src.error(c.problems, Some(hint.to_string())));
    }
    Composition::new(&pairs, basis, tolerance).map_err(|e: CompositionError| {
        let span = file.oxides.keys().next().map(|k| k.span()).unwrap_or(0..0);
        let msg = e.to_string();
        let mut lines = msg.lines();
        src.error(
            vec![src.problem(span, lines.next().unwrap_or_default())],
            lines
                .next()
                .map(|h| h.trim_start_matches("hint: ").to_string()),
        )
    })
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.line, self.message)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn built_in_files_parse() {
        let m = parse_model_set(&Source::new("demo", DEMO_MODELS)).unwrap();
        assert!(!m.phases.is_empty());
        parse_viscosity_model(&Source::new("grd", GRD2008_VISCOSITY)).unwrap();
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
