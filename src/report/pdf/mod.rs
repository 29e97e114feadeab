//! The documents as A4 PDF, typeset in-process by typst from the same models as the HTML.
//!
//! Each model becomes a [`doc::Doc`]: a list of generic blocks (headings, paragraphs,
//! tables, findings with their charts) serialised to JSON, which one typst template
//! (`template.typ`) lays out. The typesetter paginates: headings stay with what follows
//! them, a chart stays with its words, a table row never splits across pages. Charts are the
//! plotters SVGs of the HTML, embedded as vectors; the text is set in DejaVu Sans, compiled
//! into the binary (`assets/fonts/`, with its licence) and embedded in the PDF.

mod brief;
pub mod doc;
mod portfolio;
mod property;
mod schedule;
mod world;

use doc::{Contractor as DocContractor, Doc};
use typst_layout::PagedDocument;

use crate::error::{Error, Result};
use crate::onsite::Brief;
use crate::report::model::{Contractor, PropertyReport};
use crate::report::portfolio::PortfolioReport;

const TEMPLATE: &str = include_str!("template.typ");

/// One property's report as PDF.
pub fn property(r: &PropertyReport) -> Result<Vec<u8>> {
    render(property::blocks(r), r.generated)
}

/// The portfolio index as PDF.
pub fn portfolio(p: &PortfolioReport) -> Result<Vec<u8>> {
    render(portfolio::blocks(p), p.generated)
}

/// The visit brief as PDF, in the report's design.
pub fn brief(b: &Brief, contractor: Option<&Contractor>) -> Result<Vec<u8>> {
    render(brief::blocks(b, contractor), b.date)
}

/// The contractor's block for a masthead, with the logo kept as a file of the document.
fn contractor(d: &mut Doc, c: Option<&Contractor>) -> Option<DocContractor> {
    let c = c?;
    let logo = c
        .logo
        .as_ref()
        .map(|l| d.file(if l.svg { "logo.svg" } else { "logo.png" }, l.bytes.clone()));
    Some(DocContractor {
        name: c.name.clone().unwrap_or_default(),
        lines: c.lines(),
        logo,
    })
}

/// Typeset a document. A failure here is ohmtrail's fault, not the user's data's (every
/// string arrives as data), except for a logo the typesetter cannot read, which is named.
fn render(d: Doc, today: chrono::NaiveDate) -> Result<Vec<u8>> {
    let json = serde_json::to_vec(&d).map_err(|e| Error::invalid(format!("PDF: {e}")))?;
    let mut files = d.files;
    files.push(("/doc.json".into(), json));
    let world = world::DocWorld::new(TEMPLATE, files, today);
    let document: PagedDocument = typst::compile(&world).output.map_err(|errors| {
        Error::invalid(format!(
            "the PDF could not be typeset: {}",
            errors
                .iter()
                .map(|e| world.describe(e))
                .collect::<Vec<_>>()
                .join("; ")
        ))
    })?;
    typst_pdf::pdf(&document, &typst_pdf::PdfOptions::default()).map_err(|errors| {
        Error::invalid(format!(
            "the PDF could not be written: {}",
            errors
                .iter()
                .map(|e| e.message.as_str())
                .collect::<Vec<_>>()
                .join("; ")
        ))
    })
}
