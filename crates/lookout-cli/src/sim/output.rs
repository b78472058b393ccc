//! The report, the JSON object and the CSV time series of `simulate`.

use super::metrics::Metrics;
use super::options::SimOptions;
use super::runtime::{Format, FormatRun};
use super::sweep::SweepSummary;
use super::verdict::{Interval, Verdict};
use super::{RunResult, Setup};
use crate::error::CliError;
use lookout_design::Design;
use lookout_design::design::ObserverForm;
use lookout_sim::plant::Row;
use lookout_sim::text::Sci;
use lookout_sim::{Outputs, SimError, Sink};
use serde_json::{Value, json};
use std::fmt::Write as _;
use std::path::Path;

/// Unit of each estimated state, disturbance states included ("" where
/// the model gives none).
pub fn state_units(design: &Design) -> Vec<String> {
    design.model.state_units()
}

fn verdict(design: &Design, run: &FormatRun, m: &Metrics, t: f64) -> String {
    let tail = format!(
        "{} saturation{}, {} gated, {} re-acquired",
        run.saturations,
        if run.saturations == 1 { "" } else { "s" },
        run.gated,
        run.reacquired
    );
    let names = design.state_names();
    let name = |i: usize| names.get(i).map_or("?", String::as_str);
    match (&m.verdict, m.settling_step) {
        (Verdict::Converged, Some(k)) => format!(
            "CONVERGED: within its band from step {k} ({:.4} s), no bias{}; {tail}",
            k as f64 * t,
            if m.nees.is_some() || m.nis.is_some() {
                ", consistent"
            } else {
                " (consistency not tested)"
            }
        ),
        (Verdict::Biased { state }, _) => format!(
            "BIASED: the error of {} ({:.3e}) does not average out or decay (limit ±{:.3e}); a steady model mismatch or an unmodelled load: model it under [disturbances]; {tail}",
            name(*state),
            m.mean_error.get(*state).copied().unwrap_or(f64::NAN),
            m.mean_limit.get(*state).copied().unwrap_or(f64::NAN)
        ),
        (Verdict::Inconsistent { test }, _) => format!(
            "NOT CONVERGED: settled, but the {test} average is outside its chi-square interval: the error is not what the design predicts; {tail}"
        ),
        (Verdict::NotFinite, _) if run.format == Format::F64 => {
            format!("DIVERGED: the f64 observer's error is not finite: the design fails; {tail}")
        }
        (Verdict::NotFinite, _) => format!("DIVERGED: the error is not finite; {tail}"),
        (Verdict::TooShort { from }, _) => format!(
            "NOT TESTED: within its band, but the initial error is not forgotten before step {from}, after the run's end: no samples for the bias and consistency tests; run more steps or start closer; {tail}"
        ),
        (Verdict::DesignFailed, _) => {
            format!("NOT CONVERGED: the f64 observer diverged, so the design fails; {tail}")
        }
        _ => format!(
            "NOT CONVERGED: the error does not stay within its band over the last quarter of the run; {tail}"
        ),
    }
}

/// The statistics line of a format: NEES, NIS and the mean-error test.
fn statistics(m: &Metrics, n: usize) -> String {
    let show = |name: &str, i: &Option<Interval>| {
        i.map(|i| {
            format!(
                "{name} {:.3} in [{:.3}, {:.3}] ({} samples of {} degrees) {}",
                i.value,
                i.low,
                i.high,
                i.samples,
                i.dof,
                if i.holds() { "ok" } else { "OUTSIDE" }
            )
        })
    };
    let mut parts: Vec<String> = [show("NEES", &m.nees), show("NIS", &m.nis)]
        .into_iter()
        .flatten()
        .collect();
    if let Some(why) = &m.untested {
        parts.push(format!("consistency not tested: {why}"));
    }
    if m.nees.is_none() && m.nis.is_none() {
        return parts.join("; ");
    }
    format!(
        "tests at {:.3} % each ({} % for the run), samples from step {}: {}",
        100.0 * super::reference::test_confidence(n),
        100.0 * super::reference::CONFIDENCE,
        m.tests_from,
        parts.join("; ")
    )
}

