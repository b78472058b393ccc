//! The tables build.rs generated into OUT_DIR from the demo models: one
//! module per scalar, each holding one module per model.

/// f32 tables: what the firmware's float observers run on; a model with a
/// `[fixed_point]` section (conveyor.toml) also gets its Q tables here
/// (`PREDICTOR_Q31`, `FUSED_Q31`, `SCALES`), emitted by lookout-design.
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

/// Q31 and Q15 tables converted by the firmware's build.rs stand-in
/// (`<model>_fixed::PREDICTOR_Q31`, `FUSED_Q31`, `PREDICTOR_Q15`,
/// `FUSED_Q15`, `SCALES`), for the formats and models lookout-design does
/// not emit here: Q15 of the conveyor, Q31 and Q15 of the two-mass drive.
pub mod fixed {
    include!(concat!(env!("OUT_DIR"), "/conveyor_fixed.rs"));
    include!(concat!(env!("OUT_DIR"), "/two_mass_fixed.rs"));
}
