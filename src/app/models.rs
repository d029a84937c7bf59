//! `quenchwise models`: what a model set contains and where it comes from.

use super::Outcome;
use crate::cli::ModelArgs;
use quenchwise::error::Error;
use quenchwise::files::model_set::{load_model_set, load_viscosity_model};
use quenchwise::properties::{GrowthMode, ModelSet};
use std::fmt::Write as _;
use std::io::Write;
use std::path::Path;

/// A model set, with its viscosity model replaced when asked.
///
/// # Errors
/// A file that cannot be read or is not a valid model set.
pub fn load_models(models: Option<&Path>, viscosity: Option<&Path>) -> Result<ModelSet, Error> {
    let mut set = load_model_set(models)?;
    if let Some(v) = viscosity {
        set = set.with_viscosity(load_viscosity_model(v)?);
    }
    Ok(set)
}

pub fn models(a: ModelArgs) -> Result<Outcome, Error> {
    let m = load_models(a.models.as_deref(), None)?;
    let mut out = String::new();
    let _ = writeln!(out, "model set     {}", m.about.name);
    let _ = writeln!(out, "description   {}", m.about.description);
    let _ = writeln!(out, "source        {}", m.about.source);
    let _ = writeln!(out, "date          {}", m.about.date);
    let _ = writeln!(out, "units         {}", m.about.units);
    if m.about.invented {
        let _ = writeln!(
            out,
            "status        INVENTED coefficients: for demonstration only"
        );
    }
    let _ = writeln!(
        out,
        "\nviscosity     {} ({})",
        m.viscosity.name, m.viscosity.source
    );
    let _ = writeln!(out, "\ncrystal phases");
    let _ = writeln!(
        out,
        "  {:<20} {:<14} {:>10} {:>12} {:>9} {:>7} {:>7}  calibration",
        "name", "formula", "ΔH_m kJ/mol", "V_m cm³/mol", "T_m K", "growth", "α"
    );
    for p in &m.phases {
        let _ = writeln!(
            out,
            "  {:<20} {:<14} {:>10.1} {:>12.1} {:>9.0} {:>7} {:>7.3}  {}",
            p.name,
            p.formula,
            p.enthalpy_of_fusion_j_per_mol / 1e3,
            p.molar_volume_m3_per_mol * 1e6,
            p.melting_point.0,
            match p.growth {
                GrowthMode::Normal => "normal",
                GrowthMode::Screw => "screw",
            },
            p.turnbull_alpha,
            p.calibrated_against.as_deref().unwrap_or("not calibrated")
        );
    }
    std::io::stdout()
        .lock()
        .write_all(out.as_bytes())
        .map_err(|e| Error::internal(format!("writing to stdout: {e}")))?;
    Ok(Outcome::Finished)
}
