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

/// `lookout::Matrix::from_rows([[lookout::Q31(..), ..], ..])`.
fn q_rows<Q: lookout::Fixed, const R: usize, const C: usize>(
    ty: &str,
    m: &lookout::Matrix<Q, R, C>,
) -> String {
    let rows: Vec<String> = m
        .to_rows()
        .iter()
        .map(|row| {
            let items: Vec<String> = row
                .iter()
                .map(|q| format!("lookout::{ty}({})", q.to_i64()))
                .collect();
            format!("[{}]", items.join(", "))
        })
        .collect();
    format!("lookout::Matrix::from_rows([{}])", rows.join(", "))
}

fn ints<T: ToString>(values: &[T]) -> String {
    let items: Vec<String> = values.iter().map(ToString::to_string).collect();
    format!("[{}]", items.join(", "))
}

/// The gate in Q form, built by the runtime's own `FixedGate::from_float`
/// from the float gate at the design's output scales, as a literal.
fn fixed_sized<Q: lookout::Fixed, const P: usize>(
    ty: &str,
    g: &GateDesign,
    output: &[i8],
) -> Option<String> {
    use lookout::Wide as _;
    let mut s_inv = [[0.0; P]; P];
    for (i, row) in s_inv.iter_mut().enumerate() {
        for (j, v) in row.iter_mut().enumerate() {
            *v = *g.s_inv.get((i, j))?;
        }
    }
    let mut widened = lookout::Recovery::none(0.0);
    widened.stages = u8::try_from(g.widening.len()).ok()?;
    widened.per_miss = g.per_miss;
    for (slot, pair) in widened.limits.iter_mut().zip(g.recovery_limits()) {
        *slot = pair;
    }
    let float = lookout::Gate::<f64, P> {
        s_inv: lookout::Matrix::from_rows(s_inv),
        limit: g.limit,
        channel_inv_variance: g.channel_inv_variance.clone().try_into().ok()?,
        channel_limit: g.channel_limit,
        recovery: widened,
    };
    let output: [i8; P] = output.try_into().ok()?;
    let q = lookout::FixedGate::<Q, P>::from_float(&float, &output).ok()?;
    let pairs: Vec<[String; 2]> = q
        .recovery
        .limits
        .iter()
        .take(usize::from(q.recovery.stages))
        .map(|[a, b]| [a.to_i64().to_string(), b.to_i64().to_string()])
        .collect();
    let channel_w: Vec<String> = q
        .channel_w
        .iter()
        .map(|c| format!("lookout::{ty}({})", c.to_i64()))
        .collect();
    Some(format!(
        "Some(lookout::FixedGate {{ w: {}, w_exp: {}, channel_w: [{}], channel_exp: {}, z_exp: {}, limit: {}, channel_limit: {}, recovery: {} }})",
        q_rows(ty, &q.w),
        ints(&q.w_exp),
        channel_w.join(", "),
        ints(&q.channel_exp),
        q.z_exp,
        q.limit.to_i64(),
        q.channel_limit.to_i64(),
        recovery(&pairs, "0", q.recovery.per_miss),
    ))
}

/// Largest output count the fixed-point gate is emitted for.
pub const MAX_FIXED_GATE_OUTPUTS: usize = 8;

/// The fixed-point gate literal for `ty` ("Q15" or "Q31"), `None` when the
/// gate cannot be built (more than [`MAX_FIXED_GATE_OUTPUTS`] outputs, or a
/// value outside the format).
pub(crate) fn fixed(ty: &str, g: &GateDesign, output: &[i8]) -> Option<String> {
    macro_rules! by_size {
        ($q:ty) => {
            match output.len() {
                1 => fixed_sized::<$q, 1>(ty, g, output),
                2 => fixed_sized::<$q, 2>(ty, g, output),
                3 => fixed_sized::<$q, 3>(ty, g, output),
                4 => fixed_sized::<$q, 4>(ty, g, output),
                5 => fixed_sized::<$q, 5>(ty, g, output),
                6 => fixed_sized::<$q, 6>(ty, g, output),
                7 => fixed_sized::<$q, 7>(ty, g, output),
                8 => fixed_sized::<$q, 8>(ty, g, output),
                _ => None,
            }
        };
    }
    match ty {
        "Q31" => by_size!(lookout::Q31),
        "Q15" => by_size!(lookout::Q15),
        _ => None,
    }
}
