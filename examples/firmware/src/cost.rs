//! Instruction counts from SysTick under QEMU's `-icount shift=0`.
//!
//! With that flag each guest instruction advances virtual time by exactly
//! 1 ns, so SysTick, clocked from the core clock, counts instructions, not
//! cycles (a real Cortex-M4 takes more cycles than instructions: loads,
//! multiplies, branches and flash wait states cost extra). The board's core
//! clock is 25 MHz, so one tick should be 40 instructions; [`calibrate`]
//! measures that on a loop of known length instead of trusting it.

use crate::observe::Observe;
use core::hint::black_box;
use cortex_m::peripheral::SYST;
use cortex_m::peripheral::syst::SystClkSource;

/// The steps timed per variant.
pub const STEPS: u32 = 1000;

/// A free-running SysTick: 24 bits counting down from 2²⁴ − 1.
pub struct Counter {
    /// Instructions per tick, from [`calibrate`].
    pub per_tick: f64,
}

impl Counter {
    /// Starts SysTick on the core clock, counting down from 2²⁴ − 1.
    pub fn start(syst: &mut SYST) -> Self {
        syst.set_clock_source(SystClkSource::Core);
        syst.set_reload(0x00FF_FFFF);
        syst.clear_current();
        syst.enable_counter();
        Self { per_tick: 40.0 }
    }

    /// Ticks taken by `f` (at most 2²⁴ − 1 of them).
    #[inline(always)]
    pub fn ticks(&self, f: impl FnOnce()) -> u32 {
        let start = SYST::get_current();
        f();
        let end = SYST::get_current();
        start.wrapping_sub(end) & 0x00FF_FFFF
    }

    /// Measures instructions per tick on [`spin`], whose length is known
    /// exactly: the difference of 2·K and K iterations is 2·K instructions.
    pub fn calibrate(&mut self) -> (u32, f64) {
        const K: u32 = 100_000;
        let long = self.ticks(|| spin(2 * K));
        let short = self.ticks(|| spin(K));
        let diff = long.saturating_sub(short);
        self.per_tick = if diff == 0 {
            0.0
        } else {
            f64::from(2 * K) / f64::from(diff)
        };
        (diff, self.per_tick)
    }

    /// Instructions per step of `observer`: [`STEPS`] calls of the step,
    /// less as many calls of an empty function with the same arguments.
    pub fn per_step<O: Observe<N, M, P>, const N: usize, const M: usize, const P: usize>(
        &self,
        observer: &mut O,
        u: &[O::Scalar; M],
        y: &[O::Scalar; P],
    ) -> f64 {
        let full = self.ticks(|| {
            for _ in 0..STEPS {
                one_step(black_box(&mut *observer), black_box(u), black_box(y));
            }
        });
        let empty = self.ticks(|| {
            for _ in 0..STEPS {
                no_step(black_box(&mut *observer), black_box(u), black_box(y));
            }
        });
        (f64::from(full) - f64::from(empty)) * self.per_tick / f64::from(STEPS)
    }
}

/// Exactly 2·n instructions for n ≥ 1: `subs` and `bne` n times.
#[inline(never)]
fn spin(n: u32) {
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

/// One observer step, kept out of line so the loop around it matches the
/// empty one's.
#[inline(never)]
pub fn one_step<O: Observe<N, M, P>, const N: usize, const M: usize, const P: usize>(
    observer: &mut O,
    u: &[O::Scalar; M],
    y: &[O::Scalar; P],
) {
    black_box(observer.step(u, y));
}

/// The same call with no step inside.
#[inline(never)]
fn no_step<O: Observe<N, M, P>, const N: usize, const M: usize, const P: usize>(
    observer: &mut O,
    u: &[O::Scalar; M],
    y: &[O::Scalar; P],
) {
    black_box((observer, u, y));
}
