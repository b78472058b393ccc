//! Fixed-size matrices stored column by column, and the multiply-add kernels
//! every float observer step is built from.

use num_traits::{ConstZero, Float};

/// A matrix of `R` rows and `C` columns, stored column by column.
///
/// This is plain data: it can be written in a `const` or `static` item (so
/// generated tables land in flash) and costs nothing to construct. Write it
/// row by row, as the math reads, with [`Matrix::from_rows`]; the transpose to
/// column storage happens at compile time when the value is a constant.
///
/// Column storage lets a matrix–vector product run as a sum of scaled columns
/// (`acc += column_j · v_j`), which the compiler vectorises across rows.
///
/// ```
/// use lookout::Matrix;
/// const A: Matrix<f32, 2, 3> = Matrix::from_rows([[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]]);
/// assert_eq!(A.get(1, 2), Some(6.0));
/// assert_eq!(A.get(2, 0), None);
/// assert_eq!(A.to_rows(), [[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]]);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Matrix<T, const R: usize, const C: usize> {
    cols: [[T; R]; C],
}

impl<T: Copy + ConstZero, const R: usize, const C: usize> Matrix<T, R, C> {
    /// All entries zero.
    pub const ZERO: Self = Self {
        cols: [[T::ZERO; R]; C],
    };

    /// Builds the matrix from its rows (`rows[i][j]` is row `i`, column `j`).
    #[allow(clippy::indexing_slicing)] // i < R and j < C by the loop bounds; const fn cannot iterate
    pub const fn from_rows(rows: [[T; C]; R]) -> Self {
        let mut cols = [[T::ZERO; R]; C];
        let mut i = 0;
        while i < R {
            let mut j = 0;
            while j < C {
                cols[j][i] = rows[i][j];
                j += 1;
            }
            i += 1;
        }
        Self { cols }
    }

    /// The rows, `rows[i][j]` being row `i`, column `j`.
    pub fn to_rows(&self) -> [[T; C]; R] {
        let mut rows = [[T::ZERO; C]; R];
        for (j, col) in self.cols.iter().enumerate() {
            for (row, &value) in rows.iter_mut().zip(col.iter()) {
                if let Some(slot) = row.get_mut(j) {
                    *slot = value;
                }
            }
        }
        rows
    }
}

impl<T: Copy, const R: usize, const C: usize> Matrix<T, R, C> {
    /// Builds the matrix from its columns (`cols[j][i]` is row `i`, column `j`).
    pub const fn from_cols(cols: [[T; R]; C]) -> Self {
        Self { cols }
    }

    /// The columns, `cols[j][i]` being row `i`, column `j`.
    pub const fn as_cols(&self) -> &[[T; R]; C] {
        &self.cols
    }

    /// The entry at `row`, `col`, or `None` outside the matrix.
    pub fn get(&self, row: usize, col: usize) -> Option<T> {
        self.cols.get(col)?.get(row).copied()
    }
}

impl<T: Float, const R: usize, const C: usize> Matrix<T, R, C> {
    /// `acc += self · v`: R·C multiply-adds, one rounding each (no fused
    /// multiply-add is used: rustc never contracts `a * b + c` by itself).
    #[inline(always)]
    pub(crate) fn mul_add_to(&self, v: &[T; C], acc: &mut [T; R]) {
        for (col, &vj) in self.cols.iter().zip(v.iter()) {
            for (a, &mij) in acc.iter_mut().zip(col.iter()) {
                *a = *a + mij * vj;
            }
        }
    }

    /// `self · v`: R·C multiplies and R·(C − 1) adds (the first column
    /// starts the sum instead of a zero, which saves R additions of 0).
    #[inline(always)]
    pub(crate) fn mul(&self, v: &[T; C]) -> [T; R] {
        let mut cols = self.cols.iter().zip(v.iter());
        let mut acc = match cols.next() {
            Some((col, &v0)) => col.map(|mij| mij * v0),
            None => [T::zero(); R],
        };
        for (col, &vj) in cols {
            for (a, &mij) in acc.iter_mut().zip(col.iter()) {
                *a = *a + mij * vj;
            }
        }
        acc
    }

    /// `acc -= self · v`: R·C multiply-adds.
    #[inline(always)]
    pub(crate) fn mul_sub_from(&self, v: &[T; C], acc: &mut [T; R]) {
        for (col, &vj) in self.cols.iter().zip(v.iter()) {
            for (a, &mij) in acc.iter_mut().zip(col.iter()) {
                *a = *a - mij * vj;
            }
        }
    }

    /// Row `i` of `self · v` (C multiply-adds); zero when `i` is outside.
    #[inline(always)]
    pub(crate) fn row_dot(&self, i: usize, v: &[T; C]) -> T {
        let mut sum = T::zero();
        for (col, &vj) in self.cols.iter().zip(v.iter()) {
            if let Some(&mij) = col.get(i) {
                sum = sum + mij * vj;
            }
        }
        sum
    }
}

#[cfg(feature = "nalgebra")]
mod nalgebra_interop {
    use super::Matrix;
    use nalgebra::{SMatrix, Scalar};

    impl<T: Scalar + Copy, const R: usize, const C: usize> From<Matrix<T, R, C>> for SMatrix<T, R, C> {
        fn from(m: Matrix<T, R, C>) -> Self {
            SMatrix::from_array_storage(nalgebra::ArrayStorage(m.cols))
        }
    }

    impl<T: Scalar + Copy, const R: usize, const C: usize> From<SMatrix<T, R, C>> for Matrix<T, R, C> {
        fn from(m: SMatrix<T, R, C>) -> Self {
            Matrix::from_cols(m.data.0)
        }
    }
}
