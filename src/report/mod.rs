//! Reports as self-contained HTML (inline CSS and SVG, no script, no external assets) or as
//! the same content as JSON. The only module that writes HTML or SVG.
//!
//! - [`model`]: the report as data, built from a property's analysis (pure).
//! - [`property`]: one property's page; [`portfolio`]: the index across properties.
//! - [`chart`]: one quantity over the visits as an inline SVG chart.
//!
//! File naming: a property's report is `report-REF.html` (REF made safe for file names by
//! [`html::file_stem`]); the portfolio index links to those names in its own folder.

pub mod brief;
pub mod chart;
mod css;
pub mod html;
pub mod model;
pub mod portfolio;
pub mod property;
pub mod remedial;
pub mod schedule;

use crate::analysis::{self, Settings};
use crate::error::Result;
use crate::store::Store;

pub use html::{file_stem, property_file_name};
pub use model::{CAUTIONS, PropertyReport};
pub use portfolio::{PortfolioEntry, PortfolioReport};

/// One property's report model, analysed on `settings.today`.
pub fn property_report(
    store: &Store,
    property_ref: &str,
    settings: &Settings,
) -> Result<PropertyReport> {
    let a = analysis::analyse_property(store, property_ref, settings)?;
    Ok(model::build(&a))
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
    let mut entries = Vec::new();
    let mut one = |h: crate::store::PropertyHistory| {
        let a = analysis::analyse(&h, settings);
        let r = model::build(&a);
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
    Ok(index)
}
