//! Measurement times: a year number (`1998`, `1998.5`) or a `YYYY-MM-DD` date, both read as
//! a decimal year (docs/histories.md, "Measurement times").

/// Earliest and latest accepted year: wide enough for any plot record, narrow enough that an
/// unrelated column (an id, a count of days) named as the time column is caught.
pub const YEAR_RANGE: (f64, f64) = (1000.0, 3000.0);

/// Whether `year` is a leap year of the Gregorian calendar.
fn is_leap(year: i64) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

/// Days in each month of `year`.
fn month_lengths(year: i64) -> [u32; 12] {
    let feb = if is_leap(year) { 29 } else { 28 };
    [31, feb, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31]
}

/// A `YYYY-MM-DD` date as a decimal year.
///
/// # Formula
/// t = Y + (d − 1) / D, with d the day of the year (1 January = 1) and D the days of year Y
/// (365 or 366). 1 January is the whole year; 2 July 1998 (day 183) is 1998 + 182/365.
///
/// # Examples
/// ```
/// use stemcast::data::decimal_year;
/// assert_eq!(decimal_year("1998-01-01"), Some(1998.0));
/// assert_eq!(decimal_year("1998-07-02"), Some(1998.0 + 182.0 / 365.0));
/// assert_eq!(decimal_year("2000-02-30"), None);
/// ```
pub fn decimal_year(text: &str) -> Option<f64> {
    let mut parts = text.trim().split('-');
    let (y, m, d) = (parts.next()?, parts.next()?, parts.next()?);
    if parts.next().is_some() || y.len() != 4 || m.len() != 2 || d.len() != 2 {
        return None;
    }
    let digits = |s: &str| s.bytes().all(|b| b.is_ascii_digit());
    if !(digits(y) && digits(m) && digits(d)) {
        return None;
    }
    let year: i64 = y.parse().ok()?;
    let month: usize = m.parse().ok()?;
    let day: u32 = d.parse().ok()?;
    let lengths = month_lengths(year);
    if !(1..=12).contains(&month) || day == 0 || day > lengths[month - 1] {
        return None;
    }
    let before: u32 = lengths[..month - 1].iter().sum();
    let in_year: u32 = lengths.iter().sum();
    Some(year as f64 + f64::from(before + day - 1) / f64::from(in_year))
}

/// A time cell: a number (a year, possibly fractional) or a `YYYY-MM-DD` date, inside
/// [`YEAR_RANGE`]. The error is the message for the cell.
pub fn parse_time(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let value = super::columns::parse_number(t.as_bytes())
        .or_else(|| decimal_year(t))
        .ok_or_else(|| format!("\"{t}\" is not a year or a YYYY-MM-DD date"))?;
    if !(YEAR_RANGE.0..=YEAR_RANGE.1).contains(&value) {
        return Err(format!(
            "{t} is not a plausible measurement year (expected {} to {})",
            YEAR_RANGE.0, YEAR_RANGE.1
        ));
    }
    Ok(value)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_become_decimal_years() {
        // Derived analytically: 2000 is a leap year (divisible by 400), so 1 March 2000 is
        // day 31 + 29 + 1 = 61 of 366; 31 December 1999 is day 365 of 365.
        assert_eq!(decimal_year("2000-03-01"), Some(2000.0 + 60.0 / 366.0));
        assert_eq!(decimal_year("1999-12-31"), Some(1999.0 + 364.0 / 365.0));
        // 1900 is not a leap year (divisible by 100, not by 400).
        assert_eq!(decimal_year("1900-02-29"), None);
        for bad in [
            "1998-7-02",
            "98-07-02",
            "1998/07/02",
            "1998-13-01",
            "1998-00-10",
            "x",
        ] {
            assert_eq!(decimal_year(bad), None, "{bad}");
        }
    }

    #[test]
    fn times_outside_the_plausible_range_are_refused() {
        assert_eq!(parse_time(" 1998 "), Ok(1998.0));
        assert!(parse_time("17").unwrap_err().contains("plausible"));
        assert!(parse_time("spring").unwrap_err().contains("YYYY-MM-DD"));
    }
}
