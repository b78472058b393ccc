//! Rust source for the runtime's tables: one module per model, with one
//! `static` per observer, ready to `include!`.
//!
//! The generator is pure: [`write_tables`] writes to any `io::Write`, and
//! the same design always gives the same bytes. Floats are printed so that
//! they read back exactly. [`emit_file`] is the build-script entry point: it
//! writes the whole file or nothing.
//!
//! What a file holds: one `pub mod` (named after the model, or as
//! [`EmitOptions::module`] says) with the sizes `N`, `M`, `P`, the sample
//! period, index modules of the named states, inputs and outputs, and the
//! float tables of every observer form the design has (`PREDICTOR` or
//! `CURRENT`, and `FUSED`), gate included, in the chosen scalar. When the
//! model has a `[fixed_point]` section the same module also holds the
//! design's Q15 or Q31 tables (`PREDICTOR_Q31`, `FUSED_Q31`, … as
//! `lookout::Proven` statics), built by the design's one quantiser
//! (`fixed_point::quantise`), with their signal scales.

mod file;
mod fixed;
pub(crate) mod gate;
mod literal;

pub use file::{Written, read_limited, read_text_limited, write_file, write_file_with};
pub use literal::Scalar;

use crate::design::{Design, DesignError, ObserverForm, design_file};
use crate::fixed_point::gate::FloatGate;
use crate::fixed_point::{QScales, QTables, format_name};
use crate::model::{FixedFormat, Form, GainSource};
use nalgebra::DMatrix;
use std::borrow::Cow;
use std::fmt::Write as _;
use std::io;
use std::path::Path;

/// How to emit a design's tables: the scalar of the float tables, the
/// name of the generated module, and which Q tables it carries, so that one
/// build can emit several variants of one model (f32 and f64 tables, Q31
/// and Q15 tables of one model in separate modules).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct EmitOptions {
    /// The scalar of the float tables.
    pub scalar: Scalar,
    /// The module name; `None` takes the model's name (`-` becoming `_`).
    pub module: Option<String>,
    /// The Q format of the fixed-point tables; `None` takes the model's
    /// `[fixed_point] format` (no Q tables without that section, unless
    /// `scales` are given).
    pub fixed: Option<FixedFormat>,
    /// Signal scales for the Q tables instead of the design's proven ones:
    /// the emitting build then owns the argument that signals stay inside
    /// them (a step saturates and counts where they do not).
    pub scales: Option<QScales>,
}

impl EmitOptions {
    /// Tables in `scalar`, in a module named after the model.
    pub fn new(scalar: Scalar) -> Self {
        Self {
            scalar,
            module: None,
            fixed: None,
            scales: None,
        }
    }

    /// The same, with Q tables in `format` (at the design's proven scales,
    /// unless [`EmitOptions::scales`] gives others).
    pub fn fixed(self, format: FixedFormat) -> Self {
        Self {
            fixed: Some(format),
            ..self
        }
    }

    /// The same, with the Q tables at the signal scales `state`, `input`,
    /// `output` (exponents e with |v| < 2^e) instead of the design's.
    pub fn scales(self, state: &[i8], input: &[i8], output: &[i8]) -> Self {
        Self {
            scales: Some(QScales {
                state: state.to_vec(),
                input: input.to_vec(),
                output: output.to_vec(),
            }),
            ..self
        }
    }

    /// The same, in a module named `module`.
    pub fn module(self, module: &str) -> Self {
        Self {
            module: Some(module.to_string()),
            ..self
        }
    }
}

