//! The Q15/Q31 tables of a design with a `[fixed_point]` section, as Rust
//! source for the runtime's fixed-point types.

use crate::design::Design;
use crate::fixed_point::{FixedDesign, QuantisedTable, format_name};
use crate::model::Form;
use std::fmt::Write as _;

pub(super) fn ints<T: ToString>(values: &[T]) -> String {
    let items: Vec<String> = values.iter().map(ToString::to_string).collect();
    format!("[{}]", items.join(", "))
}

fn qmatrix(ty: &str, t: &QuantisedTable) -> String {
    q_rows(ty, &t.q)
}

/// `lookout::Matrix::from_rows([[lookout::Q31(..), ..], ..])`.
pub(super) fn q_rows(ty: &str, q: &nalgebra::DMatrix<i64>) -> String {
    let rows: Vec<String> = q
        .row_iter()
        .map(|r| {
            let items: Vec<String> = r.iter().map(|v| format!("lookout::{ty}({v})")).collect();
            format!("[{}]", items.join(", "))
        })
        .collect();
    format!("lookout::Matrix::from_rows([{}])", rows.join(", "))
}

fn table<'a>(tables: &'a [QuantisedTable], name: &str) -> Option<&'a QuantisedTable> {
    tables.iter().find(|t| t.name == name)
}

/// Header lines describing the scales and the quantised error dynamics.
pub(super) fn header(fx: &FixedDesign, s: &mut String) {
    let _ = writeln!(
        s,
        "// fixed point: {} (a signal v with scale exponent e is stored as round(v * 2^(b - e)), b the fraction bits)",
        format_name(fx.format)
    );
    let _ = writeln!(
        s,
        "//   state scale exponents {} (proven peaks {})",
        ints(&fx.state_exponents),
        peaks(&fx.state_bounds)
    );
    let _ = writeln!(
        s,
        "//   input scale exponents {}",
        ints(&fx.input_exponents)
    );
    let _ = writeln!(
        s,
        "//   output scale exponents {} (innovation peaks {})",
        ints(&fx.output_exponents),
        peaks(&fx.innovation_bounds)
    );
    let _ = writeln!(
        s,
        "//   quantised spectral radius {:.9} (fused {:.9})",
        fx.spectral_radius, fx.fused_spectral_radius
    );
    let number = crate::fixed_point::accuracy::number_kind(fx.format);
    for d in fx.accuracy.deviations.iter().filter(|d| d.format == number) {
        let _ = writeln!(
            s,
            "//   predicted deviation of the {} tables from the exact observer: {}",
            d.form.name(),
            d.refused.clone().unwrap_or_else(|| peaks(&d.total))
        );
    }
}

fn peaks(values: &[f64]) -> String {
    let items: Vec<String> = values.iter().map(|v| format!("{v:.6e}")).collect();
    format!("[{}]", items.join(", "))
}

/// A `static` of tables proven at compile time to obey the accumulator
/// headroom rule (`lookout::Proven`): `prove` is a `const fn`, so a table
/// that breaks the rule stops the build with the item's name.
pub(crate) fn proven(doc: &str, item: &str, ty: &str, value: &str) -> String {
    format!(
        "    /// {doc}, proven at compile time to leave the accumulator headroom\n    /// (an observer's `proven` constructor adds products plainly on it).\n    pub static {item}: lookout::Proven<lookout::{ty}> = match ({value}).prove() {{\n        Some(tables) => tables,\n        None => panic!(\"{item}: a row breaks the accumulator headroom rule\"),\n    }};"
    )
}

