//! The `[plant]` section: the state-space matrices, their time domain and
//! the optional signal names and units.

use nalgebra::DMatrix;

use super::error::{ModelError, ModelErrorKind};
use super::ident::{read_names, read_units};
use super::reader::{Dim, Table};

/// Keys allowed in `[plant]`.
pub(crate) const KEYS: &[&str] = &[
    "a",
    "b",
    "c",
    "d",
    "domain",
    "state_names",
    "input_names",
    "output_names",
    "state_units",
    "input_units",
    "output_units",
];

/// Whether the plant matrices describe a continuous- or a discrete-time system.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Domain {
    /// `ẋ = A x + B u`, `y = C x + D u`; the design samples it with a zero-order hold.
    #[default]
    Continuous,
    /// `x[k+1] = A x[k] + B u[k]`, `y[k] = C x[k] + D u[k]`, already sampled at `sample_period`.
    Discrete,
}

/// The plant: `n` states, `m` inputs, `p` outputs.
#[derive(Debug, Clone, PartialEq)]
pub struct Plant {
    /// State matrix, n × n.
    pub a: DMatrix<f64>,
    /// Input matrix, n × m.
    pub b: DMatrix<f64>,
    /// Output matrix, p × n.
    pub c: DMatrix<f64>,
    /// Feedthrough matrix, p × m (zeros when the file gives none).
    pub d: DMatrix<f64>,
    /// Time domain of `a`, `b`, `c`, `d`.
    pub domain: Domain,
    /// Identifiers of the states (length n), if given.
    pub state_names: Option<Vec<String>>,
    /// Identifiers of the inputs (length m), if given.
    pub input_names: Option<Vec<String>>,
    /// Identifiers of the outputs (length p), if given.
    pub output_names: Option<Vec<String>>,
    /// Units of the states for reports (length n), if given.
    pub state_units: Option<Vec<String>>,
    /// Units of the inputs for reports (length m), if given.
    pub input_units: Option<Vec<String>>,
    /// Units of the outputs for reports (length p), if given.
    pub output_units: Option<Vec<String>>,
}

impl Plant {
    /// Number of states.
    pub fn n(&self) -> usize {
        self.a.nrows()
    }

    /// Number of inputs.
    pub fn m(&self) -> usize {
        self.b.ncols()
    }

    /// Number of outputs.
    pub fn p(&self) -> usize {
        self.c.nrows()
    }
}

/// Reads and checks `[plant]`.
pub(crate) fn read(table: &Table<'_, '_>) -> Result<Plant, ModelError> {
    let a_node = table.require("a", "the n x n state matrix")?;
    let a = a_node.matrix()?;
    if !a.is_square() {
        return Err(a_node.fail(
            ModelErrorKind::WrongSize,
            format!(
                "must be square (n x n), found {} rows of {} columns",
                a.nrows(),
                a.ncols()
            ),
        ));
    }
    let n = a.nrows();
    let per_state = Dim {
        count: n,
        per: "state",
        symbol: "n",
        from: "plant.a",
    };

    let b_node = table.require("b", "the n x m input matrix")?;
    let b = b_node.matrix()?;
    b_node.check_shape(&b, Some(per_state), None)?;
    let m = b.ncols();
    let per_input = Dim {
        count: m,
        per: "input",
        symbol: "m",
        from: "plant.b",
    };

    let c_node = table.require("c", "the p x n output matrix")?;
    let c = c_node.matrix()?;
    c_node.check_shape(&c, None, Some(per_state))?;
    let p = c.nrows();
    let per_output = Dim {
        count: p,
        per: "output",
        symbol: "p",
        from: "plant.c",
    };

    let d = match table.get("d") {
        Some(node) => node.matrix_of(per_output, per_input)?,
        None => DMatrix::zeros(p, m),
    };
    let domain = match table.get("domain") {
        Some(node) => node.choice(&[
            ("continuous", Domain::Continuous),
            ("discrete", Domain::Discrete),
        ])?,
        None => Domain::default(),
    };

    Ok(Plant {
        a,
        b,
        c,
        d,
        domain,
        state_names: read_names(table.get("state_names"), per_state)?,
        input_names: read_names(table.get("input_names"), per_input)?,
        output_names: read_names(table.get("output_names"), per_output)?,
        state_units: read_units(table.get("state_units"), per_state)?,
        input_units: read_units(table.get("input_units"), per_input)?,
        output_units: read_units(table.get("output_units"), per_output)?,
    })
}
