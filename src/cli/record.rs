//! `ohmtrail record`: readings taken on site into a pending visit, one value at a time.
//! The terminal I/O lives here; what to ask, and the verdicts, are in `ohmtrail::onsite`.

use std::io::{BufRead, IsTerminal, Write};

use super::output::count;
use anyhow::{Result, bail};
use chrono::NaiveDate;
use clap::Args as ClapArgs;

use ohmtrail::analysis::{Settings, analyse_property};
use ohmtrail::model::{ChangeKind, Visit, VisitState};
use ohmtrail::onsite::session::{self, LineWhat, Progress, Step};
use ohmtrail::onsite::verdict::expectation_text;
use ohmtrail::onsite::{self, Brief, CircuitBrief, Entry, Expectation, Field, judge, parse_entry};
use ohmtrail::store::{CircuitDetails, NewVisit, Store};

use super::brief::parse_temp;
use super::{CAUTION, Context, parse_date, today};

#[derive(ClapArgs, Debug)]
#[command(
    after_help = "Non-interactive mode: when standard input is not a terminal, or with \
--stdin, lines `board,circuit,quantity,value` are read instead of prompting. Quantities are the \
visit-file columns (ze_ohm with the circuit empty, r1r2_ohm, r1rn_ohm, r2_ohm, ring_r1_ohm, \
ring_rn_ohm, ring_r2_ohm, zs_ohm, ir_ll_mohm, ir_le_mohm, rcd_5x_ms, rcd_ms) or their short \
names without the unit as the worklist prints them (ze, r1r2, zs, ir_le, rcd, rcd_5x, ...), plus `device` \
(the device fitted), `cable` (live/cpc mm² fitted) and `add`, which adds a circuit the register does not \
have, as the interactive session asks for one: `board,circuit,add,what it supplies[,device[,RCD mA]]`, \
e.g. `CU,7,add,\"Sockets, garage\",B20,30`; its readings follow on lines of their own; and the facts \
`polarity` (correct or incorrect), `ir_test_v` (250, 500 or 1000) and `rcd_button` (operates or failed). \
Values as in the visit file: a number with \
an optional matching unit, >200 or 200+ (over range), LIM, N/A. Each value is stored at once; the visit is completed \
at the end of the input unless a line was refused or --no-finish is given."
)]
pub struct Args {
    /// The property's reference
    pub property: String,
    /// Date of the visit [default: today]
    #[arg(long, value_parser = parse_date)]
    pub date: Option<NaiveDate>,
    /// Ambient temperature at the test, °C [asked at the start when interactive]
    #[arg(long, value_name = "C", allow_negative_numbers = true, value_parser = parse_temp)]
    pub temp: Option<f64>,
    /// Who is testing
    #[arg(long, value_name = "NAME")]
    pub inspector: Option<String>,
    /// Serial of the test instrument used
    #[arg(long, value_name = "SERIAL")]
    pub instrument: Option<String>,
    /// Carry on with the property's pending visit from the first unanswered prompt
    #[arg(long, conflicts_with = "abandon")]
    pub resume: bool,
    /// Discard the property's pending visit and everything recorded at it, putting the register back as it was (circuits added at it are taken out)
    #[arg(long)]
    pub abandon: bool,
    /// Read `board,circuit,quantity,value` lines from standard input even at a terminal
    #[arg(long)]
    pub stdin: bool,
    /// In the non-interactive mode, leave the visit pending at the end of the input
    #[arg(long)]
    pub no_finish: bool,
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open()?;
    let property = store.property(&args.property)?;
    let r = &property.reference;
    let pending = store.pending_visit(property.id)?;
    let line_mode = args.stdin || !std::io::stdin().is_terminal();

