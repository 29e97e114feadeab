//! The register fields a visit row may carry: as the change log writes them, and as they
//! stood on a date.

use chrono::NaiveDate;

use super::{Column, RowRegister};
use crate::store::{CircuitDetails, IngestChange, fmt_num};

/// The register fields a row may carry, with the change-log field name for each.
pub(super) const REGISTER: [(Column, &str); 16] = [
    (Column::Description, "description"),
    (Column::Ring, "kind"),
    (Column::Device, "device"),
    (Column::RcdMa, "rcd_ma"),
    (Column::LiveMm2, "live_mm2"),
    (Column::CpcMm2, "cpc_mm2"),
    (Column::LengthM, "length_m"),
    (Column::RcdType, "rcd_type"),
    (Column::RcdDelay, "rcd_delay"),
    (Column::Insulation, "insulation"),
    (Column::WiringType, "wiring_type"),
    (Column::RefMethod, "ref_method"),
    (Column::Points, "points"),
    (Column::BreakingKa, "breaking_ka"),
    (Column::Afdd, "afdd"),
    (Column::RcdId, "rcd_id"),
];

/// Register details as the change log writes them, in [`REGISTER`] order.
pub fn register_texts(d: &CircuitDetails) -> [Option<String>; 16] {
    [
        d.description.clone(),
        d.kind.map(|k| k.as_str().to_string()),
        d.device.map(|x| x.to_string()),
        d.rcd_ma.map(|x| x.to_string()),
        d.live_mm2.map(fmt_num),
        d.cpc_mm2.map(fmt_num),
        d.length_m.map(fmt_num),
        d.rcd_type.map(|t| t.as_str().to_string()),
        d.rcd_delay.map(|t| t.as_str().to_string()),
        d.insulation.map(|t| t.as_str().to_string()),
        d.wiring_type.clone(),
        d.ref_method.map(|t| t.as_str().to_string()),
        d.points.map(|n| n.to_string()),
        d.breaking_ka.map(fmt_num),
        d.afdd.map(|a| if a { "yes" } else { "no" }.to_string()),
        d.rcd_id.clone(),
    ]
}

/// Whether every register field the row gives equals the register's.
pub(super) fn register_agrees(d: &CircuitDetails, r: &RowRegister) -> bool {
    fn same<T: PartialEq>(row: &Option<T>, reg: &Option<T>) -> bool {
        row.is_none() || row == reg
    }
    same(&r.description, &d.description)
        && same(&r.kind, &d.kind)
        && same(&r.device, &d.device)
        && same(&r.rcd_ma, &d.rcd_ma)
        && same(&r.live_mm2, &d.live_mm2)
        && same(&r.cpc_mm2, &d.cpc_mm2)
        && same(&r.length_m, &d.length_m)
        && same(&r.rcd_type, &d.rcd_type)
        && same(&r.rcd_delay, &d.rcd_delay)
        && same(&r.insulation, &d.insulation)
        && same(&r.wiring_type, &d.wiring_type)
        && same(&r.ref_method, &d.ref_method)
        && same(&r.points, &d.points)
        && same(&r.breaking_ka, &d.breaking_ka)
        && same(&r.afdd, &d.afdd)
        // An RCD's identifier matches without regard to case, as the register keeps it.
        && match (&r.rcd_id, &d.rcd_id) {
            (None, _) => true,
            (Some(a), Some(b)) => a.eq_ignore_ascii_case(b),
            (Some(_), None) => false,
        }
}

/// Set one register field from its change-log text.
pub(super) fn apply_text(d: &mut CircuitDetails, field: &str, v: Option<&str>) {
    let num = |v: Option<&str>| v.and_then(|t| t.parse().ok());
    match field {
        "description" => d.description = v.map(String::from),
        "kind" => d.kind = v.and_then(|t| t.parse().ok()),
        "device" => d.device = v.and_then(|t| t.parse().ok()),
        "rcd_ma" => d.rcd_ma = v.and_then(|t| t.parse().ok()),
        "live_mm2" => d.live_mm2 = num(v),
        "cpc_mm2" => d.cpc_mm2 = num(v),
        "length_m" => d.length_m = num(v),
        "rcd_type" => {
            d.rcd_type = v.and_then(|t| t.parse::<crate::model::RcdMarking>().ok()?.waveform)
        }
        "rcd_delay" => d.rcd_delay = v.and_then(|t| t.parse().ok()),
        "insulation" => d.insulation = v.and_then(|t| t.parse().ok()),
        "wiring_type" => d.wiring_type = v.map(String::from),
        "ref_method" => d.ref_method = v.and_then(|t| t.parse().ok()),
        "points" => d.points = v.and_then(|t| t.parse().ok()),
        "breaking_ka" => d.breaking_ka = num(v),
        "afdd" => d.afdd = v.map(|t| t == "yes"),
        "rcd_id" => d.rcd_id = v.map(String::from),
        _ => {}
    }
}

pub(super) fn row_register_details(r: &RowRegister) -> CircuitDetails {
    CircuitDetails {
        description: r.description.clone(),
        kind: r.kind,
        live_mm2: r.live_mm2,
        cpc_mm2: r.cpc_mm2,
        length_m: r.length_m,
        device: r.device,
        rcd_ma: r.rcd_ma,
        rcd_type: r.rcd_type,
        rcd_delay: r.rcd_delay,
        insulation: r.insulation,
        wiring_type: r.wiring_type.clone(),
        ref_method: r.ref_method,
        points: r.points,
        breaking_ka: r.breaking_ka,
        afdd: r.afdd,
        rcd_id: r.rcd_id.clone(),
        ..Default::default()
    }
}

/// A register field's value at `date`: the value before the first later change, else now.
pub fn register_at(
    current: &[Option<String>; 16],
    changes: &[IngestChange],
    date: NaiveDate,
) -> [Option<String>; 16] {
    let mut out = current.clone();
    for (i, (_, field)) in REGISTER.iter().enumerate() {
        if let Some(c) = changes
            .iter()
            .find(|c| c.date > date && c.field.as_deref() == Some(field))
        {
            out[i] = c.old_value.clone();
        }
    }
    out
}
