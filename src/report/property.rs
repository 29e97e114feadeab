//! One property's report as a self-contained HTML page, rendered from [`PropertyReport`].

use std::fmt::Write as _;

use super::chart::{self, ChartSpec};
use super::css::CSS;
use super::html::{PAGE_END, attr, count, date_words, esc, page_start, reading, time, time_or};
use super::model::{
    BoardTable, Cell, Chart, CircuitRow, Contractor, FlaggedCircuit, FlaggedFinding, Header,
    PropertyReport, Summary, VisitEntry, severity_words, value_words,
};
use chrono::NaiveDate;

/// The chart's drawing size in pixels; CSS scales it to the column.
const CHART_W: u32 = 720;
const CHART_H: u32 = 270;

fn sev_class(s: Option<&str>) -> &'static str {
    match s {
        Some("exceeds") => "sev-exceeds",
        Some("approaching") => "sev-approaching",
        Some("changed") => "sev-changed",
        _ => "sev-none",
    }
}

/// A severity as a pill: shape, then words. Colour only repeats what they say.
pub(super) fn badge(s: Option<&str>) -> String {
    let (mark, words) = severity_words(s);
    format!(
        "<span class=\"badge {}\"><i class=\"mark\" aria-hidden=\"true\">{mark}</i> {words}</span>",
        sev_class(s)
    )
}

/// Render a report model as HTML.
pub fn render(r: &PropertyReport) -> String {
    let h = &r.header;
    let title = match &h.address {
        Some(a) => format!("{} · {} · wiring trend report", h.property_ref, a),
        None => format!("{} · wiring trend report", h.property_ref),
    };
    let mut o = page_start(&title, CSS);
    o.push_str("<div class=\"page\">\n");
    masthead(&mut o, r);
    o.push_str("<main>\n");
    summary(&mut o, r);
    remedials(&mut o, r);
    findings(&mut o, r);
    // The notes close the landlord's part; the figures for an electrician follow them, so
    // the notes are never left alone on a last page. The general caution is in the summary,
    // on the first page; the list gives the rest.
    cautions(
        &mut o,
        r.cautions.iter().filter(|c| c.as_str() != crate::CAUTION),
    );
    super::schedule::render(&mut o, &r.schedule);
    boards(&mut o, r);
    visits(&mut o, &r.visits);
    method(&mut o, r);
    o.push_str("</main>\n");
    let _ = writeln!(
        o,
        "<footer>Made by ohmtrail {} on {} from the test history of {}. The figures come from \
         the readings recorded at each visit; nothing here was measured by ohmtrail.</footer>",
        esc(r.ohmtrail_version),
        time(r.generated),
        esc(&h.property_ref)
    );
    o.push_str("</div>\n");
    o.push_str(PAGE_END);
    o
}

/// The contractor's name, address, registration and logo above the masthead, when set.
/// The logo is embedded as a data URL, so the page stays one self-contained file.
pub(super) fn letterhead(o: &mut String, c: Option<&Contractor>) {
    use base64::Engine as _;
    let Some(c) = c else {
        return;
    };
    o.push_str("<div class=\"letterhead\">");
    if let Some(logo) = &c.logo {
        let _ = write!(
            o,
            "<img class=\"logo\" alt=\"\" src=\"data:{};base64,{}\">",
            if logo.svg {
                "image/svg+xml"
            } else {
                "image/png"
            },
            base64::engine::general_purpose::STANDARD.encode(&logo.bytes)
        );
    }
    o.push_str("<div>");
    if let Some(n) = &c.name {
        let _ = write!(o, "<p class=\"name\">{}</p>", esc(n));
    }
    for l in c.lines() {
        let _ = write!(o, "<p>{}</p>", esc(&l));
    }
    o.push_str("</div></div>\n");
}

