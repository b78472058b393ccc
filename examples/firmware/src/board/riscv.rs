//! RISC-V RV32IMC on QEMU's `virt` machine: the `minstret` counter counts
//! instructions retired (one tick per instruction); output goes to the
//! board's 16550 UART, the exit status to its test device ("sifive_test":
//! 0x5555 ends the run with status 0, (1 << 16) | 0x3333 with status 1).

use core::fmt::Write;

pub use riscv_rt::entry;

/// The UART's transmit register (QEMU virt: NS16550A at 0x1000_0000).
const UART_TX: usize = 0x1000_0000;
/// QEMU virt's test device, whose writes end the run.
const TEST_DEVICE: usize = 0x0010_0000;

/// Prints a line to the UART.
macro_rules! out {
    ($($arg:tt)*) => {{
        use core::fmt::Write as _;
        let _ = writeln!($crate::board::Uart, $($arg)*);
    }};
}

/// The UART as a `fmt::Write` (QEMU's UART is always ready to send).
pub struct Uart;

impl Write for Uart {
    fn write_str(&mut self, s: &str) -> core::fmt::Result {
        for b in s.bytes() {
            // SAFETY: UART_TX is the transmit register of the virt board's
            // UART, a device register with no Rust object behind it.
            unsafe { (UART_TX as *mut u8).write_volatile(b) };
        }
        Ok(())
    }
}

/// `minstret` runs from reset: nothing to start.
pub fn start_counter() -> bool {
    true
}

/// Instructions retired so far (low 32 bits).
#[inline(always)]
pub fn now() -> u32 {
    let n: u32;
    // SAFETY: reads a counter CSR; no memory, no side effects.
    unsafe { core::arch::asm!("csrr {0}, minstret", out(reg) n, options(nomem, nostack)) };
    n
}

/// Ticks from `start` to `end` (the counter counts up, 32 bits).
#[inline(always)]
pub fn elapsed(start: u32, end: u32) -> u32 {
    end.wrapping_sub(start)
}

/// Exactly 2·n instructions for n ≥ 1: `addi` and `bnez` n times.
#[inline(never)]
pub fn spin(n: u32) {
    // SAFETY: a register-only countdown loop; it touches no memory.
    unsafe {
        core::arch::asm!(
            "2:",
            "addi {n}, {n}, -1",
            "bnez {n}, 2b",
            n = inout(reg) n => _,
            options(nomem, nostack),
        );
    }
}

/// The stack pointer.
#[inline(always)]
pub fn stack_pointer() -> usize {
    let sp: usize;
    // SAFETY: copies the stack pointer register; no memory access.
    unsafe { core::arch::asm!("mv {0}, sp", out(reg) sp, options(nomem, nostack)) };
    sp
}

/// Ends the run with the verdict as the exit status (0 only if `ok`).
pub fn exit(ok: bool) -> ! {
    let code: u32 = if ok { 0x5555 } else { (1 << 16) | 0x3333 };
    // SAFETY: the virt board's test device register; writing it ends the run.
    unsafe { (TEST_DEVICE as *mut u32).write_volatile(code) };
    #[allow(clippy::empty_loop)]
    loop {}
}
