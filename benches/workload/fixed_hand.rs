//! The Q15/Q31 updates written by hand: a plain integer loop over row-major
//! word arrays with the same accumulator width as lookout (i32 for Q15, i64
//! for Q31) and one rounding shift per output element, and the same in
//! nalgebra on widened integer matrices (dynamic, fixed-size by reference,
//! fixed-size `gemv`).
//!
//! The accumulations use plain integer adds: with tables from `from_float`
//! (which obey the row-sum rule of [`lookout::Fixed`]) they cannot
//! overflow, so they agree bit for bit with lookout's saturating ones; every
//! store clamps to the word, as lookout's does.
// Written the way the baselines stand for: indexed loops as in C, and
// nalgebra's operators by reference (`&a * x`) as its documentation shows.
#![allow(clippy::needless_range_loop, clippy::op_ref)]

use super::{CURRENT, PREDICTOR, Stepper};
use lookout::{Fixed, Matrix, Q15, Q31};
use nalgebra::{
    ClosedAddAssign, ClosedMulAssign, ClosedSubAssign, DMatrix, DVector, SMatrix, SVector,
};
use num_traits::{One, Zero};
use std::fmt::Debug;
use std::ops::Shr;

/// A Q word with the plain integer type of its accumulator.
pub trait Word: Fixed + 'static {
    /// `i32` for Q15, `i64` for Q31.
    type Int: nalgebra::Scalar
        + Copy
        + Ord
        + Debug
        + Zero
        + One
        + ClosedAddAssign
        + ClosedSubAssign
        + ClosedMulAssign
        + Shr<Self::Int, Output = Self::Int>;
    /// The word's least and largest values in the accumulator type.
    const LO: Self::Int;
    /// See `LO`.
    const HI: Self::Int;
    /// The raw word, widened.
    fn int(self) -> Self::Int;
    /// The word of an in-range value.
    fn word(v: Self::Int) -> Self;
    /// A small constant in the accumulator type.
    fn constant(v: i64) -> Self::Int;
    /// `Q::from_real`.
    fn from_f64(v: f64, exponent: i8) -> Option<Self>;
}

macro_rules! word {
    ($q:ident, $w:ty, $int:ty) => {
        impl Word for $q {
            type Int = $int;
            const LO: $int = <$w>::MIN as $int;
            const HI: $int = <$w>::MAX as $int;
            #[inline(always)]
            fn int(self) -> $int {
                <$int>::from(self.0)
            }
            #[inline(always)]
            fn word(v: $int) -> Self {
                $q(v as $w)
            }
            fn constant(v: i64) -> $int {
                v as $int
            }
            fn from_f64(v: f64, exponent: i8) -> Option<Self> {
                $q::from_real(v, exponent)
            }
        }
    };
}
word!(Q15, i16, i32);
word!(Q31, i32, i64);

/// One output element's rounding: (acc + half) >> shift.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Rounding<I> {
    half: I,
    shift: I,
}

impl<I: Copy> Rounding<I> {
    /// The rounding of a row with exponent `exp`: a shift by F − exp.
    pub fn of<Q: Word<Int = I>>(exp: i8) -> Self {
        let bits = 8 * std::mem::size_of::<I>() as i64;
        let k = (i64::from(Q::FRAC) - i64::from(exp)).clamp(0, bits - 1);
        let half = if k == 0 { 0 } else { 1i64 << (k - 1) };
        Self {
            half: Q::constant(half),
            shift: Q::constant(k),
        }
    }
}

#[inline(always)]
fn round<Q: Word>(acc: Q::Int, r: Rounding<Q::Int>) -> Q::Int {
    (acc + r.half) >> r.shift
}

#[inline(always)]
fn clamp<Q: Word>(v: Q::Int) -> Q::Int {
    v.clamp(Q::LO, Q::HI)
}

/// The Q tables of one form: `a`, `b`, `gain` are A, B, L (predictor),
/// A, B, K (current form) or F, G, H (fused).
#[derive(Clone, Copy, Debug)]
pub struct FixedTables<Q, const N: usize, const M: usize, const P: usize> {
    /// A (or F).
    pub a: Matrix<Q, N, N>,
    /// B (or G).
    pub b: Matrix<Q, N, M>,
    /// C.
    pub c: Matrix<Q, P, N>,
    /// D.
    pub d: Matrix<Q, P, M>,
    /// L, K or H.
    pub gain: Matrix<Q, N, P>,
    /// Row exponents of the state update.
    pub exp: [i8; N],
    /// Row exponents of K (current form); equal to `exp` otherwise.
    pub gain_exp: [i8; N],
    /// Row exponents of [C D].
    pub out_exp: [i8; P],
}

