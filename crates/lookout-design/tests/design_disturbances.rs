//! Disturbance and bias states (issue 9): the augmented model against the
//! closed-form zero-order hold, the refusal of disturbances that cannot be
//! told apart (with the null direction in closed form), the model-file
//! checks, and the Kalman design's disturbance noise.

use lookout_design::design_text;
use lookout_design::model::{Model, ModelErrorKind};
use nalgebra::Complex;

/// A first-order lag ẋ = −α x + β u (a heater's temperature above ambient,
/// invented numbers), with disturbance sections appended by each test.
fn lag(extra: &str, observer: &str) -> String {
    format!(
        r#"name = "heater"
sample_period = 0.1

[plant]
a = [[-2.0]]
b = [[0.5]]
c = [[1.0]]
state_names = ["temperature"]

{extra}

[observer]
form = "predictor"
{observer}
"#
    )
}

const ALPHA: f64 = 2.0;
const BETA: f64 = 0.5;
const T: f64 = 0.1;

/// `(1 − e^{−αT}) / α` without cancellation (expm1).
fn rise() -> f64 {
    -(-ALPHA * T).exp_m1() / ALPHA
}

fn rel_close(got: f64, want: f64, rel: f64) -> bool {
    (got - want).abs() <= rel * want.abs().max(f64::MIN_POSITIVE)
}

/// A constant disturbance on the input is held like the input itself: the
/// sampled augmented model is [[e^{−αT}, β(1 − e^{−αT})/α], [0, 1]] (closed
/// form of the hold of a scalar lag). Tolerance 64 ε relative: the hold is
/// a scaled Padé exponential, accurate to a few ε on this 2 × 2 system.
#[test]
fn constant_input_disturbance_is_held_like_its_input() {
    let d = design_text(
        &lag(
            "[[disturbances.input]]\nname = \"heat_loss\"\ninput = 0",
            "poles = [-5.0, -4.0]",
        ),
        "heater.toml",
    )
    .unwrap();
    let tol = 64.0 * f64::EPSILON;
    let want = [[(-ALPHA * T).exp(), BETA * rise()], [0.0, 1.0]];
    for (i, row) in want.iter().enumerate() {
        for (j, w) in row.iter().enumerate() {
            let got = d.ad[(i, j)];
            assert!(
                (got - w).abs() <= tol * w.abs().max(1.0),
                "Ad[{i}][{j}] {got} vs {w}"
            );
        }
    }
    assert!(rel_close(d.bd[(0, 0)], BETA * rise(), tol));
    assert_eq!(d.bd[(1, 0)], 0.0);
    assert_eq!(d.state_names(), ["temperature", "heat_loss"]);
}

/// An explicit column c gives the sampled column c (1 − e^{−αT})/α.
#[test]
fn explicit_column_is_held_in_closed_form() {
    let d = design_text(
        &lag(
            "[[disturbances.input]]\nname = \"draught\"\ncolumn = [-3.0]",
            "discrete_poles = [0.5, 0.6]",
        ),
        "heater.toml",
    )
    .unwrap();
    assert!(rel_close(d.ad[(0, 1)], -3.0 * rise(), 64.0 * f64::EPSILON));
}

/// A ramp adds d and its rate r: exp([[−α, 1, 0], [0, 0, 1], [0, 0, 0]] T)
/// = [[e^{−αT}, (1 − e^{−αT})/α, T/α − (1 − e^{−αT})/α²], [0, 1, T], [0, 0, 1]]
/// (closed form of the exponential of this triangular matrix). The corner
/// entry subtracts 0.05 − 0.0453: one digit lost, so 1e-13 relative there.
#[test]
fn ramp_disturbance_is_held_in_closed_form() {
    let d = design_text(
        &lag(
            "[[disturbances.input]]\nname = \"drift\"\ncolumn = [1.0]\nshape = \"ramp\"",
            "poles = [-5.0, -4.0, -3.0]",
        ),
        "heater.toml",
    )
    .unwrap();
    let want = [
        [(-ALPHA * T).exp(), rise(), T / ALPHA - rise() / ALPHA],
        [0.0, 1.0, T],
        [0.0, 0.0, 1.0],
    ];
    for (i, row) in want.iter().enumerate() {
        for (j, w) in row.iter().enumerate() {
            let got = d.ad[(i, j)];
            assert!(
                (got - w).abs() <= 1e-13 * w.abs().max(1.0),
                "Ad[{i}][{j}] {got} vs {w}"
            );
        }
    }
    assert_eq!(d.state_names(), ["temperature", "drift", "drift_rate"]);
    assert_eq!(d.n(), 3);
}

