//! Figures of merit of one format's run against the truth, the f64 observer
//! and the design's statistics ([`Reference`]), and its [`Verdict`],
//! accumulated step by step in memory that does not grow with the run.
//!
//! Two passes over the same run (the plant regenerated from its seed, so
//! nothing is stored). The first ([`Running`]) keeps running sums, peaks
//! over fixed windows (quarters, eighths, the last quarter) and maxima: the
//! RMS and final error, stability, the deviation from f64, the signal peaks
//! the deviation bound needs, and with them the band. The settling step
//! needs that band and the last step outside it, which only the end of the
//! run tells; the second pass ([`Settling`]) keeps the last step outside
//! the band and the settled statistics (mean error, NEES, NIS) summed from
//! the step after it, restarting them at every step outside, so at the end
//! they are exactly the sums over the settled samples, in the same order as
//! over a stored series. With `--tolerance` (a band known before the run)
//! the second pass is the same code run once more.

use super::reference::{Reference, test_confidence};
use super::runtime::FormatRun;
use super::verdict::{Interval, Verdict, normal_quantile};
use lookout_design::Design;
use nalgebra::{Cholesky, DMatrix, DVector, Dyn};

/// One format's results.
#[derive(Debug, Clone)]
pub struct Metrics {
    /// RMS of the estimation error over steps 0..=steps, per state.
    pub rms_error: Vec<f64>,
    /// Estimation error x − x̂ after the last step, per state.
    pub final_error: Vec<f64>,
    /// First step from which every state's error stays within its band
    /// (`None`: never).
    pub settling_step: Option<usize>,
    /// Largest |x̂ − x̂_f64| per state.
    pub max_deviation_from_f64: Vec<f64>,
    /// Whether the error stays bounded: finite, and its peak over the last
    /// quarter of the run no larger than over the third quarter (plus the
    /// band), an empirical test.
    pub stable: bool,
    /// The verdict is [`Verdict::Converged`].
    pub converged: bool,
    /// This format's band per state.
    pub band: Vec<f64>,
    /// Bound on the deviation from the exact observer per state (see
    /// [`deviation`](crate::band::deviation)).
    pub deviation: Vec<f64>,
    /// Per state: with noise the mean error over the settled samples;
    /// without, the peak |error| over the last eighth of the run.
    pub mean_error: Vec<f64>,
    /// The limit on |mean_error| per state.
    pub mean_limit: Vec<f64>,
    /// Time-averaged NEES and its interval (with noise).
    pub nees: Option<Interval>,
    /// Time-averaged NIS and its interval (with noise).
    pub nis: Option<Interval>,
    /// Why a consistency test was not made.
    pub untested: Option<String>,
    /// The first step of the samples the mean-error, NEES and NIS tests
    /// use: for a settled run the later of settling and the step the
    /// initial error is forgotten by
    /// ([`Reference::forgotten`](crate::reference::Reference::forgotten));
    /// for a run that does not settle, the start of its last quarter.
    pub tests_from: usize,
    /// The verdict.
    pub verdict: Verdict,
}

/// Largest |value| per channel of a run's inputs and readings (the float
/// deviation bound takes them as the signal scales).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Peaks {
    /// Per input.
    pub input: Vec<f64>,
    /// Per output (every reading, dropped or not).
    pub reading: Vec<f64>,
}

/// Raises each `peak` to the |value| beside it (NaN is passed over, as by
/// `f64::max`).
pub fn raise(peak: &mut [f64], values: &[f64]) {
    for (o, v) in peak.iter_mut().zip(values) {
        *o = o.max(v.abs());
    }
}

impl Peaks {
    /// Zero peaks for m inputs and p outputs.
    pub fn new(m: usize, p: usize) -> Self {
        Self {
            input: vec![0.0; m],
            reading: vec![0.0; p],
        }
    }

    /// The peaks of a stored run.
    pub fn of(traj: &super::plant::Trajectory) -> Self {
        let mut out = Self::new(traj.m, traj.p);
        for row in traj.u.chunks(traj.m.max(1)) {
            raise(&mut out.input, row);
        }
        for row in traj.y.chunks(traj.p.max(1)) {
            raise(&mut out.reading, row);
        }
        out
    }
}

