//! Where a value in a data file came from: a named source text, problems
//! located by line with the offending line quoted and a caret, and a
//! collector that reports every problem of a file at once.

use crate::composition::expr::parse_linear;
use crate::composition::{Oxide, N_OXIDES};
use crate::error::Diagnostic;
use crate::properties::Domain;
use serde::Deserialize;
use std::collections::BTreeMap;
use std::fmt;
use std::ops::Range;
use std::path::Path;
use toml::Spanned;

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
    #[error("{}", format_problems(path, problems))]
    Invalid {
        path: String,
        problems: Vec<Problem>,
        hint: Option<String>,
    },
}

fn format_problems(path: &str, problems: &[Problem]) -> String {
    let mut s = String::new();
    for (k, p) in problems.iter().enumerate() {
        if k > 0 {
            s.push('\n');
        }
        s.push_str(&format!("{path}:{}: {}\n{}", p.line, p.message, p.snippet));
    }
    s
}

impl Diagnostic for DataError {
    fn hint(&self) -> Option<String> {
        match self {
            DataError::Invalid { hint, .. } => hint.clone(),
            DataError::Read { .. } => None,
        }
    }
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

    /// The error for a list of problems.
    pub fn error(&self, problems: Vec<Problem>, hint: Option<String>) -> DataError {
        DataError::Invalid {
            path: self.path.clone(),
            problems,
            hint,
        }
    }

    /// Deserialize TOML, mapping a syntax or shape error to a located problem.
    pub fn parse<T: for<'de> Deserialize<'de>>(&self, hint: &str) -> Result<T, DataError> {
        toml::from_str(self.text).map_err(|e| {
            let span = e.span().unwrap_or(0..0);
            self.error(
                vec![self.problem(span, shape_message(e.message()))],
                Some(hint.to_string()),
            )
        })
    }
}

/// A TOML shape error in the file's words: serde names the program's own
/// types ("expected struct RawEquipment"), which mean nothing to a user.
pub fn shape_message(message: &str) -> String {
    let one_line = message.trim().replace('\n', " ");
    let mut out = String::with_capacity(one_line.len());
    let mut rest = one_line.as_str();
    while let Some(i) = rest.find("struct Raw") {
        out.push_str(&rest[..i]);
        let after = &rest[i + "struct Raw".len()..];
        let name_end = after
            .find(|c: char| !c.is_ascii_alphanumeric())
            .unwrap_or(after.len());
        out.push_str("a table (key = value lines or { ... })");
        rest = &after[name_end..];
    }
    out.push_str(rest);
    out
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

/// A [min, max] pair in a TOML file, read as whatever list of numbers stands
/// there: serde's fixed-size arrays would take the first two numbers of a
/// longer list and drop the rest without a word, so the count is kept and
/// the reader that knows the key and its unit refuses any other length,
/// beside the file's other problems.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Pair {
    /// The first two numbers (0 where fewer were given).
    pub values: [f64; 2],
    /// How many numbers the list held.
    pub given: usize,
}

impl Pair {
    /// "... must be two numbers [min, max] UNIT, got N", or None for two.
    pub(crate) fn count_problem(&self, what: &str, unit: &str) -> Option<String> {
        (self.given != 2).then(|| {
            format!(
                "{what} must be two numbers [min, max] {unit}, got {}",
                self.given
            )
        })
    }
}

impl<'de> Deserialize<'de> for Pair {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Numbers;
        impl<'de> serde::de::Visitor<'de> for Numbers {
            type Value = Pair;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a list of numbers [min, max]")
            }
            fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<Pair, A::Error> {
                let mut p = Pair {
                    values: [0.0; 2],
                    given: 0,
                };
                while let Some(x) = seq.next_element::<f64>()? {
                    if p.given < 2 {
                        p.values[p.given] = x;
                    }
                    p.given += 1;
                }
                Ok(p)
            }
        }
        d.deserialize_seq(Numbers)
    }
}

/// Collects every problem of a file, so all are reported at once.
pub(crate) struct Collector<'s, 'a> {
    pub(crate) src: &'s Source<'a>,
    pub(crate) problems: Vec<Problem>,
}

impl<'s, 'a> Collector<'s, 'a> {
    /// Start collecting problems of a source.
    pub(crate) fn new(src: &'s Source<'a>) -> Self {
        Collector {
            src,
            problems: Vec::new(),
        }
    }

