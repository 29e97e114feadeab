//! One reading as typed on site: which quantity it is, what the cell said, and the verdict
//! against the expected band and the limit, in words.

use serde::Serialize;

use crate::model::{Megohms, Readings};
use crate::trend::{Quantity, RingLeg};

/// A quantity that is prompted for, named by its visit-file column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Field {
    /// Ze at the origin, or Zdb at a sub-board: a board reading, not a circuit one.
    Ze,
    RingR1,
    RingRn,
    RingR2,
    R1r2,
    R2,
    R1rn,
    IrLl,
    IrLe,
    Zs,
    Rcd5x,
    Rcd,
}

/// The unit a field is read in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Unit {
    Ohm,
    Megohm,
    Ms,
}

impl Unit {
    pub fn symbol(self) -> &'static str {
        match self {
            Unit::Ohm => "Ω",
            Unit::Megohm => "MΩ",
            Unit::Ms => "ms",
        }
    }
}

impl Field {
    /// Every circuit field, in the order they are prompted: dead tests, then live ones.
    pub const CIRCUIT: [Field; 11] = [
        Field::RingR1,
        Field::RingRn,
        Field::RingR2,
        Field::R1r2,
        Field::R2,
        Field::R1rn,
        Field::IrLl,
        Field::IrLe,
        Field::Zs,
        Field::Rcd5x,
        Field::Rcd,
    ];

    /// The visit-file column name.
    pub fn column(self) -> &'static str {
        match self {
            Field::Ze => "ze_ohm",
            Field::RingR1 => "ring_r1_ohm",
            Field::RingRn => "ring_rn_ohm",
            Field::RingR2 => "ring_r2_ohm",
            Field::R1r2 => "r1r2_ohm",
            Field::R2 => "r2_ohm",
            Field::R1rn => "r1rn_ohm",
            Field::IrLl => "ir_ll_mohm",
            Field::IrLe => "ir_le_mohm",
            Field::Zs => "zs_ohm",
            Field::Rcd5x => "rcd_5x_ms",
            Field::Rcd => "rcd_ms",
        }
    }

    /// The short name: the column without its unit (`r1r2`, `zs`, `ir_le`, `rcd`, `rcd_5x`,
    /// `ring_r1`), as the worklist and the trend name the quantity.
    pub fn key(self) -> &'static str {
        let c = self.column();
        c.rsplit_once('_').map_or(c, |(key, _unit)| key)
    }

    /// The field named by its column (canonical) or its short name, in any ASCII case.
    pub fn from_column(s: &str) -> Option<Field> {
        let t = s.trim().to_ascii_lowercase();
        std::iter::once(Field::Ze)
            .chain(Field::CIRCUIT)
            .find(|f| f.column() == t || f.key() == t)
    }

    /// The trade's name for it.
    pub fn label(self) -> &'static str {
        match self {
            Field::Ze => "Ze",
            Field::RingR1 => "ring r1",
            Field::RingRn => "ring rn",
            Field::RingR2 => "ring r2",
            Field::R1r2 => "R1+R2",
            Field::R2 => "R2",
            Field::R1rn => "R1+Rn",
            Field::IrLl => "IR L–L",
            Field::IrLe => "IR L–E",
            Field::Zs => "Zs",
            Field::Rcd5x => "RCD at 5 × IΔn",
            Field::Rcd => "RCD at 1 × IΔn",
        }
    }

    pub fn unit(self) -> Unit {
        match self {
            Field::IrLl | Field::IrLe => Unit::Megohm,
            Field::Rcd5x | Field::Rcd => Unit::Ms,
            _ => Unit::Ohm,
        }
    }

    /// The trend quantity whose series and noise floor this field uses.
    pub fn quantity(self) -> Quantity {
        match self {
            Field::Ze => Quantity::Ze,
            Field::RingR1 => Quantity::Ring(RingLeg::R1),
            Field::RingRn => Quantity::Ring(RingLeg::Rn),
            Field::RingR2 => Quantity::Ring(RingLeg::R2),
            Field::R1r2 => Quantity::R1r2,
            Field::R2 => Quantity::R2,
            Field::R1rn => Quantity::R1rn,
            Field::IrLl => Quantity::IrLl,
            Field::IrLe => Quantity::IrLe,
            Field::Zs => Quantity::Zs,
            Field::Rcd5x | Field::Rcd => Quantity::Rcd,
        }
    }

    /// Whether the field is an insulation resistance (log scale, over-range allowed, a minimum).
    pub fn is_insulation(self) -> bool {
        matches!(self, Field::IrLl | Field::IrLe)
    }

    /// The stored reading of this field, if any. Ze is a board reading and never in `Readings`.
    pub fn get(self, r: &Readings) -> Option<Megohms> {
        let plain = |v: Option<f64>| {
            v.map(|value| Megohms {
                value,
                over_range: false,
            })
        };
        match self {
            Field::Ze => None,
            Field::RingR1 => plain(r.ring_r1_ohm),
            Field::RingRn => plain(r.ring_rn_ohm),
            Field::RingR2 => plain(r.ring_r2_ohm),
            Field::R1r2 => plain(r.r1r2_ohm),
            Field::R2 => plain(r.r2_ohm),
            Field::R1rn => plain(r.r1rn_ohm),
            Field::IrLl => r.ir_ll,
            Field::IrLe => r.ir_le,
            Field::Zs => plain(r.zs_ohm),
            Field::Rcd5x => plain(r.rcd_5x_ms),
            Field::Rcd => plain(r.rcd_ms),
        }
    }

    /// Whether something was stored for this field: a reading or a recorded limitation.
    pub fn answered(self, r: &Readings) -> bool {
        self.get(r).is_some() || r.limitations.iter().any(|c| c == self.column())
    }

    /// Put an entry into a circuit's readings. A value clears a limitation and the reverse;
    /// `N/A` clears both; a skip changes nothing.
    pub fn apply(self, r: &mut Readings, entry: &Entry) {
        let value = match *entry {
            Entry::Skip => return,
            Entry::Value(v) => Some(Megohms {
                value: v,
                over_range: false,
            }),
            Entry::OverRange(v) => Some(Megohms {
                value: v,
                over_range: true,
            }),
            Entry::Limitation | Entry::NotApplicable => None,
        };
        let col = self.column();
        r.limitations.retain(|c| c != col);
        if *entry == Entry::Limitation {
            r.limitations.push(col.to_string());
        }
        let plain = value.map(|m| m.value);
        match self {
            Field::Ze => {}
            Field::RingR1 => r.ring_r1_ohm = plain,
            Field::RingRn => r.ring_rn_ohm = plain,
            Field::RingR2 => r.ring_r2_ohm = plain,
            Field::R1r2 => r.r1r2_ohm = plain,
            Field::R2 => r.r2_ohm = plain,
            Field::R1rn => r.r1rn_ohm = plain,
            Field::IrLl => r.ir_ll = value,
            Field::IrLe => r.ir_le = value,
            Field::Zs => r.zs_ohm = plain,
            Field::Rcd5x => r.rcd_5x_ms = plain,
            Field::Rcd => r.rcd_ms = plain,
        }
    }
}

