//! One circuit, one row: the worklist groups a circuit's flags into one entry ranked by its
//! most serious, with the others kept as supporting findings. The supply (Ze) flags of a
//! property are one row too. This is a pass over the flags after they are made, so how a flag
//! is made does not need to know about it.

use std::cmp::Ordering;

use chrono::NaiveDate;
use serde::{Serialize, Serializer};

use super::Flag;
use crate::trend;

/// Group one property's flags by circuit (and the supply by itself), most serious first.
/// Each row carries the fields of its most serious finding and, in `findings`, every finding
/// grouped in it, most serious first.
pub fn group(mut flags: Vec<Flag>) -> Vec<Flag> {
    rank(&mut flags);
    let mut rows: Vec<Flag> = Vec::new();
    for f in flags {
        // One property's rows are few: a scan finds the circuit's. A property's inspection
        // row never shares a row with its supply's.
        let same = |r: &&mut Flag| {
            r.circuit == f.circuit
                && r.board == f.board
                && r.property_ref == f.property_ref
                && (r.quantity == "inspection") == (f.quantity == "inspection")
        };
        match rows.iter_mut().find(same) {
            Some(row) => row.findings.push(f),
            None => {
                let mut row = f.clone();
                row.findings = vec![f];
                rows.push(row);
            }
        }
    }
    rows
}

/// Sort flags (or rows) most urgent first. Overdue remedial work comes first of all: a danger
/// or potential danger the inspector recorded (C1, C2) or an investigation required (FI), past
/// the date the regulation gives; C1 before C2 before FI, then the most days overdue. Then
/// exceeds, approaching and changed, by the trend engine's order
/// ([`trend::compare_urgency`]). A row with no trend finding behind it (an overdue inspection,
/// always an exceeds) goes among the exceeds by the share of its limit used, before the first
/// exceeds that uses less; ties keep the trend's row first.
pub fn rank(flags: &mut Vec<Flag>) {
    let (mut remedial, rest): (Vec<Flag>, Vec<Flag>) =
        flags.drain(..).partition(|f| f.code.is_some());
    remedial.sort_by(|a, b| {
        code_rank(a)
            .cmp(&code_rank(b))
            .then_with(|| overdue_days(b).total_cmp(&overdue_days(a)))
            .then_with(|| place(a, b))
    });
    flags.extend(remedial);
    let (mut trend_rows, mut others): (Vec<Flag>, Vec<Flag>) =
        rest.into_iter().partition(|f| f.finding.is_some());
    trend_rows.sort_by(|a, b| match (&a.finding, &b.finding) {
        (Some(x), Some(y)) => trend::compare_urgency(x, y).then_with(|| place(a, b)),
        _ => place(a, b),
    });
    others.sort_by(|a, b| share(b).total_cmp(&share(a)).then_with(|| place(a, b)));
    let mut others = others.into_iter().peekable();
    for t in trend_rows {
        while let Some(o) = others.peek()
            && goes_before(o, &t)
        {
            flags.extend(others.next());
        }
        flags.push(t);
    }
    flags.extend(others);
}

/// C1, C2, FI: the order of overdue remedial rows.
fn code_rank(f: &Flag) -> u8 {
    use crate::model::ObservationCode;
    match f.code {
        Some(ObservationCode::C1) => 0,
        Some(ObservationCode::C2) => 1,
        Some(ObservationCode::FI) => 2,
        _ => 3,
    }
}

/// Days past the period: the day of the period less its length.
fn overdue_days(f: &Flag) -> f64 {
    f.last_value - f.limit.unwrap_or(f.last_value)
}

/// Property, board, circuit: the order among equally urgent rows.
fn place(a: &Flag, b: &Flag) -> Ordering {
    a.property_ref
        .cmp(&b.property_ref)
        .then_with(|| a.board.cmp(&b.board))
        .then_with(|| a.circuit.cmp(&b.circuit))
}

/// The share of the limit used, as a fraction; a row with none sorts last. A row with no
/// trend finding gives it as its margin (a minimum's is the limit over the value), else as the
/// value over the limit.
fn share(f: &Flag) -> f64 {
    match &f.finding {
        Some(x) => x.margin_used,
        None => f
            .margin_used_pct
            .map(|m| m / 100.0)
            .or_else(|| f.limit.filter(|l| *l > 0.0).map(|l| f.last_value / l)),
    }
    .unwrap_or(f64::NEG_INFINITY)
}

