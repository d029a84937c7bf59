//! Linear expressions over oxides, as users write them in constraints and
//! model files: `"Na2O + K2O"`, `"CaO - 0.5*MgO"`, `"2*Fe2O3+FeO"`.
//!
//! One parser for every place that reads them (screen constraints, product
//! terms of mixture models).

use super::{Oxide, N_OXIDES};

/// Why an expression could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ExprError {
    #[error("empty term in '{0}'")]
    EmptyTerm(String),
    #[error("cannot read the factor '{factor}' in '{text}'")]
    Factor { factor: String, text: String },
    #[error("unknown oxide '{name}' in '{text}'; known oxides are {list}", list = Oxide::known_list())]
    UnknownOxide { name: String, text: String },
}

impl crate::error::Diagnostic for ExprError {}

/// The weight of each oxide in a sum of terms `[±][factor*]Oxide`.
///
/// # Errors
/// An empty term, a factor that is not a finite number, an unknown oxide.
pub fn parse_linear(text: &str) -> Result<[f64; N_OXIDES], ExprError> {
    let mut w = [0.0; N_OXIDES];
    let t = text.replace(' ', "");
    let mut sign = 1.0;
    let mut term = String::new();
    let mut terms = Vec::new();
    for ch in t.chars() {
        if (ch == '+' || ch == '-') && !term.is_empty() {
            terms.push((sign, std::mem::take(&mut term)));
            sign = if ch == '+' { 1.0 } else { -1.0 };
        } else if ch == '-' && term.is_empty() {
            sign = -sign;
        } else if ch != '+' {
            term.push(ch);
        }
    }
    terms.push((sign, term));
    for (s, term) in terms {
        if term.is_empty() {
            return Err(ExprError::EmptyTerm(text.to_string()));
        }
        let (k, name) = match term.split_once('*') {
            Some((k, n)) => (
                k.parse::<f64>()
                    .ok()
                    .filter(|f| f.is_finite())
                    .ok_or_else(|| ExprError::Factor {
                        factor: k.to_string(),
                        text: text.to_string(),
                    })?,
                n,
            ),
            None => (1.0, term.as_str()),
        };
        let o: Oxide = name.parse().map_err(|_| ExprError::UnknownOxide {
            name: name.to_string(),
            text: text.to_string(),
        })?;
        w[o.index()] += s * k;
    }
    Ok(w)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sums_differences_and_factors() {
        let w = parse_linear("CaO - 0.5*MgO + Na2O+K2O").unwrap();
        assert_eq!(w[Oxide::CaO.index()], 1.0);
        assert_eq!(w[Oxide::MgO.index()], -0.5);
        assert_eq!(w[Oxide::Na2O.index()], 1.0);
        assert_eq!(w[Oxide::K2O.index()], 1.0);
        let w = parse_linear("2*Fe2O3+FeO").unwrap();
        assert_eq!(w[Oxide::Fe2O3.index()], 2.0);
        assert!(matches!(
            parse_linear("Na2O + "),
            Err(ExprError::EmptyTerm(_))
        ));
        assert!(matches!(
            parse_linear("x*CaO"),
            Err(ExprError::Factor { .. })
        ));
        // S5: a NaN or infinite factor made a constraint no bound can check.
        for t in ["nan*CaO", "inf*CaO + MgO", "Na2O - -inf*K2O"] {
            assert!(
                matches!(parse_linear(t), Err(ExprError::Factor { .. })),
                "{t}"
            );
        }
        assert_eq!(
            parse_linear("Na2O + CaX").unwrap_err().to_string(),
            format!(
                "unknown oxide 'CaX' in 'Na2O + CaX'; known oxides are {}",
                Oxide::known_list()
            )
        );
    }
}
