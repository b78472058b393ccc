//! Firmware example: the lookout runtime on the common microcontroller
//! cores (Cortex-M0, M3, M4F, M33 and RV32IMC), under QEMU; what differs
//! between them is in [`board`].
//!
//! The tables come from the demo models through build.rs. On the target the
//! firmware
//!
//! 1. calibrates the board's counter as an instruction counter (see [`cost`]);
//! 2. runs the Q31 "heated block" scenario and compares its state checksum
//!    with the one the host test recorded (bit-exact host/target);
//! 3. simulates each demo plant in f64 from a state the observers are not
//!    told, runs the f32 predictor, current-form and fused observers and
//!    the Q31/Q15 ones on it, and checks that each estimate settles inside
//!    its stated tolerance;
//! 4. counts the instructions of one step of each variant and the stack a
//!    step uses, and prints them as `cost …` lines.
//!
//! It exits 0 (through semihosting) only if every check passed.
#![no_std]
#![no_main]

#[macro_use]
mod board;
mod converge;
mod cost;
mod heated_block;
mod observe;
mod plant;
mod stack;
mod tables;

use converge::Scenario;
use lookout::{
    CurrentObserver, FixedFusedObserver, FixedPredictorObserver, FusedObserver, PredictorObserver,
};
use observe::Observe;

/// Tolerance on the settled error, as a fraction of each state's full
/// scale, per scalar (reasons in `docs/firmware.md`): f32 2⁻¹⁸ (32 units
/// of f32 rounding at full scale), Q31 2⁻²² (512 LSB), Q15 2⁻⁸ (128 LSB).
/// A check also needs the settled error to be at most a tenth of the first
/// step's, so an observer that did not move fails it, and no gated step or
/// saturated store in the whole run.
const TOL_F32: f64 = 1.0 / 262_144.0;
const TOL_Q31: f64 = 1.0 / 4_194_304.0;
const TOL_Q15: f64 = 1.0 / 256.0;

#[board::entry]
fn main() -> ! {
    out!("core {}", board::CORE);
    let ok = run();
    out!("verdict {}", if ok { "pass" } else { "FAIL" });
    board::exit(ok)
}

/// Every check, in order; true when all passed.
fn run() -> bool {
    let Some(mut counter) = cost::Counter::start() else {
        out!("error: the counter could not be started");
        return false;
    };
    let mut ok = true;

    let (ticks, per_tick) = counter.calibrate();
    let calibrated = (per_tick - board::EXPECTED_PER_TICK).abs() < 0.01;
    out!(
        "calibration ticks={} instructions_per_tick={:.3} (expected {}) {}",
        ticks,
        per_tick,
        board::EXPECTED_PER_TICK,
        pass(calibrated)
    );
    ok &= calibrated;

    let hb = heated_block::run();
    let bit_exact = hb.checksum == heated_block::CHECKSUM && hb.bad_statuses == 0;
    out!(
        "checksum heated_block q31 steps={} got={:#018x} host={:#018x} last=[{}, {}] {}",
        heated_block::STEPS,
        hb.checksum,
        heated_block::CHECKSUM,
        hb.last[0].0,
        hb.last[1].0,
        pass(bit_exact)
    );
    ok &= bit_exact;

    out!("convergence: max |x̂ − x| / full scale over the last 500 of 2000 steps");
    ok &= conveyor(&counter);
    ok &= two_mass(&counter);
    ok &= heated_block_cost(&counter);
    ok
}

fn pass(ok: bool) -> &'static str {
    if ok { "ok" } else { "FAIL" }
}

/// Full scale of the conveyor's states (angle in rad, speed in rad/s): the
/// window the firmware keeps the angle in and twice the top speed, as
/// powers of two. Errors are reported as fractions of it.
const CONVEYOR_FULL_SCALE: [f64; 2] = [128.0, 1024.0];

/// Full scale of the two-mass drive's states (motor angle, motor speed,
/// load angle, load speed), chosen the same way.
const TWO_MASS_FULL_SCALE: [f64; 4] = [128.0, 2048.0, 128.0, 2048.0];

/// Checks convergence of `observer` on `scenario`, then measures its cost
/// and stack on the settled state; prints both lines.
fn check<O: Observe<N, M, P>, const N: usize, const M: usize, const P: usize>(
    counter: &cost::Counter,
    name: &str,
    scenario: &Scenario<'_, N, M, P>,
    tolerance: f64,
    mut observer: O,
) -> bool {
    let v = scenario.run(&mut observer);
    let converged = v.settled <= tolerance
        && 10.0 * v.settled <= v.initial
        && v.uncorrected == 0
        && v.saturations == 0;
    out!(
        "check variant={} scalar={} initial={:.3e} settled={:.3e} tolerance={:.3e} uncorrected={} saturations={} {}",
        name,
        O::SCALAR,
        v.initial,
        v.settled,
        tolerance,
        v.uncorrected,
        v.saturations,
        pass(converged)
    );
    // Time the step from the settled state on a fixed input and reading,
    // every channel present.
    let u = observer.input(&[0.5; M]);
    let y = observer.reading(&[0.25; P]);
    let per_step = counter.per_step(&mut observer, &u, &y);
    let stack = stack::used_by(|| cost::one_step(&mut observer, &u, &y));
    let macs = observer.macs();
    out!(
        "cost variant={} scalar={} n={} m={} p={} instructions={:.2} macs={}",
        name,
        O::SCALAR,
        N,
        M,
        P,
        per_step,
        macs
    );
    out!(
        "  per multiply-add {:.2} instructions (instruction counts, not cycles); stack {} bytes",
        per_step / macs as f64,
        stack
    );
    converged
}

