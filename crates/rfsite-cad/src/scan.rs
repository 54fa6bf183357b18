//! A first pass over an ASCII DXF that finds a malformed group exactly: every group is a
//! code line (an integer) and a value line, and the value of a numeric code must be a
//! number of its kind (group-code ranges from memory of the DXF reference's table: 10–59, 110–149, 210–239,
//! 460–469 and 1010–1059 real; 60–99, 160–179, 270–289, 370–389, 400–409, 420–429,
//! 440–459 and 1060–1071 integer).

use crate::CadError;

/// Most entities (group code 0) a drawing may hold: ten times the benchmark's 50 000-entity
/// floor; the DXF reader keeps about 2.2 KB per entity, so this bounds it near 1 GiB.
pub const MAX_ENTITIES: usize = 500_000;

/// The sentinel that opens a binary DXF.
const BINARY: &[u8] = b"AutoCAD Binary DXF";

/// Checks the groups of an ASCII DXF; a binary one is left to the reader.
pub fn check_groups(bytes: &[u8]) -> Result<(), CadError> {
    if bytes.starts_with(BINARY) {
        return Ok(());
    }
    let mut lines = bytes.split(|b| *b == b'\n').enumerate().peekable();
    let mut entities = 0usize;
    while let Some((i, code_line)) = lines.next() {
        let code_text = trim(code_line);
        if code_text.is_empty() && lines.peek().is_none() {
            break;
        }
        let code: i32 =
            parse_str(code_text).ok_or_else(|| bad(i, "a group code (an integer)", code_text))?;
        let Some((j, value)) = lines.next() else {
            return Err(bad(i, "a value after the group code", b""));
        };
        let value = trim(value);
        match kind(code) {
            Kind::Real if parse_str::<f64>(value).is_none() => {
                return Err(bad(j, &format!("a number for group code {code}"), value))
            }
            Kind::Int if parse_str::<i64>(value).is_none() => {
                return Err(bad(j, &format!("an integer for group code {code}"), value))
            }
            _ => {}
        }
        if code == 0 && value == b"EOF" {
            break;
        }
        if code == 0 {
            entities += 1;
            if entities > MAX_ENTITIES {
                return Err(CadError {
                    line: Some(j + 1),
                    message: format!("the drawing holds more than {MAX_ENTITIES} entities"),
                });
            }
        }
    }
    Ok(())
}

enum Kind {
    Real,
    Int,
    Other,
}

fn kind(code: i32) -> Kind {
    match code {
        10..=59 | 110..=149 | 210..=239 | 460..=469 | 1010..=1059 => Kind::Real,
        60..=99
        | 160..=179
        | 270..=289
        | 370..=389
        | 400..=409
        | 420..=429
        | 440..=459
        | 1060..=1071 => Kind::Int,
        _ => Kind::Other,
    }
}

fn trim(l: &[u8]) -> &[u8] {
    let s = l
        .iter()
        .position(|c| !c.is_ascii_whitespace())
        .unwrap_or(l.len());
    let e = l
        .iter()
        .rposition(|c| !c.is_ascii_whitespace())
        .map_or(s, |e| e + 1);
    &l[s..e.max(s)]
}

fn parse_str<T: std::str::FromStr>(b: &[u8]) -> Option<T> {
    std::str::from_utf8(b).ok()?.parse().ok()
}

fn bad(index: usize, wanted: &str, got: &[u8]) -> CadError {
    let shown: String = String::from_utf8_lossy(got).chars().take(40).collect();
    CadError {
        line: Some(index + 1),
        message: format!("expected {wanted}, found `{}`", shown.escape_debug()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_word_where_a_coordinate_belongs_is_found_on_its_line() {
        let dxf =
            b"  0\nSECTION\n  2\nENTITIES\n  0\nLINE\n 10\n1.5\n 20\nabc\n  0\nENDSEC\n  0\nEOF\n";
        let e = check_groups(dxf).expect_err("bad");
        assert_eq!(e.line, Some(10));
    }

    #[test]
    fn a_well_formed_file_passes() {
        let dxf =
            b"  0\r\nSECTION\r\n  2\r\nENTITIES\r\n 10\r\n-1e3\r\n 70\r\n 1\r\n  0\r\nEOF\r\n";
        assert!(check_groups(dxf).is_ok());
    }
}
