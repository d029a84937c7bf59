//! One composition from `--mol`, `--wt` or `--recipe`, read the same way by
//! every command that takes one.

use quenchwise::composition::{Basis, Composition};
use quenchwise::error::{Error, ResultExt};
use quenchwise::files::recipe::parse_recipe;
use quenchwise::files::source::{read_text, Source};
use std::path::Path;

/// The composition given by exactly one of the three inputs.
///
/// # Errors
/// None given, or the one given cannot be read.
pub fn composition(
    mol: Option<&str>,
    wt: Option<&str>,
    recipe: Option<&Path>,
    tolerance: f64,
) -> Result<Composition, Error> {
    Ok(match (mol, wt, recipe) {
        (Some(t), _, _) => {
            Composition::parse(t, Basis::MolPercent, tolerance).context("in --mol")?
        }
        (None, Some(t), _) => {
            Composition::parse(t, Basis::WtPercent, tolerance).context("in --wt")?
        }
        (None, None, Some(p)) => {
            let text = read_text(p)?;
            parse_recipe(&Source::new(p.display().to_string(), &text), tolerance)?
        }
        (None, None, None) => {
            return Err(Error::bad_input(
                "give a composition with --mol, --wt or --recipe",
            ))
        }
    })
}
