//! Melt cards (TOML): a melt measured by the user (VFT or MYEGA viscosity,
//! in Pa·s or dPa·s, and one `[crystal]` or several `[[crystal]]` phases with
//! liquidus (K or °C) and crystal data, optional `[kinetics]`) turned into a
//! validated melt, with the line of any bad value. Table rows of melt cards
//! (VFT in Pa·s, liquidus in K) share [`MeltValues`]; screen configs share
//! the `[kinetics]` table ([`KineticsTable`]).

use super::model_set::FormName;
use super::source::{DataError, Problem, Source};
use crate::error::{Diagnostic, Error};
use crate::kinetics::{
    CrystalPhase, DrivingForce, Implausible, KineticOptions, KineticOverrides, KineticsError, Melt,
    Transport,
};
use crate::properties::{GrowthMode, Interface, ViscosityCurve, ViscosityError};
use crate::uncertainty::melt::MeltSpreads;
use crate::units::{Celsius, Kelvin};
use serde::Deserialize;
use std::ops::Range;
use toml::Spanned;

/// ξ of the fractional Stokes–Einstein law when a file asks for it without a
/// value (from memory: Ediger, Harrowell & Yu 2008 report ξ from about 1 for
/// strong liquids falling with fragility; 0.7 suits a fragile silicate).
pub const DEFAULT_FRACTIONAL_EXPONENT: f64 = 0.7;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardFile<C> {
    viscosity: CardViscosity,
    crystal: C,
    #[serde(default)]
    kinetics: Option<KineticsTable>,
}

/// `[viscosity]`: VFT (`a`, `b_k`, `c_k`, the default form) or MYEGA
/// (`form = "myega"`: `log_eta_inf`, `tg_k`, `fragility`), with log10 η in
/// Pa·s unless `unit = "dPa.s"` (poise).
#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardViscosity {
    #[serde(default)]
    form: Option<Spanned<FormName>>,
    #[serde(default)]
    unit: Option<Spanned<String>>,
    #[serde(default)]
    a: Option<Spanned<f64>>,
    #[serde(default)]
    b_k: Option<Spanned<f64>>,
    #[serde(default)]
    c_k: Option<Spanned<f64>>,
    #[serde(default)]
    log_eta_inf: Option<Spanned<f64>>,
    #[serde(default)]
    tg_k: Option<Spanned<f64>>,
    #[serde(default)]
    fragility: Option<Spanned<f64>>,
}

/// log10(η/dPa·s) − log10(η/Pa·s): 1 Pa·s = 10 dPa·s (SI brochure, 9th ed.,
/// 2019: the dyne and centimetre give 1 P = 1 dPa·s = 0.1 Pa·s).
pub const DECADES_DPA_S_PER_PA_S: f64 = 1.0;

/// The units a card's log10 η may be given in: (what the file says, decades
/// to subtract to get log10(η/Pa·s)).
const VISCOSITY_UNITS: [(&str, f64); 7] = [
    ("Pa.s", 0.0),
    ("Pa·s", 0.0),
    ("Pa s", 0.0),
    ("dPa.s", DECADES_DPA_S_PER_PA_S),
    ("dPa·s", DECADES_DPA_S_PER_PA_S),
    ("dPa s", DECADES_DPA_S_PER_PA_S),
    ("poise", DECADES_DPA_S_PER_PA_S),
];

impl CardViscosity {
    fn form(&self) -> FormName {
        self.form.as_ref().map_or(FormName::Vft, |f| *f.get_ref())
    }

    /// The span of a key of the curve, where it is given.
    fn span_of(&self, key: &str) -> Option<Range<usize>> {
        let s = |o: &Option<Spanned<f64>>| o.as_ref().map(|v| v.span());
        match key {
            "a" => s(&self.a),
            "b_k" => s(&self.b_k),
            "c_k" => s(&self.c_k),
            "log_eta_inf" => s(&self.log_eta_inf),
            "tg_k" => s(&self.tg_k),
            "fragility" => s(&self.fragility),
            _ => None,
        }
    }

    /// The first value of the curve (for errors about the curve as a whole).
    fn first_span(&self) -> Range<usize> {
        let key = match self.form() {
            FormName::Vft => "a",
            FormName::Myega => "log_eta_inf",
        };
        self.span_of(key)
            .or_else(|| self.form.as_ref().map(|f| f.span()))
            .unwrap_or(0..0)
    }

