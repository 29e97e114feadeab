//! The history out again, in the visit-file format that [`crate::import`] reads, so that
//! importing an export into an empty database gives back the same records.
//!
//! CSV cells that a spreadsheet would run as a formula (starting with `=`, `+`, `-`, `@`, tab
//! or carriage return) get a leading `'`, as OWASP's CSV-injection guidance advises; import
//! removes exactly that quote again.

use std::io::Write;

use serde::Serialize;

use crate::error::{Error, Result};
use crate::import::cell::Kind;
use crate::import::{Column, escape, format_number, reading_text, register_at, register_texts};
use crate::store::{ExportObservation, ExportRecord, IngestChange, Store};

/// What an export wrote.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct ExportCounts {
    pub test_records: u64,
    pub observations: u64,
}

/// A record's cells in [`Column::VISIT`] order, unescaped; `None` where nothing is recorded.
/// Register details are those in force on the visit date, so changes survive the round trip.
pub fn record_cells(rec: &ExportRecord, changes: &[IngestChange]) -> Vec<Option<String>> {
    let reg = register_at(&register_texts(&rec.details), changes, rec.visit_date);
    Column::VISIT
        .iter()
        .map(|c| match c {
            Column::PropertyRef => Some(rec.property_ref.clone()),
            Column::Address => rec.address.clone(),
            Column::Board => Some(rec.board.clone()),
            Column::Earthing => rec.earthing.clone(),
            Column::Circuit => Some(rec.circuit.clone()),
            Column::Description => reg[0].clone(),
            Column::Ring => reg[1].as_deref().map(|k| {
                if k == "ring" {
                    "yes".to_string()
                } else {
                    "no".to_string()
                }
            }),
            Column::Device => reg[2].clone(),
            Column::RcdMa => reg[3].clone(),
            Column::LiveMm2 => reg[4].clone(),
            Column::CpcMm2 => reg[5].clone(),
            Column::LengthM => reg[6].clone(),
            Column::RcdType => reg[7].clone(),
            Column::RcdDelay => reg[8].clone(),
            Column::Insulation => reg[9].clone(),
            Column::WiringType => reg[10].clone(),
            Column::RefMethod => reg[11].clone(),
            Column::Points => reg[12].clone(),
            Column::BreakingKa => reg[13].clone(),
            Column::Afdd => reg[14].clone(),
            Column::RcdId => reg[15].clone(),
            Column::VisitDate => Some(rec.visit_date.to_string()),
            Column::Inspector => rec.inspector.clone(),
            Column::Instrument => rec.instrument.clone(),
            Column::AmbientC => rec.ambient_c.map(format_number),
            Column::ZeOhm => {
                reading_text(&rec.readings, Column::ZeOhm).or_else(|| rec.ze_ohm.map(format_number))
            }
            Column::FedFrom => rec.fed_from.clone(),
            Column::ZdbOhm => rec.board_test.zdb_ohm.map(format_number),
            Column::SubmainR1r2Ohm => rec.board_test.submain_r1r2_ohm.map(format_number),
            Column::PfcKa => rec.board_test.pfc_ka.map(format_number),
            Column::U0V => rec.supply.u0_v.map(format_number),
            Column::RaOhm => rec.supply.ra_ohm.map(format_number),
            Column::BondingCsaMm2 => rec.supply.bonding_csa_mm2.map(format_number),
            Column::BondingWater => rec.supply.bonding_water.map(|b| b.as_str().into()),
            Column::BondingGas => rec.supply.bonding_gas.map(|b| b.as_str().into()),
            Column::BondingOther => rec.supply.bonding_other.map(|b| b.as_str().into()),
            Column::ReportRef => rec.report.report_ref.clone(),
            Column::Outcome => rec.report.outcome.clone(),
            Column::IntervalMonths => rec.report.interval_months.map(|m| m.to_string()),
            Column::Extent => rec.report.extent.clone(),
            Column::Limitations => rec.report.limitations.clone(),
            other => reading_text(&rec.readings, *other),
        })
        .collect()
}

/// A cell as CSV export writes it: text neutralised against formula injection.
fn csv_cell(column: Column, value: Option<&str>) -> String {
    match value {
        None => String::new(),
        Some(v) => match column.kind() {
            Kind::Text | Kind::Key | Kind::ShortCode => escape(v),
            // Typed values never start with a quote or read as "not recorded"; only a
            // negative temperature needs neutralising.
            _ if v.starts_with(['=', '+', '-', '@', '\t', '\r']) => format!("'{v}"),
            _ => v.to_string(),
        },
    }
}

fn csv_err(e: csv::Error) -> Error {
    if !e.is_io_error() {
        return Error::invalid(format!("writing CSV: {e}"));
    }
    match e.into_kind() {
        csv::ErrorKind::Io(io) => Error::write("CSV", io),
        other => Error::invalid(format!("writing CSV: {other:?}")),
    }
}

