//! One step of each fixed-point observer against the f64 observer on the
//! same (dequantised) tables, from the same state, with random channel masks
//! and a gate: the statuses must agree (outcome, used and missing channels)
//! and every state element must be within the documented one-step error.
//!
//! One-step bounds (LSB of each state, from the observers' docs): predictor
//! ½ + ½ Σ_j |L̄_ij|; current form, x̂[k|k]: ½ + ½ Σ_j |K̄_ij|, x̂[k+1|k]:
//! ½ + Σ_l |Ā_il| (½ + ½ Σ_j |K̄_lj|); fused: ½ + ½ Σ_j |H̄_ij| over the
//! channels that stood in. Plus 2^(F − 40) LSB for the f64 reference's own
//! rounding (a dozen operations at 2⁻⁵³ of full scale each).
//!
//! Gate decisions may legitimately differ when ν is within the rounding of
//! the limit; steps with |ν − limit| ≤ limit · 2^(10 − F) are skipped (the
//! rounding moves ν by a few 2^(z_exp − F) · |z|, far less than that).
// Index loops read like the formulas they check.
#![allow(clippy::needless_range_loop)]

#[path = "../../lookout/tests/fixed_common/mod.rs"]
mod fixed_common;
use fixed_common::*;
use lookout::{
    ChannelMask, CurrentObserver, CurrentTables, Fixed, FixedCurrentObserver, FixedCurrentTables,
    FixedFusedObserver, FixedFusedTables, FixedPredictorObserver, FixedPredictorTables,
    FusedObserver, FusedTables, Gate, Matrix, Observer, Plant, PredictorObserver, PredictorTables,
    Q15, Q31, Scales,
};
use lookout_design::fixed_point::QuantiseTables as _;

const N: usize = 3;
const M: usize = 2;
const P: usize = 2;

struct Case {
    s: Scales<N, M, P>,
    a: Rows<N, N>,
    b: Rows<N, M>,
    c: Rows<P, N>,
    d: Rows<P, M>,
    gain: Rows<N, P>,
    gate: Gate<f64, P>,
}

fn case(rng: &mut Xorshift) -> Case {
    let s = Scales {
        state: rng.exponents(-3, 5),
        input: rng.exponents(-3, 5),
        output: rng.exponents(-3, 5),
    };
    let w: Rows<P, P> = rng.rows(1.0);
    // S⁻¹ normalised = 40 (WᵀW + I/4), positive definite: an innovation
    // spread of about a tenth of full scale, so that innovations of up to
    // 0.3 of full scale both pass and fail. Then to physical units.
    let mut s_inv = mat_mul(&transpose(&w), &w);
    for j in 0..P {
        s_inv[j][j] += 0.25;
        for k in 0..P {
            s_inv[j][k] *= 40.0;
        }
    }
    let out = s.output;
    let mut s_inv_phys = s_inv;
    let mut channel = [0.0; P];
    for j in 0..P {
        for k in 0..P {
            s_inv_phys[j][k] *= 2f64.powi(-i32::from(out[j]) - i32::from(out[k]));
        }
        channel[j] = s_inv_phys[j][j];
    }
    Case {
        a: physical(&rng.rows(0.4), &s.state, &s.state),
        b: physical(&rng.rows(0.3), &s.input, &s.state),
        c: physical(&rng.rows(0.25), &s.state, &s.output),
        d: physical(&rng.rows(0.2), &s.input, &s.output),
        gain: physical(&rng.rows(0.3), &s.output, &s.state),
        gate: Gate {
            s_inv: Matrix::from_rows(s_inv_phys),
            // 90 % chi-square limits (closed forms, common practice): two
            // degrees −2 ln 0.1; one degree the square of the normal 95 %
            // quantile 1.6448536269514722.
            limit: -2.0 * 0.1_f64.ln(),
            channel_inv_variance: channel,
            channel_limit: 1.644_853_626_951_472_2_f64.powi(2),
            recovery: lookout::Recovery::none(0.0),
        },
        s,
    }
}

fn transpose<const R: usize, const C: usize>(a: &Rows<R, C>) -> Rows<C, R> {
    let mut out = [[0.0; R]; C];
    for i in 0..R {
        for j in 0..C {
            out[j][i] = a[i][j];
        }
    }
    out
}

/// Whether the float gate's ν (or a per-channel statistic) is too near its
/// limit for the decision to be compared.
fn borderline<Q: Fixed>(gate: &Gate<f64, P>, r: &[f64; P], used: ChannelMask) -> bool {
    let near = |v: f64, limit: f64| (v - limit).abs() <= limit * 2f64.powi(10 - Q::FRAC as i32);
    let s = gate.s_inv.to_rows();
    if used == ChannelMask::all(P) {
        let nu: f64 = (0..P)
            .map(|j| (0..P).map(|k| r[j] * s[j][k] * r[k]).sum::<f64>())
            .sum();
        near(nu, gate.limit)
    } else {
        (0..P).any(|j| {
            used.contains(j)
                && near(
                    r[j] * r[j] * gate.channel_inv_variance[j],
                    gate.channel_limit,
                )
        })
    }
}

