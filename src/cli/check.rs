//! `ohmtrail check`: one set of readings through the limits engine, to see what it concludes.

use std::io::Write;

use anyhow::Result;
use comfy_table::{CellAlignment, ContentArrangement, Table, presets};
use serde::Serialize;

use ohmtrail::CAUTION;
use ohmtrail::limits::{
    CircuitFacts, DisconnectionChoice, DisconnectionTime, FaultPath, FaultPathInputs,
    FaultPathReport, MeasuredRule, PathOutcome, PathResult, TestConditions, default_disconnection,
    evaluate_fault_paths,
};
use ohmtrail::model::{Device, Earthing, Insulation};

use super::limits::{Row, SourceList, write_notes, write_rows};
use super::{Context, today};

/// Judge one circuit's readings (both fault paths) against its device, with sources.
#[derive(clap::Args, Debug)]
#[command(after_help = super::caution_help())]
pub struct Args {
    /// Protective device as written on a schedule: B16, RCBO C20, BS 88-3 32A
    #[arg(long)]
    pub device: String,
    /// External earth fault loop impedance Ze, Ω
    #[arg(long, value_name = "OHM", visible_alias = "ze_ohm")]
    pub ze: Option<f64>,
    /// R1+R2 of the circuit, Ω
    #[arg(long, value_name = "OHM", visible_alias = "r1r2_ohm")]
    pub r1r2: Option<f64>,
    /// R1+Rn of the circuit, Ω
    #[arg(long, value_name = "OHM", visible_alias = "r1rn_ohm")]
    pub r1rn: Option<f64>,
    /// Earth fault loop impedance measured at the circuit, Ω
    #[arg(long, value_name = "OHM", visible_alias = "zs_ohm")]
    pub zs: Option<f64>,
    /// Test temperature, °C
    #[arg(long, value_name = "C", allow_negative_numbers = true)]
    pub temp: Option<f64>,
    /// Cable insulation, thermoplastic70 (PVC) or thermosetting90 (XLPE); when omitted the named database's limits.assumed_insulation is assumed (default 70 °C thermoplastic, the usual twin and earth), and the output says so
    #[arg(long, value_name = "INSULATION")]
    pub insulation: Option<Insulation>,
    /// Earthing arrangement: TN-S, TN-C-S or TT
    #[arg(long, value_name = "EARTHING")]
    pub earthing: Option<Earthing>,
    /// RCD rated residual current, mA
    #[arg(long, value_name = "MA")]
    pub rcd: Option<u16>,
    /// Maximum disconnection time in seconds, 0.4 or 5; chosen from the device when omitted
    #[arg(long, value_name = "SECONDS")]
    pub disconnect: Option<DisconnectionTime>,
    /// Measured-value rule: temperature_corrected (default) or rule_of_thumb_80
    #[arg(long, value_name = "RULE")]
    pub rule: Option<MeasuredRule>,
    /// Print JSON instead of a table
    #[arg(long)]
    pub json: bool,
}

#[derive(Serialize)]
struct Output<'a> {
    disconnection: Disconnection<'a>,
    report: &'a FaultPathReport,
    caution: &'a str,
}

/// The time that applies to this circuit: TT's own (Table 41.1) on TT, never the TN one.
#[derive(Serialize)]
struct Disconnection<'a> {
    seconds: f64,
    earthing_rule: &'static str,
    assumed: bool,
    reason: &'a str,
    source: &'a ohmtrail::limits::Source,
}

impl<'a> Disconnection<'a> {
    fn of(c: &'a DisconnectionChoice) -> Disconnection<'a> {
        Disconnection {
            seconds: c.tt_time_s.unwrap_or(c.time.seconds()),
            earthing_rule: if c.tt_time_s.is_some() { "TT" } else { "TN" },
            assumed: c.assumed,
            reason: &c.reason,
            source: &c.source,
        }
    }
}

fn outcome_words(p: &PathResult) -> &'static str {
    match (p.path, p.outcome) {
        (FaultPath::LineNeutral, PathOutcome::Within) => "within check value",
        (FaultPath::LineNeutral, PathOutcome::OverMeasuredLimit) => "over check value (cold)",
        (FaultPath::LineNeutral, PathOutcome::OverTabulatedLimit) => "over check value",
        (_, PathOutcome::Within) => "within",
        (_, PathOutcome::OverMeasuredLimit) => "over measured-value limit",
        (_, PathOutcome::OverTabulatedLimit) => "over tabulated limit",
    }
}

