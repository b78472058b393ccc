//! Good model files parse into the matrices and choices they spell out.
//! Expected values are the numbers written in the test text itself.

use lookout_design::model::{
    DEFAULT_MARGIN_BITS, DEFAULT_STABILITY_MARGIN, Domain, FixedFormat, Form, GainMethod,
    GainSource, Gate, Model, NoiseDomain,
};
use nalgebra::{Complex, DMatrix};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngSeed};

fn parse(text: &str) -> Model {
    match Model::from_toml_str(text, "good.toml") {
        Ok(m) => m,
        Err(e) => panic!("{e}\n--- input ---\n{text}"),
    }
}

const FULL: &str = r#"
name = "two-axis"
sample_period = 2.5e-4

[plant]
a = [[0, 1, 0], [0, 0, 1], [-6, -11, -6]]
b = [[0.0, 1.0], [0.0, 0.0], [1.0, 0.5]]
c = [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0]]
d = [[0.0, 0.25], [0.0, 0.0]]
domain = "continuous"
state_names = ["pos", "vel", "acc"]
input_names = ["force", "bias"]
output_names = ["pos_meas", "vel_meas"]
state_units = ["m", "m/s", "m/s^2"]
input_units = ["N", "1"]
output_units = ["m", "m/s"]

[observer]
form = "current"
poles = [-100.0, { re = -80.0, im = -30.0 }]
gate_threshold = 13.8

[fixed_point]
format = "q15"
input_range = [10.0, 1]
output_range = [2.0, 4.0]
state_range = [2.0, 4.0, 8.0]
margin_bits = 2
stability_margin = 0.02
"#;

#[test]
fn full_model_parses_into_the_written_values() {
    let m = parse(FULL);
    assert_eq!(m.name, "two-axis");
    assert_eq!(m.identifier(), "two_axis");
    assert_eq!(m.sample_period, 2.5e-4);
    let p = &m.plant;
    assert_eq!((p.n(), p.m(), p.p()), (3, 2, 2));
    assert_eq!(
        p.a,
        DMatrix::from_row_slice(3, 3, &[0.0, 1.0, 0.0, 0.0, 0.0, 1.0, -6.0, -11.0, -6.0])
    );
    assert_eq!(
        p.b,
        DMatrix::from_row_slice(3, 2, &[0.0, 1.0, 0.0, 0.0, 1.0, 0.5])
    );
    assert_eq!(
        p.c,
        DMatrix::from_row_slice(2, 3, &[1.0, 0.0, 0.0, 0.0, 1.0, 0.0])
    );
    assert_eq!(p.d, DMatrix::from_row_slice(2, 2, &[0.0, 0.25, 0.0, 0.0]));
    assert_eq!(p.domain, Domain::Continuous);
    assert_eq!(
        p.state_names.as_deref(),
        Some(&["pos".to_string(), "vel".to_string(), "acc".to_string()][..])
    );
    assert_eq!(p.input_units.as_deref().map(<[String]>::len), Some(2));
    assert_eq!(
        p.output_names
            .as_ref()
            .and_then(|v| v.get(1))
            .map(String::as_str),
        Some("vel_meas")
    );

    assert_eq!(m.observer.form, Form::Current);
    assert_eq!(
        m.observer.gain_source,
        GainSource::Poles(vec![
            Complex::new(-100.0, 0.0),
            Complex::new(-80.0, 30.0),
            Complex::new(-80.0, -30.0),
        ])
    );
    assert_eq!(m.observer.gate, Some(Gate::Threshold(13.8)));

    let fx = m.fixed_point.as_ref().expect("fixed_point section");
    assert_eq!(fx.format, FixedFormat::Q15);
    assert_eq!(fx.format.fraction_bits(), 15);
    assert_eq!(fx.input_range, vec![10.0, 1.0]);
    assert_eq!(fx.output_range, vec![2.0, 4.0]);
    assert_eq!(fx.state_range, Some(vec![2.0, 4.0, 8.0]));
    assert_eq!(fx.margin_bits, 2);
    assert_eq!(fx.stability_margin, 0.02);
    assert!(m.warnings.is_empty(), "{:?}", m.warnings);
}