fn masthead(o: &mut String, r: &PropertyReport) {
    let h = &r.header;
    letterhead(o, r.contractor.as_ref());
    o.push_str("<header class=\"masthead\">\n<div>\n");
    o.push_str("<p class=\"what\">Wiring condition over time</p>\n");
    let _ = writeln!(
        o,
        "<h1>{}</h1>\n<span class=\"ref\">Property {}</span>",
        esc(h.address.as_deref().unwrap_or(&h.property_ref)),
        esc(&h.property_ref)
    );
    o.push_str("</div>\n<dl class=\"facts\">\n");
    let fact = |o: &mut String, k: &str, v: String| {
        let _ = writeln!(o, "<dt>{}</dt><dd>{v}</dd>", esc(k));
    };
    fact(
        o,
        "Client",
        esc(h.client.as_deref().unwrap_or("not recorded")),
    );
    fact(o, "Boards", esc(&boards_words(h)));
    fact(o, "Last visit", time_or(h.last_visit, "none yet"));
    if let Some(full) = h
        .last_full_inspection
        .filter(|_| h.last_full_inspection != h.last_visit)
    {
        // The due date runs from here, not from a later partial re-test.
        fact(o, "Last full inspection", time(full));
    }
    fact(
        o,
        "Routine inspection due",
        match (h.next_due, h.next_due_interval_months, h.next_due_basis) {
            (Some(d), Some(m), Some(basis)) => format!(
                "{}<br><span class=\"small\">interval {m} months, {}</span>",
                time(d),
                esc(basis)
            ),
            (d, _, _) => time_or(d, "not known"),
        },
    );
    if let Some(r) = &r.schedule.latest_report
        && let Some(outcome) = &r.outcome
    {
        // The inspector's words, labelled as theirs: ohmtrail assigns no outcome.
        fact(
            o,
            "Last outcome recorded",
            format!(
                "{}<br><span class=\"small\">{}, {}{}</span>",
                esc(outcome),
                esc(r.outcome_label),
                time(r.date),
                r.report_ref
                    .as_deref()
                    .map(|x| format!(", report {}", esc(x)))
                    .unwrap_or_default()
            ),
        );
    }
    fact(
        o,
        "Next inspection recommended",
        recommended_words(&r.summary, time),
    );
    fact(o, "Report made", time(r.generated));
    fact(o, "ohmtrail", esc(r.ohmtrail_version));
    o.push_str("</dl>\n</header>\n");
}

/// After the caution in the summary: where the other notes are.
pub(super) const SEE_THE_NOTES: &str = "See also “Please note” after the findings.";

/// The recommended date of the next inspection in words, each date written by `date`.
pub(super) fn recommended_words(s: &Summary, date: impl Fn(NaiveDate) -> String) -> String {
    match s.next_inspection {
        Some(d) if s.next_inspection_overdue => format!("{} (now due)", date(d)),
        Some(d) if s.next_inspection_shortened => format!("{} (brought forward)", date(d)),
        Some(d) => date(d),
        None => "arrange one".into(),
    }
}

/// The board facts beside the masthead: "CU1 (Hall cupboard, TN-C-S)", plain text.
pub(super) fn boards_words(h: &Header) -> String {
    let boards: Vec<String> = h
        .boards
        .iter()
        .filter(|b| b.in_service)
        .map(|b| {
            let extra: Vec<&str> = [b.location.as_deref(), b.earthing.as_deref()]
                .into_iter()
                .flatten()
                .collect();
            if extra.is_empty() {
                b.designation.clone()
            } else {
                format!("{} ({})", b.designation, extra.join(", "))
            }
        })
        .collect();
    if boards.is_empty() {
        "none recorded".into()
    } else {
        boards.join("; ")
    }
}