/// The positions of a run of `len` = steps + 1 samples that the statistics
/// look at.
#[derive(Debug, Clone, Copy)]
struct Windows {
    len: usize,
    /// Length of the eighths compared by the noise-free bias test.
    eighth: usize,
}

impl Windows {
    fn new(len: usize) -> Self {
        Self {
            len,
            eighth: (len / 8).max(1),
        }
    }
    fn quarter(self, q: usize, k: usize) -> bool {
        (q * self.len / 4..(q + 1) * self.len / 4).contains(&k)
    }
    fn last_quarter(self, k: usize) -> bool {
        k >= self.len - self.len / 4
    }
    fn eighth_before_last(self, k: usize) -> bool {
        let from = self.len.saturating_sub(2 * self.eighth);
        (from..(from + self.eighth).min(self.len)).contains(&k)
    }
    fn last_eighth(self, k: usize) -> bool {
        k >= self.len - self.eighth
    }
}

/// The first pass over one format's run.
#[derive(Debug, Clone)]
pub struct Running {
    at: Windows,
    sum_sq: Vec<f64>,
    scaled_sum_sq: Vec<ScaledSumSq>,
    final_error: Vec<f64>,
    third_quarter: Vec<f64>,
    fourth_quarter: Vec<f64>,
    finite: bool,
    before: Vec<f64>,
    after: Vec<f64>,
    /// Largest |error| per state over the last quarter (the f64 run's is
    /// the noise-free band's residual).
    pub residual: Vec<f64>,
    max_deviation_from_f64: Vec<f64>,
}

/// A sum of squares kept as scale² · ssq with scale the largest |v| seen,
/// so it cannot overflow while every v is finite (the scaled update of
/// LAPACK's `dlassq`; Anderson et al., *LAPACK Users' Guide*, 3rd ed.,
/// SIAM 1999). Used for the RMS when the plain sum overflows (errors near
/// 1e154 and above); below that the plain sum is kept, bit for bit.
#[derive(Debug, Clone, Copy, Default)]
struct ScaledSumSq {
    scale: f64,
    ssq: f64,
}

impl ScaledSumSq {
    fn add(&mut self, v: f64) {
        let a = v.abs();
        if a == 0.0 {
            return;
        }
        if !a.is_finite() {
            self.scale = a;
            self.ssq = 1.0;
        } else if self.scale < a {
            let r = self.scale / a;
            self.ssq = 1.0 + self.ssq * r * r;
            self.scale = a;
        } else {
            let r = a / self.scale;
            self.ssq += r * r;
        }
    }

    /// √(Σv² / len).
    fn rms(&self, len: usize) -> f64 {
        self.scale * (self.ssq / len as f64).sqrt()
    }
}

fn raise_if(on: bool, peak: &mut [f64], e: &[f64]) {
    if on {
        raise(peak, e);
    }
}

impl Running {
    /// Nothing seen yet, for `n` states and `steps` steps.
    pub fn new(n: usize, steps: usize) -> Self {
        let zeros = vec![0.0; n];
        Self {
            at: Windows::new(steps + 1),
            // The neutral element of f64's `Sum`, so the sums equal those
            // of a stored series bit for bit.
            sum_sq: vec![-0.0; n],
            scaled_sum_sq: vec![ScaledSumSq::default(); n],
            final_error: vec![f64::NAN; n],
            third_quarter: zeros.clone(),
            fourth_quarter: zeros.clone(),
            finite: true,
            before: zeros.clone(),
            after: zeros.clone(),
            residual: zeros.clone(),
            max_deviation_from_f64: zeros,
        }
    }

    /// Sample `k`: the error `e` = x − x̂ and the estimate beside the f64
    /// run's.
    pub fn add(&mut self, k: usize, e: &[f64], estimate: &[f64], f64_estimate: &[f64]) {
        let at = self.at;
        for ((s, scaled), v) in self.sum_sq.iter_mut().zip(&mut self.scaled_sum_sq).zip(e) {
            *s += v * v;
            scaled.add(*v);
        }
        self.final_error.copy_from_slice(e);
        raise_if(at.quarter(2, k), &mut self.third_quarter, e);
        raise_if(at.quarter(3, k), &mut self.fourth_quarter, e);
        raise_if(at.eighth_before_last(k), &mut self.before, e);
        raise_if(at.last_eighth(k), &mut self.after, e);
        raise_if(at.last_quarter(k), &mut self.residual, e);
        self.finite &= e.iter().all(|v| v.is_finite());
        for ((m, a), b) in self
            .max_deviation_from_f64
            .iter_mut()
            .zip(estimate)
            .zip(f64_estimate)
        {
            let d = (a - b).abs();
            *m = if d.is_nan() { f64::INFINITY } else { m.max(d) };
        }
    }
}

