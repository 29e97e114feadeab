//! One property's report as document blocks, in the HTML page's order and words.

use super::doc::{Block, Cell, Doc, Line, Part, Span, Step, TallyItem, sev_key, text};
use crate::report::chart;
use crate::report::html::{count, date_words};
use crate::report::model::{
    BoardTable, FlaggedCircuit, PropertyReport, VisitEntry, severity_words,
};
use crate::report::property::{
    REMEDIAL_BASIS, SEE_THE_NOTES, board_caption, boards_words, caption, cell_words, chart_spec,
    circuit_lines, finding_facts, instrument_words, recommended_words, remedial_words,
    report_lines,
};
use crate::report::schedule::OUTCOME_LABEL;

/// The chart's drawing size: the HTML's, a little flatter so two fit on a page with words.
const CHART_W: u32 = 720;
const CHART_H: u32 = 250;

pub fn blocks(r: &PropertyReport) -> Doc {
    let h = &r.header;
    let title = match &h.address {
        Some(a) => format!("{} · {} · wiring trend report", h.property_ref, a),
        None => format!("{} · wiring trend report", h.property_ref),
    };
    let mut d = Doc::new(
        title,
        format!(
            "Wiring trend report · property {} · made {} by ohmtrail {}",
            h.property_ref,
            date_words(r.generated),
            r.ohmtrail_version
        ),
    );
    masthead(&mut d, r);
    summary(&mut d, r);
    remedials(&mut d, r);
    findings(&mut d, r);
    // The notes close the landlord's part, as in the HTML; the general caution is in the
    // summary, once.
    d.push(Block::Cautions {
        title: "Please note".into(),
        items: r
            .cautions
            .iter()
            .filter(|c| c.as_str() != crate::CAUTION)
            .cloned()
            .collect(),
    });
    // The HTML's footer sentence; the page footer names the version and the date.
    d.push(Block::Small {
        spans: text(format!(
            "Made by ohmtrail from the test history of {}. The figures come from the readings \
             recorded at each visit; nothing here was measured by ohmtrail.",
            h.property_ref
        )),
    });
    super::schedule::blocks(&mut d, &r.schedule);
    boards(&mut d, r);
    visits(&mut d, &r.visits);
    method(&mut d, r);
    d
}

fn masthead(d: &mut Doc, r: &PropertyReport) {
    let h = &r.header;
    let mut facts = vec![
        (
            "Client".to_string(),
            h.client.clone().unwrap_or_else(|| "not recorded".into()),
        ),
        ("Boards".into(), boards_words(h)),
        (
            "Last visit".into(),
            h.last_visit
                .map(date_words)
                .unwrap_or_else(|| "none yet".into()),
        ),
    ];
    if let Some(full) = h
        .last_full_inspection
        .filter(|_| h.last_full_inspection != h.last_visit)
    {
        facts.push(("Last full inspection".into(), date_words(full)));
    }
    facts.push((
        "Routine inspection due".into(),
        match (h.next_due, h.next_due_interval_months, h.next_due_basis) {
            (Some(d), Some(m), Some(basis)) => {
                format!("{} (interval {m} months, {basis})", date_words(d))
            }
            (d, _, _) => d.map(date_words).unwrap_or_else(|| "not known".into()),
        },
    ));
    if let Some(rep) = &r.schedule.latest_report
        && let Some(outcome) = &rep.outcome
    {
        // The inspector's words, labelled as theirs: ohmtrail assigns no outcome.
        facts.push((
            "Last outcome recorded".into(),
            format!(
                "{outcome} ({}, {}{})",
                rep.outcome_label,
                date_words(rep.date),
                rep.report_ref
                    .as_deref()
                    .map(|x| format!(", report {x}"))
                    .unwrap_or_default()
            ),
        ));
    }
    facts.push((
        "Next inspection recommended".into(),
        recommended_words(&r.summary, date_words),
    ));
    facts.push(("Report made".into(), date_words(r.generated)));
    facts.push(("ohmtrail".into(), r.ohmtrail_version.into()));
    let contractor = super::contractor(d, r.contractor.as_ref());
    d.push(Block::Masthead {
        what: "Wiring condition over time".into(),
        title: h.address.clone().unwrap_or_else(|| h.property_ref.clone()),
        badge: Some(format!("Property {}", h.property_ref)),
        lines: Vec::new(),
        facts,
        contractor,
    });
}