    /// The curve `[viscosity]` gives, in Pa·s; else every problem with its
    /// place.
    fn curve(&self, src: &Source) -> Result<ViscosityCurve, Vec<Problem>> {
        let mut problems = Vec::new();
        let shift = match &self.unit {
            None => 0.0,
            Some(u) => match VISCOSITY_UNITS
                .iter()
                .find(|(n, _)| *n == u.get_ref().trim())
            {
                Some((_, d)) => *d,
                None => {
                    problems.push(src.problem(
                        u.span(),
                        format!(
                            "unit must be \"Pa.s\" or \"dPa.s\" (poise): the unit of η in log10 η, got \"{}\"",
                            u.get_ref()
                        ),
                    ));
                    0.0
                }
            },
        };
        let (need, other, form_name): (&[&str], &[&str], &str) = match self.form() {
            FormName::Vft => (
                &["a", "b_k", "c_k"],
                &["log_eta_inf", "tg_k", "fragility"],
                "vft",
            ),
            FormName::Myega => (
                &["log_eta_inf", "tg_k", "fragility"],
                &["a", "b_k", "c_k"],
                "myega",
            ),
        };
        let at = self
            .form
            .as_ref()
            .map(|f| f.span())
            .or_else(|| need.iter().find_map(|k| self.span_of(k)))
            .or_else(|| other.iter().find_map(|k| self.span_of(k)))
            .unwrap_or(0..0);
        for k in other {
            if let Some(span) = self.span_of(k) {
                problems.push(src.problem(
                    span,
                    format!(
                        "{k} belongs to form = \"{}\", not \"{form_name}\"",
                        if form_name == "vft" { "myega" } else { "vft" }
                    ),
                ));
            }
        }
        let mut v = Vec::with_capacity(3);
        for k in need {
            let x = match *k {
                "a" => &self.a,
                "b_k" => &self.b_k,
                "c_k" => &self.c_k,
                "log_eta_inf" => &self.log_eta_inf,
                "tg_k" => &self.tg_k,
                _ => &self.fragility,
            };
            match x {
                Some(x) => v.push(*x.get_ref()),
                None => problems.push(src.problem(
                    at.clone(),
                    format!("[viscosity] with form = \"{form_name}\" needs {k}"),
                )),
            }
        }
        if !problems.is_empty() {
            return Err(problems);
        }
        // log10(η/Pa·s) = log10(η/dPa·s) − 1: only the constant term moves.
        let made = match self.form() {
            FormName::Vft => ViscosityCurve::vft(v[0] - shift, v[1], v[2]),
            FormName::Myega => ViscosityCurve::myega(v[0] - shift, v[1], v[2]),
        };
        made.map_err(|e| {
            let span = match &e {
                ViscosityError::Value(val) => self.span_of(val.name()),
                _ => None,
            }
            .unwrap_or_else(|| self.first_span());
            vec![src.problem(span, e.to_string())]
        })
    }
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct CardCrystal {
    #[serde(default)]
    name: Option<Spanned<String>>,
    /// The liquidus in K, or `liquidus_c` in °C: exactly one.
    #[serde(default)]
    liquidus_k: Option<Spanned<f64>>,
    #[serde(default)]
    liquidus_c: Option<Spanned<f64>>,
    enthalpy_of_fusion_j_per_mol: Spanned<f64>,
    molar_volume_m3_per_mol: Spanned<f64>,
    turnbull_alpha: Option<Spanned<f64>>,
    interface_energy_j_per_m2: Option<Spanned<f64>>,
    growth: Spanned<GrowthMode>,
    #[serde(default)]
    heat_capacity_change_j_per_mol_k: Option<Spanned<f64>>,
    #[serde(default)]
    melting_point_k: Option<Spanned<f64>>,
    #[serde(default)]
    heterogeneous_nuclei_per_m3: Option<Spanned<f64>>,
    /// Spreads read by `eval --uncertainty` (see [`parse_melt_card_spreads`]).
    #[serde(default)]
    turnbull_alpha_sd: Option<Spanned<f64>>,
    #[serde(default)]
    interface_energy_sd_j_per_m2: Option<Spanned<f64>>,
}

/// `heterogeneous_nuclei_per_m3`: one number, or a log-uniform range
/// `[lo, hi]` for `eval --uncertainty` (its geometric mean, the range's
/// median, is the point estimate).
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum NucleiValue {
    One(f64),
    Range(Vec<f64>),
}

impl NucleiValue {
    fn point(&self) -> f64 {
        match self {
            NucleiValue::One(v) => *v,
            NucleiValue::Range(r) if r.len() == 2 && r[0] > 0.0 && r[1] > 0.0 => {
                (r[0] * r[1]).sqrt()
            }
            // Not a range: refused with its own message where ranges are read.
            NucleiValue::Range(_) => 0.0,
        }
    }
}

impl<'de> Deserialize<'de> for NucleiValue {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> serde::de::Visitor<'de> for V {
            type Value = NucleiValue;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number of nuclei per m3, or a range [lo, hi]")
            }
            fn visit_f64<E: serde::de::Error>(self, v: f64) -> Result<NucleiValue, E> {
                Ok(NucleiValue::One(v))
            }
            fn visit_i64<E: serde::de::Error>(self, v: i64) -> Result<NucleiValue, E> {
                Ok(NucleiValue::One(v as f64))
            }
            fn visit_seq<A: serde::de::SeqAccess<'de>>(
                self,
                mut a: A,
            ) -> Result<NucleiValue, A::Error> {
                let mut out = Vec::new();
                while let Some(x) = a.next_element::<f64>()? {
                    out.push(x);
                }
                Ok(NucleiValue::Range(out))
            }
        }
        d.deserialize_any(V)
    }
}

