//! `quenchwise eval --uncertainty N`: the point evaluation of one melt card
//! or composition, then N Monte Carlo draws of its uncertain inputs (the
//! library's `uncertainty`), printed under it or added to its JSON.

use super::input;
use super::models::{base_options, load_models};
use super::Outcome;
use crate::cli::EvalArgs;
use quenchwise::assess::{evaluate_composition, evaluate_melt, Calibration, SlabQuench};
use quenchwise::error::{Error, ResultExt};
use quenchwise::files::melt_card::parse_melt_card_spreads;
use quenchwise::files::source::{read_text, Source};
use quenchwise::kinetics::KineticOptions;
use quenchwise::report::text::evaluation_text;
use quenchwise::report::uncertainty::propagation_text;
use quenchwise::uncertainty::melt::{
    composition_critical_rate, inputs_of, melt_critical_rate, melt_inputs, model_set_inputs,
};
use quenchwise::uncertainty::{propagate, Settings, DEFAULT_SEED, MAX_DRAWS, MIN_DRAWS};
use quenchwise::units::{Celsius, RateUnit};
use std::io::Write;

/// Run `eval` with `--uncertainty` (the caller checked there is one input).
pub fn eval_uncertainty(a: &EvalArgs, draws: usize) -> Result<Outcome, Error> {
    if a.melt_cards.is_some() || a.compositions.is_some() || a.out.is_some() {
        return Err(Error::bad_input(
            "--uncertainty applies to one melt card or composition (--melt, --mol, --wt, --recipe), not to tables",
        ));
    }
    if a.ttt.is_some() || a.plot.is_some() {
        return Err(Error::bad_input(
            "--ttt and --plot draw the point estimate: run them without --uncertainty",
        ));
    }
    if !(MIN_DRAWS..=MAX_DRAWS).contains(&draws) {
        return Err(Error::bad_input(format!(
            "--uncertainty {draws}: give at least {MIN_DRAWS} and at most {MAX_DRAWS} draws (4000 give a probability to about ±0.008)"
        )));
    }
    let unit: RateUnit = a.rate_unit.into();
    let quench = match a.uncertainty.quench_rate {
        Some(r) if r > 0.0 && r.is_finite() => Some(unit.to_si(r).0),
        Some(r) => {
            return Err(Error::bad_input(format!(
                "--quench-rate must be a positive rate in {}, got {r}",
                unit.symbol()
            )))
        }
        None => None,
    };
    if !(a.melt_diffusivity > 0.0 && a.melt_diffusivity.is_finite()) {
        return Err(Error::bad_input(format!(
            "--melt-diffusivity must be positive, got {} m²/s",
            a.melt_diffusivity
        )));
    }
    let slab = Some(SlabQuench {
        surface: Celsius(a.quench_surface_c).to_kelvin(),
        diffusivity_m2_per_s: a.melt_diffusivity,
    });
    let settings = Settings {
        draws,
        seed: a.uncertainty.seed.unwrap_or(DEFAULT_SEED),
    };
    let cli = super::eval::overrides(&a.kinetics);
    let (evaluation, propagation) = if let Some(p) = &a.melt {
        let text = read_text(p)?;
        let (melt, card_opts, spreads) = parse_melt_card_spreads(
            &Source::new(p.display().to_string(), &text),
            &KineticOptions::default(),
        )?;
        let opts = cli.apply(card_opts);
        opts.validate()?;
        let mut inputs = melt_inputs(&melt, &spreads)?;
        if cli.heterogeneous_nuclei_per_m3.is_some() {
            // A number on the command line replaces the card's range.
            inputs.retain(|u| u.target != quenchwise::uncertainty::melt::Target::Nuclei);
        }
        if inputs.is_empty() {
            return Err(Error::bad_input(format!(
                "{} gives no spread to draw from",
                p.display()
            ))
            .with_hint("add turnbull_alpha_sd (or interface_energy_sd_j_per_m2) to a [crystal], or heterogeneous_nuclei_per_m3 = [lo, hi] to [kinetics]; see demo-datasets/melt-card.toml"));
        }
        let e = evaluate_melt(&melt, &opts, slab, &Calibration::None)
            .with_context(|| format!("evaluating {}", p.display()))?;
        let prop = propagate(&inputs_of(&inputs), settings, quench, |v| {
            melt_critical_rate(&melt, &opts, &inputs, v)
        })?;
        (e, prop)
    } else {
        let wt = a.wt_text.as_deref().filter(|t| !t.is_empty());
        let comp = input::composition(a.mol.as_deref(), wt, a.recipe.as_deref(), a.sum_tolerance)?;
        let models = load_models(a.models.as_deref(), a.viscosity_model.as_deref())?;
        let opts = cli.apply(base_options(&models));
        let (inputs, notes) = model_set_inputs(&models, &opts, None)?;
        for n in &notes {
            eprintln!("quenchwise: {n}");
        }
        if inputs.is_empty() {
            return Err(Error::bad_input(format!(
                "model set '{}' has no fit records and no standard error of α to draw from",
                models.about.name
            ))
            .with_hint("fit the models to your measurements with `quenchwise fit` (it writes the covariances), or use a melt card with turnbull_alpha_sd"));
        }
        let e = evaluate_composition(&models, &comp, &opts, slab, &Calibration::None)?;
        let prop = propagate(&inputs_of(&inputs), settings, quench, |v| {
            composition_critical_rate(&models, &comp, &opts, &inputs, v)
        })?;
        (e, prop)
    };
    let out = if a.json {
        let mut v = serde_json::to_value(&evaluation)
            .map_err(|e| Error::internal(format!("writing JSON: {e}")))?;
        let u = serde_json::to_value(&propagation)
            .map_err(|e| Error::internal(format!("writing JSON: {e}")))?;
        if let Some(o) = v.as_object_mut() {
            o.insert("uncertainty".into(), u);
        }
        serde_json::to_string_pretty(&v)
            .map_err(|e| Error::internal(format!("writing JSON: {e}")))?
            + "\n"
    } else {
        // The band goes above the caution that closes the evaluation.
        let text = evaluation_text(&evaluation);
        let band = propagation_text(&propagation, unit);
        match text.find("\ncaution:") {
            Some(i) => format!("{}{band}{}", &text[..i], &text[i..]),
            None => text + &band,
        }
    };
    std::io::stdout()
        .lock()
        .write_all(out.as_bytes())
        .map_err(|e| Error::internal(format!("writing to stdout: {e}")))?;
    Ok(Outcome::Finished)
}