fn summary(d: &mut Doc, r: &PropertyReport) {
    let s = &r.summary;
    d.push(Block::H2 {
        t: "Summary".into(),
    });
    let (mark, words) = severity_words(s.worst);
    d.push(Block::Verdict {
        sev: sev_key(s.worst),
        mark,
        words,
        headline: s.headline.clone(),
    });
    let within = if s.not_tested > 0 {
        format!("within limits ({} not tested)", s.not_tested)
    } else {
        "within limits".into()
    };
    let tile = |sev: Option<&str>, n: usize, w: &str| TallyItem {
        sev: sev_key(sev),
        mark: severity_words(sev).0,
        n,
        w: w.into(),
    };
    d.push(Block::Tally {
        items: vec![
            tile(Some("exceeds"), s.exceeds, "past a limit"),
            tile(Some("approaching"), s.approaching, "nearing a limit"),
            tile(Some("changed"), s.changed, "changed, within limits"),
            tile(None, s.within_limits, &within),
        ],
    });
    d.push(Block::H3 {
        t: "What should happen next".into(),
    });
    d.push(Block::Steps {
        items: s
            .actions
            .iter()
            .map(|a| Step {
                what: a.what.clone(),
                when: format!(
                    "{}{}",
                    capitalise(&a.when),
                    a.by.map(|d| format!(" ({})", d.format("%Y-%m-%d")))
                        .unwrap_or_default()
                ),
            })
            .collect(),
    });
    d.push(Block::Small {
        spans: vec![
            Span {
                t: crate::CAUTION.into(),
                b: true,
            },
            Span {
                t: format!(" {SEE_THE_NOTES}"),
                b: false,
            },
        ],
    });
    d.push(Block::Small {
        spans: text(format!(
            "{} on record at {} in service. Figures for an electrician follow: each finding \
             with its chart, every circuit's last readings, the visit history and the method.",
            count(r.visits.len(), "visit", "visits"),
            count(s.circuits, "circuit", "circuits"),
        )),
    });
}

