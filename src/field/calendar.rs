//! Calendar dates for schedules: ISO dates (YYYY-MM-DD), day arithmetic, weekdays and the
//! workday set a crew works (`mon-fri`, `mon,wed,fri`, `sun-thu`).
//!
//! Day numbers use the proleptic Gregorian calendar, counted from 1970-01-01, by the
//! days-from-civil algorithm of H. Hinnant, "chrono-Compatible Low-Level Date Algorithms"
//! (public domain).

use std::fmt;

/// A calendar date.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Date {
    pub year: i32,
    pub month: u8,
    pub day: u8,
}

fn is_leap(y: i32) -> bool {
    y % 4 == 0 && (y % 100 != 0 || y % 400 == 0)
}

/// Days in a month of a year.
pub fn month_days(year: i32, month: u8) -> u8 {
    match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if is_leap(year) => 29,
        _ => 28,
    }
}

impl Date {
    pub fn new(year: i32, month: u8, day: u8) -> Option<Date> {
        ((1..=12).contains(&month) && day >= 1 && day <= month_days(year, month)).then_some(Date {
            year,
            month,
            day,
        })
    }

    /// Parse `YYYY-MM-DD` (surrounding spaces allowed); `None` for anything else or a
    /// day that does not exist.
    pub fn parse(text: &str) -> Option<Date> {
        let parts: Vec<&str> = text.trim().split('-').collect();
        if parts.len() != 3 || parts[0].len() != 4 || parts[1].len() != 2 || parts[2].len() != 2 {
            return None;
        }
        Date::new(
            parts[0].parse().ok()?,
            parts[1].parse().ok()?,
            parts[2].parse().ok()?,
        )
    }

    /// Days since 1970-01-01.
    pub fn day_number(self) -> i64 {
        let y = i64::from(self.year) - i64::from(self.month <= 2);
        let era = y.div_euclid(400);
        let yoe = y - era * 400;
        let m = i64::from(self.month);
        let doy = (153 * (if m > 2 { m - 3 } else { m + 9 }) + 2) / 5 + i64::from(self.day) - 1;
        let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
        era * 146_097 + doe - 719_468
    }

    pub fn from_day_number(z: i64) -> Date {
        let z = z + 719_468;
        let era = z.div_euclid(146_097);
        let doe = z - era * 146_097;
        let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
        let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
        let mp = (5 * doy + 2) / 153;
        let day = (doy - (153 * mp + 2) / 5 + 1) as u8;
        let month = if mp < 10 { mp + 3 } else { mp - 9 } as u8;
        let year = (yoe + era * 400 + i64::from(month <= 2)) as i32;
        Date { year, month, day }
    }

    pub fn plus_days(self, days: i64) -> Date {
        Date::from_day_number(self.day_number() + days)
    }

    /// 0 = Monday ... 6 = Sunday (1970-01-01 was a Thursday).
    pub fn weekday(self) -> usize {
        (self.day_number() + 3).rem_euclid(7) as usize
    }

    pub fn weekday_name(self) -> &'static str {
        DAY_NAMES[self.weekday()]
    }
}

impl fmt::Display for Date {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:04}-{:02}-{:02}", self.year, self.month, self.day)
    }
}

const DAY_NAMES: [&str; 7] = ["Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun"];

/// The days of the week a crew works.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Workdays([bool; 7]);

impl Workdays {
    /// Parse `mon-fri`, `mon,wed,fri`, `sun-thu`, `mon-thu,sat` (case-insensitive; ranges wrap
    /// past Sunday).
    pub fn parse(text: &str) -> Option<Workdays> {
        let index = |name: &str| {
            let name = name.trim().to_ascii_lowercase();
            DAY_NAMES
                .iter()
                .position(|d| d.to_ascii_lowercase() == name.get(..3).unwrap_or(&name))
        };
        let mut days = [false; 7];
        for part in text.split(',') {
            match part.split_once('-') {
                Some((a, b)) => {
                    let (a, b) = (index(a)?, index(b)?);
                    let mut k = a;
                    loop {
                        days[k] = true;
                        if k == b {
                            break;
                        }
                        k = (k + 1) % 7;
                    }
                }
                None => days[index(part)?] = true,
            }
        }
        days.iter().any(|d| *d).then_some(Workdays(days))
    }

    pub fn works(&self, date: Date) -> bool {
        self.0[date.weekday()]
    }

    pub fn count(&self) -> usize {
        self.0.iter().filter(|d| **d).count()
    }
}

impl fmt::Display for Workdays {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let names: Vec<&str> = (0..7)
            .filter(|k| self.0[*k])
            .map(|k| DAY_NAMES[k])
            .collect();
        write!(f, "{}", names.join(", "))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn day_numbers_match_known_dates() {
        // 1970-01-01 is day 0; 2000-03-01 is day 11017 (POSIX time 951868800 / 86400).
        assert_eq!(Date::new(1970, 1, 1).unwrap().day_number(), 0);
        assert_eq!(Date::new(2000, 3, 1).unwrap().day_number(), 11_017);
        // 2027-07-01 is a Thursday (from memory, checked with `date -d 2027-07-01 +%a`).
        assert_eq!(Date::new(2027, 7, 1).unwrap().weekday_name(), "Thu");
        for z in -800_000..800_000i64 {
            if z % 997 == 0 {
                assert_eq!(Date::from_day_number(z).day_number(), z);
            }
        }
        assert_eq!(
            Date::new(2028, 2, 28).unwrap().plus_days(1),
            Date::new(2028, 2, 29).unwrap()
        );
        assert_eq!(
            Date::new(2027, 12, 31).unwrap().plus_days(30).to_string(),
            "2028-01-30"
        );
    }

    #[test]
    fn parsing() {
        assert_eq!(Date::parse("2027-08-15"), Date::new(2027, 8, 15));
        assert_eq!(Date::parse("2027-02-29"), None);
        assert!(Date::parse("2028-02-29").is_some());
        assert_eq!(Date::parse("15/08/2027"), None);
        assert_eq!(Date::parse("2027-8-15"), None);
        let w = Workdays::parse("mon-fri").unwrap();
        assert_eq!(w.count(), 5);
        assert_eq!(
            Workdays::parse("sat-mon").unwrap().to_string(),
            "Mon, Sat, Sun"
        );
        assert_eq!(Workdays::parse("Mon,Wed,friday").unwrap().count(), 3);
        assert_eq!(Workdays::parse("funday"), None);
        assert_eq!(Workdays::parse(""), None);
    }
}
