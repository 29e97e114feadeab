//! A header and one row under it, as the importer hands them to the row parser. The header
//! is built from known column names (so most inputs get past it) with the odd raw name; the
//! fields are raw bytes, as a CSV reader yields them, not necessarily UTF-8.

#![no_main]

use chrono::NaiveDate;
use libfuzzer_sys::fuzz_target;
use ohmtrail::import::cell::{Column, ParseOptions};
use ohmtrail::import::row::{FileKind, parse_header, parse_observation_row, parse_visit_row};

fuzz_target!(|data: &[u8]| {
    // Layout: flags byte, header length n, n column selectors, then fields split on 0x1F.
    let [flags, n, rest @ ..] = data else {
        return;
    };
    let n = usize::from(*n % 40);
    if rest.len() < n {
        return;
    }
    let (selectors, body) = rest.split_at(n);
    let all: Vec<Column> = Column::VISIT
        .iter()
        .chain(Column::OBSERVATION.iter())
        .copied()
        .collect();
    let names: Vec<String> = selectors
        .iter()
        .map(|s| {
            let name = all[usize::from(s & 0x3f) % all.len()].name();
            match s >> 6 {
                0 => name.to_string(),
                1 => name.to_ascii_uppercase(),
                2 => format!(" {name} "),
                _ => format!("{name}x"),
            }
        })
        .collect();
    let name_refs: Vec<&str> = names.iter().map(String::as_str).collect();
    let Ok(header) = parse_header(&name_refs, flags & 1 != 0) else {
        return;
    };
    let fields: Vec<&[u8]> = body.split(|b| *b == 0x1f).collect();
    let opts = ParseOptions {
        decimal_comma: flags & 2 != 0,
        ..ParseOptions::new(NaiveDate::from_ymd_opt(2025, 7, 1).unwrap())
    };
    let faults = match header.kind {
        FileKind::Visits => match parse_visit_row(&header, &fields, &opts) {
            Ok(row) => {
                assert!(!row.property_ref.is_empty() && !row.board.is_empty());
                assert!(!row.circuit.is_empty());
                assert!(row.visit_date <= opts.today);
                for v in [row.ze_ohm, row.readings.r1r2_ohm, row.readings.zs_ohm]
                    .into_iter()
                    .flatten()
                {
                    assert!(v.is_finite() && v >= 0.0);
                }
                return;
            }
            Err(f) => f,
        },
        FileKind::Observations => match parse_observation_row(&header, &fields, &opts) {
            Ok(row) => {
                assert!(!row.property_ref.is_empty() && !row.text.is_empty());
                assert!(row.circuit.is_none() || row.board.is_some());
                return;
            }
            Err(f) => f,
        },
    };
    assert!(!faults.is_empty(), "a refused row says why");
    for f in faults {
        // Positions are 1-based and inside the row or one past it (a missing field).
        assert!(f.column >= 1 && f.column <= fields.len().max(header.len()) + 1);
        assert!(!f.message.contains(['\n', '\r']), "{:?}", f.message);
    }
});
