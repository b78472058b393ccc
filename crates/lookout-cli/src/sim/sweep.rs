//! `--sweep N`: Monte Carlo over random plant perturbations, in parallel.

use super::options::SimOptions;
use super::runtime::Format;
use super::verdict::Verdict;
use super::{RunResult, run_once};
use crate::error::CliError;
use lookout_design::Design;
use rayon::prelude::*;
use std::io::IsTerminal as _;
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

/// How many worst cases are kept per format.
const WORST: usize = 3;

/// One of the worst runs.
#[derive(Debug, Clone)]
pub struct WorstCase {
    /// Run index.
    pub run: usize,
    /// The seed that reproduces it with `lookout simulate --seed`.
    pub seed: u64,
    /// Largest relative change of an entry of A or B.
    pub perturbation: f64,
    /// Final error per state.
    pub final_error: Vec<f64>,
    /// Settling step, if any.
    pub settling_step: Option<usize>,
    /// Whether it converged.
    pub converged: bool,
    /// Its verdict's label.
    pub verdict: &'static str,
    /// max_i |final_error_i| / tolerance_i, the ranking key.
    score: f64,
}

/// Per-format tallies.
#[derive(Debug, Clone)]
pub struct FormatSummary {
    /// The format.
    pub format: Format,
    /// Runs whose error stayed bounded.
    pub stable: usize,
    /// Runs that converged.
    pub converged: usize,
    /// Runs found biased.
    pub biased: usize,
    /// The worst runs, worst first.
    pub worst: Vec<WorstCase>,
}

/// What a sweep found.
#[derive(Debug, Clone)]
pub struct SweepSummary {
    /// Runs made.
    pub runs: usize,
    /// Per format, in the order of a single run.
    pub formats: Vec<FormatSummary>,
    /// Formats not run, with the reason.
    pub skipped: Vec<(Format, String)>,
    /// Where the first run's band came from.
    pub tolerance_source: String,
}

/// A run without its time series (only what the sweep keeps).
fn digest(mut r: RunResult) -> RunResult {
    r.traj.truth = Vec::new();
    r.traj.u = Vec::new();
    r.traj.y = Vec::new();
    r.traj.valid = Vec::new();
    r.traj.outlier = Vec::new();
    for (run, _) in &mut r.formats {
        run.estimate = Vec::new();
        run.gated_steps = Vec::new();
    }
    r
}

/// The seed of run `i`: run 0 is `--seed` itself, so the worst case of a
/// sweep is reproduced by a single run with the seed it reports.
pub fn run_seed(seed: u64, i: usize) -> u64 {
    seed.wrapping_add(i as u64)
}

/// Runs the sweep; a progress line goes to stderr when it is a terminal.
pub fn run(
    design: &Design,
    opts: &SimOptions,
    setup: &super::Setup,
    runs: usize,
) -> Result<SweepSummary, CliError> {
    let done = AtomicUsize::new(0);
    let show = std::io::stderr().is_terminal();
    let shown = Mutex::new(0usize);
    // Each run is reduced to its digest at once: a run's time series are
    // not kept, so memory stays flat in N.
    let results: Vec<Result<RunResult, CliError>> = (0..runs)
        .into_par_iter()
        .map(|i| {
            let r = run_once(design, opts, setup, run_seed(opts.seed, i)).map(digest);
            let k = done.fetch_add(1, Ordering::Relaxed) + 1;
            if show && (k * 50 / runs != (k - 1) * 50 / runs || k == runs) {
                // Threads finish out of order: only a count above the one
                // shown is drawn, so the bar never steps back after 100 %.
                let mut last = shown.lock().unwrap_or_else(|p| p.into_inner());
                if k > *last {
                    *last = k;
                    let bar = "#".repeat(k * 30 / runs);
                    eprint!("\rsweep [{bar:<30}] {k}/{runs}");
                    if k == runs {
                        eprintln!();
                    }
                }
            }
            r
        })
        .collect();
    let mut formats: Vec<FormatSummary> = Vec::new();
    let mut skipped = Vec::new();
    let mut tolerance_source = String::new();
    for (i, r) in results.into_iter().enumerate() {
        let r = r?;
        if i == 0 {
            skipped = r.skipped.clone();
            tolerance_source = r.tolerance_source.clone();
            formats = r
                .formats
                .iter()
                .map(|(run, _)| FormatSummary {
                    format: run.format,
                    stable: 0,
                    converged: 0,
                    biased: 0,
                    worst: Vec::new(),
                })
                .collect();
        }
        for (summary, (_, m)) in formats.iter_mut().zip(&r.formats) {
            summary.stable += usize::from(m.stable);
            summary.converged += usize::from(m.converged);
            summary.biased += usize::from(matches!(m.verdict, Verdict::Biased { .. }));
            let score = m
                .final_error
                .iter()
                .zip(&r.tolerance)
                .map(|(e, t)| {
                    if e.is_finite() {
                        e.abs() / t
                    } else {
                        f64::INFINITY
                    }
                })
                .fold(0.0, f64::max);
            summary.worst.push(WorstCase {
                run: i,
                seed: run_seed(opts.seed, i),
                perturbation: r.perturbation,
                final_error: m.final_error.clone(),
                settling_step: m.settling_step,
                converged: m.converged,
                verdict: m.verdict.label(),
                score,
            });
            // Worst first; ties by run index, so the order is reproducible.
            summary
                .worst
                .sort_by(|a, b| b.score.total_cmp(&a.score).then(a.run.cmp(&b.run)));
            summary.worst.truncate(WORST);
        }
    }
    Ok(SweepSummary {
        runs,
        formats,
        skipped,
        tolerance_source,
    })
}

/// The command that reproduces run `seed` of a sweep exactly: this
/// process's own arguments without `--sweep`, `--seed`, `--mismatch` and
/// `--json`, then the run's seed and the sweep's mismatch.
pub fn rerun_command(seed: u64, mismatch: f64) -> String {
    let mut out = vec!["lookout".to_string()];
    let mut args = std::env::args().skip(1);
    while let Some(a) = args.next() {
        let name = a.split('=').next().unwrap_or("");
        match name {
            "--sweep" | "--seed" | "--mismatch" => {
                if !a.contains('=') {
                    args.next();
                }
            }
            "--json" => {}
            _ if a.is_empty() || a.contains(char::is_whitespace) => out.push(format!("'{a}'")),
            _ => out.push(a),
        }
    }
    out.push(format!("--seed {seed} --mismatch {mismatch}"));
    out.join(" ")
}