struct Roundings<I, const N: usize, const P: usize> {
    state: [Rounding<I>; N],
    gain: [Rounding<I>; N],
    out: [Rounding<I>; P],
}

impl<Q: Word, const N: usize, const M: usize, const P: usize> FixedTables<Q, N, M, P> {
    fn roundings(&self) -> Roundings<Q::Int, N, P> {
        Roundings {
            state: self.exp.map(Rounding::of::<Q>),
            gain: self.gain_exp.map(Rounding::of::<Q>),
            out: self.out_exp.map(Rounding::of::<Q>),
        }
    }
}

/// The plain integer loop over row-major word arrays.
pub struct FixedLoop<Q: Word, const N: usize, const M: usize, const P: usize, const FORM: u8> {
    a: [[Q; N]; N],
    b: [[Q; M]; N],
    c: [[Q; N]; P],
    d: [[Q; M]; P],
    gain: [[Q; P]; N],
    rnd: Roundings<Q::Int, N, P>,
    x: [Q; N],
    filtered: [Q; N],
}

impl<Q: Word, const N: usize, const M: usize, const P: usize, const FORM: u8>
    FixedLoop<Q, N, M, P, FORM>
{
    /// The loop on `t`, starting from `x0`.
    pub fn new(t: &FixedTables<Q, N, M, P>, x0: [Q; N]) -> Self {
        Self {
            a: t.a.to_rows(),
            b: t.b.to_rows(),
            c: t.c.to_rows(),
            d: t.d.to_rows(),
            gain: t.gain.to_rows(),
            rnd: t.roundings(),
            x: x0,
            filtered: x0,
        }
    }

    #[inline(always)]
    fn innovation(&self, u: &[Q; M], y: &[Q; P]) -> [Q; P] {
        let mut r = *y;
        for j in 0..P {
            let mut s = Q::Int::zero();
            for i in 0..N {
                s += self.c[j][i].int() * self.x[i].int();
            }
            for k in 0..M {
                s += self.d[j][k].int() * u[k].int();
            }
            r[j] = Q::word(clamp::<Q>(y[j].int() - round::<Q>(s, self.rnd.out[j])));
        }
        r
    }

    #[inline(always)]
    fn rows(&self, x: &[Q; N], u: &[Q; M], w: Option<&[Q; P]>) -> [Q; N] {
        let mut next = *x;
        for i in 0..N {
            let mut s = Q::Int::zero();
            for j in 0..N {
                s += self.a[i][j].int() * x[j].int();
            }
            for k in 0..M {
                s += self.b[i][k].int() * u[k].int();
            }
            if let Some(w) = w {
                for j in 0..P {
                    s += self.gain[i][j].int() * w[j].int();
                }
            }
            next[i] = Q::word(clamp::<Q>(round::<Q>(s, self.rnd.state[i])));
        }
        next
    }
}

impl<Q: Word, const N: usize, const M: usize, const P: usize, const FORM: u8> Stepper<Q, N, M, P>
    for FixedLoop<Q, N, M, P, FORM>
{
    #[inline]
    fn step(&mut self, u: &[Q; M], y: &[Q; P]) {
        match FORM {
            PREDICTOR => {
                let r = self.innovation(u, y);
                self.x = self.rows(&self.x, u, Some(&r));
            }
            CURRENT => {
                let r = self.innovation(u, y);
                for i in 0..N {
                    let mut s = Q::Int::zero();
                    for j in 0..P {
                        s += self.gain[i][j].int() * r[j].int();
                    }
                    let k = round::<Q>(s, self.rnd.gain[i]);
                    self.filtered[i] = Q::word(clamp::<Q>(self.x[i].int() + k));
                }
                self.x = self.rows(&self.filtered, u, None);
            }
            _ => self.x = self.rows(&self.x, u, Some(y)),
        }
    }
    fn state(&self) -> [Q; N] {
        self.x
    }
    fn set_state(&mut self, x: [Q; N]) {
        self.x = x;
    }
}

