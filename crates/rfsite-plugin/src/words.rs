//! Wording shared by the plugins' findings and tables: a count with its noun in the right
//! number ("1 antenna", "3 antennas"), never "antenna(s)".

/// `n` and the singular or plural noun: `count(1, "pair", "pairs")` is "1 pair".
pub fn count(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// The noun alone, in the number `n` asks for.
pub fn noun<'a>(n: usize, one: &'a str, many: &'a str) -> &'a str {
    if n == 1 {
        one
    } else {
        many
    }
}

/// A range of two values already formatted: "a to b unit", or "a unit" when they print
/// alike.
pub fn span(lo: &str, hi: &str, unit: &str) -> String {
    if lo == hi {
        format!("{lo} {unit}")
    } else {
        format!("{lo} to {hi} {unit}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_is_singular_and_every_other_count_plural() {
        assert_eq!(count(1, "pair", "pairs"), "1 pair");
        assert_eq!(count(0, "pair", "pairs"), "0 pairs");
        assert_eq!(count(5, "floor slab", "floor slabs"), "5 floor slabs");
        assert_eq!(noun(2, "wall", "walls"), "walls");
        assert_eq!(span("27.5", "27.5", "dB"), "27.5 dB");
        assert_eq!(span("-3.0", "4.5", "dB"), "-3.0 to 4.5 dB");
    }
}