const MINIMAL: &str = r#"
name = "x"
sample_period = 0.01
[plant]
a = [[-1.0]]
b = [[1.0]]
c = [[1.0]]
[observer]
form = "predictor"
gain = [[5.0]]
[fixed_point]
format = "q31"
input_range = [1.0]
output_range = [1.0]
"#;

#[test]
fn defaults_fill_the_optional_keys() {
    let m = parse(MINIMAL);
    assert_eq!(m.plant.d, DMatrix::zeros(1, 1));
    assert_eq!(m.plant.domain, Domain::Continuous);
    assert_eq!(m.plant.state_names, None);
    assert_eq!(m.plant.output_units, None);
    assert_eq!(
        m.observer.gain_source,
        GainSource::Gain {
            l: DMatrix::from_element(1, 1, 5.0),
            method: GainMethod::Hold
        }
    );
    assert_eq!(m.observer.gate, None);
    let fx = m.fixed_point.expect("fixed_point");
    assert_eq!(fx.margin_bits, DEFAULT_MARGIN_BITS);
    assert_eq!(DEFAULT_MARGIN_BITS, 1);
    assert_eq!(fx.stability_margin, DEFAULT_STABILITY_MARGIN);
    assert_eq!(fx.state_range, None);
}

#[test]
fn pole_map_gain_method() {
    let text = MINIMAL.replace(
        "gain = [[5.0]]",
        "gain = [[5.0]]\ngain_method = \"pole-map\"",
    );
    let m = parse(&text);
    assert!(matches!(
        m.observer.gain_source,
        GainSource::Gain {
            method: GainMethod::PoleMap,
            ..
        }
    ));
}

#[test]
fn fixed_point_is_optional() {
    let text = MINIMAL.split("[fixed_point]").next().unwrap_or_default();
    assert_eq!(parse(text).fixed_point, None);
}

#[test]
fn discrete_plant_with_discrete_poles_and_discrete_noise() {
    let text = r#"
name = "sampled"
sample_period = 0.1
[plant]
domain = "discrete"
a = [[1.0, 0.1], [0.0, 1.0]]
b = [[0.005], [0.1]]
c = [[1.0, 0.0]]
[observer]
form = "current"
gate_probability = 0.99
[observer.kalman]
noise_domain = "discrete"
noise_input = [[0.005], [0.1]]
process_noise = [[0.04]]
measurement_noise = [[0.25]]
"#;
    let m = parse(text);
    assert_eq!(m.plant.domain, Domain::Discrete);
    assert_eq!(m.observer.gate, Some(Gate::Probability(0.99)));
    let GainSource::Kalman(k) = &m.observer.gain_source else {
        panic!("expected Kalman, got {:?}", m.observer.gain_source);
    };
    assert_eq!(k.noise_domain, NoiseDomain::Discrete);
    assert_eq!(k.process_noise, DMatrix::from_element(1, 1, 0.04));
    assert_eq!(k.measurement_noise, DMatrix::from_element(1, 1, 0.25));
    assert_eq!(
        k.noise_input,
        Some(DMatrix::from_row_slice(2, 1, &[0.005, 0.1]))
    );

    let z = text.replace(
        "gate_probability = 0.99\n[observer.kalman]",
        "discrete_poles = [0.0, { re = 0.5, im = 0.5 }]\n[unused]",
    );
    // The [unused] table is an unknown top-level key: typo protection.
    let e = Model::from_toml_str(&z, "z.toml").unwrap_err();
    assert_eq!(e.path(), "unused");
}

#[test]
fn discrete_poles_expand_pairs() {
    let text = MINIMAL
        .replace(
            "a = [[-1.0]]\nb = [[1.0]]\nc = [[1.0]]",
            "a = [[0.0, 1.0], [0.0, 0.0]]\nb = [[0.0], [1.0]]\nc = [[1.0, 0.0]]",
        )
        .replace(
            "gain = [[5.0]]",
            "discrete_poles = [{ re = 0.5, im = 0.25 }]",
        )
        .split("[fixed_point]")
        .next()
        .unwrap_or_default()
        .to_string();
    let m = parse(&text);
    assert_eq!(
        m.observer.gain_source,
        GainSource::DiscretePoles(vec![Complex::new(0.5, 0.25), Complex::new(0.5, -0.25)])
    );
}