/// Whether a row with no trend finding goes before trend row `t`.
fn goes_before(other: &Flag, t: &Flag) -> bool {
    t.severity != "exceeds" || share(t) < share(other)
}

/// A grouped finding as the worklist's JSON gives it: the row's place is not repeated.
#[derive(Serialize)]
struct FindingJson<'a> {
    quantity: &'static str,
    kind: &'static str,
    severity: &'static str,
    reason: &'a str,
    last_value: f64,
    last_date: NaiveDate,
    limit: Option<f64>,
    projected_date: Option<NaiveDate>,
    projected_earliest: Option<NaiveDate>,
    limit_source: Option<&'a str>,
    margin_used_pct: Option<f64>,
    recommended_interval_months: Option<u32>,
}

pub(super) fn serialize_findings<S: Serializer>(
    findings: &[Flag],
    s: S,
) -> Result<S::Ok, S::Error> {
    s.collect_seq(findings.iter().map(|f| FindingJson {
        quantity: f.quantity,
        kind: f.kind,
        severity: f.severity,
        reason: &f.reason,
        last_value: f.last_value,
        last_date: f.last_date,
        limit: f.limit,
        projected_date: f.projected_date,
        projected_earliest: f.projected_earliest,
        limit_source: f.limit_source.as_deref(),
        margin_used_pct: f.margin_used_pct,
        recommended_interval_months: f.recommended_interval_months,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::trend::{Finding, FindingKind, Quantity};

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    /// A flag on CU1 (circuit `None` for the supply) with the figures the ranking reads: the
    /// share of the limit used, or a change against its noise floor.
    fn flag(
        circuit: Option<&str>,
        quantity: (&'static str, Quantity),
        kind: FindingKind,
        margin: Option<f64>,
        change: Option<(f64, f64)>,
    ) -> Flag {
        let mut f = Finding::new(kind, quantity.1, d(2025, 6, 3), format!("{kind:?}"));
        f.margin_used = margin;
        if let Some((c, floor)) = change {
            f.change = Some(c);
            f.floor = Some(floor);
        }
        Flag {
            property_ref: "P-1".into(),
            board: "CU1".into(),
            circuit: circuit.map(String::from),
            description: None,
            quantity: quantity.0,
            severity: super::super::severity_key(f.severity),
            kind: super::super::kind_key(kind),
            reason: f.sentence.clone(),
            last_value: 1.0,
            last_date: f.date,
            limit: margin.map(|m| 1.0 / m),
            projected_date: None,
            projected_earliest: None,
            limit_source: None,
            margin_used_pct: margin.map(|m| (m * 1000.0).round() / 10.0),
            recommended_interval_months: None,
            findings: Vec::new(),
            finding: Some(f),
            code: None,
        }
    }

    fn overdue(since: f64, interval: f64) -> Flag {
        Flag {
            quantity: "inspection",
            severity: "exceeds",
            kind: "overdue",
            circuit: None,
            last_value: since,
            limit: Some(interval),
            finding: None,
            ..flag(None, ("ze", Quantity::Ze), FindingKind::Exceeds, None, None)
        }
    }

    const ZS: (&str, Quantity) = ("zs", Quantity::Zs);
    const R1R2: (&str, Quantity) = ("r1r2", Quantity::R1r2);
    const IR_LE: (&str, Quantity) = ("ir_le", Quantity::IrLe);
    const ZE: (&str, Quantity) = ("ze", Quantity::Ze);

    #[test]
    fn a_circuits_findings_are_one_row_led_by_the_most_serious() {
        let flags = vec![
            flag(Some("1"), R1R2, FindingKind::Step, None, Some((0.30, 0.05))),
            flag(Some("2"), IR_LE, FindingKind::Drift, None, Some((0.4, 0.3))),
            flag(None, ZE, FindingKind::Step, None, Some((0.10, 0.04))),
            flag(Some("1"), ZS, FindingKind::Exceeds, Some(1.03), None),
            flag(None, ZE, FindingKind::Exceeds, Some(1.10), None),
        ];
        let rows = group(flags);
        let places: Vec<_> = rows
            .iter()
            .map(|r| (r.circuit.as_deref(), r.quantity, r.findings.len()))
            .collect();
        // The supply's exceeds (110 %) before circuit 1's (103 %); circuit 2 on its own.
        assert_eq!(
            places,
            vec![
                (None, "ze", 2),
                (Some("1"), "zs", 2),
                (Some("2"), "ir_le", 1)
            ]
        );
        let c1 = &rows[1];
        assert_eq!(
            c1.findings[0],
            Flag {
                findings: vec![],
                ..c1.clone()
            }
        );
        assert_eq!(
            c1.findings.iter().map(|f| f.quantity).collect::<Vec<_>>(),
            ["zs", "r1r2"]
        );
        // The grouped findings go out without the row's place repeated; a flag not yet
        // grouped has no `findings` at all.
        let json = serde_json::to_value(c1).unwrap();
        assert_eq!(json["findings"][1]["quantity"], "r1r2");
        assert_eq!(json["findings"][1]["kind"], "step");
        assert!(json["findings"][1].get("property_ref").is_none());
        let json = serde_json::to_value(&c1.findings[1]).unwrap();
        assert!(json.get("findings").is_none());
    }

    #[test]
    fn an_overdue_inspection_ranks_among_the_exceeds_by_the_share_of_its_interval() {
        let mut rows = vec![
            flag(Some("3"), R1R2, FindingKind::Step, None, Some((0.3, 0.05))),
            // 60 months since against 60: 100 %, after the exceeds at 102 %.
            Flag {
                property_ref: "P-2".into(),
                ..overdue(60.0, 60.0)
            },
            flag(Some("1"), ZS, FindingKind::Exceeds, Some(1.02), None),
            flag(Some("2"), IR_LE, FindingKind::Approaching, Some(0.9), None),
            // 65 months since against 60: 108.3 %, between 120 % and 102 %.
            overdue(65.0, 60.0),
            flag(Some("4"), ZS, FindingKind::Exceeds, Some(1.20), None),
        ];
        rank(&mut rows);
        let order: Vec<_> = rows
            .iter()
            .map(|r| (r.property_ref.as_str(), r.circuit.as_deref(), r.kind))
            .collect();
        assert_eq!(
            order,
            vec![
                ("P-1", Some("4"), "exceeds"),
                ("P-1", None, "overdue"),
                ("P-1", Some("1"), "exceeds"),
                ("P-2", None, "overdue"),
                ("P-1", Some("2"), "approaching"),
                ("P-1", Some("3"), "step"),
            ]
        );
    }

    /// An overdue remedial row as `analysis::remedial::overdue_row` makes it: days into the
    /// period against the period.
    fn remedial(code: crate::model::ObservationCode, day: f64, period: f64) -> Flag {
        Flag {
            quantity: "remedial",
            severity: "exceeds",
            kind: "overdue",
            circuit: None,
            last_value: day,
            limit: Some(period),
            margin_used_pct: Some((day / period * 1000.0).round() / 10.0),
            finding: None,
            code: Some(code),
            ..flag(None, ZE, FindingKind::Exceeds, None, None)
        }
    }

    #[test]
    fn overdue_remedial_work_goes_first_c1_then_c2_then_fi_then_the_most_overdue() {
        use crate::model::ObservationCode::{C1, C2, FI};
        let mut rows = vec![
            flag(Some("4"), ZS, FindingKind::Exceeds, Some(1.60), None),
            remedial(FI, 90.0, 28.0),
            overdue(70.0, 60.0),
            // 3 days overdue on a 7-day period: 143 % of it, more than the C1's share below.
            remedial(C2, 10.0, 7.0),
            remedial(C1, 30.0, 28.0),
            remedial(C2, 45.0, 28.0),
            flag(Some("2"), IR_LE, FindingKind::Approaching, Some(0.9), None),
        ];
        rank(&mut rows);
        let order: Vec<_> = rows
            .iter()
            .map(|r| (r.quantity, r.code, r.last_value))
            .collect();
        assert_eq!(
            order,
            vec![
                ("remedial", Some(C1), 30.0),
                // 45 − 28 = 17 days overdue before 10 − 7 = 3.
                ("remedial", Some(C2), 45.0),
                ("remedial", Some(C2), 10.0),
                ("remedial", Some(FI), 90.0),
                ("zs", None, 1.0),
                ("inspection", None, 70.0),
                ("ir_le", None, 1.0),
            ]
        );
    }
}
