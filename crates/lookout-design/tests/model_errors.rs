//! Every bad-input rule of the model file, part one: syntax, keys, matrix
//! shapes, numbers, the sample period and the choices. Each test checks
//! the error's key path, its kind and the words that name the problem (not
//! the whole text). Part two (`model_errors_observer.rs`) covers the
//! observer, the noise, the gate, fixed point and names.

mod model_errors_common;
use lookout_design::model::{Model, ModelErrorKind};
use model_errors_common::*;

// ---- the contract's example message ----

#[test]
fn b_with_too_many_rows_gives_the_documented_message() {
    let e = parse_err(&with_plant(
        "a = [[0.0, 1.0], [0.0, -8.0]]\nb = [[0.0], [80.0], [1.0]]\nc = [[1.0, 0.0]]\n",
    ));
    assert_eq!(
        e.to_string(),
        "test.toml: plant.b: expected 2 rows (one per state, n = 2 from plant.a), found 3"
    );
    assert_eq!(e.location().map(|l| l.line), Some(6));
}

// ---- syntax and I/O ----

#[test]
fn syntax_error_reports_line_and_column() {
    let e = check(
        "name = \"x\"\nsample_period = = 0.001\n",
        ModelErrorKind::Syntax,
        "",
        &["test.toml:2:"],
    );
    assert_eq!(e.location().map(|l| l.line), Some(2));
}

#[test]
fn duplicate_key_is_a_syntax_error() {
    check(
        "name = \"x\"\nname = \"y\"\n",
        ModelErrorKind::Syntax,
        "",
        &["test.toml:2:"],
    );
}

#[test]
fn missing_file_is_an_io_error() {
    let e = Model::load(std::path::Path::new("/nonexistent/dir/conveyor.toml")).unwrap_err();
    assert_eq!(e.kind(), ModelErrorKind::Io);
    assert_eq!(e.origin(), "conveyor.toml");
    assert!(e.to_string().contains("cannot read"), "{e}");
}

// ---- missing and unknown keys ----

#[test]
fn missing_top_level_keys() {
    let full = with_rest("");
    let no_name = full.replace("name = \"conveyor\"\n", "");
    check(&no_name, ModelErrorKind::MissingKey, "name", &["missing"]);
    let no_period = full.replace("sample_period = 0.001\n", "");
    check(
        &no_period,
        ModelErrorKind::MissingKey,
        "sample_period",
        &["missing"],
    );
    check(
        "name = \"x\"\nsample_period = 0.001\n[observer]\nform = \"predictor\"\n",
        ModelErrorKind::MissingKey,
        "plant",
        &["missing"],
    );
    check(
        &format!("name = \"x\"\nsample_period = 0.001\n[plant]\n{PLANT}"),
        ModelErrorKind::MissingKey,
        "observer",
        &["missing"],
    );
}

