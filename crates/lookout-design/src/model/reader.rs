//! Walking the parsed TOML tree with key paths: typed reads, matrices and
//! unknown-key checks, each failure a [`ModelError`] naming the key.
//!
//! The tree is toml's span-carrying `DeTable`, so every error can point at
//! the line and column of the offending value.

use std::ops::Range;

use nalgebra::DMatrix;
use toml::Spanned;
use toml::de::{DeTable, DeValue};

use super::error::{Location, ModelError, ModelErrorKind};

/// The text being read and the name it is reported under.
pub(crate) struct Source<'t> {
    pub origin: &'t str,
    pub text: &'t str,
}

impl Source<'_> {
    /// An error at `path`, pointing at the start of `span`.
    pub fn error(
        &self,
        path: &str,
        span: Option<Range<usize>>,
        kind: ModelErrorKind,
        message: impl Into<String>,
    ) -> ModelError {
        let location = span.map(|s| Location::of_offset(self.text, s.start));
        ModelError::new(self.origin, path, kind, message).at(location)
    }
}

/// One value of the tree and its key path (`plant.b[1][0]`).
#[derive(Clone)]
pub(crate) struct Node<'a, 'i> {
    src: &'a Source<'a>,
    value: &'a Spanned<DeValue<'i>>,
    path: String,
}

/// A table of the tree whose keys have been checked against the schema.
pub(crate) struct Table<'a, 'i> {
    src: &'a Source<'a>,
    table: &'a DeTable<'i>,
    span: Range<usize>,
    path: String,
}

/// Describes one side of an expected matrix size, for messages such as
/// "expected 2 rows (one per state, n = 2 from plant.a)".
#[derive(Debug, Clone, Copy)]
pub(crate) struct Dim<'s> {
    /// The expected count.
    pub count: usize,
    /// What one row/column stands for, e.g. "state".
    pub per: &'s str,
    /// The symbol, e.g. "n".
    pub symbol: &'s str,
    /// Where the count comes from, e.g. "plant.a".
    pub from: &'s str,
}

impl Dim<'_> {
    /// `3 poles (one per state, n = 3 from plant.a)`: the count with `one`
    /// or `many` as its unit, and where it comes from.
    pub fn describe(&self, one: &str, many: &str) -> String {
        let unit = if self.count == 1 { one } else { many };
        format!(
            "{} {unit} (one per {}, {} = {} from {})",
            self.count, self.per, self.symbol, self.count, self.from
        )
    }
}

fn join(prefix: &str, key: &str) -> String {
    if prefix.is_empty() {
        key.to_string()
    } else {
        format!("{prefix}.{key}")
    }
}

fn article_type(value: &DeValue<'_>) -> &'static str {
    match value {
        DeValue::String(_) => "a string",
        DeValue::Integer(_) => "an integer",
        DeValue::Float(_) => "a float",
        DeValue::Boolean(_) => "a boolean",
        DeValue::Datetime(_) => "a date-time",
        DeValue::Array(_) => "an array",
        DeValue::Table(_) => "a table",
    }
}

/// Levenshtein distance, for "did you mean" hints on short key names.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diagonal = i;
        let mut left = i + 1;
        for (cb, above) in b.iter().zip(row.iter_mut().skip(1)) {
            let substitute = diagonal + usize::from(ca != *cb);
            let next = substitute.min(left + 1).min(*above + 1);
            diagonal = *above;
            *above = next;
            left = next;
        }
        if let Some(first) = row.first_mut() {
            *first = i + 1;
        }
    }
    row.last().copied().unwrap_or(0)
}

impl<'a, 'i> Table<'a, 'i> {
    /// The document's root table.
    pub fn root(
        src: &'a Source<'a>,
        doc: &'a Spanned<DeTable<'i>>,
        allowed: &[&str],
    ) -> Result<Self, ModelError> {
        let table = Table {
            src,
            table: doc.get_ref(),
            span: doc.span(),
            path: String::new(),
        };
        table.check_keys(allowed)?;
        Ok(table)
    }

    /// An error about the table as a whole.
    pub fn fail(&self, kind: ModelErrorKind, message: impl Into<String>) -> ModelError {
        let path = if self.path.is_empty() {
            "(top level)"
        } else {
            &self.path
        };
        self.src.error(path, Some(self.span.clone()), kind, message)
    }

    /// An error about `key` of this table: at the key's value when present,
    /// else at the table.
    pub fn fail_at(
        &self,
        key: &str,
        kind: ModelErrorKind,
        message: impl Into<String>,
    ) -> ModelError {
        match self.get(key) {
            Some(node) => node.fail(kind, message),
            None => self.src.error(
                &join(&self.path, key),
                Some(self.span.clone()),
                kind,
                message,
            ),
        }
    }

