//! The input signal the plant and the observers are driven with.

use crate::SimError;
use std::path::Path;

/// The commanded input, the same shape on every input channel.
#[derive(Debug, Clone, PartialEq)]
pub enum InputSignal {
    /// 0 before step `at`, `amplitude` from it on.
    Step {
        /// Size, in each input's unit.
        amplitude: f64,
        /// First step at the new value.
        at: usize,
    },
    /// amplitude · sin(2π f k T).
    Sine {
        /// Peak, in each input's unit.
        amplitude: f64,
        /// Frequency in Hz.
        hz: f64,
    },
    /// ±amplitude from a maximal-length 15-bit shift register, each value
    /// held for `hold` steps.
    Prbs {
        /// Level, in each input's unit.
        amplitude: f64,
        /// Steps per bit.
        hold: usize,
    },
    /// One row per step, one column per input (read from a CSV file).
    Table(Vec<Vec<f64>>),
}

impl InputSignal {
    /// Parses `step:A[@K]`, `sine:A:HZ`, `prbs:A[:HOLD]` or `csv:FILE`
    /// (`m` columns expected in the file).
    pub fn parse(text: &str, m: usize) -> Result<Self, SimError> {
        let bad = |why: &str| {
            SimError::BadInput(format!(
                "--input {text}: {why} (expected step:A[@K], sine:A:HZ, prbs:A[:HOLD] or csv:FILE)"
            ))
        };
        let (kind, rest) = text.split_once(':').ok_or_else(|| bad("no signal kind"))?;
        let number = |s: &str, what: &str| -> Result<f64, SimError> {
            s.trim()
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| bad(&format!("{what} `{s}` is not a finite number")))
        };
        let count = |s: &str, what: &str| -> Result<usize, SimError> {
            s.trim()
                .parse::<usize>()
                .map_err(|_| bad(&format!("{what} `{s}` is not a whole number ≥ 0")))
        };
        match kind {
            "step" => {
                let (a, at) = match rest.split_once('@') {
                    Some((a, k)) => (a, count(k, "start step")?),
                    None => (rest, 0),
                };
                Ok(Self::Step {
                    amplitude: number(a, "amplitude")?,
                    at,
                })
            }
            "sine" => {
                let (a, f) = rest
                    .split_once(':')
                    .ok_or_else(|| bad("a sine needs its frequency"))?;
                let hz = number(f, "frequency")?;
                if hz < 0.0 {
                    return Err(bad("the frequency must be ≥ 0"));
                }
                Ok(Self::Sine {
                    amplitude: number(a, "amplitude")?,
                    hz,
                })
            }
            "prbs" => {
                let (a, hold) = match rest.split_once(':') {
                    Some((a, h)) => (a, count(h, "hold")?),
                    None => (rest, 10),
                };
                if hold == 0 {
                    return Err(bad("the hold must be at least 1 step"));
                }
                Ok(Self::Prbs {
                    amplitude: number(a, "amplitude")?,
                    hold,
                })
            }
            "csv" => Ok(Self::Table(read_csv(Path::new(rest), m)?)),
            _ => Err(bad(&format!("unknown signal kind `{kind}`"))),
        }
    }

    /// The number of rows a table holds (`None` for generated signals).
    pub fn rows(&self) -> Option<usize> {
        match self {
            Self::Table(rows) => Some(rows.len()),
            _ => None,
        }
    }
}

/// The commanded input a step at a time, on `m` channels, for sample
/// period `t`.
pub struct InputStream<'a> {
    signal: &'a InputSignal,
    t: f64,
    k: usize,
    /// Per channel: its shift register and the bit it holds.
    prbs: Vec<(Lfsr15, bool)>,
}

impl<'a> InputStream<'a> {
    /// The stream of `signal` from step 0.
    pub fn new(signal: &'a InputSignal, m: usize, t: f64) -> Self {
        let prbs = (0..m)
            .map(|j| {
                let mut r = Lfsr15::for_channel(j);
                let bit = r.clock();
                (r, bit)
            })
            .collect();
        Self {
            signal,
            t,
            k: 0,
            prbs,
        }
    }