#[test]
fn missing_plant_matrices() {
    check(
        &with_plant("b = [[0.0], [80.0]]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::MissingKey,
        "plant.a",
        &["missing"],
    );
    check(
        &with_plant("a = [[0.0, 1.0], [0.0, -8.0]]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::MissingKey,
        "plant.b",
        &["missing"],
    );
    check(
        &with_plant("a = [[0.0, 1.0], [0.0, -8.0]]\nb = [[0.0], [80.0]]\n"),
        ModelErrorKind::MissingKey,
        "plant.c",
        &["missing"],
    );
}

#[test]
fn missing_form() {
    check(
        &with_observer("poles = [-40.0, -45.0]\n"),
        ModelErrorKind::MissingKey,
        "observer.form",
        &["missing"],
    );
}

#[test]
fn unknown_top_level_key_lists_allowed_keys_and_suggests() {
    let text = with_rest("").replace("sample_period", "sampel_period");
    check(
        &text,
        ModelErrorKind::UnknownKey,
        "sampel_period",
        &[
            "unknown key",
            "did you mean `sample_period`",
            "allowed keys: name, sample_period",
        ],
    );
}

#[test]
fn unknown_keys_in_each_section() {
    check(
        &with_plant(&format!("{PLANT}domian = \"discrete\"\n")),
        ModelErrorKind::UnknownKey,
        "plant.domian",
        &["in [plant]", "did you mean `domain`", "state_names"],
    );
    check(
        &with_observer(&format!("{OBSERVER}gate_prob = 0.9\n")),
        ModelErrorKind::UnknownKey,
        "observer.gate_prob",
        &["in [observer]", "gate_probability"],
    );
    check(
        &with_rest(&format!("{FIXED}margin = 2\n")),
        ModelErrorKind::UnknownKey,
        "fixed_point.margin",
        &["in [fixed_point]", "margin_bits"],
    );
    check(
        &with_observer(
            "form = \"current\"\n[observer.kalman]\nprocess_noise = [[1.0, 0.0], [0.0, 1.0]]\n\
             measurement_noise = [[1.0]]\nnoise_inputs = [[1.0], [0.0]]\n",
        ),
        ModelErrorKind::UnknownKey,
        "observer.kalman.noise_inputs",
        &["in [observer.kalman]", "did you mean `noise_input`"],
    );
    check(
        &with_observer("form = \"predictor\"\npoles = [{ re = -40.0, imag = 3.0 }]\n"),
        ModelErrorKind::UnknownKey,
        "observer.poles[0].imag",
        &["allowed keys: re, im"],
    );
}

// ---- matrix shapes ----

#[test]
fn a_not_square() {
    check(
        &with_plant("a = [[0.0, 1.0]]\nb = [[0.0]]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::WrongSize,
        "plant.a",
        &["square", "1 rows of 2 columns"],
    );
}

#[test]
fn c_with_wrong_column_count() {
    check(
        &with_plant("a = [[0.0, 1.0], [0.0, -8.0]]\nb = [[0.0], [80.0]]\nc = [[1.0, 0.0, 0.0]]\n"),
        ModelErrorKind::WrongSize,
        "plant.c",
        &["expected 2 columns (one per state, n = 2 from plant.a) per row, found 3"],
    );
}

#[test]
fn d_with_wrong_shape() {
    check(
        &with_plant(&format!("{PLANT}d = [[0.0, 0.0]]\n")),
        ModelErrorKind::WrongSize,
        "plant.d",
        &["1 column (one per input, m = 1 from plant.b)", "found 2"],
    );
    check(
        &with_plant(&format!("{PLANT}d = [[0.0], [0.0]]\n")),
        ModelErrorKind::WrongSize,
        "plant.d",
        &["1 row (one per output, p = 1 from plant.c)", "found 2"],
    );
}

#[test]
fn ragged_rows() {
    check(
        &with_plant("a = [[0.0, 1.0], [0.0]]\nb = [[0.0], [80.0]]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::WrongSize,
        "plant.a[1]",
        &["ragged", "row 1 has 1 entries but row 0 has 2"],
    );
}

#[test]
fn empty_matrix_and_empty_row() {
    check(
        &with_plant("a = []\nb = [[0.0], [80.0]]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::WrongSize,
        "plant.a",
        &["empty matrix"],
    );
    check(
        &with_plant("a = [[0.0, 1.0], [0.0, -8.0]]\nb = [[], []]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::WrongSize,
        "plant.b[0]",
        &["empty row"],
    );
}

#[test]
fn matrix_written_as_flat_list_or_scalar() {
    check(
        &with_plant("a = [[0.0, 1.0], [0.0, -8.0]]\nb = [[0.0], [80.0]]\nc = [1.0, 0.0]\n"),
        ModelErrorKind::WrongType,
        "plant.c[0]",
        &["expected a row", "found a float", "array of rows"],
    );
    check(
        &with_plant("a = 1.0\nb = [[0.0]]\nc = [[1.0]]\n"),
        ModelErrorKind::WrongType,
        "plant.a",
        &["expected a matrix", "found a float"],
    );
}

#[test]
fn wrong_entry_type_names_the_entry() {
    check(
        &with_plant("a = [[0.0, 1.0], [0.0, \"-8\"]]\nb = [[0.0], [80.0]]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::WrongType,
        "plant.a[1][1]",
        &["expected a number, found a string"],
    );
}

#[test]
fn gain_shape() {
    check(
        &with_observer("form = \"predictor\"\ngain = [[1.0, 2.0], [3.0, 4.0]]\n"),
        ModelErrorKind::WrongSize,
        "observer.gain",
        &["1 column (one per output, p = 1 from plant.c)", "found 2"],
    );
    check(
        &with_observer("form = \"predictor\"\ngain = [[1.0]]\n"),
        ModelErrorKind::WrongSize,
        "observer.gain",
        &["2 rows (one per state, n = 2 from plant.a)", "found 1"],
    );
}

// ---- non-finite numbers ----

#[test]
fn inf_and_nan_are_refused_everywhere() {
    check(
        &with_plant("a = [[0.0, 1.0], [0.0, -inf]]\nb = [[0.0], [80.0]]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::NonFinite,
        "plant.a[1][1]",
        &["not a finite number"],
    );
    check(
        &with_plant("a = [[0.0, 1.0], [0.0, -8.0]]\nb = [[0.0], [nan]]\nc = [[1.0, 0.0]]\n"),
        ModelErrorKind::NonFinite,
        "plant.b[1][0]",
        &["NaN is not a finite number"],
    );
    check(
        &with_observer("form = \"predictor\"\npoles = [-40.0, { re = -1.0e400, im = 1.0 }]\n"),
        ModelErrorKind::NonFinite,
        "observer.poles[1].re",
        &["finite"],
    );
    check(
        &with_rest("[fixed_point]\nformat = \"q31\"\ninput_range = [+inf]\noutput_range = [1.0]\n"),
        ModelErrorKind::NonFinite,
        "fixed_point.input_range[0]",
        &["finite"],
    );
    check(
        &with_rest("").replace("0.001", "nan"),
        ModelErrorKind::NonFinite,
        "sample_period",
        &["finite"],
    );
}

// ---- sample period ----

#[test]
fn sample_period_must_be_positive() {
    for bad in ["0.0", "-0.001", "0"] {
        check(
            &with_rest("").replace("0.001", bad),
            ModelErrorKind::OutOfRange,
            "sample_period",
            &["must be > 0"],
        );
    }
    check(
        &with_rest("").replace("0.001", "\"1 ms\""),
        ModelErrorKind::WrongType,
        "sample_period",
        &["expected a number, found a string"],
    );
}

// ---- choices ----

#[test]
fn unknown_choices_list_the_allowed_values() {
    check(
        &with_observer("form = \"filter\"\npoles = [-40.0, -45.0]\n"),
        ModelErrorKind::UnknownChoice,
        "observer.form",
        &["unknown value \"filter\"", "\"predictor\", \"current\""],
    );
    check(
        &with_plant(&format!("{PLANT}domain = \"sampled\"\n")),
        ModelErrorKind::UnknownChoice,
        "plant.domain",
        &["\"continuous\", \"discrete\""],
    );
    check(
        &with_observer("form = \"predictor\"\ngain = [[1.0], [2.0]]\ngain_method = \"tustin\"\n"),
        ModelErrorKind::UnknownChoice,
        "observer.gain_method",
        &["\"hold\", \"pole-map\""],
    );
    check(
        &with_observer(
            "form = \"current\"\n[observer.kalman]\nprocess_noise = [[1.0, 0.0], [0.0, 1.0]]\n\
             measurement_noise = [[1.0]]\nnoise_domain = \"sampled\"\n",
        ),
        ModelErrorKind::UnknownChoice,
        "observer.kalman.noise_domain",
        &["\"continuous\", \"discrete\""],
    );
    check(
        &with_rest("[fixed_point]\nformat = \"q7\"\ninput_range = [1.0]\noutput_range = [1.0]\n"),
        ModelErrorKind::UnknownChoice,
        "fixed_point.format",
        &["\"q31\", \"q15\""],
    );
}