    if args.abandon {
        let Some(v) = pending else {
            bail!("{r} has no pending visit to abandon");
        };
        let a = store.abandon_visit(v.id)?;
        let removed = if a.circuits_removed > 0 {
            format!(
                ", {} added at it taken out of the register",
                count(a.circuits_removed, "circuit", "circuits")
            )
        } else {
            String::new()
        };
        writeln!(
            out,
            "abandoned the pending visit of {} to {r}: {} and {} discarded, {} put back{removed}",
            v.date,
            count(a.test_records, "circuit record", "circuit records"),
            count(a.board_readings, "board reading", "board readings"),
            count(a.changes_reverted, "register change", "register changes")
        )?;
        return Ok(());
    }

    let visit = match (pending, args.resume) {
        (Some(v), true) => {
            if let Some(d) = args.date
                && d != v.date
            {
                bail!(
                    "{r} has a pending visit of {}, not {d}: resume it without --date, or abandon it with --abandon",
                    v.date
                );
            }
            v
        }
        (Some(v), false) => {
            let n = load_progress(&store, v.id)?.stored();
            bail!(
                "{r} has a pending visit of {} with {} stored: carry on with `ohmtrail record {r} --resume`, or discard it with --abandon",
                v.date,
                count(n, "value", "values")
            );
        }
        (None, true) => {
            bail!("{r} has no pending visit to resume: start one with `ohmtrail record {r}`")
        }
        (None, false) => {
            if !store
                .boards(property.id)?
                .iter()
                .any(|b| b.status == ohmtrail::model::Status::InService)
            {
                bail!("{r} has no boards: add one with `ohmtrail board add {r} DESIGNATION`");
            }
            let date = args.date.unwrap_or_else(today);
            if date > today() {
                bail!("visit date {date} is in the future: expected today or earlier");
            }
            let ambient = match args.temp {
                Some(t) => Some(t),
                None if !line_mode => match ask_temperature(out)? {
                    Some(t) => t,
                    None => {
                        writeln!(out, "stopped before the visit began: nothing stored")?;
                        return Ok(());
                    }
                },
                None => None,
            };
            // Who tested goes on the visit, as a visit file's `inspector` column does.
            let inspector = match &args.inspector {
                Some(name) => Some(name.clone()),
                None if !line_mode => match ask_inspector(out)? {
                    Some(name) => name,
                    None => {
                        writeln!(out, "stopped before the visit began: nothing stored")?;
                        return Ok(());
                    }
                },
                None => None,
            };
            let v = store.add_visit(
                property.id,
                &NewVisit {
                    date: Some(date),
                    inspector,
                    instrument: args.instrument.clone(),
                    ambient_c: ambient,
                    ..Default::default()
                },
                VisitState::Pending,
            )?;
            writeln!(
                out,
                "started a pending visit to {r} on {date}{}; every value is stored as it is entered",
                ambient
                    .map(|t| format!(" at {t} °C"))
                    .unwrap_or_else(|| ", ambient not recorded".into())
            )?;
            v
        }
    };
    if let Some(serial) = &visit.instrument
        && let Some(i) = store.instrument(serial)?
        && let Some(due) = i.calibration_due
        && due < visit.date
    {
        writeln!(
            out,
            "warning: instrument {serial}'s calibration ran out on {due}, before this visit"
        )?;
    }

    let brief = make_brief(&store, r, &visit)?;
    if line_mode {
        run_lines(&store, &visit, &brief, args.no_finish, out)
    } else {
        let stdin = std::io::stdin();
        let mut input = stdin.lock();
        run_prompts(&store, &visit, brief, &mut input, out)
    }
}

fn make_brief(store: &Store, reference: &str, visit: &Visit) -> Result<Brief> {
    let settings = Settings::load(store, today())?;
    let analysis = analyse_property(store, reference, &settings)?;
    Ok(onsite::brief(
        &analysis,
        visit.date,
        visit.ambient_c,
        &store.instruments()?,
    ))
}

