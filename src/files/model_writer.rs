//! Writing model sets (TOML) in the format `files::model_set` reads: the
//! provenance, the viscosity model, every phase with its liquidus surface
//! and crystal data, and the fit records (statistics and covariance) a fit
//! adds. Numbers are written so they read back bit for bit. A set read and
//! written again reads back equal (tested); comments of a base file are not
//! kept, its `note` keys are.

use crate::composition::{Oxide, N_OXIDES};
use crate::properties::{
    About, Domain, FitRecord, FractionBasis, GrowthMode, KineticsFitRecord, LiquidusSurface,
    MixtureModel, ModelSet, Phase, ViscosityForm, ViscosityModel,
};
use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::Path;

/// The `note` keys of a model file, kept when a fitted copy is written.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Notes {
    /// `[viscosity] note`.
    pub viscosity: Option<String>,
    /// Per phase name: `note`, and the note of its freezing-point-depression table.
    pub phases: BTreeMap<String, (Option<String>, Option<String>)>,
}

impl Notes {
    /// The notes of a model file's text (none if it does not parse as TOML).
    pub fn of_text(text: &str) -> Notes {
        let Ok(t) = text.parse::<toml::Table>() else {
            return Notes::default();
        };
        let note = |v: Option<&toml::Value>| {
            v.and_then(|v| v.get("note"))
                .and_then(|n| n.as_str())
                .map(str::to_string)
        };
        let mut phases = BTreeMap::new();
        if let Some(arr) = t.get("phase").and_then(|p| p.as_array()) {
            for p in arr {
                if let Some(name) = p.get("name").and_then(|n| n.as_str()) {
                    phases.insert(
                        name.to_string(),
                        (note(Some(p)), note(p.get("freezing_point_depression"))),
                    );
                }
            }
        }
        Notes {
            viscosity: note(t.get("viscosity")),
            phases,
        }
    }
}

/// A number as TOML that reads back to the same f64: the shortest decimal
/// that round-trips, with a decimal point or an exponent so TOML reads a
/// float; exponent form for very small or large magnitudes.
pub fn num(x: f64) -> String {
    if x == 0.0 {
        return "0.0".into();
    }
    let a = x.abs();
    if !(1e-4..1e15).contains(&a) {
        return format!("{x:e}");
    }
    let s = format!("{x}");
    if s.contains('.') {
        s
    } else {
        s + ".0"
    }
}