/// Running sums over settled samples from `start` on.
#[derive(Debug, Clone)]
struct Sums {
    start: usize,
    error: Vec<f64>,
    samples: usize,
    nees: f64,
    nis: f64,
    nis_samples: usize,
}

impl Sums {
    fn from(start: usize, n: usize) -> Self {
        Self {
            start,
            error: vec![-0.0; n],
            samples: 0,
            nees: -0.0,
            nis: -0.0,
            nis_samples: 0,
        }
    }
    /// Whether `k` is a sample `spacing` apart from the start.
    fn takes(&self, k: usize, spacing: usize) -> bool {
        k >= self.start && (k - self.start).is_multiple_of(spacing.max(1))
    }
}

/// The consistency tests' factors: Σ's and S's Cholesky factors (`None`
/// where not positive definite), when the run is tested at all.
pub struct Tests {
    nees: Option<Cholesky<f64, Dyn>>,
    nis: Option<Cholesky<f64, Dyn>>,
}

impl Tests {
    /// The factors for `reference`.
    pub fn of(reference: &Reference) -> Self {
        Self {
            nees: reference.cov_factor.clone(),
            nis: reference.innovation_cov.clone().cholesky(),
        }
    }
}

/// One step of a run as the second pass sees it.
pub struct Sample<'a> {
    /// Step index.
    pub k: usize,
    /// Error x − x̂ per state.
    pub e: &'a [f64],
    /// The estimate.
    pub estimate: &'a [f64],
    /// Inputs (empty at the last row).
    pub u: &'a [f64],
    /// Readings (empty at the last row).
    pub y: &'a [f64],
}

/// The second pass over one format's run.
#[derive(Debug, Clone)]
pub struct Settling {
    band: Vec<f64>,
    at: Windows,
    steps: usize,
    spacing: usize,
    nis_spacing: usize,
    /// Whether NEES and NIS are summed (noise, no dropouts or outliers).
    tested: bool,
    last_outside: Option<usize>,
    /// The first step whose samples the mean, NEES and NIS use: the
    /// initial error is forgotten by then.
    forgotten: usize,
    settled: Sums,
    /// From the last quarter's start: the bias test of a run that does not
    /// settle.
    tail: Sums,
}

impl Settling {
    /// Nothing seen yet, with the format's `band`.
    /// `forgotten`: the first step the statistics may use (see
    /// [`Reference::forgotten`]).
    pub fn new(
        band: Vec<f64>,
        reference: &Reference,
        steps: usize,
        tested: bool,
        forgotten: usize,
    ) -> Self {
        let n = band.len();
        let at = Windows::new(steps + 1);
        Self {
            band,
            at,
            steps,
            spacing: reference.spacing,
            nis_spacing: if reference.white_innovation {
                1
            } else {
                reference.spacing
            },
            tested,
            last_outside: None,
            forgotten,
            settled: Sums::from(forgotten, n),
            tail: Sums::from(at.len - at.len / 4, n),
        }
    }

    /// Adds sample `s`.
    pub fn add(&mut self, design: &Design, tests: &Tests, s: &Sample) {
        // A band that is not finite (the f64 reference's error overflowed)
        // cannot be settled in: every step is outside it.
        let outside =
            s.e.iter()
                .zip(&self.band)
                .any(|(v, &tol)| !tol.is_finite() || v.is_nan() || v.abs() > tol);
        if outside {
            self.last_outside = Some(s.k);
            self.settled = Sums::from((s.k + 1).max(self.forgotten), s.e.len());
        }
        for sums in [&mut self.settled, &mut self.tail] {
            if sums.takes(s.k, self.spacing) {
                for (a, v) in sums.error.iter_mut().zip(s.e) {
                    *a += v;
                }
                sums.samples += 1;
            }
        }
        if !self.tested {
            return;
        }
        let sums = &mut self.settled;
        if sums.takes(s.k, self.spacing)
            && let Some(chol) = &tests.nees
        {
            let e = DVector::from_column_slice(s.e);
            sums.nees += e.dot(&chol.solve(&e));
        }
        if s.k < self.steps
            && sums.takes(s.k, self.nis_spacing)
            && let Some(chol) = &tests.nis
        {
            let x = DVector::from_column_slice(s.estimate);
            let u = DVector::from_column_slice(s.u);
            let y = DVector::from_column_slice(s.y);
            let r = y - &design.cd * x - &design.dd * u;
            sums.nis += r.dot(&chol.solve(&r));
            sums.nis_samples += 1;
        }
    }