fn load_progress(store: &Store, visit_id: i64) -> Result<Progress> {
    let mut p = Progress::default();
    for rec in store.visit_records(visit_id)? {
        for f in Field::CIRCUIT {
            if f.answered(&rec.readings) {
                p.values.insert((rec.circuit_id, f));
            }
        }
    }
    for (board, ze, _) in store.visit_board_tests(visit_id)? {
        if ze.is_some() {
            p.ze.insert(board);
        }
    }
    for ch in store.visit_changes(visit_id)? {
        p.changed.insert(ch.circuit_id);
    }
    Ok(p)
}

/// Board readings have no place for a limitation yet, so say so rather than pretend.
const ZE_LIM: &str = "LIM is not stored for a board reading: nothing stored; note the limitation on the paper record";

/// Print a prompt and read one line; `None` at the end of input (Ctrl-D).
fn ask(input: &mut dyn BufRead, out: &mut dyn Write, prompt: &str) -> Result<Option<String>> {
    write!(out, "{prompt}")?;
    out.flush()?;
    let mut line = String::new();
    if input.read_line(&mut line)? == 0 {
        writeln!(out)?;
        return Ok(None);
    }
    Ok(Some(line.trim_end_matches(['\n', '\r']).to_string()))
}

fn ask_temperature(out: &mut dyn Write) -> Result<Option<Option<f64>>> {
    let stdin = std::io::stdin();
    let mut input = stdin.lock();
    loop {
        let Some(t) = ask(
            &mut input,
            out,
            "Ambient temperature at the test, °C (Enter if not measured): ",
        )?
        else {
            return Ok(None);
        };
        if t.trim().is_empty() {
            return Ok(Some(None));
        }
        match parse_temp(&t) {
            Ok(v) => return Ok(Some(Some(v))),
            Err(e) => writeln!(out, "  not accepted: {e}; try again")?,
        }
    }
}

/// The inspector's name; `Some(None)` when left blank, `None` at the end of input.
fn ask_inspector(out: &mut dyn Write) -> Result<Option<Option<String>>> {
    let stdin = std::io::stdin();
    let mut input = stdin.lock();
    loop {
        let Some(name) = ask(
            &mut input,
            out,
            "Inspector carrying out the test, as the visit record should name them (Enter to leave blank): ",
        )?
        else {
            return Ok(None);
        };
        let name = name.trim();
        if name.is_empty() {
            return Ok(Some(None));
        }
        match ohmtrail::store::check_text("inspector", Some(name)) {
            Ok(()) => return Ok(Some(Some(name.to_string()))),
            Err(e) => writeln!(out, "  not accepted: {e}; try again")?,
        }
    }
}

fn register_text(c: &CircuitBrief) -> String {
    format!(
        "{}, {}",
        c.device.as_deref().unwrap_or("device not recorded"),
        c.cable().unwrap_or_else(|| "cable not recorded".into())
    )
}

fn paused(out: &mut dyn Write, r: &str, visit: &Visit) -> Result<()> {
    writeln!(
        out,
        "stopped: every value entered is stored and the visit of {} stays pending; carry on with `ohmtrail record {r} --resume`, or discard it with --abandon",
        visit.date
    )?;
    Ok(())
}

