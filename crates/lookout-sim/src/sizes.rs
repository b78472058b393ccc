//! The size classes the runtime's const-generic observers are instantiated
//! at, and the choice of one for a design (see the [`crate::runtime`] docs
//! for why zero padding is exact).
//!
//! A class is a state count N and input and output counts M and P; a model
//! runs in the cheapest class that holds it (cost N² + N(M + P) + P²
//! multiply-adds, about one step's). States are exact from 1 to 8, then
//! 12, 16, 24, 32, 48, 64, 96, 128, 192, 256, 384 and 512 (steps of at most
//! 1.5×, so state padding at most about doubles the N² work); inputs and
//! outputs are 4, 8 or 32 (32: the runtime's channel mask), and one class
//! takes up to 512 inputs. 28 classes × 3 forms × 4 formats are
//! monomorphised; the design refuses more than 500 states, so every model it
//! designs with at most 32 outputs and 512 inputs has a class.

use crate::SimError;
use crate::runtime::{Format, TableSet, build_sized};
use lookout_design::Design;

/// (N, M, P) of every class.
pub const CLASSES: [(usize, usize, usize); 28] = [
    (1, 4, 4),
    (2, 4, 4),
    (3, 4, 4),
    (4, 4, 4),
    (5, 4, 4),
    (6, 4, 4),
    (7, 4, 4),
    (8, 4, 4),
    (12, 4, 4),
    (16, 4, 4),
    (24, 4, 4),
    (32, 4, 4),
    (8, 8, 8),
    (16, 8, 8),
    (32, 8, 8),
    (64, 8, 8),
    (8, 32, 32),
    (16, 32, 32),
    (32, 32, 32),
    (48, 32, 32),
    (64, 32, 32),
    (96, 32, 32),
    (128, 32, 32),
    (192, 32, 32),
    (256, 32, 32),
    (384, 32, 32),
    (512, 32, 32),
    (512, 512, 32),
];

/// Multiply-adds of about one step at sizes (N, M, P).
fn cost((n, m, p): (usize, usize, usize)) -> usize {
    n * n + n * (m + p) + p * p
}

/// The cheapest class holding `n` states, `m` inputs and `p` outputs.
pub fn class_of(n: usize, m: usize, p: usize) -> Option<(usize, usize, usize)> {
    CLASSES
        .into_iter()
        .filter(|&(cn, cm, cp)| n <= cn && m <= cm && p <= cp)
        .min_by_key(|&c| cost(c))
}

/// Refuses, in one line, a model no class holds.
pub fn check_sizes(design: &Design) -> Result<(usize, usize, usize), SimError> {
    let (n, m, p) = (design.n(), design.m(), design.p());
    match class_of(n, m, p) {
        Some(c) if n > 0 && p > 0 => Ok(c),
        _ => Err(SimError::BadInput(format!(
            "{}: simulate runs 1 to 512 states (disturbance states included), up to 512 inputs and 1 to 32 outputs (the runtime's channel mask); this model has n = {n}, m = {m}, p = {p}",
            design.origin
        ))),
    }
}

/// How many copies of its tables the stack of a table builder holds: an
/// unoptimised build moves the plain arrays by value several times (16 was
/// the least that built every class in the tests below; twice that).
const STACK_COPIES: usize = 32;

/// Tables up to this size (bytes, in f64) are built on the caller's stack
/// (at most 16 copies, 256 KiB, fit any thread's stack).
const ON_CALLER_STACK: usize = 16 << 10;

/// `format`'s tables of `design`, padded to its class. Tables of a large
/// class are built on a thread of its own whose stack holds a few copies of
/// them (the runtime's tables are plain arrays, built by value), then live
/// on the heap.
pub fn build(design: &Design, format: Format) -> Result<Box<dyn TableSet>, SimError> {
    build_in(check_sizes(design)?, design, format)
}

/// `format`'s tables of `design` in size class `class`.
fn build_in(
    class: (usize, usize, usize),
    design: &Design,
    format: Format,
) -> Result<Box<dyn TableSet>, SimError> {
    let (n, m, p) = class;
    // f64 entries of A, B, C, D, the gain and the gate's S⁻¹.
    let bytes = 8 * (n * n + n * m + 2 * n * p + p * m + p * p);
    if bytes <= ON_CALLER_STACK {
        return dispatch(class, design, format);
    }
    std::thread::scope(|scope| {
        std::thread::Builder::new()
            .name("lookout-sim tables".into())
            .stack_size(STACK_COPIES * bytes + (4 << 20))
            .spawn_scoped(scope, || dispatch(class, design, format))
            .map_err(|e| SimError::Failure(format!("cannot start the table builder: {e}")))?
            .join()
            .map_err(|_| SimError::Failure("the table builder failed".into()))?
    })
}

fn dispatch(
    class: (usize, usize, usize),
    design: &Design,
    format: Format,
) -> Result<Box<dyn TableSet>, SimError> {
    macro_rules! classes {
        ($(($n:literal, $m:literal, $p:literal))*) => {
            match class {
                $(($n, $m, $p) => build_sized::<$n, $m, $p>(design, format),)*
                _ => Err(SimError::Failure(format!("no size class {class:?}"))),
            }
        };
    }
    classes!((1, 4, 4)(2, 4, 4)(3, 4, 4)(4, 4, 4)(5, 4, 4)(6, 4, 4)(
        7, 4, 4
    )(8, 4, 4)(12, 4, 4)(16, 4, 4)(24, 4, 4)(32, 4, 4)(
        8, 8, 8
    )(16, 8, 8)(32, 8, 8)(64, 8, 8)(8, 32, 32)(16, 32, 32)(
        32, 32, 32
    )(48, 32, 32)(64, 32, 32)(96, 32, 32)(128, 32, 32)(
        192, 32, 32
    )(256, 32, 32)(384, 32, 32)(512, 32, 32)(512, 512, 32))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every size the design accepts (n ≤ 500, `model::MAX_STATES`) with at
    /// most 32 outputs and 512 inputs has a class.
    #[test]
    fn every_designable_size_has_a_class() {
        assert_eq!(lookout_design::model::MAX_STATES, 500);
        for n in 1..=500 {
            for (m, p) in [(0, 1), (4, 4), (5, 6), (9, 32), (33, 1), (512, 32)] {
                let (cn, cm, cp) = class_of(n, m, p).unwrap();
                assert!(n <= cn && m <= cm && p <= cp);
            }
        }
        assert!(class_of(1, 1, 33).is_none() && class_of(1, 513, 1).is_none());
    }

    /// The list of classes and the dispatch's list are the same: the demo
    /// (2 states, 1 input, 1 output) builds in every class that holds it,
    /// and a class too small for it is refused, never truncated.
    #[test]
    fn every_class_dispatches() {
        let path =
            std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../examples/conveyor.toml");
        let design = lookout_design::design_file(&path).unwrap();
        for class in CLASSES {
            let built = build_in(class, &design, Format::F32);
            assert_eq!(built.is_ok(), class.0 >= 2, "{class:?}");
        }
    }
}