    /// The inputs of the next step into `out` (one per channel).
    pub fn next_row(&mut self, out: &mut [f64]) {
        let k = self.k;
        self.k += 1;
        for (j, (slot, (prbs, bit))) in out.iter_mut().zip(&mut self.prbs).enumerate() {
            *slot = match self.signal {
                InputSignal::Step { amplitude, at } => {
                    if k >= *at {
                        *amplitude
                    } else {
                        0.0
                    }
                }
                InputSignal::Sine { amplitude, hz } => {
                    amplitude * (std::f64::consts::TAU * hz * k as f64 * self.t).sin()
                }
                InputSignal::Prbs { amplitude, hold } => {
                    if k > 0 && k.is_multiple_of(*hold) {
                        *bit = prbs.clock();
                    }
                    if *bit { *amplitude } else { -amplitude }
                }
                InputSignal::Table(rows) => {
                    rows.get(k).and_then(|r| r.get(j)).copied().unwrap_or(0.0)
                }
            };
        }
    }
}

/// The maximal-length shift register of x¹⁵ + x¹⁴ + 1 (period 32 767; the
/// tap pair is the common practice one for 15 bits, from memory), started
/// from a register that differs per channel.
struct Lfsr15(u16);

impl Lfsr15 {
    fn for_channel(channel: usize) -> Self {
        // Never zero: bit 0 is always set.
        Self(0x7fff ^ ((channel as u16).wrapping_mul(0x1235) & 0x7ffe))
    }

    /// Shifts once and returns the new low bit.
    fn clock(&mut self) -> bool {
        let bit = ((self.0 >> 14) ^ (self.0 >> 13)) & 1;
        self.0 = ((self.0 << 1) | bit) & 0x7fff;
        bit == 1
    }
}

/// Largest `csv:` input read (bytes).
pub const MAX_CSV_BYTES: u64 = 64 << 20;

/// Reads one row of `m` numbers per line; blank lines and lines starting
/// with `#` are skipped, commas separate the columns.
fn read_csv(path: &Path, m: usize) -> Result<Vec<Vec<f64>>, SimError> {
    let name = path.display();
    let text = lookout_design::emit::read_text_limited(path, MAX_CSV_BYTES)
        .map_err(|e| SimError::BadInput(format!("--input csv:{name}: cannot read it: {e}")))?;
    let mut rows = Vec::new();
    for (index, line) in text.lines().enumerate() {
        let line = line.trim();
        if line.is_empty() || line.starts_with('#') {
            continue;
        }
        let cells: Vec<&str> = line.split(',').map(str::trim).collect();
        if cells.len() != m {
            return Err(SimError::BadInput(format!(
                "{name}: line {}: expected {m} column{} (one per input), found {}",
                index + 1,
                if m == 1 { "" } else { "s" },
                cells.len()
            )));
        }
        let row = cells
            .iter()
            .enumerate()
            .map(|(c, cell)| {
                cell.parse::<f64>()
                    .ok()
                    .filter(|v| v.is_finite())
                    .ok_or_else(|| {
                        SimError::BadInput(format!(
                            "{name}: line {}, column {}: `{cell}` is not a finite number",
                            index + 1,
                            c + 1
                        ))
                    })
            })
            .collect::<Result<Vec<f64>, SimError>>()?;
        rows.push(row);
    }
    if rows.is_empty() {
        return Err(SimError::BadInput(format!("{name}: no rows of inputs")));
    }
    Ok(rows)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A maximal-length 15-bit register has period 2¹⁵ − 1 and, over one
    /// period, 2¹⁴ ones and 2¹⁴ − 1 zeros (the balance property of
    /// m-sequences).
    #[test]
    fn prbs_is_a_maximal_length_sequence() {
        let mut r = Lfsr15::for_channel(0);
        let start = r.0;
        let ones = (0..32_767).filter(|_| r.clock()).count();
        assert_eq!(ones, 16_384);
        assert_eq!(r.0, start);
        let mut r = Lfsr15::for_channel(0);
        assert!((1..32_767).all(|_| {
            r.clock();
            r.0 != start
        }));
    }
}