/// A discrete plant is augmented in discrete time: [[A, E], [0, J]] with
/// J = [[1, T], [0, 1]] for a ramp, exactly (no arithmetic involved).
#[test]
fn discrete_plant_is_augmented_in_discrete_time() {
    let text = r#"name = "lag_z"
sample_period = 0.1

[plant]
domain = "discrete"
a = [[0.8]]
b = [[0.2]]
c = [[1.0]]

[[disturbances.input]]
name = "drift"
input = 0
shape = "ramp"

[observer]
form = "predictor"
discrete_poles = [0.5, 0.4, 0.3]
"#;
    let d = design_text(text, "lag_z.toml").unwrap();
    let want = [[0.8, 0.2, 0.0], [0.0, 1.0, 0.1], [0.0, 0.0, 1.0]];
    for (i, row) in want.iter().enumerate() {
        for (j, w) in row.iter().enumerate() {
            assert_eq!(d.ad[(i, j)], *w, "Ad[{i}][{j}]");
        }
    }
    assert_eq!(d.state_names(), ["x0", "drift", "drift_rate"]);
}

/// An output bias adds a unit column to C and a constant state.
#[test]
fn output_bias_adds_a_unit_column_to_c() {
    // A lag has no integrator, so a bias alone is observable (PBH at z = 1:
    // [1 − e^{−αT}, 0; 0, 0; 1, 1] has full column rank).
    let d = design_text(
        &lag(
            "[[disturbances.output_bias]]\nname = \"sensor_offset\"\noutput = 0",
            "poles = [-5.0, -4.0]",
        ),
        "heater.toml",
    )
    .unwrap();
    assert_eq!((d.cd[(0, 0)], d.cd[(0, 1)]), (1.0, 1.0));
    assert_eq!((d.ad[(1, 0)], d.ad[(1, 1)]), (0.0, 1.0));
}

/// Input disturbance and output bias on a lag: at DC, x = β d / α and the
/// bias b = −x leave y unchanged for every d, so the null direction of the
/// augmented PBH matrix is (x, d, b) ∝ (β/α, 1, −β/α) = (0.25, 1, −0.25)
/// (closed form). The design must be refused naming both.
#[test]
fn disturbance_and_bias_that_cancel_are_refused_by_name() {
    let text = lag(
        "[[disturbances.input]]\nname = \"heat_loss\"\ninput = 0\n\n\
         [[disturbances.output_bias]]\nname = \"sensor_offset\"\noutput = 0",
        "poles = [-5.0, -4.0, -3.0]",
    );
    let err = design_text(&text, "heater.toml").unwrap_err().to_string();
    assert!(
        err.starts_with(
            "heater.toml: disturbances: input disturbance `heat_loss` cannot be told apart \
             from output bias `sensor_offset` and plant state `temperature`"
        ),
        "{err}"
    );
    // The printed direction, normalised to its largest share (sign free).
    for share in ["temperature ", "heat_loss ", "sensor_offset "] {
        assert!(err.contains(share), "{err}");
    }
    assert!(err.contains("0.2500") && err.contains("1.0000"), "{err}");
}

/// A bias on the encoder of a motor: the angle is an integrator, so a
/// constant angle offset and the bias cancel, (angle, b) ∝ (1, −1).
#[test]
fn bias_on_a_measured_integrator_is_refused_by_name() {
    let text = std::fs::read_to_string("../../examples/conveyor_load.toml")
        .unwrap()
        .replace(
            "[observer]",
            "[[disturbances.output_bias]]\nname = \"encoder_offset\"\noutput = 0\n\n[observer]",
        )
        .replace("-40.0]", "-40.0, -30.0]");
    let err = design_text(&text, "conveyor_load.toml")
        .unwrap_err()
        .to_string();
    assert!(
        err.contains(
            "disturbances: output bias `encoder_offset` cannot be told apart from plant state `angle`"
        ),
        "{err}"
    );
    assert!(!err.contains("load_torque"), "{err}");
}