#[test]
fn zero_pole_in_z_plane_is_allowed() {
    // Dead-beat: z = 0 is inside the unit circle.
    let text = MINIMAL.replace("gain = [[5.0]]", "discrete_poles = [0]");
    let m = parse(&text);
    assert_eq!(
        m.observer.gain_source,
        GainSource::DiscretePoles(vec![Complex::new(0.0, 0.0)])
    );
}

#[test]
fn integers_underscores_and_hex_are_numbers() {
    let text = MINIMAL
        .replace("a = [[-1.0]]", "a = [[-1_000]]")
        .replace("b = [[1.0]]", "b = [[0x10]]");
    let m = parse(&text);
    assert_eq!(m.plant.a, DMatrix::from_element(1, 1, -1000.0));
    assert_eq!(m.plant.b, DMatrix::from_element(1, 1, 16.0));
}

#[test]
fn nearly_symmetric_noise_is_accepted_and_symmetrised() {
    // Off-diagonal entries differ by 1e-12, below 1e-9 x max|entry| = 1e-9.
    let text = r#"
name = "n"
sample_period = 0.001
[plant]
a = [[0.0, 1.0], [0.0, 0.0]]
b = [[0.0], [1.0]]
c = [[1.0, 0.0]]
[observer]
form = "current"
[observer.kalman]
process_noise = [[1.0, 0.5], [0.500000000001, 1.0]]
measurement_noise = [[1.0]]
"#;
    let m = parse(text);
    let GainSource::Kalman(k) = &m.observer.gain_source else {
        panic!("expected Kalman");
    };
    assert_eq!(k.process_noise[(0, 1)], k.process_noise[(1, 0)]);
    assert!((k.process_noise[(0, 1)] - 0.5).abs() <= 1e-12);
}

#[test]
fn singular_process_noise_is_semidefinite() {
    // [[1, 1], [1, 1]] has eigenvalues 2 and 0 (closed form): PSD, not PD.
    let text = r#"
name = "n"
sample_period = 0.001
[plant]
a = [[0.0, 1.0], [0.0, 0.0]]
b = [[0.0], [1.0]]
c = [[1.0, 0.0]]
[observer]
form = "predictor"
[observer.kalman]
process_noise = [[1.0, 1.0], [1.0, 1.0]]
measurement_noise = [[1.0]]
"#;
    let m = parse(text);
    assert!(matches!(m.observer.gain_source, GainSource::Kalman(_)));
    let zero = text.replace("[[1.0, 1.0], [1.0, 1.0]]", "[[0.0, 0.0], [0.0, 0.0]]");
    let m = parse(&zero);
    assert_eq!(m.warnings.len(), 1, "{:?}", m.warnings);
    assert_eq!(m.warnings[0].path, "observer.kalman.process_noise");
}

#[test]
fn poles_above_nyquist_warn() {
    // pi / T = 3141.6 rad/s at T = 1 ms; Im = 4000 is above it.
    let text = MINIMAL
        .replace("sample_period = 0.01", "sample_period = 0.001")
        .replace(
            "a = [[-1.0]]\nb = [[1.0]]\nc = [[1.0]]",
            "a = [[0.0, 1.0], [0.0, 0.0]]\nb = [[0.0], [1.0]]\nc = [[1.0, 0.0]]",
        )
        .replace("gain = [[5.0]]", "poles = [{ re = -100.0, im = 4000.0 }]")
        .split("[fixed_point]")
        .next()
        .unwrap_or_default()
        .to_string();
    let m = parse(&text);
    assert_eq!(m.warnings.len(), 1, "{:?}", m.warnings);
    assert_eq!(m.warnings[0].path, "observer.poles[0]");
    assert!(m.warnings[0].message.contains("Nyquist"));
}

