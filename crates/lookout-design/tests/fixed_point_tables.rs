//! Fixed-point tables from the design: the proven peak is reached by the
//! worst-case sign pattern (the definition of the ℓ1 bound) and never
//! exceeded; the runtime run on the chosen scales never saturates; a case
//! that Q15 rounding destabilises is refused and passes in Q31.

use lookout::{
    FixedFusedObserver, FixedFusedTables, FusedTables, Matrix, Observer as _, Q31, Scales,
};
use lookout_design::design::ObserverForm;
use lookout_design::fixed_point::{self, FloatTables, QuantiseTables as _, bounds};
use lookout_design::model::{FixedFormat, FixedPointSpec};
use nalgebra::{DMatrix, DVector};
use proptest::prelude::*;

const N: usize = 3;
const M: usize = 1;
const P: usize = 2;

fn spec(format: FixedFormat) -> FixedPointSpec {
    FixedPointSpec {
        format,
        input_range: vec![2.0],
        output_range: vec![5.0, 0.75],
        state_range: None,
        margin_bits: 1,
        stability_margin: 0.01,
        scales_from: lookout_design::model::ScaleSource::Readings,
        initial_error: None,
        output_noise: None,
        model_error: None,
        deviation_limit: None,
    }
}

/// F, G, H, C, D of a fused observer.
type Observer = (
    DMatrix<f64>,
    DMatrix<f64>,
    DMatrix<f64>,
    DMatrix<f64>,
    DMatrix<f64>,
);

/// A random fused observer with ‖F‖∞ ≤ 0.9 (so it contracts), written as a
/// predictor design: Ad = F + H C, Bd = G + H D.
fn observer() -> impl Strategy<Value = Observer> {
    let m = |r: usize, c: usize, b: f64| {
        proptest::collection::vec(-b..b, r * c).prop_map(move |v| DMatrix::from_row_slice(r, c, &v))
    };
    (
        m(N, N, 1.0),
        m(N, M, 1.0),
        m(N, P, 2.0),
        m(P, N, 1.0),
        m(P, M, 0.5),
    )
        .prop_map(|(mut f, g, h, c, d)| {
            for mut row in f.row_iter_mut() {
                let sum: f64 = row.iter().map(|v| v.abs()).sum();
                if sum > 0.0 {
                    row *= 0.9 / sum;
                }
            }
            (f, g, h, c, d)
        })
}

fn arr<const K: usize>(v: &[i8]) -> [i8; K] {
    let mut out = [0; K];
    out.copy_from_slice(v);
    out
}

fn to_matrix<const R: usize, const C: usize>(m: &DMatrix<f64>) -> Matrix<f64, R, C> {
    let mut rows = [[0.0; C]; R];
    for (i, row) in rows.iter_mut().enumerate() {
        for (j, v) in row.iter_mut().enumerate() {
            *v = m[(i, j)];
        }
    }
    Matrix::from_rows(rows)
}

