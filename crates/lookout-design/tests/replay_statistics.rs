//! The replay statistics (innovation summary, whiteness test, noise fit by
//! autocovariance least squares) against closed forms and known truths.

use lookout_design::model::NoiseDomain;
use lookout_design::replay::als::{
    AlsProblem, Determined, estimate_noise, modelled_autocovariances,
};
use lookout_design::replay::noise_map::symmetric_basis;
use lookout_design::replay::{Innovations, NoiseMap, summarise, whiteness};
use nalgebra::{DMatrix, DVector};

/// xorshift64* with Box–Muller normals: a fixed-seed stream for synthetic
/// logs (the generator is common practice; its quality is ample here).
struct Normal(u64);

impl Normal {
    fn uniform(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        let r = self.0.wrapping_mul(0x2545_f491_4f6c_dd1d);
        ((r >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn next(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// Innovations of the predictor x̂⁺ = A x̂ + L (y − C x̂) run on the plant
/// x⁺ = A_true x + G w, y = C x + v (w ~ N(0, Q), v ~ N(0, R), scalar noise
/// sources given as standard deviations), after `burn` samples.
struct Setup {
    a_true: DMatrix<f64>,
    a: DMatrix<f64>,
    g: DMatrix<f64>,
    c: DMatrix<f64>,
    l: DMatrix<f64>,
    q_sd: f64,
    r_sd: f64,
}

impl Setup {
    fn innovations(&self, steps: usize, seed: u64) -> Innovations {
        let n = self.a.nrows();
        let mut rng = Normal(seed.wrapping_mul(0x9e37_79b9_7f4a_7c15) | 1);
        let mut x = DVector::zeros(n);
        let mut xh = DVector::zeros(n);
        let burn = 200;
        let mut values = Vec::with_capacity(steps);
        for k in 0..steps + burn {
            let y = &self.c * &x + DVector::from_element(1, self.r_sd * rng.next());
            let e = &y - &self.c * &xh;
            if k >= burn {
                values.push(e[0]);
            }
            xh = &self.a * &xh + &self.l * &e;
            x = &self.a_true * &x + &self.g * (self.q_sd * rng.next());
        }
        Innovations {
            p: 1,
            present: vec![true; values.len()],
            values,
        }
    }

    fn problem<'a>(&'a self, noise: &'a NoiseMap, lags: usize) -> AlsProblem<'a> {
        AlsProblem {
            ad: &self.a,
            cd: &self.c,
            l: &self.l,
            noise,
            lags,
        }
    }

    fn noise(&self) -> NoiseMap {
        NoiseMap {
            q: 1,
            entries: vec![(0, 0)],
            per_sample: vec![&self.g * self.g.transpose()],
            domain: NoiseDomain::Discrete,
        }
    }
}

fn scalar(a_true: f64, a: f64) -> Setup {
    Setup {
        a_true: DMatrix::from_element(1, 1, a_true),
        a: DMatrix::from_element(1, 1, a),
        g: DMatrix::from_element(1, 1, 1.0),
        c: DMatrix::from_element(1, 1, 1.0),
        // Deliberately not the Kalman gain (that is ≈ 0.62 for Q = 1, R = 0.5).
        l: DMatrix::from_element(1, 1, 0.3),
        q_sd: 1.0,
        r_sd: 0.5f64.sqrt(),
    }
}

/// Closed form (derived in docs/replay.md): for x⁺ = a x + w, y = x + v and
/// the predictor gain l, the error ε = x − x̂ obeys ε⁺ = (a − l) ε + w − l v,
/// an AR(1) process, so with ā = a − l, P = (Q + l²R)/(1 − ā²) and the
/// innovation e = ε + v:
/// C_0 = P + R, C_j = ā^j P − ā^{j−1} l R (j ≥ 1).
#[test]
fn scalar_autocovariance_matches_the_closed_form() {
    let (a, l, q, r) = (0.9, 0.3, 1.0, 0.5);
    let s = scalar(a, a);
    let noise = s.noise();
    let pb = s.problem(&noise, 8);
    let c = modelled_autocovariances(
        &pb,
        &DMatrix::from_element(1, 1, q),
        &DMatrix::from_element(1, 1, r),
    )
    .unwrap();
    let ab: f64 = a - l;
    let p = (q + l * l * r) / (1.0 - ab * ab);
    for (j, cj) in c.iter().enumerate() {
        let closed = if j == 0 {
            p + r
        } else {
            ab.powi(j as i32) * p - ab.powi(j as i32 - 1) * l * r
        };
        // k = 16 roundings of the doubling sum and the powers.
        assert!(
            (cj[(0, 0)] - closed).abs() <= 16.0 * f64::EPSILON * p,
            "lag {j}: {} vs {closed}",
            cj[(0, 0)]
        );
    }
    // And the sample autocovariances of a simulated log approach it:
    // one standard error of Ĉ_j is about C_0/√N (Bartlett's formula, common
    // practice), so 5 standard errors at N = 10⁵.
    let e = s.innovations(100_000, 3);
    let (sample, _) = lookout_design::replay::autocovariances(&e, 7);
    let se = (p + r) / (1e5f64).sqrt();
    for (j, cj) in sample.iter().enumerate() {
        assert!((cj[(0, 0)] - c[j][(0, 0)]).abs() < 5.0 * se, "lag {j}");
    }
}

fn fit(s: &Setup, steps: usize, seed: u64) -> (f64, f64) {
    let noise = s.noise();
    let pb = s.problem(&noise, 10);
    let est = estimate_noise(&pb, &s.innovations(steps, seed)).unwrap();
    assert_eq!(est.rank, (2, 2));
    let (Determined::Value(q), Determined::Value(r)) = (est.q_entries[0].1, est.r_entries[0].1)
    else {
        panic!("not determined");
    };
    (q, r)
}

/// Odelson, Rajamani and Rawlings (2006): the ALS estimate is unbiased and
/// consistent, so it approaches the generating Q = 1, R = 0.5 as the log
/// grows. Relative tolerance 15/√N (0.15 at N = 10⁴, 0.047 at N = 10⁵):
/// one standard error of a sample autocovariance is about C_0/√N (Bartlett,
/// common practice) and the largest relative error measured over seeds 1..=3
/// was about 5/√N, so k = 15 is three times that spread.
#[test]
fn scalar_fit_approaches_the_truth() {
    let s = scalar(0.9, 0.9);
    for steps in [10_000, 100_000] {
        let tol = 15.0 / (steps as f64).sqrt();
        for seed in 1..=3 {
            let (q, r) = fit(&s, steps, seed);
            eprintln!("N={steps} seed={seed}: Q={q:.4} R={r:.4}");
            assert!(
                (q - 1.0).abs() < tol && (r / 0.5 - 1.0).abs() < tol,
                "N = {steps}: Q {q}, R {r}"
            );
        }
    }
}

/// A two-state model (position, speed; noise on the speed only, through
/// G = [0, 1]ᵀ; position measured), a placed gain that is not the Kalman
/// one; the same 15/√N relative tolerance as the scalar case.
#[test]
fn two_state_fit_approaches_the_truth() {
    let s = Setup {
        a_true: DMatrix::from_row_slice(2, 2, &[1.0, 0.1, 0.0, 0.95]),
        a: DMatrix::from_row_slice(2, 2, &[1.0, 0.1, 0.0, 0.95]),
        g: DMatrix::from_row_slice(2, 1, &[0.0, 1.0]),
        c: DMatrix::from_row_slice(1, 2, &[1.0, 0.0]),
        l: DMatrix::from_row_slice(2, 1, &[0.8, 1.2]),
        q_sd: 0.2,
        r_sd: 0.3,
    };
    for steps in [10_000, 100_000] {
        let tol = 15.0 / (steps as f64).sqrt();
        let (q, r) = fit(&s, steps, 7);
        eprintln!("2-state N={steps}: Q={q:.5} R={r:.5}");
        assert!(
            (q / 0.04 - 1.0).abs() < tol && (r / 0.09 - 1.0).abs() < tol,
            "N = {steps}: Q {q}, R {r}"
        );
    }
}

/// Mehra's (1970) band holds a white sequence's normalised autocorrelation
/// at the stated level, so the count-of-exceedances test rejects a white
/// sequence with its computed false-alarm rate. Over 400 white sequences the
/// number of rejections must lie in the 99 % binomial interval of that rate
/// (normal approximation, ±2.576 standard deviations, common practice).
#[test]
fn whiteness_false_alarm_rate_matches_its_level() {
    let trials = 400;
    let mut rng = Normal(12345);
    let mut rejected = 0;
    let mut rate = 0.0;
    for _ in 0..trials {
        let values: Vec<f64> = (0..1000).map(|_| rng.next()).collect();
        let e = Innovations {
            p: 1,
            present: vec![true; 1000],
            values,
        };
        let w = whiteness(&e, 20, 0.95).unwrap();
        rate = w.false_alarm;
        rejected += usize::from(w.coloured);
    }
    let expected = rate * trials as f64;
    let sd = (trials as f64 * rate * (1.0 - rate)).sqrt();
    eprintln!("false alarms {rejected}/{trials}, level {rate:.4}");
    assert!(
        (rejected as f64 - expected).abs() <= 2.576 * sd + 1.0,
        "{rejected} rejections, expected {expected:.1} ± {sd:.1}"
    );
}

/// An observer whose model has the wrong pole (0.5 where the plant has
/// 0.95) leaves a coloured innovation.
#[test]
fn mismatched_model_is_flagged_coloured() {
    let s = scalar(0.95, 0.5);
    let e = s.innovations(5000, 9);
    let w = whiteness(&e, 20, 0.95).unwrap();
    assert!(w.coloured, "{} of {} outside", w.outside, w.tested);
}

/// The summary's NIS interval is the chi-square one (standard tables:
/// χ²₀.₀₂₅(100) = 74.22, χ²₀.₉₇₅(100) = 129.56).
#[test]
fn nis_interval_is_the_chi_square_one() {
    let mut rng = Normal(77);
    let values: Vec<f64> = (0..100).map(|_| rng.next()).collect();
    let e = Innovations {
        p: 1,
        present: vec![true; 100],
        values,
    };
    let s = summarise(&e, Some(&DMatrix::from_element(1, 1, 1.0)), 0.95).unwrap();
    let nis = s.nis.unwrap();
    let (lo, hi) = (nis.low, nis.high);
    assert!(
        (lo * 100.0 - 74.22).abs() < 0.01 && (hi * 100.0 - 129.56).abs() < 0.01,
        "{lo} {hi}"
    );
}

/// An undetermined entry is refused: with a gain of zero and C = 0 nothing
/// of Q reaches the innovations, so only R is determined.
#[test]
fn undetermined_entries_are_refused() {
    let mut s = scalar(0.9, 0.9);
    s.c = DMatrix::zeros(1, 1);
    s.l = DMatrix::zeros(1, 1);
    let noise = s.noise();
    let pb = s.problem(&noise, 5);
    let est = estimate_noise(&pb, &s.innovations(2000, 1)).unwrap();
    assert_eq!(est.rank, (1, 2));
    assert_eq!(est.q_entries[0].1, Determined::No);
    assert!(matches!(est.r_entries[0].1, Determined::Value(_)));
    assert!(est.q.is_none());
    assert_eq!(symmetric_basis(2).len(), 3);
}

mod properties {
    use super::*;
    use lookout_design::replay::als::nearest_semidefinite;
    use proptest::prelude::*;

    fn config() -> ProptestConfig {
        ProptestConfig {
            cases: 64,
            rng_seed: proptest::test_runner::RngSeed::Fixed(0x1717),
            failure_persistence: None,
            ..ProptestConfig::default()
        }
    }

    proptest! {
        #![proptest_config(config())]

        /// The modelled autocovariances of any stable scalar loop equal the
        /// closed form (derivation beside `scalar_autocovariance_matches_the_closed_form`),
        /// up to ā = a − l = 0.9999 (a slow loop, the doubling's hard case).
        /// Tolerance k·ε·P with k = 64/(1 − |ā|) (the sum's terms number about
        /// 1/(1 − |ā|), each a few roundings), stated margin.
        #[test]
        fn scalar_modelled_autocovariance_is_the_closed_form(
            a in -1.5f64..1.5,
            abar in -0.9999f64..0.9999,
            q in 1e-6f64..1e3,
            r in 1e-6f64..1e3,
        ) {
            let l = a - abar;
            let s = Setup {
                a_true: DMatrix::from_element(1, 1, a),
                a: DMatrix::from_element(1, 1, a),
                g: DMatrix::from_element(1, 1, 1.0),
                c: DMatrix::from_element(1, 1, 1.0),
                l: DMatrix::from_element(1, 1, l),
                q_sd: 0.0,
                r_sd: 0.0,
            };
            let noise = s.noise();
            let pb = s.problem(&noise, 6);
            let c = modelled_autocovariances(&pb, &DMatrix::from_element(1, 1, q), &DMatrix::from_element(1, 1, r)).unwrap();
            let p = (q + l * l * r) / (1.0 - abar * abar);
            let tol = 64.0 / (1.0 - abar.abs()) * f64::EPSILON * (p + r + l.abs() * r);
            for (j, cj) in c.iter().enumerate() {
                let closed = if j == 0 { p + r } else { abar.powi(j as i32) * p - abar.powi(j as i32 - 1) * l * r };
                prop_assert!((cj[(0, 0)] - closed).abs() <= tol, "lag {}: {} vs {}", j, cj[(0, 0)], closed);
            }
        }

        /// The projection onto the semidefinite cone gives a semidefinite
        /// matrix (eigenvalues ≥ −k·ε·‖M‖, k = 16) and leaves a semidefinite
        /// one unchanged (Higham 1988: the projection is idempotent).
        #[test]
        fn projection_is_semidefinite_and_idempotent(
            entries in proptest::collection::vec(-1e3f64..1e3, 9),
        ) {
            let m = DMatrix::from_row_slice(3, 3, &entries);
            let m = (&m + m.transpose()) * 0.5;
            let (psd, _) = nearest_semidefinite(&m).unwrap();
            let eig = psd.clone().symmetric_eigen();
            let scale = m.norm().max(1e-300);
            prop_assert!(eig.eigenvalues.iter().all(|&l| l >= -16.0 * f64::EPSILON * scale));
            let (again, _) = nearest_semidefinite(&psd).unwrap();
            prop_assert!((&again - &psd).norm() <= 16.0 * f64::EPSILON * scale);
        }
    }
}