/// The `[kinetics]` table of a melt card or a screen config: which
/// nucleation is on and how the kinetics are computed. Every key is optional.
#[derive(Deserialize, Default)]
#[serde(deny_unknown_fields)]
pub(crate) struct KineticsTable {
    detectable_fraction: Option<Spanned<f64>>,
    driving_force: Option<DrivingForce>,
    heterogeneous_nuclei_per_m3: Option<Spanned<NucleiValue>>,
    contact_angle_deg: Option<Spanned<f64>>,
    sample_thickness_m: Option<Spanned<f64>>,
    transport: Option<Spanned<TransportName>>,
    fractional_exponent: Option<Spanned<f64>>,
    decoupling_ratio: Option<Spanned<f64>>,
}

#[derive(Deserialize, Clone, Copy, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
enum TransportName {
    StokesEinstein,
    Fractional,
}

impl KineticsTable {
    /// The overrides the table gives.
    pub(crate) fn overrides(&self) -> KineticOverrides {
        let v = |s: &Option<Spanned<f64>>| s.as_ref().map(|v| *v.get_ref());
        let exponent = v(&self.fractional_exponent).unwrap_or(DEFAULT_FRACTIONAL_EXPONENT);
        let transport = match self.transport.as_ref().map(|t| *t.get_ref()) {
            Some(TransportName::StokesEinstein) => Some(Transport::StokesEinstein),
            Some(TransportName::Fractional) => Some(Transport::Fractional { exponent }),
            None => self
                .fractional_exponent
                .is_some()
                .then_some(Transport::Fractional { exponent }),
        };
        KineticOverrides {
            detectable_fraction: v(&self.detectable_fraction),
            driving_force: self.driving_force,
            heterogeneous_nuclei_per_m3: self
                .heterogeneous_nuclei_per_m3
                .as_ref()
                .map(|n| n.get_ref().point()),
            contact_angle_deg: v(&self.contact_angle_deg),
            sample_thickness_m: v(&self.sample_thickness_m),
            transport,
            decoupling_ratio: v(&self.decoupling_ratio),
        }
    }

    /// Where the key a validation error names sits in the file.
    pub(crate) fn span_of(&self, name: &str) -> Option<Range<usize>> {
        let s = |o: &Option<Spanned<f64>>| o.as_ref().map(|v| v.span());
        match name {
            "detectable_fraction" => s(&self.detectable_fraction),
            "heterogeneous_nuclei_per_m3" => {
                self.heterogeneous_nuclei_per_m3.as_ref().map(|v| v.span())
            }
            "contact_angle_deg" => s(&self.contact_angle_deg),
            "sample_thickness_m" => s(&self.sample_thickness_m),
            "fractional_exponent" => s(&self.fractional_exponent),
            "decoupling_ratio" => s(&self.decoupling_ratio),
            _ => None,
        }
    }

    /// The nuclei range `[lo, hi]` where one is given, with its place.
    pub(crate) fn nuclei_range(&self) -> Option<(Vec<f64>, Range<usize>)> {
        match self.heterogeneous_nuclei_per_m3.as_ref() {
            Some(v) => match v.get_ref() {
                NucleiValue::Range(r) => Some((r.clone(), v.span())),
                NucleiValue::One(_) => None,
            },
            None => None,
        }
    }
}

