//! Chemical formulas of raw materials (`CaMg(CO3)2`, `Na2B4O7·10H2O`) and
//! the ideal oxide yields they give with the IUPAC 2021 molar masses.

use super::BatchError;
use crate::composition::{atomic_weight, Element, Oxide, N_OXIDES};

fn element(symbol: &str) -> Option<Element> {
    use Element::*;
    Some(match symbol {
        "H" => H,
        "Li" => Li,
        "B" => B,
        "C" => C,
        "N" => N,
        "O" => O,
        "F" => F,
        "Na" => Na,
        "Mg" => Mg,
        "Al" => Al,
        "Si" => Si,
        "P" => P,
        "S" => S,
        "K" => K,
        "Ca" => Ca,
        "Ti" => Ti,
        "Mn" => Mn,
        "Fe" => Fe,
        "Zn" => Zn,
        "Sr" => Sr,
        "Zr" => Zr,
        "Sb" => Sb,
        "Ba" => Ba,
        "Ce" => Ce,
        _ => return None,
    })
}

/// Parse a chemical formula such as `CaMg(CO3)2` or `Na2B4O7·10H2O` into
/// element counts.
///
/// # Errors
/// Unknown element symbols, unbalanced parentheses, empty formulas.
pub fn parse_formula(formula: &str) -> Result<Vec<(Element, f64)>, BatchError> {
    let err = |why: &str| BatchError::Formula {
        formula: formula.to_string(),
        why: why.to_string(),
    };
    let mut total: Vec<(Element, f64)> = Vec::new();
    // Hydrates and adducts: parts joined by "·", "." or "*", each with an optional leading count.
    for part in formula.split(['·', '*', '.']) {
        let part = part.trim();
        if part.is_empty() {
            return Err(err("empty part"));
        }
        let digits: String = part.chars().take_while(|c| c.is_ascii_digit()).collect();
        let mult: f64 = if digits.is_empty() {
            1.0
        } else {
            digits.parse().map_err(|_| err("bad count"))?
        };
        let chars: Vec<char> = part[digits.len()..].chars().collect();
        let mut stack: Vec<Vec<(Element, f64)>> = vec![Vec::new()];
        let mut i = 0;
        let number = |i: &mut usize| -> f64 {
            let start = *i;
            while *i < chars.len() && (chars[*i].is_ascii_digit() || chars[*i] == '.') {
                *i += 1;
            }
            if start == *i {
                1.0
            } else {
                chars[start..*i]
                    .iter()
                    .collect::<String>()
                    .parse()
                    .unwrap_or(1.0)
            }
        };
        while i < chars.len() {
            let c = chars[i];
            if c == '(' {
                stack.push(Vec::new());
                i += 1;
            } else if c == ')' {
                i += 1;
                let n = number(&mut i);
                let group = stack.pop().ok_or_else(|| err("unbalanced ')'"))?;
                let top = stack.last_mut().ok_or_else(|| err("unbalanced ')'"))?;
                top.extend(group.into_iter().map(|(e, k)| (e, k * n)));
            } else if c.is_ascii_uppercase() {
                let mut sym = c.to_string();
                i += 1;
                if i < chars.len() && chars[i].is_ascii_lowercase() {
                    sym.push(chars[i]);
                    i += 1;
                }
                let e = element(&sym).ok_or_else(|| err(&format!("unknown element '{sym}'")))?;
                let n = number(&mut i);
                stack
                    .last_mut()
                    .expect("stack is never empty here")
                    .push((e, n));
            } else {
                return Err(err(&format!("unexpected character '{c}'")));
            }
        }
        if stack.len() != 1 {
            return Err(err("unbalanced '('"));
        }
        total.extend(stack.pop().unwrap().into_iter().map(|(e, k)| (e, k * mult)));
    }
    if total.is_empty() {
        return Err(err("no elements"));
    }
    Ok(total)
}

