//! Raw materials: what each kilogram yields (oxides, loss on ignition), its
//! price, purity and stock, and the handling caution its dust needs.

use super::formula::ideal_yields;
use super::BatchError;
use crate::composition::{Oxide, N_OXIDES};

/// A raw material as used by the batch calculation.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct RawMaterial {
    pub name: String,
    pub formula: Option<String>,
    /// kg of each oxide delivered per kg of raw material (purity applied).
    pub yields: [f64; N_OXIDES],
    /// kg lost as gas per kg of raw material on melting.
    pub loss_on_ignition: f64,
    pub purity_pct: f64,
    pub price_per_kg: f64,
    /// kg on the shelf, if limited.
    pub available_kg: Option<f64>,
}

impl RawMaterial {
    /// Build from an ideal formula (analysis computed from IUPAC 2021 masses).
    ///
    /// # Errors
    /// A bad formula, a formula that yields no oxide, a purity outside (0, 100],
    /// a negative or non-finite price or availability.
    pub fn from_formula(
        name: &str,
        formula: &str,
        purity_pct: f64,
        price_per_kg: f64,
        available_kg: Option<f64>,
    ) -> Result<Self, BatchError> {
        let (y, loi) = ideal_yields(formula)?;
        Self::from_analysis(
            name,
            Some(formula),
            &y.map(|v| 100.0 * v),
            100.0 * loi,
            purity_pct,
            price_per_kg,
            available_kg,
        )
    }

    /// Build from an analysis in wt% (as a supplier's certificate gives it).
    ///
    /// Purity scales the oxide yields; the impurity share is taken to bring no
    /// oxide into the glass.
    ///
    /// # Errors
    /// As [`RawMaterial::from_formula`], and an analysis whose oxides and loss sum above 100.5 %.
    pub fn from_analysis(
        name: &str,
        formula: Option<&str>,
        analysis_wt_pct: &[f64; N_OXIDES],
        loss_on_ignition_wt_pct: f64,
        purity_pct: f64,
        price_per_kg: f64,
        available_kg: Option<f64>,
    ) -> Result<Self, BatchError> {
        let bad = |why: String| BatchError::RawMaterial {
            name: name.to_string(),
            why,
        };
        if !(purity_pct.is_finite() && purity_pct > 0.0 && purity_pct <= 100.0) {
            return Err(bad(format!(
                "purity must be in (0, 100] %, got {purity_pct}"
            )));
        }
        if !(price_per_kg.is_finite() && price_per_kg >= 0.0) {
            return Err(bad(format!(
                "price per kg must be a non-negative number, got {price_per_kg}"
            )));
        }
        if let Some(a) = available_kg {
            if !(a.is_finite() && a >= 0.0) {
                return Err(bad(format!(
                    "available kg must be a non-negative number, got {a}"
                )));
            }
        }
        if analysis_wt_pct.iter().any(|v| !v.is_finite() || *v < 0.0) {
            return Err(bad(
                "oxide analysis values must be non-negative numbers".into()
            ));
        }
        let oxides: f64 = analysis_wt_pct.iter().sum();
        if oxides <= 0.0 {
            return Err(bad("it yields no oxide".into()));
        }
        if oxides + loss_on_ignition_wt_pct.max(0.0) > 100.5 {
            return Err(bad(format!(
                "oxides ({oxides:.2} wt%) and loss on ignition ({loss_on_ignition_wt_pct:.2} wt%) sum above 100"
            )));
        }
        let p = purity_pct / 100.0;
        Ok(RawMaterial {
            name: name.to_string(),
            formula: formula.map(str::to_string),
            yields: analysis_wt_pct.map(|v| v / 100.0 * p),
            loss_on_ignition: loss_on_ignition_wt_pct / 100.0 * p,
            purity_pct,
            price_per_kg,
            available_kg,
        })
    }

    /// A one-line handling caution for dusts and toxic compounds, if any applies.
    pub fn handling_caution(&self) -> Option<&'static str> {
        let y = |o: Oxide| self.yields[o.index()] > 0.0;
        let f = self.formula.as_deref().unwrap_or("");
        if y(Oxide::BaO) {
            Some("barium compound: toxic if swallowed or inhaled")
        } else if y(Oxide::Sb2O3) {
            // Diantimony trioxide is classed as a suspected carcinogen (GHS H351; from memory).
            Some("antimony compound: suspected of causing cancer; avoid dust")
        } else if y(Oxide::B2O3) {
            Some("borate: reproductive-toxicant dust")
        } else if y(Oxide::Li2O) {
            Some("lithium compound: harmful if swallowed; avoid dust")
        } else if self.yields[Oxide::SiO2.index()] > 0.5
            && (f == "SiO2" || self.name.to_lowercase().contains("sand"))
        {
            Some("crystalline silica dust: use dust control and respiratory protection")
        } else if y(Oxide::Na2O) && f.contains("CO3") {
            Some("alkali carbonate dust irritates eyes and airways")
        } else if f.contains('F') && !f.contains("Fe") {
            Some("fluorides release toxic gas on melting")
        } else {
            None
        }
    }
}
