//! Arm Cortex-M (M0/M0+, M3, M4F, M33): SysTick counts the core clock,
//! which QEMU's `-icount shift=0` turns into an instruction counter (one
//! tick is 10⁹ / f_core instructions: 40 on the 25 MHz MPS2 AN385/AN386,
//! 50 on the 20 MHz AN505, 62.5 on the 16 MHz micro:bit); output and the
//! exit status go through semihosting.

use cortex_m::peripheral::SYST;
use cortex_m::peripheral::syst::SystClkSource;
use cortex_m_rt::{ExceptionFrame, exception};
use cortex_m_semihosting::debug;

pub use cortex_m_rt::entry;

/// Prints a line through semihosting (arguments are positional: the macro
/// splices the format string with `concat!`, so `{x}` captures do not work).
macro_rules! out {
    ($($arg:tt)*) => { cortex_m_semihosting::hprintln!($($arg)*) };
}

/// Starts SysTick on the core clock, free-running down from 2²⁴ − 1.
/// Returns false if the core peripherals were already taken.
pub fn start_counter() -> bool {
    let Some(mut core) = cortex_m::Peripherals::take() else {
        return false;
    };
    let syst = &mut core.SYST;
    syst.set_clock_source(SystClkSource::Core);
    syst.set_reload(0x00FF_FFFF);
    syst.clear_current();
    syst.enable_counter();
    true
}

/// The counter now.
#[inline(always)]
pub fn now() -> u32 {
    SYST::get_current()
}

/// Ticks from `start` to `end` (SysTick counts down, 24 bits).
#[inline(always)]
pub fn elapsed(start: u32, end: u32) -> u32 {
    start.wrapping_sub(end) & 0x00FF_FFFF
}

/// Exactly 2·n instructions for n ≥ 1: `subs` and `bne` n times.
#[inline(never)]
pub fn spin(n: u32) {
    // SAFETY: a register-only countdown loop; it touches no memory and
    // leaves the flags clobbered, which asm! assumes by default.
    unsafe {
        core::arch::asm!(
            "2:",
            "subs {n}, #1",
            "bne 2b",
            n = inout(reg) n => _,
            options(nomem, nostack),
        );
    }
}

/// The stack pointer.
#[inline(always)]
pub fn stack_pointer() -> usize {
    cortex_m::register::msp::read() as usize
}

/// Ends the run with the verdict as the exit status (0 only if `ok`).
pub fn exit(ok: bool) -> ! {
    debug::exit(if ok {
        debug::EXIT_SUCCESS
    } else {
        debug::EXIT_FAILURE
    });
    #[allow(clippy::empty_loop)]
    loop {}
}

#[exception]
unsafe fn HardFault(frame: &ExceptionFrame) -> ! {
    out!("HardFault at pc={:#010x}", frame.pc());
    exit(false)
}
