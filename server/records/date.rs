//! Calendar dates as the shop writes them (ISO 8601, `YYYY-MM-DD`) and the shop's time zone.

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

    /// Refuses a date more than one day after the shop's `today` (one day of slack for a
    /// counter working past midnight or a zone setting that is off by a few hours).
    pub fn not_after(self, today: Date) -> Result<Self, String> {
        let limit = today.next_day();
        if self > limit {
            Err(format!(
                "cannot be later than tomorrow ({limit}); today is {today}"
            ))
        } else {
            Ok(self)
        }
    }

    fn civil(self) -> jiff::civil::Date {
        jiff::civil::date(self.year as i16, self.month as i8, self.day as i8)
    }

    fn from_civil(d: jiff::civil::Date) -> Self {
        Self {
            year: i32::from(d.year()),
            month: d.month() as u32,
            day: d.day() as u32,
        }
    }

    /// The day after.
    pub fn next_day(self) -> Self {
        self.civil().tomorrow().map_or(self, Self::from_civil)
    }

    /// Today's date in the shop's time zone (see [`ShopZone`]).
    pub fn today(zone: &ShopZone) -> Self {
        Self::from_civil(jiff::Timestamp::now().to_zoned(zone.0.clone()).date())
    }
}

/// The shop's time zone: an IANA name from the settings, or the server's own zone when the
/// setting is empty. Dates ("today") and the times in History are read in it.
#[derive(Debug, Clone)]
pub struct ShopZone(jiff::tz::TimeZone);

impl ShopZone {
    /// The zone named `name` (IANA, e.g. "America/Chicago"); empty is the server's zone.
    pub fn parse(name: &str) -> Result<Self, String> {
        if name.trim().is_empty() {
            return Ok(Self::server());
        }
        jiff::tz::TimeZone::get(name.trim())
            .map(Self)
            .map_err(|_| format!("{name:?} is not a time zone name (e.g. America/Chicago)"))
    }

    /// The server's own zone (UTC when it cannot be told).
    pub fn server() -> Self {
        Self(jiff::tz::TimeZone::try_system().unwrap_or(jiff::tz::TimeZone::UTC))
    }

    /// The zone's IANA name ("America/Chicago"), or "UTC" when it has none.
    pub fn name(&self) -> &str {
        self.0.iana_name().unwrap_or("UTC")
    }

    /// The shop's wall-clock time at the moment `t`.
    pub fn civil(&self, t: jiff::Timestamp) -> jiff::civil::DateTime {
        t.to_zoned(self.0.clone()).datetime()
    }

    /// The moment `t` as the shop reads it, to the second (`2026-11-02 04:00:09`).
    pub fn show_time(&self, t: jiff::Timestamp) -> String {
        self.civil(t).strftime("%Y-%m-%d %H:%M:%S").to_string()
    }

    /// The shop's local date of a stored UTC stamp (`2026-07-02T03:30:00Z` → `2026-07-01` six
    /// hours behind UTC); text that is not a stamp is returned as it is.
    pub fn local_date(&self, utc: &str) -> String {
        match utc.parse::<jiff::Timestamp>() {
            Ok(t) => t.to_zoned(self.0.clone()).strftime("%Y-%m-%d").to_string(),
            Err(_) => utc.to_string(),
        }
    }

    /// A stored UTC stamp (`2026-11-02T10:00:00Z`) as the shop's local date and time
    /// (`2026-11-02 04:00`); text that is not a stamp is returned as it is.
    pub fn local_stamp(&self, utc: &str) -> String {
        match utc.parse::<jiff::Timestamp>() {
            Ok(t) => t
                .to_zoned(self.0.clone())
                .strftime("%Y-%m-%d %H:%M")
                .to_string(),
            Err(_) => utc.to_string(),
        }
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
    fn a_date_past_tomorrow_is_refused() {
        let today = Date::parse("2026-12-31").unwrap();
        assert_eq!(
            Date::parse("2027-01-01")
                .unwrap()
                .not_after(today)
                .map(|d| d.to_string()),
            Ok("2027-01-01".into())
        );
        assert!(Date::parse("2027-01-02").unwrap().not_after(today).is_err());
        assert!(Date::parse("2099-06-01").unwrap().not_after(today).is_err());
    }

    #[test]
    fn stored_stamps_read_in_the_shop_zone() {
        // IANA tz database: America/Chicago is UTC-6 in November (CST) and UTC-5 in July (CDT).
        let zone = ShopZone::parse("America/Chicago").unwrap();
        assert_eq!(zone.local_stamp("2026-11-02T10:00:00Z"), "2026-11-02 04:00");
        assert_eq!(zone.local_stamp("2026-07-02T03:30:00Z"), "2026-07-01 22:30");
        assert_eq!(zone.local_date("2026-07-02T03:30:00Z"), "2026-07-01");
        assert!(ShopZone::parse("Mars/Olympus").is_err());
    }
}
