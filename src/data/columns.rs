//! Building one [`FrameColumn`] cell by cell: numbers stay numbers until the first cell that
//! is not one; text cells are interned as byte slices.

use std::collections::HashMap;

use super::frame::FrameColumn;

/// Code of an empty cell in a text column.
pub const EMPTY_CODE: u32 = u32::MAX;

/// Placeholder for a code that a second pass fills in.
const PENDING: u32 = u32::MAX - 1;

/// Parse a (trimmed) cell as a number: what `f64::from_str` accepts, with the same result,
/// except the words `NaN`, `inf` and `infinity`, which are not measurements (and NaN is how
/// an empty cell is stored). `None` for anything rejected.
pub fn parse_number(cell: &[u8]) -> Option<f64> {
    if let Some(v) = parse_plain_decimal(cell) {
        return Some(v);
    }
    if !cell.iter().any(u8::is_ascii_digit) {
        return None;
    }
    std::str::from_utf8(cell).ok()?.parse::<f64>().ok()
}

/// Powers of ten that are exact in `f64`.
const EXACT_POWERS_OF_TEN: [f64; 16] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
];

/// Fast path for the plain decimals that fill most data files ("12", "-3.25", "0.5"): at most
/// 15 significant digits and no exponent. The mantissa m < 10^15 < 2^53 and 10^k (k ≤ 15) are
/// both exact, so m / 10^k is one correctly rounded operation, the same value `from_str`
/// returns (Clinger's fast path). Anything else returns `None` and takes the general parser.
fn parse_plain_decimal(cell: &[u8]) -> Option<f64> {
    let (negative, digits) = match cell.first()? {
        b'-' => (true, &cell[1..]),
        b'+' => (false, &cell[1..]),
        _ => (false, cell),
    };
    let mut mantissa: u64 = 0;
    let mut count = 0usize;
    let mut decimals = 0usize;
    let mut seen_point = false;
    for &b in digits {
        match b {
            b'0'..=b'9' => {
                mantissa = mantissa * 10 + u64::from(b - b'0');
                count += 1;
                if seen_point {
                    decimals += 1;
                }
                if count > 15 {
                    return None;
                }
            }
            b'.' if !seen_point => seen_point = true,
            _ => return None,
        }
    }
    if count == 0 {
        return None;
    }
    let value = mantissa as f64 / EXACT_POWERS_OF_TEN[decimals];
    Some(if negative { -value } else { value })
}

/// Trim ASCII whitespace (and a UTF-8 byte-order mark, which only the first header name has).
pub fn trim_cell(cell: &[u8]) -> &[u8] {
    let cell = cell.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(cell);
    cell.trim_ascii()
}

/// Accumulates the cells of one column.
#[derive(Debug)]
pub struct ColumnBuilder {
    state: State,
}

#[derive(Debug)]
enum State {
    Numeric(Vec<f64>),
    Text(TextBuilder),
}

#[derive(Debug, Default)]
struct TextBuilder {
    index: HashMap<Box<[u8]>, u32>,
    levels: Vec<Box<[u8]>>,
    codes: Vec<u32>,
    first_text: Option<(u64, String)>,
    /// The first `backfill` rows were numeric before the column turned to text; their codes
    /// are `PENDING` until [`ColumnBuilder::backfill`] sets them.
    backfill: usize,
}

impl TextBuilder {
    fn intern(&mut self, cell: &[u8]) -> u32 {
        if cell.is_empty() {
            return EMPTY_CODE;
        }
        if let Some(&code) = self.index.get(cell) {
            return code;
        }
        let code = self.levels.len() as u32;
        self.levels.push(cell.into());
        self.index.insert(cell.into(), code);
        code
    }
}

impl ColumnBuilder {
    /// A builder for a column; `text` when the user declared it categorical.
    pub fn new(text: bool, capacity: usize) -> Self {
        let state = if text {
            State::Text(TextBuilder {
                codes: Vec::with_capacity(capacity),
                ..TextBuilder::default()
            })
        } else {
            State::Numeric(Vec::with_capacity(capacity))
        };
        ColumnBuilder { state }
    }

