//! The `[disturbances]` section: unknown loads and sensor biases that the
//! observer estimates as extra states (state augmentation).
//!
//! ```toml
//! [[disturbances.input]]          # a load pushing on the plant
//! name = "load_torque"            # identifier; the state's name in generated code
//! column = [0.0, -1587.3]         # its column E (n entries) ...
//! # input = 0                     # ... or: it adds to input 0 (E = that column of B)
//! # shape = "constant"            # or "ramp": two states, `name` and `name_rate`
//! # noise = 1.0e-4                # spectral density of its driving noise (Kalman only)
//!
//! [[disturbances.output_bias]]    # a sensor offset
//! name = "encoder_offset"
//! output = 0                      # the output it adds to
//! # noise = 1.0e-8                # (Kalman only)
//! ```
//!
//! A constant disturbance d obeys ḋ = 0 (x[k+1] = … + E d, d[k+1] = d[k]
//! for a discrete plant); a ramp d, r obeys ḋ = r, ṙ = 0 (d[k+1] = d[k] + T r[k],
//! r[k+1] = r[k] for a discrete plant, where d is held over each sample). An
//! output bias b adds to one output, y = C x + D u + b, ḃ = 0. The estimated
//! state is the plant's n states followed by the disturbance states in file
//! order: every `input` entry (d, then r for a ramp), then every `output_bias`.
//!
//! With `input = k`, d is in the units of input k (E is column k of B, of
//! the sampled B for a discrete plant); with `column`, E is given in state
//! derivative units per unit of d (per-sample increments for a discrete plant).
//!
//! `noise` is needed by a Kalman design and only there: it is the level of the
//! white noise driving the disturbance's last state (ḋ = w, or ṙ = w for a
//! ramp), read like `observer.kalman.process_noise` (a spectral density for
//! `noise_domain = "continuous"`, a variance per sample for "discrete"), and
//! must be > 0: a noiseless constant state at z = 1 gives the Riccati equation
//! no stabilising solution.

use std::collections::HashMap;

use super::error::{ModelError, ModelErrorKind, ModelWarning};
use super::ident::identifier_problem;
use super::plant::Plant;
use super::reader::{Dim, Node, Table};

/// Keys allowed in `[disturbances]`.
pub(crate) const KEYS: &[&str] = &["input", "output_bias"];
const INPUT_KEYS: &[&str] = &["name", "input", "column", "shape", "noise", "unit"];
const BIAS_KEYS: &[&str] = &["name", "output", "noise", "unit"];

/// How a disturbance entering the plant evolves.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Shape {
    /// One state, constant between noise kicks: ḋ = 0.
    #[default]
    Constant,
    /// Two states, the value and its rate: ḋ = r, ṙ = 0.
    Ramp,
}

/// Where a disturbance enters the state equation.
#[derive(Debug, Clone, PartialEq)]
pub enum Entry {
    /// It adds to this input: E is the input's column of B.
    Input(usize),
    /// E given explicitly, n entries.
    Column(Vec<f64>),
}

/// A disturbance entering the state equation, ẋ = A x + B u + E d.
#[derive(Debug, Clone, PartialEq)]
pub struct InputDisturbance {
    /// Identifier of its (first) state.
    pub name: String,
    /// Where it enters.
    pub entry: Entry,
    /// Constant or ramp.
    pub shape: Shape,
    /// Driving-noise level for a Kalman design.
    pub noise: Option<f64>,
    /// Unit of the disturbance (free text, `unit = "N m"`); without one, the
    /// input's unit for `input = k`, else none.
    pub unit: Option<String>,
}

/// A constant bias on one output, y = C x + D u + b.
#[derive(Debug, Clone, PartialEq)]
pub struct OutputBias {
    /// Identifier of its state.
    pub name: String,
    /// Index of the output it adds to.
    pub output: usize,
    /// Driving-noise level for a Kalman design.
    pub noise: Option<f64>,
    /// Unit of the bias (free text); without one, the output's unit.
    pub unit: Option<String>,
}

/// The disturbance states added to the plant, in state order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Disturbances {
    /// Disturbances entering the state equation, in file order.
    pub input: Vec<InputDisturbance>,
    /// Output biases, in file order.
    pub output_bias: Vec<OutputBias>,
}

impl InputDisturbance {
    /// Names of its states: `name`, and `name_rate` for a ramp.
    pub fn state_names(&self) -> Vec<String> {
        match self.shape {
            Shape::Constant => vec![self.name.clone()],
            Shape::Ramp => vec![self.name.clone(), format!("{}_rate", self.name)],
        }
    }
}

