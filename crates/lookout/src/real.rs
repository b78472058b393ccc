//! The float scalar types the float observers accept.

use num_traits::{ConstZero, Float};

/// `f32` or `f64`: the scalar of the float observers and their tables.
pub trait Real: Float + ConstZero {}

impl Real for f32 {}
impl Real for f64 {}