fn summary(o: &mut String, r: &PropertyReport) {
    let s = &r.summary;
    o.push_str("<section class=\"summary\" aria-labelledby=\"summary-h\">\n");
    o.push_str("<h2 id=\"summary-h\">Summary</h2>\n");
    let _ = writeln!(
        o,
        "<div class=\"verdict {}\"><p>{}</p><p class=\"headline\">{}</p></div>",
        sev_class(s.worst),
        badge(s.worst),
        esc(&s.headline)
    );
    o.push_str("<ul class=\"tally\" aria-label=\"Circuits by state\">\n");
    let tile = |o: &mut String, sev: Option<&str>, n: usize, words: &str| {
        let (mark, _) = severity_words(sev);
        let _ = writeln!(
            o,
            "<li class=\"{}\"><i class=\"mark\" aria-hidden=\"true\">{mark}</i><span class=\"n\">{n}</span><span class=\"w\">{}</span></li>",
            sev_class(sev),
            esc(words)
        );
    };
    tile(o, Some("exceeds"), s.exceeds, "past a limit");
    tile(o, Some("approaching"), s.approaching, "nearing a limit");
    tile(o, Some("changed"), s.changed, "changed, within limits");
    let within = if s.not_tested > 0 {
        format!("within limits ({} not tested)", s.not_tested)
    } else {
        "within limits".into()
    };
    tile(o, None, s.within_limits, &within);
    o.push_str("</ul>\n");
    o.push_str("<h3>What should happen next</h3>\n<ol class=\"next\">\n");
    for a in &s.actions {
        let _ = writeln!(
            o,
            "<li><span>{}</span><span class=\"when\">{}{}</span></li>",
            esc(&a.what),
            esc(&capitalise(&a.when)),
            a.by.map(|d| format!(" <span class=\"small\">({})</span>", d.format("%Y-%m-%d")))
                .unwrap_or_default()
        );
    }
    o.push_str("</ol>\n");
    let _ = writeln!(
        o,
        "<p class=\"small\"><strong>{}</strong> {}</p>",
        esc(crate::CAUTION),
        esc(SEE_THE_NOTES)
    );
    let _ = writeln!(
        o,
        "<p class=\"small\">{} on record at {} in service. Figures for an electrician follow: \
         each finding with its chart, every circuit's last readings, the visit history and the \
         method.</p>",
        count(r.visits.len(), "visit", "visits"),
        count(s.circuits, "circuit", "circuits"),
    );
    o.push_str("</section>\n");
}