/// Write the visit file (and, when `observations` is given, the observation file) as CSV.
pub fn export_csv(
    store: &Store,
    property: Option<&str>,
    visits: &mut dyn Write,
    observations: Option<&mut dyn Write>,
) -> Result<ExportCounts> {
    let changes = store.export_changes()?;
    let mut counts = ExportCounts::default();
    let mut w = csv::Writer::from_writer(visits);
    w.write_record(Column::VISIT.iter().map(|c| c.name()))
        .map_err(csv_err)?;
    store.export_records(property, |rec| {
        let cells = record_cells(&rec, changes.get(&rec.circuit_id).map_or(&[], |v| v));
        w.write_record(
            Column::VISIT
                .iter()
                .zip(&cells)
                .map(|(c, v)| csv_cell(*c, v.as_deref())),
        )
        .map_err(csv_err)?;
        counts.test_records += 1;
        Ok(())
    })?;
    w.flush().map_err(|e| Error::write("CSV", e))?;
    if let Some(out) = observations {
        let list = store.export_observations(property)?;
        let mut w = csv::Writer::from_writer(out);
        w.write_record(Column::OBSERVATION.iter().map(|c| c.name()))
            .map_err(csv_err)?;
        for o in &list {
            let cells = observation_cells(o);
            w.write_record(
                Column::OBSERVATION
                    .iter()
                    .zip(&cells)
                    .map(|(c, v)| csv_cell(*c, v.as_deref())),
            )
            .map_err(csv_err)?;
        }
        w.flush().map_err(|e| Error::write("CSV", e))?;
        counts.observations = list.len() as u64;
    }
    Ok(counts)
}

fn observation_cells(o: &ExportObservation) -> Vec<Option<String>> {
    vec![
        Some(o.property_ref.clone()),
        Some(o.visit_date.to_string()),
        o.board.clone(),
        o.circuit.clone(),
        Some(o.code.clone()),
        Some(o.text.clone()),
    ]
}

/// How many observations an export would write.
pub fn observation_count(store: &Store, property: Option<&str>) -> Result<u64> {
    Ok(store.export_observations(property)?.len() as u64)
}

/// Write everything as one JSON document: `{"visits": [...], "observations": [...]}`, each
/// row an object keyed by column name. Numbers are JSON numbers; `>200` and `LIM` stay text.
///
/// The layout is serde_json's pretty printing of the whole document (two spaces an indent,
/// `[]` for an empty list) and one newline at the end, as every other JSON ohmtrail writes
/// (`report --format json`, `--json`), though it is written one row at a time.
pub fn export_json(
    store: &Store,
    property: Option<&str>,
    out: &mut dyn Write,
) -> Result<ExportCounts> {
    let changes = store.export_changes()?;
    let mut counts = ExportCounts::default();
    let io = |e: std::io::Error| Error::write("JSON", e);
    out.write_all(b"{\n  \"visits\": [").map_err(io)?;
    store.export_records(property, |rec| {
        let cells = record_cells(&rec, changes.get(&rec.circuit_id).map_or(&[], |v| v));
        let obj = json_object(&Column::VISIT, &cells);
        json_item(out, counts.test_records == 0, &obj)?;
        counts.test_records += 1;
        Ok(())
    })?;
    json_list_end(out, counts.test_records)?;
    out.write_all(b",\n  \"observations\": [").map_err(io)?;
    let list = store.export_observations(property)?;
    for (i, o) in list.iter().enumerate() {
        let obj = json_object(&Column::OBSERVATION, &observation_cells(o));
        json_item(out, i == 0, &obj)?;
    }
    counts.observations = list.len() as u64;
    json_list_end(out, counts.observations)?;
    out.write_all(b"\n}\n").map_err(io)?;
    Ok(counts)
}

/// One element of a list two levels down, pretty printed and indented to its depth. A JSON
/// string never holds a raw line break, so every line break in the text is a layout one.
fn json_item(out: &mut dyn Write, first: bool, value: &impl serde::Serialize) -> Result<()> {
    let text = serde_json::to_vec_pretty(value).map_err(json_err)?;
    let io = |e: std::io::Error| Error::write("JSON", e);
    out.write_all(if first { b"\n    " } else { b",\n    " })
        .map_err(io)?;
    for (i, line) in text.split(|&b| b == b'\n').enumerate() {
        if i > 0 {
            out.write_all(b"\n    ").map_err(io)?;
        }
        out.write_all(line).map_err(io)?;
    }
    Ok(())
}

/// The end of a list two levels down: `]` straight after `[` when it is empty.
fn json_list_end(out: &mut dyn Write, items: u64) -> Result<()> {
    let end: &[u8] = if items == 0 { b"]" } else { b"\n  ]" };
    out.write_all(end).map_err(|e| Error::write("JSON", e))
}

fn json_err(e: serde_json::Error) -> Error {
    if e.is_io() {
        Error::write("JSON", e.into())
    } else {
        Error::invalid(format!("writing JSON: {e}"))
    }
}

fn json_object(
    columns: &[Column],
    cells: &[Option<String>],
) -> serde_json::Map<String, serde_json::Value> {
    use serde_json::Value;
    columns
        .iter()
        .zip(cells)
        .map(|(c, v)| {
            let value = match v {
                None => Value::Null,
                Some(t) => match c.kind() {
                    Kind::Ohms
                    | Kind::Megohms
                    | Kind::Millis
                    | Kind::Celsius
                    | Kind::Mm2
                    | Kind::Metres
                    | Kind::RcdMa
                    | Kind::KiloAmps
                    | Kind::Volts
                    | Kind::Interval => t
                        .parse::<i64>()
                        .ok()
                        .map(serde_json::Number::from)
                        .or_else(|| t.parse::<f64>().ok().and_then(serde_json::Number::from_f64))
                        .map(Value::Number)
                        .unwrap_or_else(|| Value::String(t.clone())),
                    _ => Value::String(t.clone()),
                },
            };
            (c.name().to_string(), value)
        })
        .collect()
}
