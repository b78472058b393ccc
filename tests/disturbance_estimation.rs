//! Issue 9: a step of load torque on the demo conveyor. The observer with the
//! load as a disturbance state settles to the true speed and reads the load
//! by name; the observer of the bare model settles to the bias its error
//! recursion predicts.
#![allow(clippy::needless_range_loop)] // indices are matrix positions here

use lookout::{Observer, PredictorObserver};
use lookout_design::model::{Entry, Model};
use lookout_suite::conveyor_f64::conveyor;
use lookout_suite::conveyor_load_f64::conveyor_load;
use std::path::Path;

/// The applied load torque (N m, braking) and its start step: invented
/// scenario numbers, a quarter of the 1 A drive current's torque.
const LOAD: f64 = 0.0125;
const LOAD_STEP: usize = 500;
/// Steps simulated: the slowest designed pole is z = exp(−40 T) = 0.961, so
/// 3500 steps after the load shrink any transient by e^{−140}: settled.
const STEPS: usize = 4000;
const CURRENT: f64 = 1.0;

/// The true sampled plant (Ad, Bd of the bare demo model, checked against
/// the closed-form hold in `generated_tables.rs`) and the sampled load
/// column: the model's load column [0, −1/J] is parallel to b = [0, K_t/J],
/// so its hold is Bd · (−1/J)/(K_t/J) exactly (the hold is linear in the
/// input column).
struct TruePlant {
    ad: [[f64; 2]; 2],
    bd: [f64; 2],
    ed: [f64; 2],
}

fn true_plant() -> TruePlant {
    let model = Model::load(Path::new("examples/conveyor_load.toml")).unwrap();
    let dist = model.disturbances.as_ref().unwrap();
    let Entry::Column(column) = &dist.input[0].entry else {
        panic!("the demo gives the load's column");
    };
    assert_eq!(column[0], 0.0);
    let ratio = column[1] / model.plant.b[(1, 0)];
    let plant = &conveyor::PREDICTOR.plant;
    let ad = [
        [plant.a.get(0, 0).unwrap(), plant.a.get(0, 1).unwrap()],
        [plant.a.get(1, 0).unwrap(), plant.a.get(1, 1).unwrap()],
    ];
    let bd = [plant.b.get(0, 0).unwrap(), plant.b.get(1, 0).unwrap()];
    TruePlant {
        ad,
        bd,
        ed: [bd[0] * ratio, bd[1] * ratio],
    }
}

impl TruePlant {
    fn step(&self, x: [f64; 2], u: f64, load: f64) -> [f64; 2] {
        let mut next = [0.0; 2];
        for i in 0..2 {
            next[i] =
                self.ad[i][0] * x[0] + self.ad[i][1] * x[1] + self.bd[i] * u + self.ed[i] * load;
        }
        next
    }
}

/// Runs both observers on the plant with the load step; returns the true
/// state, the augmented estimate and the bare estimate after `STEPS`.
fn run() -> ([f64; 2], [f64; 3], [f64; 2]) {
    let plant = true_plant();
    let mut x = [0.0, 0.0];
    let mut with_load = PredictorObserver::new(&conveyor_load::PREDICTOR, [0.0; 3]);
    let mut bare = PredictorObserver::new(&conveyor::PREDICTOR, [0.0; 2]);
    for k in 0..STEPS {
        let load = if k >= LOAD_STEP { LOAD } else { 0.0 };
        let y = [x[0]];
        assert!(with_load.step(&[CURRENT], &y).corrected());
        assert!(bare.step(&[CURRENT], &y).corrected());
        x = plant.step(x, CURRENT, load);
    }
    (x, *with_load.estimate(), *bare.estimate())
}

/// With the disturbance state the steady estimation error of the plant
/// states is zero to rounding and the estimate of `load_torque` is the load.
///
/// Tolerance: the error recursion is e⁺ = F e + (rounding of one step), so
/// the steady error is (I − F)⁻¹ times a rounding of about ε·|x| per step;
/// with ‖(I − F)⁻¹‖ of order 1/(1 − 0.96) · ‖L‖ ≈ 10³ and |x| ≤ 30 rad,
/// 1e4·ε·30 ≈ 7e-11 bounds it with room (k = 1e4 stated for this reason).
#[test]
fn disturbance_state_removes_the_steady_bias_and_reads_the_load() {
    let (x, with_load, _) = run();
    let tol = 1e4 * f64::EPSILON * 30.0;
    let angle = with_load[conveyor_load::state::ANGLE];
    let speed = with_load[conveyor_load::state::SPEED];
    let load = with_load[conveyor_load::state::LOAD_TORQUE];
    assert!((angle - x[0]).abs() <= tol, "angle {angle} vs {}", x[0]);
    assert!((speed - x[1]).abs() <= tol, "speed {speed} vs {}", x[1]);
    // The load reaches the speed through 1/J = 1587, so a given speed error
    // stands for a load error J times smaller: the same bound holds.
    assert!(
        (load - LOAD).abs() <= tol,
        "load torque estimate {load} vs {LOAD}"
    );
    assert_eq!(conveyor_load::N, 3);
    assert_eq!(conveyor_load::state::LOAD_TORQUE, 2);
}

/// Without it, e = x − x̂ obeys e⁺ = F e + Ed τ, so the steady error is the
/// final value e_ss = (I − F)⁻¹ Ed τ (closed form; 2 × 2 inverse written
/// out). The simulated error must match it to 1e-9 relative: the error
/// transient is e^{−70·3.5} gone, and the rounding (as above) is ~1e-11 rad
/// against a bias of ~1e-3 rad.
#[test]
fn bare_observer_settles_to_the_final_value_prediction() {
    let (x, _, bare) = run();
    let plant = true_plant();
    let f = &conveyor::FUSED.f;
    let m = [
        [1.0 - f.get(0, 0).unwrap(), -f.get(0, 1).unwrap()],
        [-f.get(1, 0).unwrap(), 1.0 - f.get(1, 1).unwrap()],
    ];
    let det = m[0][0] * m[1][1] - m[0][1] * m[1][0];
    let rhs = [plant.ed[0] * LOAD, plant.ed[1] * LOAD];
    let e_ss = [
        (m[1][1] * rhs[0] - m[0][1] * rhs[1]) / det,
        (m[0][0] * rhs[1] - m[1][0] * rhs[0]) / det,
    ];
    for i in 0..2 {
        let e = x[i] - bare[i];
        assert!(
            (e - e_ss[i]).abs() <= 1e-9 * e_ss[i].abs(),
            "state {i}: error {e} vs final value {}",
            e_ss[i]
        );
    }
    // The bias is real: the bare speed estimate is off by far more than rounding.
    assert!(e_ss[1].abs() > 1e-3, "{e_ss:?}");
}
