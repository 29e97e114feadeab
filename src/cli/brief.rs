use std::io::Write;
use std::path::PathBuf;

use anyhow::{Result, bail};
use chrono::NaiveDate;
use clap::Args as ClapArgs;

use ohmtrail::analysis::{Settings, analyse_property};
use ohmtrail::onsite::verdict::expectation_text;
use ohmtrail::onsite::{self, Brief, DEFAULT_TEMP_C};
use ohmtrail::trend::LimitKind;

use super::output::{status, table, write_atomic};
use super::{CAUTION, Context, parse_date, today};

#[derive(ClapArgs, Debug)]
pub struct Args {
    /// The property's reference
    pub property: String,
    /// Planned date of the visit [default: today]
    #[arg(long, value_parser = parse_date)]
    pub date: Option<NaiveDate>,
    /// Expected ambient temperature on site, °C [default: 15, stated in the brief]
    #[arg(long, value_name = "C", allow_negative_numbers = true, value_parser = parse_temp)]
    pub temp: Option<f64>,
    /// Write the brief to FILE: .html (printable A4), .pdf or .csv; without it, print a text table
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,
}

/// An ambient temperature someone could test in, °C.
pub fn parse_temp(s: &str) -> std::result::Result<f64, String> {
    let t: f64 = s
        .trim()
        .trim_end_matches("°C")
        .trim_end_matches('C')
        .trim()
        .parse()
        .map_err(|_| format!("{s:?} is not a temperature: expected degrees Celsius, e.g. 15"))?;
    if !(t.is_finite() && (-30.0..=50.0).contains(&t)) {
        return Err(format!(
            "{s} °C is out of range: expected an ambient from -30 to 50 °C"
        ));
    }
    Ok(t)
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open_existing()?;
    let settings = Settings::load(&store, today())?;
    let analysis = analyse_property(&store, &args.property, &settings)?;
    let instruments = store.instruments()?;
    let date = args.date.unwrap_or_else(today);
    let b = onsite::brief(&analysis, date, args.temp, &instruments);
    match &args.output {
        None => print_text(&b, out),
        Some(path) => {
            let ext = path
                .extension()
                .and_then(|e| e.to_str())
                .map(|e| e.to_ascii_lowercase());
            let contractor = || ohmtrail::report::contractor(&settings);
            let body = match ext.as_deref() {
                Some("html" | "htm") => {
                    ohmtrail::report::brief::brief_html(&b, contractor()?.as_ref()).into_bytes()
                }
                Some("pdf") => ohmtrail::report::pdf::brief(&b, contractor()?.as_ref())?,
                Some("csv") => csv_text(&b)?.into_bytes(),
                _ => bail!(
                    "{}: unknown output kind: expected a file name ending .html, .pdf or .csv",
                    path.display()
                ),
            };
            write_atomic(path, &body)?;
            status(
                out,
                format_args!(
                    "wrote the brief for {} to {}",
                    b.property_ref,
                    path.display()
                ),
            )?;
            Ok(())
        }
    }
}

/// The brief as CSV. The caution comes first, once, as a comment line (`# Caution: …`): a
/// reader told that `#` starts a comment (csv's `comment`, pandas' `comment="#"`, or one that
/// skips the first line) gets the header and the rows alone. Any cell holding a `#` is quoted,
/// so no data line can be taken for a comment, nor cut short at one.
fn csv_text(b: &Brief) -> Result<String> {
    let mut body = format!("# Caution: {CAUTION}\n").into_bytes();
    let mut w = csv::WriterBuilder::new()
        .comment(Some(b'#'))
        .from_writer(&mut body);
    w.write_record(onsite::CSV_HEADER)?;
    for r in onsite::csv_rows(b) {
        w.write_record(&r)?;
    }
    w.flush()?;
    drop(w);
    Ok(String::from_utf8(body)?)
}