#[test]
fn load_reads_a_file_and_names_it() {
    let dir = std::env::temp_dir().join(format!("lookout-model-test-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let good = dir.join("good.toml");
    std::fs::write(&good, MINIMAL).expect("write");
    assert_eq!(Model::load(&good).expect("loads"), parse(MINIMAL));
    let bad = dir.join("bad.toml");
    std::fs::write(
        &bad,
        MINIMAL.replace("form = \"predictor\"", "form = \"x\""),
    )
    .expect("write");
    let e = Model::load(&bad).unwrap_err();
    assert!(
        e.to_string().starts_with("bad.toml: observer.form: "),
        "{e}"
    );
    assert_eq!(e.location().map(|l| l.line), Some(9));
    std::fs::remove_dir_all(&dir).ok();
}

/// Writes a pole list: each entry is (re, im) with im = 0 meaning a real pole.
fn pole_list(entries: &[(f64, f64)]) -> String {
    let items: Vec<String> = entries
        .iter()
        .map(|&(re, im)| {
            if im == 0.0 {
                format!("{re:?}")
            } else {
                format!("{{ re = {re:?}, im = {im:?} }}")
            }
        })
        .collect();
    format!("[{}]", items.join(", "))
}

/// An n-state chain of integrators, so any n poles are a valid request.
fn chain_model(n: usize, poles: &str) -> String {
    let rows: Vec<String> = (0..n)
        .map(|i| {
            let row: Vec<&str> = (0..n)
                .map(|j| if j == i + 1 { "1.0" } else { "0.0" })
                .collect();
            format!("[{}]", row.join(", "))
        })
        .collect();
    let b: Vec<&str> = (0..n)
        .map(|i| if i + 1 == n { "[1.0]" } else { "[0.0]" })
        .collect();
    let c: Vec<&str> = (0..n).map(|j| if j == 0 { "1.0" } else { "0.0" }).collect();
    format!(
        "name = \"chain\"\nsample_period = 0.001\n[plant]\na = [{}]\nb = [{}]\nc = [[{}]]\n\
         [observer]\nform = \"predictor\"\npoles = {poles}\n",
        rows.join(", "),
        b.join(", "),
        c.join(", ")
    )
}

fn entry() -> impl Strategy<Value = (f64, f64)> {
    // Stable s-plane poles, below the Nyquist frequency of T = 1 ms; im = 0 is a real pole.
    (
        -1000.0..-0.001f64,
        prop_oneof![Just(0.0), -3000.0..-0.001f64, 0.001..3000.0f64],
    )
}

proptest! {
    #![proptest_config(Config { cases: 64, rng_seed: RngSeed::Fixed(0x0100_c0a7), ..Config::default() })]

    /// Every written entry comes back in order, a complex one as its
    /// conjugate pair with the positive imaginary part first, bit for bit
    /// (`{:?}` prints floats so that they round-trip exactly).
    #[test]
    fn complex_entries_expand_to_conjugate_pairs(entries in prop::collection::vec(entry(), 1..5)) {
        let n: usize = entries.iter().map(|&(_, im)| if im == 0.0 { 1 } else { 2 }).sum();
        let m = parse(&chain_model(n, &pole_list(&entries)));
        let mut expected = Vec::new();
        for &(re, im) in &entries {
            if im == 0.0 {
                expected.push(Complex::new(re, 0.0));
            } else {
                expected.push(Complex::new(re, im.abs()));
                expected.push(Complex::new(re, -im.abs()));
            }
        }
        prop_assert_eq!(m.observer.gain_source, GainSource::Poles(expected));
        prop_assert!(m.warnings.is_empty());
    }
}

/// The schema example in the `model` module docs is itself a valid model
/// (the docs cannot drift from the parser).
#[test]
fn schema_example_in_the_module_docs_parses() {
    let source = include_str!("../src/model/mod.rs");
    let example: String = source
        .lines()
        .skip_while(|line| line.trim() != "//! ```toml")
        .skip(1)
        .take_while(|line| line.trim() != "//! ```")
        .map(|line| {
            line.strip_prefix("//!")
                .unwrap_or(line)
                .trim_start_matches(' ')
        })
        .map(|line| format!("{line}\n"))
        .collect();
    assert!(example.contains("[plant]"), "example not found");
    let m = parse(&example);
    assert_eq!(m.name, "conveyor");
    assert_eq!(
        m.observer.gain_source,
        GainSource::Poles(vec![Complex::new(-60.0, 30.0), Complex::new(-60.0, -30.0)])
    );
}