fn innovation_of(
    plant: &Plant<f64, N, M, P>,
    x: &[f64; N],
    u: &[f64; M],
    y: &[f64; P],
    mask: ChannelMask,
) -> [f64; P] {
    let (c, d) = (plant.c.to_rows(), plant.d.to_rows());
    let mut r = [0.0; P];
    for j in 0..P {
        if mask.contains(j) {
            r[j] = y[j]
                - (0..N).map(|k| c[j][k] * x[k]).sum::<f64>()
                - (0..M).map(|k| d[j][k] * u[k]).sum::<f64>();
        }
    }
    r
}

/// Row sums of |τ| of a physical table, normalised.
fn row_sums<const R: usize, const C: usize>(
    t: &Matrix<f64, R, C>,
    s_in: &[i8; C],
    s_out: &[i8; R],
    cols: ChannelMask,
) -> [f64; R] {
    let tau = normalised(&t.to_rows(), s_in, s_out);
    let mut out = [0.0; R];
    for i in 0..R {
        out[i] = (0..C)
            .filter(|&j| cols.contains(j))
            .map(|j| tau[i][j].abs())
            .sum();
    }
    out
}

fn check_rows<Q: Fixed>(q: &[Q; N], x: &[f64; N], s: &[i8; N], bound: &[f64; N], what: &str) {
    let margin = 2f64.powi(Q::FRAC as i32 - 40);
    for i in 0..N {
        let err = lsb_error(&[q[i]], &[x[i]], &[s[i]]);
        assert!(
            err <= bound[i] + margin,
            "{what}: state {i} off by {err} LSB, bound {}",
            bound[i]
        );
    }
}

fn one_step<Q: Fixed>(seed: u64) {
    let mut rng = Xorshift::new(seed);
    let mut compared = 0;
    for _ in 0..300 {
        let cs = case(&mut rng);
        let s = cs.s;
        let plant = Plant {
            a: Matrix::from_rows(cs.a),
            b: Matrix::from_rows(cs.b),
            c: Matrix::from_rows(cs.c),
            d: Matrix::from_rows(cs.d),
        };
        let gate = if rng.next_u64().is_multiple_of(2) {
            Some(cs.gate)
        } else {
            None
        };
        let pt = FixedPredictorTables::<Q, N, M, P>::from_float(
            &PredictorTables {
                plant,
                l: Matrix::from_rows(cs.gain),
                gate,
            },
            s,
        )
        .unwrap();
        let ct = FixedCurrentTables::<Q, N, M, P>::from_float(
            &CurrentTables {
                plant,
                k: Matrix::from_rows(cs.gain),
                gate,
            },
            s,
        )
        .unwrap();
        let ft = FixedFusedTables::<Q, N, M, P>::from_float(
            &FusedTables {
                f: plant.a,
                g: plant.b,
                h: Matrix::from_rows(cs.gain),
                c: plant.c,
                d: plant.d,
                gate,
            },
            s,
        )
        .unwrap();
        let (pf, cf, ff) = (pt.to_float(), ct.to_float(), ft.to_float());
        let x: [Q; N] = rng.q_vec(0.3);
        let u: [Q; M] = rng.q_vec(0.3);
        let y: [Q; P] = rng.q_vec(0.3);
        let mask = ChannelMask::from_bits((rng.next_u64() % 4) as u32);
        let (xf, uf, yf) = (
            values(&x, &s.state),
            values(&u, &s.input),
            values(&y, &s.output),
        );
        let r = innovation_of(&pf.plant, &xf, &uf, &yf, mask);
        if let Some(g) = &pf.gate
            && borderline::<Q>(g, &r, mask)
        {
            continue;
        }
        compared += 1;

        let mut pq = FixedPredictorObserver::new(&pt, x);
        let mut pr = PredictorObserver::new(&pf, xf);
        let (sq, sr) = (pq.step_masked(&u, &y, mask), pr.step_masked(&uf, &yf, mask));
        assert_eq!(
            (sq.outcome, sq.used, sq.missing, sq.saturations),
            (sr.outcome, sr.used, sr.missing, 0)
        );
        let used = sr.used;
        let l_sums = row_sums(&pf.l, &s.output, &s.state, used);
        check_rows(
            pq.estimate(),
            pr.estimate(),
            &s.state,
            &l_sums.map(|v| 0.5 + 0.5 * v),
            "predictor",
        );

        let mut cq = FixedCurrentObserver::new(&ct, x);
        let mut cr = CurrentObserver::new(&cf, xf);
        let (sq, sr) = (cq.step_masked(&u, &y, mask), cr.step_masked(&uf, &yf, mask));
        assert_eq!(
            (sq.outcome, sq.used, sq.missing, sq.saturations),
            (sr.outcome, sr.used, sr.missing, 0)
        );
        let k_bound = row_sums(&cf.k, &s.output, &s.state, sr.used).map(|v| 0.5 + 0.5 * v);
        check_rows(
            cq.filtered(),
            cr.filtered(),
            &s.state,
            &k_bound,
            "current, filtered",
        );
        let an = normalised(&cf.plant.a.to_rows(), &s.state, &s.state);
        let mut pred_bound = [0.5; N];
        for i in 0..N {
            pred_bound[i] += (0..N).map(|l| an[i][l].abs() * k_bound[l]).sum::<f64>();
        }
        check_rows(
            cq.predicted(),
            cr.predicted(),
            &s.state,
            &pred_bound,
            "current, predicted",
        );

        let mut fq = FixedFusedObserver::new(&ft, x);
        let mut fr = FusedObserver::new(&ff, xf);
        let (sq, sr) = (fq.step_masked(&u, &y, mask), fr.step_masked(&uf, &yf, mask));
        assert_eq!(
            (sq.outcome, sq.used, sq.missing, sq.saturations),
            (sr.outcome, sr.used, sr.missing, 0)
        );
        let stood_in = ChannelMask::all(P).and(ChannelMask::from_bits(!sr.used.bits()));
        let h_bound = row_sums(&ff.h, &s.output, &s.state, stood_in).map(|v| 0.5 + 0.5 * v);
        check_rows(fq.estimate(), fr.estimate(), &s.state, &h_bound, "fused");
        assert_eq!(fq.innovation().is_some(), gate.is_some());
    }
    assert!(compared > 250, "only {compared} steps compared");
}

