//! Time stamps: ISO 8601 UTC text to the millisecond, and back to milliseconds since 1970.

use std::time::{SystemTime, UNIX_EPOCH};

/// Milliseconds since 1970-01-01 UTC now.
pub fn now_ms() -> i64 {
    SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map_or(0, |d| i64::try_from(d.as_millis()).unwrap_or(0))
}

/// The time now as ISO 8601 UTC to the millisecond ("2025-03-04T05:06:07.089Z").
pub fn now_utc() -> String {
    iso_ms(now_ms())
}

/// Milliseconds since 1970-01-01 UTC as ISO 8601 ("…T05:06:07.089Z").
pub fn iso_ms(ms: i64) -> String {
    let secs = ms.div_euclid(1000);
    let frac = ms.rem_euclid(1000);
    let (y, m, d) = civil(secs.div_euclid(86_400));
    let rem = secs.rem_euclid(86_400);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}.{frac:03}Z",
        rem / 3600,
        rem % 3600 / 60,
        rem % 60
    )
}

/// Civil date from days since the epoch (proleptic Gregorian calendar; H. Hinnant's
/// `civil_from_days`, from memory).
fn civil(days: i64) -> (i64, i64, i64) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    (yoe + era * 400 + i64::from(m <= 2), m, d)
}

/// Days since the epoch of a civil date (the inverse of [`civil`]).
fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y.rem_euclid(400);
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// Read `YYYY-MM-DD`, `YYYY-MM-DDTHH:MM:SSZ` or `YYYY-MM-DDTHH:MM:SS.fffZ` (UTC) as
/// milliseconds since 1970; `None` for anything else.
pub fn parse_ms(s: &str) -> Option<i64> {
    let b = s.as_bytes();
    let num = |from: usize, len: usize| -> Option<i64> {
        let t = s.get(from..from + len)?;
        if !t.bytes().all(|c| c.is_ascii_digit()) {
            return None;
        }
        t.parse().ok()
    };
    let (y, m, d) = (num(0, 4)?, num(5, 2)?, num(8, 2)?);
    if b.get(4) != Some(&b'-') || b.get(7) != Some(&b'-') || !(1..=12).contains(&m) {
        return None;
    }
    let dim = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];
    let leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    let max_d = dim.get(usize::try_from(m - 1).ok()?).copied()? + i64::from(leap && m == 2);
    if !(1..=max_d).contains(&d) {
        return None;
    }
    let day_ms = days_from_civil(y, m, d) * 86_400_000;
    if b.len() == 10 {
        return Some(day_ms);
    }
    if b.get(10) != Some(&b'T') || b.get(13) != Some(&b':') || b.get(16) != Some(&b':') {
        return None;
    }
    let (hh, mm, ss) = (num(11, 2)?, num(14, 2)?, num(17, 2)?);
    if hh > 23 || mm > 59 || ss > 60 {
        return None;
    }
    let frac = match &s[19..] {
        "Z" => 0,
        t if t.len() == 5 && t.starts_with('.') && t.ends_with('Z') => num(20, 3)?,
        _ => return None,
    };
    Some(day_ms + ((hh * 60 + mm) * 60 + ss) * 1000 + frac)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_are_iso_utc_and_read_back() {
        // 2000-03-01 is day 11017 after the epoch (leap-year rule of the Gregorian calendar).
        assert_eq!(iso_ms(0), "1970-01-01T00:00:00.000Z");
        let ms = (11_017 * 86_400 + 3_723) * 1000 + 45;
        assert_eq!(iso_ms(ms), "2000-03-01T01:02:03.045Z");
        assert_eq!(parse_ms("2000-03-01T01:02:03.045Z"), Some(ms));
        assert_eq!(parse_ms("2000-03-01T01:02:03Z"), Some(ms - 45));
        assert_eq!(parse_ms("2000-03-01"), Some(11_017 * 86_400_000));
        for bad in [
            "2000-02-30",
            "2001-02-29",
            "2000-13-01",
            "2000-03-01T24:00:00Z",
            "x",
            "",
        ] {
            assert_eq!(parse_ms(bad), None, "{bad}");
        }
        assert!(parse_ms("2000-02-29").is_some());
    }
}
