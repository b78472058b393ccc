//! Host-side design for the `lookout` observer runtime.
//!
//! (Crate documentation is written once the pipeline is assembled.)

pub mod model;
pub mod numerics;
