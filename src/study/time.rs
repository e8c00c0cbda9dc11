//! RFC 3339 timestamps, parsed and checked by `jiff` and normalised to UTC with
//! milliseconds (`2026-11-16T09:14:03.000Z`) so that text order is time order.

use std::sync::atomic::{AtomicI64, Ordering};

/// The normalised form: four-digit UTC year, milliseconds, `Z`.
const FORMAT: &str = "%Y-%m-%dT%H:%M:%S%.3fZ";

/// Formats milliseconds since the epoch as `YYYY-MM-DDTHH:MM:SS.mmmZ`.
pub fn format_millis(ms: i64) -> String {
    match jiff::Timestamp::from_millisecond(ms) {
        // The common case written directly: `strftime` reads its format on every call,
        // which costs more than the rest of an imported grade row.
        Ok(t) => {
            let d = jiff::tz::Offset::UTC.to_datetime(t);
            if (0..=9999).contains(&d.year()) {
                format!(
                    "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}.{:03}Z",
                    d.year(),
                    d.month(),
                    d.day(),
                    d.hour(),
                    d.minute(),
                    d.second(),
                    d.subsec_nanosecond() / 1_000_000
                )
            } else {
                t.strftime(FORMAT).to_string()
            }
        }
        // Out of jiff's range: only reachable through a corrupt clock; keep sorting sane.
        Err(_) => if ms < 0 {
            "0000-01-01T00:00:00.000Z"
        } else {
            "9999-12-31T23:59:59.999Z"
        }
        .into(),
    }
}

/// The last time `now` handed out, so that one process never gives two events the same
/// time (a grade, its undo and a new grade within one millisecond stay in order).
static LAST_NOW: AtomicI64 = AtomicI64::new(i64::MIN);

/// The current time in the study's normalised form, strictly later than the previous
/// call's in this process.
pub fn now() -> String {
    let clock = jiff::Timestamp::now().as_millisecond();
    let mut last = LAST_NOW.load(Ordering::Relaxed);
    loop {
        let next = clock.max(last.saturating_add(1));
        match LAST_NOW.compare_exchange_weak(last, next, Ordering::Relaxed, Ordering::Relaxed) {
            Ok(_) => return format_millis(next),
            Err(seen) => last = seen,
        }
    }
}

/// How far past this machine's clock an incoming time may lie (clocks of other machines
/// drift, and offsets are easy to get wrong by hours, but never by more than a day).
pub const FUTURE_ALLOWANCE_MS: i64 = 86_400_000;

/// Parses an RFC 3339 timestamp (`T` or space separator, `Z` or ±hh:mm offset, optional
/// fraction) into milliseconds since the epoch; the error says what is wrong.
///
/// Refused: impossible dates (`2026-02-30`), offsets outside ±23:59 (RFC 3339's
/// `time-numoffset`), and times that fall outside the years 0001–9999 once converted to
/// UTC (they could not be written in the four-digit normalised form, and would sort
/// wrongly), leap seconds (`:60` sorts before the next second's `:00` of the next minute
/// only by luck), and times more than [`FUTURE_ALLOWANCE_MS`] after this machine's clock.
pub fn parse_checked(text: &str) -> Result<i64, String> {
    let b = text.as_bytes();
    let shape_ok = b.len() >= 20
        && b[..4].iter().all(u8::is_ascii_digit)
        && b[4] == b'-'
        && b[7] == b'-'
        && matches!(b[10], b'T' | b't' | b' ')
        && b[13] == b':'
        && b[16] == b':';
    if !shape_ok {
        return Err("it is not in the form YYYY-MM-DDTHH:MM:SS with an offset".into());
    }
    if &b[17..19] == b"60" {
        return Err(
            "it names a leap second (:60), which cannot be ordered against the next second; write :59.999"
                .into(),
        );
    }
    let offset = offset_part(text).ok_or("it has no offset (end it with Z or ±hh:mm)")?;
    if offset != "Z" && offset != "z" {
        let ob = offset.as_bytes();
        let well_formed = ob.len() == 6
            && matches!(ob[0], b'+' | b'-')
            && ob[1..3].iter().all(u8::is_ascii_digit)
            && ob[3] == b':'
            && ob[4..6].iter().all(u8::is_ascii_digit);
        if !well_formed {
            return Err(format!("the offset \"{offset}\" must be Z or ±hh:mm"));
        }
        let hours: u32 = offset[1..3].parse().unwrap_or(99);
        let minutes: u32 = offset[4..6].parse().unwrap_or(99);
        if hours > 23 || minutes > 59 {
            return Err(format!(
                "the offset \"{offset}\" is outside -23:59 to +23:59"
            ));
        }
    }
    let local = &text[..text.len() - offset.len()];
    let civil: jiff::civil::DateTime = local
        .replacen([' ', 't'], "T", 1)
        .parse()
        .map_err(|e: jiff::Error| format!("it is not a valid date and time ({e})"))?;
    let offset_minutes: i64 = if offset.len() == 6 {
        let sign = if offset.starts_with('-') { -1 } else { 1 };
        sign * (offset[1..3].parse::<i64>().unwrap_or(0) * 60
            + offset[4..6].parse::<i64>().unwrap_or(0))
    } else {
        0
    };
    let out_of_range = || "in UTC it falls outside the years 0001 to 9999".to_string();
    let as_if_utc = civil
        .to_zoned(jiff::tz::TimeZone::UTC)
        .map_err(|_| out_of_range())?
        .timestamp()
        .as_millisecond();
    let ms = as_if_utc - offset_minutes * 60_000;
    let utc = jiff::Timestamp::from_millisecond(ms).map_err(|_| out_of_range())?;
    if utc.to_zoned(jiff::tz::TimeZone::UTC).year() < 1 {
        return Err(out_of_range());
    }
    let latest = jiff::Timestamp::now().as_millisecond() + FUTURE_ALLOWANCE_MS;
    if ms > latest {
        return Err(format!(
            "it lies more than a day after this machine's clock (now {}); a grade from the future would win every \"latest grade\"",
            format_millis(latest - FUTURE_ALLOWANCE_MS)
        ));
    }
    Ok(ms)
}

