//! Layouts: how another source's files map onto the visit file's columns. A layout names, for
//! each source header, the column it fills, and says how the source writes dates, units and
//! values that mean something ohmtrail already reads. Pure, like [`super::cell`]: the store
//! keeps layouts by name, the CLI reads them from files.
//!
//! The format is TOML:
//!
//! ```toml
//! date_order = "day_first"        # day_first (default) | month_first | iso
//! decimal_comma = false
//! insulation_top_mohm = 999       # what OL and ∞ stand for in an insulation column
//! header_row = 3                  # spreadsheets: the sheet row holding the headers
//! ignore = ["Remarks"]            # source columns not imported, said out loud
//!
//! [columns]                       # source header = visit-file column
//! "Circuit No" = "circuit"
//! "IR L-E" = "ir_le_mohm"
//!
//! [units]                         # source header = the unit its figures are in
//! "IR L-E" = "gigohm"
//!
//! [values]                        # a source's own spelling = how ohmtrail writes it
//! "not tested" = "N/T"
//!
//! [constants]                     # a column every row shares
//! property_ref = "NF-014"
//! ```

use std::collections::BTreeMap;

use serde::Deserialize;

use super::cell::{Column, DateOrder, Kind, ParseOptions, format_number};

/// A layout as written in its file.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Layout {
    #[serde(default)]
    pub date_order: DateOrder,
    #[serde(default)]
    pub decimal_comma: bool,
    pub insulation_top_mohm: Option<f64>,
    /// For spreadsheets: the 1-based sheet row holding the headers (the first row used, when
    /// not given).
    pub header_row: Option<u32>,
    /// Source columns deliberately not imported.
    #[serde(default)]
    pub ignore: Vec<String>,
    /// Source header → visit-file column name.
    #[serde(default)]
    pub columns: BTreeMap<String, String>,
    /// Source header → unit of its figures (see [`SourceUnit`]).
    #[serde(default)]
    pub units: BTreeMap<String, String>,
    /// A source's spelling → ohmtrail's, for any cell (compared without case or surrounding
    /// spaces).
    #[serde(default)]
    pub values: BTreeMap<String, String>,
    /// Visit-file column → the value every row gets.
    #[serde(default)]
    pub constants: BTreeMap<String, String>,
}

/// A unit a source may write its figures in, with the factor into the column's own unit.
/// Only units instruments and schedules really use: milliohms for continuity, gigohms or
/// kilohms for insulation, seconds for trip times (common practice, no source).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SourceUnit {
    pub name: &'static str,
    pub kind: Kind,
    pub factor: f64,
}

pub const SOURCE_UNITS: [SourceUnit; 7] = [
    SourceUnit {
        name: "ohm",
        kind: Kind::Ohms,
        factor: 1.0,
    },
    SourceUnit {
        name: "milliohm",
        kind: Kind::Ohms,
        factor: 0.001,
    },
    SourceUnit {
        name: "megohm",
        kind: Kind::Megohms,
        factor: 1.0,
    },
    SourceUnit {
        name: "gigohm",
        kind: Kind::Megohms,
        factor: 1000.0,
    },
    SourceUnit {
        name: "kilohm",
        kind: Kind::Megohms,
        factor: 0.001,
    },
    SourceUnit {
        name: "ms",
        kind: Kind::Millis,
        factor: 1.0,
    },
    SourceUnit {
        name: "s",
        kind: Kind::Millis,
        factor: 1000.0,
    },
];

/// Why a layout was refused: one line, naming the key as the layout writes it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct LayoutError(pub String);

impl Layout {
    /// Read a layout's TOML text, checking every name in it. Errors name the line.
    pub fn from_toml(text: &str) -> Result<Layout, LayoutError> {
        let layout: Layout = toml::from_str(text).map_err(|e| {
            let line = e
                .span()
                .map(|s| text[..s.start.min(text.len())].matches('\n').count() + 1);
            let msg = e.message().trim().replace('\n', " ");
            LayoutError(match line {
                Some(l) => format!("line {l}: {msg}"),
                None => msg,
            })
        })?;
        layout.check()?;
        Ok(layout)
    }

