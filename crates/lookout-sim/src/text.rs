//! Numbers in the reports: scientific notation, and words instead of
//! `inf` or `NaN`, so no report of a finished run prints a non-finite token
//! (a diverged run's verdict says what happened).

use std::fmt;

/// `value` in scientific notation with `digits` digits after the point, or
/// the words "not finite". Honours width and alignment (`{:>13}`).
#[derive(Debug, Clone, Copy)]
pub struct Sci(pub f64, pub usize);

impl fmt::Display for Sci {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.0.is_finite() {
            f.pad(&format!("{:.*e}", self.1, self.0))
        } else {
            f.pad("not finite")
        }
    }
}

#[cfg(test)]
mod tests {
    use super::Sci;

    #[test]
    fn finite_numbers_in_notation_the_rest_in_words() {
        assert_eq!(format!("{:>10}", Sci(1234.5, 2)), "    1.23e3");
        assert_eq!(format!("{}", Sci(f64::NAN, 3)), "not finite");
        assert_eq!(format!("{}", Sci(f64::NEG_INFINITY, 3)), "not finite");
    }
}
