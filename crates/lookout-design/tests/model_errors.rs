//! Every bad-input rule of the model file: each test checks the error's key
//! path, its kind and the words that name the problem (not the whole text).

use lookout_design::model::{Model, ModelError, ModelErrorKind};

const PLANT: &str = "a = [[0.0, 1.0], [0.0, -8.0]]\nb = [[0.0], [80.0]]\nc = [[1.0, 0.0]]\n";
const OBSERVER: &str = "form = \"predictor\"\npoles = [-40.0, -45.0]\n";

/// A two-state, one-input, one-output model with the given section bodies.
fn model(plant: &str, observer: &str, rest: &str) -> String {
    format!(
        "name = \"conveyor\"\nsample_period = 0.001\n\n[plant]\n{plant}\n[observer]\n{observer}\n{rest}"
    )
}

fn parse_err(text: &str) -> ModelError {
    match Model::from_toml_str(text, "test.toml") {
        Ok(m) => panic!("expected an error, got {m:?}\n--- input ---\n{text}"),
        Err(e) => e,
    }
}

#[track_caller]
fn check(text: &str, kind: ModelErrorKind, path: &str, words: &[&str]) -> ModelError {
    let e = parse_err(text);
    let shown = e.to_string();
    assert_eq!(e.kind(), kind, "{shown}");
    assert_eq!(e.path(), path, "{shown}");
    assert!(shown.starts_with("test.toml:"), "{shown}");
    assert!(!shown.contains('\n'), "one line: {shown}");
    for w in words {
        assert!(shown.contains(w), "missing {w:?} in: {shown}");
    }
    e
}

fn with_plant(plant: &str) -> String {
    model(plant, OBSERVER, "")
}

fn with_observer(observer: &str) -> String {
    model(PLANT, observer, "")
}

fn with_rest(rest: &str) -> String {
    model(PLANT, OBSERVER, rest)
}

const FIXED: &str = "[fixed_point]\nformat = \"q31\"\ninput_range = [5.0]\noutput_range = [64.0]\n";

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

// ---- gain sources ----

#[test]
fn no_gain_source() {
    check(
        &with_observer("form = \"predictor\"\n"),
        ModelErrorKind::MissingKey,
        "observer",
        &[
            "no gain source",
            "exactly one of poles, discrete_poles, gain or [observer.kalman]",
        ],
    );
}

#[test]
fn several_gain_sources() {
    check(
        &with_observer("form = \"predictor\"\npoles = [-40.0, -45.0]\ngain = [[1.0], [2.0]]\n"),
        ModelErrorKind::Conflict,
        "observer",
        &["several gain sources (poles, gain)"],
    );
    check(
        &with_observer(
            "form = \"current\"\ndiscrete_poles = [0.9, 0.8]\n[observer.kalman]\n\
             process_noise = [[1.0, 0.0], [0.0, 1.0]]\nmeasurement_noise = [[1.0]]\n",
        ),
        ModelErrorKind::Conflict,
        "observer",
        &["several gain sources (discrete_poles, kalman)"],
    );
}

#[test]
fn gain_method_without_gain() {
    check(
        &with_observer("form = \"predictor\"\npoles = [-40.0, -45.0]\ngain_method = \"hold\"\n"),
        ModelErrorKind::Conflict,
        "observer.gain_method",
        &["only to a given `gain`"],
    );
}

#[test]
fn continuous_gain_on_discrete_plant() {
    check(
        &model(
            &format!("{PLANT}domain = \"discrete\"\n"),
            "form = \"predictor\"\ngain = [[1.0], [2.0]]\n",
            "",
        ),
        ModelErrorKind::Conflict,
        "observer.gain",
        &["continuous plant", "discrete_poles"],
    );
}

// ---- poles ----

#[test]
fn wrong_pole_count_counts_pairs_as_two() {
    check(
        &with_observer("form = \"predictor\"\npoles = [-40.0]\n"),
        ModelErrorKind::PoleCount,
        "observer.poles",
        &[
            "expected 2 poles (one per state, n = 2 from plant.a), found 1",
            "counts as two",
        ],
    );
    check(
        &with_observer("form = \"predictor\"\npoles = [-40.0, { re = -50.0, im = 20.0 }]\n"),
        ModelErrorKind::PoleCount,
        "observer.poles",
        &["found 3"],
    );
}

