//! Errors and non-fatal warnings of the numerical routines.
//!
//! Every error names the matrix (by the name the caller knows it under, e.g.
//! `"A"`, `"C"`, `"Q"`), the index where it applies and the condition that
//! failed together with the estimate that failed it.

use core::fmt;
use nalgebra::Complex;

/// Result alias of the numerical routines.
pub type Result<T> = core::result::Result<T, NumericsError>;

/// Why a numerical routine refused its input or could not deliver.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum NumericsError {
    /// A matrix that must be square is not.
    NotSquare {
        /// Matrix name.
        matrix: &'static str,
        /// Its number of rows.
        rows: usize,
        /// Its number of columns.
        cols: usize,
    },
    /// A matrix has no rows or no columns where at least one of each is needed.
    Empty {
        /// Matrix name.
        matrix: &'static str,
    },
    /// A matrix has the wrong shape for the others it is combined with.
    DimensionMismatch {
        /// Matrix name.
        matrix: &'static str,
        /// Expected `(rows, cols)`; `usize::MAX` means "any".
        expected: (usize, usize),
        /// Actual `(rows, cols)`.
        actual: (usize, usize),
    },
    /// An entry is NaN or infinite.
    NonFinite {
        /// Matrix name.
        matrix: &'static str,
        /// Row of the entry.
        row: usize,
        /// Column of the entry.
        col: usize,
        /// The offending value.
        value: f64,
    },
    /// A scalar parameter (e.g. the sample period) is out of range.
    BadParameter {
        /// Parameter name.
        name: &'static str,
        /// Its value.
        value: f64,
        /// The condition it must meet.
        condition: &'static str,
    },
    /// A norm exceeds the bound the routine accepts.
    TooLarge {
        /// Matrix name.
        matrix: &'static str,
        /// Its 1-norm.
        norm: f64,
        /// The largest accepted 1-norm.
        limit: f64,
    },
    /// A linear solve met a (numerically) singular matrix.
    Singular {
        /// Matrix name.
        matrix: &'static str,
        /// Reciprocal condition estimate (or smallest relative pivot) that failed.
        estimate: f64,
        /// Threshold it had to exceed.
        threshold: f64,
    },
    /// A matrix that must be symmetric is not.
    NotSymmetric {
        /// Matrix name.
        matrix: &'static str,
        /// Row of the worst entry.
        row: usize,
        /// Column of the worst entry.
        col: usize,
        /// `|m[row][col] - m[col][row]|`.
        asymmetry: f64,
        /// Largest accepted asymmetry.
        tolerance: f64,
    },
    /// A symmetric matrix has an eigenvalue below what the routine accepts
    /// (negative for "positive semidefinite", not positive for "positive definite").
    NotDefinite {
        /// Matrix name.
        matrix: &'static str,
        /// Index of the eigenvalue in ascending order.
        index: usize,
        /// The eigenvalue.
        eigenvalue: f64,
        /// Threshold it had to exceed.
        threshold: f64,
    },
    /// A matrix that must have full rank does not.
    RankDeficient {
        /// Matrix name.
        matrix: &'static str,
        /// Numerical rank found.
        rank: usize,
        /// Rank required.
        required: usize,
        /// Smallest singular value.
        sigma_min: f64,
        /// Rank tolerance on singular values.
        tolerance: f64,
    },
    /// An iterative routine hit its iteration cap.
    NoConvergence {
        /// Routine name.
        routine: &'static str,
        /// Matrix name.
        matrix: &'static str,
        /// Index at which the routine stalled (e.g. the active eigenvalue row).
        index: usize,
        /// Iterations spent.
        iterations: usize,
        /// Last convergence estimate (routine-specific, documented there).
        estimate: f64,
    },
    /// The PBH test found a mode of `A` invisible in the output matrix.
    Unobservable {
        /// Name of the output matrix (`"C"`).
        matrix: &'static str,
        /// Index of the eigenvalue in the sorted spectrum of `A`.
        index: usize,
        /// The unobservable eigenvalue.
        eigenvalue: Complex<f64>,
        /// `σ_min([λI − A; C]) / σ_max([λI − A; C])`.
        relative_sigma_min: f64,
        /// Threshold it had to exceed.
        tolerance: f64,
    },
    /// The PBH test found a mode with `|λ| ≥ 1` not reached by the noise input
    /// (the pair (A, Q^½) is not stabilisable).
    Unstabilisable {
        /// Name of the input matrix (`"Q"`).
        matrix: &'static str,
        /// Index of the eigenvalue in the sorted spectrum of `A`.
        index: usize,
        /// The eigenvalue.
        eigenvalue: Complex<f64>,
        /// `σ_min([λI − A, Q^½]) / σ_max(...)`.
        relative_sigma_min: f64,
        /// Threshold it had to exceed.
        tolerance: f64,
    },
    /// A mode with `|λ| ≥ 1` is not seen by the output (not detectable).
    Undetectable {
        /// Name of the output matrix (`"C"`).
        matrix: &'static str,
        /// Index of the eigenvalue in the sorted spectrum of `A`.
        index: usize,
        /// The eigenvalue.
        eigenvalue: Complex<f64>,
        /// `σ_min([λI − A; C]) / σ_max(...)`.
        relative_sigma_min: f64,
        /// Threshold it had to exceed.
        tolerance: f64,
    },
    /// The number of requested poles differs from the state dimension.
    PoleCount {
        /// Number of poles needed (state dimension).
        expected: usize,
        /// Number given.
        actual: usize,
    },
    /// A requested pole has no complex conjugate partner in the list.
    PoleWithoutConjugate {
        /// Index in the requested list.
        index: usize,
        /// The pole.
        pole: Complex<f64>,
    },
    /// A requested pole is NaN or infinite.
    PoleNonFinite {
        /// Index in the requested list.
        index: usize,
    },
    /// A pole is requested more often than the method can place it.
    PoleMultiplicity {
        /// Index of its first occurrence.
        index: usize,
        /// The pole.
        pole: Complex<f64>,
        /// How often it was requested.
        multiplicity: usize,
        /// Largest multiplicity handled (the number of outputs).
        limit: usize,
    },
    /// The placed poles, recomputed from `A − L C`, are off.
    PlacementInaccurate {
        /// Index of the worst pole in the requested list.
        index: usize,
        /// Requested pole.
        requested: Complex<f64>,
        /// Nearest eigenvalue of `A − L C`.
        achieved: Complex<f64>,
        /// `|achieved − requested| / max(|requested|, 1)`.
        relative_error: f64,
        /// Tolerance it had to meet.
        tolerance: f64,
    },
    /// A Riccati solution failed its residual check.
    ResidualTooLarge {
        /// Equation name.
        equation: &'static str,
        /// Relative residual (documented by the routine).
        residual: f64,
        /// Tolerance it had to meet.
        tolerance: f64,
    },
    /// A matrix exponential failed its a-posteriori accuracy check (two
    /// evaluations at different scalings disagree).
    ExpmInaccurate {
        /// Matrix name.
        matrix: &'static str,
        /// Estimated relative error, 1-norm.
        estimate: f64,
        /// Tolerance it had to meet.
        tolerance: f64,
    },
    /// The computed gain does not make the error dynamics stable.
    NotStabilising {
        /// Name of the closed-loop matrix (e.g. `"A - L C"`).
        matrix: &'static str,
        /// Its spectral radius.
        spectral_radius: f64,
    },
}