/// Designs the model at `model_path` and writes its tables to `out_path`
/// (what the file holds: see the [module](self) docs).
///
/// The file is written to a new temporary file beside `out_path` and renamed
/// into place, so a failure never leaves a partial file; anything but a
/// regular file (or a link to one) at `out_path` is refused (see
/// [`write_file`]). Returns the design
/// (its warnings are for the caller to show).
///
/// In a firmware crate's `build.rs`:
///
/// ```no_run
/// # fn main() -> Result<(), Box<dyn std::error::Error>> {
/// use std::path::{Path, PathBuf};
/// let out = PathBuf::from(std::env::var("OUT_DIR")?).join("conveyor.rs");
/// let model = Path::new("../conveyor.toml");
/// println!("cargo:rerun-if-changed={}", model.display());
/// let design = lookout_design::emit_file(model, &out, lookout_design::Scalar::F32)?;
/// for w in &design.warnings {
///     println!("cargo:warning={w}");
/// }
/// # Ok(()) }
/// ```
///
/// and in the firmware: `include!(concat!(env!("OUT_DIR"), "/conveyor.rs"));`
/// then `conveyor::PREDICTOR` (or `CURRENT`, `FUSED`).
pub fn emit_file(
    model_path: &Path,
    out_path: &Path,
    scalar: Scalar,
) -> Result<Design, DesignError> {
    emit_file_with(model_path, out_path, &EmitOptions::new(scalar))
}

/// [`emit_file`] with [`EmitOptions`]: e.g. f32 and f64 tables of one
/// model in one build, in modules `conveyor_f32` and `conveyor_f64`.
pub fn emit_file_with(
    model_path: &Path,
    out_path: &Path,
    options: &EmitOptions,
) -> Result<Design, DesignError> {
    let design = design_file(model_path)?;
    let text = tables_source_with(&design, options)?;
    write_atomically(out_path, text.as_bytes())?;
    Ok(design)
}

/// Writes `bytes` to `path` through a temporary file in the same directory
/// (see [`write_file`], which also says where the bytes went).
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), DesignError> {
    write_file(path, bytes).map(|_| ())
}

/// Writes the Rust source of `design`'s tables in `scalar` to `out`.
///
/// Fails with `InvalidData` if an entry does not fit `scalar`.
pub fn write_tables(design: &Design, scalar: Scalar, out: &mut impl io::Write) -> io::Result<()> {
    let text = tables_source(design, scalar)
        .map_err(|e| io::Error::new(io::ErrorKind::InvalidData, e.to_string()))?;
    out.write_all(text.as_bytes())
}

/// The Rust source of `design`'s tables in `scalar`; refused (an input
/// error) when an entry does not fit `scalar`.
pub fn tables_source(design: &Design, scalar: Scalar) -> Result<String, DesignError> {
    tables_source_with(design, &EmitOptions::new(scalar))
}

/// [`tables_source`] with [`EmitOptions`]; a module name that is not a Rust
/// identifier is refused (an input error naming the key `module`).
pub fn tables_source_with(design: &Design, options: &EmitOptions) -> Result<String, DesignError> {
    let module = match &options.module {
        Some(name) => {
            if let Some(problem) = crate::model::identifier_problem(name) {
                return Err(DesignError::Unsupported {
                    origin: design.origin.clone(),
                    key: "module",
                    message: format!("module name '{name}' is not a Rust identifier: {problem}"),
                });
            }
            name.clone()
        }
        None => design.model.identifier(),
    };
    let scalar = options.scalar;
    let q = q_tables(design, options)?;
    source(design, scalar, &module, q.as_deref()).ok_or_else(|| DesignError::Unsupported {
        origin: design.origin.clone(),
        key: "scalar",
        message: match scalar {
            Scalar::F32 => {
                "a table entry does not fit f32; emit f64 tables (--scalar f64)".to_string()
            }
            // Not reached for a finished design (every number is checked
            // finite), but never advise a wider type where there is none.
            Scalar::F64 => {
                "a table entry is not a finite f64; rescale the model's units".to_string()
            }
        },
    })
}