#[test]
fn both_members_of_a_pair_get_a_hint() {
    check(
        &with_observer(
            "form = \"predictor\"\npoles = [{ re = -50.0, im = 20.0 }, { re = -50.0, im = -20.0 }]\n",
        ),
        ModelErrorKind::PoleCount,
        "observer.poles",
        &[
            "found 4",
            "entries 0 and 1 are the two members of one pair",
            "list each pair once",
        ],
    );
    // No hint when the count is wrong for another reason.
    let other = parse_err(&with_observer(
        "form = \"predictor\"\npoles = [-1.0, -2.0, -3.0]\n",
    ));
    assert!(!other.to_string().contains("members"), "{other}");
}

#[test]
fn complex_entry_with_zero_imaginary_part() {
    check(
        &with_observer("form = \"predictor\"\npoles = [-40.0, { re = -45.0, im = 0.0 }]\n"),
        ModelErrorKind::PoleCount,
        "observer.poles[1].im",
        &["write it as a real number (-45)"],
    );
}

#[test]
fn complex_entry_missing_a_part() {
    check(
        &with_observer("form = \"predictor\"\npoles = [{ re = -45.0 }]\n"),
        ModelErrorKind::MissingKey,
        "observer.poles[0].im",
        &["missing"],
    );
}

#[test]
fn unstable_s_plane_poles_are_refused_by_name() {
    check(
        &with_observer("form = \"predictor\"\npoles = [-40.0, 0.0]\n"),
        ModelErrorKind::UnstablePole,
        "observer.poles[1]",
        &["pole 0 is not stable", "Re < 0"],
    );
    check(
        &with_observer("form = \"predictor\"\npoles = [{ re = 3.0, im = 2.0 }]\n"),
        ModelErrorKind::UnstablePole,
        "observer.poles[0]",
        &["pole 3 ± 2i is not stable"],
    );
}

#[test]
fn unstable_z_plane_poles_are_refused_by_name() {
    check(
        &with_observer("form = \"predictor\"\ndiscrete_poles = [0.5, -1.0]\n"),
        ModelErrorKind::UnstablePole,
        "observer.discrete_poles[1]",
        &["pole -1 is not stable", "|z| < 1"],
    );
    // |0.8 ± 0.7i| = sqrt(1.13) > 1.
    check(
        &with_observer("form = \"predictor\"\ndiscrete_poles = [{ re = 0.8, im = 0.7 }]\n"),
        ModelErrorKind::UnstablePole,
        "observer.discrete_poles[0]",
        &["0.8 ± 0.7i", "|z| ="],
    );
}

#[test]
fn pole_entry_of_wrong_type() {
    check(
        &with_observer("form = \"predictor\"\npoles = [-40.0, \"-45\"]\n"),
        ModelErrorKind::WrongType,
        "observer.poles[1]",
        &["expected a number"],
    );
    check(
        &with_observer("form = \"predictor\"\npoles = -40.0\n"),
        ModelErrorKind::WrongType,
        "observer.poles",
        &["expected an array"],
    );
}

// ---- Kalman noise ----

fn kalman(body: &str) -> String {
    with_observer(&format!("form = \"current\"\n[observer.kalman]\n{body}"))
}

#[test]
fn measurement_noise_must_be_positive_definite() {
    check(
        &kalman("process_noise = [[1.0, 0.0], [0.0, 1.0]]\nmeasurement_noise = [[0.0]]\n"),
        ModelErrorKind::NotDefinite,
        "observer.kalman.measurement_noise",
        &["not positive definite", "smallest eigenvalue 0.0000e0"],
    );
    check(
        &kalman("process_noise = [[1.0, 0.0], [0.0, 1.0]]\nmeasurement_noise = [[-2.0]]\n"),
        ModelErrorKind::NotDefinite,
        "observer.kalman.measurement_noise",
        &["not positive definite", "-2.0000e0"],
    );
}