/// One crystal phase of a melt card or a table row, before validation.
#[derive(Debug, Clone, PartialEq)]
pub struct CrystalValues {
    pub name: String,
    pub liquidus_k: f64,
    pub enthalpy_of_fusion_j_per_mol: f64,
    pub molar_volume_m3_per_mol: f64,
    pub turnbull_alpha: Option<f64>,
    pub interface_energy_j_per_m2: Option<f64>,
    pub growth: GrowthMode,
    pub heat_capacity_change_j_per_mol_k: Option<f64>,
    pub melting_point_k: Option<f64>,
    pub heterogeneous_nuclei_per_m3: Option<f64>,
}

/// The values of a melt card or a table row, before validation.
#[derive(Debug, Clone, PartialEq)]
pub struct MeltValues {
    pub a: f64,
    pub b_k: f64,
    pub c_k: f64,
    /// At least one.
    pub crystals: Vec<CrystalValues>,
    /// The card's `[kinetics]` values, where given.
    pub kinetics: KineticOverrides,
}

/// Why a set of melt values was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MeltValueError {
    #[error("give exactly one of turnbull_alpha and interface_energy_j_per_m2")]
    InterfaceChoice { crystal: usize },
    #[error(transparent)]
    Kinetics(#[from] KineticsError),
    #[error("{error}")]
    Crystal {
        crystal: usize,
        error: KineticsError,
    },
}

impl Diagnostic for MeltValueError {
    fn hint(&self) -> Option<String> {
        match self {
            MeltValueError::InterfaceChoice { .. } => None,
            MeltValueError::Kinetics(e) | MeltValueError::Crystal { error: e, .. } => e.hint(),
        }
    }
}

impl CrystalValues {
    fn phase(&self, k: usize) -> Result<CrystalPhase, MeltValueError> {
        let interface = match (self.turnbull_alpha, self.interface_energy_j_per_m2) {
            (Some(a), None) => Interface::TurnbullAlpha(a),
            (None, Some(s)) => Interface::EnergyJPerM2(s),
            _ => return Err(MeltValueError::InterfaceChoice { crystal: k }),
        };
        Ok(CrystalPhase {
            name: self.name.clone(),
            liquidus: Kelvin(self.liquidus_k),
            enthalpy_of_fusion_j_per_mol: self.enthalpy_of_fusion_j_per_mol,
            molar_volume_m3_per_mol: self.molar_volume_m3_per_mol,
            interface,
            growth: self.growth,
            heat_capacity_change_j_per_mol_k: self.heat_capacity_change_j_per_mol_k.unwrap_or(0.0),
            melting_point: self.melting_point_k.map(Kelvin),
            nuclei_per_m3: self.heterogeneous_nuclei_per_m3,
        })
    }
}

impl MeltValues {
    /// Validate into a melt and its kinetic options (starting from `base` options).
    ///
    /// # Errors
    /// Both or neither interface values; anything [`Melt::with_phases`] or
    /// [`KineticOptions::validate`] refuses, naming the crystal.
    pub fn build(&self, base: &KineticOptions) -> Result<(Melt, KineticOptions), MeltValueError> {
        let viscosity =
            ViscosityCurve::vft(self.a, self.b_k, self.c_k).map_err(KineticsError::from)?;
        build_melt(viscosity, &self.crystals, &self.kinetics, base)
    }
}

/// A melt from a viscosity curve and its crystals, with its kinetic options
/// (`base` with `kinetics` applied).
fn build_melt(
    viscosity: ViscosityCurve,
    crystals: &[CrystalValues],
    kinetics: &KineticOverrides,
    base: &KineticOptions,
) -> Result<(Melt, KineticOptions), MeltValueError> {
    let mut phases = Vec::with_capacity(crystals.len());
    for (k, c) in crystals.iter().enumerate() {
        let p = c.phase(k)?;
        // Each phase alone first, so an error names its crystal.
        Melt::with_phases(viscosity, vec![p.clone()])
            .map_err(|error| MeltValueError::Crystal { crystal: k, error })?;
        phases.push(p);
    }
    let melt = Melt::with_phases(viscosity, phases)?;
    let opts = kinetics.apply(*base);
    opts.validate()?;
    Ok((melt, opts))
}

/// The key a kinetics error is about, for locating it.
fn key_of(e: &KineticsError) -> &'static str {
    match e {
        KineticsError::Value(v) | KineticsError::Viscosity(ViscosityError::Value(v)) => v.name(),
        KineticsError::LiquidusBelowDivergence { .. } => "liquidus_k",
        _ => "",
    }
}

