//! The columns of the screen's tables, defined once: the shortlist (CSV,
//! Parquet, JSON), the candidates table and the report all take their
//! names and values from here.

use crate::composition::Oxide;
use crate::screen::Row;

/// One value of a row, typed.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell<'a> {
    /// A number (None where there is none).
    Num(Option<f64>),
    /// A text (None where there is none).
    Text(Option<&'a str>),
    /// A yes/no (None where there is none).
    Bool(Option<bool>),
}

/// A named column and how to read it from a row.
#[derive(Clone, Copy)]
pub struct Field {
    pub name: &'static str,
    pub get: for<'a> fn(&'a Row) -> Cell<'a>,
}

/// The result columns every screen table carries after the composition,
/// in this order.
pub const RESULT_FIELDS: [Field; 12] = [
    Field {
        name: "critical_rate_k_per_s",
        get: |r| Cell::Num(r.critical_rate_k_per_s),
    },
    Field {
        name: "nose_rate_k_per_s",
        get: |r| Cell::Num(r.nose_rate_k_per_s),
    },
    Field {
        name: "margin_decades",
        get: |r| Cell::Num(r.margin_decades),
    },
    Field {
        name: "melting_temperature_k",
        get: |r| Cell::Num(r.melting_temperature_k),
    },
    Field {
        name: "liquidus_k",
        get: |r| Cell::Num(r.liquidus_k),
    },
    Field {
        name: "primary_phase",
        get: |r| Cell::Text(r.primary_phase.as_deref()),
    },
    Field {
        name: "limiting_phase",
        get: |r| Cell::Text(r.limiting_phase.as_deref()),
    },
    Field {
        name: "vouched",
        get: |r| Cell::Bool(r.vouched),
    },
    Field {
        name: "glass_transition_k",
        get: |r| Cell::Num(r.glass_transition_k),
    },
    Field {
        name: "cost_per_kg",
        get: |r| Cell::Num(r.cost_per_kg),
    },
    Field {
        name: "binding",
        get: |r| Cell::Text(Some(&r.binding)),
    },
    Field {
        name: "warnings",
        get: |r| Cell::Text(Some(&r.warnings)),
    },
];

/// The columns of a screen's Monte Carlo stage (a config with
/// `[uncertainty]`), after the result columns in the shortlist and in the
/// table of the recipes drawn; the candidates table, written before the
/// draws, does not carry them.
pub const PROBABILITY_FIELDS: [Field; 4] = [
    Field {
        name: "probability_glassy",
        get: |r| Cell::Num(r.probability_glassy),
    },
    Field {
        name: "critical_rate_p05_k_per_s",
        get: |r| Cell::Num(r.critical_rate_p05_k_per_s),
    },
    Field {
        name: "critical_rate_p95_k_per_s",
        get: |r| Cell::Num(r.critical_rate_p95_k_per_s),
    },
    Field {
        name: "band_vouched",
        get: |r| Cell::Bool(r.band_vouched),
    },
];

/// The result columns of a table, with the Monte Carlo columns when asked.
pub fn fields(with_probability: bool) -> impl Iterator<Item = &'static Field> {
    let extra: &'static [Field] = if with_probability {
        &PROBABILITY_FIELDS
    } else {
        &[]
    };
    RESULT_FIELDS.iter().chain(extra)
}

/// The column of an oxide's amount.
pub fn oxide_column(o: Oxide) -> String {
    format!("{o}_mol_pct")
}

/// The oxide a column name holds, if it is an oxide column.
pub fn oxide_of_column(name: &str) -> Option<Oxide> {
    name.strip_suffix("_mol_pct")?.parse().ok()
}

/// A result field by name.
pub fn field(name: &str) -> Option<&'static Field> {
    fields(true).find(|f| f.name == name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn oxide_columns_round_trip() {
        for o in Oxide::ALL {
            assert_eq!(oxide_of_column(&oxide_column(o)), Some(o));
        }
        assert_eq!(oxide_of_column("liquidus_k"), None);
        assert!(field("liquidus_k").is_some() && field("nope").is_none());
    }
}
