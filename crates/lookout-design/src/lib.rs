//! Host-side design for the `lookout` observer runtime.
//!
//! (Crate documentation is written once the pipeline is assembled.)

pub mod design;
pub mod emit;
pub mod fixed_point;
pub mod model;
pub mod numerics;
pub mod replay;
pub mod runtime;

pub use design::{Design, DesignError, Warning, design_file, design_text};
pub use emit::{
    EmitOptions, Scalar, emit_file, emit_file_with, tables_source, tables_source_with, write_tables,
};
pub use numerics::chi_square::chi_square_limit;
