//! The whole design pipeline on small models whose results are known in
//! closed form.

use lookout_design::design_text;
use nalgebra::Complex;

const AXIS: &str = r#"name = "axis"
sample_period = 0.001

[plant]
a = [[0.0, 1.0], [0.0, -8.0]]
b = [[0.0], [80.0]]
c = [[1.0, 0.0]]

[observer]
form = "predictor"
poles = [{ re = -70.0, im = 40.0 }]
"#;

fn close(a: Complex<f64>, b: Complex<f64>, rel: f64) -> bool {
    (a - b).norm() <= rel * b.norm().max(1e-300)
}

/// Every requested pole appears among `got` (a matching, not a sort).
fn same_poles(got: &[Complex<f64>], want: &[Complex<f64>], rel: f64) -> bool {
    let mut left: Vec<Complex<f64>> = got.to_vec();
    want.iter()
        .all(|w| match left.iter().position(|g| close(*g, *w, rel)) {
            Some(i) => {
                left.swap_remove(i);
                true
            }
            None => false,
        })
}

/// s-plane poles map to z = exp(s T) (definition of the mapping), in both
/// forms; for the current form the poles are those of Ad (I − K Cd) and of
/// (I − K Cd) Ad.
#[test]
fn placed_poles_are_exp_s_t_in_both_forms() {
    let t = 0.001;
    let want: Vec<Complex<f64>> = [Complex::new(-70.0, 40.0), Complex::new(-70.0, -40.0)]
        .iter()
        .map(|s| (s * t).exp())
        .collect();
    for form in ["predictor", "current"] {
        let d = design_text(
            &AXIS.replace("\"predictor\"", &format!("\"{form}\"")),
            "axis.toml",
        )
        .unwrap();
        assert!(
            same_poles(&d.error_poles, &want, 1e-9),
            "{form}: {:?}",
            d.error_poles
        );
        if form == "current" {
            let k = d.gain.clone().unwrap();
            let i_kc = nalgebra::DMatrix::identity(2, 2) - &k * &d.cd;
            let filtered =
                lookout_design::numerics::eigenvalues("(I − K C) A", &(&i_kc * &d.ad)).unwrap();
            assert!(same_poles(&filtered, &want, 1e-9));
            // h = Ad K for the current form.
            assert!((&d.ad * &k - &d.h).norm() < 1e-12);
        }
    }
}

/// Deadbeat observer of the sampled double integrator x⁺ = [[1, T], [0, 1]] x
/// with position measured: det(zI − A + L C) = z² forces L = [2, 1/T]
/// (closed form, common practice).
#[test]
fn deadbeat_gain_of_the_double_integrator() {
    let model = r#"name = "cart"
sample_period = 0.1
[plant]
domain = "discrete"
a = [[1.0, 0.1], [0.0, 1.0]]
b = [[0.005], [0.1]]
c = [[1.0, 0.0]]
[observer]
form = "predictor"
discrete_poles = [0.0, 0.0]
"#;
    let d = design_text(model, "cart.toml").unwrap();
    let l = d.gain.as_ref().unwrap();
    assert!(
        (l[(0, 0)] - 2.0).abs() < 1e-9 && (l[(1, 0)] - 10.0).abs() < 1e-8,
        "{l}"
    );
    // The repeated pole is placed through the characteristic polynomial, and
    // the design says how sensitive it is.
    assert!(
        d.warnings
            .iter()
            .any(|w| w.message.contains("requested 2 times"))
    );
    // Distinct poles near zero give the gain of det(zI − A + LC) = (z − a)(z − b):
    // l1 = 2 − (a + b), l2 = (ab − 1 + l1) / T.
    let d = design_text(&model.replace("[0.0, 0.0]", "[0.1, 0.2]"), "cart.toml").unwrap();
    let l = d.gain.unwrap();
    let l1 = 2.0 - 0.3;
    let l2 = (0.02 - 1.0 + l1) / 0.1;
    assert!(
        (l[(0, 0)] - l1).abs() < 1e-9 && (l[(1, 0)] - l2).abs() < 1e-8,
        "{l}"
    );
}