    /// First step from which every state's error stays within its band,
    /// when that span holds the whole last quarter of the run: a run that
    /// enters its band later has too little left to call it settled (and
    /// the boundedness test, which compares the last two quarters, would
    /// contradict it).
    fn settling_step(&self) -> Option<usize> {
        let k = self.last_outside.map_or(0, |k| k + 1);
        (k <= self.at.len - self.at.len / 4).then_some(k)
    }
}

/// Without noise the error of an exact model obeys e[k + L] = Fᴸ e[k] up
/// to rounding, so with D = diag(d) any positive scaling,
/// max over the last eighth of |e_i| / d_i ≤ ‖D⁻¹ Fᴸ D‖∞ · max over the
/// eighth before of max_j |e_j| / d_j (L the eighth's length). With d_j the
/// peak |e_j| over the earlier eighth (at least the deviation bound) the
/// allowed peak of state i is d_i ‖D⁻¹ Fᴸ D‖∞ plus the deviation bound; an
/// error beyond it does not decay as the design says: a model mismatch or
/// an unmodelled input. Returns per state the later peak and its limit.
fn bias_without_noise(
    r: &Running,
    reference: &Reference,
    dev: &[f64],
) -> (Vec<f64>, Vec<f64>, Option<usize>) {
    let (before, after, window) = (&r.before, r.after.clone(), r.at.eighth);
    let n = before.len();
    let round = |i: usize| dev.get(i).copied().unwrap_or(0.0);
    let d: Vec<f64> = (0..n)
        .map(|i| before[i].max(round(i)).max(f64::MIN_POSITIVE))
        .collect();
    let mut power = DMatrix::<f64>::identity(n, n);
    for _ in 0..window {
        power = &reference.f * power;
    }
    let gain = (0..n)
        .map(|i| {
            (0..n)
                .map(|j| power[(i, j)].abs() * d[j] / d[i])
                .sum::<f64>()
        })
        .fold(0.0, f64::max);
    let limits: Vec<f64> = d
        .iter()
        .enumerate()
        .map(|(i, di)| di * gain + round(i))
        .collect();
    let biased = after.iter().zip(&limits).position(|(a, l)| a > l);
    (after, limits, biased)
}

/// Per state: the mean error over the settled, nearly independent
/// samples, its limit z·σ/√K + the deviation bound (z the two-sided normal
/// quantile at [`test_confidence`]), and the first state beyond it.
fn bias_with_noise(
    sums: &Sums,
    reference: &Reference,
    dev: &[f64],
) -> (Vec<f64>, Vec<f64>, Option<usize>) {
    let n = sums.error.len();
    let z = normal_quantile(test_confidence(n));
    let mut out = (Vec::with_capacity(n), Vec::with_capacity(n), None);
    for (i, &sum) in sums.error.iter().enumerate() {
        let sigma = reference.sigma.get(i).copied().unwrap_or(0.0);
        let spread = z * sigma / (sums.samples.max(1) as f64).sqrt();
        let limit = spread + dev.get(i).copied().unwrap_or(0.0);
        let mean = if sums.samples == 0 {
            0.0
        } else {
            sum / sums.samples as f64
        };
        let within = mean.abs() <= limit.max(f64::MIN_POSITIVE);
        if !within && out.2.is_none() {
            out.2 = Some(i);
        }
        out.0.push(mean);
        out.1.push(limit);
    }
    out
}

