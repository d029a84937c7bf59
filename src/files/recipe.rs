//! Recipe files (TOML): one composition, `basis = "mol%"` (or `"wt%"`) and an
//! `[oxides]` table, with the line of any bad entry.

use super::source::{Collector, DataError, Source};
use crate::composition::{Basis, Composition, CompositionError};
use crate::error::Diagnostic;
use serde::Deserialize;
use std::collections::BTreeMap;
use toml::Spanned;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RecipeFile {
    basis: Spanned<String>,
    #[serde(default)]
    name: Option<String>,
    oxides: BTreeMap<Spanned<String>, Spanned<f64>>,
}

/// Parse a one-composition recipe file:
/// `basis = "mol%"` (or `"wt%"`) and an `[oxides]` table.
///
/// # Errors
/// Unknown basis or oxide, bad amounts, a sum far from 100 — with the line.
pub fn parse_recipe(src: &Source, tolerance: f64) -> Result<Composition, DataError> {
    parse_named_recipe(src, tolerance).map(|(_, c)| c)
}

/// A recipe file's composition and its `name`, where it gives one.
///
/// # Errors
/// As [`parse_recipe`].
pub fn parse_named_recipe(
    src: &Source,
    tolerance: f64,
) -> Result<(Option<String>, Composition), DataError> {
    let hint =
        "a recipe file has basis = \"mol%\" or \"wt%\" and an [oxides] table, e.g. SiO2 = 72.0";
    let file: RecipeFile = src.parse(hint)?;
    let mut c = Collector::new(src);
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
    let mut seen = Vec::new();
    for (k, v) in &file.oxides {
        if let Some(o) = c.oxide_once(k, &mut seen) {
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
    c.finish(hint)?;
    let name = file
        .name
        .map(|n| n.trim().to_string())
        .filter(|n| !n.is_empty());
    Composition::new(&pairs, basis, tolerance)
        .map(|c| (name, c))
        .map_err(|e: CompositionError| {
            let span = file.oxides.keys().next().map(|k| k.span()).unwrap_or(0..0);
            src.error(vec![src.problem(span, e.to_string())], e.hint())
        })
}
