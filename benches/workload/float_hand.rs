//! The float updates written by hand, three ways: a plain loop over
//! row-major arrays (as a C programmer writes it), heap-allocated dynamic
//! nalgebra matrices (as many first versions are written), and fixed-size
//! nalgebra `SMatrix` code (operators by reference, or `gemv`).
//!
//! Each computes exactly the update of the lookout form it stands beside,
//! on the same tables: the loops in the same order of operations (so their
//! results are bit-identical), nalgebra in its own order (so within the
//! dot-product rounding bound; see `super::check`).
// Written the way the baselines stand for: indexed loops as in C, and
// nalgebra's operators by reference (`&a * x`) as its documentation shows.
#![allow(clippy::needless_range_loop, clippy::op_ref)]

use super::{CURRENT, PREDICTOR, Stepper};
use lookout::Matrix;
use nalgebra::{ArrayStorage, DMatrix, DVector, RealField, SMatrix, SVector};
use num_traits::ConstZero;

/// `f32` or `f64`, as nalgebra and lookout's `Matrix::to_rows` need them.
pub trait Float: RealField + Copy + ConstZero {}
impl<T: RealField + Copy + ConstZero> Float for T {}

/// The tables of one form in one struct: for the predictor `gain` is L, for
/// the current form K; for the fused form `a`, `b`, `gain` are F, G, H.
#[derive(Clone, Copy, Debug)]
pub struct FloatTables<T, const N: usize, const M: usize, const P: usize> {
    /// A (or F).
    pub a: Matrix<T, N, N>,
    /// B (or G).
    pub b: Matrix<T, N, M>,
    /// C.
    pub c: Matrix<T, P, N>,
    /// D.
    pub d: Matrix<T, P, M>,
    /// L, K or H.
    pub gain: Matrix<T, N, P>,
}

fn smatrix<T: Float, const R: usize, const C: usize>(m: &Matrix<T, R, C>) -> SMatrix<T, R, C> {
    SMatrix::from_data(ArrayStorage(*m.as_cols()))
}

fn dmatrix<T: Float, const R: usize, const C: usize>(m: &Matrix<T, R, C>) -> DMatrix<T> {
    DMatrix::from_column_slice(R, C, m.as_cols().as_flattened())
}

/// The plain loop over row-major arrays.
#[derive(Clone, Debug)]
pub struct FloatLoop<T, const N: usize, const M: usize, const P: usize, const FORM: u8> {
    a: [[T; N]; N],
    b: [[T; M]; N],
    c: [[T; N]; P],
    d: [[T; M]; P],
    gain: [[T; P]; N],
    x: [T; N],
    filtered: [T; N],
}

impl<T: Float, const N: usize, const M: usize, const P: usize, const FORM: u8>
    FloatLoop<T, N, M, P, FORM>
{
    /// The loop on `t`, starting from `x0`.
    pub fn new(t: &FloatTables<T, N, M, P>, x0: [T; N]) -> Self {
        Self {
            a: t.a.to_rows(),
            b: t.b.to_rows(),
            c: t.c.to_rows(),
            d: t.d.to_rows(),
            gain: t.gain.to_rows(),
            x: x0,
            filtered: x0,
        }
    }

    /// r = y − C x − D u, subtracting term by term.
    #[inline(always)]
    fn innovation(&self, u: &[T; M], y: &[T; P]) -> [T; P] {
        let mut r = *y;
        for j in 0..P {
            let mut s = y[j];
            for i in 0..N {
                s -= self.c[j][i] * self.x[i];
            }
            for k in 0..M {
                s -= self.d[j][k] * u[k];
            }
            r[j] = s;
        }
        r
    }

    /// a · x + b · u (+ gain · w when given), one row at a time.
    #[inline(always)]
    fn rows(&self, x: &[T; N], u: &[T; M], w: Option<&[T; P]>) -> [T; N] {
        let mut next = [T::zero(); N];
        for i in 0..N {
            let mut s = T::zero();
            for j in 0..N {
                s += self.a[i][j] * x[j];
            }
            for k in 0..M {
                s += self.b[i][k] * u[k];
            }
            if let Some(w) = w {
                for j in 0..P {
                    s += self.gain[i][j] * w[j];
                }
            }
            next[i] = s;
        }
        next
    }
}

impl<T: Float, const N: usize, const M: usize, const P: usize, const FORM: u8> Stepper<T, N, M, P>
    for FloatLoop<T, N, M, P, FORM>
{
    #[inline]
    fn step(&mut self, u: &[T; M], y: &[T; P]) {
        match FORM {
            PREDICTOR => {
                let r = self.innovation(u, y);
                self.x = self.rows(&self.x, u, Some(&r));
            }
            CURRENT => {
                let r = self.innovation(u, y);
                for i in 0..N {
                    let mut s = self.x[i];
                    for j in 0..P {
                        s += self.gain[i][j] * r[j];
                    }
                    self.filtered[i] = s;
                }
                self.x = self.rows(&self.filtered, u, None);
            }
            _ => self.x = self.rows(&self.x, u, Some(y)),
        }
    }
    fn state(&self) -> [T; N] {
        self.x
    }
    fn set_state(&mut self, x: [T; N]) {
        self.x = x;
    }
}