/// The interactive session: board by board, circuit by circuit, from the first unanswered
/// prompt.
fn run_prompts(
    store: &Store,
    visit: &Visit,
    mut brief: Brief,
    input: &mut dyn BufRead,
    out: &mut dyn Write,
) -> Result<()> {
    let r = brief.property_ref.clone();
    let mut steps = session::steps(&brief);
    let progress = load_progress(store, visit.id)?;
    let mut i = session::resume_at(&brief, &steps, &progress);
    if progress.stored() > 0 {
        writeln!(
            out,
            "resuming the visit of {}: {} already stored",
            visit.date,
            count(progress.stored(), "value", "values")
        )?;
    }
    writeln!(
        out,
        "Enter skips a prompt; LIM records a limitation; N/A for not applicable; >200 for over range. Ctrl-D stops (the visit stays pending)."
    )?;
    let mut shown: (Option<usize>, Option<usize>) = (None, None);
    while i < steps.len() {
        let step = steps[i];
        let (b, c) = match step {
            Step::Ze { board } => (board, None),
            Step::Fitted { board, circuit } | Step::Value { board, circuit, .. } => {
                (board, Some(circuit))
            }
            Step::NewCircuit { board } => (board, None),
        };
        let board = &brief.boards[b];
        if shown.0 != Some(b) {
            writeln!(
                out,
                "\n== Board {}{} ==",
                board.designation,
                board
                    .earthing
                    .as_deref()
                    .map(|e| format!(" ({e})"))
                    .unwrap_or_default()
            )?;
            if board.circuits.is_empty() {
                writeln!(out, "   {}", onsite::NO_CIRCUITS)?;
            }
            shown = (Some(b), None);
        }
        if let Some(ci) = c
            && shown.1 != Some(ci)
        {
            let cb = &board.circuits[ci];
            writeln!(
                out,
                "\n-- Circuit {}/{}{} ({}) --",
                board.designation,
                cb.number,
                cb.description
                    .as_deref()
                    .map(|d| format!(" {d}"))
                    .unwrap_or_default(),
                cb.kind.as_str()
            )?;
            for f in &cb.flags {
                writeln!(out, "   flagged: {f}")?;
            }
            shown.1 = Some(ci);
        }
        match step {
            Step::Ze { board: bi } => {
                let bd = &brief.boards[bi];
                let label = if bd.origin { "Ze" } else { "Zdb" };
                let Some(entry) = ask_value(input, out, label, &bd.ze)? else {
                    return paused(out, &r, visit);
                };
                if let Entry::Value(v) = entry {
                    store.set_board_test(visit.id, bd.board_id, Some(v), None)?;
                }
                if entry == Entry::Limitation {
                    writeln!(out, "   {ZE_LIM}")?;
                } else {
                    say(out, &bd.ze, &entry)?;
                }
            }
            Step::Fitted {
                board: bi,
                circuit: ci,
            } => {
                let cb = brief.boards[bi].circuits[ci].clone();
                let board = brief.boards[bi].designation.clone();
                match ask_fitted(store, visit, (&board, &cb), input, out)? {
                    None => return paused(out, &r, visit),
                    Some(false) => {}
                    Some(true) => {
                        // The register changed: limits and baselines move with it.
                        brief = make_brief(store, &r, visit)?;
                        steps = session::steps(&brief);
                        i = steps
                            .iter()
                            .position(|s| *s == step)
                            .unwrap_or(steps.len().saturating_sub(1));
                    }
                }
            }
            Step::Value {
                board: bi,
                circuit: ci,
                exp,
            } => {
                let cb = &brief.boards[bi].circuits[ci];
                let e = &cb.expectations[exp];
                let Some(entry) = ask_value(input, out, e.field.label(), e)? else {
                    return paused(out, &r, visit);
                };
                if entry != Entry::Skip {
                    store
                        .update_reading(visit.id, cb.circuit_id, |rd| e.field.apply(rd, &entry))?;
                }
                say(out, e, &entry)?;
            }
            Step::NewCircuit { board: bi } => {
                let board = brief.boards[bi].designation.clone();
                match ask_new_circuit(store, visit, &r, &board, input, out)? {
                    None => return paused(out, &r, visit),
                    Some(None) => {}
                    Some(Some(id)) => {
                        // Carry on with the new circuit's readings, then ask again.
                        brief = make_brief(store, &r, visit)?;
                        steps = session::steps(&brief);
                        shown = (None, None);
                        i = session::first_value_of(&brief, &steps, id).unwrap_or(i + 1);
                        continue;
                    }
                }
            }
        }
        i += 1;
    }
    writeln!(out)?;
    let Some(answer) = ask(
        input,
        out,
        "All prompts done. Finish the visit and add it to the history? [Y/n] ",
    )?
    else {
        return paused(out, &r, visit);
    };
    if answer.trim().eq_ignore_ascii_case("n") || answer.trim().eq_ignore_ascii_case("no") {
        return paused(out, &r, visit);
    }
    store.complete_visit(visit.id)?;
    let n = load_progress(store, visit.id)?.stored();
    writeln!(
        out,
        "finished: the visit of {} to {r} is complete with {} and is now part of the history",
        visit.date,
        count(n, "value", "values")
    )?;
    writeln!(out, "Caution: {CAUTION}")?;
    Ok(())
}