fn capitalise(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

fn findings(o: &mut String, r: &PropertyReport) {
    o.push_str("<section class=\"findings\" aria-labelledby=\"findings-h\">\n");
    o.push_str("<h2 id=\"findings-h\">Circuits with something to report</h2>\n");
    if r.flagged.is_empty() {
        o.push_str(
            "<p>Nothing to report: no circuit is past or nearing a limit, and no reading has \
             moved beyond its noise floor.</p>\n",
        );
    }
    for (i, f) in r.flagged.iter().enumerate() {
        flagged_circuit(o, i, f);
    }
    o.push_str("</section>\n");
}

fn flagged_circuit(o: &mut String, i: usize, f: &FlaggedCircuit) {
    let id = format!("finding-{}", i + 1);
    let name = match &f.circuit {
        Some(c) => format!("Circuit {}/{}", f.board, c),
        None => format!("Supply at board {}", f.board),
    };
    let _ = writeln!(
        o,
        "<article class=\"finding {}\" id=\"{}\" aria-labelledby=\"{}-h\">",
        sev_class(Some(f.severity)),
        attr(&id),
        attr(&id)
    );
    let _ = writeln!(
        o,
        "<header><h3 id=\"{}-h\">{}{}</h3>{}</header>",
        attr(&id),
        esc(&name),
        f.description
            .as_deref()
            .map(|d| format!(" · {}", esc(d)))
            .unwrap_or_default(),
        badge(Some(f.severity))
    );
    let mut sub = Vec::new();
    if let Some(d) = &f.device {
        sub.push(format!("protective device {}", esc(d)));
    }
    if let Some(r) = &f.rcd_id {
        sub.push(format!("on {}", esc(r)));
    }
    if !f.lineage.is_empty() {
        sub.push(format!(
            "history carried through {}",
            esc(&f.lineage.join(" → "))
        ));
    }
    if !sub.is_empty() {
        let _ = writeln!(o, "<p class=\"sub\">{}</p>", sub.join("; "));
    }
    let mut shown: Vec<&str> = Vec::new();
    for finding in &f.findings {
        // The figures of a series are given once, with its chart.
        let repeat = shown.contains(&finding.label);
        shown.push(finding.label);
        finding_block(o, &name, finding, repeat);
    }
    o.push_str("</article>\n");
}

fn finding_block(o: &mut String, name: &str, f: &FlaggedFinding, repeat: bool) {
    // A reason, its figures and its chart are one unit: printing never parts them.
    o.push_str("<div class=\"part\">");
    let _ = writeln!(
        o,
        "<p class=\"reason\"><strong>{}:</strong> {}</p>",
        esc(f.label),
        esc(&f.reason)
    );
    if repeat {
        o.push_str("</div>\n");
        return;
    }
    let facts: Vec<String> = finding_facts(f).iter().map(|x| esc(x)).collect();
    let _ = writeln!(o, "<p class=\"sub\">{}</p>", facts.join(" · "));
    if let Some(c) = &f.chart {
        let title = format!("{name}: {} over the visits", c.title);
        let _ = writeln!(
            o,
            "<figure>{}<figcaption>{}</figcaption></figure>",
            chart::svg(&chart_spec(&title, c), CHART_W, CHART_H),
            esc(&caption(c))
        );
    }
    o.push_str("</div>\n");
}

/// A finding's figures as plain phrases: the last reading, the limit, the standard it comes
/// from (cited plainly: how sure each figure is stays in the method section, for the
/// electrician) and the projection.
pub(super) fn finding_facts(f: &FlaggedFinding) -> Vec<String> {
    let mut facts = Vec::new();
    // Figures as measured first; a corrected figure is named as such. A recorded fact
    // (polarity, test button) has no reading: its sentence gives the visit.
    let recorded = crate::analysis::facts::label(f.quantity).is_some();
    let on = date_words(f.last_measured_date.unwrap_or(f.last_date));
    match (f.last_measured, f.last_at_20c) {
        _ if f.kind == "ring_check" || recorded => {}
        (Some(m), Some(c)) => facts.push(format!(
            "last reading {} as measured on {on} ({} corrected to 20 °C)",
            value_words(m, f.unit, f.last_over_range),
            value_words(c, f.unit, f.last_over_range)
        )),
        (Some(m), None) => facts.push(format!(
            "last reading {} as measured on {on}",
            value_words(m, f.unit, f.last_over_range)
        )),
        (None, _) => facts.push(format!(
            "last value {} on {on}",
            value_words(f.last_value, f.unit, false)
        )),
    }
    if let (Some(l), Some(w)) = (f.limit, &f.limit_words) {
        facts.push(format!("limit {}: {w}", value_words(l, f.unit, false)));
    }
    if let Some(s) = &f.limit_source {
        facts.push(format!("source {}", s.citation));
    }
    if let Some(d) = f.projected_date {
        facts.push(format!(
            "projected to reach the limit around {}{}",
            d.format("%B %Y"),
            f.projected_earliest
                .map(|e| format!(", possibly as early as {}", e.format("%B %Y")))
                .unwrap_or_default()
        ));
    }
    facts
}

pub(super) fn chart_spec(title: &str, c: &Chart) -> ChartSpec {
    ChartSpec {
        title: title.to_string(),
        unit: c.unit.to_string(),
        log_y: c.log_scale,
        raw: c
            .points
            .iter()
            .map(|p| (p.date, p.raw, p.over_range))
            .collect(),
        normalised: c
            .points
            .iter()
            .filter_map(|p| p.at_20c.map(|v| (p.date, v)))
            .collect(),
        limit: c.limit.map(|l| {
            let kind = if c.limit_kind == Some("min") {
                "minimum"
            } else {
                "maximum"
            };
            let basis = if c.points.iter().any(|p| p.at_20c.is_some()) {
                " at 20 °C"
            } else {
                ""
            };
            (
                l,
                format!("{kind} {} {}{basis}", reading(l, c.unit), c.unit),
            )
        }),
        fit: c.fit,
        projection: c.projection,
        events: c.events.iter().map(|e| (e.date, e.what.clone())).collect(),
    }
}

pub(super) fn caption(c: &Chart) -> String {
    let mut parts = Vec::new();
    if let Some(b) = &c.basis {
        parts.push(capitalise(b));
    }
    if c.log_scale {
        parts.push("log scale".into());
    }
    if let Some(s) = c.baseline_start
        && !c.events.is_empty()
    {
        parts.push(format!("trend fitted from {} on", date_words(s)));
    }
    if c.fit.is_some() && c.projection.is_none() && c.limit.is_some() && !c.past_limit {
        parts.push("the fitted line does not reach the limit within the span drawn".into());
    }
    parts.join("; ") + "."
}

fn boards(o: &mut String, r: &PropertyReport) {
    o.push_str("<section class=\"boards\" aria-labelledby=\"boards-h\">\n");
    o.push_str("<h2 id=\"boards-h\">Every circuit, board by board</h2>\n");
    o.push_str(
        "<p class=\"small\">Last readings as recorded. Under each reading with a limit: the \
         share of its maximum it uses, or for insulation resistance how many times its minimum it \
         is (the reading corrected to 20 °C where the ambient was recorded, against the limit on \
         the same basis). 100 % of a maximum, or 1× a minimum, is at the limit. “calc.” marks a Zs \
         worked out as Ze + R1+R2 where Zs was not measured.</p>\n",
    );
    if r.boards.is_empty() {
        o.push_str("<p>No board is recorded for this property.</p>\n");
    }
    for b in &r.boards {
        board_table(o, b);
    }
    o.push_str("</section>\n");
}

/// "Board CU1 · Hall cupboard · TN-C-S", plain text.
pub(super) fn board_caption(b: &BoardTable) -> String {
    let mut cap = format!("Board {}", b.designation);
    for extra in [b.location.as_deref(), b.earthing.as_deref()]
        .into_iter()
        .flatten()
    {
        let _ = write!(cap, " · {extra}");
    }
    cap
}

/// The lines under a circuit's number in the board table: its description, its kind and
/// device, the rest of its schedule line where recorded, and when it was read.
pub(super) fn circuit_lines(row: &CircuitRow) -> Vec<String> {
    let mut lines = Vec::new();
    if let Some(d) = &row.description {
        lines.push(d.clone());
    }
    let mut meta = vec![row.kind.to_string()];
    if let Some(d) = &row.device {
        meta.push(d.clone());
    }
    lines.push(meta.join(", "));
    let schedule = row.schedule.words();
    if !schedule.is_empty() {
        lines.push(schedule.join(" · "));
    }
    lines.push(match row.last_visit {
        Some(d) => format!("read {}", d.format("%Y-%m-%d")),
        None => "no readings".into(),
    });
    lines
}

/// A last reading as the board table shows it, and its margin to the limit with whether it
/// is past: ("0.45", "39 % of max 1.16"), (">200", "200× min 1.0").
pub(super) fn cell_words(c: &Cell) -> (String, Option<(String, bool)>) {
    let mut v = if c.over_range {
        format!(">{}", reading(c.raw, c.unit))
    } else {
        reading(c.raw, c.unit)
    };
    if c.calculated {
        v.push_str(" calc.");
    }
    let margin = match (c.limit, c.share_of_limit_pct) {
        (Some(l), Some(pct)) => {
            let past = pct >= 100.0;
            let text = if c.limit_kind == Some("min") {
                // A minimum reads better as a multiple: "200× min 1.0".
                let times = 100.0 / pct;
                format!(
                    "{}{}× min {}",
                    if c.over_range { "≥" } else { "" },
                    if times >= 10.0 {
                        format!("{times:.0}")
                    } else {
                        format!("{times:.1}")
                    },
                    reading(l, c.unit)
                )
            } else {
                format!("{pct:.0} % of max {}", reading(l, c.unit))
            };
            Some((
                format!("{}{text}", if past { "▲ past: " } else { "" }),
                past,
            ))
        }
        _ => None,
    };
    (v, margin)
}

fn board_table(o: &mut String, b: &BoardTable) {
    let cap = esc(&board_caption(b));
    let _ = writeln!(
        o,
        "<table>\n<caption>{cap}</caption>\n<thead><tr><th scope=\"col\">Circuit</th>"
    );
    for c in &b.columns {
        let _ = write!(
            o,
            "<th scope=\"col\" class=\"num\">{} {}</th>",
            esc(c.label),
            esc(c.unit)
        );
    }
    o.push_str("<th scope=\"col\">State</th></tr></thead>\n<tbody>\n");
    for row in &b.circuits {
        let mut circ = format!("<b>{}</b>", esc(&row.circuit));
        for line in circuit_lines(row) {
            let _ = write!(circ, "<span>{}</span>", esc(&line));
        }
        let _ = write!(o, "<tr><td class=\"circ\">{circ}</td>");
        for col in &b.columns {
            match row.cells.get(col.label) {
                None => o.push_str("<td class=\"num\">–</td>"),
                Some(c) => {
                    let (v, margin) = cell_words(c);
                    let margin = match margin {
                        Some((text, past)) => format!(
                            "<span class=\"m{}\">{}</span>",
                            if past { " past" } else { "" },
                            esc(&text)
                        ),
                        None => String::new(),
                    };
                    let _ = write!(o, "<td class=\"num\">{}{margin}</td>", esc(&v));
                }
            }
        }
        let _ = writeln!(o, "<td>{}</td></tr>", badge(row.severity));
    }
    o.push_str("</tbody>\n</table>\n");
    let notes: Vec<String> = b
        .circuits
        .iter()
        .flat_map(|c| {
            c.notes.iter().map(move |n| {
                format!(
                    "<li>{}/{}: {}</li>",
                    esc(&b.designation),
                    esc(&c.circuit),
                    esc(n)
                )
            })
        })
        .collect();
    if !notes.is_empty() {
        let _ = writeln!(
            o,
            "<p class=\"small\">Not judged here:</p><ul class=\"notes\">{}</ul>",
            notes.join("")
        );
    }
}

/// The note under the remedial table: where the due date comes from and what making safe
/// leaves to do. Shared by the HTML and the PDF.
pub(super) const REMEDIAL_BASIS: &str = "Due: 28 days starting with the inspection date, or the \
    shorter period the report gives (The Electrical Safety Standards in the Private Rented \
    Sector (England) Regulations 2020, regulation 3(4)). Making safe does not end the duty: the \
    remedial work or investigation itself is required.";

/// One open remedial item in words, as plain text: where, the time left or overdue (and
/// whether it is overdue), and its status. Shared by the HTML and the PDF.
pub(super) fn remedial_words(
    i: &crate::analysis::remedial::RemedialItem,
) -> (String, Option<(String, bool)>, String) {
    let place = match (&i.board, &i.circuit) {
        (Some(b), Some(c)) => format!("{b}/{c}: "),
        (Some(b), None) => format!("{b}: "),
        _ => String::new(),
    };
    let days = match i.days_left {
        Some(n) if n < 0 => Some((
            format!("▲ {} overdue", count((-n) as usize, "day", "days")),
            true,
        )),
        Some(0) => Some(("due today".into(), false)),
        Some(n) => Some((format!("{} left", count(n as usize, "day", "days")), false)),
        None => None,
    };
    let status = match i.work_events().last() {
        Some(e) => format!(
            "made safe on {} by {}; the {} is still required",
            e.date.map(date_words).unwrap_or_default(),
            e.by.as_deref().unwrap_or(""),
            i.work_words()
        ),
        None => "open".into(),
    };
    (place, days, status)
}

/// Remedial work still to do, with its due date: only when there is some.
fn remedials(o: &mut String, r: &PropertyReport) {
    if r.open_remedials.is_empty() {
        return;
    }
    o.push_str("<section class=\"remedials\" aria-labelledby=\"remedials-h\">\n");
    o.push_str("<h2 id=\"remedials-h\">Remedial work outstanding</h2>\n");
    o.push_str(
        "<table>\n<thead><tr><th scope=\"col\">No.</th><th scope=\"col\">Recorded</th>\
         <th scope=\"col\">Code and observation, as recorded</th><th scope=\"col\">Due by</th>\
         <th scope=\"col\">Status</th></tr></thead>\n<tbody>\n",
    );
    for i in &r.open_remedials {
        let (place, days, status) = remedial_words(i);
        let days = match days {
            Some((t, true)) => format!("<strong>{}</strong>", esc(&t)),
            Some((t, false)) => esc(&t),
            None => String::new(),
        };
        let _ = writeln!(
            o,
            "<tr><td>{}</td><td>{}</td><td><span class=\"code\">{}</span> {}{}</td>\
             <td>{}<br><span class=\"small\">{days}</span></td><td>{}</td></tr>",
            i.observation,
            time(i.inspected),
            i.code.as_str(),
            esc(&place),
            esc(&i.text),
            time(i.due),
            esc(&status),
        );
    }
    o.push_str("</tbody>\n</table>\n");
    let _ = writeln!(
        o,
        "<p class=\"small\">{}</p>\n</section>",
        esc(REMEDIAL_BASIS)
    );
}

/// A visit's instrument, what is known of its calibration, and whether it had lapsed; `None`
/// when no instrument was recorded.
pub(super) fn instrument_words(v: &VisitEntry) -> Option<(String, &'static str, bool)> {
    let i = v.instrument.clone()?;
    Some(match v.instrument_in_calibration {
        Some(true) => (i, "in calibration", false),
        Some(false) => (i, "▲ calibration had lapsed", true),
        None => (i, "calibration not recorded", false),
    })
}

fn visits(o: &mut String, visits: &[VisitEntry]) {
    o.push_str("<section class=\"visits\" aria-labelledby=\"visits-h\">\n");
    o.push_str("<h2 id=\"visits-h\">Visit history</h2>\n");
    if visits.is_empty() {
        o.push_str("<p>No completed visit is on record.</p>\n</section>\n");
        return;
    }
    o.push_str(
        "<table>\n<thead><tr><th scope=\"col\">Date</th><th scope=\"col\">Inspector</th>\
         <th scope=\"col\">Instrument</th><th scope=\"col\" class=\"num\">Ambient °C</th>\
         <th scope=\"col\" class=\"num\">Ze Ω</th><th scope=\"col\">Report as recorded</th>\
         <th scope=\"col\">Observations as recorded</th></tr></thead>\n<tbody>\n",
    );
    for v in visits.iter().rev() {
        let instrument = match instrument_words(v) {
            None => "not recorded".to_string(),
            Some((name, note, lapsed)) => format!(
                "{}<br><span class=\"small\">{}</span>",
                esc(&name),
                if lapsed {
                    format!("<strong>{}</strong>", esc(note))
                } else {
                    esc(note)
                }
            ),
        };
        let obs = if v.observations.is_empty() {
            "<span class=\"small\">none recorded</span>".to_string()
        } else {
            let items: Vec<String> = v
                .observations
                .iter()
                .map(|ob| {
                    let place = match (&ob.board, &ob.circuit) {
                        (Some(b), Some(c)) => format!("{}/{}: ", esc(b), esc(c)),
                        (Some(b), None) => format!("{}: ", esc(b)),
                        _ => String::new(),
                    };
                    format!(
                        "<li><span class=\"code\">{}</span>{place}{}</li>",
                        esc(ob.code),
                        esc(&ob.text)
                    )
                })
                .collect();
            format!("<ul class=\"obs\">{}</ul>", items.join(""))
        };
        let report = recorded_report(&v.report);
        let _ = writeln!(
            o,
            "<tr><td>{}</td><td>{}</td><td>{instrument}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td>{report}</td><td>{obs}</td></tr>",
            time(v.date),
            esc(v.inspector.as_deref().unwrap_or("not recorded")),
            v.ambient_c
                .map(|t| format!("{t:.1}"))
                .unwrap_or_else(|| "not recorded".into()),
            v.ze_ohm
                .map(|z| format!("{z:.2}"))
                .unwrap_or_else(|| "–".into()),
        );
    }
    o.push_str("</tbody>\n</table>\n");
    o.push_str(
        "<p class=\"small\">Observation codes are shown exactly as the inspector recorded them; \
         ohmtrail never assigns or changes a code.</p>\n</section>\n",
    );
}

/// A visit's report in the inspector's words: outcome, reference, interval, extent and
/// limitations, each as recorded; `true` marks the parts shown small.
pub(super) fn report_lines(r: &crate::model::VisitReport) -> Vec<(String, bool)> {
    let mut parts = Vec::new();
    if let Some(out) = &r.outcome {
        parts.push((out.clone(), false));
        parts.push((format!("({})", super::schedule::OUTCOME_LABEL), true));
    }
    if let Some(x) = &r.report_ref {
        parts.push((format!("report {x}"), false));
    }
    if let Some(m) = r.interval_months {
        parts.push((format!("next in {m} months"), false));
    }
    if let Some(x) = &r.extent {
        parts.push((format!("extent: {x}"), true));
    }
    if let Some(x) = &r.limitations {
        parts.push((format!("limitations: {x}"), true));
    }
    parts
}

fn recorded_report(r: &crate::model::VisitReport) -> String {
    let lines = report_lines(r);
    if lines.is_empty() {
        return "<span class=\"small\">not recorded</span>".into();
    }
    let mut out = String::new();
    let mut first = true;
    for (i, (t, small)) in lines.iter().enumerate() {
        // The outcome and its label share a line, as before.
        let label = i == 1 && r.outcome.is_some();
        if !first {
            out.push_str(if label { " " } else { "<br>" });
        }
        first = false;
        match (small, i == 0 && r.outcome.is_some()) {
            (true, _) => {
                let _ = write!(out, "<span class=\"small\">{}</span>", esc(t));
            }
            (false, true) => {
                let _ = write!(out, "<strong>{}</strong>", esc(t));
            }
            (false, false) => out.push_str(&esc(t)),
        }
    }
    out
}

fn method(o: &mut String, r: &PropertyReport) {
    let m = &r.method;
    o.push_str("<section class=\"method\" aria-labelledby=\"method-h\">\n");
    o.push_str("<h2 id=\"method-h\">How the figures were worked out</h2>\n<dl>\n");
    let _ = writeln!(
        o,
        "<dt>Temperature</dt><dd>{}</dd>",
        esc(&m.temperature_rule)
    );
    if !m.visits_without_ambient.is_empty() {
        let dates: Vec<String> = m.visits_without_ambient.iter().map(|d| time(*d)).collect();
        let _ = writeln!(
            o,
            "<dd>No ambient temperature was recorded on {}: those readings are compared as read.</dd>",
            dates.join(", ")
        );
    }
    for note in &m.continuity_offsets {
        let _ = writeln!(o, "<dd>{}.</dd>", esc(&upper_first(note)));
    }
    let _ = writeln!(
        o,
        "<dt>Limit for a Zs reading taken cold</dt><dd>{}</dd>",
        esc(&m.measured_rule_words)
    );
    o.push_str("<dt>Noise floors</dt><dd><ul>");
    for f in &m.noise_floors {
        let _ = write!(o, "<li>{}: {}</li>", esc(f.applies_to), esc(&f.words));
    }
    o.push_str("</ul></dd>\n<dt>Trends</dt><dd><ul>");
    for w in &m.trend_words {
        let _ = write!(o, "<li>{}</li>", esc(w));
    }
    o.push_str("</ul></dd>\n</dl>\n");
    if !m.limits.is_empty() {
        o.push_str(
            "<table>\n<caption>Limits and their sources</caption>\n<thead><tr><th scope=\"col\">Applied to</th>\
             <th scope=\"col\">Source</th><th scope=\"col\">How sure</th><th scope=\"col\">Rule as applied</th></tr></thead>\n<tbody>\n",
        );
        for l in &m.limits {
            let _ = writeln!(
                o,
                "<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
                esc(&format!(
                    "{}{}",
                    l.applies_to.join(", "),
                    if l.circuits.is_empty() {
                        String::new()
                    } else {
                        format!(" on {}", l.circuits.join(", "))
                    }
                )),
                esc(&l.citation),
                esc(l.status),
                esc(&l.rule)
            );
        }
        o.push_str("</tbody>\n</table>\n");
    }
    o.push_str("</section>\n");
}

pub(super) fn cautions<'a>(o: &mut String, cautions: impl IntoIterator<Item = &'a String>) {
    o.push_str("<aside class=\"cautions\" aria-labelledby=\"cautions-h\">\n<h2 id=\"cautions-h\">Please note</h2>\n<ul>\n");
    for c in cautions {
        let _ = writeln!(o, "<li>{}</li>", esc(c));
    }
    o.push_str("</ul>\n</aside>\n");
}

/// A note as a sentence: its first letter in capitals.
pub(super) fn upper_first(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}
