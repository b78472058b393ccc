//! Every bad-input rule of the model file, part two: gain sources, poles,
//! Kalman noise, the gate, fixed point and names (part one is
//! `model_errors.rs`). Each test checks the error's key path, its kind and
//! the words that name the problem (not the whole text).

mod model_errors_common;
use lookout_design::model::ModelErrorKind;
use model_errors_common::*;

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
