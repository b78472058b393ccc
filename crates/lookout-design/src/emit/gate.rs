//! The innovation gate's literals, float and fixed point, with the
//! recovery table of widened limits (see `lookout::Recovery`).

use super::literal::{self, Scalar};
use crate::design::GateDesign;
use crate::fixed_point::gate::QuantisedGate;

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

/// The quantised gate as a `lookout::FixedGate` literal in `ty`.
pub(super) fn fixed_literal(ty: &str, q: &QuantisedGate) -> String {
    let pairs: Vec<[String; 2]> = q
        .recovery
        .iter()
        .map(|[a, b]| [a.to_string(), b.to_string()])
        .collect();
    let channel_w: Vec<String> = q
        .channel_w
        .iter()
        .map(|c| format!("lookout::{ty}({c})"))
        .collect();
    format!(
        "Some(lookout::FixedGate {{ w: {}, w_exp: {}, channel_w: [{}], channel_exp: {}, z_exp: {}, limit: {}, channel_limit: {}, recovery: {} }})",
        super::fixed::q_rows(ty, &q.w),
        super::fixed::ints(&q.w_exp),
        channel_w.join(", "),
        super::fixed::ints(&q.channel_exp),
        q.z_exp,
        q.limit,
        q.channel_limit,
        recovery(&pairs, "0", q.per_miss),
    )
}