    fn check(&self) -> Result<(), LayoutError> {
        let known = |name: &str| {
            Column::from_name(name)
                .filter(|c| c.name() == name.trim().to_ascii_lowercase())
                .ok_or_else(|| {
                    LayoutError(format!(
                        "{name:?} is not a visit-file column: expected one of {}",
                        Column::VISIT
                            .iter()
                            .chain(&Column::OBSERVATION[4..])
                            .map(|c| c.name())
                            .collect::<Vec<_>>()
                            .join(", ")
                    ))
                })
        };
        for (source, target) in &self.columns {
            known(target).map_err(|e| LayoutError(format!("[columns] {source:?}: {}", e.0)))?;
            if self.ignore.contains(source) {
                return Err(LayoutError(format!(
                    "{source:?} is both mapped in [columns] and listed in ignore: expected one"
                )));
            }
        }
        for (source, unit) in &self.units {
            let Some(target) = self.columns.get(source) else {
                return Err(LayoutError(format!(
                    "[units] {source:?} is not a source header of [columns]: give its column first"
                )));
            };
            let column = known(target)?;
            self.unit_for(column, unit)
                .map_err(|e| LayoutError(format!("[units] {source:?}: {}", e.0)))?;
        }
        for (column, value) in &self.constants {
            let c = known(column).map_err(|e| LayoutError(format!("[constants] {}", e.0)))?;
            if self
                .columns
                .values()
                .any(|t| t.eq_ignore_ascii_case(c.name()))
            {
                return Err(LayoutError(format!(
                    "[constants] {column} is also filled by a source column in [columns]: expected one"
                )));
            }
            if value.contains(['\n', '\r']) {
                return Err(LayoutError(format!(
                    "[constants] {column}: expected one line"
                )));
            }
        }
        if let Some(top) = self.insulation_top_mohm
            && !(top.is_finite() && top > 0.0 && top <= super::cell::MAX_MEGOHMS)
        {
            return Err(LayoutError(format!(
                "insulation_top_mohm {top} is not a top of range: expected a figure in MΩ up to {}",
                super::cell::MAX_MEGOHMS
            )));
        }
        if self.header_row == Some(0) {
            return Err(LayoutError(
                "header_row 0: rows are counted from 1, as a spreadsheet shows them".into(),
            ));
        }
        Ok(())
    }

    fn unit_for(&self, column: Column, unit: &str) -> Result<SourceUnit, LayoutError> {
        let fits: Vec<&SourceUnit> = SOURCE_UNITS
            .iter()
            .filter(|u| u.kind == column.kind())
            .collect();
        fits.iter()
            .find(|u| u.name.eq_ignore_ascii_case(unit.trim()))
            .copied()
            .copied()
            .ok_or_else(|| {
                LayoutError(if fits.is_empty() {
                    format!(
                        "{} takes no unit: its cells are read as they are",
                        column.name()
                    )
                } else {
                    format!(
                        "{unit:?} is not a unit of {}: expected {}",
                        column.name(),
                        fits.iter().map(|u| u.name).collect::<Vec<_>>().join(" or ")
                    )
                })
            })
    }

    /// Give `column` the same value on every row, replacing the layout's own constant for it.
    pub fn set_constant(&mut self, column: &str, value: &str) -> Result<(), LayoutError> {
        let mut next = self.clone();
        next.constants
            .insert(column.to_ascii_lowercase(), value.to_string());
        next.check()?;
        *self = next;
        Ok(())
    }

    /// The parse options this layout sets on top of `base`.
    pub fn parse_options(&self, base: ParseOptions) -> ParseOptions {
        ParseOptions {
            decimal_comma: base.decimal_comma || self.decimal_comma,
            date_order: self.date_order,
            insulation_top_mohm: self.insulation_top_mohm.or(base.insulation_top_mohm),
            ..base
        }
    }

