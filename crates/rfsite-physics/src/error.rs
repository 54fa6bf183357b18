//! The one error type of the crate.

use std::fmt;

use crate::validity::fmt_number;

/// An input the models cannot give a meaningful answer for.
///
/// The `Display` text is a plain sentence naming the offending value, meant to be
/// shown to the user as it is (the caller adds which project line it came from).
#[derive(Debug, Clone, PartialEq)]
pub enum PhysicsError {
    /// A probability that is not strictly between 0 and 1 (or is NaN).
    Probability {
        /// The value received.
        value: f64,
    },
    /// A quantity that is NaN, infinite, or outside its physical domain
    /// (a negative distance, a zero frequency, ...).
    Invalid {
        /// What the value is, e.g. `"distance"`.
        quantity: &'static str,
        /// The value received.
        value: f64,
        /// What it must satisfy, e.g. `"must be greater than 0 m"`.
        requirement: &'static str,
    },
    /// A value outside the span of a published table that cannot be extrapolated
    /// (for example an exposure limit asked for at a frequency the table does not cover).
    OutsideTable {
        /// The table, e.g. `"FCC 47 CFR 1.1310 Table 1"`.
        table: &'static str,
        /// What the value is, e.g. `"frequency"`.
        quantity: &'static str,
        /// The value received.
        value: f64,
        /// Lowest value the table covers.
        min: f64,
        /// Highest value the table covers.
        max: f64,
        /// Unit of `value`, `min` and `max`.
        unit: &'static str,
    },
}

impl fmt::Display for PhysicsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            PhysicsError::Probability { value } => {
                write!(f, "probability {} is outside 0..1", fmt_number(*value))
            }
            PhysicsError::Invalid {
                quantity,
                value,
                requirement,
            } => write!(f, "{quantity} {} {requirement}", fmt_number(*value)),
            PhysicsError::OutsideTable {
                table,
                quantity,
                value,
                min,
                max,
                unit,
            } => write!(
                f,
                "{table}: {quantity} {} {unit} is outside the table's span {}–{} {unit}",
                fmt_number(*value),
                fmt_number(*min),
                fmt_number(*max)
            ),
        }
    }
}

impl std::error::Error for PhysicsError {}

/// Checks a probability is strictly inside (0, 1).
pub(crate) fn check_probability(p: f64) -> Result<f64, PhysicsError> {
    if p > 0.0 && p < 1.0 {
        Ok(p)
    } else {
        Err(PhysicsError::Probability { value: p })
    }
}

/// Checks a value is finite and strictly positive.
pub(crate) fn check_positive(quantity: &'static str, value: f64) -> Result<f64, PhysicsError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(PhysicsError::Invalid {
            quantity,
            value,
            requirement: "must be a finite number greater than 0",
        })
    }
}

/// Checks a value is finite and not negative.
pub(crate) fn check_non_negative(quantity: &'static str, value: f64) -> Result<f64, PhysicsError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(PhysicsError::Invalid {
            quantity,
            value,
            requirement: "must be a finite number not below 0",
        })
    }
}

/// Checks a value is finite.
pub(crate) fn check_finite(quantity: &'static str, value: f64) -> Result<f64, PhysicsError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(PhysicsError::Invalid {
            quantity,
            value,
            requirement: "must be a finite number",
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn display_is_a_sentence() {
        // The wording is ours (common practice for error text).
        assert_eq!(
            PhysicsError::Probability { value: 1.2 }.to_string(),
            "probability 1.2 is outside 0..1"
        );
        assert_eq!(
            check_positive("distance", -3.0).unwrap_err().to_string(),
            "distance -3 must be a finite number greater than 0"
        );
    }
}