impl CardCrystal {
    /// The liquidus in K from `liquidus_k` or `liquidus_c` (°C), exactly one;
    /// else the problem and where it is.
    fn liquidus_k(&self) -> Result<f64, (Range<usize>, &'static str)> {
        match (&self.liquidus_k, &self.liquidus_c) {
            (Some(k), None) => Ok(*k.get_ref()),
            // Judged in °C, as written (the core's checks speak of liquidus_k in K).
            (None, Some(c)) if !c.get_ref().is_finite() => {
                Err((c.span(), "liquidus_c must be a finite number of °C"))
            }
            (None, Some(c)) if *c.get_ref() <= -273.15 => Err((
                c.span(),
                "liquidus_c must lie above absolute zero (-273.15 °C)",
            )),
            (None, Some(c)) => Ok(Celsius(*c.get_ref()).to_kelvin().0),
            (Some(_), Some(c)) => Err((
                c.span(),
                "give the liquidus once: liquidus_k (K) or liquidus_c (°C), not both",
            )),
            (None, None) => Err((
                self.name
                    .as_ref()
                    .map(|n| n.span())
                    .unwrap_or_else(|| self.growth.span()),
                "this crystal needs its liquidus: liquidus_k (K) or liquidus_c (°C)",
            )),
        }
    }

    fn values(&self, k: usize, several: bool) -> CrystalValues {
        let v = |s: &Option<Spanned<f64>>| s.as_ref().map(|v| *v.get_ref());
        CrystalValues {
            name: self
                .name
                .as_ref()
                .map(|n| n.get_ref().clone())
                .unwrap_or_else(|| {
                    if several {
                        format!("crystal {}", k + 1)
                    } else {
                        "crystal".into()
                    }
                }),
            // Checked before (read_card): NaN never reaches a melt.
            liquidus_k: self.liquidus_k().unwrap_or(f64::NAN),
            enthalpy_of_fusion_j_per_mol: *self.enthalpy_of_fusion_j_per_mol.get_ref(),
            molar_volume_m3_per_mol: *self.molar_volume_m3_per_mol.get_ref(),
            turnbull_alpha: v(&self.turnbull_alpha),
            interface_energy_j_per_m2: v(&self.interface_energy_j_per_m2),
            growth: *self.growth.get_ref(),
            heat_capacity_change_j_per_mol_k: v(&self.heat_capacity_change_j_per_mol_k),
            melting_point_k: v(&self.melting_point_k),
            heterogeneous_nuclei_per_m3: v(&self.heterogeneous_nuclei_per_m3),
        }
    }

    fn span_of(&self, name: &str) -> Option<Range<usize>> {
        let s = |o: &Option<Spanned<f64>>| o.as_ref().map(|v| v.span());
        match name {
            "liquidus_k" => s(&self.liquidus_k).or_else(|| s(&self.liquidus_c)),
            "enthalpy_of_fusion_j_per_mol" => Some(self.enthalpy_of_fusion_j_per_mol.span()),
            "molar_volume_m3_per_mol" => Some(self.molar_volume_m3_per_mol.span()),
            "turnbull_alpha" => s(&self.turnbull_alpha),
            "interface_energy_j_per_m2" => s(&self.interface_energy_j_per_m2),
            "heat_capacity_change_j_per_mol_k" => s(&self.heat_capacity_change_j_per_mol_k),
            "melting_point_k" => s(&self.melting_point_k),
            "heterogeneous_nuclei_per_m3" => s(&self.heterogeneous_nuclei_per_m3),
            _ => None,
        }
        .or_else(|| {
            (name == "name")
                .then(|| self.name.as_ref().map(|n| n.span()))
                .flatten()
        })
    }
}

/// A melt card as read: the validated melt and options, and where each value
/// sits in the file, so that problems found later (while evaluating it) can
/// point at the line of the value they are about.
pub struct MeltCard {
    pub melt: Melt,
    /// The card's kinetic options (the base ones with the card's `[kinetics]`).
    pub options: KineticOptions,
    /// The spreads `eval --uncertainty` reads (empty unless asked for).
    pub spreads: MeltSpreads,
    path: String,
    text: String,
    viscosity: CardViscosity,
    crystals: Vec<CardCrystal>,
    kinetics: KineticsTable,
}