    /// How this layout reads a file whose header row is `names`. A source column that is
    /// neither mapped nor ignored is an error naming it as the file writes it.
    pub fn mapping(&self, names: &[String]) -> Result<Mapping, Vec<(usize, String)>> {
        let mut errors = Vec::new();
        let mut targets = Vec::with_capacity(names.len());
        let mut transforms = Vec::with_capacity(names.len());
        let find = |map: &BTreeMap<String, String>, n: &str| {
            map.iter()
                .find(|(k, _)| k.trim().eq_ignore_ascii_case(n.trim()))
                .map(|(_, v)| v.clone())
        };
        for (i, n) in names.iter().enumerate() {
            if let Some(target) = find(&self.columns, n) {
                let column = Column::from_name(&target);
                let unit = find(&self.units, n)
                    .and_then(|u| column.and_then(|c| self.unit_for(c, &u).ok()));
                targets.push(target.to_ascii_lowercase());
                transforms.push(unit.map(|u| u.factor).filter(|f| *f != 1.0));
            } else if self
                .ignore
                .iter()
                .any(|x| x.trim().eq_ignore_ascii_case(n.trim()))
                || n.trim().is_empty() && self.ignore.iter().any(|x| x.trim().is_empty())
            {
                targets.push(String::new());
                transforms.push(None);
            } else {
                errors.push((
                    i + 1,
                    if n.trim().is_empty() {
                        "unnamed column is not in the layout: list \"\" in ignore to skip unnamed columns".to_string()
                    } else {
                        format!(
                            "column {n:?} is not in the layout: map it in [columns] or list it in ignore"
                        )
                    },
                ));
                targets.push(String::new());
                transforms.push(None);
            }
        }
        if !errors.is_empty() {
            return Err(errors);
        }
        let values = self
            .values
            .iter()
            .map(|(k, v)| (k.trim().to_lowercase(), v.clone()))
            .collect();
        Ok(Mapping {
            source_names: names.to_vec(),
            targets,
            factors: transforms,
            values,
            constants: self
                .constants
                .iter()
                .map(|(k, v)| (k.to_ascii_lowercase(), v.clone()))
                .collect(),
            decimal_comma: self.decimal_comma,
        })
    }
}

/// A layout fitted to one file's header: what each source column becomes, and the cells the
/// layout adds.
#[derive(Debug, Clone, PartialEq)]
pub struct Mapping {
    /// The file's header names as written.
    pub source_names: Vec<String>,
    /// The visit-file column each source column fills; empty for an ignored one.
    pub targets: Vec<String>,
    /// A factor into the column's unit, where the source writes another.
    factors: Vec<Option<f64>>,
    /// Lower-cased source spellings and what they stand for.
    values: Vec<(String, String)>,
    /// Visit-file column and value of each constant, added after the source's columns.
    pub constants: Vec<(String, String)>,
    decimal_comma: bool,
}

impl Mapping {
    /// The header the parser reads: targets, then the constants' columns. An ignored column
    /// has an empty name.
    pub fn header_names(&self) -> Vec<String> {
        self.targets
            .iter()
            .cloned()
            .chain(self.constants.iter().map(|(c, _)| c.clone()))
            .collect()
    }

    /// Whether any cell needs rewriting (else rows go to the parser as read).
    pub fn rewrites(&self) -> bool {
        !self.values.is_empty() || self.factors.iter().any(Option::is_some)
    }

