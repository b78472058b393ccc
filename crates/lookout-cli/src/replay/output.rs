//! The report, JSON and CSV of `lookout replay`.

use super::{FormatReplay, LEVEL, Replay};
use crate::error::CliError;
use lookout_design::Design;
use lookout_design::model::{GainSource, NoiseDomain};
use lookout_design::replay::{AlsEstimate, Determined};
use nalgebra::DMatrix;
use serde_json::{Value, json};
use std::fmt::Write as _;
use std::path::Path;

fn matrix_toml(m: &DMatrix<f64>) -> String {
    let rows: Vec<String> = (0..m.nrows())
        .map(|i| {
            let cells: Vec<String> = (0..m.ncols())
                .map(|j| format!("{:.6e}", m[(i, j)]))
                .collect();
            format!("[{}]", cells.join(", "))
        })
        .collect();
    format!("[{}]", rows.join(", "))
}

fn matrix_json(m: &DMatrix<f64>) -> Value {
    json!(
        (0..m.nrows())
            .map(|i| (0..m.ncols()).map(|j| m[(i, j)]).collect::<Vec<_>>())
            .collect::<Vec<_>>()
    )
}

fn domain_name(d: NoiseDomain) -> &'static str {
    match d {
        NoiseDomain::Continuous => "continuous",
        NoiseDomain::Discrete => "discrete",
    }
}

/// The `[observer.kalman]` section to use, with what the data do not
/// determine left out (and said so).
pub fn section(design: &Design, r: &Replay, est: &AlsEstimate) -> String {
    let mut s = String::from("[observer.kalman]\n");
    let map = r.noise_map.as_ref().ok();
    if let GainSource::Kalman(spec) = &design.model.observer.gain_source
        && let Some(g) = &spec.noise_input
    {
        let _ = writeln!(s, "noise_input = {}", matrix_toml(g));
    }
    match &est.q {
        Some(q) => {
            let _ = writeln!(s, "process_noise = {}", matrix_toml(q));
        }
        None => s.push_str("# process_noise: not determined by this log (see the entries above)\n"),
    }
    if let Some(map) = map {
        let _ = writeln!(s, "noise_domain = \"{}\"", domain_name(map.domain));
    }
    match &est.r {
        Some(r) => {
            let _ = writeln!(s, "measurement_noise = {}", matrix_toml(r));
        }
        None => {
            s.push_str("# measurement_noise: not determined by this log (see the entries above)\n")
        }
    }
    s
}

fn entries_text(s: &mut String, name: &str, entries: &[((usize, usize), Determined)]) {
    for ((i, j), d) in entries {
        match d {
            Determined::Value(v) => {
                let _ = writeln!(s, "    {name}[{i}][{j}] = {v:.6e}  (determined)");
            }
            Determined::No => {
                let _ = writeln!(
                    s,
                    "    {name}[{i}][{j}]: NOT DETERMINED by this log (no value suggested)"
                );
            }
        }
    }
}

fn list(v: &[f64]) -> String {
    v.iter()
        .map(|x| format!("{x:.3e}"))
        .collect::<Vec<_>>()
        .join(", ")
}

