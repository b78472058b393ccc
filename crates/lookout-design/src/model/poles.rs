//! Pole lists (`observer.poles`, `observer.discrete_poles`): real entries and
//! `{ re, im }` entries that stand for a conjugate pair.

use std::f64::consts::PI;

use nalgebra::Complex;

use super::error::{ModelError, ModelErrorKind, ModelWarning};
use super::reader::{Dim, Node};

/// Where a pole list lives.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Plane {
    /// s-plane (rad/s), stable when Re s < 0.
    S,
    /// z-plane, stable when |z| < 1.
    Z,
}

/// One entry as written: a real pole, or one member of a conjugate pair.
struct Entry {
    pole: Complex<f64>,
    is_pair: bool,
}

fn read_entry(node: &Node<'_, '_>) -> Result<Entry, ModelError> {
    if !node.is_table() {
        return Ok(Entry {
            pole: Complex::new(node.number()?, 0.0),
            is_pair: false,
        });
    }
    let table = node.table(&["re", "im"])?;
    let re = table.require("re", "the real part")?.number()?;
    let im_node = table.require("im", "the imaginary part")?;
    let im = im_node.number()?;
    if im == 0.0 {
        return Err(im_node.fail(
            ModelErrorKind::PoleCount,
            format!(
                "im = 0 makes this a real pole; write it as a real number ({re}) \
                 instead of a {{ re, im }} entry, which stands for a conjugate pair"
            ),
        ));
    }
    Ok(Entry {
        pole: Complex::new(re, im),
        is_pair: true,
    })
}

fn show(pole: Complex<f64>, is_pair: bool) -> String {
    if is_pair {
        format!("{} ± {}i", pole.re, pole.im.abs())
    } else {
        format!("{}", pole.re)
    }
}

fn check_stable(node: &Node<'_, '_>, entry: &Entry, plane: Plane) -> Result<(), ModelError> {
    let shown = show(entry.pole, entry.is_pair);
    match plane {
        Plane::S if entry.pole.re >= 0.0 => Err(node.fail(
            ModelErrorKind::UnstablePole,
            format!(
                "pole {shown} is not stable: an s-plane observer pole needs Re < 0 \
                 so that the estimation error decays"
            ),
        )),
        Plane::Z if entry.pole.norm() >= 1.0 => Err(node.fail(
            ModelErrorKind::UnstablePole,
            format!(
                "pole {shown} is not stable: |z| = {} but a z-plane observer pole needs \
                 |z| < 1 so that the estimation error decays",
                entry.pole.norm()
            ),
        )),
        _ => Ok(()),
    }
}

/// Reads a pole list for `states` estimated states and expands it: each `{ re, im }`
/// entry becomes `re + |im| i` followed by `re − |im| i`; real entries keep
/// their place. `sample_period` is used only for the aliasing warning.
pub(crate) fn read_poles(
    node: &Node<'_, '_>,
    plane: Plane,
    states: Dim<'_>,
    sample_period: f64,
    warnings: &mut Vec<ModelWarning>,
) -> Result<Vec<Complex<f64>>, ModelError> {
    let items = node.elements()?;
    let mut entries = Vec::with_capacity(items.len());
    for item in &items {
        let entry = read_entry(item)?;
        check_stable(item, &entry, plane)?;
        // exp(sT) cannot tell s from s + 2πi/T: above the Nyquist frequency
        // the mapped pole stands for a slower oscillation than the one written.
        if plane == Plane::S && entry.pole.im.abs() * sample_period >= PI {
            warnings.push(ModelWarning {
                path: item.path().to_string(),
                message: format!(
                    "pole {}: |Im s| T = {:.3} >= pi, above the Nyquist frequency; \
                     exp(s T) folds it onto a lower frequency",
                    show(entry.pole, true),
                    entry.pole.im.abs() * sample_period
                ),
            });
        }
        entries.push(entry);
    }

    let count: usize = entries.iter().map(|e| if e.is_pair { 2 } else { 1 }).sum();
    let n = states.count;
    if count != n {
        let mut message = format!(
            "expected {}, found {count} \
             (a {{ re, im }} entry counts as two: it stands for its conjugate pair)",
            states.describe("pole", "poles")
        );
        if let Some((i, j)) = conjugate_listed_twice(&entries) {
            message.push_str(&format!(
                "; entries {i} and {j} are the two members of one pair: list each pair once"
            ));
        }
        return Err(node.fail(ModelErrorKind::PoleCount, message));
    }

    let mut poles = Vec::with_capacity(n);
    for entry in &entries {
        if entry.is_pair {
            let upper = Complex::new(entry.pole.re, entry.pole.im.abs());
            poles.push(upper);
            poles.push(upper.conj());
        } else {
            poles.push(entry.pole);
        }
    }
    Ok(poles)
}

/// Indices of two complex entries that are conjugates of each other, if any.
fn conjugate_listed_twice(entries: &[Entry]) -> Option<(usize, usize)> {
    entries.iter().enumerate().find_map(|(i, a)| {
        entries
            .iter()
            .enumerate()
            .skip(i + 1)
            .find(|(_, b)| a.is_pair && b.is_pair && a.pole == b.pole.conj())
            .map(|(j, _)| (i, j))
    })
}
