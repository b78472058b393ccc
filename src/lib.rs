//! Integration tests, benchmarks and examples across the lookout crates live
//! in `tests/`, `benches/` and `examples/`; this library holds the demo
//! tables that `build.rs` generates from `examples/*.toml`.

/// Tables of `examples/conveyor.toml` in `f32`.
pub mod conveyor_f32 {
    include!(concat!(env!("OUT_DIR"), "/conveyor_f32.rs"));
}

/// Tables of `examples/conveyor.toml` in `f64`.
pub mod conveyor_f64 {
    include!(concat!(env!("OUT_DIR"), "/conveyor_f64.rs"));
}

/// Tables of `examples/conveyor_kalman.toml` in `f64`.
pub mod conveyor_kalman_f64 {
    include!(concat!(env!("OUT_DIR"), "/conveyor_kalman_f64.rs"));
}

/// Tables of `tests/models/conveyor_kalman_q31.toml` (the Kalman demo with
/// Q31 tables and their gate) in `f64` and Q31.
pub mod kalman_q31 {
    include!(concat!(env!("OUT_DIR"), "/conveyor_kalman_q31.rs"));
}

/// Tables of `examples/conveyor_load.toml` (the conveyor with its load
/// torque as a disturbance state) in `f64`.
pub mod conveyor_load_f64 {
    include!(concat!(env!("OUT_DIR"), "/conveyor_load_f64.rs"));
}

/// The README's Rust examples, run as doctests.
#[doc = include_str!("../README.md")]
#[cfg(doctest)]
pub struct ReadmeDoctests;