fn widen<Q: Word, const R: usize, const C: usize>(m: &Matrix<Q, R, C>) -> SMatrix<Q::Int, R, C> {
    SMatrix::from_fn(|i, j| m.get(i, j).map_or(Q::Int::zero(), Q::int))
}

/// nalgebra on widened integer matrices, fixed-size: operators by reference,
/// or `gemv` when `GEMV`.
pub struct FixedStatic<
    Q: Word,
    const N: usize,
    const M: usize,
    const P: usize,
    const FORM: u8,
    const GEMV: bool,
> {
    a: SMatrix<Q::Int, N, N>,
    b: SMatrix<Q::Int, N, M>,
    c: SMatrix<Q::Int, P, N>,
    d: SMatrix<Q::Int, P, M>,
    gain: SMatrix<Q::Int, N, P>,
    state: SVector<Rounding<Q::Int>, N>,
    gain_rnd: SVector<Rounding<Q::Int>, N>,
    out: SVector<Rounding<Q::Int>, P>,
    x: SVector<Q::Int, N>,
    filtered: SVector<Q::Int, N>,
}

impl<Q: Word, const N: usize, const M: usize, const P: usize, const FORM: u8, const GEMV: bool>
    FixedStatic<Q, N, M, P, FORM, GEMV>
{
    /// The nalgebra version on `t`, starting from `x0`.
    pub fn new(t: &FixedTables<Q, N, M, P>, x0: [Q; N]) -> Self {
        let r = t.roundings();
        let x = SVector::from(x0.map(Q::int));
        Self {
            a: widen(&t.a),
            b: widen(&t.b),
            c: widen(&t.c),
            d: widen(&t.d),
            gain: widen(&t.gain),
            state: SVector::from(r.state),
            gain_rnd: SVector::from(r.gain),
            out: SVector::from(r.out),
            x,
            filtered: x,
        }
    }

    /// `a · x + b · u (+ gain · w)`, each row rounded and clamped.
    #[inline(always)]
    fn rows(
        &self,
        x: &SVector<Q::Int, N>,
        u: &SVector<Q::Int, M>,
        w: Option<&SVector<Q::Int, P>>,
    ) -> SVector<Q::Int, N> {
        let (one, zero) = (Q::Int::one(), Q::Int::zero());
        let acc = if GEMV {
            let mut acc = SVector::<Q::Int, N>::zeros();
            acc.gemv(one, &self.a, x, zero);
            acc.gemv(one, &self.b, u, one);
            if let Some(w) = w {
                acc.gemv(one, &self.gain, w, one);
            }
            acc
        } else {
            match w {
                Some(w) => &self.a * x + &self.b * u + &self.gain * w,
                None => &self.a * x + &self.b * u,
            }
        };
        acc.zip_map(&self.state, |a, r| clamp::<Q>(round::<Q>(a, r)))
    }
}

impl<Q: Word, const N: usize, const M: usize, const P: usize, const FORM: u8, const GEMV: bool>
    Stepper<Q, N, M, P> for FixedStatic<Q, N, M, P, FORM, GEMV>
{
    #[inline]
    fn step(&mut self, u: &[Q; M], y: &[Q; P]) {
        let (one, zero) = (Q::Int::one(), Q::Int::zero());
        let u = SVector::from(u.map(Q::int));
        let y = SVector::from(y.map(Q::int));
        let innovation = |x: &SVector<Q::Int, N>| {
            let predicted = if GEMV {
                let mut p = SVector::<Q::Int, P>::zeros();
                p.gemv(one, &self.c, x, zero);
                p.gemv(one, &self.d, &u, one);
                p
            } else {
                &self.c * x + &self.d * &u
            };
            y.zip_zip_map(&predicted, &self.out, |yj, pj, r| {
                clamp::<Q>(yj - round::<Q>(pj, r))
            })
        };
        match FORM {
            PREDICTOR => {
                let r = innovation(&self.x);
                self.x = self.rows(&self.x, &u, Some(&r));
            }
            CURRENT => {
                let r = innovation(&self.x);
                let k = if GEMV {
                    let mut k = SVector::<Q::Int, N>::zeros();
                    k.gemv(one, &self.gain, &r, zero);
                    k
                } else {
                    &self.gain * &r
                };
                self.filtered = self.x.zip_zip_map(&k, &self.gain_rnd, |x, k, r| {
                    clamp::<Q>(x + round::<Q>(k, r))
                });
                self.x = self.rows(&self.filtered, &u, None);
            }
            _ => self.x = self.rows(&self.x, &u, Some(&y)),
        }
    }
    fn state(&self) -> [Q; N] {
        let x: [Q::Int; N] = self.x.into();
        x.map(Q::word)
    }
    fn set_state(&mut self, x: [Q; N]) {
        self.x = SVector::from(x.map(Q::int));
    }
}