/// Ask for one value until it is acceptable; `None` at the end of input.
fn ask_value(
    input: &mut dyn BufRead,
    out: &mut dyn Write,
    label: &str,
    e: &Expectation,
) -> Result<Option<Entry>> {
    let prompt = format!(
        "{label} [{}] ({}) > ",
        e.unit().symbol(),
        expectation_text(e)
    );
    loop {
        let Some(text) = ask(input, out, &prompt)? else {
            return Ok(None);
        };
        match parse_entry(e.field, &text) {
            Ok(entry) => return Ok(Some(entry)),
            Err(err) => writeln!(out, "   NOT STORED: {err}; try again")?,
        }
    }
}

fn say(out: &mut dyn Write, e: &Expectation, entry: &Entry) -> Result<()> {
    writeln!(out, "   {}", judge(e, entry).sentence)?;
    out.flush()?;
    Ok(())
}

/// Ask for a circuit on `board` that the register does not have: its number, description,
/// device and RCD, added to the register as `circuit add` does and recorded on the visit, so
/// abandoning the visit takes it out again. `Some(Some(id))` when one was
/// added, `Some(None)` when there is none, `None` at the end of input.
fn ask_new_circuit(
    store: &Store,
    visit: &Visit,
    reference: &str,
    board: &str,
    input: &mut dyn BufRead,
    out: &mut dyn Write,
) -> Result<Option<Option<i64>>> {
    loop {
        let Some(number) = ask(
            input,
            out,
            &format!(
                "A circuit on board {board} that is not in the register? Type its number, or Enter if none > "
            ),
        )?
        else {
            return Ok(None);
        };
        let number = number.trim().to_string();
        if number.is_empty() {
            return Ok(Some(None));
        }
        let Some(description) = ask(input, out, "   What it supplies (Enter to leave blank) > ")?
        else {
            return Ok(None);
        };
        let device = loop {
            let Some(text) = ask(
                input,
                out,
                "   Protective device, e.g. B32, RCBO B16 (Enter if not known) > ",
            )?
            else {
                return Ok(None);
            };
            if text.trim().is_empty() {
                break None;
            }
            match text.trim().parse::<ohmtrail::model::Device>() {
                Ok(d) => break Some(d),
                Err(e) => writeln!(out, "   NOT STORED: {e}; try again")?,
            }
        };
        let rcd_ma = loop {
            let Some(text) = ask(
                input,
                out,
                "   RCD protecting it, IΔn in mA, e.g. 30 (Enter if none) > ",
            )?
            else {
                return Ok(None);
            };
            match session::parse_rcd_ma(&text) {
                Ok(ma) => break ma,
                Err(e) => writeln!(out, "   NOT STORED: {e}; try again")?,
            }
        };
        let details = CircuitDetails {
            description: Some(description.trim().to_string()).filter(|d| !d.is_empty()),
            device,
            rcd_ma,
            ..Default::default()
        };
        match store.add_circuit_at_visit(visit.id, reference, board, &number, &details) {
            Ok(c) => {
                writeln!(out, "   {}", added_words(board, &c))?;
                return Ok(Some(Some(c.id)));
            }
            Err(e) => writeln!(out, "   NOT ADDED: {e}; try again")?,
        }
    }
}