/// Parse a melt card.
///
/// # Errors
/// Syntax, missing or unknown keys, values the kinetics refuse — with the line.
pub fn parse_melt_card(
    src: &Source,
    base: &KineticOptions,
) -> Result<(Melt, KineticOptions), DataError> {
    read_card(src, base, false).map(|c| (c.melt, c.options))
}

/// Parse a melt card with the spreads `eval --uncertainty` reads:
/// `turnbull_alpha_sd` (or `interface_energy_sd_j_per_m2`) per crystal and a
/// `heterogeneous_nuclei_per_m3 = [lo, hi]` range in `[kinetics]`.
///
/// # Errors
/// As [`parse_melt_card`]; a spread that is negative or not a number, a
/// spread of the interface value the crystal does not give, a range that is
/// not `[lo, hi]` with 0 < lo ≤ hi — with the line.
pub fn parse_melt_card_spreads(
    src: &Source,
    base: &KineticOptions,
) -> Result<(Melt, KineticOptions, MeltSpreads), DataError> {
    read_card(src, base, true).map(|c| (c.melt, c.options, c.spreads))
}

/// Parse a melt card, keeping where its values sit (see [`MeltCard::locate`]).
///
/// # Errors
/// As [`parse_melt_card`].
pub fn read_melt_card(src: &Source, base: &KineticOptions) -> Result<MeltCard, DataError> {
    read_card(src, base, false)
}

/// A card and its spreads. Every spread is checked, but whether a spread
/// belongs to the interface value a crystal gives only when `spreads` is set:
/// a card evaluated at its point estimate does not read them (so a card that
/// swaps α for σ still evaluates).
fn read_card(src: &Source, base: &KineticOptions, spreads: bool) -> Result<MeltCard, DataError> {
    let hint = "a melt card has [viscosity] a, b_k, c_k (VFT; or form = \"myega\" with log_eta_inf, tg_k, fragility; optional unit = \"dPa.s\" for η in poise); [crystal] (or one [[crystal]] per phase, each with a name) liquidus_k or liquidus_c, enthalpy_of_fusion_j_per_mol, molar_volume_m3_per_mol, turnbull_alpha (or interface_energy_j_per_m2), growth; optional [kinetics]";
    // [crystal] for one phase, [[crystal]] for several: look at the shape first,
    // then read with spans.
    let several = src
        .text
        .parse::<toml::Table>()
        .ok()
        .and_then(|t| t.get("crystal").map(|c| c.is_array()))
        .unwrap_or(false);
    let (viscosity, crystals, kinetics) = if several {
        let card: CardFile<Vec<CardCrystal>> = src.parse(hint)?;
        (card.viscosity, card.crystal, card.kinetics)
    } else {
        let card: CardFile<CardCrystal> = src.parse(hint)?;
        (card.viscosity, vec![card.crystal], card.kinetics)
    };
    let kinetics = kinetics.unwrap_or_default();
    if crystals.is_empty() {
        return Err(src.error(
            vec![src.problem(0..0, "a melt card needs at least one [[crystal]]")],
            Some(hint.to_string()),
        ));
    }
    // The curve and every liquidus first: each problem with its line.
    let mut problems = Vec::new();
    let curve = viscosity.curve(src).map_err(|p| problems.extend(p)).ok();
    for c in &crystals {
        if let Err((span, why)) = c.liquidus_k() {
            problems.push(src.problem(span, why));
        }
    }
    let Some(curve) = curve.filter(|_| problems.is_empty()) else {
        return Err(src.error(problems, Some(hint.to_string())));
    };
    let values: Vec<CrystalValues> = crystals
        .iter()
        .enumerate()
        .map(|(k, c)| c.values(k, several))
        .collect();
    match build_melt(curve, &values, &kinetics.overrides(), base) {
        Ok((melt, options)) => {
            let spreads = card_spreads(src, &crystals, &kinetics, spreads)?;
            Ok(MeltCard {
                melt,
                options,
                spreads,
                path: src.path.clone(),
                text: src.text.to_string(),
                viscosity,
                crystals,
                kinetics,
            })
        }
        Err(e) => {
            // Point at the key the error is about.
            let span = match &e {
                MeltValueError::InterfaceChoice { crystal } => {
                    crystals.get(*crystal).map(|c| c.growth.span())
                }
                MeltValueError::Crystal { crystal, error } => crystals
                    .get(*crystal)
                    .map(|c| c.span_of(key_of(error)).unwrap_or_else(|| c.growth.span())),
                MeltValueError::Kinetics(ke) => match (ke, key_of(ke)) {
                    (KineticsError::DuplicatePhase(_), _) => {
                        crystals.last().and_then(|c| c.span_of("name"))
                    }
                    (_, name) => viscosity.span_of(name).or_else(|| kinetics.span_of(name)),
                },
            }
            .unwrap_or(0..0);
            Err(src.error(
                vec![src.problem(span, e.to_string())],
                e.hint().or(Some(hint.to_string())),
            ))
        }
    }
}