/// nalgebra on heap-allocated dynamic integer matrices, by reference.
pub struct FixedDynamic<Q: Word, const FORM: u8> {
    a: DMatrix<Q::Int>,
    b: DMatrix<Q::Int>,
    c: DMatrix<Q::Int>,
    d: DMatrix<Q::Int>,
    gain: DMatrix<Q::Int>,
    state: DVector<Rounding<Q::Int>>,
    gain_rnd: DVector<Rounding<Q::Int>>,
    out: DVector<Rounding<Q::Int>>,
    x: DVector<Q::Int>,
    filtered: DVector<Q::Int>,
}

fn dynamic<Q: Word, const R: usize, const C: usize>(m: &Matrix<Q, R, C>) -> DMatrix<Q::Int> {
    DMatrix::from_fn(R, C, |i, j| m.get(i, j).map_or(Q::Int::zero(), Q::int))
}

impl<Q: Word, const FORM: u8> FixedDynamic<Q, FORM> {
    /// The dynamic version on `t`, starting from `x0`.
    pub fn new<const N: usize, const M: usize, const P: usize>(
        t: &FixedTables<Q, N, M, P>,
        x0: [Q; N],
    ) -> Self {
        let r = t.roundings();
        let x = DVector::from_iterator(N, x0.map(Q::int));
        Self {
            a: dynamic(&t.a),
            b: dynamic(&t.b),
            c: dynamic(&t.c),
            d: dynamic(&t.d),
            gain: dynamic(&t.gain),
            state: DVector::from_iterator(N, r.state),
            gain_rnd: DVector::from_iterator(N, r.gain),
            out: DVector::from_iterator(P, r.out),
            filtered: x.clone(),
            x,
        }
    }
}

impl<Q: Word, const N: usize, const M: usize, const P: usize, const FORM: u8> Stepper<Q, N, M, P>
    for FixedDynamic<Q, FORM>
{
    #[inline]
    fn step(&mut self, u: &[Q; M], y: &[Q; P]) {
        let u = DVector::from_iterator(M, u.map(Q::int));
        let y = DVector::from_iterator(P, y.map(Q::int));
        let round_rows = |acc: DVector<Q::Int>, rnd: &DVector<Rounding<Q::Int>>| {
            acc.zip_map(rnd, |a, r| clamp::<Q>(round::<Q>(a, r)))
        };
        let innovation = || {
            let predicted = &self.c * &self.x + &self.d * &u;
            y.zip_zip_map(&predicted, &self.out, |yj, pj, r| {
                clamp::<Q>(yj - round::<Q>(pj, r))
            })
        };
        match FORM {
            PREDICTOR => {
                let r = innovation();
                let acc = &self.a * &self.x + &self.b * &u + &self.gain * &r;
                self.x = round_rows(acc, &self.state);
            }
            CURRENT => {
                let r = innovation();
                let k = &self.gain * &r;
                self.filtered = self.x.zip_zip_map(&k, &self.gain_rnd, |x, k, r| {
                    clamp::<Q>(x + round::<Q>(k, r))
                });
                let acc = &self.a * &self.filtered + &self.b * &u;
                self.x = round_rows(acc, &self.state);
            }
            _ => {
                let acc = &self.a * &self.x + &self.b * &u + &self.gain * &y;
                self.x = round_rows(acc, &self.state);
            }
        }
    }
    fn state(&self) -> [Q; N] {
        core::array::from_fn(|i| Q::word(self.x.get(i).copied().unwrap_or_else(Q::Int::zero)))
    }
    fn set_state(&mut self, x: [Q; N]) {
        self.x = DVector::from_iterator(N, x.map(Q::int));
    }
}