/// The Q tables the module carries (see [`EmitOptions`]): the design's, the
/// other format's at the design's scales, or new ones at given scales.
fn q_tables<'a>(
    d: &'a Design,
    options: &EmitOptions,
) -> Result<Option<Cow<'a, QTables>>, DesignError> {
    let fx = d.fixed_point.as_ref();
    let refuse = |key: &'static str, message: String| DesignError::Unsupported {
        origin: d.origin.clone(),
        key,
        message,
    };
    let Some(format) = options.fixed.or(fx.map(|fx| fx.format)) else {
        return Ok(None);
    };
    if let Some(scales) = &options.scales {
        let state_names = d.state_names();
        let float = crate::fixed_point::FloatTables::of(d, &state_names);
        let gate = d.gate.as_ref().map(FloatGate::from);
        return QTables::build(&float, gate.as_ref(), format, scales.clone())
            .map(|q| Some(Cow::Owned(q)))
            .map_err(|e| refuse("scales", format!("at the given scales: {e}")));
    }
    let Some(fx) = fx else {
        return Err(refuse(
            "fixed_point",
            format!(
                "{} tables need signal scales: the model has no [fixed_point] section to prove them from, and none were given",
                format_name(format)
            ),
        ));
    };
    fx.tables_in(format)
        .map(|q| Some(Cow::Borrowed(q)))
        .map_err(|why| refuse("fixed_point.format", why))
}

fn source(d: &Design, scalar: Scalar, module: &str, q: Option<&QTables>) -> Option<String> {
    let ty = scalar.rust_type();
    let mut s = String::new();
    header(d, q, &mut s);
    let _ = writeln!(
        s,
        "/// Observer tables of the model `{}` (generated; do not edit).",
        d.model.name
    );
    let _ = writeln!(
        s,
        "#[allow(dead_code, clippy::approx_constant, clippy::excessive_precision)]"
    );
    let _ = writeln!(s, "pub mod {module} {{");
    let _ = writeln!(
        s,
        "    /// Number of states.\n    pub const N: usize = {};",
        d.n()
    );
    let _ = writeln!(
        s,
        "    /// Number of inputs.\n    pub const M: usize = {};",
        d.m()
    );
    let _ = writeln!(
        s,
        "    /// Number of outputs.\n    pub const P: usize = {};",
        d.p()
    );
    let _ = writeln!(
        s,
        "    /// Sample period in seconds.\n    pub const SAMPLE_PERIOD: f64 = {:?};",
        d.model.sample_period
    );
    let plant = &d.model.plant;
    names(&mut s, "state", "the estimate", state_entries(d).as_deref());
    names(
        &mut s,
        "input",
        "the input vector",
        plain(plant.input_names.as_deref()).as_deref(),
    );
    names(
        &mut s,
        "output",
        "the measurement vector",
        plain(plant.output_names.as_deref()).as_deref(),
    );

    let gate = match &d.gate {
        None => "None".to_string(),
        Some(g) => gate::float(scalar, g)?,
    };
    let plant_item = format!(
        "lookout::Plant {{\n        a: {},\n        b: {},\n        c: {},\n        d: {},\n    }}",
        matrix(scalar, &d.ad)?,
        matrix(scalar, &d.bd)?,
        matrix(scalar, &d.cd)?,
        matrix(scalar, &d.dd)?,
    );
    let own = match d.observer().form {
        ObserverForm::Predictor { l } => Some((
            l,
            "PREDICTOR",
            "PredictorTables",
            "l",
            "Predictor (Luenberger) tables: x̂⁺ = A x̂ + B u + L (y − C x̂ − D u).",
        )),
        ObserverForm::Current { k } => Some((
            k,
            "CURRENT",
            "CurrentTables",
            "k",
            "Current-form tables: x̂[k|k] = x̂[k|k−1] + K r, x̂[k+1|k] = A x̂[k|k] + B u.",
        )),
        ObserverForm::Fused => None,
    };
    if let Some((gain, item, table, field, doc)) = own {
        let _ = writeln!(
            s,
            "    /// {doc}\n    pub static {item}: lookout::{table}<{ty}, N, M, P> = lookout::{table} {{\n        plant: {},\n        {field}: {},\n        gate: {gate},\n    }};",
            plant_item.replace("\n", "\n    "),
            matrix(scalar, gain)?,
        );
    }
    let _ = writeln!(
        s,
        "    /// Fused tables: x̂⁺ = F x̂ + G u + H y ({} multiply-adds per step).\n    pub static FUSED: lookout::FusedTables<{ty}, N, M, P> = lookout::FusedTables {{\n        f: {},\n        g: {},\n        h: {},\n        c: {},\n        d: {},\n        gate: {gate},\n    }};",
        d.n() * (d.n() + d.m() + d.p()),
        matrix(scalar, &d.f)?,
        matrix(scalar, &d.g)?,
        matrix(scalar, &d.h)?,
        matrix(scalar, &d.cd)?,
        matrix(scalar, &d.dd)?,
    );
    if let Some(q) = q {
        s.push_str(&fixed::items(q));
    }
    s.push_str("}\n");
    Some(s)
}

