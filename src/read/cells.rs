//! What a single cell of text means: a number (in the file's decimal
//! convention), a date, a missing marker, a spreadsheet error, or text.

/// The decimal convention of a text file.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Decimal {
    /// `3.5`, with `,` as an optional thousands separator (`1,234.5`).
    Point,
    /// `3,5`, with `.` as an optional thousands separator (`1.234,5`).
    Comma,
}

/// Spreadsheet error values, as spreadsheets print them.
pub const ERROR_MARKERS: [&str; 9] =
    ["#DIV/0!", "#N/A", "#NAME?", "#NULL!", "#NUM!", "#REF!", "#VALUE!", "#GETTING_DATA", "#SPILL!"];

/// True for a spreadsheet error value such as `#DIV/0!`.
pub fn is_error_marker(s: &str) -> bool {
    let t = s.trim();
    ERROR_MARKERS.iter().any(|m| t.eq_ignore_ascii_case(m))
}

/// Digits with one optional decimal mark `dec` and groups of three
/// separated by `group`; returns the plain form `[-]digits[.digits][e..]`.
fn normalise(t: &str, dec: char, group: char) -> Option<String> {
    let (sign, body) = match t.as_bytes().first() {
        Some(b'-') => ("-", &t[1..]),
        Some(b'+') => ("", &t[1..]),
        _ => ("", t),
    };
    // Split off an exponent (only in plain forms without grouping).
    let (mantissa, exp) = match body.find(['e', 'E']) {
        Some(i) => (&body[..i], Some(&body[i + 1..])),
        None => (body, None),
    };
    if let Some(e) = exp {
        let e = e.strip_prefix(['+', '-']).unwrap_or(e);
        if e.is_empty() || !e.bytes().all(|b| b.is_ascii_digit()) {
            return None;
        }
    }
    let (int, frac) = match mantissa.find(dec) {
        Some(i) => (&mantissa[..i], Some(&mantissa[i + dec.len_utf8()..])),
        None => (mantissa, None),
    };
    if let Some(f) = frac {
        if !f.bytes().all(|b| b.is_ascii_digit()) || (f.is_empty() && int.is_empty()) {
            return None;
        }
    }
    let int_plain: String = if int.contains(group) {
        // Grouping must be exact: 1-3 digits, then groups of exactly three.
        if exp.is_some() {
            return None;
        }
        let groups: Vec<&str> = int.split(group).collect();
        let first = groups[0];
        if first.is_empty() || first.len() > 3 || first.starts_with('0') || !first.bytes().all(|b| b.is_ascii_digit()) {
            return None;
        }
        if groups[1..].iter().any(|g| g.len() != 3 || !g.bytes().all(|b| b.is_ascii_digit())) {
            return None;
        }
        groups.concat()
    } else {
        if !int.bytes().all(|b| b.is_ascii_digit()) {
            return None;
        }
        int.to_string()
    };
    if int_plain.is_empty() && frac.is_none_or(|f| f.is_empty()) {
        return None;
    }
    let mut out = format!("{sign}{int_plain}");
    if let Some(f) = frac {
        out.push('.');
        out.push_str(f);
    }
    if let Some(e) = exp {
        out.push('e');
        out.push_str(e);
    }
    Some(out)
}

