//! A test record's reading columns as a visit file shows them: the text of a cell, whether a
//! file's cell says the same as the stored one, and copying one column across.

use super::cell::{Column, format_number};
use crate::model::{Megohms, Readings};

/// A reading's cell text as export writes it (`LIM` for a limitation), or `None`.
/// For `ze_ohm` only the limitation lives in the record; its value is a board test.
pub fn reading_text(r: &Readings, c: Column) -> Option<String> {
    if r.limitations.iter().any(|l| l == c.name()) {
        return Some("LIM".to_string());
    }
    let num = |v: Option<f64>| v.map(format_number);
    let mohm = |m: Option<Megohms>| {
        m.map(|m| {
            if m.over_range {
                format!(">{}", format_number(m.value))
            } else {
                format_number(m.value)
            }
        })
    };
    match c {
        Column::RingR1Ohm => num(r.ring_r1_ohm),
        Column::RingRnOhm => num(r.ring_rn_ohm),
        Column::RingR2Ohm => num(r.ring_r2_ohm),
        Column::R1r2Ohm => num(r.r1r2_ohm),
        Column::R2Ohm => num(r.r2_ohm),
        Column::R1rnOhm => num(r.r1rn_ohm),
        Column::ZsOhm => num(r.zs_ohm),
        Column::IrLlMohm => mohm(r.ir_ll),
        Column::IrLeMohm => mohm(r.ir_le),
        Column::RcdMs => num(r.rcd_ms),
        Column::Rcd5xMs => num(r.rcd_5x_ms),
        Column::Note => r.note.clone(),
        Column::Polarity => r.polarity.map(|p| p.as_str().to_string()),
        Column::IrTestV => r.ir_test_v.map(|v| v.to_string()),
        Column::RcdButton => r.rcd_button.map(|b| b.as_str().to_string()),
        _ => None,
    }
}

/// Whether two records give the same text for a reading column, as [`reading_text`] compares
/// them, without building the text when the values are bit for bit the same (most rows of a
/// file imported again).
pub(super) fn same_reading(a: &Readings, b: &Readings, c: Column) -> bool {
    let limited = |r: &Readings| r.limitations.iter().any(|l| l == c.name());
    let bits = |v: Option<f64>| v.map(f64::to_bits);
    let mohm = |m: Option<Megohms>| m.map(|m| (m.value.to_bits(), m.over_range));
    let identical = limited(a) == limited(b)
        && match c {
            Column::RingR1Ohm => bits(a.ring_r1_ohm) == bits(b.ring_r1_ohm),
            Column::RingRnOhm => bits(a.ring_rn_ohm) == bits(b.ring_rn_ohm),
            Column::RingR2Ohm => bits(a.ring_r2_ohm) == bits(b.ring_r2_ohm),
            Column::R1r2Ohm => bits(a.r1r2_ohm) == bits(b.r1r2_ohm),
            Column::R2Ohm => bits(a.r2_ohm) == bits(b.r2_ohm),
            Column::R1rnOhm => bits(a.r1rn_ohm) == bits(b.r1rn_ohm),
            Column::ZsOhm => bits(a.zs_ohm) == bits(b.zs_ohm),
            Column::IrLlMohm => mohm(a.ir_ll) == mohm(b.ir_ll),
            Column::IrLeMohm => mohm(a.ir_le) == mohm(b.ir_le),
            Column::RcdMs => bits(a.rcd_ms) == bits(b.rcd_ms),
            Column::Rcd5xMs => bits(a.rcd_5x_ms) == bits(b.rcd_5x_ms),
            Column::Note => a.note == b.note,
            Column::Polarity => a.polarity == b.polarity,
            Column::IrTestV => a.ir_test_v == b.ir_test_v,
            Column::RcdButton => a.rcd_button == b.rcd_button,
            _ => true,
        };
    identical || reading_text(a, c) == reading_text(b, c)
}

/// Copy one reading column (value and limitation mark) from `src` into `dst`.
pub(super) fn copy_reading(dst: &mut Readings, src: &Readings, c: Column) {
    match c {
        Column::RingR1Ohm => dst.ring_r1_ohm = src.ring_r1_ohm,
        Column::RingRnOhm => dst.ring_rn_ohm = src.ring_rn_ohm,
        Column::RingR2Ohm => dst.ring_r2_ohm = src.ring_r2_ohm,
        Column::R1r2Ohm => dst.r1r2_ohm = src.r1r2_ohm,
        Column::R2Ohm => dst.r2_ohm = src.r2_ohm,
        Column::R1rnOhm => dst.r1rn_ohm = src.r1rn_ohm,
        Column::ZsOhm => dst.zs_ohm = src.zs_ohm,
        Column::IrLlMohm => dst.ir_ll = src.ir_ll,
        Column::IrLeMohm => dst.ir_le = src.ir_le,
        Column::RcdMs => dst.rcd_ms = src.rcd_ms,
        Column::Rcd5xMs => dst.rcd_5x_ms = src.rcd_5x_ms,
        Column::Note => dst.note = src.note.clone(),
        Column::Polarity => dst.polarity = src.polarity,
        Column::IrTestV => dst.ir_test_v = src.ir_test_v,
        Column::RcdButton => dst.rcd_button = src.rcd_button,
        _ => {}
    }
    dst.limitations.retain(|l| l != c.name());
    if src.limitations.iter().any(|l| l == c.name()) {
        dst.limitations.push(c.name().to_string());
    }
    let mut cols: Vec<Column> = dst
        .limitations
        .iter()
        .filter_map(|l| Column::from_name(l))
        .collect();
    cols.sort();
    dst.limitations = cols.iter().map(|c| c.name().to_string()).collect();
}

#[cfg(test)]
mod tests {
    use super::*;

    fn with(c: Column, v: f64) -> Readings {
        let mut r = Readings::default();
        match c {
            Column::R1r2Ohm => r.r1r2_ohm = Some(v),
            Column::IrLeMohm => {
                r.ir_le = Some(Megohms {
                    value: v,
                    over_range: false,
                })
            }
            _ => r.zs_ohm = Some(v),
        }
        r
    }

    /// The shortcut on identical values must agree with comparing the text, both ways.
    #[test]
    fn same_reading_agrees_with_the_text() {
        let values = [0.0, 0.1, 0.30000000000000004, 0.3, 1e-7, 2e-7, 200.0, 0.35];
        for c in [Column::R1r2Ohm, Column::IrLeMohm, Column::ZsOhm] {
            for a in values {
                for b in values {
                    let (ra, rb) = (with(c, a), with(c, b));
                    assert_eq!(
                        same_reading(&ra, &rb, c),
                        reading_text(&ra, c) == reading_text(&rb, c),
                        "{c:?} {a} {b}"
                    );
                }
            }
            let mut lim = with(c, 0.1);
            lim.limitations.push(c.name().to_string());
            assert!(!same_reading(&lim, &with(c, 0.1), c));
            assert!(same_reading(&lim, &lim.clone(), c));
        }
        let mut over = with(Column::IrLeMohm, 200.0);
        over.ir_le.as_mut().unwrap().over_range = true;
        assert!(!same_reading(
            &over,
            &with(Column::IrLeMohm, 200.0),
            Column::IrLeMohm
        ));
    }
}