    fn check_keys(&self, allowed: &[&str]) -> Result<(), ModelError> {
        for (key, _) in self.table.iter() {
            let name: &str = key.get_ref();
            if allowed.contains(&name) {
                continue;
            }
            let closest = allowed
                .iter()
                .map(|k| (edit_distance(name, k), *k))
                .min_by_key(|(d, _)| *d)
                .filter(|(d, k)| *d <= 2.max(k.len() / 3));
            let hint = closest
                .map(|(_, k)| format!("did you mean `{k}`? "))
                .unwrap_or_default();
            let place = if self.path.is_empty() {
                "at the top level".to_string()
            } else {
                format!("in [{}]", self.path)
            };
            return Err(self.src.error(
                &join(&self.path, name),
                Some(key.span()),
                ModelErrorKind::UnknownKey,
                format!(
                    "unknown key {place}; {hint}allowed keys: {}",
                    allowed.join(", ")
                ),
            ));
        }
        Ok(())
    }

    /// Whether `key` is present.
    pub fn has(&self, key: &str) -> bool {
        self.table.get(key).is_some()
    }

    /// The value at `key`, if present.
    pub fn get(&self, key: &str) -> Option<Node<'a, 'i>> {
        self.table.get(key).map(|value| Node {
            src: self.src,
            value,
            path: join(&self.path, key),
        })
    }

    /// The value at `key`; `what` describes it for the missing-key message.
    pub fn require(&self, key: &str, what: &str) -> Result<Node<'a, 'i>, ModelError> {
        self.get(key).ok_or_else(|| {
            self.src.error(
                &join(&self.path, key),
                Some(self.span.clone()),
                ModelErrorKind::MissingKey,
                format!("required key is missing ({what})"),
            )
        })
    }

    /// The sub-table at `key`, if present, with its keys checked against `allowed`.
    pub fn table(&self, key: &str, allowed: &[&str]) -> Result<Option<Table<'a, 'i>>, ModelError> {
        self.get(key).map(|node| node.table(allowed)).transpose()
    }

    /// The sub-table at `key`, which must be present.
    pub fn require_table(
        &self,
        key: &str,
        allowed: &[&str],
        what: &str,
    ) -> Result<Table<'a, 'i>, ModelError> {
        self.require(key, what)?.table(allowed)
    }
}

impl<'a, 'i> Node<'a, 'i> {
    /// The key path of this value.
    pub fn path(&self) -> &str {
        &self.path
    }

    /// An error about this value.
    pub fn fail(&self, kind: ModelErrorKind, message: impl Into<String>) -> ModelError {
        self.src
            .error(&self.path, Some(self.value.span()), kind, message)
    }

    fn wrong_type(&self, expected: &str) -> ModelError {
        self.fail(
            ModelErrorKind::WrongType,
            format!(
                "expected {expected}, found {}",
                article_type(self.value.get_ref())
            ),
        )
    }

    /// This value as a table whose keys must all be in `allowed`.
    pub fn table(&self, allowed: &[&str]) -> Result<Table<'a, 'i>, ModelError> {
        match self.value.get_ref() {
            DeValue::Table(table) => {
                let table = Table {
                    src: self.src,
                    table,
                    span: self.value.span(),
                    path: self.path.clone(),
                };
                table.check_keys(allowed)?;
                Ok(table)
            }
            _ => Err(self.wrong_type(&format!("a table [{}]", self.path))),
        }
    }

    /// Whether this value is a table (used where a number or a table is allowed).
    pub fn is_table(&self) -> bool {
        self.value.get_ref().is_table()
    }

    /// This value as a finite `f64` (TOML integers are accepted).
    pub fn number(&self) -> Result<f64, ModelError> {
        let value = match self.value.get_ref() {
            DeValue::Float(f) => f.as_str().parse::<f64>().ok(),
            DeValue::Integer(i) => i64::from_str_radix(i.as_str(), i.radix())
                .ok()
                // i64 → f64 rounds to nearest above 2^53; exact below.
                .map(|v| v as f64),
            _ => return Err(self.wrong_type("a number")),
        };
        match value {
            Some(v) if v.is_finite() => Ok(v),
            Some(v) => Err(self.fail(
                ModelErrorKind::NonFinite,
                format!("{v} is not a finite number; every number in a model must be finite"),
            )),
            None => Err(self.fail(
                ModelErrorKind::NonFinite,
                "number out of range for a 64-bit float or integer",
            )),
        }
    }

    /// This value as a non-negative integer that fits `u32`.
    pub fn count(&self) -> Result<u32, ModelError> {
        match self.value.get_ref() {
            DeValue::Integer(i) => match i64::from_str_radix(i.as_str(), i.radix()) {
                Ok(v) => u32::try_from(v).map_err(|_| {
                    self.fail(
                        ModelErrorKind::OutOfRange,
                        format!("{v} is not a non-negative integer below 2^32"),
                    )
                }),
                Err(_) => Err(self.fail(ModelErrorKind::OutOfRange, "integer out of range")),
            },
            _ => Err(self.wrong_type("a non-negative integer")),
        }
    }

