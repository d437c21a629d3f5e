//! Date arithmetic, in one place: civil dates to and from day counts
//! (proleptic Gregorian, Hinnant's algorithms), Unix time to the civil date
//! and time, the 1900 and 1904 date systems' serials, and ISO 8601 dates,
//! times and durations as serials. Used by `read` (serials of ISO text) and
//! by `pipeline` and `write` (the run's time).

use super::DateKind;

/// Days between the 1900 and 1904 date systems' day zero (1462 days: four
/// years and a day). Source: ECMA-376 Part 1, §18.17.4.1 (date systems).
pub(crate) const DAYS_1904_TO_1900: f64 = 1462.0;

/// Days from 1970-01-01 to the civil date (proleptic Gregorian).
/// Source: H. Hinnant, "chrono-Compatible Low-Level Date Algorithms",
/// `days_from_civil` (from memory).
fn days_from_civil(y: i64, m: u32, d: u32) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = y - era * 400;
    let mp = (i64::from(m) + 9) % 12;
    let doy = (153 * mp + 2) / 5 + i64::from(d) - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// The civil date `days` days after 1970-01-01 (proleptic Gregorian), the
/// inverse of [`days_from_civil`]. Source: H. Hinnant, "chrono-Compatible
/// Low-Level Date Algorithms", `civil_from_days` (2013).
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// Unix seconds (UTC) to the civil date and time (year, month, day, hour,
/// minute, second), by `civil_from_days`.
pub fn civil_from_unix(unix: i64) -> (i64, u32, u32, u32, u32, u32) {
    let (y, m, d) = civil_from_days(unix.div_euclid(86_400));
    let secs = unix.rem_euclid(86_400) as u32;
    (y, m, d, secs / 3600, secs / 60 % 60, secs % 60)
}

/// Days in month `m` of year `y`, Gregorian leap years.
fn days_in_month(y: i64, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ if (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 => 29,
        _ => 28,
    }
}

/// The 1900-system serial of a civil date, `None` before 1900-01-01.
///
/// Serial 1 is 1900-01-01; the system counts a 29 February 1900 that never
/// was (serial 60), so dates from 1900-03-01 on are days since 1899-12-30
/// and earlier ones one less. Source: ECMA-376 Part 1, §18.17.4.1.
fn serial_of_date(y: i64, m: u32, d: u32) -> Option<f64> {
    let days = days_from_civil(y, m, d) - days_from_civil(1899, 12, 30);
    let serial = if days < 61 { days - 1 } else { days };
    (serial >= 1).then_some(serial as f64)
}

/// Splits `n` ASCII digits off the front of `s`.
fn take_digits(s: &str, n: usize) -> Option<(u32, &str)> {
    let head = s.get(..n)?;
    if !head.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    Some((head.parse().ok()?, &s[n..]))
}

/// `HH:MM[:SS[.fff]]` as a fraction of a day.
fn parse_clock(s: &str) -> Option<f64> {
    let (h, rest) = take_digits(s, 2)?;
    let rest = rest.strip_prefix(':')?;
    let (m, rest) = take_digits(rest, 2)?;
    let secs = if rest.is_empty() {
        0.0
    } else {
        let rest = rest.strip_prefix(':')?;
        let (whole, frac) = take_digits(rest, 2)?;
        let frac_value = if frac.is_empty() {
            0.0
        } else {
            let digits = frac.strip_prefix('.')?;
            if digits.is_empty() || !digits.bytes().all(|b| b.is_ascii_digit()) {
                return None;
            }
            format!("0.{digits}").parse::<f64>().ok()?
        };
        f64::from(whole) + frac_value
    };
    if h > 24 || m > 59 || secs >= 61.0 || (h == 24 && (m > 0 || secs > 0.0)) {
        return None;
    }
    Some((f64::from(h) * 3600.0 + f64::from(m) * 60.0 + secs) / 86_400.0)
}

/// `YYYY-MM-DD[THH:MM[:SS[.fff]]][Z]` or a bare `HH:MM[:SS[.fff]]` as a
/// 1900-system serial and its kind: a date alone is a `Date`, a date with a
/// time part a `DateTime`, a time alone a `Time`. Offsets other than `Z`
/// are refused (the workbook formats keep no time zone).
pub(crate) fn parse_iso_datetime(s: &str) -> Option<(f64, DateKind)> {
    let s = s.trim();
    let s = s.strip_suffix('Z').unwrap_or(s);
    if s.len() >= 3 && s.as_bytes()[2] == b':' {
        return parse_clock(s).map(|t| (t, DateKind::Time));
    }
    let (y, rest) = take_digits(s, 4)?;
    let rest = rest.strip_prefix('-')?;
    let (m, rest) = take_digits(rest, 2)?;
    let rest = rest.strip_prefix('-')?;
    let (d, rest) = take_digits(rest, 2)?;
    let y = i64::from(y);
    if !(1..=12).contains(&m) || d == 0 || d > days_in_month(y, m) {
        return None;
    }
    let day = serial_of_date(y, m, d)?;
    if rest.is_empty() {
        return Some((day, DateKind::Date));
    }
    let time = parse_clock(rest.strip_prefix('T')?)?;
    Some((day + time, DateKind::DateTime))
}

