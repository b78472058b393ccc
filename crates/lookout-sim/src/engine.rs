//! Every format's observer stepped in lockstep over one source of rows
//! (the simulated plant, or a stored run), in memory that does not grow with
//! the run unless the series are kept.

use crate::SimError;
use crate::metrics::raise;
use crate::plant::{Row, Trajectory};
use crate::runtime::{Format, FormatRun, Stepper, TableSet};
use lookout::Outcome;
use lookout_design::Design;

/// Formats that could not be built, with the reason.
pub type Skipped = Vec<(Format, String)>;

/// Each format's tables (f64 first), owned.
pub type Built = Vec<(Format, Box<dyn TableSet>)>;

/// Builds the tables of each of `formats`. A Q format the design was not
/// made for is skipped, with the reason, when its tables cannot be built.
pub fn build_formats(design: &Design, formats: &[Format]) -> Result<(Built, Skipped), SimError> {
    let designed_format = design.fixed_point.as_ref().map(|f| match f.format {
        lookout_design::model::FixedFormat::Q31 => Format::Q31,
        lookout_design::model::FixedFormat::Q15 => Format::Q15,
    });
    let mut built = Vec::new();
    let mut skipped = Vec::new();
    for &format in formats {
        match crate::sizes::build(design, format) {
            Ok(t) => built.push((format, t)),
            // The other Q format was not designed for: it may not fit.
            Err(SimError::BadInput(why))
                if matches!(format, Format::Q31 | Format::Q15)
                    && Some(format) != designed_format =>
            {
                skipped.push((format, why));
            }
            Err(e) => return Err(e),
        }
    }
    Ok((built, skipped))
}

/// The observers of every built format, stepped together.
pub struct Lockstep<'t> {
    observers: Vec<Box<dyn Stepper + 't>>,
    /// What each format did so far.
    pub runs: Vec<FormatRun>,
    /// The current row's estimates, n per format in order.
    pub estimates: Vec<f64>,
    n: usize,
    keep: bool,
}

impl<'t> Lockstep<'t> {
    /// Observers of `built` started at `x0` (n values); `keep`: store the
    /// estimate series and the gated steps.
    pub fn new(built: &'t Built, x0: &[f64], keep: bool) -> Self {
        let n = x0.len();
        let mut observers = Vec::with_capacity(built.len());
        let mut runs = Vec::with_capacity(built.len());
        for (format, tables) in built {
            let (observer, clamped) = tables.observer(x0);
            observers.push(observer);
            runs.push(FormatRun {
                format: *format,
                estimate: Vec::new(),
                estimate_peak: vec![0.0; n],
                saturations: u64::from(clamped),
                gated: 0,
                gated_steps: Vec::new(),
                reacquired: 0,
            });
        }
        Self {
            observers,
            runs,
            estimates: vec![0.0; n * built.len()],
            n,
            keep,
        }
    }

    /// Reads every format's current estimate into [`Self::estimates`].
    pub fn read(&mut self) {
        let parts = self.estimates.chunks_mut(self.n.max(1));
        for ((obs, run), est) in self.observers.iter().zip(&mut self.runs).zip(parts) {
            obs.estimate_into(est);
            raise(&mut run.estimate_peak, est);
            if self.keep {
                run.estimate.extend_from_slice(est);
            }
        }
    }

    /// Steps every format with step `k`'s inputs and readings.
    pub fn step(&mut self, k: usize, row: &Row) {
        for (obs, run) in self.observers.iter_mut().zip(&mut self.runs) {
            let (status, clamped) = obs.step(&row.u, &row.y, &row.valid);
            run.saturations += u64::from(status.saturations) + u64::from(clamped);
            if status.outcome == Outcome::Gated {
                run.gated += 1;
                if self.keep {
                    run.gated_steps.push(k);
                }
            }
            run.reacquired += usize::from(status.outcome == Outcome::Reacquired);
        }
    }
}

/// Steps the observers of `built` from `x0` over the stored run `traj`,
/// keeping every series.
pub fn over(built: &Built, traj: &Trajectory, x0: &[f64]) -> Vec<FormatRun> {
    let mut all = Lockstep::new(built, x0, true);
    let mut row = Row::default();
    for k in 0..=traj.steps {
        all.read();
        if k < traj.steps {
            traj.row_into(k, &mut row);
            all.step(k, &row);
        }
    }
    all.runs
}