/// The oxide a cation ends up as in the glass, and cations per oxide formula unit.
fn oxide_of(e: Element) -> Option<(Oxide, f64)> {
    use Element::*;
    Some(match e {
        Li => (Oxide::Li2O, 2.0),
        B => (Oxide::B2O3, 2.0),
        Na => (Oxide::Na2O, 2.0),
        Mg => (Oxide::MgO, 1.0),
        Al => (Oxide::Al2O3, 2.0),
        Si => (Oxide::SiO2, 1.0),
        P => (Oxide::P2O5, 2.0),
        K => (Oxide::K2O, 2.0),
        Ca => (Oxide::CaO, 1.0),
        Ti => (Oxide::TiO2, 1.0),
        Mn => (Oxide::MnO, 1.0),
        Fe => (Oxide::Fe2O3, 2.0),
        Zn => (Oxide::ZnO, 1.0),
        Sr => (Oxide::SrO, 1.0),
        Zr => (Oxide::ZrO2, 1.0),
        Ba => (Oxide::BaO, 1.0),
        // Sulfur is counted as SO3, as analyses report it (sodium sulfate gives
        // Na2O + SO3); most of it leaves the melt as gas in practice, which the
        // batch's retention expresses (docs/science.md, "Fining and colouring agents").
        S => (Oxide::SO3, 1.0),
        Sb => (Oxide::Sb2O3, 2.0),
        Ce => (Oxide::CeO2, 1.0),
        // H, C, N, F and the oxygen balance leave as gas (loss on ignition).
        H | C | N | O | F => return None,
    })
}

/// Ideal analysis of a formula: kg of each oxide per kg of raw material, and
/// the loss on ignition (kg gas per kg; negative would mean a gain of oxygen).
///
/// # Errors
/// As [`parse_formula`].
pub fn ideal_yields(formula: &str) -> Result<([f64; N_OXIDES], f64), BatchError> {
    let parts = parse_formula(formula)?;
    let mass: f64 = parts.iter().map(|&(e, n)| atomic_weight(e) * n).sum();
    let mut y = [0.0; N_OXIDES];
    for &(e, n) in &parts {
        if let Some((o, per)) = oxide_of(e) {
            y[o.index()] += n / per * o.molar_mass() / mass;
        }
    }
    let loi = 1.0 - y.iter().sum::<f64>();
    Ok((y, loi))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn formulas_parse() {
        let d = parse_formula("CaMg(CO3)2").unwrap();
        let count = |e: Element| d.iter().filter(|p| p.0 == e).map(|p| p.1).sum::<f64>();
        assert_eq!(
            (
                count(Element::Ca),
                count(Element::Mg),
                count(Element::C),
                count(Element::O)
            ),
            (1.0, 1.0, 2.0, 6.0)
        );
        let b = parse_formula("Na2B4O7·10H2O").unwrap();
        let count = |e: Element| b.iter().filter(|p| p.0 == e).map(|p| p.1).sum::<f64>();
        assert_eq!((count(Element::H), count(Element::O)), (20.0, 17.0));
        assert!(parse_formula("Xx2O").is_err());
        assert!(parse_formula("Ca(CO3").is_err());
    }

    #[test]
    fn fining_agents_give_their_oxides() {
        // Source: IUPAC 2021 standard atomic weights (Prohaska et al. 2022,
        // Table 1). Sodium sulfate Na2SO4 (M = 142.0355 g/mol) gives 0.43636 kg
        // Na2O per kg (the yield listed for it in usual batch tables, computed
        // from the same weights) and, with sulfur counted as SO3 (80.057 g/mol),
        // 0.56364 kg SO3 per kg, with no loss on ignition. Antimony trioxide and
        // cerium dioxide are their own oxides.
        let (y, loi) = ideal_yields("Na2SO4").unwrap();
        assert!((y[Oxide::Na2O.index()] - 0.43636).abs() < 6e-6);
        assert!((y[Oxide::SO3.index()] - 0.56364).abs() < 6e-6);
        assert!(loi.abs() < 1e-12);
        for (f, o) in [("Sb2O3", Oxide::Sb2O3), ("CeO2", Oxide::CeO2)] {
            let (y, loi) = ideal_yields(f).unwrap();
            assert!((y[o.index()] - 1.0).abs() < 1e-12, "{f}");
            assert!(loi.abs() < 1e-12, "{f}");
        }
    }
}