impl std::fmt::Display for Field {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.label())
    }
}

/// What was typed for one prompt.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub enum Entry {
    /// Enter alone: nothing stored, the prompt is passed.
    Skip,
    Value(f64),
    /// `>200`: over range, the reading is at least this (insulation resistance only).
    OverRange(f64),
    /// `LIM`: a recorded limitation.
    Limitation,
    /// `N/A`: not applicable, nothing stored.
    NotApplicable,
}

/// Why a typed value was refused. Each message names what was typed and what is expected.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EntryError {
    #[error("{text:?} is not a reading: expected a number in {unit}, LIM, N/A, or Enter to skip")]
    NotANumber { text: String, unit: &'static str },
    #[error("{text:?} has a decimal comma: write a decimal point, e.g. 0.35")]
    DecimalComma { text: String },
    #[error("{text:?} is negative: a reading in {unit} cannot be below 0")]
    Negative { text: String, unit: &'static str },
    #[error("{text:?} is in {given}, but {label} is read in {unit}")]
    WrongUnit {
        text: String,
        given: &'static str,
        label: &'static str,
        unit: &'static str,
    },
    #[error("{text:?} has an unknown unit {given:?}: expected {unit} or no unit")]
    UnknownUnit {
        text: String,
        given: String,
        unit: &'static str,
    },
    #[error("{text:?}: an over-range reading (>200, 200+) is for insulation resistance only")]
    OverRangeNotInsulation { text: String },
    #[error("{text:?} is out of range: expected at most {max} {unit}")]
    TooLarge {
        text: String,
        max: f64,
        unit: &'static str,
    },
}

/// Units a reading may carry, as written, with what they are. Anything else is unknown.
const UNITS: &[(&str, Option<Unit>, &str)] = &[
    ("Ω", Some(Unit::Ohm), "Ω"),
    ("\u{2126}", Some(Unit::Ohm), "Ω"),
    ("ohm", Some(Unit::Ohm), "Ω"),
    ("ohms", Some(Unit::Ohm), "Ω"),
    ("MΩ", Some(Unit::Megohm), "MΩ"),
    ("M\u{2126}", Some(Unit::Megohm), "MΩ"),
    ("Mohm", Some(Unit::Megohm), "MΩ"),
    ("Mohms", Some(Unit::Megohm), "MΩ"),
    ("megohm", Some(Unit::Megohm), "MΩ"),
    ("megohms", Some(Unit::Megohm), "MΩ"),
    ("M", Some(Unit::Megohm), "MΩ"),
    ("ms", Some(Unit::Ms), "ms"),
    // Units that are readings of something, but not of any field here.
    ("mΩ", None, "mΩ"),
    ("m\u{2126}", None, "mΩ"),
    ("kΩ", None, "kΩ"),
    ("k\u{2126}", None, "kΩ"),
    ("GΩ", None, "GΩ"),
    ("s", None, "s"),
    ("V", None, "V"),
    ("A", None, "A"),
    ("mA", None, "mA"),
];

/// Largest value accepted per unit: far beyond any real reading, to catch a slipped key.
fn max_for(u: Unit) -> f64 {
    match u {
        Unit::Ohm => 100_000.0,
        Unit::Megohm => 1_000_000.0,
        Unit::Ms => 10_000.0,
    }
}

/// Parse what was typed for a field: a number with an optional unit that must match the
/// field, `>200` or `200+` (over range, insulation only), `LIM`, `N/A` (also `NA`, `-`), or
/// empty to skip.
pub fn parse_entry(field: Field, text: &str) -> Result<Entry, EntryError> {
    let t = text.trim();
    if t.is_empty() {
        return Ok(Entry::Skip);
    }
    let upper = t.to_ascii_uppercase();
    if upper == "LIM" {
        return Ok(Entry::Limitation);
    }
    if matches!(upper.as_str(), "N/A" | "NA" | "-") {
        return Ok(Entry::NotApplicable);
    }
    let unit = field.unit();
    let (over, body) = match t.strip_prefix('>') {
        Some(rest) => (true, rest.trim_start()),
        None => (false, t),
    };
    if over && !field.is_insulation() {
        return Err(EntryError::OverRangeNotInsulation { text: t.into() });
    }
    let split = body
        .char_indices()
        .find(|(_, c)| !(c.is_ascii_digit() || *c == '.' || *c == '-' || *c == '+'))
        .map(|(i, _)| i)
        .unwrap_or(body.len());
    let (num, rest) = body.split_at(split);
    // `999+` is how some instruments show over range: the same lower bound as `>999`.
    let (over, num) = match num.strip_suffix('+') {
        Some(n) if !over && n.starts_with(|c: char| c.is_ascii_digit()) => (true, n),
        _ => (over, num),
    };
    if over && !field.is_insulation() {
        return Err(EntryError::OverRangeNotInsulation { text: t.into() });
    }
    let rest = rest.trim();
    if rest.starts_with(',') && rest[1..].starts_with(|c: char| c.is_ascii_digit()) {
        return Err(EntryError::DecimalComma { text: t.into() });
    }
    let value: f64 = num.parse().map_err(|_| EntryError::NotANumber {
        text: t.into(),
        unit: unit.symbol(),
    })?;
    if !value.is_finite() {
        return Err(EntryError::NotANumber {
            text: t.into(),
            unit: unit.symbol(),
        });
    }
    if !rest.is_empty() {
        let known = UNITS.iter().find(|(w, _, _)| *w == rest).or_else(|| {
            // Spelled-out units in any case; symbols keep their case (mΩ is not MΩ).
            UNITS.iter().find(|(w, _, _)| {
                w.chars().all(|c| c.is_ascii_alphabetic())
                    && w.len() > 1
                    && w.eq_ignore_ascii_case(rest)
                    && !w.starts_with('M')
            })
        });
        match known {
            Some((_, Some(u), _)) if *u == unit => {}
            Some((_, _, given)) => {
                return Err(EntryError::WrongUnit {
                    text: t.into(),
                    given,
                    label: field.label(),
                    unit: unit.symbol(),
                });
            }
            None => {
                return Err(EntryError::UnknownUnit {
                    text: t.into(),
                    given: rest.into(),
                    unit: unit.symbol(),
                });
            }
        }
    }
    if value < 0.0 || num.starts_with('-') {
        return Err(EntryError::Negative {
            text: t.into(),
            unit: unit.symbol(),
        });
    }
    if value > max_for(unit) {
        return Err(EntryError::TooLarge {
            text: t.into(),
            max: max_for(unit),
            unit: unit.symbol(),
        });
    }
    Ok(if over {
        Entry::OverRange(value)
    } else {
        Entry::Value(value)
    })
}

/// A value in its unit with sensible places: Ω to 2 dp, ms whole, MΩ to 3 significant figures.
pub fn fmt_in(unit: Unit, v: f64) -> String {
    match unit {
        Unit::Ohm => format!("{v:.2} Ω"),
        Unit::Ms => format!("{} ms", ms(v)),
        Unit::Megohm => format!("{} MΩ", sig3(v)),
    }
}

/// The number alone, as `fmt_in` writes it.
pub fn fmt_num(unit: Unit, v: f64) -> String {
    match unit {
        Unit::Ohm => format!("{v:.2}"),
        Unit::Ms => ms(v),
        Unit::Megohm => sig3(v),
    }
}

/// A value rounded as it is shown, so a verdict agrees with the figures on the screen.
pub fn as_shown(unit: Unit, v: f64) -> f64 {
    fmt_num(unit, v).parse().unwrap_or(v)
}

/// Whole milliseconds, or tenths when the value has them.
fn ms(v: f64) -> String {
    if (v - v.round()).abs() < 0.05 {
        format!("{v:.0}")
    } else {
        format!("{v:.1}")
    }
}

fn sig3(v: f64) -> String {
    if v >= 100.0 {
        format!("{v:.0}")
    } else if v >= 10.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.2}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn accepts_the_visit_file_forms() {
        assert_eq!(parse_entry(Field::R1r2, ""), Ok(Entry::Skip));
        assert_eq!(parse_entry(Field::R1r2, "  "), Ok(Entry::Skip));
        assert_eq!(parse_entry(Field::R1r2, "0.47"), Ok(Entry::Value(0.47)));
        assert_eq!(parse_entry(Field::R1r2, "0.47Ω"), Ok(Entry::Value(0.47)));
        assert_eq!(parse_entry(Field::R1r2, "0.47 ohm"), Ok(Entry::Value(0.47)));
        assert_eq!(parse_entry(Field::R1r2, ".5 Ohms"), Ok(Entry::Value(0.5)));
        assert_eq!(
            parse_entry(Field::IrLe, ">200"),
            Ok(Entry::OverRange(200.0))
        );
        assert_eq!(
            parse_entry(Field::IrLe, "> 999 MΩ"),
            Ok(Entry::OverRange(999.0))
        );
        assert_eq!(parse_entry(Field::IrLe, "200 MΩ"), Ok(Entry::Value(200.0)));
        assert_eq!(parse_entry(Field::Rcd5x, "18ms"), Ok(Entry::Value(18.0)));
        assert_eq!(parse_entry(Field::Zs, "lim"), Ok(Entry::Limitation));
        assert_eq!(parse_entry(Field::Zs, "N/A"), Ok(Entry::NotApplicable));
        assert_eq!(parse_entry(Field::Zs, "na"), Ok(Entry::NotApplicable));
        assert_eq!(parse_entry(Field::Zs, "-"), Ok(Entry::NotApplicable));
    }

    #[test]
    fn refuses_what_no_instrument_shows_with_a_reason() {
        let e = parse_entry(Field::R1r2, "abc").unwrap_err();
        assert!(matches!(e, EntryError::NotANumber { .. }), "{e}");
        assert!(e.to_string().contains("expected a number in Ω"), "{e}");
        let e = parse_entry(Field::R1r2, "-0.2").unwrap_err();
        assert!(matches!(e, EntryError::Negative { .. }), "{e}");
        let e = parse_entry(Field::R1r2, "0.35 MΩ").unwrap_err();
        assert_eq!(
            e.to_string(),
            "\"0.35 MΩ\" is in MΩ, but R1+R2 is read in Ω"
        );
        // mΩ is not MΩ: symbols keep their case.
        assert!(matches!(
            parse_entry(Field::IrLe, "5 mΩ"),
            Err(EntryError::WrongUnit { .. })
        ));
        assert!(matches!(
            parse_entry(Field::Rcd, "0.02 s"),
            Err(EntryError::WrongUnit { .. })
        ));
        assert!(matches!(
            parse_entry(Field::R1r2, "0.3 furlongs"),
            Err(EntryError::UnknownUnit { .. })
        ));
        assert!(matches!(
            parse_entry(Field::R1r2, ">2"),
            Err(EntryError::OverRangeNotInsulation { .. })
        ));
        // Some instruments show over range as 999+: the same lower bound as >999.
        assert_eq!(
            parse_entry(Field::IrLe, "999+"),
            Ok(Entry::OverRange(999.0))
        );
        assert_eq!(
            parse_entry(Field::IrLl, "999+ MΩ"),
            Ok(Entry::OverRange(999.0))
        );
        assert!(matches!(
            parse_entry(Field::Zs, "2+"),
            Err(EntryError::OverRangeNotInsulation { .. })
        ));
        assert!(parse_entry(Field::IrLe, ">999+").is_err());
        assert!(matches!(
            parse_entry(Field::R1r2, "0,35"),
            Err(EntryError::DecimalComma { .. })
        ));
        assert!(parse_entry(Field::R1r2, "NaN").is_err());
        assert!(parse_entry(Field::R1r2, "inf").is_err());
        assert!(parse_entry(Field::R1r2, "1e999").is_err());
        assert!(parse_entry(Field::R1r2, "0.4.5").is_err());
        assert!(matches!(
            parse_entry(Field::R1r2, "250000"),
            Err(EntryError::TooLarge { .. })
        ));
    }

    #[test]
    fn apply_keeps_value_and_limitation_apart() {
        let mut r = Readings::default();
        Field::Zs.apply(&mut r, &Entry::Limitation);
        assert!(Field::Zs.answered(&r));
        assert_eq!(r.zs_ohm, None);
        assert_eq!(r.limitations, vec!["zs_ohm".to_string()]);
        Field::Zs.apply(&mut r, &Entry::Value(0.61));
        assert_eq!(r.zs_ohm, Some(0.61));
        assert!(r.limitations.is_empty());
        Field::IrLe.apply(&mut r, &Entry::OverRange(200.0));
        assert_eq!(
            r.ir_le,
            Some(Megohms {
                value: 200.0,
                over_range: true
            })
        );
        Field::Zs.apply(&mut r, &Entry::Skip);
        assert_eq!(r.zs_ohm, Some(0.61));
        Field::Zs.apply(&mut r, &Entry::NotApplicable);
        assert_eq!(r.zs_ohm, None);
        assert!(!Field::Zs.answered(&r));
        for f in Field::CIRCUIT {
            assert_eq!(Field::from_column(f.column()), Some(f));
        }
    }
}

