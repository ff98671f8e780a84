//! The tree status column: alive, dead, or taken out by people between the measurements.

use std::fmt;
use std::str::FromStr;

use super::columns::EMPTY_CODE;
use super::frame::{Frame, FrameColumn};
use super::status_codes::StatusCodes;
use super::DataError;

/// What a status value of 1 (or true, yes) means, i.e. what the survival model's probability
/// is about (`--outcome`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Outcome {
    /// 1 means the tree is alive at the second measurement.
    #[default]
    Alive,
    /// 1 means the tree died between the measurements.
    Dead,
}

impl Outcome {
    /// The lowercase name used in files and on the command line.
    pub fn as_str(self) -> &'static str {
        match self {
            Outcome::Alive => "alive",
            Outcome::Dead => "dead",
        }
    }
}

impl fmt::Display for Outcome {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl FromStr for Outcome {
    type Err = String;

    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "alive" => Ok(Outcome::Alive),
            "dead" => Ok(Outcome::Dead),
            _ => Err(format!("unknown outcome \"{s}\"; use alive or dead")),
        }
    }
}

/// The fate of a tree between the two measurements.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// Alive at the second measurement.
    Alive,
    /// Died between the measurements.
    Dead,
    /// Cut, harvested or removed by people: left out of the survival fit (censored).
    Censored,
}

/// The values the status column accepts, for messages.
pub const ACCEPTED_STATUS: &str = "1/0, true/false, yes/no, alive/dead (any case), or \
     cut/harvested/removed for trees taken out between the measurements";

/// A status value that is not understood. Its message quotes the value and lists what is
/// accepted; the caller adds file, line and column.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("\"{0}\" is not a tree status; use {ACCEPTED_STATUS}")]
pub struct UnknownStatus(pub String);

impl Status {
    /// Parse a status cell (trimmed, any case). `one_means` says whether 1/true/yes means
    /// alive or dead; the words alive/dead and cut/harvested/removed mean what they say.
    ///
    /// # Errors
    /// [`UnknownStatus`] for anything else, including an empty cell.
    ///
    /// # Examples
    /// ```
    /// use stemcast::data::{Outcome, Status};
    /// assert_eq!(Status::parse(" Yes ", Outcome::Alive), Ok(Status::Alive));
    /// assert_eq!(Status::parse("1", Outcome::Dead), Ok(Status::Dead));
    /// assert_eq!(Status::parse("Harvested", Outcome::Alive), Ok(Status::Censored));
    /// ```
    pub fn parse(value: &str, one_means: Outcome) -> Result<Status, UnknownStatus> {
        let trimmed = value.trim();
        let (one, zero) = match one_means {
            Outcome::Alive => (Status::Alive, Status::Dead),
            Outcome::Dead => (Status::Dead, Status::Alive),
        };
        let lower = trimmed.to_ascii_lowercase();
        match lower.as_str() {
            "1" | "true" | "yes" => Ok(one),
            "0" | "false" | "no" => Ok(zero),
            "alive" => Ok(Status::Alive),
            "dead" => Ok(Status::Dead),
            "cut" | "harvested" | "removed" => Ok(Status::Censored),
            _ => match trimmed.parse::<f64>() {
                // "1.0" and "0.0" as written by some spreadsheets.
                Ok(1.0) => Ok(one),
                Ok(0.0) => Ok(zero),
                _ => Err(UnknownStatus(trimmed.to_string())),
            },
        }
    }
}

/// The status of every row with a first diameter (`Alive` as a placeholder elsewhere). Each
/// distinct value is parsed once: by `codes` when given (`--status-codes`), else by
/// [`Status::parse`].
pub(super) fn status_per_row(
    frame: &Frame,
    column: &str,
    one_means: Outcome,
    codes: Option<&StatusCodes>,
    rows: &[bool],
) -> Result<Vec<Status>, DataError> {
    let Some(FrameColumn::Text {
        levels,
        codes: cells,
        ..
    }) = frame.columns.get(column)
    else {
        return Ok(vec![Status::Alive; frame.len()]);
    };
    let parsed: Vec<_> = levels
        .iter()
        .map(|l| parse_with(l, one_means, codes))
        .collect();
    let mut out = Vec::with_capacity(cells.len());
    for (i, &code) in cells.iter().enumerate() {
        if !rows[i] {
            out.push(Status::Alive);
            continue;
        }
        let cell_error =
            |message: String| DataError::cell(&frame.source, frame.lines[i], column, message);
        if code == EMPTY_CODE {
            let accepted = match codes {
                Some(c) => format!("one of the codes {c}"),
                None => ACCEPTED_STATUS.to_string(),
            };
            return Err(cell_error(format!(
                "the status is empty on a row with a first diameter; use {accepted}"
            )));
        }
        match &parsed[code as usize] {
            Ok(st) => out.push(*st),
            Err(message) => return Err(cell_error(message.clone())),
        }
    }
    Ok(out)
}

/// One status cell by the user's codes, or by [`Status::parse`] without them; the error is
/// the message for the cell (the caller adds file, line and column).
pub(super) fn parse_with(
    value: &str,
    one_means: Outcome,
    codes: Option<&StatusCodes>,
) -> Result<Status, String> {
    match codes {
        Some(c) => c.lookup(value).ok_or_else(|| {
            format!(
                "\"{}\" is not one of the status codes given (--status-codes {c})",
                value.trim()
            )
        }),
        None => Status::parse(value, one_means).map_err(|e| {
            format!(
                "{e}; other codes can be mapped with --status-codes, e.g. \"1=alive,2=dead,3=cut\""
            )
        }),
    }
}
