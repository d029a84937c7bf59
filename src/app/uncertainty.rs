//! `quenchwise eval --uncertainty N`: the point evaluation of one melt card
//! or composition, then N Monte Carlo draws of its uncertain inputs (the
//! library's `uncertainty`), printed under it or added to its JSON; or, for
//! a table (`--melt-cards`, `--compositions`), every row drawn with its own
//! seed and its band and variance shares written in columns beside its
//! point estimate.

use super::eval::evaluate_table_with;
use super::input;
use super::models::base_options;
use super::Outcome;
use crate::cli::EvalArgs;
use quenchwise::assess::{evaluate_composition, evaluate_melt, Calibration, SlabQuench};
use quenchwise::composition::{Basis, Composition};
use quenchwise::error::{Error, ResultExt};
use quenchwise::files::melt_card::parse_melt_card_spreads;
use quenchwise::files::melt_card::MeltValues;
use quenchwise::files::source::{read_text, Source};
use quenchwise::files::table::OxideAmounts;
use quenchwise::files::table_stream::{
    table_column_names, CompositionRows, ExtraCells, ExtraColumns, MeltSpreadRows, ResultPlan,
    MELT_SPREAD_COLUMNS,
};
use quenchwise::kinetics::{KineticOptions, KineticOverrides};
use quenchwise::properties::ModelSet;
use quenchwise::report::text::evaluation_text;
use quenchwise::report::uncertainty::propagation_text;
use quenchwise::uncertainty::melt::{
    alpha_input_name, composition_critical_rate, inputs_of, interface_energy_input_name,
    melt_critical_rate, melt_inputs, model_set_inputs, NUCLEI_INPUT_NAME,
};
use quenchwise::uncertainty::melt::{MeltSpreads, Target, Uncertain};
use quenchwise::uncertainty::sampling::row_seed;
use quenchwise::uncertainty::Propagation;
use quenchwise::uncertainty::{propagate, Settings, DEFAULT_SEED, MAX_DRAWS, MIN_DRAWS};
use quenchwise::units::{Celsius, RateUnit};
use std::io::Write;

