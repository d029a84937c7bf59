//! Every bad input gets a clear message and exit code 2, never a panic or NaN.
//! One broken fixture per defect; the message and the line number are asserted.

use crate::util::{fixture, run_in, temp_dir};

fn eval_card(name: &str) -> crate::util::Run {
    let d = temp_dir(name);
    run_in(&d, &["eval", "--melt", fixture(name).to_str().unwrap()])
}

#[test]
fn unknown_oxide_lists_the_known_ones() {
    let d = temp_dir("err-oxide");
    run_in(&d, &["eval", "--mol", "SiO2=72 Xy2O=28"])
        .code(2)
        .stderr_has("unknown oxide 'Xy2O'")
        .stderr_has("SiO2, B2O3, Al2O3, Li2O, Na2O");
}

#[test]
fn composition_that_does_not_sum() {
    let d = temp_dir("err-sum");
    run_in(&d, &["eval", "--mol", "SiO2=50 Na2O=10"])
        .code(2)
        .stderr_has("sum to 60.000 mol%");
}

#[test]
fn negative_amount() {
    let d = temp_dir("err-neg");
    run_in(&d, &["eval", "--mol", "SiO2=110 Na2O=-10"])
        .code(2)
        .stderr_has("must not be negative");
}

#[test]
fn missing_key_in_a_card() {
    eval_card("card-missing-key.toml")
        .code(2)
        .stderr_has("card-missing-key.toml:3: [viscosity] with form = \"vft\" needs b_k");
}

#[test]
fn mistyped_key_in_a_card() {
    eval_card("card-mistyped-key.toml")
        .code(2)
        .stderr_has("card-mistyped-key.toml:9: unknown field `enthalpy_of_fusion`");
}

#[test]
fn negative_enthalpy_in_a_card() {
    eval_card("card-negative-enthalpy.toml")
        .code(2)
        .stderr_has("card-negative-enthalpy.toml:9: enthalpy_of_fusion_j_per_mol must be positive, got -60000 J/mol");
}

#[test]
fn unknown_growth_mode() {
    eval_card("card-bad-growth.toml")
        .code(2)
        .stderr_has("card-bad-growth.toml:12: unknown variant `spiral`");
}

#[test]
fn liquidus_below_the_vft_divergence() {
    eval_card("card-below-divergence.toml")
        .code(2)
        .stderr_has("card-below-divergence.toml:8: liquidus 450.0 K is at or below the VFT divergence temperature");
}

#[test]
fn nose_below_the_glass_transition() {
    eval_card("card-nose-below-tg.toml")
        .code(2)
        .stderr_has("card-nose-below-tg.toml")
        .stderr_has("lies below the glass transition 784.1 K");
}

#[test]
fn model_file_reports_all_its_defects_at_once() {
    let d = temp_dir("err-models");
    let f = fixture("models-two-defects.toml");
    run_in(
        &d,
        &[
            "eval",
            "--mol",
            "SiO2=72 Na2O=14 CaO=10 Al2O3=4",
            "--models",
            f.to_str().unwrap(),
        ],
    )
    .code(2)
    .stderr_has("models-two-defects.toml:39: unknown oxide 'Sio3'")
    .stderr_has("models-two-defects.toml:122: enthalpy_of_fusion_j_per_mol must be positive");
}

#[test]
fn recipe_with_a_bad_basis() {
    let d = temp_dir("err-recipe");
    run_in(
        &d,
        &[
            "eval",
            "--recipe",
            fixture("recipe-bad-basis.toml").to_str().unwrap(),
        ],
    )
    .code(2)
    .stderr_has("recipe-bad-basis.toml:2: basis must be \"mol%\" or \"wt%\", got \"ppm\"");
}

#[test]
fn missing_file_and_missing_input() {
    let d = temp_dir("err-missing");
    run_in(&d, &["eval", "--melt", "nope.toml"])
        .code(2)
        .stderr_has("nope.toml: cannot read the file");
    run_in(&d, &["eval"]).code(2);
    run_in(&d, &["eval", "--melt-cards", "x.csv"])
        .code(2)
        .stderr_has("--out");
}

#[test]
fn table_without_required_columns() {
    let d = temp_dir("err-table");
    std::fs::write(d.join("m.csv"), "a,b_k\n1,2\n").unwrap();
    run_in(&d, &["eval", "--melt-cards", "m.csv", "--out", "o.csv"])
        .code(2)
        .stderr_has("missing column 'c_k'");
}

#[test]
fn report_on_a_folder_without_results() {
    let d = temp_dir("err-report");
    run_in(&d, &["report", "."])
        .code(2)
        .stderr_has("holds no screen results");
}

#[test]
fn a_table_separated_by_semicolons_or_tabs_is_named_as_such() {
    // What a spreadsheet whose decimal mark is a comma saves as "CSV"
    // (common practice in much of Europe), and a tab-separated export: read
    // as comma-separated, either would be one column, and the error would
    // be about something else. (A raw-materials file in that layout is
    // converted instead: its columns are known.)
    let d = temp_dir("err-separator");
    std::fs::write(
        d.join("semi.csv"),
        "name;SiO2;Na2O;CaO\nplate-A;72,0;14,0;14,0\n",
    )
    .unwrap();
    std::fs::write(
        d.join("tabs.csv"),
        "name\tSiO2\tNa2O\tCaO\nplate-A\t72\t14\t14\n",
    )
    .unwrap();
    run_in(
        &d,
        &["eval", "--compositions", "semi.csv", "--out", "o.csv"],
    )
    .code(2)
    .stderr_has("semi.csv: the header holds no comma but 3 semicolons")
    .stderr_has("'.' as the decimal mark");
    run_in(
        &d,
        &["eval", "--compositions", "tabs.csv", "--out", "o.csv"],
    )
    .code(2)
    .stderr_has("tabs.csv: the header holds no comma but 3 tabs");
    assert!(!d.join("o.csv").exists());
}