/// `[-]P[nD][T[nH][nM][n[.f]S]]` as a number of days. Years, months and
/// weeks are refused: their length in days is not fixed.
pub(crate) fn parse_iso_duration(s: &str) -> Option<f64> {
    let s = s.trim();
    let (sign, s) = match s.strip_prefix('-') {
        Some(rest) => (-1.0, rest),
        None => (1.0, s),
    };
    let mut rest = s.strip_prefix('P')?;
    let mut days = 0.0;
    let mut in_time = false;
    let mut seen = false;
    let mut last_unit = 0u8; // order: D=1, H=2, M=3, S=4
    while !rest.is_empty() {
        if let Some(r) = rest.strip_prefix('T') {
            if in_time {
                return None;
            }
            in_time = true;
            rest = r;
            continue;
        }
        let len = rest.bytes().take_while(|b| b.is_ascii_digit() || *b == b'.').count();
        if len == 0 {
            return None;
        }
        let n: f64 = rest[..len].parse().ok()?;
        let unit = *rest.as_bytes().get(len)?;
        let (order, scale) = match (unit, in_time) {
            (b'D', false) => (1, 1.0),
            (b'H', true) => (2, 1.0 / 24.0),
            (b'M', true) => (3, 1.0 / 1440.0),
            (b'S', true) => (4, 1.0 / 86_400.0),
            _ => return None,
        };
        if order <= last_unit {
            return None;
        }
        last_unit = order;
        days += n * scale;
        seen = true;
        rest = &rest[len + 1..];
    }
    seen.then_some(sign * days)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_dates_and_day_counts_agree() {
        // 1970-01-01 is day 0 and 2000-03-01 day 11017 (common knowledge,
        // POSIX time: 951868800 s / 86400); every day from 1600 to 2400 goes
        // there and back.
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 3, 1), 11_017);
        assert_eq!(civil_from_days(11_017), (2000, 3, 1));
        for z in days_from_civil(1600, 1, 1)..days_from_civil(2400, 1, 1) {
            let (y, m, d) = civil_from_days(z);
            assert!(d >= 1 && d <= days_in_month(y, m), "{y}-{m}-{d}");
            assert_eq!(days_from_civil(y, m, d), z);
        }
    }

    #[test]
    fn serials_of_known_dates() {
        // Serials from memory / common practice (the 1900 date system):
        // 1900-01-01 = 1, 1900-02-28 = 59, 1900-03-01 = 61, 2025-01-01 = 45658.
        assert_eq!(serial_of_date(1900, 1, 1), Some(1.0));
        assert_eq!(serial_of_date(1900, 2, 28), Some(59.0));
        assert_eq!(serial_of_date(1900, 3, 1), Some(61.0));
        assert_eq!(serial_of_date(2025, 1, 1), Some(45658.0));
        assert_eq!(serial_of_date(2026, 1, 5), Some(46027.0));
        assert_eq!(serial_of_date(1899, 12, 31), None);
    }

    #[test]
    fn iso_dates_and_times() {
        assert_eq!(parse_iso_datetime("2026-01-05"), Some((46027.0, DateKind::Date)));
        assert_eq!(parse_iso_datetime("2026-01-05T12:00:00"), Some((46027.5, DateKind::DateTime)));
        assert_eq!(parse_iso_datetime("2026-01-05T06:00"), Some((46027.25, DateKind::DateTime)));
        assert_eq!(parse_iso_datetime("2026-01-05T00:00:00.5Z"), Some((46027.0 + 0.5 / 86_400.0, DateKind::DateTime)));
        assert_eq!(parse_iso_datetime("18:00:00"), Some((0.75, DateKind::Time)));
        for bad in ["2026-02-29", "2026-13-01", "2026-1-5", "1850-06-01", "2026-01-05T25:00:00", "2026-01-05+01:00", "", "soon"] {
            assert_eq!(parse_iso_datetime(bad), None, "{bad}");
        }
        assert_eq!(parse_iso_datetime("2024-02-29"), Some((45351.0, DateKind::Date)));
    }

    #[test]
    fn iso_durations() {
        assert_eq!(parse_iso_duration("PT12H00M00S"), Some(0.5));
        assert_eq!(parse_iso_duration("PT36H"), Some(1.5));
        assert_eq!(parse_iso_duration("P1DT6H"), Some(1.25));
        assert_eq!(parse_iso_duration("-PT6H"), Some(-0.25));
        assert_eq!(parse_iso_duration("PT0.5S"), Some(0.5 / 86_400.0));
        for bad in ["P", "PT", "P1Y", "P2W", "PT1M1H", "12:00", "PT1H1H", "PT1D", "P1H"] {
            assert_eq!(parse_iso_duration(bad), None, "{bad}");
        }
        assert_eq!(parse_iso_duration("P1DT"), Some(1.0));
    }
}