/// The demo: three poles placed for the augmented model, met as exp(s T).
#[test]
fn demo_places_the_augmented_poles() {
    let text = std::fs::read_to_string("../../examples/conveyor_load.toml").unwrap();
    let d = design_text(&text, "conveyor_load.toml").unwrap();
    assert_eq!(d.state_names(), ["angle", "speed", "load_torque"]);
    assert!(d.warnings.is_empty(), "{:?}", d.warnings);
    let want = [
        Complex::new(-70.0, 40.0),
        Complex::new(-70.0, -40.0),
        Complex::new(-40.0, 0.0),
    ];
    for s in want {
        let z = (s * 0.001).exp();
        assert!(
            d.error_poles.iter().any(|p| (p - z).norm() <= 1e-9),
            "{z} not in {:?}",
            d.error_poles
        );
    }
}

/// With disturbances the pole list covers n + n_d states, and says so.
#[test]
fn pole_count_counts_the_disturbance_states() {
    let err = Model::from_toml_str(
        &lag(
            "[[disturbances.input]]\nname = \"heat_loss\"\ninput = 0",
            "poles = [-5.0]",
        ),
        "heater.toml",
    )
    .unwrap_err();
    assert_eq!(err.kind(), ModelErrorKind::PoleCount);
    assert!(
        err.to_string().contains(
            "observer.poles: expected 2 poles (one per estimated state, \
             n + n_d = 2 from plant.a and [disturbances]), found 1"
        ),
        "{err}"
    );
}

/// Each refusal of the reader names the key and the reason.
#[test]
fn disturbance_keys_are_checked() {
    let cases: &[(&str, &str, ModelErrorKind, &str)] = &[
        (
            "[[disturbances.input]]\nname = \"heat_loss\"\ninput = 1",
            "disturbances.input[0].input",
            ModelErrorKind::OutOfRange,
            "1 is not an input index: m = 1 from plant.b",
        ),
        (
            "[[disturbances.output_bias]]\nname = \"Temperature\"\noutput = 0",
            "disturbances.output_bias[0].name",
            ModelErrorKind::BadName,
            "clashes with plant state `temperature`",
        ),
        (
            "[[disturbances.input]]\nname = \"heat_loss\"\ninput = 0\ncolumn = [1.0]",
            "disturbances.input[0].column",
            ModelErrorKind::Conflict,
            "not both",
        ),
        (
            "[[disturbances.input]]\nname = \"heat_loss\"",
            "disturbances.input[0]",
            ModelErrorKind::MissingKey,
            "say where the disturbance enters",
        ),
        (
            "[[disturbances.input]]\nname = \"heat_loss\"\ncolumn = [1.0, 2.0]",
            "disturbances.input[0].column",
            ModelErrorKind::WrongSize,
            "expected 1 entry (one per state, n = 1 from plant.a), found 2",
        ),
        (
            "[[disturbances.input]]\nname = \"heat_loss\"\ninput = 0\nshape = \"step\"",
            "disturbances.input[0].shape",
            ModelErrorKind::UnknownChoice,
            "expected one of \"constant\", \"ramp\"",
        ),
        (
            "[[disturbances.input]]\nname = \"fn\"\ninput = 0",
            "disturbances.input[0].name",
            ModelErrorKind::BadName,
            "is a Rust keyword",
        ),
        (
            "[[disturbances.input]]\nname = \"a\"\ninput = 0\nshape = \"ramp\"\n\n\
             [[disturbances.output_bias]]\nname = \"a_rate\"\noutput = 0",
            "disturbances.output_bias[0].name",
            ModelErrorKind::BadName,
            "clashes with disturbance state `a_rate`",
        ),
        (
            "[[disturbances.input]]\nname = \"heat_loss\"\nimput = 0",
            "disturbances.input[0].imput",
            ModelErrorKind::UnknownKey,
            "did you mean `input`?",
        ),
    ];
    for (section, path, kind, message) in cases {
        let err =
            Model::from_toml_str(&lag(section, "poles = [-5.0, -4.0]"), "heater.toml").unwrap_err();
        assert_eq!(err.path(), *path, "{err}");
        assert_eq!(err.kind(), *kind, "{err}");
        assert!(err.message().contains(message), "{err}");
    }
}