/// Fixed-size nalgebra: `&a * &x + …` by reference, or `gemv` when `GEMV`.
#[derive(Clone, Debug)]
pub struct FloatStatic<
    T,
    const N: usize,
    const M: usize,
    const P: usize,
    const FORM: u8,
    const GEMV: bool,
> {
    a: SMatrix<T, N, N>,
    b: SMatrix<T, N, M>,
    c: SMatrix<T, P, N>,
    d: SMatrix<T, P, M>,
    gain: SMatrix<T, N, P>,
    x: SVector<T, N>,
    filtered: SVector<T, N>,
}

impl<T: Float, const N: usize, const M: usize, const P: usize, const FORM: u8, const GEMV: bool>
    FloatStatic<T, N, M, P, FORM, GEMV>
{
    /// The nalgebra version on `t`, starting from `x0`.
    pub fn new(t: &FloatTables<T, N, M, P>, x0: [T; N]) -> Self {
        Self {
            a: smatrix(&t.a),
            b: smatrix(&t.b),
            c: smatrix(&t.c),
            d: smatrix(&t.d),
            gain: smatrix(&t.gain),
            x: SVector::from(x0),
            filtered: SVector::from(x0),
        }
    }
}

impl<T: Float, const N: usize, const M: usize, const P: usize, const FORM: u8, const GEMV: bool>
    Stepper<T, N, M, P> for FloatStatic<T, N, M, P, FORM, GEMV>
{
    #[inline]
    fn step(&mut self, u: &[T; M], y: &[T; P]) {
        let (one, zero) = (T::one(), T::zero());
        let u = SVector::<T, M>::from(*u);
        let y = SVector::<T, P>::from(*y);
        let innovation = |x: &SVector<T, N>| {
            if GEMV {
                let mut r = y;
                r.gemv(-one, &self.c, x, one);
                r.gemv(-one, &self.d, &u, one);
                r
            } else {
                y - &self.c * x - &self.d * &u
            }
        };
        let rows = |x: &SVector<T, N>, w: Option<&SVector<T, P>>| {
            if GEMV {
                let mut next = SVector::<T, N>::zeros();
                next.gemv(one, &self.a, x, zero);
                next.gemv(one, &self.b, &u, one);
                if let Some(w) = w {
                    next.gemv(one, &self.gain, w, one);
                }
                next
            } else {
                match w {
                    Some(w) => &self.a * x + &self.b * &u + &self.gain * w,
                    None => &self.a * x + &self.b * &u,
                }
            }
        };
        match FORM {
            PREDICTOR => {
                let r = innovation(&self.x);
                self.x = rows(&self.x, Some(&r));
            }
            CURRENT => {
                let r = innovation(&self.x);
                let filtered = if GEMV {
                    let mut f = self.x;
                    f.gemv(one, &self.gain, &r, one);
                    f
                } else {
                    self.x + &self.gain * &r
                };
                self.x = rows(&filtered, None);
                self.filtered = filtered;
            }
            _ => self.x = rows(&self.x, Some(&y)),
        }
    }
    fn state(&self) -> [T; N] {
        self.x.into()
    }
    fn set_state(&mut self, x: [T; N]) {
        self.x = SVector::from(x);
    }
}

/// Heap-allocated dynamic nalgebra, operators by reference: every step
/// allocates its input, reading and intermediate vectors.
#[derive(Clone, Debug)]
pub struct FloatDynamic<T: Float, const FORM: u8> {
    a: DMatrix<T>,
    b: DMatrix<T>,
    c: DMatrix<T>,
    d: DMatrix<T>,
    gain: DMatrix<T>,
    x: DVector<T>,
    filtered: DVector<T>,
}

impl<T: Float, const FORM: u8> FloatDynamic<T, FORM> {
    /// The dynamic version on `t`, starting from `x0`.
    pub fn new<const N: usize, const M: usize, const P: usize>(
        t: &FloatTables<T, N, M, P>,
        x0: [T; N],
    ) -> Self {
        Self {
            a: dmatrix(&t.a),
            b: dmatrix(&t.b),
            c: dmatrix(&t.c),
            d: dmatrix(&t.d),
            gain: dmatrix(&t.gain),
            x: DVector::from_column_slice(&x0),
            filtered: DVector::from_column_slice(&x0),
        }
    }
}

impl<T: Float, const N: usize, const M: usize, const P: usize, const FORM: u8> Stepper<T, N, M, P>
    for FloatDynamic<T, FORM>
{
    #[inline]
    fn step(&mut self, u: &[T; M], y: &[T; P]) {
        let u = DVector::from_column_slice(u);
        let y = DVector::from_column_slice(y);
        match FORM {
            PREDICTOR => {
                let r = y - &self.c * &self.x - &self.d * &u;
                self.x = &self.a * &self.x + &self.b * &u + &self.gain * &r;
            }
            CURRENT => {
                let r = y - &self.c * &self.x - &self.d * &u;
                self.filtered = &self.x + &self.gain * &r;
                self.x = &self.a * &self.filtered + &self.b * &u;
            }
            _ => self.x = &self.a * &self.x + &self.b * &u + &self.gain * &y,
        }
    }
    fn state(&self) -> [T; N] {
        core::array::from_fn(|i| self.x.get(i).copied().unwrap_or_else(T::zero))
    }
    fn set_state(&mut self, x: [T; N]) {
        self.x = DVector::from_column_slice(&x);
    }
}
