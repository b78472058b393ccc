//! What differs between the cores the firmware runs on: the instruction
//! counter, printing, the exit status, the stack pointer and the fault
//! handlers. Everything else (`main.rs` and the other modules) is shared.
//!
//! * Arm Cortex-M (M0/M0+, M3, M4F, M33): cortex-m-rt, SysTick on the core
//!   clock (an instruction counter under QEMU's `-icount shift=0`),
//!   semihosting for output and exit ([`cortex_m`]).
//! * RISC-V RV32IMC: riscv-rt, the `minstret` counter (instructions retired),
//!   QEMU `virt`'s UART for output and its test device for the exit status
//!   ([`riscv`]).

#[cfg(target_arch = "arm")]
#[macro_use]
mod cortex_m;
#[cfg(target_arch = "arm")]
pub use self::cortex_m::*;

#[cfg(target_arch = "riscv32")]
#[macro_use]
mod riscv;
#[cfg(target_arch = "riscv32")]
pub use self::riscv::*;

// `CORE` (the core's name in the output) and `EXPECTED_PER_TICK` (counter
// ticks per instruction on the board QEMU emulates for this target), written
// by build.rs from the compilation target.
include!(concat!(env!("OUT_DIR"), "/core.rs"));