fn capitalise(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

fn findings(d: &mut Doc, r: &PropertyReport) {
    d.push(Block::H2 {
        t: "Circuits with something to report".into(),
    });
    if r.flagged.is_empty() {
        d.push(Block::P {
            spans: text(
                "Nothing to report: no circuit is past or nearing a limit, and no reading has \
                 moved beyond its noise floor.",
            ),
        });
    }
    for f in &r.flagged {
        flagged_circuit(d, f);
    }
}

fn flagged_circuit(d: &mut Doc, f: &FlaggedCircuit) {
    let name = match &f.circuit {
        Some(c) => format!("Circuit {}/{}", f.board, c),
        None => format!("Supply at board {}", f.board),
    };
    let title = match &f.description {
        Some(desc) => format!("{name} · {desc}"),
        None => name.clone(),
    };
    let mut sub = Vec::new();
    if let Some(dev) = &f.device {
        sub.push(format!("protective device {dev}"));
    }
    if !f.lineage.is_empty() {
        sub.push(format!("history carried through {}", f.lineage.join(" → ")));
    }
    let mut parts = Vec::new();
    let mut shown: Vec<&str> = Vec::new();
    for finding in &f.findings {
        // The figures of a series are given once, with its chart.
        let repeat = shown.contains(&finding.label);
        shown.push(finding.label);
        let mut part = Part {
            label: finding.label.into(),
            reason: finding.reason.clone(),
            facts: None,
            chart: None,
            caption: String::new(),
        };
        if !repeat {
            part.facts = Some(finding_facts(finding).join(" · "));
            if let Some(c) = &finding.chart {
                let title = format!("{name}: {} over the visits", c.title);
                let svg = chart::svg(&chart_spec(&title, c), CHART_W, CHART_H);
                part.chart = Some(d.file("chart.svg", svg.into_bytes()));
                part.caption = caption(c);
            }
        }
        parts.push(part);
    }
    let (mark, words) = severity_words(Some(f.severity));
    d.push(Block::Finding {
        sev: sev_key(Some(f.severity)),
        mark,
        words,
        title,
        sub: (!sub.is_empty()).then(|| sub.join("; ")),
        parts,
    });
}

fn boards(d: &mut Doc, r: &PropertyReport) {
    d.push(Block::H2 {
        t: "Every circuit, board by board".into(),
    });
    d.push(Block::Small {
        spans: text(
            "Last readings as recorded. Under each reading with a limit: the share of its \
             maximum it uses, or for insulation resistance how many times its minimum it is (the \
             reading corrected to 20 °C where the ambient was recorded, against the limit on the \
             same basis). 100 % of a maximum, or 1× a minimum, is at the limit. “calc.” marks a \
             Zs worked out as Ze + R1+R2 where Zs was not measured.",
        ),
    });
    if r.boards.is_empty() {
        d.push(Block::P {
            spans: text("No board is recorded for this property."),
        });
    }
    for b in &r.boards {
        board_table(d, b);
    }
}

fn board_table(d: &mut Doc, b: &BoardTable) {
    let mut header = vec!["Circuit".to_string()];
    header.extend(b.columns.iter().map(|c| format!("{} {}", c.label, c.unit)));
    header.push("State".into());
    let n = b.columns.len();
    // The circuit column is the widest, so its words wrap as phrases, never a word a line.
    let mut widths = vec![3.0];
    widths.extend(std::iter::repeat_n(1.0, n));
    widths.push(2.1);
    let mut aligns = vec!["l"];
    aligns.extend(std::iter::repeat_n("r", n));
    aligns.push("l");
    let rows = b
        .circuits
        .iter()
        .map(|row| {
            let mut circ: Cell = vec![Line::styled(row.circuit.clone(), "b")];
            circ.extend(circuit_lines(row).into_iter().map(|l| Line::styled(l, "m")));
            let mut cells = vec![circ];
            for col in &b.columns {
                cells.push(match row.cells.get(col.label) {
                    None => vec![Line::plain("–")],
                    Some(c) => {
                        let (v, margin) = cell_words(c);
                        let mut cell = vec![Line::plain(v)];
                        if let Some((m, past)) = margin {
                            cell.push(Line::styled(m, if past { "past" } else { "m" }));
                        }
                        cell
                    }
                });
            }
            cells.push(vec![Line::badge(row.severity)]);
            cells
        })
        .collect();
    d.push(Block::Table {
        caption: Some(board_caption(b)),
        header,
        aligns,
        widths,
        rows,
        size: if n > 7 { 6.6 } else { 7.2 },
    });
    let notes: Vec<String> = b
        .circuits
        .iter()
        .flat_map(|c| {
            c.notes
                .iter()
                .map(move |n| format!("{}/{}: {n}", b.designation, c.circuit))
        })
        .collect();
    if !notes.is_empty() {
        d.push(Block::Small {
            spans: text("Not judged here:"),
        });
        d.push(Block::List { items: notes });
    }
}

fn visits(d: &mut Doc, visits: &[VisitEntry]) {
    d.push(Block::H2 {
        t: "Visit history".into(),
    });
    if visits.is_empty() {
        d.push(Block::P {
            spans: text("No completed visit is on record."),
        });
        return;
    }
    let rows = visits
        .iter()
        .rev()
        .map(|v| {
            let instrument = match instrument_words(v) {
                None => vec![Line::plain("not recorded")],
                Some((name, note, lapsed)) => vec![
                    Line::plain(name),
                    Line::styled(note, if lapsed { "past" } else { "m" }),
                ],
            };
            let report: Cell = match report_lines(&v.report) {
                lines if lines.is_empty() => vec![Line::styled("not recorded", "m")],
                // The column's heading says the report is the inspector's, once.
                lines => lines
                    .into_iter()
                    .filter(|(t, _)| *t != format!("({OUTCOME_LABEL})"))
                    .map(|(t, small)| Line::styled(t, if small { "m" } else { "" }))
                    .collect(),
            };
            let obs: Cell = if v.observations.is_empty() {
                vec![Line::styled("none recorded", "m")]
            } else {
                v.observations
                    .iter()
                    .map(|ob| {
                        let place = match (&ob.board, &ob.circuit) {
                            (Some(b), Some(c)) => format!("{b}/{c}: "),
                            (Some(b), None) => format!("{b}: "),
                            _ => String::new(),
                        };
                        Line::plain(format!("[{}] {place}{}", ob.code, ob.text))
                    })
                    .collect()
            };
            vec![
                vec![Line::plain(date_words(v.date))],
                vec![Line::plain(
                    v.inspector.clone().unwrap_or_else(|| "not recorded".into()),
                )],
                instrument,
                vec![Line::plain(
                    v.ambient_c
                        .map(|t| format!("{t:.1}"))
                        .unwrap_or_else(|| "not recorded".into()),
                )],
                vec![Line::plain(
                    v.ze_ohm
                        .map(|z| format!("{z:.2}"))
                        .unwrap_or_else(|| "–".into()),
                )],
                report,
                obs,
            ]
        })
        .collect();
    d.push(Block::Table {
        caption: None,
        header: [
            "Date",
            "Inspector",
            "Instrument",
            "Ambient °C",
            "Ze Ω",
            "Report as recorded by the inspector",
            "Observations as recorded",
        ]
        .map(String::from)
        .to_vec(),
        aligns: vec!["l", "l", "l", "r", "r", "l", "l"],
        widths: vec![1.2, 1.2, 1.4, 0.8, 0.6, 1.9, 2.9],
        rows,
        size: 7.2,
    });
    d.push(Block::Small {
        spans: text(
            "Observation codes are shown exactly as the inspector recorded them; ohmtrail \
             never assigns or changes a code.",
        ),
    });
}

/// Remedial work still to do, as the HTML's section: only when there is some.
fn remedials(d: &mut Doc, r: &PropertyReport) {
    if r.open_remedials.is_empty() {
        return;
    }
    d.push(Block::H2 {
        t: "Remedial work outstanding".into(),
    });
    let rows = r
        .open_remedials
        .iter()
        .map(|i| {
            let (place, days, status) = remedial_words(i);
            let mut due = vec![Line::plain(date_words(i.due))];
            if let Some((t, overdue)) = days {
                due.push(Line::styled(t, if overdue { "past" } else { "m" }));
            }
            vec![
                vec![Line::plain(i.observation.to_string())],
                vec![Line::plain(date_words(i.inspected))],
                vec![Line::plain(format!(
                    "{} {place}{}",
                    i.code.as_str(),
                    i.text
                ))],
                due,
                vec![Line::plain(status)],
            ]
        })
        .collect();
    d.push(Block::Table {
        caption: None,
        header: [
            "No.",
            "Recorded",
            "Code and observation, as recorded",
            "Due by",
            "Status",
        ]
        .map(String::from)
        .to_vec(),
        aligns: vec!["r", "l", "l", "l", "l"],
        widths: vec![0.4, 1.1, 3.6, 1.3, 2.0],
        rows,
        size: 7.2,
    });
    d.push(Block::Small {
        spans: text(REMEDIAL_BASIS),
    });
}

fn method(d: &mut Doc, r: &PropertyReport) {
    let m = &r.method;
    d.push(Block::H2 {
        t: "How the figures were worked out".into(),
    });
    let mut temperature = vec![m.temperature_rule.clone()];
    if !m.visits_without_ambient.is_empty() {
        let dates: Vec<String> = m
            .visits_without_ambient
            .iter()
            .map(|x| date_words(*x))
            .collect();
        temperature.push(format!(
            "No ambient temperature was recorded on {}: those readings are compared as read.",
            dates.join(", ")
        ));
    }
    for note in &m.continuity_offsets {
        temperature.push(format!("{}.", capitalise(note)));
    }
    d.push(Block::Dl {
        items: vec![
            ("Temperature".into(), temperature),
            (
                "Limit for a Zs reading taken cold".into(),
                vec![m.measured_rule_words.clone()],
            ),
            (
                "Noise floors".into(),
                m.noise_floors
                    .iter()
                    .map(|f| format!("{}: {}", f.applies_to, f.words))
                    .collect(),
            ),
            ("Trends".into(), m.trend_words.clone()),
        ],
    });
    if !m.limits.is_empty() {
        let rows = m
            .limits
            .iter()
            .map(|l| {
                let applied = format!(
                    "{}{}",
                    l.applies_to.join(", "),
                    if l.circuits.is_empty() {
                        String::new()
                    } else {
                        format!(" on {}", l.circuits.join(", "))
                    }
                );
                vec![
                    vec![Line::plain(applied)],
                    vec![Line::plain(l.citation.clone())],
                    vec![Line::plain(l.status)],
                    vec![Line::plain(l.rule.clone())],
                ]
            })
            .collect();
        d.push(Block::Table {
            caption: Some("Limits and their sources".into()),
            header: ["Applied to", "Source", "How sure", "Rule as applied"]
                .map(String::from)
                .to_vec(),
            aligns: vec!["l", "l", "l", "l"],
            widths: vec![1.6, 1.8, 0.9, 4.0],
            rows,
            size: 6.6,
        });
    }
}
