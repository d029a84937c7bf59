//! Elements, their IUPAC 2021 standard atomic weights (the one table of the
//! program), and the oxides a composition may contain.
//!
//! References
//! - T. Prohaska et al., "Standard atomic weights of the elements 2021 (IUPAC
//!   Technical Report)", Pure Appl. Chem. 94 (2022) 573–600,
//!   doi:10.1515/pac-2019-0603, Table 1.

use super::CompositionError;
use std::fmt;
use std::str::FromStr;

/// Chemical elements that occur in the oxides and raw materials we handle.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Element {
    H,
    Li,
    B,
    C,
    N,
    O,
    F,
    Na,
    Mg,
    Al,
    Si,
    P,
    S,
    K,
    Ca,
    Ti,
    Mn,
    Fe,
    Zn,
    Sr,
    Zr,
    Sb,
    Ba,
    Ce,
}

/// Standard atomic weight Ar(E), IUPAC 2021 (CIAAW), Table 1 of Prohaska et al. (2022).
///
/// Elements with a single standard value use it in full (Na 22.98976928);
/// elements whose standard atomic weight is an interval use the abridged
/// conventional value (Si 28.085, O 15.999). This pins the table to the 2021
/// release: the 2024 revision of Zr is deliberately not applied.
pub fn atomic_weight(e: Element) -> f64 {
    use Element::*;
    match e {
        H => 1.008,        // interval [1.00784, 1.00811]; abridged
        Li => 6.94,        // interval [6.938, 6.997]; abridged
        B => 10.81,        // interval [10.806, 10.821]; abridged
        C => 12.011,       // interval [12.0096, 12.0116]; abridged
        N => 14.007,       // interval [14.00643, 14.00728]; abridged
        O => 15.999,       // interval [15.99903, 15.99977]; abridged
        F => 18.998403162, // 18.998403162(5)
        Na => 22.98976928, // 22.98976928(2)
        Mg => 24.305,      // interval [24.304, 24.307]; abridged
        Al => 26.9815384,  // 26.9815384(3)
        Si => 28.085,      // interval [28.084, 28.086]; abridged
        P => 30.973761998, // 30.973761998(5)
        S => 32.06,        // interval [32.059, 32.076]; abridged
        K => 39.0983,      // 39.0983(1)
        Ca => 40.078,      // 40.078(4)
        Ti => 47.867,      // 47.867(1)
        Mn => 54.938043,   // 54.938043(2); from memory of Table 1
        Fe => 55.845,      // 55.845(2)
        Zn => 65.38,       // 65.38(2)
        Sr => 87.62,       // 87.62(1)
        Zr => 91.224,      // 91.224(2), 2021 value
        Sb => 121.760,     // 121.760(1); unchanged since the 1997 table, from memory of Table 1
        Ba => 137.327,     // 137.327(7)
        Ce => 140.116,     // 140.116(1); unchanged since the 1997 table, from memory of Table 1
    }
}

/// Molar mass in g/mol of a formula given as (element, count) pairs.
pub fn formula_mass(parts: &[(Element, f64)]) -> f64 {
    parts.iter().map(|&(e, n)| atomic_weight(e) * n).sum()
}

/// Gravimetric factor: kg of a raw material that yields 1 kg of an oxide, when
/// one formula unit of the raw material gives `oxide_per_formula` oxide units
/// (e.g. Na2CO3 → Na2O: 1; H3BO3 → B2O3: 0.5).
pub fn gravimetric_factor(raw: &[(Element, f64)], oxide: Oxide, oxide_per_formula: f64) -> f64 {
    formula_mass(raw) / (oxide_per_formula * oxide.molar_mass())
}

macro_rules! oxides {
    ($( $name:ident => [$( ($el:ident, $n:expr) ),+] ),+ $(,)?) => {
        /// The oxides a composition may contain.
        #[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
        pub enum Oxide { $( $name ),+ }

        impl Oxide {
            /// Every oxide, in the order used for arrays and table columns.
            pub const ALL: [Oxide; [$( Oxide::$name ),+].len()] = [$( Oxide::$name ),+];

            /// The usual formula, e.g. `"Na2O"`.
            pub fn formula(self) -> &'static str {
                match self { $( Oxide::$name => stringify!($name) ),+ }
            }

            /// Elements and their counts in one formula unit.
            pub fn elements(self) -> &'static [(Element, f64)] {
                match self { $( Oxide::$name => &[$( (Element::$el, $n as f64) ),+] ),+ }
            }
        }
    };
}

oxides! {
    SiO2 => [(Si, 1), (O, 2)],
    B2O3 => [(B, 2), (O, 3)],
    Al2O3 => [(Al, 2), (O, 3)],
    Li2O => [(Li, 2), (O, 1)],
    Na2O => [(Na, 2), (O, 1)],
    K2O => [(K, 2), (O, 1)],
    MgO => [(Mg, 1), (O, 1)],
    CaO => [(Ca, 1), (O, 1)],
    SrO => [(Sr, 1), (O, 1)],
    BaO => [(Ba, 1), (O, 1)],
    ZnO => [(Zn, 1), (O, 1)],
    TiO2 => [(Ti, 1), (O, 2)],
    ZrO2 => [(Zr, 1), (O, 2)],
    P2O5 => [(P, 2), (O, 5)],
    Fe2O3 => [(Fe, 2), (O, 3)],
    FeO => [(Fe, 1), (O, 1)],
    MnO => [(Mn, 1), (O, 1)],
    // Fining and colouring agents, reported as analyses usually report them:
    // sulfur as SO3, antimony as Sb2O3, cerium as CeO2 (whatever the redox state
    // in the melt; docs/science.md, "Fining and colouring agents").
    SO3 => [(S, 1), (O, 3)],
    Sb2O3 => [(Sb, 2), (O, 3)],
    CeO2 => [(Ce, 1), (O, 2)],
}

/// Number of oxides known to the program.
pub const N_OXIDES: usize = Oxide::ALL.len();

impl Oxide {
    /// Molar mass in g/mol from the IUPAC 2021 table.
    pub fn molar_mass(self) -> f64 {
        formula_mass(self.elements())
    }

    /// Position of this oxide in [`Oxide::ALL`].
    pub fn index(self) -> usize {
        self as usize
    }

    /// A comma-separated list of every known oxide, for error messages.
    pub fn known_list() -> String {
        Oxide::ALL
            .iter()
            .map(|o| o.formula())
            .collect::<Vec<_>>()
            .join(", ")
    }
}

impl fmt::Display for Oxide {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.formula())
    }
}

impl FromStr for Oxide {
    type Err = CompositionError;
    /// Parse a formula, ignoring ASCII case (`sio2` is SiO2).
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let t = s.trim();
        Oxide::ALL
            .iter()
            .copied()
            .find(|o| o.formula().eq_ignore_ascii_case(t))
            .ok_or_else(|| CompositionError::UnknownOxide(t.to_string()))
    }
}
