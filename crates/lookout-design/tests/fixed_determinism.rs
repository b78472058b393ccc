//! Determinism: the fixed-point steps are bit-reproducible. A fixed scenario
//! of our own ("heated block", invented data for demos) runs the Q31
//! predictor for 1000 steps from integer-only inputs; its state sequence is
//! checked bit for bit against an independent model of the documented
//! arithmetic (i128, floor division), and its FNV-1a 64 checksum is
//! recorded below.

use lookout::{
    ChannelMask, FixedOutputMap, FixedPredictorObserver, FixedPredictorTables, Matrix, Observer,
    Plant, PredictorTables, Q31, Scales,
};
use lookout_design::fixed_point::QuantiseTables as _;

/// The firmware example must assert this same checksum on the target
/// (FNV-1a 64 over the little-endian bytes of x̂[0], x̂[1] after each step
/// of [`scenario_inputs`]).
const HEATED_BLOCK_Q31_CHECKSUM: u64 = 0x8c8d_443a_6c93_c48c;

/// Heated block, sampled every second: block temperature and sensor
/// temperature above ambient (K, |x| < 64, s = 6), heater power (W,
/// |u| < 16, s = 4), the sensor temperature measured (s = 6). Invented data.
fn heated_block_float() -> PredictorTables<f64, 2, 1, 1> {
    PredictorTables {
        plant: Plant {
            a: Matrix::from_rows([[0.98, 0.0], [0.1, 0.9]]),
            b: Matrix::from_rows([[0.05], [0.0]]),
            c: Matrix::from_rows([[0.0, 1.0]]),
            d: Matrix::from_rows([[0.0]]),
        },
        l: Matrix::from_rows([[0.3], [0.5]]),
        gate: None,
    }
}

const SCALES: Scales<2, 1, 1> = Scales {
    state: [6, 6],
    input: [4],
    output: [6],
};

/// The Q31 tables of the scenario, written out so that firmware can use
/// them as a `static` without the host converter. Checked by hand against
/// the number format: row 0 of [A B L] normalises to [0.98, 0, 0.0125, 0.3]
/// (B: 0.05 · 2^(4−6)), sum 1.2925, so e = 1 and q = round(τ · 2³⁰), e.g.
/// 0.98 · 2³⁰ = 1 052 266 987.52 → 1 052 266 988; row 1 is [0.1, 0.9, 0,
/// 0.5], sum 1.5, e = 1; C's row [0, 1] needs e = 1 because 1 · 2³¹ does
/// not fit an i32.
static HEATED_BLOCK_Q31: FixedPredictorTables<Q31, 2, 1, 1> = FixedPredictorTables {
    scales: SCALES,
    a: Matrix::from_rows([
        [Q31(1_052_266_988), Q31(0)],
        [Q31(107_374_182), Q31(966_367_642)],
    ]),
    b: Matrix::from_rows([[Q31(13_421_773)], [Q31(0)]]),
    l: Matrix::from_rows([[Q31(322_122_547)], [Q31(536_870_912)]]),
    exp: [1, 1],
    output: FixedOutputMap {
        c: Matrix::from_rows([[Q31(0), Q31(1_073_741_824)]]),
        d: Matrix::from_rows([[Q31(0)]]),
        exp: [1],
    },
    gate: None,
};

/// Step k's input, reading and mask, integers only: a heater square wave of
/// period 200 steps, a reading from a 32-bit multiplicative hash of k
/// shifted to ±2⁻⁴ of full scale around a slow ramp, and every seventh
/// reading dropped.
fn scenario_inputs(k: u32) -> ([Q31; 1], [Q31; 1], ChannelMask) {
    let u = if (k / 100).is_multiple_of(2) {
        1 << 29
    } else {
        -(1 << 28)
    };
    let noise = (k.wrapping_mul(2_654_435_761) as i32) >> 4;
    let ramp = (k as i32) << 20;
    let mask = if k % 7 == 6 {
        ChannelMask::NONE
    } else {
        ChannelMask::all(1)
    };
    ([Q31(u)], [Q31(ramp.saturating_add(noise))], mask)
}

fn fnv1a(hash: u64, bytes: &[u8]) -> u64 {
    bytes.iter().fold(hash, |h, &b| {
        (h ^ u64::from(b)).wrapping_mul(0x0000_0100_0000_01b3)
    })
}

const FNV_OFFSET: u64 = 0xcbf2_9ce4_8422_2325;

fn run(tables: &FixedPredictorTables<Q31, 2, 1, 1>) -> (Vec<[Q31; 2]>, u64) {
    let mut o = FixedPredictorObserver::new(tables, [Q31(0); 2]);
    let mut hash = FNV_OFFSET;
    let mut states = Vec::new();
    for k in 0..1000 {
        let (u, y, mask) = scenario_inputs(k);
        let status = o.step_masked(&u, &y, mask);
        assert_eq!(
            (status.corrected(), status.saturations),
            (mask.contains(0), 0)
        );
        for x in o.estimate() {
            hash = fnv1a(hash, &x.0.to_le_bytes());
        }
        states.push(*o.estimate());
    }
    (states, hash)
}

/// The documented arithmetic, written independently: exact i128 sums,
/// round half up as floor((s + 2^(k−1)) / 2^k), clamp to i32.
fn reference(t: &FixedPredictorTables<Q31, 2, 1, 1>) -> Vec<[Q31; 2]> {
    let round = |s: i128, e: i8| {
        let k = 31 - i32::from(e);
        let q = (s + (1i128 << (k - 1))).div_euclid(1i128 << k);
        q.clamp(i128::from(i32::MIN), i128::from(i32::MAX))
    };
    let (a, b, l, c, d) = (
        t.a.to_rows(),
        t.b.to_rows(),
        t.l.to_rows(),
        t.output.c.to_rows(),
        t.output.d.to_rows(),
    );
    let v = |q: Q31| i128::from(q.0);
    let mut x = [0i128; 2];
    let mut out = Vec::new();
    for k in 0..1000 {
        let (u, y, mask) = scenario_inputs(k);
        let r = if mask.contains(0) {
            let yhat = round(
                v(c[0][0]) * x[0] + v(c[0][1]) * x[1] + v(d[0][0]) * v(u[0]),
                t.output.exp[0],
            );
            (v(y[0]) - yhat).clamp(i128::from(i32::MIN), i128::from(i32::MAX))
        } else {
            0
        };
        let next = [0, 1].map(|i| {
            round(
                v(a[i][0]) * x[0] + v(a[i][1]) * x[1] + v(b[i][0]) * v(u[0]) + v(l[i][0]) * r,
                t.exp[i],
            )
        });
        x = next;
        out.push(x.map(|xi| Q31(xi as i32)));
    }
    out
}

#[test]
fn written_out_tables_are_the_converted_ones() {
    let converted =
        FixedPredictorTables::<Q31, 2, 1, 1>::from_float(&heated_block_float(), SCALES).unwrap();
    assert_eq!(converted, HEATED_BLOCK_Q31);
}

#[test]
fn heated_block_is_bit_exact_and_reproducible() {
    let (first, hash) = run(&HEATED_BLOCK_Q31);
    let (second, again) = run(&HEATED_BLOCK_Q31);
    assert_eq!(first, second);
    assert_eq!(hash, again);
    assert_eq!(first, reference(&HEATED_BLOCK_Q31));
    // The scenario is not trivial: the estimate moves over a good part of
    // its range (the block heats by several kelvin).
    assert!(first.iter().any(|x| x[0].0 > 1 << 26 && x[1].0 > 1 << 26));
    assert_eq!(hash, HEATED_BLOCK_Q31_CHECKSUM);
}
