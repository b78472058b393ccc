//! Emit options: one build emits f32 and f64 tables of one model in two
//! modules (and Q31 and Q15 tables likewise), and a module name that is not
//! a Rust identifier or Q tables without scales are bad input.
//! (Structural checks of the generated text; the tables' values are checked
//! by the suite's `generated_tables` tests.)

use lookout_design::model::FixedFormat;
use lookout_design::{DesignError, EmitOptions, Scalar, design_file, tables_source_with};
use std::path::Path;

fn conveyor() -> lookout_design::Design {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../examples/conveyor.toml");
    design_file(&path).unwrap()
}

#[test]
fn two_scalars_of_one_model_go_to_two_modules() {
    let d = conveyor();
    let f32 =
        tables_source_with(&d, &EmitOptions::new(Scalar::F32).module("conveyor_f32")).unwrap();
    let f64 =
        tables_source_with(&d, &EmitOptions::new(Scalar::F64).module("conveyor_f64")).unwrap();
    assert!(f32.contains("pub mod conveyor_f32 {"), "{f32}");
    assert!(f64.contains("pub mod conveyor_f64 {"), "{f64}");
    assert!(!f32.contains("pub mod conveyor {"));
    assert!(f32.contains("lookout::PredictorTables<f32,"));
    assert!(f64.contains("lookout::PredictorTables<f64,"));
    // Without a module name the model's name is kept.
    let plain = tables_source_with(&d, &EmitOptions::new(Scalar::F32)).unwrap();
    assert!(plain.contains("pub mod conveyor {"));
}

#[test]
fn a_module_name_that_is_no_identifier_is_refused() {
    let d = conveyor();
    for bad in ["", "9lives", "two words", "fn"] {
        let err = tables_source_with(&d, &EmitOptions::new(Scalar::F32).module(bad)).unwrap_err();
        match &err {
            DesignError::Unsupported { key, .. } => assert_eq!(*key, "module", "{bad}: {err}"),
            other => panic!("{bad}: unexpected error {other}"),
        }
        assert_eq!(err.to_string().lines().count(), 1, "{err}");
    }
}

#[test]
fn both_q_formats_of_one_model_go_to_two_modules() {
    let d = conveyor();
    let q31 = tables_source_with(&d, &EmitOptions::new(Scalar::F32)).unwrap();
    let q15 = tables_source_with(
        &d,
        &EmitOptions::new(Scalar::F32)
            .module("conveyor_q15")
            .fixed(FixedFormat::Q15),
    )
    .unwrap();
    assert!(q31.contains("pub static PREDICTOR_Q31:"), "{q31}");
    assert!(!q31.contains("Q15"));
    assert!(q15.contains("pub static PREDICTOR_Q15:"), "{q15}");
    assert!(q15.contains("pub static FUSED_Q15:"));
    assert!(!q15.contains("PREDICTOR_Q31"));
    // At the build's own scales the header says they carry no proof.
    let own = EmitOptions::new(Scalar::F32)
        .fixed(FixedFormat::Q15)
        .scales(&[7, 10], &[4], &[7]);
    let text = tables_source_with(&d, &own).unwrap();
    assert!(
        text.contains("state: [7, 10], input: [4], output: [7]"),
        "{text}"
    );
    assert!(text.contains("no proven peak"));
}

/// A missing Q table is reported as what it is, not as a scalar problem.
#[test]
fn q_tables_without_scales_are_refused_with_the_reason() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../examples/conveyor_kalman.toml");
    let d = design_file(&path).unwrap();
    assert!(d.fixed_point.is_none());
    let err =
        tables_source_with(&d, &EmitOptions::new(Scalar::F32).fixed(FixedFormat::Q31)).unwrap_err();
    let text = err.to_string();
    assert!(text.contains("no [fixed_point] section"), "{text}");
    assert!(!text.contains("wider"), "{text}");
    // Scales that cannot hold a row say which table, row and format.
    let tiny = EmitOptions::new(Scalar::F32)
        .fixed(FixedFormat::Q15)
        .scales(&[-20, -20], &[10], &[-20]);
    let text = tables_source_with(&d, &tiny).unwrap_err().to_string();
    assert!(text.contains("cannot be stored in Q15"), "{text}");
}