fn config() -> ProptestConfig {
    ProptestConfig {
        cases: 12,
        rng_seed: proptest::test_runner::RngSeed::Fixed(0x5ca1e),
        failure_persistence: None,
        ..ProptestConfig::default()
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn worst_case_inputs_reach_the_bound_and_never_saturate((f, g, h, c, d) in observer()) {
        let spec = spec(FixedFormat::Q31);
        let ad = &f + &h * &c;
        let bd = &g + &h * &d;
        let rho = lookout_design::numerics::spectral_radius("F", &f).unwrap();
        let tables = FloatTables { form: ObserverForm::Predictor { l: &h }, ad: &ad, bd: &bd, cd: &c, dd: &d, f: &f, g: &g, h: &h, spectral_radius: rho, state_names: &[] };
        let fx = fixed_point::design(&tables, &spec).unwrap();

        // The driven bound from zero, by the same routine.
        let mut e = DMatrix::zeros(N, M + P);
        e.columns_mut(0, M).copy_from(&g);
        e.columns_mut(M, P).copy_from(&h);
        let w = DVector::from_vec(vec![2.0, 5.0, 0.75]);
        let proof = bounds::peak(&f, &e, &w, &DVector::zeros(N)).unwrap();

        let scales = Scales::<N, M, P> { state: arr(&fx.state_exponents), input: arr(&fx.input_exponents), output: arr(&fx.output_exponents) };
        let float = FusedTables { f: to_matrix(&f), g: to_matrix(&g), h: to_matrix(&h), c: to_matrix(&c), d: to_matrix(&d), gate: None };
        let q = FixedFusedTables::<Q31, N, M, P>::from_float(&float, scales).unwrap();

        let horizon = proof.terms + 64;
        let mut powers = vec![e.clone()];
        for _ in 1..horizon {
            let next = &f * powers.last().unwrap();
            powers.push(next);
        }
        for i in 0..N {
            // w[t] = W ∘ sign of row i of F^(K−1−t) E: the ℓ1 sum at step K.
            let mut x = DVector::<f64>::zeros(N);
            let mut obs = FixedFusedObserver::new(&q, [Q31(0); N]);
            for t in 0..horizon {
                let resp = &powers[horizon - 1 - t];
                let wt: Vec<f64> = (0..M + P).map(|j| w[j] * if resp[(i, j)] >= 0.0 { 1.0 } else { -1.0 }).collect();
                x = &f * &x + &e * DVector::from_vec(wt.clone());
                let u = [Q31::from_real(wt[0], scales.input[0]).unwrap()];
                let y = [Q31::from_real(wt[1], scales.output[0]).unwrap(), Q31::from_real(wt[2], scales.output[1]).unwrap()];
                let status = obs.step(&u, &y);
                prop_assert_eq!(status.saturations, 0, "state {} saturated at step {}", i, t);
            }
            // Reached: at least the driven bound less its tail and allowance
            // (stated factor: the bound is within 1 + 1e-5 of the worst case).
            prop_assert!(x[i].abs() <= proof.driven[i], "peak {} above bound {}", x[i].abs(), proof.driven[i]);
            prop_assert!(x[i].abs() * (1.0 + 1e-5) >= proof.driven[i], "worst case {} well below bound {}", x[i].abs(), proof.driven[i]);
            // The proven peak (with its initial-state part) sits inside the scale.
            prop_assert!(fx.state_bounds[i] < 2f64.powi(i32::from(fx.state_exponents[i])));
        }
    }
}

/// A fast sampling of a slow observer (error pole at z = exp(−0.02 · 0.001)
/// ≈ 0.99998): Q15's 2⁻¹⁵ steps cannot hold 1 − 2·10⁻⁵, so the quantised
/// pole lands on or beyond 1; Q31 keeps it.
#[test]
fn q15_rounding_that_destabilises_is_refused_and_q31_passes() {
    let model = |format: &str| {
        format!(
            r#"name = "slow_tank"
sample_period = 0.001
[plant]
a = [[-0.01]]
b = [[1.0]]
c = [[1.0]]
[observer]
form = "predictor"
poles = [-0.02]
[fixed_point]
format = "{format}"
input_range = [1.0]
output_range = [10.0]
"#
        )
    };
    let q31 = lookout_design::design_text(&model("q31"), "slow_tank.toml").unwrap();
    let fx = q31.fixed_point.unwrap();
    assert!(fx.spectral_radius < 1.0 && (fx.spectral_radius - q31.spectral_radius).abs() < 1e-8);
    let err = lookout_design::design_text(&model("q15"), "slow_tank.toml")
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("Q15") && err.contains("stability_margin") && err.contains("q31"),
        "{err}"
    );
}

/// The design's run-time-sized quantisation of a current-form Kalman design
/// gives exactly the integers of the runtime's own builder (`from_float`)
/// at compile-time sizes.
#[test]
fn current_form_q_tables_equal_the_runtime_builder() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../examples/conveyor_kalman.toml"
    ))
    .unwrap();
    let text = text.replace("gate_probability = 0.999\n", "")
        + "\n[fixed_point]\nformat = \"q31\"\ninput_range = [5.0]\noutput_range = [64.0]\n";
    let d = lookout_design::design_text(&text, "conveyor_kalman.toml").unwrap();
    let fx = d.fixed_point.as_ref().unwrap();
    let float = lookout::CurrentTables::<f64, 2, 1, 1> {
        plant: lookout::Plant {
            a: to_matrix(&d.ad),
            b: to_matrix(&d.bd),
            c: to_matrix(&d.cd),
            d: to_matrix(&d.dd),
        },
        k: to_matrix(d.gain.as_ref().unwrap()),
        gate: None,
    };
    let scales = Scales::<2, 1, 1> {
        state: arr(&fx.state_exponents),
        input: arr(&fx.input_exponents),
        output: arr(&fx.output_exponents),
    };
    let built = lookout::FixedCurrentTables::<Q31, 2, 1, 1>::from_float(&float, scales).unwrap();
    let ints = |name: &str| {
        fx.form_tables
            .iter()
            .find(|t| t.name == name)
            .unwrap()
            .q
            .clone()
    };
    let of = |m: &[[Q31; 2]; 2]| DMatrix::from_fn(2, 2, |i, j| i64::from(m[j][i].0));
    assert_eq!(of(built.a.as_cols()), ints("a"));
    assert_eq!(i64::from(built.k.get(0, 0).unwrap().0), ints("k")[(0, 0)]);
    assert_eq!(i64::from(built.k.get(1, 0).unwrap().0), ints("k")[(1, 0)]);
    assert_eq!(i64::from(built.b.get(1, 0).unwrap().0), ints("b")[(1, 0)]);
    let k_table = fx.form_tables.iter().find(|t| t.name == "k").unwrap();
    assert_eq!(built.k_exp.to_vec(), k_table.exponents);
    assert!(fx.spectral_radius < 1.0);
}