    /// One cell as the parser should read it: the source's spelling replaced, a figure scaled
    /// into the column's unit (a mark before or after it kept).
    pub fn cell<'a>(&'a self, index: usize, text: &'a str) -> std::borrow::Cow<'a, str> {
        use std::borrow::Cow;
        let t = text.trim();
        if !self.values.is_empty() {
            let lower = t.to_lowercase();
            if let Some((_, v)) = self.values.iter().find(|(k, _)| *k == lower) {
                return Cow::Borrowed(v);
            }
        }
        let Some(Some(factor)) = self.factors.get(index) else {
            return Cow::Borrowed(text);
        };
        let (lead, rest) = match t.strip_prefix('>') {
            Some(r) => (">", r.trim()),
            None => ("", t),
        };
        let (body, tail) = match rest.strip_suffix('+') {
            Some(r) => (r.trim(), "+"),
            None => (rest, ""),
        };
        let number = if self.decimal_comma {
            body.replace(',', ".")
        } else {
            body.to_string()
        };
        match number.parse::<f64>() {
            Ok(v)
                if v.is_finite()
                    && body
                        .bytes()
                        .all(|b| b.is_ascii_digit() || b == b'.' || b == b',') =>
            {
                // Rounded to 12 significant figures, so 0.45 kΩ reads 0.00045 MΩ, not a binary
                // neighbour of it.
                let scaled = format!("{:.12e}", v * factor)
                    .parse::<f64>()
                    .unwrap_or(v * factor);
                let mut out = format_number(scaled);
                if self.decimal_comma {
                    out = out.replace('.', ",");
                }
                Cow::Owned(format!("{lead}{out}{tail}"))
            }
            _ => Cow::Borrowed(text),
        }
    }
}

/// The layout that reads ohmtrail's own visit file: every known column by its name.
pub fn is_own_header(names: &[String]) -> bool {
    names
        .iter()
        .all(|n| n.trim().is_empty() || Column::from_name(n).is_some())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_layout_reads_and_checks_its_names() {
        let l = Layout::from_toml(
            r#"
date_order = "month_first"
insulation_top_mohm = 999
ignore = ["Remarks"]
[columns]
"Circuit No" = "circuit"
"IR L-E" = "ir_le_mohm"
[units]
"IR L-E" = "gigohm"
[constants]
property_ref = "NF-014"
"#,
        )
        .unwrap();
        assert_eq!(l.date_order, DateOrder::MonthFirst);
        assert_eq!(l.columns["Circuit No"], "circuit");
        let e = Layout::from_toml("[columns]\n\"Zs\" = \"zs\"\n").unwrap_err();
        assert!(
            e.0.starts_with("[columns] \"Zs\": \"zs\" is not a visit-file column"),
            "{e}"
        );
        let e = Layout::from_toml("[columns]\n\"Zs\" = \"zs_ohm\"\n[units]\n\"Zs\" = \"gigohm\"\n")
            .unwrap_err();
        assert!(e.0.contains("\"gigohm\" is not a unit of zs_ohm"), "{e}");
        let e = Layout::from_toml("colour = 1\n").unwrap_err();
        assert!(e.0.starts_with("line 1:"), "{e}");
    }

    #[test]
    fn a_mapping_names_every_source_column_and_scales_figures() {
        let l = Layout::from_toml(
            "ignore = [\"Remarks\"]\n[columns]\n\"IR\" = \"ir_le_mohm\"\n\"Trip (s)\" = \"rcd_ms\"\n[units]\n\"IR\" = \"gigohm\"\n\"Trip (s)\" = \"s\"\n[values]\n\"Not Tested\" = \"N/T\"\n",
        )
        .unwrap();
        let names: Vec<String> = ["IR", "Trip (s)", "Remarks", "Other"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        let e = l.mapping(&names).unwrap_err();
        assert_eq!(
            e,
            vec![(
                4,
                "column \"Other\" is not in the layout: map it in [columns] or list it in ignore"
                    .to_string()
            )]
        );
        let m = l.mapping(&names[..3]).unwrap();
        assert_eq!(m.header_names(), vec!["ir_le_mohm", "rcd_ms", ""]);
        // 1.2 GΩ is 1200 MΩ; 0.025 s is 25 ms; the over-range marks stay.
        assert_eq!(m.cell(0, "1.2"), "1200");
        assert_eq!(m.cell(0, ">2"), ">2000");
        assert_eq!(m.cell(0, "2+"), "2000+");
        assert_eq!(m.cell(1, "0.025"), "25");
        assert_eq!(m.cell(1, "not tested"), "N/T");
        assert_eq!(m.cell(1, "LIM"), "LIM");
    }
}