/// Run `eval` with `--uncertainty` (the caller checked there is one input).
pub fn eval_uncertainty(a: &EvalArgs, draws: usize) -> Result<Outcome, Error> {
    let table = a.melt_cards.is_some() || a.compositions.is_some();
    if a.out.is_some() && !table {
        return Err(Error::bad_input(
            "--out writes tables: use it with --melt-cards or --compositions",
        ));
    }
    if a.against.is_some() {
        return Err(Error::bad_input(
            "--against draws with the screen config's own [uncertainty]: run it without --uncertainty",
        ));
    }
    if let Some(flag) = super::eval::single_glass_output(a).filter(|&f| f != "--json") {
        return Err(Error::bad_input(format!(
            "{flag} draws the point estimate: run it without --uncertainty"
        )));
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
    if table {
        // eval() has refused --json and the plots for tables already.
        return eval_uncertainty_table(a, settings, quench, slab);
    }
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
        let (models, opts, inputs) =
            model_set_draws(a, &cli, "a melt card with turnbull_alpha_sd")?;
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

/// The band columns a table gains with `--uncertainty` (all K/s but the sd,
/// in decades; the probability and its standard error with `--quench-rate`),
/// then one column of variance shares per input in `shares` (input names,
/// in the order the inputs are drawn; see [`share_columns`]).
fn band_columns(quench: Option<f64>, shares: &[String]) -> ExtraColumns {
    let mut numbers: Vec<String> = [
        "critical_rate_p05_k_per_s",
        "critical_rate_p50_k_per_s",
        "critical_rate_p95_k_per_s",
        "log10_critical_rate_sd",
        "failed_draws",
    ]
    .map(String::from)
    .to_vec();
    if quench.is_some() {
        numbers.push("probability_glassy".into());
        numbers.push("probability_glassy_se".into());
        numbers.push("probability_glassy_lower95".into());
    }
    numbers.extend(share_columns(shares));
    ExtraColumns {
        numbers,
        text: Some("band_note".into()),
    }
}

/// The column of each input's first-order variance share in a table:
/// `variance_share_` and the input's name as `eval --uncertainty` prints it,
/// in lower case, every run of characters other than a–z and 0–9 made one
/// `_` ("turnbull_alpha of crystal" → `variance_share_turnbull_alpha_of_crystal`);
/// a name that repeats an earlier one gains `_2`, `_3`, ….
fn share_columns(inputs: &[String]) -> Vec<String> {
    let mut out: Vec<String> = Vec::with_capacity(inputs.len());
    for name in inputs {
        let mut slug = String::from("variance_share");
        let mut gap = true;
        for ch in name.chars().flat_map(char::to_lowercase) {
            if ch.is_ascii_lowercase() || ch.is_ascii_digit() {
                if gap {
                    slug.push('_');
                    gap = false;
                }
                slug.push(ch);
            } else {
                gap = true;
            }
        }
        let mut column = slug.clone();
        let mut k = 2;
        while out.contains(&column) {
            column = format!("{slug}_{k}");
            k += 1;
        }
        out.push(column);
    }
    out
}

/// One row's band cells from its propagation (or why it has none); the
/// shares in the order of `shares` (empty where the row does not draw that
/// input, or its share cannot be estimated).
fn band_cells(
    result: Result<Propagation, String>,
    quench: Option<f64>,
    shares: &[String],
) -> ExtraCells {
    match result {
        Ok(p) => {
            let mut numbers = vec![
                Some(p.critical_rate_p05_k_per_s),
                Some(p.critical_rate_p50_k_per_s),
                Some(p.critical_rate_p95_k_per_s),
                Some(p.log10_critical_rate_sd),
                Some(p.failed_draws as f64),
            ];
            if quench.is_some() {
                numbers.push(p.probability_glassy);
                numbers.push(p.probability_glassy_se);
                numbers.push(p.probability_glassy_lower95);
            }
            numbers.extend(shares.iter().map(|name| {
                p.variance_shares
                    .iter()
                    .find(|s| &s.input == name)
                    .map(|s| s.share)
                    .filter(|s| s.is_finite())
            }));
            let mut notes = Vec::new();
            let beyond = p.beyond_vouching();
            if !beyond.is_empty() {
                notes.push(format!(
                    "band beyond what the model can vouch for: {}",
                    beyond.join(", ")
                ));
            }
            if let Some(f) = p.first_failure.as_ref().filter(|_| p.failed_draws > 0) {
                notes.push(format!(
                    "{} of {} draws failed (counted as not glassy), the first: {f}",
                    p.failed_draws, p.draws
                ));
            }
            ExtraCells {
                numbers,
                text: (!notes.is_empty()).then(|| notes.join("; ")),
            }
        }
        Err(why) => ExtraCells {
            numbers: Vec::new(),
            text: Some(format!("no band: {why}")),
        },
    }
}

/// The inputs a melt-card table may draw, by the spread columns its header
/// has (in the order `melt_inputs` draws them): α or σ of its one phase,
/// then the nuclei range unless `--heterogeneous-nuclei-per-m3` replaces it.
fn melt_table_share_inputs(header: &[String], nuclei_given: bool) -> Vec<String> {
    let has = |c: &str| header.iter().any(|h| h == c);
    let plan = ResultPlan::melt_cards();
    let phase = plan.phases.first().map_or("crystal", String::as_str);
    let [alpha_sd, sigma_sd, lo, hi] = MELT_SPREAD_COLUMNS;
    let mut out = Vec::new();
    if has(alpha_sd) {
        out.push(alpha_input_name(phase));
    }
    if has(sigma_sd) {
        out.push(interface_energy_input_name(phase));
    }
    if !nuclei_given && (has(lo) || has(hi)) {
        out.push(NUCLEI_INPUT_NAME.to_string());
    }
    out
}

/// `eval --melt-cards FILE` or `--compositions FILE` with `--uncertainty N`:
/// every row evaluated at its point estimate and drawn N times, with the
/// seed of row i derived from the seed and i (`sampling::row_seed`), so the
/// table does not depend on the thread count or the batch size; streamed in
/// batches like every table (memory holds one batch and, per running row,
/// its N draws).
/// The model set `eval` draws from, its kinetic options (the command line
/// applied) and its uncertain inputs, the notes about them printed; refused
/// when the set gives nothing to draw (`instead`: what the user may use).
fn model_set_draws(
    a: &EvalArgs,
    cli: &KineticOverrides,
    instead: &str,
) -> Result<(ModelSet, KineticOptions, Vec<Uncertain>), Error> {
    let models = super::eval::eval_models(a)?;
    let opts = cli.apply(base_options(&models));
    let (inputs, notes) = model_set_inputs(&models, &opts, None)?;
    for n in &notes {
        errln!("quenchwise: {n}");
    }
    if inputs.is_empty() {
        return Err(Error::bad_input(format!(
            "model set '{}' has no fit records and no standard error of α to draw from",
            models.about.name
        ))
        .with_hint(format!("fit the models to your measurements with `quenchwise fit` (it writes the covariances), or use {instead}")));
    }
    Ok((models, opts, inputs))
}

fn eval_uncertainty_table(
    a: &EvalArgs,
    settings: Settings,
    quench: Option<f64>,
    slab: Option<SlabQuench>,
) -> Result<Outcome, Error> {
    let out = a
        .out
        .as_deref()
        .ok_or_else(|| Error::bad_input("a table input needs --out FILE (.csv or .parquet)"))?;
    let stream = super::eval::stream_settings(a)?;
    let cli = super::eval::overrides(&a.kinetics);
    let row_settings = |i: usize| Settings {
        draws: settings.draws,
        seed: row_seed(settings.seed, i),
    };
    errln!(
        "quenchwise: {} draws per row, each row with its own seed derived from seed {} and its place in the file (the same numbers at any thread count)",
        settings.draws, settings.seed
    );
    if let Some(p) = &a.melt_cards {
        let nuclei_given = cli.heterogeneous_nuclei_per_m3.is_some();
        let shares = melt_table_share_inputs(&table_column_names(p)?, nuclei_given);
        let extra = band_columns(quench, &shares);
        return evaluate_table_with(
            p,
            out,
            &MeltSpreadRows,
            &ResultPlan::melt_cards(),
            &extra,
            stream,
            |i, (values, spreads): &(MeltValues, MeltSpreads)| {
                // The command line wins over the row, as over a single card.
                let (melt, card_opts) = values
                    .build(&KineticOptions::default())
                    .map_err(|e| e.to_string())?;
                let opts = cli.apply(card_opts);
                opts.validate().map_err(|e| e.to_string())?;
                let e = evaluate_melt(&melt, &opts, slab, &Calibration::None)
                    .map_err(|e| e.to_string())?;
                let band = melt_inputs(&melt, spreads)
                    .map_err(|e| e.to_string())
                    .and_then(|mut inputs| {
                        if nuclei_given {
                            // A number on the command line replaces the row's range.
                            inputs.retain(|u| u.target != Target::Nuclei);
                        }
                        if inputs.is_empty() {
                            return Err("this row gives no spread (turnbull_alpha_sd, interface_energy_sd_j_per_m2, or heterogeneous_nuclei_lo_per_m3 with _hi_per_m3)".into());
                        }
                        propagate(&inputs_of(&inputs), row_settings(i), quench, |v| {
                            melt_critical_rate(&melt, &opts, &inputs, v)
                        })
                        .map_err(|e| e.to_string())
                    });
                Ok((e, band_cells(band, quench, &shares)))
            },
        );
    }
    let Some(p) = &a.compositions else {
        return Err(Error::internal("a table without a table input"));
    };
    let (models, opts, inputs) =
        model_set_draws(a, &cli, "melt-card tables with a turnbull_alpha_sd column")?;
    let basis = if a.wt_text.as_deref() == Some("") {
        Basis::WtPercent
    } else {
        Basis::MolPercent
    };
    let other = super::eval::composition_columns_passed(p)?;
    if !other.is_empty() {
        errln!(
            "quenchwise: columns not read as oxides (passed through): {}",
            other.join(", ")
        );
    }
    let plan = ResultPlan {
        with_models: true,
        calibrated: models.phases.iter().any(|p| p.calibrated_against.is_some()),
        phases: models.phases.iter().map(|p| p.name.clone()).collect(),
        replaces: &[],
    };
    let drawn = inputs_of(&inputs);
    let shares: Vec<String> = drawn.iter().map(|i| i.name.clone()).collect();
    let extra = band_columns(quench, &shares);
    let tolerance = a.sum_tolerance;
    evaluate_table_with(
        p,
        out,
        &CompositionRows,
        &plan,
        &extra,
        stream,
        |i, pairs: &OxideAmounts| {
            let comp = Composition::new(pairs, basis, tolerance).map_err(|e| e.to_string())?;
            let e = evaluate_composition(&models, &comp, &opts, slab, &Calibration::None)
                .map_err(|e| e.to_string())?;
            let band = propagate(&drawn, row_settings(i), quench, |v| {
                composition_critical_rate(&models, &comp, &opts, &inputs, v)
            })
            .map_err(|e| e.to_string());
            Ok((e, band_cells(band, quench, &shares)))
        },
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn share_columns_follow_the_documented_naming_rule() {
        // The rule of docs/science.md, "What is reported" (tables): lower
        // case, every run of characters other than a–z and 0–9 one `_`, a
        // repeated name numbered from 2.
        let names = [
            "turnbull_alpha of crystal",
            "heterogeneous_nuclei_per_m3",
            "viscosity coefficients of demo-soda-lime VFT",
            "turnbull_alpha of Na2O·2SiO2",
            "turnbull_alpha of Na2O 2SiO2",
            "turnbull_alpha of Na2O--2SiO2",
        ]
        .map(String::from);
        assert_eq!(
            share_columns(&names),
            [
                "variance_share_turnbull_alpha_of_crystal",
                "variance_share_heterogeneous_nuclei_per_m3",
                "variance_share_viscosity_coefficients_of_demo_soda_lime_vft",
                "variance_share_turnbull_alpha_of_na2o_2sio2",
                "variance_share_turnbull_alpha_of_na2o_2sio2_2",
                "variance_share_turnbull_alpha_of_na2o_2sio2_3",
            ]
        );
        // A melt-card table: one column per spread column of its header, in
        // the order the inputs are drawn; a nuclei number on the command
        // line drops the range.
        let header = [
            "name",
            "heterogeneous_nuclei_hi_per_m3",
            "heterogeneous_nuclei_lo_per_m3",
            "interface_energy_sd_j_per_m2",
        ]
        .map(String::from);
        assert_eq!(
            melt_table_share_inputs(&header, false),
            [
                "interface_energy_j_per_m2 of crystal",
                "heterogeneous_nuclei_per_m3"
            ]
        );
        assert_eq!(
            melt_table_share_inputs(&header, true),
            ["interface_energy_j_per_m2 of crystal"]
        );
    }
}
