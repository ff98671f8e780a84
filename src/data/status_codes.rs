//! User-defined status codes (`--status-codes "1=alive,2=dead,3=cut"`): agencies code a
//! tree's status as numbers or letters of their own, and this maps each code to a [`Status`].
//! See docs/histories.md, "Status codes".

use std::fmt;
use std::str::FromStr;

use super::columns::parse_number;
use super::status::Status;

/// A map from status codes, as written in the data, to what they mean. With a map, only the
/// listed codes are accepted: an unmapped code is an error naming its line and value.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct StatusCodes {
    /// (code as written, its meaning), in the order given.
    entries: Vec<(String, Status)>,
}

/// The most codes a map may list (a status column has a handful of values).
pub const MAX_STATUS_CODES: usize = 256;

impl StatusCodes {
    /// A map from (code, meaning) pairs.
    ///
    /// # Errors
    /// An empty list, an empty code, a code listed twice (also `1` and `1.0`), or more than
    /// [`MAX_STATUS_CODES`] codes.
    pub fn new(entries: Vec<(String, Status)>) -> Result<Self, String> {
        if entries.is_empty() {
            return Err(
                "--status-codes lists no codes; write e.g. \"1=alive,2=dead,3=cut\"".into(),
            );
        }
        if entries.len() > MAX_STATUS_CODES {
            return Err(format!(
                "--status-codes lists {} codes; at most {MAX_STATUS_CODES} are allowed",
                entries.len()
            ));
        }
        let codes = StatusCodes { entries };
        for (i, (code, _)) in codes.entries.iter().enumerate() {
            if code.is_empty() {
                return Err("--status-codes has an empty code before `=`".into());
            }
            if codes.entries[..i].iter().any(|(c, _)| same_code(c, code)) {
                return Err(format!("--status-codes lists the code \"{code}\" twice"));
            }
        }
        Ok(codes)
    }

    /// The meaning of a (trimmed) cell, if its code is listed. Codes compare as numbers when
    /// both are numbers (`1` matches `1.0`), else as text ignoring ASCII case.
    ///
    /// # Examples
    /// ```
    /// use stemcast::data::{Status, StatusCodes};
    /// let codes: StatusCodes = "1=alive, 2=dead, 3=cut".parse().unwrap();
    /// assert_eq!(codes.lookup("2"), Some(Status::Dead));
    /// assert_eq!(codes.lookup("3.0"), Some(Status::Censored));
    /// assert_eq!(codes.lookup("9"), None);
    /// ```
    pub fn lookup(&self, cell: &str) -> Option<Status> {
        let cell = cell.trim();
        self.entries
            .iter()
            .find(|(c, _)| same_code(c, cell))
            .map(|(_, s)| *s)
    }

    /// The codes as given, for messages: `1=alive, 2=dead, 3=cut`.
    pub fn describe(&self) -> String {
        self.to_string()
    }
}

fn same_code(a: &str, b: &str) -> bool {
    match (parse_number(a.as_bytes()), parse_number(b.as_bytes())) {
        (Some(x), Some(y)) => x == y,
        _ => a.eq_ignore_ascii_case(b),
    }
}

/// The meaning of a status word on the right of `=`.
fn meaning(word: &str) -> Option<Status> {
    match word.trim().to_ascii_lowercase().as_str() {
        "alive" | "live" | "living" => Some(Status::Alive),
        "dead" => Some(Status::Dead),
        "cut" | "harvested" | "removed" => Some(Status::Censored),
        _ => None,
    }
}

impl FromStr for StatusCodes {
    type Err = String;

    /// Parse `CODE=MEANING` pairs separated by commas; meanings are alive (live), dead, or
    /// cut (harvested, removed).
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let mut entries = Vec::new();
        for item in s.split(',').filter(|i| !i.trim().is_empty()) {
            let Some((code, word)) = item.split_once('=') else {
                return Err(format!(
                    "--status-codes: \"{}\" is not CODE=MEANING, e.g. 1=alive",
                    item.trim()
                ));
            };
            let status = meaning(word).ok_or_else(|| {
                format!(
                    "--status-codes: \"{}\" is not a meaning; use alive, dead or cut",
                    word.trim()
                )
            })?;
            entries.push((code.trim().to_string(), status));
        }
        StatusCodes::new(entries)
    }
}

impl fmt::Display for StatusCodes {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, (code, status)) in self.entries.iter().enumerate() {
            let word = match status {
                Status::Alive => "alive",
                Status::Dead => "dead",
                Status::Censored => "cut",
            };
            if i > 0 {
                f.write_str(", ")?;
            }
            write!(f, "{code}={word}")?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_and_numeric_codes_map_and_unknown_ones_do_not() {
        let codes: StatusCodes = "L=live,D=dead,H=harvested".parse().unwrap();
        assert_eq!(codes.lookup("l"), Some(Status::Alive));
        assert_eq!(codes.lookup(" H "), Some(Status::Censored));
        assert_eq!(codes.lookup("X"), None);
        assert_eq!(codes.describe(), "L=alive, D=dead, H=cut");
    }

    #[test]
    fn malformed_maps_are_refused() {
        assert!("".parse::<StatusCodes>().is_err());
        assert!("1alive".parse::<StatusCodes>().is_err());
        assert!("1=sleeping".parse::<StatusCodes>().is_err());
        assert!("1=alive,1.0=dead".parse::<StatusCodes>().is_err());
        assert!("=alive".parse::<StatusCodes>().is_err());
    }
}