/// The readable report.
pub fn text(design: &Design, opts: &SimOptions, r: &RunResult) -> String {
    let t = design.model.sample_period;
    let names = design.state_names();
    let units = state_units(design);
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{}: {} steps of {} s (seed {}), {} observer",
        design.origin,
        r.traj.steps,
        t,
        opts.seed,
        match design.observer().form {
            ObserverForm::Fused => "held (fused)",
            ObserverForm::Predictor { .. } => "predictor",
            ObserverForm::Current { .. } => "current-form",
        }
    );
    let _ = writeln!(
        s,
        "true plant: A and B perturbed by up to {:.3} % (asked {:.3} %); {} readings dropped, {} outliers",
        100.0 * r.perturbation,
        100.0 * opts.mismatch,
        r.traj.dropped,
        r.traj.outliers
    );
    for (i, name) in names.iter().enumerate() {
        let _ = writeln!(
            s,
            "tolerance {name}: {} {} (f64)",
            Sci(r.tolerance.get(i).copied().unwrap_or(f64::NAN), 3),
            units.get(i).map_or("", String::as_str)
        );
    }
    let _ = writeln!(s, "tolerance source: {}", r.tolerance_source);
    for (run, m) in &r.formats {
        let _ = writeln!(s, "\n{}", run.format.name());
        let _ = writeln!(
            s,
            "  {:<14} {:>13} {:>13} {:>13} {:>13} {:>13}  unit",
            "state", "rms error", "final error", "mean error", "band", "max |x̂−x̂64|"
        );
        for (i, name) in names.iter().enumerate() {
            let get = |v: &Vec<f64>| Sci(v.get(i).copied().unwrap_or(f64::NAN), 4);
            let _ = writeln!(
                s,
                "  {:<14} {:>13} {:>13} {:>13} {:>13} {:>13}  {}",
                name,
                get(&m.rms_error),
                get(&m.final_error),
                get(&m.mean_error),
                get(&m.band),
                get(&m.max_deviation_from_f64),
                units.get(i).map_or("", String::as_str)
            );
        }
        let _ = writeln!(s, "  {}", statistics(m, names.len()));
        let _ = writeln!(
            s,
            "  verdict {}: {}",
            run.format.name(),
            verdict(design, run, m, t)
        );
        if let Some(c) = super::predicted::check(design, r, run, m) {
            let _ = writeln!(s, "  {}", c.line());
        }
        if let Some(fixed) = &design.fixed_point {
            let designed = lookout_design::fixed_point::format_name(fixed.format);
            let q = matches!(run.format, Format::Q31 | Format::Q15);
            if q && !run.format.name().eq_ignore_ascii_case(designed) {
                let _ = writeln!(
                    s,
                    "  note: the model's [fixed_point] asks for {designed}; these {} tables use its scales and were not checked for quantised stability by the design",
                    run.format.name()
                );
            }
        }
    }
    for (f, why) in &r.skipped {
        let _ = writeln!(s, "\n{}: not run: {why}", f.name());
    }
    for w in &r.warnings {
        let _ = writeln!(s, "\nwarning: {w}");
    }
    s
}

fn interval_json(i: Option<Interval>) -> Value {
    i.map_or(Value::Null, |i| {
        json!({"value": i.value, "low": i.low, "high": i.high, "samples": i.samples, "dof": i.dof, "holds": i.holds()})
    })
}