fn cplx(z: &Complex<f64>) -> String {
    if z.im == 0.0 {
        format!("{}", z.re)
    } else if z.im > 0.0 {
        format!("{}+{}i", z.re, z.im)
    } else {
        format!("{}-{}i", z.re, -z.im)
    }
}

impl fmt::Display for NumericsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use NumericsError as E;
        match self {
            E::NotSquare { matrix, rows, cols } => {
                write!(f, "matrix {matrix} must be square but is {rows}x{cols}")
            }
            E::Empty { matrix } => write!(f, "matrix {matrix} is empty"),
            E::DimensionMismatch {
                matrix,
                expected,
                actual,
            } => {
                let show = |d: usize| {
                    if d == usize::MAX {
                        "any".to_string()
                    } else {
                        d.to_string()
                    }
                };
                write!(
                    f,
                    "matrix {matrix} is {}x{} but must be {}x{}",
                    actual.0,
                    actual.1,
                    show(expected.0),
                    show(expected.1)
                )
            }
            E::NonFinite {
                matrix,
                row,
                col,
                value,
            } => write!(
                f,
                "matrix {matrix} has a non-finite entry {value} at ({row}, {col})"
            ),
            E::BadParameter {
                name,
                value,
                condition,
            } => write!(f, "parameter {name} = {value} must be {condition}"),
            E::TooLarge {
                matrix,
                norm,
                limit,
            } => write!(
                f,
                "matrix {matrix} has 1-norm {norm:e}, above the accepted {limit:e}"
            ),
            E::Singular {
                matrix,
                estimate,
                threshold,
            } => write!(
                f,
                "matrix {matrix} is numerically singular (estimate {estimate:e} <= {threshold:e})"
            ),
            E::NotSymmetric {
                matrix,
                row,
                col,
                asymmetry,
                tolerance,
            } => write!(
                f,
                "matrix {matrix} is not symmetric: |m({row},{col}) - m({col},{row})| = {asymmetry:e} > {tolerance:e}"
            ),
            E::NotDefinite {
                matrix,
                index,
                eigenvalue,
                threshold,
            } => write!(
                f,
                "matrix {matrix} is not definite enough: eigenvalue #{index} = {eigenvalue:e} <= {threshold:e}"
            ),
            E::RankDeficient {
                matrix,
                rank,
                required,
                sigma_min,
                tolerance,
            } => write!(
                f,
                "matrix {matrix} has numerical rank {rank}, needs {required} (smallest singular value {sigma_min:e}, tolerance {tolerance:e})"
            ),
            E::NoConvergence {
                routine,
                matrix,
                index,
                iterations,
                estimate,
            } => write!(
                f,
                "{routine} did not converge on matrix {matrix} at index {index} after {iterations} iterations (last estimate {estimate:e})"
            ),
            E::Unobservable {
                matrix,
                index,
                eigenvalue,
                relative_sigma_min,
                tolerance,
            } => write!(
                f,
                "mode #{index} (eigenvalue {}) is unobservable from {matrix}: PBH relative smallest singular value {relative_sigma_min:e} <= {tolerance:e}",
                cplx(eigenvalue)
            ),
            E::Unstabilisable {
                matrix,
                index,
                eigenvalue,
                relative_sigma_min,
                tolerance,
            } => write!(
                f,
                "mode #{index} (eigenvalue {}, |λ| >= 1) receives no noise through {matrix} (not stabilisable): PBH relative smallest singular value {relative_sigma_min:e} <= {tolerance:e}",
                cplx(eigenvalue)
            ),
            E::Undetectable {
                matrix,
                index,
                eigenvalue,
                relative_sigma_min,
                tolerance,
            } => write!(
                f,
                "mode #{index} (eigenvalue {}, |λ| >= 1) is not seen by {matrix} (not detectable): PBH relative smallest singular value {relative_sigma_min:e} <= {tolerance:e}",
                cplx(eigenvalue)
            ),
            E::PoleCount { expected, actual } => {
                write!(
                    f,
                    "{actual} poles requested, the state dimension needs {expected}"
                )
            }
            E::PoleWithoutConjugate { index, pole } => write!(
                f,
                "requested pole #{index} = {} has no complex conjugate in the list",
                cplx(pole)
            ),
            E::PoleNonFinite { index } => write!(f, "requested pole #{index} is not finite"),
            E::PoleMultiplicity {
                index,
                pole,
                multiplicity,
                limit,
            } => write!(
                f,
                "pole {} (first at #{index}) is requested {multiplicity} times; at most {limit} (the number of outputs) can be placed",
                cplx(pole)
            ),
            E::PlacementInaccurate {
                index,
                requested,
                achieved,
                relative_error,
                tolerance,
            } => write!(
                f,
                "placed pole #{index}: requested {}, achieved {} (relative error {relative_error:e} > {tolerance:e})",
                cplx(requested),
                cplx(achieved)
            ),
            E::ResidualTooLarge {
                equation,
                residual,
                tolerance,
            } => write!(
                f,
                "{equation}: relative residual {residual:e} exceeds {tolerance:e}"
            ),
            E::ExpmInaccurate {
                matrix,
                estimate,
                tolerance,
            } => write!(
                f,
                "exp({matrix}) cannot be computed to the accuracy needed: estimated relative error {estimate:e} (1-norm) exceeds {tolerance:e}; the matrix is too badly scaled or too large (check units and sample period)"
            ),
            E::NotStabilising {
                matrix,
                spectral_radius,
            } => write!(
                f,
                "{matrix} has spectral radius {spectral_radius} >= 1: the gain is not stabilising"
            ),
        }
    }
}