/// The insulation taken when `--insulation` is not given: the named database's setting, or
/// the built-in default. A database that does not exist is not created for this.
fn assumed_insulation(ctx: &Context) -> Result<Insulation> {
    // Only a database named with --db or OHMTRAIL_DB, and only if it is there.
    match ctx.db.as_deref().filter(|p| p.exists()) {
        Some(p) => {
            let store = ohmtrail::store::Store::open(p)?;
            Ok(ohmtrail::analysis::Settings::load(&store, today())?
                .limits
                .assumed_insulation)
        }
        None => Ok(ohmtrail::limits::DEFAULT_ASSUMED_INSULATION),
    }
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let device: Device = args.device.parse()?;
    let choice = match args.disconnect {
        Some(t) => default_disconnection(&CircuitFacts {
            recorded_s: Some(t.seconds()),
            earthing: args.earthing,
            ..CircuitFacts::default()
        })?,
        None => default_disconnection(&CircuitFacts {
            rating_a: Some(device.rating_a()),
            earthing: args.earthing,
            ..CircuitFacts::default()
        })?,
    };
    let inputs = FaultPathInputs {
        earthing: args.earthing,
        rcd_ma: args.rcd,
        ze_ohm: args.ze,
        r1r2_ohm: args.r1r2,
        r1rn_ohm: args.r1rn,
        zs_ohm: args.zs,
        conditions: TestConditions {
            temp_c: args.temp,
            insulation: args.insulation,
            assumed_insulation: match args.insulation {
                Some(_) => ohmtrail::limits::DEFAULT_ASSUMED_INSULATION,
                None => assumed_insulation(ctx)?,
            },
        },
        rule: args.rule.unwrap_or_default(),
        ..FaultPathInputs::new(device, choice.time)
    };
    let report = evaluate_fault_paths(&inputs)?;

    if args.json {
        let o = Output {
            disconnection: Disconnection::of(&choice),
            report: &report,
            caution: CAUTION,
        };
        serde_json::to_writer_pretty(&mut *out, &o)?;
        writeln!(out)?;
        return Ok(());
    }

    let mut sources = SourceList::default();
    let dl = &report.device_limit;
    let ml = &report.measured_limit;
    let mut rows = Vec::new();
    match choice.tt_time_s {
        // TT: the TN time and the device's own limits do not apply to the earth fault path.
        Some(s) => rows.push(Row::new(
            "disconnection time (TT)",
            format!("{s} s"),
            sources.cite(&choice.source),
        )),
        None => {
            rows.push(Row::new(
                "disconnection time",
                choice.time.to_string(),
                sources.cite(&choice.source),
            ));
            rows.push(Row::new(
                &format!("maximum Zs for {} (tabulated)", dl.device_text),
                format!("{:.2} Ω", dl.zs_max_ohm),
                sources.cite(&dl.source),
            ));
            rows.push(Row::new(
                "Ia",
                format!("{:.0} A", dl.ia_a),
                sources.cite(&dl.ia_source),
            ));
            let assumed = match ml.insulation {
                Some(i) if ml.insulation_assumed => {
                    format!(", {} assumed", ohmtrail::limits::insulation_words(i))
                }
                _ => String::new(),
            };
            rows.push(Row::new(
                &format!("measured-value limit ({}{assumed})", ml.rule.words()),
                format!("{:.2} Ω", ml.limit_ohm),
                sources.cite(&ml.source),
            ));
            if let Some(part) = ml.circuit_part_ohm {
                rows.push(Row::new(
                    "  of which R1+R2 or R1+Rn (less Ze)",
                    format!("{part:.2} Ω"),
                    sources.cite(&ml.source),
                ));
            }
        }
    }
    if let Some(r) = &report.rcd_limit {
        rows.push(Row::new(
            &format!("TT with a {} mA RCD", r.rcd_ma),
            format!("{:.0} Ω", r.zs_max_ohm),
            sources.cite(&r.source),
        ));
    }
    write_rows(out, &rows)?;
    writeln!(out)?;

    let paths: Vec<&PathResult> = [&report.earth_fault, &report.line_neutral]
        .into_iter()
        .flatten()
        .collect();
    let mut table = Table::new();
    table
        .load_style(presets::NOTHING)
        .set_content_arrangement(ContentArrangement::Disabled)
        .set_header([
            "path",
            "made of",
            "Z Ω",
            "against Ω",
            "used %",
            "If min A",
            "Ia A",
            "outcome",
        ]);
    for p in &paths {
        for s in &p.sources {
            sources.cite(s);
        }
        table.add_row([
            p.path.as_str().to_string(),
            p.made_of.clone(),
            format!("{:.2}", p.impedance_ohm),
            format!("{:.2}", p.limit_ohm),
            format!("{:.1}", p.used_pct),
            format!("{:.0}", p.min_fault_current_a),
            if p.ia_a < 1.0 {
                format!("{:.2}", p.ia_a)
            } else {
                format!("{:.0}", p.ia_a)
            },
            outcome_words(p).to_string(),
        ]);
    }
    for i in 2..7 {
        if let Some(c) = table.column_mut(i) {
            c.set_cell_alignment(CellAlignment::Right);
        }
    }
    for line in table.lines() {
        writeln!(out, "{}", line.trim_end())?;
    }
    writeln!(out)?;
    for p in &paths {
        writeln!(out, "{}: {}", p.path.as_str(), p.consequence)?;
    }
    let mut notes = vec![format!("disconnection time: {}", choice.reason)];
    notes.extend(report.notes.iter().cloned());
    write_notes(out, &notes)?;
    sources.write(out)?;
    writeln!(out, "Caution: {CAUTION}")?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::{Args as _, Command, FromArgMatches};

    fn output(argv: &[&str]) -> Result<String> {
        let cmd = Args::augment_args(Command::new("check"));
        let m = cmd.try_get_matches_from(argv)?;
        let args = Args::from_arg_matches(&m)?;
        let mut buf = Vec::new();
        run(&args, &Context::new(None), &mut buf)?;
        Ok(String::from_utf8(buf).unwrap())
    }

    const EXAMPLE: [&str; 11] = [
        "check", "--device", "B16", "--ze", "0.3", "--r1r2", "0.6", "--r1rn", "0.5", "--temp", "15",
    ];

    #[test]
    fn contract_example_in_words() {
        // B16: Table 41.3 2.73 Ω, Ia 80 A. 15 °C, insulation not given so 70 °C thermoplastic
        // assumed (the default), Ze as measured and only the circuit's part corrected:
        // 0.30 + (2.73 − 0.30) × (1 − 0.00393 × 5) / 1.20 = 0.30 + 1.98521 = 2.28521 → 2.28 Ω;
        // the circuit's part 1.98521 → 1.98 Ω.
        // Earth fault 0.30 + 0.60 = 0.90 Ω: 0.90 / 2.28 = 39.5 % used, If = 218.5 / 0.9 = 243 A.
        // Line–neutral 0.30 + 0.50 = 0.80 Ω: 35.1 % of the check value, If = 273 A.
        let s = output(&EXAMPLE).unwrap();
        for want in [
            "2.73 Ω", "2.28 Ω", "1.98 Ω", "39.5", "243", "35.1", "273", "within",
        ] {
            assert!(s.contains(want), "{want} in\n{s}");
        }
        assert!(s.contains("expected to disconnect within 0.4 s"), "{s}");
        assert!(s.contains("70 °C thermoplastic assumed"), "{s}");
        assert!(s.contains("within check value"), "{s}");
        assert!(s.contains("If min A"), "{s}");
        assert!(s.contains("never replace"), "{s}");
        assert!(s.contains("no condition codes"), "{s}");
        assert!(
            s.contains("[1] BS 7671:2018+A2:2022 Regulation 411.3.2.2"),
            "{s}"
        );
        // The line–neutral figure is a check value with its own basis, not a maximum.
        assert!(s.contains("Regulation 434.5.2"), "{s}");
        assert!(!s.contains("line–neutral: within the measured"), "{s}");
    }

    #[test]
    fn quantities_take_their_visit_file_names_too() {
        let long = output(&[
            "check",
            "--device",
            "B16",
            "--ze_ohm",
            "0.3",
            "--r1r2_ohm",
            "0.6",
            "--r1rn_ohm",
            "0.5",
            "--temp",
            "15",
        ])
        .unwrap();
        assert_eq!(long, output(&EXAMPLE).unwrap());
        let zs = |flag: &str| output(&["check", "--device", "B16", flag, "1.1", "--temp", "15"]);
        assert_eq!(zs("--zs_ohm").unwrap(), zs("--zs").unwrap());
    }

    #[test]
    fn a_failing_neutral_is_spelled_out() {
        // Invented: B32, 10 °C, 70 °C cable, R1+Rn 1.40 Ω with Ze 0.25: 1.65 Ω > 1.37 Ω;
        // minimum If = 218.5 / 1.65 = 132 A, below the 160 A that operates the B32.
        let s = output(&[
            "check",
            "--device",
            "B32",
            "--ze",
            "0.25",
            "--r1r2",
            "0.55",
            "--r1rn",
            "1.40",
            "--temp",
            "10",
            "--insulation",
            "thermoplastic70",
        ])
        .unwrap();
        assert!(s.contains("over check value"), "{s}");
        assert!(s.contains("132 A is below the 160 A"), "{s}");
        assert!(s.contains("slow to clear a line–neutral fault"), "{s}");
        assert!(!s.contains("assumed)"), "{s}");
    }

    #[test]
    fn tt_shows_its_own_time_and_no_tn_figures() {
        // BS 7671 Table 41.1: TT final circuit 0.2 s. Invented TT circuit, noisy Ze 87.3 Ω,
        // R1+R2 0.61 Ω: 87.91 Ω against 50 V / 30 mA = 1667 Ω (Table 41.5): 5.3 % used.
        let mut argv = vec![
            "check",
            "--device",
            "B32",
            "--ze",
            "87.3",
            "--r1r2",
            "0.61",
            "--earthing",
            "TT",
            "--rcd",
            "30",
            "--temp",
            "9",
        ];
        let s = output(&argv).unwrap();
        assert!(s.contains("disconnection time (TT)"), "{s}");
        assert!(s.contains("0.2 s"), "{s}");
        assert!(!s.contains("0.4 s"), "{s}");
        assert!(!s.contains("maximum Zs for B32"), "{s}");
        assert!(s.contains("1667 Ω") && s.contains("5.3"), "{s}");
        assert!(!s.contains("assumed ("), "{s}");
        argv.push("--json");
        let j: serde_json::Value = serde_json::from_str(&output(&argv).unwrap()).unwrap();
        assert_eq!(j["disconnection"]["seconds"], 0.2);
        assert_eq!(j["disconnection"]["earthing_rule"], "TT");
        // A TN time given on the command line is read as its TT counterpart on TT.
        argv.pop();
        argv.extend(["--disconnect", "0.4"]);
        let t = output(&argv).unwrap();
        assert!(t.contains("0.2 s") && !t.contains("0.4 s"), "{t}");
        // A TT Ze is not compared with a supply figure nor sent to the network operator.
        assert!(
            !s.contains("21 Ω") && !s.contains("network operator"),
            "{s}"
        );
    }

    #[test]
    fn a_named_database_chooses_the_assumed_insulation() {
        // B16 at 15 °C with a measured Zs 1.93 Ω only (whole loop corrected):
        // 90 °C thermosetting: 2.73 × 0.98035 / 1.28 = 2.09091 → 2.09 Ω;
        // 70 °C thermoplastic (no database): / 1.20 = 2.23030 → 2.23 Ω.
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.db");
        let store = ohmtrail::store::Store::open(&path).unwrap();
        store
            .set_setting("limits.assumed_insulation", "thermosetting90")
            .unwrap();
        drop(store);
        let argv = ["check", "--device", "B16", "--zs", "1.93", "--temp", "15"];
        let cmd = Args::augment_args(Command::new("check"));
        let args = Args::from_arg_matches(&cmd.try_get_matches_from(argv).unwrap()).unwrap();
        let mut buf = Vec::new();
        run(&args, &Context::new(Some(path.clone())), &mut buf).unwrap();
        let s = String::from_utf8(buf).unwrap();
        assert!(
            s.contains("2.09 Ω") && s.contains("90 °C thermosetting assumed"),
            "{s}"
        );
        let s = output(&argv).unwrap();
        assert!(
            s.contains("2.23 Ω") && s.contains("70 °C thermoplastic assumed"),
            "{s}"
        );
        // A database that is named but absent is not created.
        let absent = dir.path().join("absent.db");
        let mut buf = Vec::new();
        run(&args, &Context::new(Some(absent.clone())), &mut buf).unwrap();
        assert!(!absent.exists());
    }

    #[test]
    fn json_output() {
        let mut argv = EXAMPLE.to_vec();
        argv.push("--json");
        let s = output(&argv).unwrap();
        let v: serde_json::Value = serde_json::from_str(&s).unwrap();
        assert_eq!(v["report"]["earth_fault"]["outcome"], "within");
        assert_eq!(v["report"]["measured_limit"]["limit_ohm"], 2.28);
        assert_eq!(v["report"]["measured_limit"]["insulation_assumed"], true);
        assert_eq!(v["disconnection"]["seconds"], 0.4);
        assert_eq!(v["disconnection"]["earthing_rule"], "TN");
        assert!(v["caution"].as_str().unwrap().contains("BS 7671"));
    }

    #[test]
    fn refusals() {
        let e = output(&["check", "--device", "B16"])
            .unwrap_err()
            .to_string();
        assert!(e.contains("nothing to judge"), "{e}");
        let e = output(&[
            "check",
            "--device",
            "B16",
            "--ze",
            "0.3",
            "--r1r2",
            "0.6",
            "--earthing",
            "TT",
        ])
        .unwrap_err()
        .to_string();
        assert!(e.contains("TT circuit without an RCD"), "{e}");
        let e = output(&["check", "--device", "Z16", "--zs", "1"])
            .unwrap_err()
            .to_string();
        assert!(e.contains("unknown protective device"), "{e}");
    }
}
