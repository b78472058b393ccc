//! `--sweep N`: Monte Carlo over random plant perturbations, in parallel.

use super::options::SimOptions;
use super::runtime::Format;
use super::verdict::Verdict;
use super::{RunResult, run_once};
use crate::error::CliError;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use lookout_design::Design;
use rayon::prelude::*;

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

/// The seed of run `i`: run 0 is `--seed` itself, so the worst case of a
/// sweep is reproduced by a single run with the seed it reports.
pub fn run_seed(seed: u64, i: usize) -> u64 {
    seed.wrapping_add(i as u64)
}

/// Most runs a sweep makes.
pub const MAX_SWEEP: usize = 1_000_000;

/// A sweep expected to take longer than this (seconds) says so first.
const ANNOUNCE_AFTER_S: f64 = 10.0;

/// Runs the sweep; a progress line goes to stderr when it is a terminal.
///
/// Run 0 goes first, alone: it fixes the formats and skipped formats, and
/// its duration gives the time estimate printed before a long sweep. The
/// others run in parallel and are folded into the tallies as they finish,
/// so memory does not grow with N.
pub fn run(
    design: &Design,
    opts: &SimOptions,
    setup: &super::Setup,
    runs: usize,
) -> Result<SweepSummary, CliError> {
    let started = std::time::Instant::now();
    let first = run_once(design, opts, setup, run_seed(opts.seed, 0))?;
    let one = started.elapsed().as_secs_f64();
    let threads = rayon::current_num_threads().max(1);
    let estimate = one * (runs - 1) as f64 / threads as f64;
    if estimate > ANNOUNCE_AFTER_S {
        eprintln!(
            "lookout: sweep of {runs} runs: about {estimate:.0} s (one run took {one:.3} s; {threads} threads)"
        );
    }
    let skipped = first.skipped.clone();
    let tolerance_source = first.tolerance_source.clone();
    let empty: Vec<FormatSummary> = first
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
    let progress = Progress::new(runs);
    progress.tick();
    let head = tally(&empty, 0, &first, opts);
    let rest = (1..runs)
        .into_par_iter()
        .map(|i| {
            let r = run_once(design, opts, setup, run_seed(opts.seed, i));
            progress.tick();
            r.map(|r| tally(&empty, i, &r, opts))
        })
        .try_reduce(|| empty.clone(), |a, b| Ok(merge(a, b)))?;
    Ok(SweepSummary {
        runs,
        formats: merge(head, rest),
        skipped,
        tolerance_source,
    })
}

/// The tallies of one run (`empty` gives the formats).
fn tally(
    empty: &[FormatSummary],
    i: usize,
    r: &RunResult,
    opts: &SimOptions,
) -> Vec<FormatSummary> {
    let mut formats = empty.to_vec();
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
    }
    formats
}

/// Two tallies in one: counts added, the worst cases of both kept.
fn merge(mut a: Vec<FormatSummary>, b: Vec<FormatSummary>) -> Vec<FormatSummary> {
    for (x, y) in a.iter_mut().zip(b) {
        x.stable += y.stable;
        x.converged += y.converged;
        x.biased += y.biased;
        x.worst.extend(y.worst);
        // Worst first; ties by run index, so the order is reproducible
        // whatever order the runs finished in.
        x.worst
            .sort_by(|p, q| q.score.total_cmp(&p.score).then(p.run.cmp(&q.run)));
        x.worst.truncate(WORST);
    }
    a
}

/// The progress bar on stderr (indicatif), drawn only when stderr is a
/// terminal whose `TERM` is not `dumb`: pipes, logs and tests see nothing.
struct Progress {
    bar: ProgressBar,
}

impl Progress {
    fn new(runs: usize) -> Self {
        let bar = ProgressBar::with_draw_target(Some(runs as u64), ProgressDrawTarget::stderr());
        if let Ok(style) = ProgressStyle::with_template("sweep [{bar:30}] {pos}/{len}, {eta} left")
        {
            bar.set_style(style.progress_chars("#  "));
        }
        Self { bar }
    }

    /// One run done; after the last the bar stays on screen, complete.
    fn tick(&self) {
        self.bar.inc(1);
        if Some(self.bar.position()) >= self.bar.length() {
            self.bar.finish();
        }
    }
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