/// The `--json` object (stable keys, see docs/simulate.md).
pub fn json(design: &Design, opts: &SimOptions, r: &RunResult) -> String {
    let formats: Vec<Value> = r
        .formats
        .iter()
        .map(|(run, m)| {
            let predicted = super::predicted::check(design, r, run, m);
            json!({
                "format": run.format.name(),
                "predicted_deviation_bound": predicted.as_ref().map(|c| c.bound.clone()),
                "prediction_covers_run": predicted.as_ref().map(|c| c.not_covered.is_none()),
                "exceeds_prediction": predicted.as_ref().map(|c| c.exceeded),
                "rms_error": m.rms_error,
                "final_error": m.final_error,
                "settling_step": m.settling_step,
                "max_deviation_from_f64": m.max_deviation_from_f64,
                "saturations": run.saturations,
                "gated": run.gated,
                "reacquired": run.reacquired,
                "dropped": r.traj.dropped,
                "stable": m.stable,
                "converged": m.converged,
                "verdict": m.verdict.label(),
                "band": m.band,
                "deviation_bound": m.deviation,
                "mean_error": m.mean_error,
                "mean_error_limit": m.mean_limit,
                "nees": interval_json(m.nees),
                "nis": interval_json(m.nis),
                "consistency_untested": m.untested,
                "tests_from_step": m.tests_from,
            })
        })
        .collect();
    let value = json!({
        "model": design.model.name,
        "steps": r.traj.steps,
        "seed": opts.seed,
        "sample_period": design.model.sample_period,
        "state_names": design.state_names(),
        "state_units": state_units(design),
        "tolerance": r.tolerance,
        "tolerance_source": r.tolerance_source,
        "confidence": super::reference::CONFIDENCE,
        "mismatch": opts.mismatch,
        "perturbation": r.perturbation,
        "dropped": r.traj.dropped,
        "outliers": r.traj.outliers,
        "formats": formats,
        "skipped_formats": r.skipped.iter().map(|(f, why)| json!({"format": f.name(), "reason": why})).collect::<Vec<_>>(),
        "warnings": r.warnings,
    });
    format!("{value}\n")
}

/// The CSV time series, written a row at a time as the run produces it:
/// step, time, then per state its truth, then per format and state its
/// estimate and its error, then the inputs and the readings named as in the
/// model (a dropped reading is an empty cell; the last row, the final
/// state, has neither), so that the file is also a log
/// `lookout replay --ignore-other-columns` reads.
struct CsvSink<'w> {
    out: csv::Writer<&'w mut dyn std::io::Write>,
    design: &'w Design,
    path: &'w Path,
    cell: String,
}

impl CsvSink<'_> {
    fn failed(&self, e: &dyn std::fmt::Display) -> SimError {
        SimError::Failure(format!("{}: cannot write: {e}", self.path.display()))
    }

    /// `v` in Rust's shortest round-trip form.
    fn number(&mut self, v: f64) -> Result<(), SimError> {
        self.cell.clear();
        let _ = write!(self.cell, "{v:?}");
        self.out
            .write_field(&self.cell)
            .map_err(|e| self.failed(&e))
    }

    fn text(&mut self, v: &str) -> Result<(), SimError> {
        self.out.write_field(v).map_err(|e| self.failed(&e))
    }

    fn end(&mut self) -> Result<(), SimError> {
        self.out
            .write_record(None::<&[u8]>)
            .map_err(|e| self.failed(&e))
    }
}

impl Sink for CsvSink<'_> {
    fn formats(&mut self, formats: &[Format]) -> Result<(), SimError> {
        let names = self.design.state_names();
        self.text("step")?;
        self.text("time")?;
        for name in &names {
            self.text(&format!("true_{name}"))?;
        }
        for f in formats {
            for name in &names {
                self.text(&format!("{}_estimate_{name}", f.name()))?;
                self.text(&format!("{}_error_{name}", f.name()))?;
            }
        }
        let (inputs, outputs) = crate::replay::log::column_names(self.design);
        for name in inputs.iter().chain(&outputs) {
            self.text(name)?;
        }
        self.end()
    }

    fn row(&mut self, k: usize, row: &Row, estimates: &[f64]) -> Result<(), SimError> {
        let t = self.design.model.sample_period;
        self.text(&k.to_string())?;
        self.number(k as f64 * t)?;
        for &x in &row.truth {
            self.number(x)?;
        }
        for est in estimates.chunks(row.truth.len().max(1)) {
            for (&xh, &x) in est.iter().zip(&row.truth) {
                self.number(xh)?;
                self.number(x - xh)?;
            }
        }
        let (m, p) = (self.design.m(), self.design.p());
        for j in 0..m {
            match row.u.get(j) {
                Some(&v) => self.number(v)?,
                None => self.text("")?,
            }
        }
        for j in 0..p {
            let valid = row.valid.get(j).copied().unwrap_or(false);
            match row.y.get(j).filter(|_| valid) {
                Some(&v) => self.number(v)?,
                None => self.text("")?,
            }
        }
        self.end()
    }
}