#[test]
fn process_noise_must_be_positive_semidefinite() {
    // eigenvalues of [[1, 2], [2, 1]] are 3 and -1 (closed form: 1 ± 2).
    check(
        &kalman("process_noise = [[1.0, 2.0], [2.0, 1.0]]\nmeasurement_noise = [[1.0]]\n"),
        ModelErrorKind::NotDefinite,
        "observer.kalman.process_noise",
        &["not positive semidefinite", "smallest eigenvalue -1"],
    );
}

#[test]
fn noise_must_be_symmetric() {
    check(
        &kalman("process_noise = [[1.0, 0.1], [0.2, 1.0]]\nmeasurement_noise = [[1.0]]\n"),
        ModelErrorKind::NotDefinite,
        "observer.kalman.process_noise",
        &["not symmetric", "[0][1] = 0.1 but [1][0] = 0.2"],
    );
}

#[test]
fn noise_sizes() {
    check(
        &kalman("process_noise = [[1.0]]\nmeasurement_noise = [[1.0]]\n"),
        ModelErrorKind::WrongSize,
        "observer.kalman.process_noise",
        &["2 rows (one per state, n = 2 from plant.a)"],
    );
    check(
        &kalman(
            "process_noise = [[1.0, 0.0], [0.0, 1.0]]\nmeasurement_noise = [[1.0, 0.0], [0.0, 1.0]]\n",
        ),
        ModelErrorKind::WrongSize,
        "observer.kalman.measurement_noise",
        &["1 row (one per output, p = 1 from plant.c)"],
    );
    check(
        &kalman(
            "noise_input = [[0.0], [1.0]]\nprocess_noise = [[1.0, 0.0], [0.0, 1.0]]\nmeasurement_noise = [[1.0]]\n",
        ),
        ModelErrorKind::WrongSize,
        "observer.kalman.process_noise",
        &["1 row (one per noise input, q = 1 from observer.kalman.noise_input)"],
    );
    check(
        &kalman("noise_input = [[1.0]]\nprocess_noise = [[1.0]]\nmeasurement_noise = [[1.0]]\n"),
        ModelErrorKind::WrongSize,
        "observer.kalman.noise_input",
        &["2 rows (one per state"],
    );
}

#[test]
fn missing_noise_keys() {
    check(
        &kalman("measurement_noise = [[1.0]]\n"),
        ModelErrorKind::MissingKey,
        "observer.kalman.process_noise",
        &["missing"],
    );
    check(
        &kalman("process_noise = [[1.0, 0.0], [0.0, 1.0]]\n"),
        ModelErrorKind::MissingKey,
        "observer.kalman.measurement_noise",
        &["missing"],
    );
}

#[test]
fn continuous_noise_on_discrete_plant() {
    check(
        &model(
            &format!("{PLANT}domain = \"discrete\"\n"),
            "form = \"current\"\n[observer.kalman]\nprocess_noise = [[1.0, 0.0], [0.0, 1.0]]\nmeasurement_noise = [[1.0]]\n",
            "",
        ),
        ModelErrorKind::Conflict,
        "observer.kalman.noise_domain",
        &["plant.domain = \"discrete\"", "noise_domain = \"discrete\""],
    );
}

// ---- gate ----

#[test]
fn gate_values_and_exclusion() {
    check(
        &with_observer(&format!(
            "{OBSERVER}gate_probability = 0.999\ngate_threshold = 10.0\n"
        )),
        ModelErrorKind::Conflict,
        "observer.gate_threshold",
        &["not both"],
    );
    for bad in ["0.0", "1.0", "1.5"] {
        check(
            &with_observer(&format!("{OBSERVER}gate_probability = {bad}\n")),
            ModelErrorKind::OutOfRange,
            "observer.gate_probability",
            &["strictly between 0 and 1"],
        );
    }
    check(
        &with_observer(&format!("{OBSERVER}gate_threshold = -1.0\n")),
        ModelErrorKind::OutOfRange,
        "observer.gate_threshold",
        &["not positive"],
    );
}

// ---- fixed point ----

