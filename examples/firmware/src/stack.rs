//! Stack use of one call, by painting: fill a stretch below the stack
//! pointer with a pattern, make the call, and find the deepest word that no
//! longer holds the pattern.

/// The pattern painted (a value a step is unlikely to leave behind).
const PAINT: u32 = 0xDEAD_C0DE;

/// Bytes painted below the stack pointer (far more than a step uses, and
/// far less than the RAM left under the stack).
const DEPTH: usize = 4096;

/// Bytes of stack `f` used below this function's frame (0 to [`DEPTH`];
/// [`DEPTH`] means "at least").
#[inline(never)]
pub fn used_by(f: impl FnOnce()) -> usize {
    let sp = crate::board::stack_pointer();
    let bottom = sp.saturating_sub(DEPTH) as *mut u32;
    let words = DEPTH / 4;
    for i in 0..words {
        // SAFETY: [sp − DEPTH, sp) is free stack below this frame: nothing
        // live is stored there, and main keeps well over DEPTH bytes of RAM
        // between the statics and the stack (see memory.x and llvm-size).
        unsafe { bottom.add(i).write_volatile(PAINT) };
    }
    f();
    let mut untouched = 0;
    for i in 0..words {
        // SAFETY: the same region, now only read.
        if unsafe { bottom.add(i).read_volatile() } != PAINT {
            break;
        }
        untouched += 1;
    }
    DEPTH - 4 * untouched
}