impl MeltCard {
    /// The span of a key of the melt (`a`, `b_k`, `c_k`) or of phase `k`.
    fn span_of(&self, phase: Option<usize>, key: &str) -> Option<Range<usize>> {
        match key {
            "a" | "b_k" | "c_k" | "log_eta_inf" | "tg_k" | "fragility" => {
                self.viscosity.span_of(key)
            }
            "glass transition" => self
                .viscosity
                .span_of("b_k")
                .or_else(|| self.viscosity.span_of("tg_k")),
            _ => match phase {
                Some(k) => self.crystals.get(k).and_then(|c| c.span_of(key)),
                None => self.kinetics.span_of(key),
            },
        }
    }

    /// The span of the kinetic factor of phase `k` (α or σ, whichever is given).
    fn interface_span(&self, k: usize) -> Option<Range<usize>> {
        let c = self.crystals.get(k)?;
        c.span_of("turnbull_alpha")
            .or_else(|| c.span_of("interface_energy_j_per_m2"))
    }

    /// The card's values outside the ranges plausible for oxide melts (with
    /// `options`, which may hold command-line values), each with its span.
    fn located_implausible(
        &self,
        options: &KineticOptions,
    ) -> Vec<(Option<Range<usize>>, Implausible)> {
        self.melt
            .implausible()
            .into_iter()
            .chain(options.implausible())
            .map(|i| {
                let phase = i
                    .phase
                    .as_ref()
                    .and_then(|n| self.melt.phases.iter().position(|p| &p.name == n));
                (self.span_of(phase, i.key), i)
            })
            .collect()
    }

    /// An error found while evaluating this card (with `options`, which may
    /// hold command-line values too), as an error naming the file and the
    /// line of the value it is most likely about; errors no value of the card
    /// is behind (a calibration target, a command-line option) keep only the
    /// file's name.
    pub fn locate(&self, e: KineticsError, options: &KineticOptions) -> Error {
        let src = Source::new(self.path.clone(), &self.text);
        let primary = self.melt.primary();
        let suspects = self.located_implausible(options);
        let first_suspect = suspects.iter().find_map(|(s, _)| s.clone());
        // A value outside its plausible range is the first suspect; else the
        // value the error is about.
        let span = match &e {
            KineticsError::LiquidusBelowGlassTransition { .. }
            | KineticsError::LiquidusBelowDivergence { .. } => {
                first_suspect.or_else(|| self.span_of(Some(primary), "liquidus_k"))
            }
            KineticsError::NoseBelowGlassTransition { .. }
            | KineticsError::Numerical(_)
            | KineticsError::Unrepresentable { .. }
            | KineticsError::NotFiniteResult { .. } => {
                first_suspect.or_else(|| self.interface_span(primary))
            }
            KineticsError::Value(v) => self.kinetics.span_of(v.name()),
            // The curve itself: a suspect value of it, else its constant.
            KineticsError::Viscosity(_) => {
                first_suspect.or_else(|| Some(self.viscosity.first_span()))
            }
            _ => None,
        };
        let mut message = e.to_string();
        if !suspects.is_empty() && span.is_some() {
            let list: Vec<String> = suspects.iter().map(|(_, i)| i.to_string()).collect();
            message.push_str(&format!("; implausible inputs: {}", list.join("; ")));
        }
        match span {
            Some(span) => Error::from(src.error(vec![src.problem(span, message)], e.hint())),
            None => {
                let mut err =
                    Error::bad_input(message).context(format!("evaluating {}", self.path));
                if let Some(h) = e.hint() {
                    err = err.with_hint(h);
                }
                err
            }
        }
    }
}

