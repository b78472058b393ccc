//! The Q31 "heated block" scenario of the runtime's host test
//! `crates/lookout/tests/fixed_determinism.rs`, copied here (tables, input
//! generator, checksum): that test is the source of truth, and the firmware
//! must reproduce its checksum bit for bit on the target.
//!
//! Heated block, sampled every second: block and sensor temperature above
//! ambient (K, |x| < 64), heater power (W, |u| < 16), the sensor temperature
//! measured. Invented data.

use lookout::{
    ChannelMask, FixedOutputMap, FixedPredictorObserver, FixedPredictorTables, Matrix, Proven, Q31,
    Scales,
};

/// The checksum the host test records (FNV-1a 64 over the little-endian
/// bytes of x̂\[0\], x̂\[1\] after each of the 1000 steps).
pub const CHECKSUM: u64 = 0x8c8d_443a_6c93_c48c;

/// Steps of the scenario.
pub const STEPS: u32 = 1000;

/// The Q31 tables, as written out in the host test, proven at compile time
/// to leave the accumulator headroom: the firmware runs the plain
/// multiply-accumulate kernels on them and must still match the host's
/// checksum (recorded with the saturating ones).
pub static TABLES: Proven<FixedPredictorTables<Q31, 2, 1, 1>> = match (FixedPredictorTables {
    scales: Scales {
        state: [6, 6],
        input: [4],
        output: [6],
    },
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
})
.prove()
{
    Some(t) => t,
    None => panic!("heated block: a row breaks the accumulator headroom rule"),
};

/// Step k's input, reading and mask (integers only), as in the host test: a
/// heater square wave of period 200 steps, a hashed "noise" of ±2⁻⁴ of full
/// scale around a slow ramp, and every seventh reading dropped.
pub fn inputs(k: u32) -> ([Q31; 1], [Q31; 1], ChannelMask) {
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

/// What the scenario gave on this target.
pub struct Run {
    /// FNV-1a 64 of the state sequence.
    pub checksum: u64,
    /// Steps whose status disagreed with the mask or reported a saturation.
    pub bad_statuses: u32,
    /// The final estimate.
    pub last: [Q31; 2],
}

/// Runs the scenario from x̂ = 0.
pub fn run() -> Run {
    let mut o = FixedPredictorObserver::proven(&TABLES, [Q31(0); 2]);
    let mut hash = FNV_OFFSET;
    let mut bad_statuses = 0;
    for k in 0..STEPS {
        let (u, y, mask) = inputs(k);
        let status = o.step_masked(&u, &y, mask);
        if status.corrected() != mask.contains(0) || status.saturations != 0 {
            bad_statuses += 1;
        }
        for x in o.estimate() {
            hash = fnv1a(hash, &x.0.to_le_bytes());
        }
    }
    Run {
        checksum: hash,
        bad_statuses,
        last: *o.estimate(),
    }
}