/// The NEES and NIS averages of a settled run (see [`super::verdict`]).
fn consistency(
    design: &Design,
    tests: &Tests,
    sums: &Sums,
    reference: &Reference,
    (dropped, outliers): (usize, usize),
) -> (Option<Interval>, Option<Interval>, Option<String>) {
    if !reference.noisy {
        return (None, None, Some("no simulated noise".into()));
    }
    if dropped > 0 || outliers > 0 {
        return (
            None,
            None,
            Some("dropouts and outliers change the error covariance the tests assume".into()),
        );
    }
    let confidence = test_confidence(design.n());
    let average = |chol: &Option<Cholesky<f64, Dyn>>, total: f64, count: usize, dim: usize| {
        chol.as_ref()?;
        Interval::chi_square(total / count as f64, count, dim, confidence)
    };
    let nees = average(&tests.nees, sums.nees, sums.samples, design.n());
    let nis = average(&tests.nis, sums.nis, sums.nis_samples, design.p());
    let note = nees
        .is_none()
        .then(|| "the design's error covariance is singular: no NEES".to_string());
    (nees, nis, note)
}

/// What a format's verdict rests on besides its two passes.
pub struct Judged<'a> {
    /// The design's statistics.
    pub reference: &'a Reference,
    /// The format's deviation bound per state.
    pub deviation: Vec<f64>,
    /// The format's band per state.
    pub band: Vec<f64>,
    /// Readings dropped and made outliers in the run.
    pub events: (usize, usize),
}

/// The metrics and the verdict of a format from its two passes.
pub fn finish(design: &Design, tests: &Tests, j: Judged, r: &Running, s: &Settling) -> Metrics {
    let len = r.at.len;
    let rms_error = r
        .sum_sq
        .iter()
        .zip(&r.scaled_sum_sq)
        .map(|(&sum_sq, scaled)| {
            if sum_sq.is_finite() {
                (sum_sq / len as f64).sqrt()
            } else {
                scaled.rms(len)
            }
        })
        .collect();
    let grew = r
        .fourth_quarter
        .iter()
        .zip(&r.third_quarter)
        .zip(&j.band)
        .any(|((q3, q2), tol)| *q3 > q2 + tol);
    let stable = r.finite && !grew;
    let settling_step = s.settling_step();
    // Unsettled runs are tested for a bias over their last quarter: an
    // error that stays outside its band by a steady amount is a bias.
    let sums = if settling_step.is_some() {
        &s.settled
    } else {
        &s.tail
    };
    let (mean_error, mean_limit, biased) = if j.reference.noisy {
        bias_with_noise(sums, j.reference, &j.deviation)
    } else {
        bias_without_noise(r, j.reference, &j.deviation)
    };
    let (nees, nis, untested) = if settling_step.is_some() && r.finite {
        consistency(design, tests, sums, j.reference, j.events)
    } else {
        (None, None, None)
    };
    let verdict = if !r.finite {
        Verdict::NotFinite
    } else if j.reference.noisy && settling_step.is_some() && sums.samples == 0 {
        Verdict::TooShort { from: sums.start }
    } else if let Some(state) = biased {
        Verdict::Biased { state }
    } else if settling_step.is_none() {
        Verdict::NotSettled
    } else if nees.is_some_and(|i| !i.holds()) {
        Verdict::Inconsistent { test: "NEES" }
    } else if nis.is_some_and(|i| !i.holds()) {
        Verdict::Inconsistent { test: "NIS" }
    } else {
        Verdict::Converged
    };
    Metrics {
        rms_error,
        final_error: r.final_error.clone(),
        settling_step,
        max_deviation_from_f64: r.max_deviation_from_f64.clone(),
        stable,
        converged: verdict.converged(),
        band: j.band,
        deviation: j.deviation,
        mean_error,
        mean_limit,
        nees,
        nis,
        untested,
        tests_from: sums.start,
        verdict,
    }
}

/// Carries the f64 observer's failure to the other formats of a run: when
/// f64 diverged the design fails and no format is called converged; when
/// f64 is biased, a format that otherwise passed follows that biased
/// estimate within its own rounding and is biased too.
pub fn carry_f64_verdict(formats: &mut [(FormatRun, Metrics)]) {
    let Some(first) = formats.first().map(|(_, m)| m.verdict.clone()) else {
        return;
    };
    for (_, m) in formats.iter_mut().skip(1) {
        match (&first, &m.verdict) {
            (Verdict::NotFinite, v) if *v != Verdict::NotFinite => {
                m.verdict = Verdict::DesignFailed;
            }
            (Verdict::Biased { state }, Verdict::Converged) => {
                m.verdict = Verdict::Biased { state: *state };
            }
            _ => {}
        }
        m.converged = m.verdict.converged();
    }
}