/// One run (seed `--seed`) whose rows are written to `path` as they are
/// produced; the file is written whole or not at all (a failed run leaves
/// the target as it was).
pub fn run_with_csv(
    path: &Path,
    design: &Design,
    opts: &SimOptions,
    setup: &Setup,
    series: bool,
) -> Result<RunResult, CliError> {
    let mut outcome = None;
    let written = lookout_design::emit::write_file_with(path, |w| {
        let mut sink = CsvSink {
            out: csv::WriterBuilder::new().from_writer(w),
            design,
            path,
            cell: String::new(),
        };
        let rows: &mut dyn Sink = &mut sink;
        let out = Outputs {
            series,
            rows: Some(rows),
        };
        let run = lookout_sim::run_once(design, opts, setup, opts.seed, out);
        let flushed = sink.out.flush();
        let failed = run.is_err();
        outcome = Some(run);
        if failed {
            return Err(std::io::Error::other("the run failed"));
        }
        flushed
    });
    match (outcome, written) {
        (Some(Err(e)), _) => Err(e.into()),
        (_, Err(e)) => Err(CliError::from(e)),
        (Some(Ok(r)), Ok(_)) => Ok(r),
        (None, Ok(_)) => Err(CliError::Failure(format!(
            "{}: the run was not made",
            path.display()
        ))),
    }
}

/// The sweep report.
pub fn sweep_text(design: &Design, opts: &SimOptions, s: &SweepSummary) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "{}: sweep of {} runs, A and B perturbed by up to {} % each, {} steps each (seed {})",
        design.origin,
        s.runs,
        100.0 * opts.mismatch,
        opts.steps,
        opts.seed
    );
    let names = design.state_names();
    let _ = writeln!(out, "tolerance source: {}", s.tolerance_source);
    for f in &s.formats {
        let _ = writeln!(
            out,
            "\n{}: error bounded in {:.1} % of runs, converged in {:.1} %, biased in {:.1} %",
            f.format.name(),
            100.0 * f.stable as f64 / s.runs as f64,
            100.0 * f.converged as f64 / s.runs as f64,
            100.0 * f.biased as f64 / s.runs as f64
        );
        for w in &f.worst {
            let errs: Vec<String> = names
                .iter()
                .zip(&w.final_error)
                .map(|(n, &e)| format!("{n} {}", Sci(e, 3)))
                .collect();
            let _ = writeln!(
                out,
                "  worst: run {} (seed {}, largest entry change {:.2} %): final error {}; {}",
                w.run,
                w.seed,
                100.0 * w.perturbation,
                errs.join(", "),
                w.verdict
            );
            let _ = writeln!(
                out,
                "    rerun: {}",
                super::sweep::rerun_command(w.seed, opts.mismatch)
            );
        }
    }
    for (f, why) in &s.skipped {
        let _ = writeln!(out, "\n{}: not run: {why}", f.name());
    }
    out
}

/// The sweep as one JSON object (no timing, so it is reproducible).
pub fn sweep_json(design: &Design, opts: &SimOptions, s: &SweepSummary) -> String {
    let formats: Vec<Value> = s
        .formats
        .iter()
        .map(|f| {
            json!({
                "format": f.format.name(),
                "stable_fraction": f.stable as f64 / s.runs as f64,
                "converged_fraction": f.converged as f64 / s.runs as f64,
                "worst": f.worst.iter().map(|w| json!({
                    "run": w.run,
                    "seed": w.seed,
                    "perturbation": w.perturbation,
                    "final_error": w.final_error,
                    "settling_step": w.settling_step,
                    "converged": w.converged,
                    "verdict": w.verdict,
                    "rerun": super::sweep::rerun_command(w.seed, opts.mismatch),
                })).collect::<Vec<_>>(),
                "biased_fraction": f.biased as f64 / s.runs as f64,
            })
        })
        .collect();
    let value = json!({
        "model": design.model.name,
        "runs": s.runs,
        "steps": opts.steps,
        "seed": opts.seed,
        "mismatch": opts.mismatch,
        "tolerance_source": s.tolerance_source,
        "state_names": design.state_names(),
        "formats": formats,
        "skipped_formats": s.skipped.iter().map(|(f, why)| json!({"format": f.name(), "reason": why})).collect::<Vec<_>>(),
    });
    format!("{value}\n")
}