    /// The collected problems as an error, or nothing.
    pub(crate) fn finish(self, hint: &str) -> Result<(), DataError> {
        if self.problems.is_empty() {
            Ok(())
        } else {
            Err(self.src.error(self.problems, Some(hint.to_string())))
        }
    }

    pub(crate) fn push(&mut self, span: Range<usize>, msg: impl Into<String>) {
        self.problems.push(self.src.problem(span, msg));
    }

    pub(crate) fn oxide(&mut self, name: &Spanned<String>) -> Option<Oxide> {
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

    /// As [`Collector::oxide`], refusing a second name of an oxide already in
    /// `seen` (`MgO` and `MGO`: names ignore case), with the first one's line.
    pub(crate) fn oxide_once<'k>(
        &mut self,
        name: &'k Spanned<String>,
        seen: &mut Vec<(Oxide, &'k Spanned<String>)>,
    ) -> Option<Oxide> {
        let o = self.oxide(name)?;
        if let Some((_, other)) = seen.iter().find(|(q, _)| *q == o) {
            // Tables come sorted by key: name the one that comes first in the file.
            let (first, again) = if other.span().start <= name.span().start {
                (*other, name)
            } else {
                (name, *other)
            };
            let line = self.src.problem(first.span(), "").line;
            self.push(
                again.span(),
                format!(
                    "'{}' names {o} again (first as '{}' on line {line}); oxide names ignore case",
                    again.get_ref(),
                    first.get_ref()
                ),
            );
            return None;
        }
        seen.push((o, name));
        Some(o)
    }

    /// Parse "SiO2+TiO2-P2O5" or "2*Fe2O3+FeO" into oxide weights.
    pub(crate) fn expr(&mut self, g: &Spanned<String>) -> Option<[f64; N_OXIDES]> {
        match parse_linear(g.get_ref()) {
            Ok(w) => Some(w),
            Err(e) => {
                self.push(g.span(), e.to_string());
                None
            }
        }
    }

    /// The validity domain a model file states. An oxide the table does not
    /// list is one the model was not made for: [0, 0], so any amount of it is
    /// flagged as an extrapolation (docs/science.md, "Validity domains"). With
    /// no table at all, `uses` decides which oxides the model covers
    /// (0–100 mol%).
    pub(crate) fn domain(
        &mut self,
        d: &BTreeMap<Spanned<String>, Spanned<Pair>>,
        uses: impl Fn(Oxide) -> bool,
    ) -> Domain {
        let mut out = Domain::default();
        let mut seen = Vec::new();
        for o in Oxide::ALL {
            if !d.is_empty() || !uses(o) {
                out.max[o.index()] = 0.0;
            }
        }
        for (k, v) in d {
            if let Some(o) = self.oxide_once(k, &mut seen) {
                if let Some(m) = v.get_ref().count_problem(&format!("domain of {o}"), "mol%") {
                    self.push(v.span(), m);
                    continue;
                }
                let [lo, hi] = v.get_ref().values;
                if !(lo.is_finite() && hi.is_finite() && 0.0 <= lo && lo <= hi && hi <= 100.0) {
                    self.push(v.span(), format!("domain of {o} must be [min, max] with 0 <= min <= max <= 100 mol%, got [{lo}, {hi}]"));
                }
                out.min[o.index()] = lo;
                out.max[o.index()] = hi;
            }
        }
        out
    }

    pub(crate) fn positive(&mut self, name: &str, v: &Spanned<f64>, unit: &str) -> f64 {
        let x = *v.get_ref();
        if !(x > 0.0 && x.is_finite()) {
            self.push(v.span(), format!("{name} must be positive, got {x} {unit}"));
        }
        x
    }
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.line, self.message)
    }
}

#[cfg(test)]
mod shape_tests {
    use super::shape_message;

    #[test]
    fn internal_type_names_are_not_shown() {
        assert_eq!(
            shape_message("invalid type: integer `1`, expected struct RawEquipment\n"),
            "invalid type: integer `1`, expected a table (key = value lines or { ... })"
        );
        assert_eq!(
            shape_message("missing field `rate`"),
            "missing field `rate`"
        );
    }
}