fn conveyor(counter: &cost::Counter) -> bool {
    use tables::{f32, f64, fixed::conveyor_fixed as q};
    let scenario = Scenario {
        plant: &f64::conveyor::PREDICTOR.plant,
        x0: [1.0, 50.0],
        amplitude: 1.0,
        full_scale: CONVEYOR_FULL_SCALE,
        steps: 2000,
        window: 500,
    };
    let mut ok = true;
    ok &= check(
        counter,
        "conveyor-predictor",
        &scenario,
        TOL_F32,
        PredictorObserver::new(&f32::conveyor::PREDICTOR, [0.0; 2]),
    );
    ok &= check(
        counter,
        "conveyor-fused",
        &scenario,
        TOL_F32,
        FusedObserver::new(&f32::conveyor::FUSED, [0.0; 2]),
    );
    ok &= check(
        counter,
        "conveyor-predictor",
        &scenario,
        TOL_Q31,
        // Emitted by lookout-design from conveyor.toml's [fixed_point].
        FixedPredictorObserver::proven(&f32::conveyor::PREDICTOR_Q31, [lookout::Q31(0); 2]),
    );
    ok &= check(
        counter,
        "conveyor-fused",
        &scenario,
        TOL_Q31,
        FixedFusedObserver::proven(&f32::conveyor::FUSED_Q31, [lookout::Q31(0); 2]),
    );
    ok &= check(
        counter,
        "conveyor-fused",
        &scenario,
        TOL_Q15,
        FixedFusedObserver::proven(&q::FUSED_Q15, [lookout::Q15(0); 2]),
    );
    // The Kalman design gates innovations beyond the 99.9 % chi-square
    // quantile (3.29 standard deviations of the innovation, 2.0 mrad here), so
    // its observer starts close to the truth (0.1 rad/s off in speed): a far
    // start would be gated for ever, which is the gate doing its job.
    let kalman = Scenario {
        plant: &f64::conveyor_kalman::CURRENT.plant,
        ..scenario
    };
    ok &= check(
        counter,
        "conveyor-kalman-current",
        &kalman,
        TOL_F32,
        CurrentObserver::new(&f32::conveyor_kalman::CURRENT, [1.0, 49.9]),
    );
    ok
}

fn two_mass(counter: &cost::Counter) -> bool {
    use tables::{f32, f64, fixed::two_mass_fixed as q};
    let scenario = Scenario {
        plant: &f64::two_mass::PREDICTOR.plant,
        x0: [1.0, 100.0, 0.8, 80.0],
        amplitude: 1.0,
        full_scale: TWO_MASS_FULL_SCALE,
        steps: 2000,
        window: 500,
    };
    let mut ok = true;
    ok &= check(
        counter,
        "two-mass-predictor",
        &scenario,
        TOL_F32,
        PredictorObserver::new(&f32::two_mass::PREDICTOR, [0.0; 4]),
    );
    ok &= check(
        counter,
        "two-mass-fused",
        &scenario,
        TOL_F32,
        FusedObserver::new(&f32::two_mass::FUSED, [0.0; 4]),
    );
    ok &= check(
        counter,
        "two-mass-fused",
        &scenario,
        TOL_Q31,
        // Emitted by lookout-design from two_mass.toml's [fixed_point].
        FixedFusedObserver::proven(&f32::two_mass::FUSED_Q31, [lookout::Q31(0); 4]),
    );
    ok &= check(
        counter,
        "two-mass-fused",
        &scenario,
        TOL_Q15,
        FixedFusedObserver::proven(&q::FUSED_Q15, [lookout::Q15(0); 4]),
    );
    ok
}

/// The heated block's cost line (its check is the checksum above).
fn heated_block_cost(counter: &cost::Counter) -> bool {
    let mut o = FixedPredictorObserver::proven(&heated_block::TABLES, [lookout::Q31(0); 2]);
    let (u, y, _) = heated_block::inputs(0);
    let per_step = counter.per_step(&mut o, &u, &y);
    let stack = stack::used_by(|| cost::one_step(&mut o, &u, &y));
    out!(
        "cost variant=heated-block-predictor scalar=q31 n=2 m=1 p=1 instructions={:.2} macs={}",
        per_step,
        o.macs()
    );
    out!("  stack {} bytes", stack);
    true
}

#[panic_handler]
fn panic(info: &core::panic::PanicInfo) -> ! {
    out!("panic: {}", info);
    board::exit(false)
}