fn format_text(s: &mut String, r: &Replay, f: &FormatReplay) {
    let _ = writeln!(s, "\n{}:", f.run.format.name());
    if let Some(sum) = &f.summary {
        let _ = writeln!(
            s,
            "  innovation mean [{}] over {} samples",
            list(&sum.mean),
            sum.samples
        );
        let biased = sum.biased();
        let _ = writeln!(
            s,
            "    {:.0} % interval of a zero mean (from the sample variance, white innovations assumed): ±[{}]: {}",
            LEVEL * 100.0,
            list(&sum.mean_half_width),
            if biased.is_empty() {
                "inside".to_string()
            } else {
                format!(
                    "OUTSIDE on output(s) {biased:?}: a bias the model lacks (offset, unmodelled input)"
                )
            }
        );
        let diag: Vec<f64> = (0..sum.covariance.nrows())
            .map(|j| sum.covariance[(j, j)])
            .collect();
        let _ = writeln!(s, "  innovation variance [{}]", list(&diag));
        for (j, (lo, hi)) in sum.variance_interval.iter().enumerate() {
            let predicted = r.predicted.as_ref().map(|p| p[(j, j)]);
            let verdict = match predicted {
                Some(p) if p < *lo || p > *hi => format!(
                    "predicted {p:.3e} OUTSIDE: the design's noise levels do not match the data"
                ),
                Some(p) => format!("predicted {p:.3e} inside"),
                None => "no prediction to compare".to_string(),
            };
            let _ = writeln!(
                s,
                "    output {j}: {:.0} % interval of the true variance [{lo:.3e}, {hi:.3e}]: {verdict}",
                LEVEL * 100.0
            );
        }
        if let Some(i) = sum.nis {
            let (nis, lo, hi, ok) = (i.value, i.low, i.high, i.holds());
            let _ = writeln!(
                s,
                "  time-averaged NIS {nis:.4} (p = {}), {:.0} % chi-square interval [{lo:.4}, {hi:.4}]: {}",
                sum.mean.len(),
                LEVEL * 100.0,
                if ok {
                    "consistent"
                } else {
                    "INCONSISTENT with the design's innovation covariance"
                }
            );
        }
    } else {
        s.push_str("  too few present samples for the innovation statistics\n");
    }
    match &f.whiteness {
        Some(w) => {
            let _ = writeln!(
                s,
                "  autocorrelation, lags 1..{}: {} of {} entries outside ±{:.3e} (white: at most {}; false-alarm rate {:.2} %): {}",
                w.lags,
                w.outside,
                w.tested,
                w.band,
                w.allowed,
                w.false_alarm * 100.0,
                if w.coloured {
                    "COLOURED: the innovations are predictable, so the model (dynamics, inputs or noise levels) is wrong"
                } else {
                    "white (no evidence of a model error)"
                }
            );
        }
        None => s.push_str("  whiteness test cannot be made (a channel has zero variance)\n"),
    }
    if f.run.format.name() != "f64" {
        let _ = write!(s, "  max |x̂ − x̂f64| [{}]", list(&f.max_deviation));
        match (&f.bound, &f.not_covered) {
            (Some(b), None) => {
                let over = f.max_deviation.iter().zip(b).any(|(d, b)| d > b);
                let _ = writeln!(
                    s,
                    ", predicted bound [{}]: {}",
                    list(b),
                    if over {
                        "ABOVE THE BOUND: a bug in the design's analysis"
                    } else {
                        "within"
                    }
                );
            }
            (Some(b), Some(why)) => {
                let _ = writeln!(
                    s,
                    ", predicted bound [{}] does not cover this log: {why}",
                    list(b)
                );
            }
            (None, _) => s.push_str(", no predicted bound for this format\n"),
        }
    }
    if f.run.saturations > 0 || f.run.gated > 0 {
        let _ = writeln!(
            s,
            "  saturations {}, gated readings {}",
            f.run.saturations, f.run.gated
        );
    }
}

/// The readable report.
pub fn text(design: &Design, log: &Path, r: &Replay) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "replay of {} through {}: {} samples ({} readings missing), first {} left out of the statistics (observer transient), {:.0} % confidence throughout",
        log.display(),
        design.origin,
        r.traj.steps,
        r.traj.dropped,
        r.skip,
        LEVEL * 100.0
    );
    for f in &r.formats {
        format_text(&mut s, r, f);
    }
    for (format, why) in &r.skipped {
        let _ = writeln!(s, "\n{}: not run: {why}", format.name());
    }
    s.push_str("\nnoise covariances from the data (autocovariance least squares, Odelson, Rajamani and Rawlings 2006; f64 run):\n");
    match r.formats.first().map(|f| &f.noise) {
        Some(Ok(est)) => {
            let _ = writeln!(
                s,
                "  {} samples, lags 0..{}; column rank {} of {}, condition {:.2e} ({})",
                est.samples,
                r.lags - 1,
                est.rank.0,
                est.rank.1,
                est.condition,
                if est.rank.0 == est.rank.1 {
                    "every entry is determined"
                } else {
                    "some entries are not determined by this model and gain"
                }
            );
            entries_text(&mut s, "process_noise", &est.q_entries);
            entries_text(&mut s, "measurement_noise", &est.r_entries);
            if est.clipped {
                s.push_str("  the least-squares estimate was not positive semidefinite: negative eigenvalues set to zero\n");
            }
            s.push_str("\nsuggested section (same keys as the model file):\n\n");
            s.push_str(&section(design, r, est));
        }
        Some(Err(why)) => {
            let _ = writeln!(s, "  cannot be made: {why}");
        }
        None => s.push_str("  cannot be made: no f64 run\n"),
    }
    s
}