    /// This value as a string.
    pub fn string(&self) -> Result<&'a str, ModelError> {
        match self.value.get_ref() {
            DeValue::String(s) => Ok(s.as_ref()),
            _ => Err(self.wrong_type("a string")),
        }
    }

    /// This value as one of the `choices`, each `(spelling, value)`.
    pub fn choice<T: Copy>(&self, choices: &[(&str, T)]) -> Result<T, ModelError> {
        let given = self.string()?;
        choices
            .iter()
            .find(|(spelling, _)| *spelling == given)
            .map(|(_, value)| *value)
            .ok_or_else(|| {
                let allowed: Vec<String> =
                    choices.iter().map(|(s, _)| format!("\"{s}\"")).collect();
                self.fail(
                    ModelErrorKind::UnknownChoice,
                    format!(
                        "unknown value \"{given}\"; expected one of {}",
                        allowed.join(", ")
                    ),
                )
            })
    }

    /// The elements of this array, each with its indexed path.
    pub fn elements(&self) -> Result<Vec<Node<'a, 'i>>, ModelError> {
        match self.value.get_ref() {
            DeValue::Array(items) => Ok(items
                .iter()
                .enumerate()
                .map(|(i, value)| Node {
                    src: self.src,
                    value,
                    path: format!("{}[{i}]", self.path),
                })
                .collect()),
            _ => Err(self.wrong_type("an array")),
        }
    }

    /// A matrix written as a non-empty array of equally long, non-empty rows.
    pub fn matrix(&self) -> Result<DMatrix<f64>, ModelError> {
        const HOW: &str = "write a matrix as an array of rows, e.g. [[1.0, 0.0], [0.0, 1.0]]";
        let rows = match self.value.get_ref() {
            DeValue::Array(_) => self.elements()?,
            _ => return Err(self.wrong_type(&format!("a matrix ({HOW})"))),
        };
        if rows.is_empty() {
            return Err(self.fail(ModelErrorKind::WrongSize, format!("empty matrix; {HOW}")));
        }
        let mut data = Vec::new();
        let mut width = 0;
        for (i, row) in rows.iter().enumerate() {
            let entries = match row.value.get_ref() {
                DeValue::Array(_) => row.elements()?,
                _ => return Err(row.wrong_type(&format!("a row (an array of numbers); {HOW}"))),
            };
            if entries.is_empty() {
                return Err(row.fail(ModelErrorKind::WrongSize, "empty row"));
            }
            if i == 0 {
                width = entries.len();
            } else if entries.len() != width {
                return Err(row.fail(
                    ModelErrorKind::WrongSize,
                    format!(
                        "ragged rows: row {i} has {} entries but row 0 has {width}",
                        entries.len()
                    ),
                ));
            }
            for entry in &entries {
                data.push(entry.number()?);
            }
        }
        // `data` holds exactly rows × width entries by construction.
        Ok(DMatrix::from_row_slice(rows.len(), width, &data))
    }

    /// A matrix of the given size.
    pub fn matrix_of(&self, rows: Dim<'_>, cols: Dim<'_>) -> Result<DMatrix<f64>, ModelError> {
        let m = self.matrix()?;
        self.check_shape(&m, Some(rows), Some(cols))?;
        Ok(m)
    }

    /// Checks the row and/or column count of `m`, read from this value.
    pub fn check_shape(
        &self,
        m: &DMatrix<f64>,
        rows: Option<Dim<'_>>,
        cols: Option<Dim<'_>>,
    ) -> Result<(), ModelError> {
        if let Some(rows) = rows
            && m.nrows() != rows.count
        {
            return Err(self.fail(
                ModelErrorKind::WrongSize,
                format!(
                    "expected {}, found {}",
                    rows.describe("row", "rows"),
                    m.nrows()
                ),
            ));
        }
        if let Some(cols) = cols
            && m.ncols() != cols.count
        {
            return Err(self.fail(
                ModelErrorKind::WrongSize,
                format!(
                    "expected {} per row, found {}",
                    cols.describe("column", "columns"),
                    m.ncols()
                ),
            ));
        }
        Ok(())
    }

    /// A list of finite numbers of the given length, each > 0.
    pub fn positive_numbers(&self, len: Dim<'_>) -> Result<Vec<f64>, ModelError> {
        let items = self.elements()?;
        self.check_len(&items, len)?;
        items
            .iter()
            .map(|item| {
                let v = item.number()?;
                if v > 0.0 {
                    Ok(v)
                } else {
                    Err(item.fail(
                        ModelErrorKind::OutOfRange,
                        format!("{v} is not positive; a range is a maximum magnitude, > 0"),
                    ))
                }
            })
            .collect()
    }

    /// Checks that a list has one entry per item of `len`.
    pub fn check_len<T>(&self, items: &[T], len: Dim<'_>) -> Result<(), ModelError> {
        if items.len() == len.count {
            Ok(())
        } else {
            Err(self.fail(
                ModelErrorKind::WrongSize,
                format!(
                    "expected {}, found {}",
                    len.describe("entry", "entries"),
                    items.len()
                ),
            ))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::edit_distance;

    #[test]
    fn edit_distance_counts_single_edits() {
        assert_eq!(edit_distance("sample_period", "sample_period"), 0);
        assert_eq!(edit_distance("sampel_period", "sample_period"), 2);
        assert_eq!(edit_distance("gain_metod", "gain_method"), 1);
        assert_eq!(edit_distance("", "abc"), 3);
    }
}
