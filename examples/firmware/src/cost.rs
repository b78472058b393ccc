//! Instruction counts from the board's counter (see [`board`]).
//!
//! Under QEMU's `-icount shift=0` each guest instruction advances virtual
//! time by exactly 1 ns, so a Cortex-M SysTick, clocked from the core clock,
//! counts instructions, not cycles (a real core takes more cycles than
//! instructions: loads, multiplies, branches and flash wait states cost
//! extra); RISC-V's `minstret` counts instructions retired directly.
//! [`calibrate`](Counter::calibrate) measures instructions per tick on a
//! loop of known length instead of trusting the board's clock.

use crate::board;
use crate::observe::Observe;
use core::hint::black_box;

/// The steps timed per variant.
pub const STEPS: u32 = 1000;

/// The board's free-running counter.
pub struct Counter {
    /// Instructions per tick, from [`calibrate`].
    pub per_tick: f64,
}

impl Counter {
    /// Starts the counter; `None` if it could not be.
    pub fn start() -> Option<Self> {
        board::start_counter().then_some(Self {
            per_tick: board::EXPECTED_PER_TICK,
        })
    }

    /// Ticks taken by `f` (less than one wrap of the counter: 2²⁴ ticks for
    /// SysTick).
    #[inline(always)]
    pub fn ticks(&self, f: impl FnOnce()) -> u32 {
        let start = board::now();
        f();
        board::elapsed(start, board::now())
    }

    /// Measures instructions per tick on [`board::spin`], whose length is known
    /// exactly: the difference of 2·K and K iterations is 2·K instructions.
    pub fn calibrate(&mut self) -> (u32, f64) {
        const K: u32 = 100_000;
        let long = self.ticks(|| board::spin(2 * K));
        let short = self.ticks(|| board::spin(K));
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