/// The spreads of a card, each checked where it stands.
fn card_spreads(
    src: &Source,
    crystals: &[CardCrystal],
    kinetics: &KineticsTable,
    strict: bool,
) -> Result<MeltSpreads, DataError> {
    let mut problems = Vec::new();
    let mut spreads = MeltSpreads::default();
    let sd =
        |v: &Option<Spanned<f64>>, key: &str, needs: bool, needed: &str, problems: &mut Vec<_>| {
            let v = v.as_ref()?;
            let x = *v.get_ref();
            if !(x.is_finite() && x >= 0.0) {
                problems.push(src.problem(
                    v.span(),
                    format!("{key} must be a standard deviation: a finite number ≥ 0, got {x}"),
                ));
            } else if strict && !needs {
                problems.push(src.problem(
                    v.span(),
                    format!("{key} is the spread of {needed}, which this crystal does not give"),
                ));
            }
            Some(x)
        };
    for c in crystals {
        spreads.turnbull_alpha_sd.push(sd(
            &c.turnbull_alpha_sd,
            "turnbull_alpha_sd",
            c.turnbull_alpha.is_some(),
            "turnbull_alpha",
            &mut problems,
        ));
        spreads.interface_energy_sd_j_per_m2.push(sd(
            &c.interface_energy_sd_j_per_m2,
            "interface_energy_sd_j_per_m2 (J/m2)",
            c.interface_energy_j_per_m2.is_some(),
            "interface_energy_j_per_m2",
            &mut problems,
        ));
    }
    if let Some((r, span)) = kinetics.nuclei_range() {
        match r[..] {
            [lo, hi] if lo.is_finite() && hi.is_finite() && lo > 0.0 && lo <= hi => {
                spreads.nuclei_range_per_m3 = Some((lo, hi));
            }
            _ => problems.push(src.problem(
                span,
                format!(
                    "heterogeneous_nuclei_per_m3 as a range must be [lo, hi] per m3 with 0 < lo ≤ hi (log-uniform), got {r:?}"
                ),
            )),
        }
    }
    if problems.is_empty() {
        Ok(spreads)
    } else {
        Err(src.error(
            problems,
            Some("spreads for `eval --uncertainty`: turnbull_alpha_sd (or interface_energy_sd_j_per_m2) in a [crystal], heterogeneous_nuclei_per_m3 = [1e6, 1e12] in [kinetics]".into()),
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const TWO: &str = r#"
[viscosity]
a = -2.8
b_k = 4500.0
c_k = 480.0

[[crystal]]
name = "alpha phase"
liquidus_k = 1300.0
enthalpy_of_fusion_j_per_mol = 60000.0
molar_volume_m3_per_mol = 6.0e-5
turnbull_alpha = 0.33
growth = "normal"

[[crystal]]
name = "beta phase"
liquidus_k = 1250.0
enthalpy_of_fusion_j_per_mol = 40000.0
molar_volume_m3_per_mol = 5.0e-5
turnbull_alpha = 0.30
growth = "screw"
heterogeneous_nuclei_per_m3 = 1e9

[kinetics]
contact_angle_deg = 60.0
sample_thickness_m = 0.004
transport = "fractional"
"#;

    #[test]
    fn several_crystals_and_the_kinetics_table_are_read() {
        let (m, o) =
            parse_melt_card(&Source::new("two.toml", TWO), &KineticOptions::default()).unwrap();
        assert_eq!(m.phases.len(), 2);
        assert_eq!(m.phases[1].name, "beta phase");
        assert_eq!(m.phases[1].nuclei_per_m3, Some(1e9));
        assert_eq!(m.liquidus().0, 1300.0);
        assert_eq!(o.contact_angle_deg, 60.0);
        assert_eq!(o.sample_thickness_m, 0.004);
        assert_eq!(
            o.transport,
            Transport::Fractional {
                exponent: DEFAULT_FRACTIONAL_EXPONENT
            }
        );
    }

    #[test]
    fn a_bad_value_in_the_second_crystal_names_its_line() {
        let text = TWO.replace(
            "molar_volume_m3_per_mol = 5.0e-5",
            "molar_volume_m3_per_mol = -5.0e-5",
        );
        let err = parse_melt_card(&Source::new("two.toml", &text), &KineticOptions::default())
            .unwrap_err()
            .to_string();
        let line = text.lines().position(|l| l.contains("-5.0e-5")).unwrap() + 1;
        assert!(
            err.contains(&format!(
                "two.toml:{line}: molar_volume_m3_per_mol must be positive"
            )),
            "{err}"
        );
        let text = TWO.replace("\"beta phase\"", "\"alpha phase\"");
        let err = parse_melt_card(&Source::new("two.toml", &text), &KineticOptions::default())
            .unwrap_err()
            .to_string();
        assert!(err.contains("'alpha phase' is given twice"), "{err}");
    }
}
