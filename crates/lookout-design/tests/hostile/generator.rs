//! A structure-aware generator of model files: valid TOML with every
//! section, random shapes (right, mismatched, ragged, huge) and extreme
//! values (±1e308, subnormals, 0, `nan`/`inf` literals, wrong types).
//!
//! Deterministic: case `k` of seed `s` is always the same text, so a case a
//! run reports is rerun with `LOOKOUT_FUZZ_SEED=s LOOKOUT_FUZZ_CASE=k`.

use std::fmt::Write as _;

/// SplitMix64 (Steele, Lea and Flood, "Fast splittable pseudorandom number
/// generators", OOPSLA 2014): small, fast, and enough for test inputs.
pub struct Rng {
    state: u64,
    /// Percent of numbers drawn from the hostile values (0: a clean model).
    heat: u64,
}

impl Rng {
    /// The stream of case `case` of seed `seed`.
    pub fn for_case(seed: u64, case: u64) -> Self {
        let mut r = Rng {
            state: seed ^ case.wrapping_mul(0xA076_1D64_78BD_642F),
            heat: 0,
        };
        r.heat = [0, 0, 2, 5, 10, 40][r.below(6) as usize];
        r
    }

    fn next(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in 0..n (n > 0).
    fn below(&mut self, n: u64) -> u64 {
        self.next() % n.max(1)
    }

    fn chance(&mut self, percent: u64) -> bool {
        self.below(100) < percent
    }

    /// Uniform in [0, 1).
    fn unit(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// One of `clean`, or (as often as the model's heat says) one of `wild`.
    fn choose<'a>(&mut self, clean: &[&'a str], wild: &[&'a str]) -> &'a str {
        if self.heat > 0 && self.chance(self.heat.max(10)) {
            self.pick(wild)
        } else {
            self.pick(clean)
        }
    }

    fn pick<'a>(&mut self, items: &[&'a str]) -> &'a str {
        items
            .get(self.below(items.len() as u64) as usize)
            .copied()
            .unwrap_or("")
    }
}

/// Values at the ends of the f64 range and at its special points.
const EXTREMES: &[&str] = &[
    "0.0",
    "-0.0",
    "1.0",
    "-1.0",
    "1e308",
    "-1e308",
    "1.7976931348623157e308",
    "-1.7e308",
    "5e-324",
    "-5e-324",
    "1e-310",
    "2.2250738585072014e-308",
    "1e154",
    "-1e154",
    "1e-154",
    "1e300",
    "1e-300",
    "1e16",
    "1e-16",
    "0.9999999999",
    "1.0000000001",
    "-0.9999999999",
    "3.4e38",
    "1.2e-38",
];

/// Non-numbers where numbers belong.
const GARBAGE: &[&str] = &[
    "nan",
    "inf",
    "-inf",
    "+nan",
    "\"NaN\"",
    "\"1e3\"",
    "true",
    "[]",
    "{}",
    "9223372036854775807",
    "-9223372036854775808",
    "1e999",
    "[1.0]",
];

/// One generated number literal (or, rarely, something that is not one).
pub fn number(r: &mut Rng) -> String {
    if !r.chance(r.heat) {
        return if r.chance(30) {
            "0.0".to_string()
        } else {
            format!("{:?}", (r.unit() - 0.5) * 20.0)
        };
    }
    match r.below(100) {
        0..=39 => format!("{:?}", (r.unit() - 0.5) * 20.0),
        40..=54 => r.pick(EXTREMES).to_string(),
        55..=59 => r.pick(GARBAGE).to_string(),
        60..=69 => format!("{}", r.below(5) as i64 - 2),
        70..=79 => "0.0".to_string(),
        _ => {
            // Log-uniform magnitude over the whole f64 range.
            let e = r.below(629) as i32 - 320;
            let v = (1.0 + r.unit()) * 10f64.powi(e);
            let v = if r.chance(50) { -v } else { v };
            if v.is_finite() {
                format!("{v:?}")
            } else {
                "1e308".to_string()
            }
        }
    }
}

