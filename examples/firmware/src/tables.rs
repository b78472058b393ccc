//! The tables build.rs generated into OUT_DIR from the demo models: one
//! module per scalar, each holding one module per model.

/// f32 tables: what the firmware's float observers run on; with the models'
/// `[fixed_point]` sections they also hold the Q31 tables lookout-design
/// emits (`PREDICTOR_Q31`, `FUSED_Q31`, `SCALES`).
pub mod f32 {
    include!(concat!(env!("OUT_DIR"), "/conveyor_f32.rs"));
    include!(concat!(env!("OUT_DIR"), "/conveyor_kalman_f32.rs"));
    include!(concat!(env!("OUT_DIR"), "/two_mass_f32.rs"));
}

/// f64 tables: their sampled plants are the "true" plants the firmware
/// simulates.
pub mod f64 {
    include!(concat!(env!("OUT_DIR"), "/conveyor_f64.rs"));
    include!(concat!(env!("OUT_DIR"), "/conveyor_kalman_f64.rs"));
    include!(concat!(env!("OUT_DIR"), "/two_mass_f64.rs"));
}

/// Q15 tables emitted by lookout-design at the scenario's scales (see
/// build.rs): `<model>_fixed::PREDICTOR_Q15`, `FUSED_Q15`, `SCALES`.
pub mod fixed {
    include!(concat!(env!("OUT_DIR"), "/conveyor_fixed.rs"));
    include!(concat!(env!("OUT_DIR"), "/two_mass_fixed.rs"));
}
