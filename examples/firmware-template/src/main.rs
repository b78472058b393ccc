//! The conveyor's observer in f32 and in Q31 on a Cortex-M4F: both start
//! from a wrong guess while the belt runs at a steady speed; both must
//! settle on the true state. The exit status says whether they did.
#![no_std]
#![no_main]

use cortex_m_rt::entry;
use cortex_m_semihosting::{debug, hprintln};
use lookout::{FixedFusedObserver, FusedObserver, Observer};

// Written by build.rs: `conveyor::FUSED` (f32), `conveyor::FUSED_Q31`, and
// the conversions between physical values and Q31 at the tables' scales.
include!(concat!(env!("OUT_DIR"), "/conveyor.rs"));

/// The scripted signal: a steady current of 1 A runs the belt at the speed
/// where motor torque and friction balance (rad/s): plant.b[1] / −plant.a[1][1]
/// of conveyor.toml, times 1 A. The encoder angle grows from 1.5 rad.
const CURRENT: [f64; conveyor::M] = [1.0];
const SPEED: f64 = 79.36507936507935 / 8.095238095238095;
const START_ANGLE: f64 = 1.5;
/// The true state [angle (rad), speed (rad/s)] at step k.
fn true_state(k: usize) -> [f64; conveyor::N] {
    let t = k as f64 * conveyor::SAMPLE_PERIOD;
    [START_ANGLE + SPEED * t, SPEED]
}
/// The observers' first guess: at rest at angle 0.
const GUESS: [f64; conveyor::N] = [0.0, 0.0];
/// 0.5 s at 1 kHz: the error poles (|z| = 0.932) shrink the first error
/// by 0.932^500 < 1e-15, far below the rounding of either format.
const STEPS: usize = 500;
/// Largest error allowed at the end (rad, rad/s): the design's bound on
/// the deviation of the Q31 fused tables from the exact observer (in the
/// header of conveyor.rs: 1.4e-5 rad, 1.5e-3 rad/s), rounded up. f32 is
/// held to it too: its rounding scales with the signals, here far below
/// the full scale its own bound (3.1e-3 rad, 0.33 rad/s) is for.
const TOLERANCE: [f64; conveyor::N] = [2e-5, 2e-3];

#[entry]
fn main() -> ! {
    let ok = run();
    hprintln!("verdict {}", if ok { "pass" } else { "FAIL" });
    exit(ok)
}

fn run() -> bool {
    let mut f32_observer = FusedObserver::new(&conveyor::FUSED, GUESS.map(|v| v as f32));
    let mut q31_observer =
        FixedFusedObserver::proven(&conveyor::FUSED_Q31, conveyor::state_to_q(&GUESS));

    let mut every_step_corrected = true;
    for k in 0..STEPS {
        let encoder = [true_state(k)[0]];
        // Each observer takes the signals in its own scalar; the Q31 one at
        // the tables' scales, through the generated conversions.
        let f32_status = f32_observer.step(&CURRENT.map(|v| v as f32), &encoder.map(|v| v as f32));
        let q31_status = q31_observer.step(
            &conveyor::input_to_q(&CURRENT),
            &conveyor::output_to_q(&encoder),
        );
        every_step_corrected &= f32_status.corrected() && q31_status.corrected();
        every_step_corrected &= q31_status.saturations == 0;
    }

    // After step k the estimate is that of step k + 1.
    let truth = true_state(STEPS);
    let f32_estimate = f32_observer.estimate().map(f64::from);
    let q31_estimate = conveyor::state_from_q(q31_observer.estimate());
    let f32_ok = settled("f32", &f32_estimate, &truth);
    let q31_ok = settled("q31", &q31_estimate, &truth);
    every_step_corrected && f32_ok && q31_ok
}

/// Whether `estimate` is within `TOLERANCE` of `truth`; prints it.
fn settled(format: &str, estimate: &[f64; conveyor::N], truth: &[f64; conveyor::N]) -> bool {
    let mut ok = true;
    for (i, name) in ["angle", "speed"].iter().enumerate() {
        let error = (estimate[i] - truth[i]).abs();
        ok &= error <= TOLERANCE[i];
        hprintln!("{} {}: {} (error {:e})", format, name, estimate[i], error);
    }
    ok
}

/// Ends the QEMU run with exit status 0 (pass) or 1 (fail).
fn exit(ok: bool) -> ! {
    let status = if ok {
        debug::EXIT_SUCCESS
    } else {
        debug::EXIT_FAILURE
    };
    debug::exit(status);
    loop {
        cortex_m::asm::wfi();
    }
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    exit(false)
}
