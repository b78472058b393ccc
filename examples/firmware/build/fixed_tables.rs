//! Q15 tables for the firmware, converted on the host from a design's f64
//! tables with lookout-design's `QuantiseTables::from_float`, and written as Rust source. A
//! stand-in: lookout-design emits the one format a model's `[fixed_point]`
//! section names (Q31 for the demo models), and the firmware also runs Q15.
//!
//! The signal scales are the caller's. Only gate-free predictor designs are
//! written: predictor and fused tables.

use lookout::{
    Fixed, FixedFusedTables, FixedOutputMap, FixedPredictorTables, FusedTables, Matrix, Plant,
    PredictorTables, Q15, Scales,
};
use lookout_design::Design;
use lookout_design::fixed_point::QuantiseTables as _;
use lookout_design::model::Form;
use nalgebra::DMatrix;
use std::fmt::Write as _;
use std::path::Path;

/// Writes `pub mod <model>_fixed { SCALES, PREDICTOR_Q15, FUSED_Q15 }` for
/// `design` to `out`.
pub fn write<const N: usize, const M: usize, const P: usize>(
    design: &Design,
    scales: Scales<N, M, P>,
    out: &Path,
) -> Result<(), String> {
    let origin = &design.origin;
    if design.gate.is_some() || design.model.observer.form != Form::Predictor {
        return Err(format!(
            "{origin}: only gate-free predictor designs get fixed-point tables here"
        ));
    }
    let plant = Plant {
        a: matrix(&design.ad, origin, "ad")?,
        b: matrix(&design.bd, origin, "bd")?,
        c: matrix(&design.cd, origin, "cd")?,
        d: matrix(&design.dd, origin, "dd")?,
    };
    let gain = design
        .gain
        .as_ref()
        .ok_or_else(|| format!("{origin}: the design has no discrete gain"))?;
    let predictor = PredictorTables {
        plant,
        l: matrix(gain, origin, "gain")?,
        gate: None,
    };
    let fused = FusedTables {
        f: matrix(&design.f, origin, "f")?,
        g: matrix(&design.g, origin, "g")?,
        h: matrix(&design.h, origin, "h")?,
        c: plant.c,
        d: plant.d,
        gate: None,
    };
    let module = format!("{}_fixed", design.model.identifier());
    let mut s = String::new();
    let _ = writeln!(
        s,
        "// Fixed-point tables of {origin} (model file hash {}), converted by\n\
         // lookout's from_float in the firmware's build.rs - do not edit.\n\
         /// Q15 tables of the model `{}` (generated; do not edit).\n\
         #[allow(dead_code)]\npub mod {module} {{",
        design.model_hash, design.model.name
    );
    let _ = writeln!(
        s,
        "    /// Signal scale exponents: |v| < 2^s in the signal's unit.\n    \
         pub const SCALES: lookout::Scales<{N}, {M}, {P}> = {};",
        scales_source(&scales)
    );
    let pq15 = FixedPredictorTables::<Q15, N, M, P>::from_float(&predictor, scales)
        .map_err(|e| format!("{origin}: predictor Q15: {e}"))?;
    let fq15 = FixedFusedTables::<Q15, N, M, P>::from_float(&fused, scales)
        .map_err(|e| format!("{origin}: fused Q15: {e}"))?;
    predictor_source(&mut s, "PREDICTOR_Q15", "Q15", &pq15);
    fused_source(&mut s, "FUSED_Q15", "Q15", &fq15);
    s.push_str("}\n");
    lookout_design::emit::write_atomically(out, s.as_bytes()).map_err(|e| e.to_string())
}

fn matrix<const R: usize, const C: usize>(
    m: &DMatrix<f64>,
    origin: &str,
    name: &str,
) -> Result<Matrix<f64, R, C>, String> {
    if m.shape() != (R, C) {
        return Err(format!(
            "{origin}: {name} is {:?}, the firmware expects ({R}, {C})",
            m.shape()
        ));
    }
    let mut rows = [[0.0; C]; R];
    for (i, row) in rows.iter_mut().enumerate() {
        for (j, v) in row.iter_mut().enumerate() {
            *v = m.get((i, j)).copied().unwrap_or(0.0);
        }
    }
    Ok(Matrix::from_rows(rows))
}

fn q_matrix<Q: Fixed, const R: usize, const C: usize>(m: &Matrix<Q, R, C>, ty: &str) -> String {
    let rows: Vec<String> = m
        .to_rows()
        .iter()
        .map(|row| {
            let entries: Vec<String> = row
                .iter()
                .map(|q| format!("lookout::{ty}({})", q.to_i64()))
                .collect();
            format!("[{}]", entries.join(", "))
        })
        .collect();
    format!("lookout::Matrix::from_rows([{}])", rows.join(", "))
}

fn scales_source<const N: usize, const M: usize, const P: usize>(s: &Scales<N, M, P>) -> String {
    format!(
        "lookout::Scales {{ state: {:?}, input: {:?}, output: {:?} }}",
        s.state, s.input, s.output
    )
}

fn output_source<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    o: &FixedOutputMap<Q, N, M, P>,
    ty: &str,
) -> String {
    format!(
        "lookout::FixedOutputMap {{ c: {}, d: {}, exp: {:?} }}",
        q_matrix(&o.c, ty),
        q_matrix(&o.d, ty),
        o.exp
    )
}

fn predictor_source<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    s: &mut String,
    item: &str,
    ty: &str,
    t: &FixedPredictorTables<Q, N, M, P>,
) {
    let _ = writeln!(
        s,
        "    /// Predictor tables in {ty}.\n    pub static {item}: lookout::Proven<lookout::FixedPredictorTables<lookout::{ty}, {N}, {M}, {P}>> = \
         match (lookout::FixedPredictorTables {{\n        scales: SCALES,\n        a: {},\n        b: {},\n        \
         l: {},\n        exp: {:?},\n        output: {},\n        gate: None,\n    }}).prove() {{\n        Some(t) => t,\n        None => panic!(\"{item}: a row breaks the accumulator headroom rule\"),\n    }};",
        q_matrix(&t.a, ty),
        q_matrix(&t.b, ty),
        q_matrix(&t.l, ty),
        t.exp,
        output_source(&t.output, ty),
    );
}

fn fused_source<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    s: &mut String,
    item: &str,
    ty: &str,
    t: &FixedFusedTables<Q, N, M, P>,
) {
    let _ = writeln!(
        s,
        "    /// Fused tables in {ty} ({} multiply-adds per step).\n    pub static {item}: lookout::Proven<lookout::FixedFusedTables<lookout::{ty}, {N}, {M}, {P}>> = \
         match (lookout::FixedFusedTables {{\n        scales: SCALES,\n        f: {},\n        g: {},\n        \
         h: {},\n        exp: {:?},\n        output: {},\n        gate: None,\n    }}).prove() {{\n        Some(t) => t,\n        None => panic!(\"{item}: a row breaks the accumulator headroom rule\"),\n    }};",
        N * (N + M + P),
        q_matrix(&t.f, ty),
        q_matrix(&t.g, ty),
        q_matrix(&t.h, ty),
        t.exp,
        output_source(&t.output, ty),
    );
}