const KALMAN: &str = "[observer.kalman]\nprocess_noise = [[0.01]]\nmeasurement_noise = [[0.0004]]";

/// A Kalman design needs a noise level on every disturbance.
#[test]
fn kalman_design_needs_the_disturbance_noise() {
    let err = Model::from_toml_str(
        &lag(
            "[[disturbances.input]]\nname = \"heat_loss\"\ninput = 0",
            KALMAN,
        ),
        "heater.toml",
    )
    .unwrap_err();
    assert_eq!(err.path(), "disturbances.input[0].noise");
    assert_eq!(err.kind(), ModelErrorKind::MissingKey);
    // ... and warns that it is ignored elsewhere.
    let model = Model::from_toml_str(
        &lag(
            "[[disturbances.input]]\nname = \"heat_loss\"\ninput = 0\nnoise = 1.0",
            "poles = [-5.0, -4.0]",
        ),
        "heater.toml",
    )
    .unwrap();
    assert_eq!(model.warnings.len(), 1);
    assert_eq!(model.warnings[0].path, "disturbances.input[0].noise");
}

/// The disturbance is a Wiener process, ḋ = w with E[w w] = q δ: its
/// variance grows by q T per sample, so Qd[d, d] = q T (closed form; the
/// Van Loan exponential reproduces it to a few ε). The gain converges.
#[test]
fn kalman_disturbance_noise_enters_block_diagonally() {
    let q = 0.25;
    let d = design_text(
        &lag(
            &format!("[[disturbances.input]]\nname = \"heat_loss\"\ninput = 0\nnoise = {q}"),
            KALMAN,
        ),
        "heater.toml",
    )
    .unwrap();
    let kalman = d.kalman.as_ref().unwrap();
    let qd = &kalman.process_noise;
    assert!(
        rel_close(qd[(1, 1)], q * T, 64.0 * f64::EPSILON),
        "{}",
        qd[(1, 1)]
    );
    assert!(d.spectral_radius < 1.0);
    assert!(kalman.residual < 1e-10, "{}", kalman.residual);
}

/// The example in the `[disturbances]` reader's docs is valid (the docs
/// cannot drift from the parser): read on the conveyor plant.
#[test]
fn documented_example_parses() {
    let source = include_str!("../src/model/disturbances.rs");
    let example: String = source
        .lines()
        .skip_while(|line| line.trim() != "//! ```toml")
        .skip(1)
        .take_while(|line| line.trim() != "//! ```")
        .map(|line| {
            let line = line.strip_prefix("//!").unwrap_or(line);
            format!("{}\n", line.strip_prefix(' ').unwrap_or(line))
        })
        .collect();
    assert!(
        example.contains("[[disturbances.input]]"),
        "example not found"
    );
    let plant = std::fs::read_to_string("../../examples/conveyor.toml").unwrap();
    let (head, _) = plant.split_once("[observer]").unwrap();
    let text = format!(
        "{head}\n{example}\n[observer]\nform = \"predictor\"\n\
         poles = [{{ re = -70.0, im = 40.0 }}, -40.0, -30.0]\n"
    );
    let model = Model::from_toml_str(&text, "doc.toml").unwrap();
    assert_eq!(
        model.state_names(),
        ["angle", "speed", "load_torque", "encoder_offset"]
    );
}

/// Issue 13: disturbance states carry units for reports: the `unit` key,
/// else the unit of the input a disturbance adds to (or of the biased
/// output), a ramp's rate per second, and "" where nothing says.
#[test]
fn disturbance_states_carry_units() {
    let text = lag(
        "state_units = [\"K\"]\ninput_units = [\"W\"]\n\n\
         [[disturbances.input]]\nname = \"draught\"\ninput = 0\nshape = \"ramp\"\n\n\
         [[disturbances.input]]\nname = \"sun\"\ncolumn = [0.1]\nunit = \"W/m2\"\n",
        "poles = [-5.0, -4.0, -3.0, -6.0]",
    );
    let model = Model::from_toml_str(&text, "heater.toml").unwrap();
    assert_eq!(model.state_units(), ["K", "W", "W/s", "W/m2"]);
    let no_unit = text.replace("unit = \"W/m2\"\n", "");
    let model = Model::from_toml_str(&no_unit, "heater.toml").unwrap();
    assert_eq!(model.state_units(), ["K", "W", "W/s", ""]);
}
