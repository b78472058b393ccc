//! The Q15/Q31 tables of a design with a `[fixed_point]` section, as Rust
//! source for the runtime's fixed-point types.

use crate::fixed_point::{FixedDesign, QForm, QTables, QuantisedTable, format_name};
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

/// Header lines describing the scales and the quantised error dynamics:
/// the design's proofs when `q` is at the design's scales, else the scales
/// the emitting build gave.
pub(super) fn header(fx: Option<&FixedDesign>, q: &QTables, s: &mut String) {
    let _ = writeln!(
        s,
        "// fixed point: {} (a signal v with scale exponent e is stored as round(v * 2^(b - e)), b the fraction bits)",
        format_name(q.format)
    );
    let Some(fx) = fx.filter(|fx| fx.tables.scales == q.scales) else {
        let sc = &q.scales;
        let _ = writeln!(
            s,
            "//   scale exponents given by the emitting build (no proven peak, no predicted deviation): state {}, input {}, output {}",
            ints(&sc.state),
            ints(&sc.input),
            ints(&sc.output)
        );
        return;
    };
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
    if q.format == fx.format {
        let _ = writeln!(
            s,
            "//   quantised spectral radius {:.9} (fused {:.9})",
            fx.spectral_radius, fx.fused_spectral_radius
        );
    }
    let number = crate::fixed_point::accuracy::number_kind(q.format);
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
pub(super) fn items(q: &QTables) -> String {
    let ty = format_name(q.format);
    let suffix = ty.to_uppercase();
    let mut s = String::new();
    let _ = writeln!(
        s,
        "    /// Signal scale exponents of the {ty} tables: |v| < 2^e for each state, input and output.\n    pub const SCALES: lookout::Scales<N, M, P> = lookout::Scales {{ state: {}, input: {}, output: {} }};",
        ints(&q.scales.state),
        ints(&q.scales.input),
        ints(&q.scales.output)
    );
    s.push_str(&conversions(ty));
    let [c, dd] = &q.output;
    let output = format!(
        "lookout::FixedOutputMap {{ c: {}, d: {}, exp: {} }}",
        qmatrix(ty, c),
        qmatrix(ty, dd),
        ints(&c.exponents)
    );
    let gate = q
        .gate
        .as_ref()
        .map_or_else(|| "None".to_string(), |g| super::gate::fixed_literal(ty, g));
    let own = match &q.form {
        QForm::Predictor { a, b, l } => Some((
            format!("Predictor tables in {ty} (integer-only step)"),
            format!("PREDICTOR_{suffix}"),
            "FixedPredictorTables",
            format!(
                "a: {},\n        b: {},\n        l: {},\n        exp: {}",
                qmatrix(ty, a),
                qmatrix(ty, b),
                qmatrix(ty, l),
                ints(&a.exponents)
            ),
        )),
        QForm::Current { a, b, k } => Some((
            format!("Current-form tables in {ty} (integer-only step)"),
            format!("CURRENT_{suffix}"),
            "FixedCurrentTables",
            format!(
                "a: {},\n        b: {},\n        exp: {},\n        k: {},\n        k_exp: {}",
                qmatrix(ty, a),
                qmatrix(ty, b),
                ints(&a.exponents),
                qmatrix(ty, k),
                ints(&k.exponents)
            ),
        )),
        QForm::Held => None,
    };
    let [f, g, h] = &q.fused;
    let fused = (
        format!("Fused tables in {ty} (integer-only step)"),
        format!("FUSED_{suffix}"),
        "FixedFusedTables",
        format!(
            "f: {},\n        g: {},\n        h: {},\n        exp: {}",
            qmatrix(ty, f),
            qmatrix(ty, g),
            qmatrix(ty, h),
            ints(&f.exponents)
        ),
    );
    for (doc, item, table, fields) in own.into_iter().chain([fused]) {
        let _ = writeln!(
            s,
            "{}",
            proven(
                &doc,
                &item,
                &format!("{table}<lookout::{ty}, N, M, P>"),
                &format!(
                    "lookout::{table} {{\n        scales: SCALES,\n        {fields},\n        output: {output},\n        gate: {gate},\n    }}"
                )
            )
        );
    }
    s
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