/// What `record` says when it has added a circuit to the register.
fn added_words(board: &str, c: &ohmtrail::model::Circuit) -> String {
    format!(
        "added circuit {board}/{} to the register{}",
        c.number,
        c.device
            .map(|d| format!(" with {d}"))
            .unwrap_or_else(|| ", device not recorded".into())
    )
}

/// Ask whether the device and cable are as the register says; record a change when not.
/// `Some(true)` when the register changed, `None` at the end of input.
fn ask_fitted(
    store: &Store,
    visit: &Visit,
    (board, c): (&str, &CircuitBrief),
    input: &mut dyn BufRead,
    out: &mut dyn Write,
) -> Result<Option<bool>> {
    let prompt = format!(
        "Fitted as in the register ({})? Enter if so, or type what is fitted (e.g. B20, 2.5/1.5) > ",
        register_text(c)
    );
    loop {
        let Some(text) = ask(input, out, &prompt)? else {
            return Ok(None);
        };
        let fitted = match session::parse_fitted(&text) {
            Ok(f) => f,
            Err(e) => {
                writeln!(out, "   NOT STORED: {e}; try again")?;
                continue;
            }
        };
        let mut changed = false;
        if let Some(d) = fitted.device
            && c.device.as_deref() != Some(d.to_string().as_str())
        {
            match record_change(
                store,
                visit,
                (board, c),
                &CircuitDetails {
                    device: Some(d),
                    ..Default::default()
                },
                ChangeKind::DeviceChanged,
                out,
            ) {
                Ok(ch) => changed |= ch,
                Err(e) => {
                    writeln!(out, "   NOT STORED: {e}")?;
                    continue;
                }
            }
        }
        if let Some((l, p)) = fitted.cable
            && (c.live_mm2, c.cpc_mm2) != (Some(l), Some(p))
        {
            let kind = loop {
                let Some(a) = ask(
                    input,
                    out,
                    "The cable differs from the register: was it replaced since the last visit (r), or was the register wrong (w)? > ",
                )?
                else {
                    return Ok(None);
                };
                match a.trim().to_ascii_lowercase().as_str() {
                    "r" | "replaced" => break ChangeKind::CableReplaced,
                    "w" | "wrong" => break ChangeKind::RegisterCorrected,
                    _ => writeln!(out, "   answer r (replaced) or w (register wrong)")?,
                }
            };
            match record_change(
                store,
                visit,
                (board, c),
                &CircuitDetails {
                    live_mm2: Some(l),
                    cpc_mm2: Some(p),
                    ..Default::default()
                },
                kind,
                out,
            ) {
                Ok(ch) => changed |= ch,
                Err(e) => {
                    writeln!(out, "   NOT STORED: {e}")?;
                    continue;
                }
            }
        }
        return Ok(Some(changed));
    }
}

fn record_change(
    store: &Store,
    visit: &Visit,
    (board, c): (&str, &CircuitBrief),
    details: &CircuitDetails,
    kind: ChangeKind,
    out: &mut dyn Write,
) -> Result<bool> {
    // As import does: a change dated before a visit already recorded would alter what that
    // later visit shows, so it is refused, not written.
    let fields: Vec<&str> = [
        details.device.map(|_| "device"),
        details.live_mm2.map(|_| "live_mm2"),
        details.cpc_mm2.map(|_| "cpc_mm2"),
    ]
    .into_iter()
    .flatten()
    .collect();
    if let Some(later) = store.later_history(c.circuit_id, visit.date, &fields)? {
        bail!(
            "circuit {board}/{} on {}: a register change dated {} would alter the {later} already recorded: record the change at a visit after the circuit's later history, or with `ohmtrail circuit edit` and the date it was made",
            c.number,
            visit.date,
            visit.date
        );
    }
    let changes = store.edit_circuit(
        c.circuit_id,
        details,
        visit.date,
        Some(kind),
        Some(visit.id),
        Some("found on site"),
    )?;
    for ch in &changes {
        writeln!(
            out,
            "   {board}/{}: recorded as a circuit change ({}): {} {} → {}",
            c.number,
            kind.as_str().replace('_', " "),
            ch.field.as_deref().unwrap_or(""),
            ch.old_value.as_deref().unwrap_or("not recorded"),
            ch.new_value.as_deref().unwrap_or("")
        )?;
    }
    Ok(!changes.is_empty())
}