/// The offset at the end of an RFC 3339 time: `Z`, or the sign and what follows it.
fn offset_part(text: &str) -> Option<&str> {
    let tail = text.get(19..)?;
    if let Some(z) = tail.strip_suffix(['Z', 'z']) {
        return z
            .bytes()
            .all(|c| c == b'.' || c.is_ascii_digit())
            .then(|| &tail[tail.len() - 1..]);
    }
    let sign = tail.find(['+', '-'])?;
    Some(&tail[sign..])
}

/// Parses an RFC 3339 timestamp into milliseconds since the epoch.
pub fn parse_rfc3339(text: &str) -> Option<i64> {
    parse_checked(text).ok()
}

/// Parses and normalises, saying why a text is refused.
pub fn normalise_checked(text: &str) -> Result<String, String> {
    parse_checked(text).map(format_millis)
}

/// Parses and normalises; None when the text is not RFC 3339.
pub fn normalise(text: &str) -> Option<String> {
    parse_rfc3339(text).map(format_millis)
}

/// A stored time as a reader reads it, in `zone`: "16 Nov 2026, 10:14". A text that is
/// not RFC 3339 is shown as it is.
pub fn readable_in(text: &str, zone: &jiff::tz::TimeZone) -> String {
    match parse_rfc3339(text).and_then(|ms| jiff::Timestamp::from_millisecond(ms).ok()) {
        Some(t) => t
            .to_zoned(zone.clone())
            .strftime("%-d %b %Y, %H:%M")
            .to_string(),
        None => text.to_string(),
    }
}

/// A stored time in the machine's own time zone (UTC where none is set).
pub fn readable_local(text: &str) -> String {
    readable_in(text, &jiff::tz::TimeZone::system())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stored_times_read_in_the_readers_zone() {
        // 09:14 UTC is 10:14 one hour east and 04:14 five hours west (arithmetic).
        let east = jiff::tz::TimeZone::fixed(jiff::tz::offset(1));
        let west = jiff::tz::TimeZone::fixed(jiff::tz::offset(-5));
        let t = "2026-11-16T09:14:03.000Z";
        assert_eq!(readable_in(t, &east), "16 Nov 2026, 10:14");
        assert_eq!(readable_in(t, &west), "16 Nov 2026, 04:14");
        assert_eq!(readable_in("not a time", &east), "not a time");
    }

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
            normalise("2026-11-16 10:14:03-00:30").unwrap(),
            "2026-11-16T10:44:03.000Z"
        );
        assert_eq!(
            normalise("1970-01-01T00:00:00Z").unwrap(),
            "1970-01-01T00:00:00.000Z"
        );
        assert!(normalise("2026-13-01T00:00:00Z").is_none());
        assert!(normalise("yesterday").is_none());
    }

    /// RFC 3339 section 5.6: full-date, partial-time and time-numoffset bounds.
    #[test]
    fn impossible_times_are_refused() {
        assert!(normalise("2026-02-30T00:00:00Z").is_none());
        assert!(normalise("2026-02-28T00:00:00+99:99").is_none());
        assert!(normalise("2026-02-28T00:00:00+24:00").is_none());
        assert!(normalise("2026-02-28T00:00:00").is_none());
        let late = normalise_checked("9999-12-31T23:59:59-23:59").unwrap_err();
        assert!(late.contains("0001 to 9999"), "{late}");
        assert!(normalise("2024-02-29T12:00:00Z").is_some(), "a leap day");
    }

    /// A time far in the future would win every "latest grade" forever; a leap second
    /// (RFC 3339 section 5.7 allows :60) cannot be ordered against the next second.
    #[test]
    fn future_times_and_leap_seconds_are_refused() {
        let far = normalise_checked("9999-01-01T00:00:00Z").unwrap_err();
        assert!(far.contains("more than a day after"), "{far}");
        let leap = normalise_checked("2016-12-31T23:59:60Z").unwrap_err();
        assert!(leap.contains("leap second"), "{leap}");
        let tomorrow = jiff::Timestamp::now().as_millisecond() + 12 * 3_600_000;
        assert!(
            normalise(&format_millis(tomorrow)).is_some(),
            "half a day ahead is a clock's drift"
        );
    }

    /// Unix time 1 700 000 000 is 2023-11-14 22:13:20 UTC (from memory; it is also
    /// 19 675 days and 80 000 seconds after the epoch, 19 675 days being 2023-11-14).
    #[test]
    fn milliseconds_are_written_in_the_normalised_form() {
        assert_eq!(format_millis(1_700_000_000_123), "2023-11-14T22:13:20.123Z");
        assert_eq!(format_millis(-1), "1969-12-31T23:59:59.999Z");
        assert_eq!(format_millis(0), "1970-01-01T00:00:00.000Z");
    }

    #[test]
    fn now_never_repeats() {
        let a = now();
        let b = now();
        assert!(b > a, "{a} then {b}");
    }
}
