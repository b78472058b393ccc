//! Hostile models at the library level (issue 16): results that overflow
//! are refused naming the matrix, scaling that once overflowed is undone
//! exactly, slow error dynamics keep a computed noise gain, and subnormal
//! tables are warned about. Closed forms are worked out beside each check.

use lookout_design::{DesignError, design_text};

fn scalar_model(a: &str, b: &str, c: &str, d: &str, form: &str, pole: &str) -> String {
    format!(
        "name = \"scalar\"\nsample_period = 0.001\n\n[plant]\ndomain = \"discrete\"\na = [[{a}]]\nb = [[{b}]]\nc = [[{c}]]\nd = [[{d}]]\n\n[observer]\nform = \"{form}\"\ndiscrete_poles = [{pole}]\n"
    )
}

#[test]
fn infinite_fused_g_is_refused_naming_it() {
    // G = Bd − L Dd = 1 − 1.4 · 1.7e308 overflows to −inf (L = a − z = 1.4).
    let text = scalar_model("0.5", "1.0", "1.0", "1.7e308", "predictor", "-0.9");
    let e = design_text(&text, "huge_d.toml").unwrap_err();
    assert!(matches!(e, DesignError::Numerics { .. }), "{e}");
    let msg = e.to_string();
    assert!(msg.contains("matrix G") && msg.contains("inf"), "{msg}");
}

#[test]
fn huge_output_unit_places_the_exact_scalar_gain() {
    // Scalar closed form: a − L c = z, so L = (a − z) / c = 0.3 / 1e154.
    // The row scaling is by a power of two, so the only roundings are
    // those of the division and the subtraction: 4 ε relative allows them.
    let text = scalar_model("0.5", "1.0", "1e154", "0.0", "predictor", "0.2");
    let d = design_text(&text, "huge_c.toml").unwrap();
    let l = d.gain.as_ref().unwrap()[(0, 0)];
    let want = 0.3 / 1e154;
    assert!(
        ((l - want) / want).abs() <= 4.0 * f64::EPSILON,
        "{l} vs {want}"
    );
}

#[test]
fn error_radius_one_minus_1e_8_keeps_a_computed_noise_gain() {
    // a = 1, c = 1, pole ρ = 1 − 1e-8: L = 1e-8, x̂⁺ = ρ x̂ + L w, so the
    // stationary variance of x̂ is L² / (1 − ρ²) (the variance of a
    // first-order autoregression, common practice) and the gain is its
    // root. The doubling sum converges to it within a few ε per doubling;
    // 1e-6 relative is a loose bound on 27 doublings' rounding.
    let rho: f64 = 1.0 - 1e-8;
    let text = scalar_model("1.0", "1.0", "1.0", "0.0", "predictor", &format!("{rho:?}"));
    let d = design_text(&text, "slow.toml").unwrap();
    let l = 1.0 - rho;
    let want = l / (1.0 - rho * rho).sqrt();
    let got = d.output_noise_gain[0];
    assert!(((got - want) / want).abs() < 1e-6, "{got} vs {want}");
}

#[test]
fn subnormal_input_table_is_warned_about() {
    let text = scalar_model("0.5", "1e-310", "1.0", "0.0", "predictor", "0.2");
    let d = design_text(&text, "tiny_b.toml").unwrap();
    assert!(
        d.warnings
            .iter()
            .any(|w| w.to_string().contains("Bd has the subnormal entry")),
        "{:?}",
        d.warnings
    );
}

/// A 2-state discrete plant with input column `b` (two entries) and the
/// output on the first state.
fn two_state_model(b: [&str; 2]) -> String {
    format!(
        "name = \"pair\"\nsample_period = 0.001\n\n[plant]\ndomain = \"discrete\"\na = [[0.9, 0.1], [0.0, 0.8]]\nb = [[{}], [{}]]\nc = [[1.0, 0.0]]\n\n[observer]\nform = \"predictor\"\ndiscrete_poles = [0.5, 0.6]\n",
        b[0], b[1]
    )
}

fn f32_warning_on_bd(text: &str) -> bool {
    let d = design_text(text, "pair.toml").unwrap();
    d.warnings
        .iter()
        .any(|w| w.to_string().contains("Bd has the entry"))
}

#[test]
fn entry_flushed_in_f32_is_warned_about_only_when_it_matters_in_its_row() {
    // Bd = b for a discrete plant. 1e-40 is subnormal in f32 (smallest
    // normal 2⁻¹²⁶ ≈ 1.18e-38, IEEE 754). Alone in its row it is that
    // row's whole input term: warned. Beside 1.0 in the same row (a second
    // input) it is below f32's unit roundoff 2⁻²⁴ times the row's largest
    // entry, so losing it costs less than rounding that entry: not warned.
    assert!(f32_warning_on_bd(&two_state_model(["1.0", "1e-40"])));
    let side_by_side = two_state_model(["1.0", "0.5"])
        .replace("b = [[1.0], [0.5]]", "b = [[1.0, 1e-40], [0.5, 0.0]]");
    assert!(side_by_side.contains("1e-40"));
    assert!(!f32_warning_on_bd(&side_by_side), "{side_by_side}");
}