/// What is typed on site and what is written in a visit file are read alike: the same
/// readings accepted, with the same values, and the same ones refused.
#[cfg(test)]
mod agrees_with_the_visit_file {
    use super::*;
    use crate::import::cell::{Cell, Column, ParseOptions, parse_cell};

    #[test]
    fn entry_and_cell_agree() {
        let opts = ParseOptions::new(chrono::NaiveDate::from_ymd_opt(2026, 1, 1).unwrap());
        let inputs = [
            "0.47",
            "0.47Ω",
            "0.47 ohm",
            "0.47 ohms",
            "200 MΩ",
            "200 Mohm",
            "25ms",
            "25 ms",
            ">200",
            "> 999",
            "LIM",
            "lim",
            "N/A",
            "NA",
            "-",
            "",
            "abc",
            "-0.52",
            "0,35",
            "0.35 MΩ",
            "0.5x",
            "1e3",
            "NaN",
            "inf",
        ];
        for field in std::iter::once(Field::Ze).chain(Field::CIRCUIT) {
            let column = Column::from_name(field.column()).expect("a visit-file column");
            for text in inputs {
                let entry = parse_entry(field, text);
                let cell = parse_cell(column, text, &opts);
                let same = match (&entry, &cell) {
                    (Ok(Entry::Skip | Entry::NotApplicable), Ok(Cell::Missing)) => true,
                    (Ok(Entry::NotApplicable), Ok(Cell::NotApplicable)) => true,
                    (Ok(Entry::Limitation), Ok(Cell::Limitation)) => true,
                    (Ok(Entry::Value(a)), Ok(Cell::Number(b))) => a == b,
                    (Ok(Entry::OverRange(a)), Ok(Cell::OverRange(b))) => a == b,
                    (Err(_), Err(_)) => true,
                    _ => false,
                };
                assert!(
                    same,
                    "{field:?} {text:?}: on site {entry:?}, in a file {cell:?}"
                );
            }
        }
    }
}
