//! Emit options: one build emits f32 and f64 tables of one model in two
//! modules, and a module name that is not a Rust identifier is bad input.
//! (Structural checks of the generated text; the tables' values are checked
//! by the suite's `generated_tables` tests.)

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