impl Disturbances {
    /// Number of disturbance states.
    pub fn state_count(&self) -> usize {
        self.state_names().len()
    }

    /// Names of the disturbance states, in state order.
    pub fn state_names(&self) -> Vec<String> {
        self.input
            .iter()
            .flat_map(InputDisturbance::state_names)
            .chain(self.output_bias.iter().map(|b| b.name.clone()))
            .collect()
    }

    /// Unit of every disturbance state, in state order ("" where none is
    /// known): the `unit` key, else the unit of the input it adds to or of
    /// the output it biases; a ramp's rate is in that unit per second.
    pub fn state_units(&self, plant: &Plant) -> Vec<String> {
        let pick = |given: &Option<String>, list: &Option<Vec<String>>, index: Option<usize>| {
            given.clone().unwrap_or_else(|| {
                index
                    .and_then(|i| list.as_ref().and_then(|l| l.get(i).cloned()))
                    .unwrap_or_default()
            })
        };
        let mut out = Vec::new();
        for d in &self.input {
            let index = match d.entry {
                Entry::Input(k) => Some(k),
                Entry::Column(_) => None,
            };
            let unit = pick(&d.unit, &plant.input_units, index);
            if d.shape == Shape::Ramp {
                let rate = if unit.is_empty() {
                    "1/s".to_string()
                } else {
                    format!("{unit}/s")
                };
                out.extend([unit, rate]);
            } else {
                out.push(unit);
            }
        }
        for b in &self.output_bias {
            out.push(pick(&b.unit, &plant.output_units, Some(b.output)));
        }
        out
    }

    /// One line per disturbance state saying what it is, in state order.
    pub fn state_descriptions(&self) -> Vec<String> {
        let mut out = Vec::new();
        for d in &self.input {
            let entry = match &d.entry {
                Entry::Input(k) => format!("adding to input {k}"),
                Entry::Column(_) => "entering through its given column".to_string(),
            };
            match d.shape {
                Shape::Constant => out.push(format!("constant disturbance {entry}")),
                Shape::Ramp => {
                    out.push(format!("ramp disturbance {entry}"));
                    out.push(format!("rate of change of `{}`, per second", d.name));
                }
            }
        }
        for b in &self.output_bias {
            out.push(format!("constant bias on output {}", b.output));
        }
        out
    }
}

/// Reads `[disturbances]` for `plant`; `kalman` says whether the gain comes
/// from a Kalman design (which needs every `noise`).
pub(crate) fn read(
    table: &Table<'_, '_>,
    plant: &Plant,
    kalman: bool,
    warnings: &mut Vec<ModelWarning>,
) -> Result<Disturbances, ModelError> {
    let mut names = Names::of_plant(plant);
    let mut input = Vec::new();
    if let Some(list) = table.get("input") {
        for node in list.elements()? {
            let entry_table = node.table(INPUT_KEYS)?;
            let d = read_input(&entry_table, plant, kalman, warnings)?;
            for name in d.state_names() {
                names.claim(&entry_table.require("name", "")?, &name)?;
            }
            input.push(d);
        }
    }
    let mut output_bias = Vec::new();
    if let Some(list) = table.get("output_bias") {
        for node in list.elements()? {
            let entry_table = node.table(BIAS_KEYS)?;
            let name_node = entry_table.require("name", "the bias state's identifier")?;
            let name = read_identifier(&name_node)?;
            names.claim(&name_node, &name)?;
            let output = read_index(
                &entry_table.require("output", "the index of the output it adds to")?,
                Dim {
                    count: plant.p(),
                    per: "output",
                    symbol: "p",
                    from: "plant.c",
                },
            )?;
            let noise = read_noise(&entry_table, kalman, warnings)?;
            output_bias.push(OutputBias {
                name,
                output,
                noise,
                unit: read_unit(&entry_table)?,
            });
        }
    }
    Ok(Disturbances { input, output_bias })
}