/// The non-interactive mode: `board,circuit,quantity,value` lines from standard input.
fn run_lines(
    store: &Store,
    visit: &Visit,
    brief: &Brief,
    no_finish: bool,
    out: &mut dyn Write,
) -> Result<()> {
    let r = &brief.property_ref;
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(std::io::stdin().lock());
    let mut errors: Vec<String> = Vec::new();
    let mut stored = 0usize;
    let mut brief = brief.clone();
    for (i, rec) in rdr.records().enumerate() {
        let number = rec
            .as_ref()
            .ok()
            .and_then(|x| x.position().map(|p| p.line() as usize))
            .unwrap_or(i + 1);
        let rec = match rec {
            Ok(x) => x,
            Err(e) => {
                errors.push(format!("line {number}: {e}"));
                continue;
            }
        };
        let fields: Vec<&str> = rec.iter().collect();
        let line = match session::parse_line(number, &fields) {
            Ok(Some(l)) => l,
            Ok(None) => continue,
            Err(e) => {
                errors.push(e.to_string());
                continue;
            }
        };
        match apply_line(store, visit, &brief, &line, out) {
            Ok(Applied::Stored) => stored += 1,
            Ok(Applied::Nothing) => {}
            Ok(Applied::RegisterChanged) => brief = make_brief(store, r, visit)?,
            Err(e) => errors.push(format!("line {}: {e}", line.number)),
        }
    }
    out.flush()?;
    if !errors.is_empty() {
        for e in &errors {
            eprintln!("ohmtrail: {e}");
        }
        bail!(
            "{} refused and nothing stored from {} ({} stored from the others); the visit of {} stays pending: send the corrected lines with `ohmtrail record {r} --resume`, or discard it with --abandon",
            count(errors.len(), "line", "lines"),
            if errors.len() == 1 { "it" } else { "them" },
            count(stored, "value", "values"),
            visit.date
        );
    }
    if no_finish {
        writeln!(
            out,
            "{} stored; the visit of {} stays pending (--no-finish)",
            count(stored, "value", "values"),
            visit.date
        )?;
        return Ok(());
    }
    store.complete_visit(visit.id)?;
    let total = load_progress(store, visit.id)?.stored();
    writeln!(
        out,
        "finished: the visit of {} to {r} is complete with {}",
        visit.date,
        count(total, "value", "values")
    )?;
    Ok(())
}

enum Applied {
    Stored,
    Nothing,
    RegisterChanged,
}