/// A rows × cols array of arrays (either now and then off by one),
/// sometimes ragged or empty.
fn matrix(r: &mut Rng, rows: usize, cols: usize) -> String {
    let (rows, cols) = (jiggle(r, rows), jiggle(r, cols));
    let mut s = String::from("[");
    for i in 0..rows {
        let len = if r.heat == 0 {
            cols
        } else if r.chance(3) {
            cols + 1
        } else if r.chance(3) {
            cols.saturating_sub(1)
        } else {
            cols
        };
        let row: Vec<String> = (0..len).map(|_| number(r)).collect();
        let _ = write!(s, "{}[{}]", if i > 0 { ", " } else { "" }, row.join(", "));
    }
    s.push(']');
    s
}

fn list(r: &mut Rng, len: usize, item: impl Fn(&mut Rng) -> String) -> String {
    let len = jiggle(r, len);
    let items: Vec<String> = (0..len).map(|_| item(r)).collect();
    format!("[{}]", items.join(", "))
}

/// A dimension: mostly small, sometimes 0, sometimes large, rarely above
/// the design's state limit.
fn dim(r: &mut Rng, most: usize) -> usize {
    match r.below(100) {
        0..=79 => 1 + r.below(most as u64) as usize,
        80..=84 => 0,
        85..=96 => 1 + r.below(12) as usize,
        // Large (a 90-state Riccati solve takes seconds in a debug build),
        // or just past the design's state limit (refused at once).
        97 | 98 => 20 + r.below(21) as usize,
        _ => lookout_design::model::MAX_STATES + 1 + r.below(30) as usize,
    }
}

/// Off by one now and then, for mismatched shapes.
fn jiggle(r: &mut Rng, d: usize) -> usize {
    if r.heat == 0 {
        return d;
    }
    match r.below(100) {
        0..=2 => d + 1,
        3..=5 => d.saturating_sub(1),
        _ => d,
    }
}

fn pole(r: &mut Rng, discrete: bool) -> String {
    if r.chance(20) {
        let re = number(r);
        let im = number(r);
        return format!("{{ re = {re}, im = {im} }}");
    }
    if discrete && r.chance(70) {
        format!("{:?}", (r.unit() * 2.0 - 1.0) * 0.999_999_999)
    } else if r.chance(60) {
        format!("{:?}", -(r.unit() * 100.0))
    } else {
        number(r)
    }
}

/// A whole model file.
pub fn model(r: &mut Rng) -> String {
    let n = dim(r, 4);
    let m = dim(r, 2);
    let p = dim(r, 2);
    let mut s = String::new();
    let _ = writeln!(
        s,
        "name = \"{}\"",
        r.choose(&["fuzz", "m", "x_1"], &["1bad", "", "a b"])
    );
    let t = match r.below(10) {
        _ if r.heat == 0 => r.pick(&["0.001", "0.01", "1e-4", "0.1"]).to_string(),
        0..=5 => "0.001".to_string(),
        6 => r
            .pick(&["5e-324", "1e-300", "1e-9", "1e300", "0.0", "-1.0"])
            .to_string(),
        _ => number(r),
    };
    if r.heat == 0 || !r.chance(2) {
        let _ = writeln!(s, "sample_period = {t}");
    }
    let discrete = r.chance(40);
    let _ = writeln!(s, "\n[plant]");
    let _ = writeln!(
        s,
        "domain = \"{}\"",
        if r.heat > 0 && r.chance(2) {
            "sampled"
        } else if discrete {
            "discrete"
        } else {
            "continuous"
        }
    );
    let _ = writeln!(s, "a = {}", matrix(r, n, n));
    let _ = writeln!(s, "b = {}", matrix(r, n, m));
    let _ = writeln!(s, "c = {}", matrix(r, p, n));
    if r.chance(30) {
        let _ = writeln!(s, "d = {}", matrix(r, p, m));
    }
    if r.chance(10) {
        let _ = writeln!(
            s,
            "state_names = {}",
            list(r, n, |r| format!("\"s{}\"", r.below(4)))
        );
    }
    observer(r, &mut s, n, p, discrete);
    if r.chance(25) {
        fixed_point(r, &mut s, n, m, p);
    }
    if r.chance(15) {
        disturbances(r, &mut s, n, m, p);
    }
    if r.heat > 0 && r.chance(2) {
        let _ = writeln!(s, "\n[unknown_section]\nkey = 1");
    }
    s
}