fn entries_json(entries: &[((usize, usize), Determined)]) -> Value {
    json!(entries
        .iter()
        .map(|((i, j), d)| json!({
            "row": i,
            "column": j,
            "determined": matches!(d, Determined::Value(_)),
            "value": match d { Determined::Value(v) => json!(v), Determined::No => Value::Null },
        }))
        .collect::<Vec<_>>())
}

fn format_json(f: &FormatReplay) -> Value {
    let summary = f.summary.as_ref().map(|s| {
        json!({
            "samples": s.samples,
            "mean": s.mean,
            "mean_half_width": s.mean_half_width,
            "covariance": matrix_json(&s.covariance),
            "variance_interval": s.variance_interval.iter().map(|(a, b)| [a, b]).collect::<Vec<_>>(),
            "mean_nis": s.nis.map(|i| i.value),
            "nis_interval": s.nis.map(|i| [i.low, i.high]),
            "nis_consistent": s.nis_consistent(),
        })
    });
    let white = f.whiteness.as_ref().map(|w| {
        json!({
            "lags": w.lags,
            "band": w.band,
            "outside": w.outside,
            "tested": w.tested,
            "allowed": w.allowed,
            "false_alarm_rate": w.false_alarm,
            "coloured": w.coloured,
            "correlation": w.correlation.iter().map(matrix_json).collect::<Vec<_>>(),
        })
    });
    let noise = match &f.noise {
        Ok(est) => json!({
            "samples": est.samples,
            "rank": est.rank.0,
            "columns": est.rank.1,
            "condition": est.condition,
            "process_noise_entries": entries_json(&est.q_entries),
            "measurement_noise_entries": entries_json(&est.r_entries),
            "process_noise": est.q.as_ref().map(matrix_json),
            "measurement_noise": est.r.as_ref().map(matrix_json),
            "projected": est.clipped,
        }),
        Err(why) => json!({ "not_made": why }),
    };
    json!({
        "format": f.run.format.name(),
        "innovations": summary,
        "whiteness": white,
        "noise_fit": noise,
        "max_deviation_from_f64": f.max_deviation,
        "predicted_bound": f.bound,
        "bound_not_covered": f.not_covered,
        "saturations": f.run.saturations,
        "gated": f.run.gated,
    })
}

/// One JSON object.
pub fn json(design: &Design, r: &Replay) -> String {
    let suggested = match r.formats.first().map(|f| &f.noise) {
        Some(Ok(est)) => json!(section(design, r, est)),
        _ => Value::Null,
    };
    let v = json!({
        "model": design.origin,
        "samples": r.traj.steps,
        "missing_readings": r.traj.dropped,
        "skipped_samples": r.skip,
        "confidence": LEVEL,
        "predicted_innovation_covariance": r.predicted.as_ref().map(matrix_json),
        "formats": r.formats.iter().map(format_json).collect::<Vec<_>>(),
        "not_run": r.skipped.iter().map(|(f, why)| json!({"format": f.name(), "why": why})).collect::<Vec<_>>(),
        "suggested_section": suggested,
    });
    let mut out = serde_json::to_string_pretty(&v).unwrap_or_default();
    out.push('\n');
    out
}

/// Writes step, time, then per format its innovation per output (empty
/// where the reading was missing) and its estimate x̂[k|k−1] per state.
pub fn write_csv(path: &Path, design: &Design, r: &Replay) -> Result<(), CliError> {
    let (_, outputs) = super::log::column_names(design);
    let states = design.state_names();
    let (n, p) = (r.traj.n, r.traj.p);
    let mut s = String::from("step,time");
    for f in &r.formats {
        for o in &outputs {
            let _ = write!(s, ",{}_innovation_{o}", f.run.format.name());
        }
        for x in &states {
            let _ = write!(s, ",{}_estimate_{x}", f.run.format.name());
        }
    }
    s.push('\n');
    let t = design.model.sample_period;
    for k in 0..r.traj.steps {
        let _ = write!(s, "{k},{:?}", k as f64 * t);
        for f in &r.formats {
            let e = f.innovations.get(k);
            for j in 0..p {
                match e.and_then(|e| e.get(j)) {
                    Some(v) => {
                        let _ = write!(s, ",{v:?}");
                    }
                    None => s.push(','),
                }
            }
            for v in f.run.estimate.iter().skip(k * n).take(n) {
                let _ = write!(s, ",{v:?}");
            }
        }
        s.push('\n');
    }
    lookout_design::emit::write_file(path, s.as_bytes())
        .map(|_| ())
        .map_err(CliError::from)
}