/// `gain_method = "pole-map"` places exp(eig(A − L C) T); `"hold"` gives
/// F = exp((A − L C) T), whose eigenvalues are the same exponentials (closed
/// form of the matrix exponential's spectrum), and reports a non-zero
/// mismatch because the held observer is not an exact sampled observer.
#[test]
fn continuous_gain_by_pole_map_and_hold() {
    let gain = AXIS.replace(
        "poles = [{ re = -70.0, im = 40.0 }]",
        "gain = [[132.0], [5400.0]]",
    );
    // A − L C = [[−132, 1], [−5400, −8]]: s² + 140 s + 6456 = 0, s = −70 ± 40.2…i.
    let disc = (140.0_f64 * 140.0 - 4.0 * 6456.0).abs().sqrt() / 2.0;
    let t = 0.001;
    let want: Vec<Complex<f64>> = [Complex::new(-70.0, disc), Complex::new(-70.0, -disc)]
        .iter()
        .map(|s| (s * t).exp())
        .collect();
    for method in ["pole-map", "hold"] {
        let text = gain.replace(
            "gain = [[132.0], [5400.0]]",
            &format!("gain = [[132.0], [5400.0]]\ngain_method = \"{method}\""),
        );
        let d = design_text(&text, "axis.toml").unwrap();
        assert!(
            same_poles(&d.error_poles, &want, 1e-9),
            "{method}: {:?}",
            d.error_poles
        );
        assert_eq!(d.gain.is_none(), method == "hold");
        assert_eq!(d.hold_mismatch.is_some(), method == "hold");
    }
}

/// Scalar steady-state Kalman filter, x⁺ = a x + w, y = x + v, var w = q,
/// var v = r: the a-priori variance solves P = a²P − a²P²/(P + r) + q, i.e.
/// P² + (r(1 − a²) − q) P − q r = 0 (closed form), K = P / (P + r).
#[test]
fn scalar_kalman_gain_matches_the_closed_form() {
    let (a, q, r) = (0.95_f64, 0.04_f64, 0.25_f64);
    let model = format!(
        r#"name = "level"
sample_period = 1.0
[plant]
domain = "discrete"
a = [[{a}]]
b = [[1.0]]
c = [[1.0]]
[observer]
form = "current"
gate_probability = 0.999
[observer.kalman]
process_noise = [[{q}]]
measurement_noise = [[{r}]]
noise_domain = "discrete"
"#
    );
    let d = design_text(&model, "level.toml").unwrap();
    let bq = r * (1.0 - a * a) - q;
    let p = (-bq + (bq * bq + 4.0 * q * r).sqrt()) / 2.0;
    let k = p / (p + r);
    let kal = d.kalman.as_ref().unwrap();
    assert!((kal.p[(0, 0)] - p).abs() < 1e-12 * p);
    assert!((d.gain.as_ref().unwrap()[(0, 0)] - k).abs() < 1e-12);
    assert!((d.h[(0, 0)] - a * k).abs() < 1e-12);
    assert!((d.error_poles[0].re - a * (1.0 - k)).abs() < 1e-12);
    // Gate: χ²₁ at 0.999 is 10.828 (NIST/SEMATECH table, from memory).
    let gate = d.gate.as_ref().unwrap();
    assert!((gate.limit - 10.828).abs() < 5e-4);
    assert!((gate.s_inv[(0, 0)] - 1.0 / (p + r)).abs() < 1e-12);
}

#[test]
fn demo_models_design_without_warnings() {
    for file in ["conveyor.toml", "conveyor_kalman.toml"] {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../../examples")
            .join(file);
        let d = lookout_design::design_file(&path).unwrap();
        assert!(d.warnings.is_empty(), "{file}: {:?}", d.warnings);
        assert!(d.spectral_radius < 0.95);
    }
}

/// Deadbeat of the sampled triple integrator (position measured): the
/// error matrix must be nilpotent, (A − L c)³ = 0 (closed-form property of
/// a deadbeat observer: all eigenvalues at 0).
#[test]
fn deadbeat_triple_integrator_is_nilpotent() {
    let model = r#"name = "jerk"
sample_period = 0.1
[plant]
domain = "discrete"
a = [[1.0, 0.1, 0.005], [0.0, 1.0, 0.1], [0.0, 0.0, 1.0]]
b = [[0.0], [0.0], [0.1]]
c = [[1.0, 0.0, 0.0]]
[observer]
form = "predictor"
discrete_poles = [0.0, 0.0, 0.0]
"#;
    let d = design_text(model, "jerk.toml").unwrap();
    let cube = &d.f * &d.f * &d.f;
    assert!(cube.amax() < 1e-9 * d.f.amax().powi(3), "{cube}");
}