    /// Add the next cell (raw bytes; trimmed here) found on CSV line `line`.
    pub fn push(&mut self, cell: &[u8], line: u64) {
        let cell = trim_cell(cell);
        match &mut self.state {
            State::Numeric(values) => {
                if cell.is_empty() {
                    values.push(f64::NAN);
                } else if let Some(v) = parse_number(cell) {
                    values.push(v);
                } else {
                    let done = values.len();
                    let mut text = TextBuilder {
                        codes: Vec::with_capacity(values.capacity()),
                        backfill: done,
                        ..TextBuilder::default()
                    };
                    text.codes.resize(done, PENDING);
                    text.first_text = Some((line, String::from_utf8_lossy(cell).into_owned()));
                    let code = text.intern(cell);
                    text.codes.push(code);
                    self.state = State::Text(text);
                }
            }
            State::Text(text) => {
                if text.first_text.is_none() && !cell.is_empty() && parse_number(cell).is_none() {
                    text.first_text = Some((line, String::from_utf8_lossy(cell).into_owned()));
                }
                let code = text.intern(cell);
                text.codes.push(code);
            }
        }
    }

    /// How many leading rows need a second pass through [`ColumnBuilder::backfill`] (the rows
    /// read while the column still looked numeric).
    pub fn backfill_rows(&self) -> usize {
        match &self.state {
            State::Numeric(_) => 0,
            State::Text(text) => text.backfill,
        }
    }

    /// Set the cell of leading row `row` (< [`ColumnBuilder::backfill_rows`]) from its raw bytes.
    pub fn backfill(&mut self, row: usize, cell: &[u8]) {
        if let State::Text(text) = &mut self.state {
            let code = text.intern(trim_cell(cell));
            text.codes[row] = code;
        }
    }

    /// The finished column; text levels are sorted in byte order.
    pub fn finish(self) -> FrameColumn {
        match self.state {
            State::Numeric(values) => FrameColumn::Numeric(values),
            State::Text(text) => {
                let mut order: Vec<u32> = (0..text.levels.len() as u32).collect();
                order.sort_unstable_by(|&a, &b| {
                    text.levels[a as usize].cmp(&text.levels[b as usize])
                });
                let mut remap = vec![0u32; order.len()];
                for (new, &old) in order.iter().enumerate() {
                    remap[old as usize] = new as u32;
                }
                let levels = order
                    .iter()
                    .map(|&old| String::from_utf8_lossy(&text.levels[old as usize]).into_owned())
                    .collect();
                let codes = text
                    .codes
                    .into_iter()
                    .map(|c| {
                        if c >= PENDING {
                            EMPTY_CODE
                        } else {
                            remap[c as usize]
                        }
                    })
                    .collect();
                FrameColumn::Text {
                    levels,
                    codes,
                    first_text: text.first_text,
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::parse_number;
    use proptest::prelude::*;

    fn std_parse(s: &str) -> Option<f64> {
        s.parse::<f64>().ok()
    }

    #[test]
    fn fast_path_agrees_on_edge_cases() {
        for s in [
            "0",
            "-0",
            "+0",
            "1.",
            ".5",
            "-.5",
            ".",
            "-",
            "+",
            "",
            "1.2.3",
            "007",
            "0.1",
            "0.3",
            "123456789012345",
            "1234567890123456",
            "9007199254740993",
            "1e5",
            "99999999999999.9",
            "0.000000000000001",
            "12,5",
        ] {
            let ours = parse_number(s.as_bytes());
            let theirs = std_parse(s);
            assert_eq!(
                ours.map(f64::to_bits),
                theirs.map(f64::to_bits),
                "{s:?}: {ours:?} vs {theirs:?}"
            );
        }
    }

    #[test]
    fn words_that_std_reads_as_numbers_are_text() {
        // NaN codes an empty cell and infinities are no measurement: these stay text, so a
        // bad cell is reported with its line (from_str would accept all of them).
        for s in ["inf", "-inf", "NaN", "nan", "infinity", "+Infinity"] {
            assert_eq!(parse_number(s.as_bytes()), None, "{s}");
            assert!(std_parse(s).is_some(), "{s}");
        }
    }

    proptest! {
        #[test]
        fn fast_path_equals_from_str(s in "[-+]?[0-9]{0,18}(\\.[0-9]{0,18})?") {
            let ours = parse_number(s.as_bytes());
            let theirs = std_parse(&s);
            prop_assert_eq!(ours.map(f64::to_bits), theirs.map(f64::to_bits), "{:?}", s);
        }
    }
}