fn observer(r: &mut Rng, s: &mut String, n: usize, p: usize, discrete: bool) {
    let _ = writeln!(s, "\n[observer]");
    let _ = writeln!(
        s,
        "form = \"{}\"",
        r.choose(&["predictor", "current"], &["other"])
    );
    if r.chance(20) {
        let prob = r.pick(&[
            "0.999",
            "0.5",
            "1.0",
            "0.0",
            "1e-300",
            "0.9999999999999999",
            "nan",
        ]);
        let _ = writeln!(s, "gate_probability = {prob}");
    }
    match r.below(4) {
        0 => {
            let _ = writeln!(s, "poles = {}", list(r, n, |r| pole(r, false)));
        }
        1 => {
            let _ = writeln!(s, "discrete_poles = {}", list(r, n, |r| pole(r, true)));
        }
        2 => {
            let _ = writeln!(s, "gain = {}", matrix(r, n, p));
            if r.chance(50) {
                let _ = writeln!(
                    s,
                    "gain_method = \"{}\"",
                    r.choose(&["hold", "pole-map"], &["zoh"])
                );
            }
        }
        _ => {
            let k = dim(r, 2);
            let _ = writeln!(s, "\n[observer.kalman]");
            let _ = writeln!(s, "noise_input = {}", matrix(r, n, k));
            let _ = writeln!(s, "process_noise = {}", covariance(r, k));
            let _ = writeln!(s, "measurement_noise = {}", covariance(r, p));
            let domain = if discrete || r.chance(20) {
                "discrete"
            } else {
                "continuous"
            };
            let _ = writeln!(s, "noise_domain = \"{domain}\"");
        }
    }
}

/// Mostly a positive diagonal (with extreme entries now and then), else
/// any matrix.
fn covariance(r: &mut Rng, k: usize) -> String {
    let k = jiggle(r, k);
    if r.chance(25) {
        return matrix(r, k, k);
    }
    let mut s = String::from("[");
    for i in 0..k {
        let row: Vec<String> = (0..k)
            .map(|j| {
                if i != j {
                    "0.0".to_string()
                } else if r.chance(80) {
                    format!("{:?}", 1e-6 + r.unit())
                } else {
                    r.pick(&["1e308", "5e-324", "1e-300", "1e300", "1e-310", "0.0"])
                        .to_string()
                }
            })
            .collect();
        let _ = write!(s, "{}[{}]", if i > 0 { ", " } else { "" }, row.join(", "));
    }
    s.push(']');
    s
}

fn fixed_point(r: &mut Rng, s: &mut String, n: usize, m: usize, p: usize) {
    let _ = writeln!(s, "\n[fixed_point]");
    let _ = writeln!(s, "format = \"{}\"", r.choose(&["q31", "q15"], &["q7"]));
    let range = |r: &mut Rng| {
        if r.chance(70) {
            format!("{:?}", 0.1 + r.unit() * 100.0)
        } else {
            number(r)
        }
    };
    let _ = writeln!(s, "input_range = {}", list(r, m, range));
    let _ = writeln!(s, "output_range = {}", list(r, p, range));
    if r.chance(30) {
        let _ = writeln!(s, "state_range = {}", list(r, n, range));
    }
    if r.chance(20) {
        let _ = writeln!(
            s,
            "margin_bits = {}",
            r.choose(&["0", "1", "8"], &["31", "64", "-1"])
        );
    }
    if r.chance(20) {
        let _ = writeln!(s, "stability_margin = {}", number(r));
    }
}

fn disturbances(r: &mut Rng, s: &mut String, n: usize, m: usize, p: usize) {
    for k in 0..1 + r.below(2) {
        let _ = writeln!(s, "\n[[disturbances.input]]\nname = \"load{k}\"");
        if r.chance(50) {
            let _ = writeln!(s, "input = {}", r.below(m as u64 + u64::from(r.heat > 0)));
        } else {
            let _ = writeln!(s, "column = {}", list(r, n, number));
        }
        let _ = writeln!(
            s,
            "shape = \"{}\"",
            r.choose(&["constant", "ramp"], &["sine"])
        );
        if r.chance(30) {
            let _ = writeln!(s, "noise = {}", number(r));
        }
    }
    if r.chance(40) {
        let _ = writeln!(
            s,
            "\n[[disturbances.output_bias]]\nname = \"bias\"\noutput = {}",
            r.below(p as u64 + u64::from(r.heat > 0))
        );
    }
}
