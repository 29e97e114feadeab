//! One cell of any column, with either decimal convention. Beyond "never panics", checks
//! what an accepted cell must be: a finite, non-negative reading; an over-range mark only
//! for insulation; no date after today; an error message on one line.

#![no_main]

use chrono::NaiveDate;
use libfuzzer_sys::fuzz_target;
use ohmtrail::import::cell::{Cell, Column, Kind, ParseOptions, format_number, parse_cell};

fuzz_target!(|data: &[u8]| {
    let Some((&first, rest)) = data.split_first() else {
        return;
    };
    let Ok(text) = std::str::from_utf8(rest) else {
        return;
    };
    let columns: Vec<Column> = Column::VISIT
        .iter()
        .chain(Column::OBSERVATION.iter())
        .copied()
        .collect();
    let column = columns[usize::from(first & 0x3f) % columns.len()];
    let opts = ParseOptions {
        decimal_comma: first & 0x80 != 0,
        ..ParseOptions::new(NaiveDate::from_ymd_opt(2025, 7, 1).unwrap())
    };
    check(column, text, &opts);
});

fn check(column: Column, text: &str, opts: &ParseOptions) {
    match parse_cell(column, text, opts) {
        Err(e) => {
            let msg = e.to_string();
            assert!(!msg.contains(['\n', '\r']), "message on one line: {msg:?}");
            assert!(!msg.is_empty());
        }
        Ok(Cell::Number(v)) => {
            assert!(v.is_finite(), "{column}: {text:?} gave {v}");
            if column.kind() == Kind::Celsius {
                assert!((-40.0..=60.0).contains(&v), "{text:?} gave {v} °C");
            } else {
                assert!(v >= 0.0, "{column}: {text:?} gave {v}");
                assert!(!v.is_sign_negative(), "{column}: {text:?} gave -0");
            }
            // What export writes for this value reads back as the same value.
            let mut again = format_number(v);
            if opts.decimal_comma {
                again = again.replace('.', ",");
            }
            assert_eq!(
                parse_cell(column, &again, opts),
                Ok(Cell::Number(v)),
                "{column}: {text:?} -> {v} -> {again:?}"
            );
        }
        Ok(Cell::OverRange(v)) => {
            assert_eq!(column.kind(), Kind::Megohms, "{column}: {text:?}");
            assert!(v.is_finite() && v >= 0.0, "{text:?} gave >{v}");
        }
        Ok(Cell::Date(d)) => {
            assert_eq!(column.kind(), Kind::Date);
            assert!(d <= opts.today, "{text:?} gave {d}");
            // A date reads back from its ISO form.
            assert_eq!(
                parse_cell(column, &d.to_string(), opts),
                Ok(Cell::Date(d))
            );
        }
        Ok(Cell::Limitation) => assert!(column.takes_limitation()),
        Ok(Cell::Text(t)) => {
            if column.kind() == Kind::Key {
                assert!(!t.is_empty() && t.trim() == t, "{column}: {text:?} gave {t:?}");
            }
        }
        Ok(_) => {}
    }
}