fn matrix(scalar: Scalar, m: &DMatrix<f64>) -> Option<String> {
    Some(format!(
        "lookout::Matrix::from_rows({})",
        literal::rows(scalar, m)?
    ))
}

fn header(d: &Design, q: Option<&QTables>, s: &mut String) {
    let source = match &d.model.observer.gain_source {
        GainSource::Poles(_) => "s-plane poles mapped by z = exp(sT)",
        GainSource::DiscretePoles(_) => "z-plane poles",
        GainSource::Gain { .. } => "a continuous gain",
        GainSource::Kalman(_) => "steady-state Kalman design",
    };
    let form = match d.model.observer.form {
        Form::Predictor => "predictor",
        Form::Current => "current",
    };
    let _ = writeln!(
        s,
        "// Generated by lookout-design {} from {} - do not edit; regenerate instead.",
        env!("CARGO_PKG_VERSION"),
        d.origin
    );
    let _ = writeln!(
        s,
        "// model `{}`: {form} form, gain from {source}",
        d.model.name
    );
    let _ = writeln!(s, "// sample period: {:?} s", d.model.sample_period);
    let _ = writeln!(s, "// model file hash (SHA-256): {}", d.model_hash);
    let _ = writeln!(s, "// error poles, z (and s = ln(z)/T in rad/s):");
    for (z, sp) in d.error_poles.iter().zip(d.error_poles_s()) {
        let s_text = sp.map_or_else(
            || "none (z = 0)".to_string(),
            |p| format!("{:.6} {:+.6}i", p.re, p.im),
        );
        let _ = writeln!(s, "//   {:.9} {:+.9}i   (s: {s_text})", z.re, z.im);
    }
    let _ = writeln!(s, "// spectral radius: {:.9}", d.spectral_radius);
    if let Some(q) = q {
        fixed::header(d.fixed_point.as_ref(), q, s);
    }
    s.push('\n');
}

/// Each name with its doc line, `` `name`. ``.
fn plain(names: Option<&[String]>) -> Option<Vec<(String, String)>> {
    names.map(|names| {
        names
            .iter()
            .map(|name| (name.clone(), format!("`{name}`.")))
            .collect()
    })
}

/// The estimated states' names and doc lines: the plant's names, if given,
/// and with `[disturbances]` every state (unnamed plant states as `x0`, …)
/// with a line saying what each disturbance state is.
fn state_entries(d: &Design) -> Option<Vec<(String, String)>> {
    let plant = &d.model.plant;
    let Some(dist) = d
        .model
        .disturbances
        .as_ref()
        .filter(|x| x.state_count() > 0)
    else {
        return plain(plant.state_names.as_deref());
    };
    let names = d.state_names();
    let notes = dist.state_descriptions();
    let first_disturbance = names.len().saturating_sub(notes.len());
    Some(
        names
            .iter()
            .enumerate()
            .map(|(i, name)| {
                let doc = match i.checked_sub(first_disturbance).and_then(|j| notes.get(j)) {
                    Some(note) => format!("`{name}`: estimated {note}."),
                    None => format!("`{name}`."),
                };
                (name.clone(), doc)
            })
            .collect(),
    )
}

fn names(s: &mut String, module: &str, what: &str, entries: Option<&[(String, String)]>) {
    let Some(entries) = entries else { return };
    let _ = writeln!(
        s,
        "    /// Index of each entry in {what}.\n    pub mod {module} {{"
    );
    for (i, (name, doc)) in entries.iter().enumerate() {
        let _ = writeln!(
            s,
            "        /// {doc}\n        pub const {}: usize = {i};",
            name.to_uppercase()
        );
    }
    let _ = writeln!(s, "    }}");
}
