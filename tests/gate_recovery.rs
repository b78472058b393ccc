//! The innovation gate cannot lock out (issue 13): the bundled Kalman demo,
//! driven by noise drawn from its own process and measurement covariances
//! and started exactly, keeps its lock over 20 seeds × 20 000 steps with the
//! generated recovery table, rejects readings at the gate's own rate, and
//! loses lock without recovery (the regression the issue reported).
#![allow(clippy::needless_range_loop)] // indices are matrix positions here

use lookout::{
    CurrentObserver, CurrentTables, FixedCurrentObserver, Observer, Outcome, Q31, Recovery,
};
use lookout_design::fixed_point::{dequantise_real, quantise_real};
use lookout_suite::conveyor_kalman_f64::conveyor_kalman::CURRENT;
use std::path::Path;

const SEEDS: u64 = 20;
const STEPS: usize = 20_000;

/// splitmix64 (Steele, Lea and Flood, "Fast splittable pseudorandom number
/// generators", OOPSLA 2014) and Box–Muller normal deviates (Box and
/// Muller, "A note on the generation of random normal deviates", 1958).
struct Normal(u64);

impl Normal {
    fn uniform(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^= z >> 31;
        ((z >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn next(&mut self) -> f64 {
        let (u1, u2) = (self.uniform(), self.uniform());
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
}

/// What the test needs of the design: Ad, the Cholesky factor of Qd, √R and
/// the inverse of the a-priori covariance P.
struct Model {
    ad: [[f64; 2]; 2],
    qd_chol: [[f64; 2]; 2],
    r_sqrt: f64,
    p_inv: [[f64; 2]; 2],
}

fn model() -> Model {
    let d = lookout_design::design_file(Path::new("examples/conveyor_kalman.toml")).unwrap();
    let k = d.kalman.as_ref().unwrap();
    let q = &k.process_noise;
    let l = q.clone().cholesky().map_or_else(
        // Qd of rank one would fail Cholesky; this one has full rank.
        || panic!("Qd not positive definite"),
        |c| c.l(),
    );
    let p_inv = k.p.clone().try_inverse().unwrap();
    let r = k.innovation_covariance[(0, 0)] - (&d.cd * &k.p * d.cd.transpose())[(0, 0)];
    let m = |a: &nalgebra::DMatrix<f64>| [[a[(0, 0)], a[(0, 1)]], [a[(1, 0)], a[(1, 1)]]];
    Model {
        ad: m(&d.ad),
        qd_chol: m(&l),
        r_sqrt: r.sqrt(),
        p_inv: m(&p_inv),
    }
}

/// One seed's result: readings gated or re-acquired, and the NEES of the
/// prediction x̂[k+1|k] after the last step, eᵀ P⁻¹ e.
struct Run {
    gated: usize,
    reacquired: usize,
    final_nees: f64,
}

/// The true plant with zero input: x⁺ = Ad x + w, y = x₀ + v.
fn run(m: &Model, seed: u64, mut step: impl FnMut(f64) -> (Outcome, [f64; 2])) -> Run {
    let mut rng = Normal(seed);
    let mut x = [0.0_f64; 2];
    let (mut gated, mut reacquired) = (0, 0);
    let mut e = [0.0; 2];
    for _ in 0..STEPS {
        let y = x[0] + m.r_sqrt * rng.next();
        let (outcome, predicted) = step(y);
        gated += usize::from(outcome == Outcome::Gated);
        reacquired += usize::from(outcome == Outcome::Reacquired);
        let w = [rng.next(), rng.next()];
        let mut next = [0.0; 2];
        for i in 0..2 {
            next[i] = m.ad[i][0] * x[0] + m.ad[i][1] * x[1];
            next[i] += m.qd_chol[i][0] * w[0] + m.qd_chol[i][1] * w[1];
        }
        x = next;
        e = [x[0] - predicted[0], x[1] - predicted[1]];
    }
    let pe = [
        m.p_inv[0][0] * e[0] + m.p_inv[0][1] * e[1],
        m.p_inv[1][0] * e[0] + m.p_inv[1][1] * e[1],
    ];
    Run {
        gated,
        reacquired,
        final_nees: e[0] * pe[0] + e[1] * pe[1],
    }
}

fn float_runs(tables: &CurrentTables<f64, 2, 1, 1>) -> Vec<Run> {
    let m = model();
    (1..=SEEDS)
        .map(|seed| {
            let mut obs = CurrentObserver::new(tables, [0.0; 2]);
            run(&m, seed, |y| {
                let s = obs.step(&[0.0], &[y]);
                (s.outcome, *obs.predicted())
            })
        })
        .collect()
}

/// The gate probability of the demo, 0.999, from its model file.
const GATE_PROBABILITY: f64 = 0.999;

/// Upper limit of a single NEES with 2 degrees of freedom at 0.9999:
/// −2 ln(10⁻⁴) = 18.42 (closed form of the chi-square law with 2 degrees,
/// common practice). A run that lost lock has a NEES of thousands.
const NEES_LIMIT: f64 = 18.420_680_743_952_367;

/// The two-sided 99.9 % interval of a binomial count with n trials and
/// probability q, by the normal approximation n q ± 3.2905 √(n q (1 − q))
/// (3.2905 is the standard normal 0.9995 quantile, from the published normal
/// tables; the approximation is common practice for n q ≫ 10).
fn binomial_interval(n: f64, q: f64) -> (f64, f64) {
    let half = 3.2905 * (n * q * (1.0 - q)).sqrt();
    (n * q - half, n * q + half)
}

fn check_lock(runs: &[Run], what: &str) {
    let gated: usize = runs.iter().map(|r| r.gated).sum();
    let n = (SEEDS as usize * STEPS) as f64;
    let (lo, hi) = binomial_interval(n, 1.0 - GATE_PROBABILITY);
    for (seed, r) in (1..).zip(runs) {
        println!(
            "{what} seed {seed:2}: gated {:3}, re-acquired {}, final NEES {:.3}",
            r.gated, r.reacquired, r.final_nees
        );
    }
    println!("{what}: {gated} gated of {n}, interval [{lo:.1}, {hi:.1}]");
    assert!(
        (lo..=hi).contains(&(gated as f64)),
        "{what}: {gated} readings gated, outside [{lo:.1}, {hi:.1}]"
    );
    for (seed, r) in (1..).zip(runs) {
        assert!(
            r.final_nees <= NEES_LIMIT,
            "{what} seed {seed}: final NEES {} beyond {NEES_LIMIT}",
            r.final_nees
        );
    }
}

#[test]
fn gate_keeps_lock_and_rejects_at_its_own_rate() {
    assert!(CURRENT.gate.is_some_and(|g| g.recovery.stages > 0));
    check_lock(&float_runs(&CURRENT), "f64");
}

/// Regression (issue 13): the steady gate alone (no recovery) loses lock on
/// the same noise: far more readings gated than the gate's rate allows and
/// at least one run ending far outside its covariance.
#[test]
fn steady_gate_without_recovery_locks_out() {
    let mut tables = CURRENT;
    if let Some(g) = tables.gate.as_mut() {
        g.recovery = Recovery::none(0.0);
    }
    let runs = float_runs(&tables);
    let gated: usize = runs.iter().map(|r| r.gated).sum();
    let (_, hi) = binomial_interval((SEEDS as usize * STEPS) as f64, 1.0 - GATE_PROBABILITY);
    println!("no recovery: {gated} gated, upper limit {hi:.1}");
    assert!(gated as f64 > hi, "{gated} gated: no lock-out seen");
    assert!(runs.iter().any(|r| r.final_nees > NEES_LIMIT));
}

/// The same test on the Q31 current-form observer generated by build.rs
/// from tests/models/conveyor_kalman_q31.toml (the demo with a
/// `[fixed_point]` section): its emitted gate and recovery table, at the
/// design's scales.
#[test]
fn q31_gate_keeps_lock_and_rejects_at_its_own_rate() {
    use lookout_suite::kalman_q31::conveyor_kalman_q31::CURRENT_Q31 as Q;
    assert!(Q.gate.is_some_and(|g| g.recovery.stages > 0));
    let (sx, sy) = (Q.scales.state, Q.scales.output);
    let m = model();
    let runs: Vec<Run> = (1..=SEEDS)
        .map(|seed| {
            let mut obs = FixedCurrentObserver::new(&Q, [Q31(0); 2]);
            run(&m, seed, |y| {
                let yq = quantise_real::<Q31>(y, sy[0]).unwrap();
                let s = obs.step(&[Q31(0)], &[yq]);
                let p = obs.predicted();
                let back = [dequantise_real(p[0], sx[0]), dequantise_real(p[1], sx[1])];
                (s.outcome, back)
            })
        })
        .collect();
    check_lock(&runs, "q31");
}
