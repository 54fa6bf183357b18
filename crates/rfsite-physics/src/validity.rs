//! Validity ranges: how a model tells its caller it was used outside its fitted range.
//!
//! Empirical models (ITU-R P.2040 material fits, P.2109, P.1238, ...) were fitted to
//! measurements over a limited span. rfsite still computes outside it — an
//! extrapolated number is often better than none — but every such use produces a
//! [`RangeNote`] that the report shows next to the result.

/// A note that a model was evaluated outside the range it was fitted over.
#[derive(Debug, Clone, PartialEq)]
pub struct RangeNote {
    /// The model and, where relevant, the table row, e.g. `"ITU-R P.2040-3 concrete"`.
    pub model: &'static str,
    /// The quantity that left the range, e.g. `"frequency"`.
    pub quantity: &'static str,
    /// The value used.
    pub value: f64,
    /// Lowest value of the fitted range.
    pub min: f64,
    /// Highest value of the fitted range.
    pub max: f64,
    /// Unit of `value`, `min` and `max`, e.g. `"GHz"`.
    pub unit: &'static str,
}

impl RangeNote {
    /// A one-line human sentence, e.g.
    /// `"ITU-R P.2040-3 concrete: frequency 0.8 GHz is outside the fitted range 1–100 GHz (extrapolated)"`.
    pub fn message(&self) -> String {
        format!(
            "{}: {} {} {} is outside the fitted range {}–{} {} (extrapolated)",
            self.model,
            self.quantity,
            fmt_number(self.value),
            self.unit,
            fmt_number(self.min),
            fmt_number(self.max),
            self.unit
        )
    }
}

impl std::fmt::Display for RangeNote {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.message())
    }
}

/// Returns a [`RangeNote`] when `value` lies outside `[min, max]` (or is NaN),
/// `None` when it is inside. The bounds are inclusive.
pub fn check_range(
    model: &'static str,
    quantity: &'static str,
    value: f64,
    min: f64,
    max: f64,
    unit: &'static str,
) -> Option<RangeNote> {
    if value >= min && value <= max {
        None
    } else {
        Some(RangeNote {
            model,
            quantity,
            value,
            min,
            max,
            unit,
        })
    }
}

/// Formats a number for messages: at most 6 significant digits, no trailing zeros,
/// so 0.8 prints as `0.8` and 2.4000000000000004 as `2.4`.
pub(crate) fn fmt_number(x: f64) -> String {
    if x.is_nan() {
        return "NaN".to_string();
    }
    if x.is_infinite() {
        return if x > 0.0 { "∞" } else { "-∞" }.to_string();
    }
    if x == 0.0 {
        return "0".to_string();
    }
    let magnitude = x.abs().log10().floor() as i32;
    if !(-4..=9).contains(&magnitude) {
        return format!("{x:e}");
    }
    let decimals = (5 - magnitude).max(0) as usize;
    let s = format!("{x:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn message_matches_the_documented_wording() {
        // Wording agreed for rfsite reports (common practice, not a published text).
        let note = check_range(
            "ITU-R P.2040-3 concrete",
            "frequency",
            0.8,
            1.0,
            100.0,
            "GHz",
        )
        .expect("0.8 GHz is below 1 GHz");
        assert_eq!(
            note.message(),
            "ITU-R P.2040-3 concrete: frequency 0.8 GHz is outside the fitted range 1–100 GHz (extrapolated)"
        );
    }

    #[test]
    fn bounds_are_inclusive_and_nan_is_outside() {
        assert!(check_range("m", "q", 1.0, 1.0, 100.0, "GHz").is_none());
        assert!(check_range("m", "q", 100.0, 1.0, 100.0, "GHz").is_none());
        assert!(check_range("m", "q", f64::NAN, 1.0, 100.0, "GHz").is_some());
    }

    #[test]
    fn numbers_print_short() {
        assert_eq!(fmt_number(2.4000000000000004), "2.4");
        assert_eq!(fmt_number(0.001), "0.001");
        assert_eq!(fmt_number(100.0), "100");
        assert_eq!(fmt_number(1e7), "10000000");
        assert_eq!(fmt_number(-3.0), "-3");
        assert_eq!(fmt_number(f64::INFINITY), "∞");
    }
}
