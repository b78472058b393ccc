//! Reading a bench log: a CSV file with a header naming columns after the
//! model's inputs and outputs (`input_names`, `output_names`; `u0`, `y0`...
//! without names), an optional `time` column (seconds) and an optional
//! `step` column, one row per sample.
//!
//! An empty reading cell is a missing reading; an input cannot be missing.
//! A last row with every input and reading empty (as `lookout simulate
//! --csv` writes for the final state) is skipped. Every refusal names the
//! file, the line and the column.

use crate::error::CliError;
use crate::sim::plant::Trajectory;
use lookout_design::Design;
use std::path::Path;

/// Largest log read (bytes): at about 12 bytes a number, some millions of
/// samples.
pub const MAX_LOG_BYTES: u64 = 256 << 20;

/// Largest relative difference between a logged time step and the sample
/// period.
pub const TIME_STEP_TOLERANCE: f64 = 0.01;

/// Names of the model's inputs and outputs as log columns.
pub fn column_names(design: &Design) -> (Vec<String>, Vec<String>) {
    let plant = &design.model.plant;
    let named = |names: &Option<Vec<String>>, count: usize, prefix: &str| -> Vec<String> {
        (0..count)
            .map(|j| {
                names
                    .as_ref()
                    .and_then(|v| v.get(j).cloned())
                    .unwrap_or_else(|| format!("{prefix}{j}"))
            })
            .collect()
    };
    (
        named(&plant.input_names, design.m(), "u"),
        named(&plant.output_names, design.p(), "y"),
    )
}

/// Where each wanted column sits in the file.
struct Layout {
    time: Option<usize>,
    inputs: Vec<usize>,
    outputs: Vec<usize>,
}

fn layout(
    name: &str,
    header: &csv::StringRecord,
    design: &Design,
    ignore_others: bool,
) -> Result<Layout, CliError> {
    let (inputs, outputs) = column_names(design);
    let find = |want: &str| header.iter().position(|h| h.trim() == want);
    for (c, h) in header.iter().enumerate() {
        let h = h.trim();
        let known = h == "time" || h == "step" || inputs.iter().chain(&outputs).any(|n| n == h);
        if !known && !ignore_others {
            return Err(CliError::BadInput(format!(
                "{name}: line 1, column {}: unknown column `{h}` (expected time, step, {}; --ignore-other-columns skips others)",
                c + 1,
                inputs
                    .iter()
                    .chain(&outputs)
                    .map(String::as_str)
                    .collect::<Vec<_>>()
                    .join(", ")
            )));
        }
        if header.iter().take(c).any(|o| o.trim() == h) && known {
            return Err(CliError::BadInput(format!(
                "{name}: line 1, column {}: column `{h}` appears twice",
                c + 1
            )));
        }
    }
    let need = |list: &[String]| -> Result<Vec<usize>, CliError> {
        list.iter()
            .map(|w| {
                find(w).ok_or_else(|| {
                    CliError::BadInput(format!(
                        "{name}: line 1: missing column `{w}` (the model's inputs and outputs must all be logged)"
                    ))
                })
            })
            .collect()
    };
    Ok(Layout {
        time: find("time"),
        inputs: need(&inputs)?,
        outputs: need(&outputs)?,
    })
}

fn number(name: &str, line: u64, col: usize, cell: &str) -> Result<f64, CliError> {
    cell.trim()
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .ok_or_else(|| {
            CliError::BadInput(format!(
                "{name}: line {line}, column {}: `{cell}` is not a finite number",
                col + 1
            ))
        })
}

/// Reads the log at `path` for `design` into a trajectory without truth.
pub fn read(path: &Path, design: &Design, ignore_others: bool) -> Result<Trajectory, CliError> {
    let name = path.display().to_string();
    let bytes = lookout_design::emit::read_limited(path, MAX_LOG_BYTES)
        .map_err(|e| CliError::BadInput(format!("{name}: cannot read the log: {e}")))?;
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .comment(Some(b'#'))
        .from_reader(bytes.as_slice());
    let header = reader.headers().map_err(|e| csv_error(&name, &e))?.clone();
    if header.is_empty() || header.iter().all(|h| h.trim().is_empty()) {
        return Err(CliError::BadInput(format!(
            "{name}: line 1: empty file (no header)"
        )));
    }
    let lay = layout(&name, &header, design, ignore_others)?;
    // No truth in a log, and no reading marked as an outlier (unknown).
    let mut tr = Trajectory::empty(design, 0);
    let mut last_time: Option<(u64, f64)> = None;
    let mut pending_blank: Option<u64> = None;
    for record in reader.records() {
        let record = record.map_err(|e| csv_error(&name, &e))?;
        let line = record.position().map_or(0, csv::Position::line);
        if let Some(blank) = pending_blank {
            return Err(CliError::BadInput(format!(
                "{name}: line {blank}: the inputs are empty (only the last row may be empty)"
            )));
        }
        let cell = |c: usize| record.get(c).unwrap_or("").trim();
        if lay
            .inputs
            .iter()
            .chain(&lay.outputs)
            .all(|&c| cell(c).is_empty())
        {
            pending_blank = Some(line);
            continue;
        }
        if let Some(c) = lay.time {
            let t = number(&name, line, c, cell(c))?;
            check_step(&name, design.model.sample_period, last_time, line, c, t)?;
            last_time = Some((line, t));
        }
        for &c in &lay.inputs {
            if cell(c).is_empty() {
                return Err(CliError::BadInput(format!(
                    "{name}: line {line}, column {}: the input is empty (inputs cannot be missing)",
                    c + 1
                )));
            }
            tr.u.push(number(&name, line, c, cell(c))?);
        }
        for &c in &lay.outputs {
            let present = !cell(c).is_empty();
            tr.y.push(if present {
                number(&name, line, c, cell(c))?
            } else {
                0.0
            });
            tr.valid.push(present);
            tr.outlier.push(false);
            tr.dropped += usize::from(!present);
        }
        tr.steps += 1;
    }
    if tr.steps == 0 {
        return Err(CliError::BadInput(format!(
            "{name}: line 2: no samples after the header"
        )));
    }
    Ok(tr)
}

fn check_step(
    name: &str,
    period: f64,
    last: Option<(u64, f64)>,
    line: u64,
    col: usize,
    t: f64,
) -> Result<(), CliError> {
    let Some((_, before)) = last else {
        return Ok(());
    };
    let step = t - before;
    if (step - period).abs() > TIME_STEP_TOLERANCE * period {
        return Err(CliError::BadInput(format!(
            "{name}: line {line}, column {}: time step {step:e} s differs from the sample period {period:e} s by more than {} %",
            col + 1,
            TIME_STEP_TOLERANCE * 100.0
        )));
    }
    Ok(())
}

fn csv_error(name: &str, e: &csv::Error) -> CliError {
    let line = e.position().map_or(0, csv::Position::line);
    let what = match e.kind() {
        csv::ErrorKind::UnequalLengths {
            expected_len, len, ..
        } => {
            format!("{len} cells where the header has {expected_len}")
        }
        csv::ErrorKind::Utf8 { .. } => "not UTF-8 text".to_string(),
        _ => e.to_string(),
    };
    CliError::BadInput(format!("{name}: line {line}: {what}"))
}