/// The Q tables' items inside the model's module.
pub(super) fn items(d: &Design, fx: &FixedDesign) -> Option<String> {
    let ty = format_name(fx.format);
    let suffix = ty.to_uppercase();
    let mut s = String::new();
    let _ = writeln!(
        s,
        "    /// Signal scale exponents of the {ty} tables: |v| < 2^e for each state, input and output.\n    pub const SCALES: lookout::Scales<N, M, P> = lookout::Scales {{ state: {}, input: {}, output: {} }};",
        ints(&fx.state_exponents),
        ints(&fx.input_exponents),
        ints(&fx.output_exponents)
    );
    s.push_str(&conversions(ty));
    let output = |tables: &[QuantisedTable]| -> Option<String> {
        let (c, dd) = (table(tables, "c")?, table(tables, "d")?);
        Some(format!(
            "lookout::FixedOutputMap {{ c: {}, d: {}, exp: {} }}",
            qmatrix(ty, c),
            qmatrix(ty, dd),
            ints(&c.exponents)
        ))
    };
    let gate = match &d.gate {
        Some(g) if d.p() <= super::gate::MAX_FIXED_GATE_OUTPUTS => {
            super::gate::fixed(ty, g, &fx.output_exponents)?
        }
        _ => "None".to_string(),
    };
    if !fx.form_tables.is_empty() {
        let t = &fx.form_tables;
        let (a, b) = (table(t, "a")?, table(t, "b")?);
        match d.model.observer.form {
            Form::Predictor => {
                let l = table(t, "l")?;
                let _ = writeln!(
                    s,
                    "{}",
                    proven(
                        &format!("Predictor tables in {ty} (integer-only step)"),
                        &format!("PREDICTOR_{suffix}"),
                        &format!("FixedPredictorTables<lookout::{ty}, N, M, P>"),
                        &format!(
                            "lookout::FixedPredictorTables {{\n        scales: SCALES,\n        a: {},\n        b: {},\n        l: {},\n        exp: {},\n        output: {},\n        gate: {gate},\n    }}",
                            qmatrix(ty, a),
                            qmatrix(ty, b),
                            qmatrix(ty, l),
                            ints(&a.exponents),
                            output(t)?
                        )
                    )
                );
            }
            Form::Current => {
                let k = table(t, "k")?;
                let _ = writeln!(
                    s,
                    "{}",
                    proven(
                        &format!("Current-form tables in {ty} (integer-only step)"),
                        &format!("CURRENT_{suffix}"),
                        &format!("FixedCurrentTables<lookout::{ty}, N, M, P>"),
                        &format!(
                            "lookout::FixedCurrentTables {{\n        scales: SCALES,\n        a: {},\n        b: {},\n        exp: {},\n        k: {},\n        k_exp: {},\n        output: {},\n        gate: {gate},\n    }}",
                            qmatrix(ty, a),
                            qmatrix(ty, b),
                            ints(&a.exponents),
                            qmatrix(ty, k),
                            ints(&k.exponents),
                            output(t)?
                        )
                    )
                );
            }
        }
    }
    let t = &fx.fused_tables;
    let f = table(t, "f")?;
    let _ = writeln!(
        s,
        "{}",
        proven(
            &format!("Fused tables in {ty} (integer-only step)"),
            &format!("FUSED_{suffix}"),
            &format!("FixedFusedTables<lookout::{ty}, N, M, P>"),
            &format!(
                "lookout::FixedFusedTables {{\n        scales: SCALES,\n        f: {},\n        g: {},\n        h: {},\n        exp: {},\n        output: {},\n        gate: {gate},\n    }}",
                qmatrix(ty, f),
                qmatrix(ty, table(t, "g")?),
                qmatrix(ty, table(t, "h")?),
                ints(&f.exponents),
                output(t)?
            )
        )
    );
    Some(s)
}

/// The generated module's conversions between physical values and Q values
/// at its `SCALES`, so firmware never handles exponents by hand.
fn conversions(ty: &str) -> String {
    let q = format!("lookout::{ty}");
    let mut s = String::new();
    for (what, name, len, exp) in [
        ("states x", "state", "N", "state"),
        ("inputs u", "input", "M", "input"),
        ("readings y", "output", "P", "output"),
    ] {
        let _ = writeln!(
            s,
            "    /// The {what} in physical units as {ty} values at `SCALES.{exp}`\n    /// (v = q · 2^(e − fraction bits)); saturated beyond full scale; a value that is not a number becomes 0.\n    pub fn {name}_to_q(v: &[f64; {len}]) -> [{q}; {len}] {{\n        to_q(v, &SCALES.{exp})\n    }}"
        );
    }
    for (what, name, len, exp) in [
        ("estimate", "state", "N", "state"),
        ("readings or innovation", "output", "P", "output"),
    ] {
        let _ = writeln!(
            s,
            "    /// {ty} values of the {what} back in physical units.\n    pub fn {name}_from_q(q: &[{q}; {len}]) -> [f64; {len}] {{\n        let mut out = [0.0; {len}];\n        for ((o, q), &e) in out.iter_mut().zip(q).zip(&SCALES.{exp}) {{\n            *o = q.to_real(e);\n        }}\n        out\n    }}"
        );
    }
    let _ = writeln!(
        s,
        "    fn to_q<const K: usize>(v: &[f64; K], e: &[i8; K]) -> [{q}; K] {{\n        let mut out = [{q}(0); K];\n        for ((o, &v), &e) in out.iter_mut().zip(v).zip(e) {{\n            *o = match {q}::from_real(v, e) {{\n                Some(q) => q,\n                None if v > 0.0 => <{q} as lookout::Fixed>::MAX,\n                None if v < 0.0 => <{q} as lookout::Fixed>::MIN,\n                None => {q}(0),\n            }};\n        }}\n        out\n    }}"
    );
    s
}