#[test]
fn ranges_must_be_positive_and_of_the_right_length() {
    check(
        &with_rest("[fixed_point]\nformat = \"q31\"\ninput_range = [0.0]\noutput_range = [1.0]\n"),
        ModelErrorKind::OutOfRange,
        "fixed_point.input_range[0]",
        &["not positive"],
    );
    check(
        &with_rest(
            "[fixed_point]\nformat = \"q31\"\ninput_range = [1.0]\noutput_range = [1.0, 2.0]\n",
        ),
        ModelErrorKind::WrongSize,
        "fixed_point.output_range",
        &["expected 1 entry (one per output, p = 1 from plant.c), found 2"],
    );
    check(
        &with_rest(&format!("{FIXED}state_range = [1.0]\n")),
        ModelErrorKind::WrongSize,
        "fixed_point.state_range",
        &["expected 2 entries (one per state, n = 2 from plant.a), found 1"],
    );
    check(
        &with_rest(&format!("{FIXED}state_range = [1.0, -3.0]\n")),
        ModelErrorKind::OutOfRange,
        "fixed_point.state_range[1]",
        &["-3 is not positive"],
    );
    check(
        &with_rest("[fixed_point]\nformat = \"q31\"\noutput_range = [1.0]\n"),
        ModelErrorKind::MissingKey,
        "fixed_point.input_range",
        &["missing"],
    );
}

#[test]
fn margin_bits_and_stability_margin() {
    check(
        &with_rest(&format!("{FIXED}margin_bits = -1\n")),
        ModelErrorKind::OutOfRange,
        "fixed_point.margin_bits",
        &["non-negative integer"],
    );
    check(
        &with_rest(&format!("{FIXED}margin_bits = 1.5\n")),
        ModelErrorKind::WrongType,
        "fixed_point.margin_bits",
        &["expected a non-negative integer, found a float"],
    );
    check(
        &with_rest(&format!("{FIXED}margin_bits = 31\n")),
        ModelErrorKind::OutOfRange,
        "fixed_point.margin_bits",
        &["no fraction bits"],
    );
    check(
        &with_rest(&format!("{FIXED}stability_margin = 1.0\n")),
        ModelErrorKind::OutOfRange,
        "fixed_point.stability_margin",
        &["outside [0, 1)"],
    );
    check(
        &with_rest(&format!("{FIXED}stability_margin = -0.1\n")),
        ModelErrorKind::OutOfRange,
        "fixed_point.stability_margin",
        &["outside [0, 1)"],
    );
}

// ---- names ----

#[test]
fn model_name_must_map_to_an_identifier() {
    for (bad, why) in [
        ("my conveyor", "' ' is not allowed"),
        ("2nd-belt", "starts with '2'"),
        ("fn", "keyword"),
        ("", "empty"),
    ] {
        check(
            &with_rest("").replace("\"conveyor\"", &format!("\"{bad}\"")),
            ModelErrorKind::BadName,
            "name",
            &["after mapping '-' to '_'", why],
        );
    }
}

#[test]
fn signal_names_must_be_distinct_identifiers() {
    check(
        &with_plant(&format!("{PLANT}state_names = [\"angle\", \"angle\"]\n")),
        ModelErrorKind::BadName,
        "plant.state_names[1]",
        &["used twice (entries 0 and 1)"],
    );
    check(
        &with_plant(&format!("{PLANT}input_names = [\"motor-current\"]\n")),
        ModelErrorKind::BadName,
        "plant.input_names[0]",
        &["not a valid identifier", "'-' is not allowed"],
    );
    check(
        &with_plant(&format!("{PLANT}output_names = [\"y\", \"z\"]\n")),
        ModelErrorKind::WrongSize,
        "plant.output_names",
        &["expected 1 entry (one per output"],
    );
    check(
        &with_plant(&format!("{PLANT}state_units = [\"rad\"]\n")),
        ModelErrorKind::WrongSize,
        "plant.state_units",
        &["expected 2 entries (one per state"],
    );
    check(
        &with_plant(&format!("{PLANT}input_units = [\"A\\nmps\"]\n")),
        ModelErrorKind::BadName,
        "plant.input_units[0]",
        &["one line"],
    );
}
