//! Shared helpers of the `numerics_*` integration tests: the SciPy fixture
//! loader and comparison helpers.
#![allow(dead_code)]

use nalgebra::{Complex, DMatrix};
use serde::Deserialize;

/// One plant of `tests/fixtures/scipy_reference.json`
/// (written by `tools/fixtures/make_scipy_fixtures.py`).
#[derive(Debug, Deserialize)]
#[allow(non_snake_case)]
pub struct Case {
    pub name: String,
    pub note: String,
    pub T: f64,
    pub A: Vec<Vec<f64>>,
    pub B: Vec<Vec<f64>>,
    pub C: Vec<Vec<f64>>,
    pub G: Vec<Vec<f64>>,
    pub Qc: Vec<Vec<f64>>,
    pub R: Vec<Vec<f64>>,
    pub expm_AT: Vec<Vec<f64>>,
    pub Ad: Vec<Vec<f64>>,
    pub Bd: Vec<Vec<f64>>,
    pub Qd: Vec<Vec<f64>>,
    pub P: Vec<Vec<f64>>,
    pub S: Vec<Vec<f64>>,
    pub K: Vec<Vec<f64>>,
    pub L: Vec<Vec<f64>>,
    pub eig_A: Vec<[f64; 2]>,
    pub eig_Ad: Vec<[f64; 2]>,
}

#[derive(Debug, Deserialize)]
pub struct Fixture {
    pub scipy_version: String,
    pub numpy_version: String,
    pub cases: Vec<Case>,
}

pub fn fixture() -> Fixture {
    let text = include_str!("../fixtures/scipy_reference.json");
    serde_json::from_str(text).expect("fixture parses")
}

pub fn m(rows: &[Vec<f64>]) -> DMatrix<f64> {
    let r = rows.len();
    let c = rows.first().map_or(0, Vec::len);
    DMatrix::from_fn(r, c, |i, j| rows[i][j])
}

pub fn eigs(pairs: &[[f64; 2]]) -> Vec<Complex<f64>> {
    pairs.iter().map(|p| Complex::new(p[0], p[1])).collect()
}

/// `‖x − y‖_F / ‖y‖_F` (absolute if `y = 0`).
pub fn rel(x: &DMatrix<f64>, y: &DMatrix<f64>) -> f64 {
    assert_eq!(x.shape(), y.shape(), "shapes differ");
    let d = (x - y).norm();
    let s = y.norm();
    if s > 0.0 { d / s } else { d }
}

/// Largest distance between two equally sorted eigenvalue lists, divided by `scale`.
pub fn eig_dist(x: &[Complex<f64>], y: &[Complex<f64>], scale: f64) -> f64 {
    assert_eq!(x.len(), y.len());
    x.iter()
        .zip(y)
        .map(|(a, b)| (a - b).norm() / scale)
        .fold(0.0, f64::max)
}

/// Greedy nearest matching distance: for each `want`, the distance to the
/// nearest not yet used `got`, relative to `max(|want|, 1)`; the worst of them.
pub fn match_dist(got: &[Complex<f64>], want: &[Complex<f64>]) -> f64 {
    assert_eq!(got.len(), want.len());
    let mut used = vec![false; got.len()];
    let mut worst = 0.0_f64;
    for w in want {
        let (j, d) = got
            .iter()
            .enumerate()
            .filter(|(j, _)| !used[*j])
            .map(|(j, g)| (j, (g - w).norm()))
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .unwrap();
        used[j] = true;
        worst = worst.max(d / w.norm().max(1.0));
    }
    worst
}

pub fn c(re: f64, im: f64) -> Complex<f64> {
    Complex::new(re, im)
}

/// `mat![a, b; c, d]`: a row-major `DMatrix<f64>` literal.
#[macro_export]
macro_rules! mat {
    ($($($x:expr),+);+ $(;)?) => {{
        let rows: Vec<Vec<f64>> = vec![$(vec![$($x),+]),+];
        $crate::numerics_common::m(&rows)
    }};
}