impl std::error::Error for NumericsError {}

/// A non-fatal finding: the result is usable, but a person should know.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum NumericsWarning {
    /// The observability matrix is numerically rank deficient although every
    /// mode passed the PBH test (the observability matrix is badly scaled).
    ObservabilityMatrixRankDeficient {
        /// Numerical rank.
        rank: usize,
        /// State dimension.
        required: usize,
    },
    /// The per-mode PBH test was not made (too many states for its O(n⁴)
    /// cost and no lower bound from C); the staircase decided alone.
    PbhNotChecked {
        /// State dimension.
        states: usize,
        /// Largest dimension tested mode by mode.
        limit: usize,
        /// The staircase's condition figure.
        condition: f64,
    },
    /// A mode is observable but only weakly (PBH margin small).
    WeaklyObservable {
        /// Index of the eigenvalue in the sorted spectrum.
        index: usize,
        /// The eigenvalue.
        eigenvalue: Complex<f64>,
        /// PBH relative smallest singular value.
        relative_sigma_min: f64,
    },
    /// A condition estimate is large; results are sensitive.
    IllConditioned {
        /// Which quantity (e.g. `"observability matrix"`, `"eigenvector matrix"`).
        what: &'static str,
        /// The condition estimate.
        condition: f64,
    },
    /// A pole repeated beyond the number of outputs was placed through the
    /// characteristic polynomial; rounding splits it, by `spread`.
    RepeatedPoleSpread {
        /// The repeated pole.
        pole: Complex<f64>,
        /// How often it was requested.
        multiplicity: usize,
        /// Largest distance of the recomputed eigenvalues from it.
        spread: f64,
    },
    /// A Riccati iteration converged slowly (a mode close to the unit circle).
    SlowConvergence {
        /// Iterations used.
        iterations: usize,
    },
}

