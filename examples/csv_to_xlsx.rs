//! Writes a visit file (CSV) as a workbook of one sheet, as another program would keep it, for
//! the spreadsheet import benchmark: `csv_to_xlsx IN.csv OUT.xlsx`. Numbers become number
//! cells, `visit_date` becomes date cells (day-first or ISO text read), everything else text.
//! The writer is rust_xlsxwriter, not the reader's crate.

use rust_xlsxwriter::{ExcelDateTime, Format, Workbook};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    let [_, input, output] = args.as_slice() else {
        return Err("usage: csv_to_xlsx IN.csv OUT.xlsx".into());
    };
    let mut r = csv::Reader::from_path(input)?;
    let head: Vec<String> = r.headers()?.iter().map(String::from).collect();
    let date_col = head.iter().position(|h| h == "visit_date");
    let mut book = Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Visits")?;
    let date = Format::new().set_num_format("dd/mm/yyyy");
    for (c, h) in head.iter().enumerate() {
        sheet.write_string(0, c as u16, h)?;
    }
    for (i, rec) in r.records().enumerate() {
        let rec = rec?;
        let row = i as u32 + 1;
        for (c, v) in rec.iter().enumerate() {
            let col = c as u16;
            if v.is_empty() {
                continue;
            }
            if Some(c) == date_col {
                let iso = match v.split('/').collect::<Vec<_>>().as_slice() {
                    [d, m, y] => format!("{y}-{m:0>2}-{d:0>2}"),
                    _ => v.to_string(),
                };
                let d = ExcelDateTime::parse_from_str(&iso)?;
                sheet.write_datetime_with_format(row, col, d, &date)?;
            } else if let Ok(n) = v.parse::<f64>()
                && !v.starts_with(['+', '-'])
            {
                sheet.write_number(row, col, n)?;
            } else {
                sheet.write_string(row, col, v)?;
            }
        }
    }
    book.save(output)?;
    Ok(())
}