fn read_input(
    table: &Table<'_, '_>,
    plant: &Plant,
    kalman: bool,
    warnings: &mut Vec<ModelWarning>,
) -> Result<InputDisturbance, ModelError> {
    let name = read_identifier(&table.require("name", "the disturbance state's identifier")?)?;
    let entry = match (table.get("input"), table.get("column")) {
        (Some(_), Some(_)) => {
            return Err(table.fail_at(
                "column",
                ModelErrorKind::Conflict,
                "give `input` (the disturbance adds to that input) or `column` (E given), not both",
            ));
        }
        (None, None) => {
            return Err(table.fail(
                ModelErrorKind::MissingKey,
                "say where the disturbance enters: `input = k` (it adds to input k) \
                 or `column = [...]` (its column E, one entry per state)",
            ));
        }
        (Some(node), None) => Entry::Input(read_index(
            &node,
            Dim {
                count: plant.m(),
                per: "input",
                symbol: "m",
                from: "plant.b",
            },
        )?),
        (None, Some(node)) => {
            let items = node.elements()?;
            node.check_len(
                &items,
                Dim {
                    count: plant.n(),
                    per: "state",
                    symbol: "n",
                    from: "plant.a",
                },
            )?;
            let column = items
                .iter()
                .map(Node::number)
                .collect::<Result<Vec<_>, _>>()?;
            if column.iter().all(|v| *v == 0.0) {
                return Err(node.fail(
                    ModelErrorKind::OutOfRange,
                    "the column is zero: the disturbance would not reach the plant",
                ));
            }
            Entry::Column(column)
        }
    };
    let shape = match table.get("shape") {
        Some(node) => node.choice(&[("constant", Shape::Constant), ("ramp", Shape::Ramp)])?,
        None => Shape::default(),
    };
    let noise = read_noise(table, kalman, warnings)?;
    Ok(InputDisturbance {
        name,
        entry,
        shape,
        noise,
        unit: read_unit(table)?,
    })
}

/// The optional `unit` key: free text for reports.
fn read_unit(table: &Table<'_, '_>) -> Result<Option<String>, ModelError> {
    table
        .get("unit")
        .map(|node| node.string().map(str::to_string))
        .transpose()
}

fn read_identifier(node: &Node<'_, '_>) -> Result<String, ModelError> {
    let name = node.string()?;
    match identifier_problem(name) {
        None => Ok(name.to_string()),
        Some(problem) => Err(node.fail(
            ModelErrorKind::BadName,
            format!(
                "\"{name}\" is not a valid identifier: {problem} \
                 (use ASCII letters, digits and '_', starting with a letter or '_')"
            ),
        )),
    }
}

fn read_index(node: &Node<'_, '_>, of: Dim<'_>) -> Result<usize, ModelError> {
    let index = node.count()?;
    match usize::try_from(index) {
        Ok(i) if i < of.count => Ok(i),
        _ => Err(node.fail(
            ModelErrorKind::OutOfRange,
            format!(
                "{index} is not an {} index: {} = {} from {}, so it must be below {}",
                of.per, of.symbol, of.count, of.from, of.count
            ),
        )),
    }
}

fn read_noise(
    table: &Table<'_, '_>,
    kalman: bool,
    warnings: &mut Vec<ModelWarning>,
) -> Result<Option<f64>, ModelError> {
    match (table.get("noise"), kalman) {
        (Some(node), true) => {
            let v = node.number()?;
            if v > 0.0 {
                Ok(Some(v))
            } else {
                Err(node.fail(
                    ModelErrorKind::OutOfRange,
                    format!(
                        "{v} is not positive; a Kalman design needs noise > 0 on every \
                         disturbance (a noiseless constant state is never corrected)"
                    ),
                ))
            }
        }
        (Some(node), false) => {
            let v = node.number()?;
            warnings.push(ModelWarning {
                path: node.path().to_string(),
                message: format!(
                    "noise = {v} is used only by a Kalman design ([observer.kalman]); ignored"
                ),
            });
            Ok(None)
        }
        (None, true) => Err(table.fail_at(
            "noise",
            ModelErrorKind::MissingKey,
            "required key is missing: a Kalman design needs the level of the noise \
             driving each disturbance (read like observer.kalman.process_noise)",
        )),
        (None, false) => Ok(None),
    }
}

/// State names in use, for distinctness; compared upper-cased because the
/// generated index constants are upper-cased.
struct Names {
    seen: HashMap<String, String>,
}

impl Names {
    fn of_plant(plant: &Plant) -> Names {
        let plant_names = plant.state_names.clone().unwrap_or_else(|| {
            // The generated code falls back to x0, x1, … for unnamed states.
            (0..plant.n()).map(|i| format!("x{i}")).collect()
        });
        Names {
            seen: plant_names
                .into_iter()
                .map(|name| (name.to_uppercase(), format!("plant state `{name}`")))
                .collect(),
        }
    }

    fn claim(&mut self, node: &Node<'_, '_>, name: &str) -> Result<(), ModelError> {
        let key = name.to_uppercase();
        if let Some(owner) = self.seen.get(&key) {
            return Err(node.fail(
                ModelErrorKind::BadName,
                format!(
                    "state name \"{name}\" clashes with {owner} (index constants are \
                     upper-cased: {key}); state names must be distinct"
                ),
            ));
        }
        self.seen.insert(key, format!("disturbance state `{name}`"));
        Ok(())
    }
}
