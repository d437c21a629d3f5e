//! Converting calamine's cell values to ours: numbers, text, booleans and
//! errors as they are; date-formatted numbers, ISO 8601 dates and durations
//! as 1900-system serials with their [`DateKind`] (the arithmetic is in
//! `cells::dates`).

use calamine::{CellErrorType, Data, DataRef, ExcelDateTime};

use crate::cells::dates::{parse_iso_datetime, parse_iso_duration, DAYS_1904_TO_1900};
use crate::cells::{DateKind, ErrorValue, Value};

/// A cell of calamine's streaming readers (xlsx, xlsb) as ours.
pub(super) fn value_of_ref<'a>(d: &'a DataRef<'_>, is_1904: bool) -> Value<'a> {
    match d {
        DataRef::Int(i) => Value::Number(*i as f64),
        DataRef::Float(x) => Value::Number(*x),
        DataRef::String(s) => Value::Text(s),
        DataRef::SharedString(s) => Value::Text(s),
        DataRef::Bool(b) => Value::Bool(*b),
        DataRef::DateTime(dt) => datetime_value(dt, is_1904),
        DataRef::DateTimeIso(s) => iso_datetime_value(s),
        DataRef::DurationIso(s) => iso_duration_value(s),
        DataRef::Error(e) => Value::Error(error_value(e)),
        DataRef::Empty => Value::Empty,
    }
}

/// A cell of calamine's dense ranges (xls, ods) as ours.
pub(super) fn value_of_data(d: &Data, is_1904: bool) -> Value<'_> {
    match d {
        Data::Int(i) => Value::Number(*i as f64),
        Data::Float(x) => Value::Number(*x),
        Data::String(s) => Value::Text(s),
        Data::Bool(b) => Value::Bool(*b),
        Data::DateTime(dt) => datetime_value(dt, is_1904),
        Data::DateTimeIso(s) => iso_datetime_value(s),
        Data::DurationIso(s) => iso_duration_value(s),
        Data::Error(e) => Value::Error(error_value(e)),
        Data::Empty => Value::Empty,
    }
}

fn error_value(e: &CellErrorType) -> ErrorValue {
    match e {
        CellErrorType::Div0 => ErrorValue::Div0,
        CellErrorType::NA => ErrorValue::NotAvailable,
        CellErrorType::Name => ErrorValue::Name,
        CellErrorType::Null => ErrorValue::Null,
        CellErrorType::Num => ErrorValue::Num,
        CellErrorType::Ref => ErrorValue::Ref,
        CellErrorType::Value => ErrorValue::Value,
        CellErrorType::GettingData => ErrorValue::GettingData,
    }
}


/// A number that carries a date or time format, as a 1900-system serial.
///
/// calamine tells only "date/time format" from "duration format" (such as
/// `[h]:mm:ss`); the kind is then chosen from the number: a duration, or a
/// serial in [0, 1) (a bare time of day), is [`DateKind::Time`] and keeps its
/// value as is (no date system applies to it); a whole serial is a
/// [`DateKind::Date`]; anything else a [`DateKind::DateTime`]. Serials of a
/// 1904-system workbook are moved to the 1900 system.
fn datetime_value(dt: &ExcelDateTime, is_1904: bool) -> Value<'static> {
    let raw = dt.as_f64();
    if dt.is_duration() || (0.0..1.0).contains(&raw) {
        return Value::DateTime(raw, DateKind::Time);
    }
    let serial = if is_1904 { raw + DAYS_1904_TO_1900 } else { raw };
    let kind = if serial.fract() == 0.0 { DateKind::Date } else { DateKind::DateTime };
    Value::DateTime(serial, kind)
}

/// An ISO 8601 date or date-time (ods `office:date-value`, xlsx `t="d"`) as
/// a 1900-system serial; text it cannot place stays text.
fn iso_datetime_value(s: &str) -> Value<'_> {
    match parse_iso_datetime(s) {
        Some((serial, kind)) => Value::DateTime(serial, kind),
        None => Value::Text(s),
    }
}

/// An ISO 8601 duration (ods `office:time-value`) as a serial day count of
/// kind [`DateKind::Time`]; text it cannot read stays text.
fn iso_duration_value(s: &str) -> Value<'_> {
    match parse_iso_duration(s) {
        Some(days) => Value::DateTime(days, DateKind::Time),
        None => Value::Text(s),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn date_kinds_from_serials() {
        use calamine::ExcelDateTimeType::{DateTime, TimeDelta};
        let v = |x, t, e| datetime_value(&ExcelDateTime::new(x, t, e), e);
        assert_eq!(v(46027.0, DateTime, false), Value::DateTime(46027.0, DateKind::Date));
        assert_eq!(v(46027.25, DateTime, false), Value::DateTime(46027.25, DateKind::DateTime));
        assert_eq!(v(0.25, DateTime, false), Value::DateTime(0.25, DateKind::Time));
        assert_eq!(v(1.5, TimeDelta, false), Value::DateTime(1.5, DateKind::Time));
        // 1904 system: serial 0 is 1904-01-01, which is 1462 in the 1900 system.
        assert_eq!(v(44565.0, DateTime, true), Value::DateTime(46027.0, DateKind::Date));
        assert_eq!(v(0.25, DateTime, true), Value::DateTime(0.25, DateKind::Time));
    }
}