fn apply_line(
    store: &Store,
    visit: &Visit,
    brief: &Brief,
    line: &session::Line,
    out: &mut dyn Write,
) -> Result<Applied> {
    let Some(board) = brief.boards.iter().find(|b| b.designation == line.board) else {
        bail!(
            "board {:?} not found: {} has boards {}",
            line.board,
            brief.property_ref,
            brief
                .boards
                .iter()
                .map(|b| b.designation.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        );
    };
    if let (LineWhat::Add, Some(number), Some(new)) = (line.what, &line.circuit, &line.added) {
        let c = store.add_circuit_at_visit(
            visit.id,
            &brief.property_ref,
            &board.designation,
            number,
            &CircuitDetails {
                description: new.description.clone(),
                device: new.device,
                rcd_ma: new.rcd_ma,
                ..Default::default()
            },
        )?;
        writeln!(out, "{}", added_words(&board.designation, &c))?;
        return Ok(Applied::RegisterChanged);
    }
    let circuit = match &line.circuit {
        None => None,
        Some(n) => Some(
            board
                .circuits
                .iter()
                .find(|c| &c.number == n)
                .ok_or_else(|| {
                    anyhow::anyhow!(
                        "circuit {n:?} not found on board {}: it has circuits {}",
                        board.designation,
                        board
                            .circuits
                            .iter()
                            .map(|c| c.number.as_str())
                            .collect::<Vec<_>>()
                            .join(", ")
                    )
                })?,
        ),
    };
    let at = match circuit {
        Some(c) => format!("{}/{}", board.designation, c.number),
        None => board.designation.clone(),
    };
    match (line.what, circuit) {
        (LineWhat::Value(Field::Ze), _) => {
            let entry = parse_entry(Field::Ze, &line.value)?;
            let stored = if let Entry::Value(v) = entry {
                store.set_board_test(visit.id, board.board_id, Some(v), None)?;
                Applied::Stored
            } else {
                Applied::Nothing
            };
            if entry == Entry::Limitation {
                writeln!(out, "{at} ze_ohm: {ZE_LIM}")?;
            } else {
                writeln!(out, "{at} ze_ohm: {}", judge(&board.ze, &entry).sentence)?;
            }
            Ok(stored)
        }
        (LineWhat::Value(f), Some(c)) => {
            let entry = parse_entry(f, &line.value)?;
            let bare;
            let e = match c.expectations.iter().find(|e| e.field == f) {
                Some(e) => e,
                None => {
                    bare = Expectation {
                        field: f,
                        last: None,
                        expected: None,
                        band: None,
                        basis: String::new(),
                        wide: None,
                        limit: None,
                    };
                    &bare
                }
            };
            if entry == Entry::Skip {
                return Ok(Applied::Nothing);
            }
            store.update_reading(visit.id, c.circuit_id, |rd| f.apply(rd, &entry))?;
            writeln!(out, "{at} {}: {}", f.column(), judge(e, &entry).sentence)?;
            Ok(Applied::Stored)
        }
        (LineWhat::Fact(fact), Some(c)) => {
            // Checked before anything is stored: a refused value leaves the record as it was.
            let words = fact
                .apply(&mut Default::default(), &line.value)
                .map_err(|e| anyhow::anyhow!("{}: {e}", fact.column()))?;
            store.update_reading(visit.id, c.circuit_id, |rd| {
                let _ = fact.apply(rd, &line.value);
            })?;
            writeln!(out, "{at} {}: {words}", fact.column())?;
            Ok(Applied::Stored)
        }
        (LineWhat::Device, Some(c)) => {
            let fitted = session::parse_fitted(&line.value)?;
            let Some(d) = fitted.device.filter(|_| fitted.cable.is_none()) else {
                bail!(
                    "{:?} is not a device: expected e.g. B20, C32, RCBO B16",
                    line.value
                );
            };
            let changed = record_change(
                store,
                visit,
                (&board.designation, c),
                &CircuitDetails {
                    device: Some(d),
                    ..Default::default()
                },
                ChangeKind::DeviceChanged,
                out,
            )?;
            Ok(if changed {
                Applied::RegisterChanged
            } else {
                Applied::Nothing
            })
        }
        (LineWhat::Cable, Some(c)) => {
            let (l, p) = session::parse_cable(&line.value)?;
            let changed = record_change(
                store,
                visit,
                (&board.designation, c),
                &CircuitDetails {
                    live_mm2: Some(l),
                    cpc_mm2: Some(p),
                    ..Default::default()
                },
                ChangeKind::CableReplaced,
                out,
            )?;
            Ok(if changed {
                Applied::RegisterChanged
            } else {
                Applied::Nothing
            })
        }
        (LineWhat::Add, Some(_)) => bail!("the circuit to add was not read"),
        (_, None) => bail!("a circuit number is needed"),
    }
}