/// Parses a cell as a number under the decimal convention.
pub fn parse_decimal(s: &str, decimal: Decimal) -> Option<f64> {
    let t = s.trim();
    if t.is_empty() || !t.bytes().any(|b| b.is_ascii_digit()) {
        return None;
    }
    let plain = match decimal {
        Decimal::Point => normalise(t, '.', ','),
        Decimal::Comma => normalise(t, ',', '.'),
    }?;
    plain.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// Votes a cell casts for the decimal convention: `Some(Point)` or
/// `Some(Comma)` when only one reading is possible, `None` when both are
/// (`1,234`, `1.234`, `12`) or neither.
pub fn decimal_vote(s: &str) -> Option<Decimal> {
    let t = s.trim();
    let point = normalise(t, '.', ',').is_some();
    let comma = normalise(t, ',', '.').is_some();
    match (point, comma) {
        (true, false) => Some(Decimal::Point),
        (false, true) => Some(Decimal::Comma),
        (true, true) => {
            // Both parse: they must differ to be ambiguous ("1,234" vs "1.234").
            None
        }
        _ => None,
    }
}

/// Days from 1970-01-01 of a proleptic Gregorian date (Hinnant's
/// days_from_civil algorithm).
pub fn days_from_civil(y: i64, m: u32, d: u32) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = if y >= 0 { y } else { y - 399 } / 400;
    let yoe = y - era * 400;
    let m = m as i64;
    let doy = (153 * (if m > 2 { m - 3 } else { m + 9 }) + 2) / 5 + d as i64 - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

/// The civil date of a day count from 1970-01-01 (Hinnant's civil_from_days).
pub fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = if z >= 0 { z } else { z - 146_096 } / 146_097;
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// A date value (days since 1970-01-01, fractional for the time) as text:
/// `2025-03-14`, or `2025-03-14 08:30` when it has a time.
pub fn format_date(days: f64) -> String {
    let whole = days.floor();
    let (y, m, d) = civil_from_days(whole as i64);
    let minutes = ((days - whole) * 1440.0).round() as i64;
    if minutes == 0 {
        format!("{y:04}-{m:02}-{d:02}")
    } else {
        format!("{y:04}-{m:02}-{d:02} {:02}:{:02}", minutes / 60, minutes % 60)
    }
}

fn valid_date(y: i64, m: u32, d: u32) -> bool {
    if !(1..=12).contains(&m) || d == 0 || !(1000..=9999).contains(&y) {
        return false;
    }
    let leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    let days = [31, if leap { 29 } else { 28 }, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31];
    d <= days[(m - 1) as usize]
}

/// A time of day `HH:MM` or `HH:MM:SS` as a fraction of a day.
fn parse_time(t: &str) -> Option<f64> {
    let parts: Vec<&str> = t.split(':').collect();
    if !(2..=3).contains(&parts.len()) {
        return None;
    }
    let num = |s: &str, max: u32| -> Option<f64> {
        let int = s.split('.').next()?;
        if int.is_empty() || int.len() > 2 || !int.bytes().all(|b| b.is_ascii_digit()) {
            return None;
        }
        let v: f64 = s.parse().ok()?;
        (v < max as f64).then_some(v)
    };
    let h = num(parts[0], 24)?;
    let m = num(parts[1], 60)?;
    let s = if parts.len() == 3 { num(parts[2], 60)? } else { 0.0 };
    Some((h * 3600.0 + m * 60.0 + s) / 86_400.0)
}

/// The order of day and month in a slashed or dotted date.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum DayOrder {
    DayFirst,
    MonthFirst,
}

/// The parts of a date cell before deciding day/month order:
/// (year, first number, second number, fraction of day, is ISO).
fn date_parts(s: &str) -> Option<(i64, u32, u32, f64, bool)> {
    let t = s.trim();
    let (date, time) = match t.find(['T', ' ']) {
        Some(i) => (&t[..i], Some(t[i + 1..].trim())),
        None => (t, None),
    };
    let frac = match time {
        Some(tm) if !tm.is_empty() => parse_time(tm.trim_end_matches('Z'))?,
        _ => 0.0,
    };
    let all_digits = |p: &str| !p.is_empty() && p.bytes().all(|b| b.is_ascii_digit());
    for sep in ['-', '/', '.'] {
        let parts: Vec<&str> = date.split(sep).collect();
        if parts.len() != 3 || !parts.iter().all(|p| all_digits(p)) {
            continue;
        }
        if parts[0].len() == 4 && parts[1].len() <= 2 && parts[2].len() <= 2 {
            return Some((parts[0].parse().ok()?, parts[1].parse().ok()?, parts[2].parse().ok()?, frac, true));
        }
        if sep != '-' && parts[2].len() == 4 && parts[0].len() <= 2 && parts[1].len() <= 2 {
            return Some((parts[2].parse().ok()?, parts[0].parse().ok()?, parts[1].parse().ok()?, frac, false));
        }
    }
    None
}

/// What a date cell says about the day/month order: `Some(order)` when it
/// can only be read one way, `None` when ISO (no question) or ambiguous.
pub fn date_order_vote(s: &str) -> Option<DayOrder> {
    let (_, a, b, _, iso) = date_parts(s)?;
    if iso {
        return None;
    }
    match (a > 12, b > 12) {
        (true, false) => Some(DayOrder::DayFirst),
        (false, true) => Some(DayOrder::MonthFirst),
        _ => None,
    }
}

