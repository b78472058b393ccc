//! The demo model files parse, and their matrices are the closed forms of the
//! physical parameters written in their comments.

use std::f64::consts::PI;
use std::path::PathBuf;

use lookout_design::model::{Form, GainSource, Gate, Model, NoiseDomain};
use nalgebra::Complex;

fn example(name: &str) -> Model {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("../../examples")
        .join(name);
    match Model::load(&path) {
        Ok(m) => m,
        Err(e) => panic!("{e}"),
    }
}

/// The parameters stated in the comments of examples/conveyor.toml.
struct Conveyor {
    inertia: f64,
    friction: f64,
    torque_constant: f64,
}

fn conveyor_parameters() -> Conveyor {
    let (j_m, j_g, j_d, mass, radius, ratio) = (2.0e-5, 1.0e-5, 0.01, 20.0, 0.05, 10.0_f64);
    let (b_m, b_d, k_t) = (1.0e-4, 0.5, 0.05);
    Conveyor {
        inertia: j_m + j_g + (j_d + mass * radius * radius) / (ratio * ratio),
        friction: b_m + b_d / (ratio * ratio),
        torque_constant: k_t,
    }
}

/// |x − y| within k ε |y|; the files print the closed forms to 16 significant
/// digits and the sums above round a few times, so k = 8.
#[track_caller]
fn close(x: f64, y: f64) {
    assert!((x - y).abs() <= 8.0 * f64::EPSILON * y.abs(), "{x} vs {y}");
}

fn check_conveyor_plant(m: &Model) {
    let q = conveyor_parameters();
    let p = &m.plant;
    assert_eq!((p.n(), p.m(), p.p()), (2, 1, 1));
    assert_eq!(p.a[(0, 0)], 0.0);
    assert_eq!(p.a[(0, 1)], 1.0);
    assert_eq!(p.a[(1, 0)], 0.0);
    close(p.a[(1, 1)], -q.friction / q.inertia);
    assert_eq!(p.b[(0, 0)], 0.0);
    close(p.b[(1, 0)], q.torque_constant / q.inertia);
    assert_eq!(p.c.as_slice(), &[1.0, 0.0]);
    assert_eq!(m.sample_period, 0.001);
    assert_eq!(
        p.state_names.as_deref(),
        Some(&["angle".to_string(), "speed".to_string()][..])
    );
    assert!(p.state_units.is_some() && p.input_units.is_some() && p.output_units.is_some());
}

#[test]
fn conveyor_parses_with_the_stated_physics() {
    let m = example("conveyor.toml");
    assert_eq!(m.name, "conveyor");
    check_conveyor_plant(&m);
    assert_eq!(m.observer.form, Form::Predictor);
    assert_eq!(
        m.observer.gain_source,
        GainSource::Poles(vec![Complex::new(-70.0, 40.0), Complex::new(-70.0, -40.0)])
    );
    assert!(m.warnings.is_empty(), "{:?}", m.warnings);
    let fx = m
        .fixed_point
        .expect("conveyor.toml has a [fixed_point] section");
    assert_eq!(fx.input_range.len(), 1);
    // State scales come from the proven peaks, not an override.
    assert_eq!(fx.state_range, None);
}

#[test]
fn conveyor_kalman_parses_with_the_stated_noise() {
    let m = example("conveyor_kalman.toml");
    assert_eq!(m.identifier(), "conveyor_kalman");
    check_conveyor_plant(&m);
    assert_eq!(m.observer.form, Form::Current);
    assert_eq!(m.observer.gate, Some(Gate::Probability(0.999)));
    let GainSource::Kalman(k) = &m.observer.gain_source else {
        panic!("expected a Kalman design, got {:?}", m.observer.gain_source);
    };
    assert_eq!(k.noise_domain, NoiseDomain::Continuous);
    // Uniform quantisation of a 4096-count encoder: variance q^2/12, q = 2 pi / 4096.
    let step = 2.0 * PI / 4096.0;
    close(k.measurement_noise[(0, 0)], step * step / 12.0);
    // Torque noise enters through 1/J; density 0.02^2 / (2 * 50) (N m)^2 s.
    let g = k.noise_input.as_ref().expect("noise_input");
    assert_eq!(g[(0, 0)], 0.0);
    close(g[(1, 0)], 1.0 / conveyor_parameters().inertia);
    close(k.process_noise[(0, 0)], 0.02 * 0.02 / 100.0);
    assert!(m.warnings.is_empty(), "{:?}", m.warnings);
}
