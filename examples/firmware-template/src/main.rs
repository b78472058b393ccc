//! The conveyor's observer in f32 and in Q31 on a Cortex-M4F: both start
//! from a wrong guess while the encoder reads a belt held still; both must
//! settle on the true state. The exit status says whether they did.
#![no_std]
#![no_main]

use cortex_m_rt::entry;
use cortex_m_semihosting::{debug, hprintln};
use lookout::{FixedFusedObserver, FusedObserver, Observer};

// Written by build.rs: `conveyor::FUSED` (f32), `conveyor::FUSED_Q31`, and
// the conversions between physical values and Q31 at the tables' scales.
include!(concat!(env!("OUT_DIR"), "/conveyor.rs"));

/// The scripted signal: no current (A), the encoder reads a belt held
/// still at 1.5 rad; so the true state is angle 1.5 rad, speed 0 rad/s.
const CURRENT: [f64; conveyor::M] = [0.0];
const ENCODER: [f64; conveyor::P] = [1.5];
const TRUE_STATE: [f64; conveyor::N] = [1.5, 0.0];
/// The observers' wrong first guess: angle 0 rad, speed 20 rad/s.
const GUESS: [f64; conveyor::N] = [0.0, 20.0];
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
    // The signals in each observer's scalar; the Q31 ones at the tables' scales.
    let (u_f32, y_f32) = (CURRENT.map(|v| v as f32), ENCODER.map(|v| v as f32));
    let u_q31 = conveyor::input_to_q(&CURRENT);
    let y_q31 = conveyor::output_to_q(&ENCODER);

    let mut every_step_corrected = true;
    for _ in 0..STEPS {
        let f32_status = f32_observer.step(&u_f32, &y_f32);
        let q31_status = q31_observer.step(&u_q31, &y_q31);
        every_step_corrected &= f32_status.corrected() && q31_status.corrected();
        every_step_corrected &= q31_status.saturations == 0;
    }

    let f32_estimate = f32_observer.estimate().map(f64::from);
    let q31_estimate = conveyor::state_from_q(q31_observer.estimate());
    let f32_ok = settled("f32", &f32_estimate);
    let q31_ok = settled("q31", &q31_estimate);
    every_step_corrected && f32_ok && q31_ok
}

/// Whether `estimate` is within `TOLERANCE` of the true state; prints it.
fn settled(format: &str, estimate: &[f64; conveyor::N]) -> bool {
    let mut ok = true;
    for (i, name) in ["angle", "speed"].iter().enumerate() {
        let error = (estimate[i] - TRUE_STATE[i]).abs();
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
