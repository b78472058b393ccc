//! Tables proven to obey the accumulator headroom rule (`lookout::Proven`):
//! the observers built on them (`proven`, plain multiply-accumulate) give
//! the same estimates, innovations and statuses, bit for bit, as the
//! saturating observers on the same tables, and tables that break the rule
//! are refused by `check`.
//!
//! The reference is the saturating observer, whose every add clamps
//! instead of wrapping: where no partial sum can leave the accumulator the
//! two are the same integer computation (the rule's proof is in the docs of
//! `Proven`). Rows are drawn right up to the limit 2^(F+1) − 1 and inputs
//! include the extreme words −2ᶠ and 2ᶠ − 1, the hard cases for headroom.

mod fixed_common;
use fixed_common::fixed_seed;
use lookout::{
    ChannelMask, Fixed, FixedCurrentObserver, FixedCurrentTables, FixedFusedObserver,
    FixedFusedTables, FixedOutputMap, FixedPredictorObserver, FixedPredictorTables, Matrix, Q15,
    Q31, Scales, TableName,
};
use proptest::prelude::*;

const N: usize = 3;
const M: usize = 2;
const P: usize = 2;
const STEPS: usize = 200;

/// The largest allowed row sum, 2^(F+1) − 1 (from `Proven`'s docs).
fn limit<Q: Fixed>() -> i128 {
    (1i128 << (Q::FRAC + 1)) - 1
}

/// Random words whose rows (across the stacked tables, `widths` columns
/// each) sum in absolute value to at most `limit`: drawn over the whole
/// word, then each row over the limit scaled down (truncating toward zero,
/// so the sum stays at or below it). Many rows end up right at the edge.
fn rows<Q: Fixed>(words: &[i64], r: usize, widths: &[usize]) -> Vec<Vec<Vec<Q>>> {
    let width: usize = widths.iter().sum();
    let mut it = words.iter().cycle();
    let mut tables: Vec<Vec<Vec<Q>>> = widths.iter().map(|_| Vec::new()).collect();
    for _ in 0..r {
        let raw: Vec<i128> = (0..width)
            .map(|_| {
                let w = i128::from(*it.next().unwrap());
                w >> (63 - Q::FRAC)
            })
            .collect();
        let sum: i128 = raw.iter().map(|v| v.abs()).sum();
        let row: Vec<Q> = raw
            .iter()
            .map(|&v| {
                let v = if sum > limit::<Q>() {
                    v * limit::<Q>() / sum
                } else {
                    v
                };
                Q::from_i64_saturating(v as i64)
            })
            .collect();
        let mut start = 0;
        for (t, &w) in tables.iter_mut().zip(widths) {
            t.push(row[start..start + w].to_vec());
            start += w;
        }
    }
    tables
}

fn matrix<Q: Fixed, const R: usize, const C: usize>(rows: &[Vec<Q>]) -> Matrix<Q, R, C> {
    Matrix::from_rows(std::array::from_fn(|i| std::array::from_fn(|j| rows[i][j])))
}

/// Q inputs: a third each of −2ᶠ, 2ᶠ − 1 and a random word.
fn input<Q: Fixed, const K: usize>(words: &mut impl Iterator<Item = i64>) -> [Q; K] {
    std::array::from_fn(|_| {
        let w = words.next().unwrap_or(0);
        match w.rem_euclid(3) {
            0 => Q::MIN,
            1 => Q::MAX,
            _ => Q::from_i64_saturating(w >> (63 - Q::FRAC)),
        }
    })
}

struct Drawn<Q: Fixed> {
    scales: Scales<N, M, P>,
    exp: [i8; N],
    out: FixedOutputMap<Q, N, M, P>,
    state: Vec<Vec<Vec<Q>>>,
}

fn draw<Q: Fixed>(words: &[i64], exps: &[i8]) -> Drawn<Q> {
    let cd = rows::<Q>(words, P, &[N, M]);
    let state = rows::<Q>(&words[7..], N, &[N, M, P]);
    let f = Q::FRAC as i8;
    let e = |k: usize| exps[k % exps.len()].clamp(-f, f);
    Drawn {
        scales: Scales {
            state: [0; N],
            input: [0; M],
            output: [0; P],
        },
        exp: std::array::from_fn(e),
        out: FixedOutputMap {
            c: matrix(&cd[0]),
            d: matrix(&cd[1]),
            exp: std::array::from_fn(|j| e(j + N)),
        },
        state,
    }
}

/// Steps both observers with the same inputs and masks and compares
/// everything they expose after each step.
macro_rules! same_steps {
    ($slow:expr, $fast:expr, $words:expr, $q:ty) => {{
        let (mut slow, mut fast) = ($slow, $fast);
        let mut words = $words.iter().copied().cycle().skip(3);
        for _ in 0..STEPS {
            let u: [$q; M] = input(&mut words);
            let y: [$q; P] = input(&mut words);
            let mask = ChannelMask::from_bits(words.next().unwrap_or(0) as u32);
            let (a, b) = (
                slow.step_masked(&u, &y, mask),
                fast.step_masked(&u, &y, mask),
            );
            prop_assert_eq!(a, b);
            prop_assert_eq!(slow.estimate(), fast.estimate());
        }
    }};
}