#[test]
fn q31_one_step_matches_f64_statuses_and_bound() {
    one_step::<Q31>(0x5eed_0031);
}

#[test]
fn q15_one_step_matches_f64_statuses_and_bound() {
    one_step::<Q15>(0x5eed_0015);
}

/// Gating behaves like the float gate: with the gate present some steps
/// are gated and some corrected (so the comparison above exercised both).
#[test]
fn gate_both_accepts_and_rejects() {
    let mut rng = Xorshift::new(7);
    let (mut gated, mut corrected) = (0, 0);
    for _ in 0..200 {
        let cs = case(&mut rng);
        let plant = Plant {
            a: Matrix::from_rows(cs.a),
            b: Matrix::from_rows(cs.b),
            c: Matrix::from_rows(cs.c),
            d: Matrix::from_rows(cs.d),
        };
        let t = FixedPredictorTables::<Q31, N, M, P>::from_float(
            &PredictorTables {
                plant,
                l: Matrix::from_rows(cs.gain),
                gate: Some(cs.gate),
            },
            cs.s,
        )
        .unwrap();
        let mut o = FixedPredictorObserver::new(&t, rng.q_vec(0.3));
        match o.step(&rng.q_vec(0.3), &rng.q_vec(0.3)).outcome {
            lookout::Outcome::Gated => gated += 1,
            lookout::Outcome::Corrected => corrected += 1,
            other => panic!("unexpected {other:?}"),
        }
    }
    assert!(
        gated > 20 && corrected > 20,
        "gated {gated}, corrected {corrected}"
    );
}

/// `predict` is a step with no channel, `reset` returns to x0 and clears
/// the innovation, `set_state` replaces the estimate: as in the float API.
#[test]
fn predict_reset_and_set_state() {
    let mut rng = Xorshift::new(11);
    let cs = case(&mut rng);
    let plant = Plant {
        a: Matrix::from_rows(cs.a),
        b: Matrix::from_rows(cs.b),
        c: Matrix::from_rows(cs.c),
        d: Matrix::from_rows(cs.d),
    };
    let t = FixedPredictorTables::<Q15, N, M, P>::from_float(
        &PredictorTables {
            plant,
            l: Matrix::from_rows(cs.gain),
            gate: None,
        },
        cs.s,
    )
    .unwrap();
    let x0: [Q15; N] = rng.q_vec(0.2);
    let (u, y): ([Q15; M], [Q15; P]) = (rng.q_vec(0.2), rng.q_vec(0.2));
    let mut a = FixedPredictorObserver::new(&t, x0);
    let mut b = a.clone();
    assert_eq!(a.predict(&u), b.step_masked(&u, &y, ChannelMask::NONE));
    assert_eq!(a.estimate(), b.estimate());
    assert!(a.step(&u, &y).corrected());
    assert_ne!(a.innovation(), Some(&[Q15(0); P]));
    a.reset();
    assert_eq!((a.estimate(), a.innovation()), (&x0, Some(&[Q15(0); P])));
    a.set_state([Q15(5); N]);
    assert_eq!(a.estimate(), &[Q15(5); N]);
    assert!(std::ptr::eq(a.tables(), &t));
}