/// A TOML basic string.
pub fn string(s: &str) -> String {
    let mut out = String::from("\"");
    for ch in s.chars() {
        match ch {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\t' => out.push_str("\\t"),
            '\r' => out.push_str("\\r"),
            c if (c as u32) < 0x20 || c as u32 == 0x7f => {
                let _ = write!(out, "\\u{:04X}", c as u32);
            }
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// A linear group such as "SiO2+TiO2" or "2*Fe2O3+FeO" (what
/// `composition::expr::parse_linear` reads).
fn group(w: &[f64; N_OXIDES]) -> String {
    let mut s = String::new();
    for o in Oxide::ALL {
        let v = w[o.index()];
        if v == 0.0 {
            continue;
        }
        let sign = if v < 0.0 { "-" } else { "+" };
        if !s.is_empty() || v < 0.0 {
            s.push_str(sign);
        }
        let a = v.abs();
        if a == 1.0 {
            s.push_str(o.formula());
        } else {
            // Display never uses an exponent, which the parser would split at '-'.
            let _ = write!(s, "{a}*{}", o.formula());
        }
    }
    s
}

fn inline_oxides(values: &[f64; N_OXIDES], keep: impl Fn(usize) -> bool) -> String {
    let parts: Vec<String> = Oxide::ALL
        .iter()
        .filter(|o| keep(o.index()))
        .map(|o| format!("{} = {}", o.formula(), num(values[o.index()])))
        .collect();
    format!("{{ {} }}", parts.join(", "))
}

fn mixture(out: &mut String, table: &str, m: &MixtureModel, unit_k: bool, note: Option<&str>) {
    let _ = writeln!(out, "\n[{table}]");
    let _ = writeln!(
        out,
        "basis = {}",
        string(match m.basis {
            FractionBasis::MoleFraction => "mole_fraction",
            FractionBasis::MolPercent => "mol_percent",
        })
    );
    if unit_k {
        let _ = writeln!(out, "unit = \"K\"");
    }
    if m.constant != 0.0 {
        let _ = writeln!(out, "constant = {}", num(m.constant));
    }
    if m.linear.iter().any(|v| *v != 0.0) {
        let _ = writeln!(
            out,
            "linear = {}",
            inline_oxides(&m.linear, |i| m.linear[i] != 0.0)
        );
    }
    if !m.pairs.is_empty() {
        let parts: Vec<String> = m
            .pairs
            .iter()
            .map(|(i, j, v)| {
                format!(
                    "{} = {}",
                    string(&format!("{}*{}", Oxide::ALL[*i], Oxide::ALL[*j])),
                    num(*v)
                )
            })
            .collect();
        let _ = writeln!(out, "pairs = {{ {} }}", parts.join(", "));
    }
    if !m.products.is_empty() {
        let _ = writeln!(out, "products = [");
        for p in &m.products {
            let groups: Vec<String> = p.groups.iter().map(|g| string(&group(g))).collect();
            let _ = writeln!(
                out,
                "  {{ coefficient = {}, groups = [{}] }},",
                num(p.coefficient),
                groups.join(", ")
            );
        }
        let _ = writeln!(out, "]");
    }
    if let Some(se) = &m.linear_standard_errors {
        if se.iter().any(|v| *v != 0.0) {
            let _ = writeln!(
                out,
                "standard_errors = {}",
                inline_oxides(se, |i| se[i] != 0.0 || m.linear[i] != 0.0)
            );
        }
    }
    if let Some(n) = note {
        let _ = writeln!(out, "note = {}", string(n));
    }
}

fn domain(out: &mut String, table: &str, d: &Domain) {
    let listed: Vec<Oxide> = Oxide::ALL
        .into_iter()
        // An oxide left out reads back as [0, 0]: not covered.
        .filter(|o| d.covers(*o))
        .collect();
    if listed.is_empty() {
        return;
    }
    let _ = writeln!(out, "\n[{table}]   # mol%");
    for o in listed {
        let _ = writeln!(
            out,
            "{} = [{}, {}]",
            o.formula(),
            num(d.min[o.index()]),
            num(d.max[o.index()])
        );
    }
}

fn fit(out: &mut String, table: &str, f: &FitRecord, kinetics: Option<&KineticsFitRecord>) {
    let _ = writeln!(out, "\n[{table}]");
    let _ = writeln!(out, "data = {}", string(&f.data));
    let _ = writeln!(out, "data_sha256 = {}", string(&f.data_sha256));
    let _ = writeln!(out, "date = {}", string(&f.date));
    let _ = writeln!(out, "method = {}", string(&f.method));
    let _ = writeln!(out, "points = {}", f.points);
    if let Some(g) = f.glasses {
        let _ = writeln!(out, "glasses = {g}");
    }
    let _ = writeln!(out, "unit = {}", string(&f.unit));
    let _ = writeln!(out, "rmse = {}", num(f.rmse));
    let _ = writeln!(out, "residual_sd = {}", num(f.residual_sd));
    if let Some(d) = f.dof {
        let _ = writeln!(out, "dof = {d}");
    }
    if let Some(r) = f.r_squared {
        let _ = writeln!(out, "r_squared = {}", num(r));
    }
    if let Some(m) = &f.cv_method {
        let _ = writeln!(out, "cv_method = {}", string(m));
    }
    if let Some(v) = f.cv_rmse {
        let _ = writeln!(out, "cv_rmse = {}", num(v));
    }
    if let Some(v) = f.cv_rmse_k {
        let _ = writeln!(out, "cv_rmse_k = {}", num(v));
    }
    if let Some(k) = kinetics {
        let _ = writeln!(out, "options = {}", string(&k.options));
        let _ = writeln!(
            out,
            "heterogeneous_nuclei_per_m3 = {}",
            num(k.heterogeneous_nuclei_per_m3)
        );
    }
    let names: Vec<String> = f.coefficients.iter().map(|c| string(c)).collect();
    let _ = writeln!(out, "coefficients = [{}]", names.join(", "));
    let _ = writeln!(out, "covariance = [");
    for row in &f.covariance {
        let vals: Vec<String> = row.iter().map(|v| num(*v)).collect();
        let _ = writeln!(out, "  [{}],", vals.join(", "));
    }
    let _ = writeln!(out, "]");
}

fn about(out: &mut String, a: &About) {
    let _ = writeln!(out, "[about]");
    let _ = writeln!(out, "name = {}", string(&a.name));
    let _ = writeln!(out, "description = {}", string(&a.description));
    let _ = writeln!(out, "source = {}", string(&a.source));
    let _ = writeln!(out, "date = {}", string(&a.date));
    let _ = writeln!(out, "units = {}", string(&a.units));
    let _ = writeln!(out, "invented = {}", a.invented);
    if !a.fitted.is_empty() {
        let _ = writeln!(out, "fitted = [");
        for f in &a.fitted {
            let _ = writeln!(out, "  {},", string(f));
        }
        let _ = writeln!(out, "]");
    }
}

fn viscosity(out: &mut String, v: &ViscosityModel, note: Option<&str>) {
    let _ = writeln!(out, "\n[viscosity]");
    let form = match v.form {
        ViscosityForm::Vft { .. } => "vft",
        ViscosityForm::Myega { .. } => "myega",
    };
    let _ = writeln!(out, "form = {}", string(form));
    let _ = writeln!(out, "name = {}", string(&v.name));
    let _ = writeln!(out, "source = {}", string(&v.source));
    if let Some(n) = note {
        let _ = writeln!(out, "note = {}", string(n));
    }
    domain(out, "viscosity.domain", &v.domain);
    for p in v.form.params() {
        let m = v.form.mixture(p).expect("a form has its own parameters");
        let unit_k = matches!(p.key(), "b_k" | "c_k" | "tg_k");
        mixture(out, &format!("viscosity.{}", p.key()), m, unit_k, None);
    }
    if let Some(f) = &v.fit {
        fit(out, "viscosity.fit", f, None);
    }
}

fn phase(out: &mut String, p: &Phase, notes: &Notes) {
    let (note, fpd_note) = notes.phases.get(&p.name).cloned().unwrap_or_default();
    let _ = writeln!(out, "\n[[phase]]");
    let _ = writeln!(out, "name = {}", string(&p.name));
    let _ = writeln!(out, "formula = {}", string(&p.formula));
    let _ = writeln!(
        out,
        "enthalpy_of_fusion_j_per_mol = {}",
        num(p.enthalpy_of_fusion_j_per_mol)
    );
    let _ = writeln!(
        out,
        "molar_volume_m3_per_mol = {}",
        num(p.molar_volume_m3_per_mol)
    );
    let _ = writeln!(out, "melting_point_k = {}", num(p.melting_point.0));
    let _ = writeln!(
        out,
        "growth = {}",
        string(match p.growth {
            GrowthMode::Normal => "normal",
            GrowthMode::Screw => "screw",
        })
    );
    let _ = writeln!(out, "turnbull_alpha = {}", num(p.turnbull_alpha));
    if let Some(sd) = p.turnbull_alpha_sd {
        let _ = writeln!(out, "turnbull_alpha_sd = {}", num(sd));
    }
    if let Some(c) = &p.calibrated_against {
        let _ = writeln!(out, "calibrated_against = {}", string(c));
    }
    if let Some(cp) = p.heat_capacity_change_j_per_mol_k {
        let _ = writeln!(out, "heat_capacity_change_j_per_mol_k = {}", num(cp));
    }
    if let Some(n) = &note {
        let _ = writeln!(out, "note = {}", string(n));
    }
    match &p.liquidus {
        LiquidusSurface::Mixture(m) => mixture(out, "phase.liquidus", m, true, None),
        LiquidusSurface::FreezingPointDepression {
            stoichiometry,
            correction,
        } => {
            let _ = writeln!(out, "\n[phase.freezing_point_depression]");
            let _ = writeln!(
                out,
                "components = {}",
                inline_oxides(stoichiometry, |i| stoichiometry[i] != 0.0)
            );
            if let Some(n) = &fpd_note {
                let _ = writeln!(out, "note = {}", string(n));
            }
            if let Some(c) = correction {
                mixture(
                    out,
                    "phase.freezing_point_depression.correction",
                    c,
                    false,
                    None,
                );
            }
        }
    }
    if let Some(f) = &p.liquidus_fit {
        fit(out, "phase.liquidus_fit", f, None);
    }
    domain(out, "phase.domain", &p.domain);
}

fn header_comment(out: &mut String, header: &[String]) {
    for line in header {
        if line.is_empty() {
            out.push_str("#\n");
        } else {
            let _ = writeln!(out, "# {line}");
        }
    }
    if !header.is_empty() {
        out.push('\n');
    }
}

/// A model set as TOML text, with `header` as comment lines on top.
pub fn model_set_toml(set: &ModelSet, notes: &Notes, header: &[String]) -> String {
    let mut out = String::new();
    header_comment(&mut out, header);
    about(&mut out, &set.about);
    viscosity(&mut out, &set.viscosity, notes.viscosity.as_deref());
    for p in &set.phases {
        phase(&mut out, p, notes);
    }
    if let Some(k) = &set.kinetics_fit {
        fit(&mut out, "kinetics_fit", &k.record, Some(k));
    }
    out
}

/// A viscosity file (an `[about]` and a `[viscosity]`, no phases), which
/// `--viscosity-model FILE` and `[models] viscosity` load.
pub fn viscosity_toml(about_: &About, v: &ViscosityModel, header: &[String]) -> String {
    let mut out = String::new();
    header_comment(&mut out, header);
    about(&mut out, about_);
    viscosity(&mut out, v, None);
    out
}

/// Write a text file atomically (a temporary file beside it, then a rename).
///
/// # Errors
/// The write or the rename fails (the message names the path).
pub fn write_text(path: &Path, text: &str) -> Result<(), String> {
    let tmp = path.with_extension(format!(
        "{}.partial",
        path.extension().and_then(|e| e.to_str()).unwrap_or("out")
    ));
    std::fs::write(&tmp, text)
        .and_then(|_| std::fs::rename(&tmp, path))
        .map_err(|e| format!("writing {}: {e}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::files::model_set::{
        parse_model_set, parse_viscosity_model, DEMO_MODELS, GIORDANO2008_VISCOSITY,
    };
    use crate::files::source::Source;

    #[test]
    fn numbers_read_back_exactly() {
        for x in [
            0.0,
            1.0,
            -2.45,
            1311.66,
            2.27e-4,
            1e-7,
            6.02214076e23,
            0.1 + 0.2,
            -1e-300,
            123456.789,
        ] {
            let s = num(x);
            let back: f64 = toml::from_str::<toml::Table>(&format!("x = {s}")).unwrap()["x"]
                .as_float()
                .unwrap();
            assert_eq!(back.to_bits(), x.to_bits(), "{x} → {s}");
        }
        assert_eq!(string("a \"b\"\n"), "\"a \\\"b\\\"\\n\"");
    }

    #[test]
    fn the_shipped_sets_survive_a_round_trip() {
        // Read, write, read again: the same set (products and pairs of the
        // Giordano, Russell & Dingwell 2008 model included), and the demo's notes are kept.
        let demo = parse_model_set(&Source::new("demo", DEMO_MODELS)).unwrap();
        let text = model_set_toml(&demo, &Notes::of_text(DEMO_MODELS), &["a header".into()]);
        let back = parse_model_set(&Source::new("written", &text)).unwrap();
        assert_eq!(back, demo);
        assert!(text.contains("Richet et al. 1982"), "notes are kept");
        let published =
            parse_viscosity_model(&Source::new("giordano2008", GIORDANO2008_VISCOSITY)).unwrap();
        let about = demo.about.clone();
        let text = viscosity_toml(&about, &published, &[]);
        let back = parse_viscosity_model(&Source::new("written", &text)).unwrap();
        assert_eq!(back, published);
    }
}
