//! What a step did: the status value every observer step returns.

/// A set of measurement channels, one bit per output (bit `j` is output `j`).
///
/// Observers have at most 32 outputs; a larger `P` is a compile error.
///
/// ```
/// use lookout::ChannelMask;
/// let all = ChannelMask::all(3);
/// assert_eq!(all.count(), 3);
/// let two = all.without(1);
/// assert!(two.contains(0) && !two.contains(1) && two.contains(2));
/// ```
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub struct ChannelMask(u32);

impl ChannelMask {
    /// No channel.
    pub const NONE: Self = Self(0);

    /// Channels `0..p` (all 32 when `p ≥ 32`).
    pub const fn all(p: usize) -> Self {
        if p >= 32 {
            Self(u32::MAX)
        } else {
            Self((1u32 << p) - 1)
        }
    }

    /// The mask whose bit `j` stands for channel `j`.
    pub const fn from_bits(bits: u32) -> Self {
        Self(bits)
    }

    /// The bits of the mask.
    pub const fn bits(self) -> u32 {
        self.0
    }

    /// Whether channel `j` is in the set (false for `j ≥ 32`).
    pub const fn contains(self, j: usize) -> bool {
        j < 32 && self.0 & (1u32 << j) != 0
    }

    /// The set with channel `j` added (unchanged for `j ≥ 32`).
    #[must_use]
    pub const fn with(self, j: usize) -> Self {
        if j < 32 {
            Self(self.0 | (1u32 << j))
        } else {
            self
        }
    }

    /// The set with channel `j` removed.
    #[must_use]
    pub const fn without(self, j: usize) -> Self {
        if j < 32 {
            Self(self.0 & !(1u32 << j))
        } else {
            self
        }
    }

    /// Channels in both sets.
    #[must_use]
    pub const fn and(self, other: Self) -> Self {
        Self(self.0 & other.0)
    }

    /// Number of channels in the set.
    pub const fn count(self) -> u32 {
        self.0.count_ones()
    }

    /// Whether the set is empty.
    pub const fn is_empty(self) -> bool {
        self.0 == 0
    }
}

/// How a step treated its measurement.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Outcome {
    /// The measurement corrected the estimate through the channels in
    /// [`Status::used`].
    Corrected,
    /// The gate re-acquired: after more consecutive misses than its recovery
    /// table covers (see [`Recovery`](crate::Recovery)), the measurement was
    /// applied untested through the channels in [`Status::used`].
    // Next to `Corrected`, so `corrected()` is one comparison.
    Reacquired,
    /// No channel was usable (none given, all masked or non-finite): the
    /// estimate was only predicted, x̂ ← A x̂ + B u.
    PredictedOnly,
    /// The innovation failed the gate test: the measurement was not applied
    /// and the estimate was only predicted.
    Gated,
    /// An input was not finite: the step was refused and the state left
    /// exactly as it was.
    InputRejected,
}

/// What one observer step did. Small and `Copy`, so firmware can log it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Status {
    /// What happened to the measurement.
    pub outcome: Outcome,
    /// Channels whose measurement corrected the estimate.
    pub used: ChannelMask,
    /// Channels left out: masked by the caller or not finite.
    pub missing: ChannelMask,
    /// Stores that saturated in a fixed-point step (always 0 in float steps).
    pub saturations: u16,
}

impl Status {
    pub(crate) const fn rejected_input(p: usize) -> Self {
        Self {
            outcome: Outcome::InputRejected,
            used: ChannelMask::NONE,
            missing: ChannelMask::all(p),
            saturations: 0,
        }
    }

    pub(crate) const fn predicted_only(p: usize) -> Self {
        Self {
            outcome: Outcome::PredictedOnly,
            used: ChannelMask::NONE,
            missing: ChannelMask::all(p),
            saturations: 0,
        }
    }

    /// Whether the estimate was corrected by a measurement (tested by the
    /// gate or re-acquired).
    pub const fn corrected(&self) -> bool {
        matches!(self.outcome, Outcome::Corrected | Outcome::Reacquired)
    }
}