impl fmt::Display for NumericsWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use NumericsWarning as W;
        match self {
            W::ObservabilityMatrixRankDeficient { rank, required } => write!(
                f,
                "observability matrix has numerical rank {rank} < {required} although every mode passes the PBH test (badly scaled states?)"
            ),
            W::PbhNotChecked {
                states,
                limit,
                condition,
            } => write!(
                f,
                "the PBH margin of each mode was not computed ({states} states > {limit}); observability rests on the staircase reduction alone (condition {condition:e})"
            ),
            W::WeaklyObservable {
                index,
                eigenvalue,
                relative_sigma_min,
            } => write!(
                f,
                "mode #{index} (eigenvalue {}) is only weakly observable (PBH margin {relative_sigma_min:e})",
                cplx(eigenvalue)
            ),
            W::IllConditioned { what, condition } => {
                write!(
                    f,
                    "{what} is ill-conditioned (condition estimate {condition:e})"
                )
            }
            W::RepeatedPoleSpread {
                pole,
                multiplicity,
                spread,
            } => write!(
                f,
                "pole {} requested {multiplicity} times with one output was placed by its characteristic polynomial; a repeated pole is sensitive, and rounding already splits it by {spread:.1e} (expect more in f32 or fixed point)",
                cplx(pole)
            ),
            W::SlowConvergence { iterations } => write!(
                f,
                "Riccati iteration needed {iterations} doubling steps (a mode is close to the unit circle)"
            ),
        }
    }
}
