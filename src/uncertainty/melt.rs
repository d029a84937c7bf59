//! The uncertain inputs of a melt card or a model set, and the critical rate
//! of one draw. A melt card gives per-phase spreads of α (or σ) and a
//! log-uniform range of the pre-existing nuclei density ([`MeltSpreads`]); a
//! model set gives the covariance of every fitted part (viscosity
//! coefficients, each liquidus surface, the joint fit of the α) and the
//! standard error of α where no joint fit holds it ([`model_set_inputs`]).
//! See docs/science.md, "Uncertainty".

use super::{Distribution, UncertainInput, UncertaintyError};
use crate::assess::composition_melt;
use crate::composition::Composition;
use crate::kinetics::{KineticOptions, Kinetics, Melt};
use crate::properties::fit::{alpha_coefficient, FitRecord, NUCLEI_COEFFICIENT};
use crate::properties::liquidus::LiquidusSurface;
use crate::properties::mixture::Term;
use crate::properties::viscosity::ViscosityCoefficient;
use crate::properties::{Interface, ModelSet};

/// What a draw of one input changes.
#[derive(Debug, Clone, PartialEq)]
pub enum Target {
    /// Turnbull α of phase k of a melt (or of a model set).
    Alpha(usize),
    /// σ of phase k of a melt, J/m².
    InterfaceEnergy(usize),
    /// Pre-existing nuclei per m³ of every phase (the kinetic options).
    Nuclei,
    /// Coefficients of the model set's viscosity model.
    Viscosity(Vec<ViscosityCoefficient>),
    /// Coefficients of the mixture liquidus surface of model-set phase k.
    Liquidus { phase: usize, terms: Vec<Term> },
    /// The joint fit of the α: per coefficient, the model-set phase whose α
    /// it is, or None for log10 of the nuclei density.
    KineticsFit(Vec<Option<usize>>),
}

/// An uncertain input and what its draws change.
#[derive(Debug, Clone, PartialEq)]
pub struct Uncertain {
    pub input: UncertainInput,
    pub target: Target,
}

/// The spreads a melt card gives, per phase in the melt's order.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct MeltSpreads {
    /// Standard deviation of α (phases given by α).
    pub turnbull_alpha_sd: Vec<Option<f64>>,
    /// Standard deviation of σ, J/m² (phases given by σ).
    pub interface_energy_sd_j_per_m2: Vec<Option<f64>>,
    /// log-uniform range of the pre-existing nuclei per m³.
    pub nuclei_range_per_m3: Option<(f64, f64)>,
}

impl MeltSpreads {
    /// Whether the card gives any spread at all.
    pub fn is_empty(&self) -> bool {
        self.turnbull_alpha_sd.iter().all(Option::is_none)
            && self
                .interface_energy_sd_j_per_m2
                .iter()
                .all(Option::is_none)
            && self.nuclei_range_per_m3.is_none()
    }
}

fn refuse(name: &str, what: impl Into<String>) -> UncertaintyError {
    UncertaintyError::BadDistribution {
        input: name.into(),
        what: what.into(),
    }
}

/// The name of the input that draws the Turnbull α of a phase.
pub fn alpha_input_name(phase: &str) -> String {
    format!("turnbull_alpha of {phase}")
}

/// The name of the input that draws the interface energy σ of a phase.
pub fn interface_energy_input_name(phase: &str) -> String {
    format!("interface_energy_j_per_m2 of {phase}")
}

/// The name of the log-uniform input of the pre-existing nuclei density.
pub const NUCLEI_INPUT_NAME: &str = "heterogeneous_nuclei_per_m3";

/// The uncertain inputs of a melt card.
///
/// # Errors
/// An α spread for a phase given by σ (or the reverse), a spread that is
/// negative or not finite.
pub fn melt_inputs(melt: &Melt, spreads: &MeltSpreads) -> Result<Vec<Uncertain>, UncertaintyError> {
    let mut out = Vec::new();
    for (k, p) in melt.phases.iter().enumerate() {
        let a_sd = spreads.turnbull_alpha_sd.get(k).copied().flatten();
        let s_sd = spreads
            .interface_energy_sd_j_per_m2
            .get(k)
            .copied()
            .flatten();
        match (p.interface, a_sd, s_sd) {
            (_, Some(_), Some(_)) => {
                return Err(refuse(
                    &p.name,
                    "give turnbull_alpha_sd or interface_energy_sd_j_per_m2, not both",
                ))
            }
            (Interface::TurnbullAlpha(a), Some(sd), None) => out.push(Uncertain {
                input: UncertainInput {
                    name: alpha_input_name(&p.name),
                    distribution: Distribution::Normal { mean: a, sd },
                },
                target: Target::Alpha(k),
            }),
            (Interface::EnergyJPerM2(s), None, Some(sd)) => out.push(Uncertain {
                input: UncertainInput {
                    name: interface_energy_input_name(&p.name),
                    distribution: Distribution::Normal { mean: s, sd },
                },
                target: Target::InterfaceEnergy(k),
            }),
            (Interface::EnergyJPerM2(_), Some(_), None) => {
                return Err(refuse(
                    &p.name,
                    "turnbull_alpha_sd needs turnbull_alpha (this phase gives interface_energy_j_per_m2: use interface_energy_sd_j_per_m2)",
                ))
            }
            (Interface::TurnbullAlpha(_), None, Some(_)) => {
                return Err(refuse(
                    &p.name,
                    "interface_energy_sd_j_per_m2 needs interface_energy_j_per_m2 (this phase gives turnbull_alpha: use turnbull_alpha_sd)",
                ))
            }
            (_, None, None) => {}
        }
    }
    if let Some((lo, hi)) = spreads.nuclei_range_per_m3 {
        out.push(nuclei_input(lo, hi));
    }
    for u in &out {
        super::prepare(&u.input)?;
    }
    Ok(out)
}

