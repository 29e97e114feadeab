//! ohmtrail: the test history of rented homes' fixed wiring, visit after visit.
//!
//! The library holds the whole domain; the `ohmtrail` binary only parses arguments and prints.
//!
//! - [`model`]: the asset register and readings as plain values.
//! - [`limits`]: published limits (BS 7671, IEC 60228) with their sources; pure.
//! - [`trend`]: drift, steps and projections over a series of readings; pure.
//! - [`store`]: the SQLite history; the only module that talks SQL.
//! - [`import`]: visit files in, with exact errors.
//! - [`export`]: the same format out again.
//! - [`archive`]: the whole history in one file, and its merge into another database.
//! - [`onsite`]: the visit brief and the live comparison while testing; pure.
//! - [`sim`]: a seeded portfolio simulator with site noise and planted faults, and the scoring
//!   of the worklist and the brief against its truth.

pub mod analysis;
pub mod archive;
pub mod demo;
pub mod error;
pub mod export;
pub mod import;
pub mod limits;
pub mod model;
pub mod onsite;
pub mod report;
pub mod sim;
pub mod store;
pub mod trend;

pub use error::{Error, Result};

/// The caution every output carries, printed or in a report: the figures support a competent
/// person's judgement and never replace it, and the tool assigns no condition codes and no
/// overall outcome. Each report, brief or worklist carries it once.
pub const CAUTION: &str = "These figures support, and never replace, the judgement of a competent, \
licensed person inspecting and testing to BS 7671 or the local code. ohmtrail assigns no condition \
codes and no overall outcome of its own.";