/// True when the cell looks like a date in some order.
pub fn looks_like_date(s: &str) -> bool {
    date_parts(s).is_some_and(|(y, a, b, _, iso)| {
        if iso {
            valid_date(y, a, b)
        } else {
            valid_date(y, b, a) || valid_date(y, a, b)
        }
    })
}

/// True when the cell is an ISO date (no day/month question).
pub fn is_iso_date(s: &str) -> bool {
    date_parts(s).is_some_and(|(_, _, _, _, iso)| iso)
}

/// Parses a date cell to days since 1970-01-01; `order` applies to
/// non-ISO forms.
pub fn parse_date(s: &str, order: DayOrder) -> Option<f64> {
    let (y, a, b, frac, iso) = date_parts(s)?;
    let (m, d) = if iso || order == DayOrder::MonthFirst { (a, b) } else { (b, a) };
    valid_date(y, m, d).then(|| days_from_civil(y, m, d) as f64 + frac)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn check_number(s: &str, decimal: Decimal, expected: Option<f64>) {
        assert_eq!(parse_decimal(s, decimal), expected, "{s:?} under {decimal:?}");
    }

    #[test]
    fn numbers_under_each_convention() {
        use Decimal::*;
        check_number("3.5", Point, Some(3.5));
        check_number("3,5", Comma, Some(3.5));
        check_number("1.234,5", Comma, Some(1234.5));
        check_number("1,234.5", Point, Some(1234.5));
        check_number("12,345,678", Point, Some(12_345_678.0));
        check_number("-0,25", Comma, Some(-0.25));
        check_number("1e-3", Point, Some(0.001));
        check_number(".5", Point, Some(0.5));
        check_number("5.", Point, Some(5.0));
        check_number("1,23.4", Point, None);
        check_number("01,234", Point, None);
        check_number("3,5", Point, None);
        check_number("inf", Point, None);
        check_number("NaN", Point, None);
        check_number("12 kg", Point, None);
        check_number("1,234", Comma, Some(1.234));
    }

    #[test]
    fn votes_only_for_unambiguous_cells() {
        assert_eq!(decimal_vote("3,5"), Some(Decimal::Comma));
        assert_eq!(decimal_vote("1.234,5"), Some(Decimal::Comma));
        assert_eq!(decimal_vote("3.25"), Some(Decimal::Point));
        assert_eq!(decimal_vote("1,234.5"), Some(Decimal::Point));
        assert_eq!(decimal_vote("1,234"), None);
        assert_eq!(decimal_vote("1.234"), None);
        assert_eq!(decimal_vote("12"), None);
    }

    #[test]
    fn dates_round_trip_through_day_counts() {
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(2000, 3, 1), 11_017);
        for z in [-800_000i64, -1, 0, 59, 11_017, 20_000, 2_932_896] {
            let (y, m, d) = civil_from_days(z);
            assert_eq!(days_from_civil(y, m, d), z);
        }
        assert_eq!(parse_date("2024-02-29", DayOrder::DayFirst), Some(days_from_civil(2024, 2, 29) as f64));
        assert_eq!(parse_date("2023-02-29", DayOrder::DayFirst), None);
        assert_eq!(parse_date("14.03.2025", DayOrder::DayFirst), Some(days_from_civil(2025, 3, 14) as f64));
        assert_eq!(parse_date("03/14/2025", DayOrder::MonthFirst), Some(days_from_civil(2025, 3, 14) as f64));
        assert_eq!(parse_date("2025-03-14 12:00", DayOrder::DayFirst), Some(days_from_civil(2025, 3, 14) as f64 + 0.5));
        assert_eq!(format_date(days_from_civil(2025, 3, 14) as f64 + 0.5), "2025-03-14 12:00");
        assert_eq!(date_order_vote("14/03/2025"), Some(DayOrder::DayFirst));
        assert_eq!(date_order_vote("03/04/2025"), None);
        assert!(!looks_like_date("2025"));
        assert!(!looks_like_date("1.5.3"));
    }
}
