//! RFC 3339 timestamps without a date library: parsed, normalised to UTC with
//! milliseconds (`2026-11-16T09:14:03.000Z`) so that text order is time order.

use std::time::{SystemTime, UNIX_EPOCH};

/// Days since 1970-01-01 of a proleptic Gregorian date (Hinnant's `days_from_civil`).
fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

fn civil_from_days(z: i64) -> (i64, i64, i64) {
    let z = z + 719_468;
    let era = if z >= 0 { z } else { z - 146_096 } / 146_097;
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    (yoe + era * 400 + i64::from(m <= 2), m, d)
}

/// Formats milliseconds since the epoch as `YYYY-MM-DDTHH:MM:SS.mmmZ`.
pub fn format_millis(ms: i64) -> String {
    let secs = ms.div_euclid(1000);
    let millis = ms.rem_euclid(1000);
    let (y, m, d) = civil_from_days(secs.div_euclid(86_400));
    let s = secs.rem_euclid(86_400);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}.{millis:03}Z",
        s / 3600,
        s / 60 % 60,
        s % 60
    )
}

/// The current time in the study's normalised form.
pub fn now() -> String {
    let ms = SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map_or(0, |d| d.as_millis() as i64);
    format_millis(ms)
}

/// Parses an RFC 3339 timestamp (`T` or space separator, `Z` or ±hh:mm offset,
/// optional fraction) into milliseconds since the epoch.
pub fn parse_rfc3339(text: &str) -> Option<i64> {
    let b = text.as_bytes();
    if b.len() < 20 {
        return None;
    }
    let num = |range: std::ops::Range<usize>| -> Option<i64> {
        let s = text.get(range)?;
        if !s.bytes().all(|c| c.is_ascii_digit()) {
            return None;
        }
        s.parse().ok()
    };
    let (y, mo, d) = (num(0..4)?, num(5..7)?, num(8..10)?);
    let (h, mi, s) = (num(11..13)?, num(14..16)?, num(17..19)?);
    if b[4] != b'-'
        || b[7] != b'-'
        || !matches!(b[10], b'T' | b't' | b' ')
        || b[13] != b':'
        || b[16] != b':'
    {
        return None;
    }
    if !(1..=12).contains(&mo) || !(1..=31).contains(&d) || h > 23 || mi > 59 || s > 60 {
        return None;
    }
    let mut pos = 19;
    let mut millis = 0i64;
    if b.get(pos) == Some(&b'.') {
        pos += 1;
        let start = pos;
        while pos < b.len() && b[pos].is_ascii_digit() {
            pos += 1;
        }
        if pos == start {
            return None;
        }
        let digits = &text[start..pos.min(start + 3)];
        millis = digits.parse::<i64>().ok()? * 10i64.pow(3 - digits.len() as u32);
    }
    let offset_minutes = match &text[pos..] {
        "Z" | "z" => 0,
        rest if rest.len() == 6 && (rest.starts_with('+') || rest.starts_with('-')) => {
            let sign = if rest.starts_with('-') { -1 } else { 1 };
            let oh = num(pos + 1..pos + 3)?;
            let om = num(pos + 4..pos + 6)?;
            if &rest[3..4] != ":" {
                return None;
            }
            sign * (oh * 60 + om)
        }
        _ => return None,
    };
    let days = days_from_civil(y, mo, d);
    let secs = days * 86_400 + h * 3600 + mi * 60 + s - offset_minutes * 60;
    Some(secs * 1000 + millis)
}

/// Parses and normalises; None when the text is not RFC 3339.
pub fn normalise(text: &str) -> Option<String> {
    parse_rfc3339(text).map(format_millis)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trips_and_offsets() {
        assert_eq!(
            normalise("2026-11-16T09:14:03Z").unwrap(),
            "2026-11-16T09:14:03.000Z"
        );
        assert_eq!(
            normalise("2026-11-16T10:14:03.5+01:00").unwrap(),
            "2026-11-16T09:14:03.500Z"
        );
        assert_eq!(
            normalise("1970-01-01T00:00:00Z").unwrap(),
            "1970-01-01T00:00:00.000Z"
        );
        assert!(normalise("2026-13-01T00:00:00Z").is_none());
        assert!(normalise("yesterday").is_none());
    }
}
