//! The innovation gate's literals, float and fixed point, with the
//! recovery table of widened limits (see `lookout::Recovery`).

use super::literal::{self, Scalar};
use crate::design::GateDesign;

/// `lookout::Recovery { limits: [...], stages: K }` from the used limit
/// pairs (unused entries are `zero`).
pub(super) fn recovery(pairs: &[[String; 2]], zero: &str, per_miss: u8) -> String {
    let mut items: Vec<String> = pairs.iter().map(|[a, b]| format!("[{a}, {b}]")).collect();
    while items.len() < lookout::GATE_STAGES {
        items.push(format!("[{zero}, {zero}]"));
    }
    format!(
        "lookout::Recovery {{ limits: [{}], stages: {}, per_miss: {per_miss} }}",
        items.join(", "),
        pairs.len()
    )
}

/// The float gate, `Some(lookout::Gate { .. })`; `None` if an entry does
/// not fit `scalar`.
pub(super) fn float(scalar: Scalar, g: &GateDesign) -> Option<String> {
    let pairs: Option<Vec<[String; 2]>> = g
        .recovery_limits()
        .iter()
        .map(|&[a, b]| Some([scalar.literal(a)?, scalar.literal(b)?]))
        .collect();
    Some(format!(
        "Some(lookout::Gate {{ s_inv: {}, limit: {}, channel_inv_variance: {}, channel_limit: {}, recovery: {} }})",
        super::matrix(scalar, &g.s_inv)?,
        scalar.literal(g.limit)?,
        literal::list(scalar, g.channel_inv_variance.iter().copied())?,
        scalar.literal(g.channel_limit)?,
        recovery(&pairs?, &scalar.literal(0.0)?, g.per_miss),
    ))
}
