//! The convergence check: an observer watches the simulated true plant,
//! started from a state it is not told; after a settling time its error
//! must stay inside a stated tolerance.

use crate::observe::Observe;
use crate::plant::{Simulated, square_wave};
use lookout::{Outcome, Plant};

/// A convergence scenario.
pub struct Scenario<'t, const N: usize, const M: usize, const P: usize> {
    /// The true plant.
    pub plant: &'t Plant<f64, N, M, P>,
    /// Its initial state (the observers start from zero unless told).
    pub x0: [f64; N],
    /// Amplitude of the square-wave input.
    pub amplitude: f64,
    /// Full scale of each state: errors are reported as fractions of it.
    pub full_scale: [f64; N],
    /// Steps in all.
    pub steps: u32,
    /// The error is checked over this many last steps.
    pub window: u32,
}

/// What a run gave.
pub struct Verdict {
    /// Largest |x̂ − x| / full scale over the states at the first step.
    pub initial: f64,
    /// Largest |x̂ − x| / full scale over the states and the window.
    pub settled: f64,
    /// Steps whose measurement was gated or not used.
    pub uncorrected: u32,
    /// Saturated stores over the run.
    pub saturations: u32,
}

impl<const N: usize, const M: usize, const P: usize> Scenario<'_, N, M, P> {
    fn error(&self, x: &[f64; N], estimate: &[f64; N]) -> f64 {
        x.iter()
            .zip(estimate.iter())
            .zip(self.full_scale.iter())
            .map(|((a, b), s)| ((a - b) / s).abs())
            .fold(0.0, f64::max)
    }

    /// Runs `observer` on the scenario.
    pub fn run<O: Observe<N, M, P>>(&self, observer: &mut O) -> Verdict {
        let mut plant = Simulated::new(self.plant, self.x0);
        let mut verdict = Verdict {
            initial: 0.0,
            settled: 0.0,
            uncorrected: 0,
            saturations: 0,
        };
        for k in 0..self.steps {
            let u = square_wave::<M>(k, self.amplitude);
            let y = plant.output(&u);
            let status = observer.step(&observer.input(&u), &observer.reading(&y));
            if status.outcome != Outcome::Corrected {
                verdict.uncorrected += 1;
            }
            verdict.saturations += u32::from(status.saturations);
            plant.advance(&u);
            let e = self.error(&plant.x, &observer.estimate_f64());
            if k == 0 {
                verdict.initial = e;
            }
            if k + self.window >= self.steps {
                verdict.settled = verdict.settled.max(e);
            }
        }
        verdict
    }
}
