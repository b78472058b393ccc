//! Identifier rules for the model name and the signal names, which end up in
//! generated Rust source.

use std::collections::HashMap;

use super::error::{ModelError, ModelErrorKind};
use super::reader::{Dim, Node};

/// Rust's strict and reserved keywords (edition 2024), which cannot be identifiers.
const KEYWORDS: &[&str] = &[
    "as", "async", "await", "break", "const", "continue", "crate", "dyn", "else", "enum", "extern",
    "false", "fn", "for", "gen", "if", "impl", "in", "let", "loop", "match", "mod", "move", "mut",
    "pub", "ref", "return", "self", "Self", "static", "struct", "super", "trait", "true", "type",
    "unsafe", "use", "where", "while", "abstract", "become", "box", "do", "final", "macro",
    "override", "priv", "try", "typeof", "unsized", "virtual", "yield",
];

/// Why `s` is not a plain ASCII Rust identifier, or `None` if it is one.
pub(crate) fn identifier_problem(s: &str) -> Option<String> {
    let mut chars = s.chars();
    let Some(first) = chars.next() else {
        return Some("it is empty".to_string());
    };
    if !(first.is_ascii_alphabetic() || first == '_') {
        return Some(format!("it starts with '{first}', not a letter or '_'"));
    }
    if let Some(bad) = s
        .chars()
        .find(|c| !(c.is_ascii_alphanumeric() || *c == '_'))
    {
        return Some(format!("'{bad}' is not allowed"));
    }
    if s == "_" {
        return Some("'_' alone is not an identifier".to_string());
    }
    if KEYWORDS.contains(&s) {
        return Some(format!("`{s}` is a Rust keyword"));
    }
    None
}

/// Reads an optional list of identifiers, one per item of `len`, all distinct.
pub(crate) fn read_names(
    node: Option<Node<'_, '_>>,
    len: Dim<'_>,
) -> Result<Option<Vec<String>>, ModelError> {
    let Some(node) = node else {
        return Ok(None);
    };
    let items = node.elements()?;
    node.check_len(&items, len)?;
    let mut seen: HashMap<String, usize> = HashMap::new();
    let mut names = Vec::with_capacity(items.len());
    for (i, item) in items.iter().enumerate() {
        let name = item.string()?.to_string();
        if let Some(problem) = identifier_problem(&name) {
            return Err(item.fail(
                ModelErrorKind::BadName,
                format!(
                    "\"{name}\" is not a valid identifier: {problem} \
                     (use ASCII letters, digits and '_', starting with a letter or '_')"
                ),
            ));
        }
        if let Some(first) = seen.insert(name.clone(), i) {
            return Err(item.fail(
                ModelErrorKind::BadName,
                format!(
                    "\"{name}\" is used twice (entries {first} and {i}); names must be distinct"
                ),
            ));
        }
        names.push(name);
    }
    Ok(Some(names))
}

/// Reads an optional list of unit strings (free text for reports, one line each).
pub(crate) fn read_units(
    node: Option<Node<'_, '_>>,
    len: Dim<'_>,
) -> Result<Option<Vec<String>>, ModelError> {
    let Some(node) = node else {
        return Ok(None);
    };
    let items = node.elements()?;
    node.check_len(&items, len)?;
    items
        .iter()
        .map(|item| {
            let unit = item.string()?;
            if unit.chars().any(char::is_control) {
                Err(item.fail(
                    ModelErrorKind::BadName,
                    "a unit must be one line of printable text",
                ))
            } else {
                Ok(unit.to_string())
            }
        })
        .collect::<Result<Vec<_>, _>>()
        .map(Some)
}

#[cfg(test)]
mod tests {
    use super::identifier_problem;

    #[test]
    fn accepts_plain_identifiers() {
        for ok in ["speed", "x_1", "_hidden", "Angle2"] {
            assert_eq!(identifier_problem(ok), None, "{ok}");
        }
    }

    #[test]
    fn refuses_non_identifiers() {
        for bad in ["", "1x", "a-b", "a b", "_", "fn", "Self", "ω"] {
            assert!(identifier_problem(bad).is_some(), "{bad}");
        }
    }
}