/// The log-uniform nuclei density input.
pub fn nuclei_input(lo: f64, hi: f64) -> Uncertain {
    Uncertain {
        input: UncertainInput {
            name: NUCLEI_INPUT_NAME.into(),
            distribution: Distribution::LogUniform { lo, hi },
        },
        target: Target::Nuclei,
    }
}

/// The melt and options of one draw of a melt card's inputs.
fn apply_to_melt(
    melt: &Melt,
    opts: &KineticOptions,
    inputs: &[Uncertain],
    values: &[Vec<f64>],
) -> Result<(Melt, KineticOptions), String> {
    let mut phases = melt.phases.clone();
    let mut o = *opts;
    for (u, v) in inputs.iter().zip(values) {
        match &u.target {
            Target::Alpha(k) => phases[*k].interface = Interface::TurnbullAlpha(v[0]),
            Target::InterfaceEnergy(k) => phases[*k].interface = Interface::EnergyJPerM2(v[0]),
            Target::Nuclei => o.heterogeneous_nuclei_per_m3 = v[0],
            other => return Err(format!("a melt card has no {other:?}")),
        }
    }
    let m = Melt::with_phases(melt.viscosity, phases).map_err(|e| e.to_string())?;
    Ok((m, o))
}

/// The critical rate (K/s) of a melt card for one draw of its inputs.
///
/// # Errors
/// A drawn value the kinetics refuse (α ≤ 0, say), a numerical failure.
pub fn melt_critical_rate(
    melt: &Melt,
    opts: &KineticOptions,
    inputs: &[Uncertain],
    values: &[Vec<f64>],
) -> Result<f64, String> {
    let (m, o) = apply_to_melt(melt, opts, inputs, values)?;
    let k = Kinetics::new(&m, &o).map_err(|e| e.to_string())?;
    k.critical_rate().map(|r| r.0).map_err(|e| e.to_string())
}

fn covariance_input(name: String, record: &FitRecord, mean: Vec<f64>) -> UncertainInput {
    UncertainInput {
        name,
        distribution: Distribution::MultiNormal {
            mean,
            covariance: record.covariance.clone(),
        },
    }
}

