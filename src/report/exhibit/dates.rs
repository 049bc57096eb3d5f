//! The date an exhibit prints: the one given, else the one `SOURCE_DATE_EPOCH` names (the
//! reproducible-builds convention), else none; never the clock.

use super::options::ExhibitError;

/// The last second of 9999-12-31 UTC, the latest date a PDF can record.
const MAX_EPOCH: i64 = 253_402_300_799;

/// The date to print: `flag` if given (must be `YYYY-MM-DD`), else the UTC date of
/// `source_date_epoch` (seconds since 1970, the reproducible-builds convention, from 0 to the
/// end of 9999), else none.
pub fn resolve_date(
    flag: Option<&str>,
    source_date_epoch: Option<&str>,
) -> Result<Option<String>, ExhibitError> {
    if let Some(text) = flag {
        let parts: Vec<&str> = text.split('-').collect();
        let ok = parts.len() == 3
            && parts[0].len() == 4
            && parts[1].len() == 2
            && parts[2].len() == 2
            && parts.iter().all(|p| p.chars().all(|c| c.is_ascii_digit()));
        let (m, d) = (
            parts
                .get(1)
                .and_then(|p| p.parse::<u32>().ok())
                .unwrap_or(0),
            parts
                .get(2)
                .and_then(|p| p.parse::<u32>().ok())
                .unwrap_or(0),
        );
        if !ok || !(1..=12).contains(&m) || !(1..=31).contains(&d) {
            return Err(ExhibitError::BadDate(format!(
                "--date '{text}' is not a date in the form YYYY-MM-DD"
            )));
        }
        return Ok(Some(text.to_string()));
    }
    match source_date_epoch.map(str::trim).filter(|s| !s.is_empty()) {
        None => Ok(None),
        Some(text) => {
            let secs: i64 = text.parse().map_err(|_| {
                ExhibitError::BadDate(format!(
                    "SOURCE_DATE_EPOCH '{text}' is not a whole number of seconds"
                ))
            })?;
            // The reproducible-builds specification of SOURCE_DATE_EPOCH: seconds since
            // 1970-01-01 00:00:00 UTC, an integer as `date +%s` prints it. The PDF date
            // (ISO 32000-1, 7.9.4) has a four-digit year, so the last second it can hold is
            // 9999-12-31 23:59:59 UTC.
            if !(0..=MAX_EPOCH).contains(&secs) {
                return Err(ExhibitError::BadDate(format!(
                    "SOURCE_DATE_EPOCH '{text}' is outside 0 to {MAX_EPOCH} (1970-01-01 to 9999-12-31)"
                )));
            }
            let (y, m, d) = civil_from_days(secs.div_euclid(86_400));
            Ok(Some(format!("{y:04}-{m:02}-{d:02}")))
        }
    }
}

/// Gregorian date of a day count from 1970-01-01 (H. Hinnant's `civil_from_days`).
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates() {
        assert_eq!(
            resolve_date(Some("2025-03-01"), Some("0"))
                .unwrap()
                .as_deref(),
            Some("2025-03-01")
        );
        assert!(resolve_date(Some("2025-3-1"), None).is_err());
        assert!(resolve_date(Some("2025-13-01"), None).is_err());
        assert_eq!(
            resolve_date(None, Some("0")).unwrap().as_deref(),
            Some("1970-01-01")
        );
        // 2024-02-29T12:00:00Z
        assert_eq!(
            resolve_date(None, Some("1709208000")).unwrap().as_deref(),
            Some("2024-02-29")
        );
        assert_eq!(resolve_date(None, None).unwrap(), None);
        assert!(resolve_date(None, Some("yesterday")).is_err());
        // The first second of the year 10000, and before 1970: no four-digit PDF year.
        assert!(resolve_date(None, Some("253402300800")).is_err());
        assert!(resolve_date(None, Some("-1")).is_err());
        assert_eq!(
            resolve_date(None, Some("253402300799")).unwrap().as_deref(),
            Some("9999-12-31")
        );
    }
}
