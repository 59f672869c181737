//! Calendar dates as the shop writes them (ISO 8601, `YYYY-MM-DD`), without a date crate.

use std::fmt;

/// A valid calendar date between 1950 and 2100.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub struct Date {
    pub year: i32,
    pub month: u32,
    pub day: u32,
}

impl Date {
    /// Parses `YYYY-MM-DD`, checking the month's length (leap years included).
    pub fn parse(text: &str) -> Result<Self, &'static str> {
        const MSG: &str = "enter a date as YYYY-MM-DD";
        let text = text.trim();
        if text.is_empty() {
            return Err("required");
        }
        let mut parts = text.splitn(3, '-');
        let (Some(y), Some(m), Some(d)) = (parts.next(), parts.next(), parts.next()) else {
            return Err(MSG);
        };
        if y.len() != 4 || m.len() != 2 || d.len() != 2 {
            return Err(MSG);
        }
        let (Ok(year), Ok(month), Ok(day)) = (y.parse::<i32>(), m.parse::<u32>(), d.parse::<u32>())
        else {
            return Err(MSG);
        };
        if !(1950..=2100).contains(&year) {
            return Err("year must be between 1950 and 2100");
        }
        if !(1..=12).contains(&month) || day == 0 || day > days_in_month(year, month) {
            return Err("no such date");
        }
        Ok(Self { year, month, day })
    }

    /// Today's date in UTC from the system clock.
    pub fn today() -> Self {
        let secs = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_secs())
            .unwrap_or(0);
        Self::from_days_since_epoch((secs / 86_400) as i64)
    }

    /// Civil date from days since 1970-01-01 (H. Hinnant's `civil_from_days` algorithm).
    fn from_days_since_epoch(days: i64) -> Self {
        let z = days + 719_468;
        let era = z.div_euclid(146_097);
        let doe = z.rem_euclid(146_097);
        let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
        let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
        let mp = (5 * doy + 2) / 153;
        let day = (doy - (153 * mp + 2) / 5 + 1) as u32;
        let month = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
        let year = (yoe + era * 400 + i64::from(month <= 2)) as i32;
        Self { year, month, day }
    }
}

fn days_in_month(year: i32, month: u32) -> u32 {
    match month {
        2 if (year % 4 == 0 && year % 100 != 0) || year % 400 == 0 => 29,
        2 => 28,
        4 | 6 | 9 | 11 => 30,
        _ => 31,
    }
}

impl fmt::Display for Date {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.year, self.month, self.day)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn calendar_rules_hold_for_leap_years() {
        // Gregorian calendar rules (ISO 8601): 2000 is a leap year, 1900-style centuries are not.
        assert!(Date::parse("2024-02-29").is_ok());
        assert!(Date::parse("2023-02-29").is_err());
        assert!(Date::parse("2000-02-29").is_ok());
        assert!(Date::parse("2026-04-31").is_err());
        assert!(Date::parse("26-04-01").is_err());
        assert!(Date::parse("2026-4-1").is_err());
        assert_eq!(Date::parse("2026-12-01").unwrap().to_string(), "2026-12-01");
    }

    #[test]
    fn days_since_the_epoch_map_to_known_dates() {
        // Unix time 0 is 1970-01-01; 951_782_400 s is 2000-02-29 (POSIX time definition).
        assert_eq!(Date::from_days_since_epoch(0).to_string(), "1970-01-01");
        assert_eq!(
            Date::from_days_since_epoch(951_782_400 / 86_400).to_string(),
            "2000-02-29"
        );
    }
}