macro_rules! headroom_tests {
    ($name:ident, $q:ty) => {
        mod $name {
            use super::*;

            fn fused(d: &Drawn<$q>) -> FixedFusedTables<$q, N, M, P> {
                FixedFusedTables {
                    scales: d.scales,
                    f: matrix(&d.state[0]),
                    g: matrix(&d.state[1]),
                    h: matrix(&d.state[2]),
                    exp: d.exp,
                    output: d.out,
                    gate: None,
                }
            }

            fn predictor(d: &Drawn<$q>) -> FixedPredictorTables<$q, N, M, P> {
                FixedPredictorTables {
                    scales: d.scales,
                    a: matrix(&d.state[0]),
                    b: matrix(&d.state[1]),
                    l: matrix(&d.state[2]),
                    exp: d.exp,
                    output: d.out,
                    gate: None,
                }
            }

            fn current(d: &Drawn<$q>) -> FixedCurrentTables<$q, N, M, P> {
                // K alone carries the third block, [A B] the first two.
                FixedCurrentTables {
                    scales: d.scales,
                    a: matrix(&d.state[0]),
                    b: matrix(&d.state[1]),
                    exp: d.exp,
                    k: matrix(&d.state[2]),
                    k_exp: d.exp,
                    output: d.out,
                    gate: None,
                }
            }

            proptest! {
                #![proptest_config(fixed_seed(64))]

                #[test]
                fn proven_steps_equal_saturating_ones(
                    words in prop::collection::vec(any::<i64>(), 64),
                    exps in prop::collection::vec(any::<i8>(), 5),
                ) {
                    let d = draw::<$q>(&words, &exps);
                    let t = fused(&d);
                    prop_assert!(t.prove().is_some());
                    let p = t.check().unwrap();
                    same_steps!(
                        FixedFusedObserver::new(&t, [<$q>::default(); N]),
                        FixedFusedObserver::proven(&p, [<$q>::default(); N]),
                        words, $q
                    );
                    let t = predictor(&d);
                    prop_assert!(t.prove().is_some());
                    let p = t.check().unwrap();
                    same_steps!(
                        FixedPredictorObserver::new(&t, [<$q>::default(); N]),
                        FixedPredictorObserver::proven(&p, [<$q>::default(); N]),
                        words, $q
                    );
                    let t = current(&d);
                    prop_assert!(t.prove().is_some());
                    let p = t.check().unwrap();
                    let mut slow = FixedCurrentObserver::new(&t, [<$q>::default(); N]);
                    let mut fast = FixedCurrentObserver::proven(&p, [<$q>::default(); N]);
                    let mut it = words.iter().copied().cycle();
                    for _ in 0..STEPS {
                        let u: [$q; M] = input(&mut it);
                        let y: [$q; P] = input(&mut it);
                        let mask = ChannelMask::from_bits(it.next().unwrap_or(0) as u32);
                        prop_assert_eq!(slow.step_masked(&u, &y, mask), fast.step_masked(&u, &y, mask));
                        prop_assert_eq!(slow.filtered(), fast.filtered());
                        prop_assert_eq!(slow.predicted(), fast.predicted());
                    }
                }

                #[test]
                fn rows_over_the_limit_are_refused(
                    words in prop::collection::vec(any::<i64>(), 64),
                    row in 0..N,
                    excess in 1..1000i64,
                ) {
                    let d = draw::<$q>(&words, &[0]);
                    let mut t = fused(&d);
                    // Row `row` of [F G H] set to sum exactly limit + excess:
                    // entries of F (N words, each within the word) first.
                    let target = limit::<$q>() + i128::from(excess);
                    let mut left = target;
                    let mut f = t.f.to_rows();
                    let mut g = t.g.to_rows();
                    let mut h = t.h.to_rows();
                    let cells = f[row].iter_mut().chain(g[row].iter_mut()).chain(h[row].iter_mut());
                    for c in cells {
                        let take = left.min(1i128 << <$q>::FRAC);
                        *c = <$q>::from_i64_saturating(-(take as i64));
                        left -= take;
                    }
                    prop_assert_eq!(left, 0);
                    t.f = Matrix::from_rows(f);
                    t.g = Matrix::from_rows(g);
                    t.h = Matrix::from_rows(h);
                    let err = t.check().unwrap_err();
                    prop_assert_eq!(err.table, TableName::F);
                    prop_assert_eq!(err.row, row);
                    prop_assert_eq!(i128::from(err.sum), target);
                    prop_assert!(t.prove().is_none());
                }
            }
        }
    };
}

headroom_tests!(q15, Q15);
headroom_tests!(q31, Q31);

/// The demo tables `from_float` builds leave room to spare: 2ᶠ + n/2 per
/// row at most (the row-exponent rule in the `Fixed` docs), far below the
/// limit, so `check` accepts every table a design produces.
#[test]
fn a_row_at_the_limit_is_accepted_and_one_above_refused() {
    let at = |v: i32| FixedFusedTables::<Q31, 1, 1, 1> {
        scales: Scales {
            state: [0],
            input: [0],
            output: [0],
        },
        f: Matrix::from_rows([[Q31(i32::MIN)]]),
        g: Matrix::from_rows([[Q31(i32::MIN)]]),
        h: Matrix::from_rows([[Q31(v)]]),
        exp: [1],
        output: FixedOutputMap {
            c: Matrix::ZERO,
            d: Matrix::ZERO,
            exp: [0],
        },
        gate: None,
    };
    // |−2³¹| + |−2³¹| = 2³², one above the limit 2³² − 1 already.
    assert!(at(0).check().is_err());
    assert!(at(0).prove().is_none());
    let ok = FixedFusedTables::<Q31, 1, 1, 1> {
        f: Matrix::from_rows([[Q31(i32::MAX)]]),
        ..at(0)
    };
    // 2³¹ − 1 + 2³¹ = 2³² − 1: exactly at the limit.
    assert!(ok.check().is_ok());
    assert!(ok.prove().is_some());
}