/// The uncertain inputs of a model set: the covariance of each fit record
/// (viscosity, every mixture liquidus surface, the joint α fit), the
/// standard error of α for phases no joint fit covers, and the nuclei range
/// if one is given. Records the set cannot address are named in the
/// returned notes and left out.
///
/// # Errors
/// A covariance that is not one (checked when drawn).
pub fn model_set_inputs(
    models: &ModelSet,
    opts: &KineticOptions,
    nuclei_range_per_m3: Option<(f64, f64)>,
) -> Result<(Vec<Uncertain>, Vec<String>), UncertaintyError> {
    let mut out = Vec::new();
    let mut notes = Vec::new();
    if let Some(r) = &models.viscosity.fit {
        let names: Result<Vec<ViscosityCoefficient>, String> =
            r.coefficients.iter().map(|c| c.parse()).collect();
        let mean: Option<Vec<f64>> = names.as_ref().ok().and_then(|ns| {
            ns.iter()
                .map(|c| models.viscosity.coefficient(*c))
                .collect::<Option<Vec<f64>>>()
        });
        match (names, mean) {
            (Ok(ns), Some(mean)) => out.push(Uncertain {
                input: covariance_input(
                    format!("viscosity coefficients of {}", models.viscosity.name),
                    r,
                    mean,
                ),
                target: Target::Viscosity(ns),
            }),
            _ => notes.push(format!(
                "the fit record of viscosity model '{}' names coefficients the model lacks: left out",
                models.viscosity.name
            )),
        }
    }
    for (k, p) in models.phases.iter().enumerate() {
        let Some(r) = &p.liquidus_fit else { continue };
        let LiquidusSurface::Mixture(m) = &p.liquidus else {
            notes.push(format!(
                "the liquidus of {} is not a mixture model: its fit record is left out",
                p.name
            ));
            continue;
        };
        let terms: Result<Vec<Term>, String> = r.coefficients.iter().map(|c| c.parse()).collect();
        let mean = terms.as_ref().ok().and_then(|ts| {
            ts.iter()
                .map(|t| m.coefficient(*t))
                .collect::<Option<Vec<f64>>>()
        });
        match (terms, mean) {
            (Ok(terms), Some(mean)) => out.push(Uncertain {
                input: covariance_input(format!("liquidus surface of {}", p.name), r, mean),
                target: Target::Liquidus { phase: k, terms },
            }),
            _ => notes.push(format!(
                "the liquidus fit record of {} names terms its surface lacks: left out",
                p.name
            )),
        }
    }
    let mut covered = vec![false; models.phases.len()];
    if let Some(kf) = &models.kinetics_fit {
        let mut map = Vec::new();
        let mut mean = Vec::new();
        for c in &kf.record.coefficients {
            if c == NUCLEI_COEFFICIENT {
                let n = if opts.heterogeneous_nuclei_per_m3 > 0.0 {
                    opts.heterogeneous_nuclei_per_m3
                } else {
                    kf.heterogeneous_nuclei_per_m3
                };
                map.push(None);
                mean.push(n.log10());
            } else if let Some(k) = models
                .phases
                .iter()
                .position(|p| alpha_coefficient(&p.name) == *c)
            {
                covered[k] = true;
                map.push(Some(k));
                mean.push(models.phases[k].turnbull_alpha);
            } else {
                map.clear();
                break;
            }
        }
        if map.len() == kf.record.coefficients.len() && !map.is_empty() {
            out.push(Uncertain {
                input: covariance_input("kinetic factors (joint fit)".into(), &kf.record, mean),
                target: Target::KineticsFit(map),
            });
        } else {
            covered.iter_mut().for_each(|c| *c = false);
            notes.push("the kinetics fit record names a phase the set lacks: left out".to_string());
        }
    }
    for (k, p) in models.phases.iter().enumerate() {
        if let (false, Some(sd)) = (covered[k], p.turnbull_alpha_sd) {
            out.push(Uncertain {
                input: UncertainInput {
                    name: alpha_input_name(&p.name),
                    distribution: Distribution::Normal {
                        mean: p.turnbull_alpha,
                        sd,
                    },
                },
                target: Target::Alpha(k),
            });
        }
    }
    if let Some((lo, hi)) = nuclei_range_per_m3 {
        out.push(nuclei_input(lo, hi));
    }
    for u in &out {
        super::prepare(&u.input)?;
    }
    Ok((out, notes))
}

/// The critical rate (K/s) of a composition for one draw of a model set's
/// inputs: the set with the drawn coefficients, its properties, the melt of
/// every phase above T_g, the kinetics.
///
/// # Errors
/// A drawn set that gives no physical property or melt, a numerical failure.
pub fn composition_critical_rate(
    models: &ModelSet,
    comp: &Composition,
    opts: &KineticOptions,
    inputs: &[Uncertain],
    values: &[Vec<f64>],
) -> Result<f64, String> {
    let mut set = models.clone();
    let mut o = *opts;
    for (u, v) in inputs.iter().zip(values) {
        match &u.target {
            Target::Alpha(k) => set.phases[*k].turnbull_alpha = v[0],
            Target::Nuclei => o.heterogeneous_nuclei_per_m3 = v[0],
            Target::Viscosity(names) => {
                set.viscosity = set.viscosity.with_coefficients(names, v)?
            }
            Target::Liquidus { phase, terms } => {
                if let LiquidusSurface::Mixture(m) = &mut set.phases[*phase].liquidus {
                    for (t, x) in terms.iter().zip(v) {
                        m.set_coefficient(*t, *x);
                    }
                }
            }
            Target::KineticsFit(map) => {
                for (slot, x) in map.iter().zip(v) {
                    match slot {
                        Some(k) => set.phases[*k].turnbull_alpha = *x,
                        None => o.heterogeneous_nuclei_per_m3 = 10f64.powf(*x),
                    }
                }
            }
            Target::InterfaceEnergy(_) => {
                return Err("a model set gives α, not σ".into());
            }
        }
    }
    let props = set.properties(comp).map_err(|e| e.to_string())?;
    let melt = composition_melt(&set, &props).map_err(|e| e.to_string())?;
    let k = Kinetics::new(&melt, &o).map_err(|e| e.to_string())?;
    k.critical_rate().map(|r| r.0).map_err(|e| e.to_string())
}

/// The draws' inputs alone, for [`super::propagate`].
pub fn inputs_of(u: &[Uncertain]) -> Vec<UncertainInput> {
    u.iter().map(|u| u.input.clone()).collect()
}
