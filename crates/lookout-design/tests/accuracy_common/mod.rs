//! Runs the real runtime in every form (predictor, fused) and number format
//! (f64, f32, Q31, Q15) over one input record and measures each one's
//! largest deviation from the f64 run of the same form, per state.

#![allow(dead_code)]

use lookout::{
    CurrentObserver, CurrentTables, Fixed, FixedCurrentObserver, FixedCurrentTables,
    FixedFusedObserver, FixedFusedTables, FixedPredictorObserver, FixedPredictorTables,
    FusedObserver, FusedTables, Matrix, Observer, Plant, PredictorObserver, PredictorTables, Q15,
    Q31, Real, Scales,
};
use lookout_design::fixed_point::{FixedDesign, FormKind, NumberKind};
use lookout_design::fixed_point::{QuantiseTables as _, dequantise_real, quantise_real};
use nalgebra::DMatrix;

/// The float tables of a predictor or current-form design (one input, one
/// output); `l` holds L or K.
#[derive(Debug, Clone)]
pub struct Mats {
    pub current: bool,
    pub ad: DMatrix<f64>,
    pub bd: DMatrix<f64>,
    pub cd: DMatrix<f64>,
    pub dd: DMatrix<f64>,
    pub l: DMatrix<f64>,
    pub f: DMatrix<f64>,
    pub g: DMatrix<f64>,
    pub h: DMatrix<f64>,
}

impl Mats {
    /// A predictor design with error matrix `f`: Ad = F + L C, G = Bd − L D, H = L.
    pub fn from_error(f: DMatrix<f64>, l: DMatrix<f64>, c: DMatrix<f64>, b: DMatrix<f64>) -> Self {
        let d = DMatrix::zeros(c.nrows(), b.ncols());
        Self {
            current: false,
            ad: &f + &l * &c,
            g: &b - &l * &d,
            h: l.clone(),
            bd: b,
            cd: c,
            dd: d,
            l,
            f,
        }
    }

    /// A current-form design with error matrix `f` and gain K:
    /// Ad = F (I − K C)⁻¹, G = Bd − Ad K D, H = Ad K.
    pub fn current_from_error(
        f: DMatrix<f64>,
        k: DMatrix<f64>,
        c: DMatrix<f64>,
        b: DMatrix<f64>,
    ) -> Option<Self> {
        let n = f.nrows();
        let d = DMatrix::zeros(c.nrows(), b.ncols());
        let ad = &f * (DMatrix::identity(n, n) - &k * &c).try_inverse()?;
        let h = &ad * &k;
        Some(Self {
            current: true,
            g: &b - &h * &d,
            h,
            bd: b,
            cd: c,
            dd: d,
            l: k,
            f,
            ad,
        })
    }
}

trait Cast: Real {
    fn of(v: f64) -> Self;
    fn to(self) -> f64;
}
impl Cast for f64 {
    fn of(v: f64) -> Self {
        v
    }
    fn to(self) -> f64 {
        self
    }
}
impl Cast for f32 {
    fn of(v: f64) -> Self {
        v as f32
    }
    fn to(self) -> f64 {
        f64::from(self)
    }
}

fn mat<T: Cast, const R: usize, const C: usize>(m: &DMatrix<f64>) -> Matrix<T, R, C> {
    let mut rows = [[T::of(0.0); C]; R];
    for (i, row) in rows.iter_mut().enumerate() {
        for (j, v) in row.iter_mut().enumerate() {
            *v = T::of(m[(i, j)]);
        }
    }
    Matrix::from_rows(rows)
}

fn plant<T: Cast, const N: usize>(m: &Mats) -> Plant<T, N, 1, 1> {
    Plant {
        a: mat(&m.ad),
        b: mat(&m.bd),
        c: mat(&m.cd),
        d: mat(&m.dd),
    }
}

fn predictor<T: Cast, const N: usize>(m: &Mats) -> PredictorTables<T, N, 1, 1> {
    PredictorTables {
        plant: plant(m),
        l: mat(&m.l),
        gate: None,
    }
}

fn current<T: Cast, const N: usize>(m: &Mats) -> CurrentTables<T, N, 1, 1> {
    CurrentTables {
        plant: plant(m),
        k: mat(&m.l),
        gate: None,
    }
}

fn fused<T: Cast, const N: usize>(m: &Mats) -> FusedTables<T, N, 1, 1> {
    FusedTables {
        f: mat(&m.f),
        g: mat(&m.g),
        h: mat(&m.h),
        c: mat(&m.cd),
        d: mat(&m.dd),
        gate: None,
    }
}

/// Estimates per step, n per row, of one observer over `record` (u, y).
type Trace = Vec<Vec<f64>>;

