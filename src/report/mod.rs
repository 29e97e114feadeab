//! Reports as self-contained HTML (inline CSS and SVG, no script, no external assets), as
//! A4 PDF typeset in-process, or as the same content as JSON. The only module that writes
//! HTML, SVG or PDF.
//!
//! - [`model`]: the report as data, built from a property's analysis (pure).
//! - [`property`]: one property's page; [`portfolio`]: the index across properties.
//! - [`chart`]: one quantity over the visits as an inline SVG chart.
//! - [`pdf`]: the same documents as PDF, from the same models.
//!
//! File naming: a property's report is `report-REF.html` (REF made safe for file names by
//! [`html::file_stem`]); the portfolio index links to those names in its own folder.

pub mod brief;
pub mod chart;
mod css;
pub mod html;
pub mod model;
pub mod pdf;
pub mod portfolio;
pub mod property;
pub mod remedial;
pub mod schedule;

use std::sync::Arc;

use crate::analysis::{self, Settings};
use crate::error::Result;
use crate::store::Store;

pub use html::{file_stem, property_file_name};
pub use model::{CAUTIONS, Contractor, Logo, PropertyReport};
pub use portfolio::{PortfolioEntry, PortfolioReport};

/// One property's report model, analysed on `settings.today`.
pub fn property_report(
    store: &Store,
    property_ref: &str,
    settings: &Settings,
) -> Result<PropertyReport> {
    let a = analysis::analyse_property(store, property_ref, settings)?;
    let mut r = model::build(&a);
    r.contractor = contractor(settings)?;
    Ok(r)
}

/// The contractor's details from the settings, with the logo read from its file (so a report
/// always carries the logo as it is when the report is made); `None` when none is set.
pub fn contractor(settings: &Settings) -> Result<Option<Contractor>> {
    let Some(mut c) = Contractor::from_settings(&settings.contractor) else {
        return Ok(None);
    };
    if let Some(path) = &c.logo_file {
        c.logo = Some(Arc::new(load_logo(std::path::Path::new(path))?));
    }
    Ok(Some(c))
}

/// Read a logo: a PNG (checked by its signature) or an SVG (checked by parsing it).
pub fn load_logo(path: &std::path::Path) -> Result<Logo> {
    let bytes = std::fs::read(path).map_err(|e| {
        crate::Error::invalid(format!(
            "cannot read the contractor's logo {} ({e}): check the file, or change the setting contractor.logo",
            path.display()
        ))
    })?;
    const PNG: &[u8] = b"\x89PNG\r\n\x1a\n";
    if bytes.starts_with(PNG) {
        return Ok(Logo { bytes, svg: false });
    }
    let is_svg = path
        .extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("svg"));
    if is_svg {
        return match usvg::Tree::from_data(&bytes, &usvg::Options::default()) {
            Ok(_) => Ok(Logo { bytes, svg: true }),
            Err(e) => Err(crate::Error::invalid(format!(
                "the contractor's logo {} is not a readable SVG image ({e}): check the file, or change the setting contractor.logo",
                path.display()
            ))),
        };
    }
    Err(crate::Error::invalid(format!(
        "the contractor's logo {} is not a PNG or SVG image: expected a .png or .svg file",
        path.display()
    )))
}

/// One property's report as a self-contained HTML page.
pub fn property_html(store: &Store, property_ref: &str, settings: &Settings) -> Result<String> {
    Ok(property::render(&property_report(
        store,
        property_ref,
        settings,
    )?))
}

/// Walk the portfolio one property at a time (memory stays bounded by the largest property),
/// handing each property's report to `each`, and return the ranked index. The index links to
/// `report-REF.EXT` files, `ext` being `html` or `json`.
pub fn portfolio(
    store: &Store,
    settings: &Settings,
    ext: &str,
    each: impl FnMut(&PropertyReport) -> Result<()>,
) -> Result<PortfolioReport> {
    portfolio_of(store, settings, ext, None, each)
}

/// [`portfolio`] over one client's properties (the name matched without regard to case), or
/// every property when `client` is `None`. A client's index holds no other client's property.
pub fn portfolio_of(
    store: &Store,
    settings: &Settings,
    ext: &str,
    client: Option<&str>,
    mut each: impl FnMut(&PropertyReport) -> Result<()>,
) -> Result<PortfolioReport> {
    let contractor = contractor(settings)?;
    let mut entries = Vec::new();
    let mut one = |h: crate::store::PropertyHistory| {
        let a = analysis::analyse(&h, settings);
        let mut r = model::build(&a);
        r.contractor = contractor.clone();
        each(&r)?;
        entries.push(portfolio::entry(&a, &r, ext));
        Ok(())
    };
    let client = match client {
        Some(name) => {
            let (name, ids) = store.client_properties(name)?;
            for id in ids {
                one(store.history(id)?)?;
            }
            Some(name)
        }
        None => {
            store.for_each_history(&mut one)?;
            None
        }
    };
    let mut index = portfolio::assemble(entries, settings.today);
    index.client = client;
    index.contractor = contractor;
    Ok(index)
}