fn print_text(b: &Brief, out: &mut dyn Write) -> Result<()> {
    writeln!(
        out,
        "Visit brief for {}{}: {} at {} °C{}",
        b.property_ref,
        b.address
            .as_deref()
            .map(|a| format!(" ({a})"))
            .unwrap_or_default(),
        b.date,
        b.temp_c,
        if b.temp_assumed {
            format!(" (assumed {DEFAULT_TEMP_C} °C: none given; use --temp)")
        } else {
            String::new()
        }
    )?;
    writeln!(
        out,
        "Last visit: {}",
        b.last_visit
            .map(|d| d.to_string())
            .unwrap_or_else(|| "none on record".into())
    )?;
    writeln!(out)?;
    writeln!(out, "Test first:")?;
    if b.test_first.is_empty() {
        writeln!(out, "  nothing flagged")?;
    }
    for (i, p) in b.test_first.iter().enumerate() {
        writeln!(
            out,
            "  {}. {} {} ({}, {}): {}",
            i + 1,
            p.board,
            p.circuit
                .as_ref()
                .map(|c| format!("circuit {c}"))
                .unwrap_or_else(|| "origin".into()),
            p.severity,
            p.quantity,
            p.reason
        )?;
    }
    writeln!(out)?;
    writeln!(out, "Before leaving:")?;
    if b.instruments.is_empty() {
        if b.instruments_known == 0 {
            writeln!(
                out,
                "  no instruments in the register: check the calibration of the one you take"
            )?;
        } else {
            let all = if b.instruments_known == 1 {
                "the one instrument in the register is".to_string()
            } else {
                format!("all {} instruments are", b.instruments_known)
            };
            writeln!(out, "  {all} in calibration on {}", b.date)?;
        }
    }
    for i in &b.instruments {
        writeln!(out, "  {}: {}", i.serial, i.why)?;
    }
    if !b.observations.is_empty() {
        writeln!(out)?;
        writeln!(
            out,
            "Observations recorded last time ({}):",
            b.last_observations_date
                .map(|d| d.to_string())
                .unwrap_or_default()
        )?;
        for o in &b.observations {
            let at = match (&o.board, &o.circuit) {
                (Some(bd), Some(c)) => format!("{bd}/{c}: "),
                (Some(bd), None) => format!("{bd}: "),
                _ => String::new(),
            };
            writeln!(out, "  {} {at}{}", o.code.as_str(), o.text)?;
        }
    }
    for board in &b.boards {
        writeln!(out)?;
        writeln!(
            out,
            "Board {}{}: {} {}",
            board.designation,
            board
                .earthing
                .as_deref()
                .map(|e| format!(" ({e})"))
                .unwrap_or_default(),
            if board.origin { "Ze" } else { "Zdb" },
            expectation_text(&board.ze)
        )?;
        let mut rows = Vec::new();
        for c in &board.circuits {
            for (i, e) in c.expectations.iter().enumerate() {
                let u = e.unit();
                let last = e
                    .last
                    .as_ref()
                    .map(|l| {
                        let v = onsite::entry::fmt_in(u, l.raw);
                        let v = if l.over_range { format!(">{v}") } else { v };
                        match l.ambient_c {
                            Some(t) => format!("{v} at {t} °C"),
                            None => v,
                        }
                    })
                    .unwrap_or_else(|| "-".into());
                let band = match e.band {
                    Some(bd) => match (bd.low, bd.high) {
                        (Some(lo), Some(hi)) => format!(
                            "{}–{}",
                            onsite::entry::fmt_num(u, lo),
                            onsite::entry::fmt_in(u, hi)
                        ),
                        (Some(lo), None) => format!(">= {}", onsite::entry::fmt_in(u, lo)),
                        _ => "-".into(),
                    },
                    None => "-".into(),
                };
                rows.push(vec![
                    if i == 0 {
                        format!(
                            "{}{}",
                            c.number,
                            c.description
                                .as_deref()
                                .map(|d| format!(" {d}"))
                                .unwrap_or_default()
                        )
                    } else {
                        String::new()
                    },
                    e.field.label().to_string(),
                    last,
                    e.expected
                        .map(|x| onsite::entry::fmt_in(u, x))
                        .unwrap_or_else(|| "-".into()),
                    band,
                    e.limit
                        .as_ref()
                        .map(|l| {
                            let word = match (l.kind, l.advisory) {
                                (_, true) => "advisory",
                                (LimitKind::Min, _) => "min",
                                (LimitKind::Max, _) => "max",
                            };
                            format!("{word} {}", onsite::entry::fmt_in(u, l.value))
                        })
                        .unwrap_or_else(|| "-".into()),
                ]);
            }
        }
        if board.circuits.is_empty() {
            writeln!(out, "  {}", onsite::NO_CIRCUITS)?;
        } else {
            table(
                out,
                &["CIRCUIT", "QUANTITY", "LAST", "EXPECTED", "BAND", "LIMIT"],
                rows,
            )?;
        }
        for c in &board.circuits {
            if let Some(refs) = onsite::test_first_refs(c) {
                writeln!(out, "  {}/{}: {refs}", board.designation, c.number)?;
            }
            for f in &c.other_flags {
                writeln!(out, "  {}/{}: {f}", board.designation, c.number)?;
            }
            for e in c.expectations.iter() {
                if let Some(w) = &e.wide {
                    writeln!(
                        out,
                        "  {}/{} {}: band {w}",
                        board.designation,
                        c.number,
                        e.field.label()
                    )?;
                }
            }
        }
    }
    for n in &b.notes {
        writeln!(out, "Note: {n}")?;
    }
    writeln!(out)?;
    writeln!(out, "Caution: {CAUTION}")?;
    Ok(())
}