fn float_runs<T: Cast, const N: usize>(m: &Mats, record: &[(f64, f64)]) -> [Trace; 2] {
    let (pt, ct, ft) = (predictor::<T, N>(m), current::<T, N>(m), fused::<T, N>(m));
    let mut p = PredictorObserver::new(&pt, [T::of(0.0); N]);
    let mut c = CurrentObserver::new(&ct, [T::of(0.0); N]);
    let mut f = FusedObserver::new(&ft, [T::of(0.0); N]);
    let (mut a, mut b) = (Vec::new(), Vec::new());
    let real = |x: &[T; N]| -> Vec<f64> { x.iter().map(|v| v.to()).collect() };
    for &(u, y) in record {
        let (u, y) = ([T::of(u)], [T::of(y)]);
        if m.current {
            c.step(&u, &y);
            a.push(real(c.predicted()));
        } else {
            p.step(&u, &y);
            a.push(real(p.estimate()));
        }
        f.step(&u, &y);
        b.push(real(f.estimate()));
    }
    [a, b]
}

fn q<Q: Fixed>(v: f64, e: i8) -> Q {
    quantise_real::<Q>(v, e).expect("inside its scale")
}

/// One fixed observer driven over `record`: `step` takes the Q input and
/// reading and returns the saturations and the estimate.
fn fixed_trace<Q: Fixed, const N: usize>(
    s: Scales<N, 1, 1>,
    record: &[(f64, f64)],
    mut step: impl FnMut(&[Q; 1], &[Q; 1]) -> (u16, [Q; N]),
) -> Trace {
    record
        .iter()
        .map(|&(u, y)| {
            let (sat, x) = step(&[q::<Q>(u, s.input[0])], &[q::<Q>(y, s.output[0])]);
            assert_eq!(sat, 0, "a fixed observer saturated");
            x.iter()
                .zip(s.state)
                .map(|(&v, e)| dequantise_real(v, e))
                .collect()
        })
        .collect()
}

/// The design's own form and the fused form in fixed point; `None` when
/// the tables cannot be built at these scales.
fn fixed_runs<Q: Fixed, const N: usize>(
    m: &Mats,
    s: Scales<N, 1, 1>,
    record: &[(f64, f64)],
) -> Option<[Trace; 2]> {
    let own = if m.current {
        let t = FixedCurrentTables::<Q, N, 1, 1>::from_float(&current::<f64, N>(m), s).ok()?;
        let mut o = FixedCurrentObserver::new(&t, [Q::ZERO; N]);
        fixed_trace(s, record, |u, y| (o.step(u, y).saturations, *o.predicted()))
    } else {
        let t = FixedPredictorTables::<Q, N, 1, 1>::from_float(&predictor::<f64, N>(m), s).ok()?;
        let mut o = FixedPredictorObserver::new(&t, [Q::ZERO; N]);
        fixed_trace(s, record, |u, y| (o.step(u, y).saturations, *o.estimate()))
    };
    let t = FixedFusedTables::<Q, N, 1, 1>::from_float(&fused::<f64, N>(m), s).ok()?;
    let mut o = FixedFusedObserver::new(&t, [Q::ZERO; N]);
    let fused = fixed_trace(s, record, |u, y| (o.step(u, y).saturations, *o.estimate()));
    Some([own, fused])
}

fn max_dev(run: &Trace, reference: &Trace) -> Vec<f64> {
    let n = reference.first().map_or(0, Vec::len);
    (0..n)
        .map(|i| {
            run.iter()
                .zip(reference)
                .map(|(a, b)| (a[i] - b[i]).abs())
                .fold(0.0, f64::max)
        })
        .collect()
}

/// One measured combination beside the design's bound for it (its own
/// deviation from the exact observer plus the f64 run's).
pub struct Measured {
    pub form: FormKind,
    pub format: NumberKind,
    pub measured: Vec<f64>,
    pub bound: Vec<f64>,
}

/// Every runnable combination of `fx`'s design `m` over `record`.
pub fn measure<const N: usize>(fx: &FixedDesign, m: &Mats, record: &[(f64, f64)]) -> Vec<Measured> {
    let arr = |v: &[i8]| -> [i8; N] { std::array::from_fn(|i| v[i]) };
    let s = Scales::<N, 1, 1> {
        state: arr(&fx.state_exponents),
        input: [fx.input_exponents[0]],
        output: [fx.output_exponents[0]],
    };
    let reference = float_runs::<f64, N>(m, record);
    let mut runs = vec![(NumberKind::F32, float_runs::<f32, N>(m, record))];
    if let Some(r) = fixed_runs::<Q31, N>(m, s, record) {
        runs.push((NumberKind::Q31, r));
    }
    if let Some(r) = fixed_runs::<Q15, N>(m, s, record) {
        runs.push((NumberKind::Q15, r));
    }
    let mut out = Vec::new();
    for (format, traces) in &runs {
        let own = if m.current {
            FormKind::Current
        } else {
            FormKind::Predictor
        };
        for (k, form) in [own, FormKind::Fused].into_iter().enumerate() {
            let (Some(d), Some(d64)) = (
                fx.accuracy.get(form, *format),
                fx.accuracy.get(form, NumberKind::F64),
            ) else {
                continue;
            };
            if d.refused.is_some() {
                continue;
            }
            out.push(Measured {
                form,
                format: *format,
                measured: max_dev(&traces[k], &reference[k]),
                bound: d.total.iter().zip(&d64.total).map(|(a, b)| a + b).collect(),
            });
        }
    }
    out
}
