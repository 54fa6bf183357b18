//! Seeded mutations: structure-aware (a TOML value replaced by a hostile one, a key
//! removed, an array element duplicated; a CSV cell replaced, a row cut or repeated) and
//! byte-level (a byte flipped, a quote or newline inserted, a stretch cut or repeated).

/// A small, fast, seeded generator (SplitMix64; Steele, Lea & Flood 2014).
pub struct Rng(u64);

impl Rng {
    /// A generator from a seed.
    pub fn new(seed: u64) -> Self {
        Rng(seed)
    }
    /// The next 64 random bits.
    pub fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// A number below `n` (n > 0).
    pub fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
    /// One of `items`.
    pub fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

/// Values a hostile or careless file holds.
const HOSTILE: &[&str] = &[
    "nan",
    "inf",
    "-inf",
    "1e300",
    "-1e300",
    "0",
    "-1",
    "0.0",
    "1e-300",
    "9223372036854775807",
    "-9223372036854775808",
    "\"\"",
    "\"\\u0007bell\"",
    "\"a/b\"",
    "\"../../etc/passwd\"",
    "\"/dev/zero\"",
    "[]",
    "[[]]",
    "[[1e300, 1e300], [-1e300, 1e300], [0, -1e300]]",
    "[[0, 0], [0, 0], [0, 0]]",
    "{}",
    "true",
    "\"x\"",
    "1e6",
    "0.05",
    "-0.0",
    "[nan, nan]",
    "[[nan, 0], [1, 1], [0, 1]]",
];

/// Mutates a TOML text: a value, a key or a table element, or (one case in four) bytes.
pub fn toml_case(rng: &mut Rng, seed: &str) -> Vec<u8> {
    if rng.below(4) == 0 {
        return bytes_case(rng, seed.as_bytes());
    }
    let mut lines: Vec<String> = seed.lines().map(str::to_string).collect();
    for _ in 0..=rng.below(3) {
        let assign: Vec<usize> = (0..lines.len())
            .filter(|&i| lines[i].contains(" = ") && !lines[i].trim_start().starts_with('#'))
            .collect();
        if assign.is_empty() {
            break;
        }
        let i = *rng.pick(&assign);
        match rng.below(5) {
            0 => {
                lines.remove(i);
            }
            1 => {
                let l = lines[i].clone();
                lines.insert(i, l);
            }
            2 => {
                let header: Vec<usize> = (0..lines.len())
                    .filter(|&j| lines[j].starts_with("[["))
                    .collect();
                if let Some(&h) = header.get(rng.below(header.len().max(1))) {
                    let end = (h + 1..lines.len())
                        .find(|&j| lines[j].starts_with('['))
                        .unwrap_or(lines.len());
                    let block: Vec<String> = lines[h..end].to_vec();
                    for (k, b) in block.into_iter().enumerate() {
                        lines.insert(end + k, b);
                    }
                }
            }
            _ => {
                let key = lines[i].split(" = ").next().unwrap_or("").to_string();
                lines[i] = format!("{key} = {}", rng.pick(HOSTILE));
            }
        }
    }
    let mut text = lines.join("\n");
    text.push('\n');
    text.into_bytes()
}

/// Mutates a CSV text: a cell, a row, a quote, or bytes.
pub fn csv_case(rng: &mut Rng, seed: &str) -> Vec<u8> {
    if rng.below(4) == 0 {
        return bytes_case(rng, seed.as_bytes());
    }
    let mut rows: Vec<String> = seed.lines().map(str::to_string).collect();
    if rows.is_empty() {
        return Vec::new();
    }
    for _ in 0..=rng.below(3) {
        let i = rng.below(rows.len());
        match rng.below(6) {
            0 => {
                rows.remove(i);
                if rows.is_empty() {
                    break;
                }
            }
            1 => {
                let r = rows[i].clone();
                rows.insert(i, r);
            }
            2 => {
                let at = rng.below(rows[i].len() + 1);
                if rows[i].is_char_boundary(at) {
                    rows[i].insert(at, '"');
                }
            }
            3 => rows[i] = format!("#{}", rows[i]),
            _ => {
                let mut cells: Vec<String> = rows[i].split(',').map(str::to_string).collect();
                let c = rng.below(cells.len());
                cells[c] = rng
                    .pick(&[
                        "nan", "inf", "-1e308", "", "\"", "x", "1e400", "-999", "\u{7}",
                    ])
                    .to_string();
                rows[i] = cells.join(",");
            }
        }
    }
    let mut text = rows.join("\n");
    text.push('\n');
    text.into_bytes()
}

/// Byte-level mutation: flip, insert, cut or repeat.
pub fn bytes_case(rng: &mut Rng, seed: &[u8]) -> Vec<u8> {
    let mut b = seed.to_vec();
    for _ in 0..=rng.below(4) {
        let at = rng.below(b.len() + 1);
        match rng.below(5) {
            0 if at < b.len() => b[at] ^= 1 << rng.below(8),
            1 => b.insert(
                at,
                *rng.pick(&[b'"', b'\n', b'[', b']', b'=', b',', 0xff, 0, b'\\']),
            ),
            2 if at < b.len() => {
                let n = rng.below(64).min(b.len() - at);
                b.drain(at..at + n);
            }
            3 if at < b.len() => {
                let n = rng.below(256).min(b.len() - at);
                let piece = b[at..at + n].to_vec();
                b.splice(at..at, piece);
            }
            _ => {}
        }
    }
    b
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn splitmix_matches_its_published_first_output() {
        // SplitMix64 with seed 0: first output 0xE220A8397B1DCDAF (reference
        // implementation by Vigna, prng.di.unimi.it, from memory).
        assert_eq!(Rng::new(0).next(), 0xE220_A839_7B1D_CDAF);
    }

    #[test]
    fn the_same_seed_gives_the_same_cases() {
        let seed = "[site]\nid = \"a\"\nname = \"b\"\n";
        let a: Vec<Vec<u8>> = (0..50).map(|i| toml_case(&mut Rng::new(i), seed)).collect();
        let b: Vec<Vec<u8>> = (0..50).map(|i| toml_case(&mut Rng::new(i), seed)).collect();
        assert_eq!(a, b);
    }
}
