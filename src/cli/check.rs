//! `ohmtrail check`: one set of readings through the limits engine, to see what it concludes.

use std::io::Write;

use anyhow::Result;
use comfy_table::{CellAlignment, ContentArrangement, Table, presets};
use serde::Serialize;

use ohmtrail::CAUTION;
use ohmtrail::limits::{
    CircuitFacts, DisconnectionChoice, DisconnectionTime, FaultPathInputs, FaultPathReport,
    MeasuredRule, PathOutcome, PathResult, TestConditions, default_disconnection,
    evaluate_fault_paths,
};
use ohmtrail::model::{Device, Earthing, Insulation};

use super::limits::{Row, SourceList, write_notes, write_rows};

/// Judge one circuit's readings (both fault paths) against its device, with sources.
#[derive(clap::Args, Debug)]
#[command(after_help = super::caution_help())]
pub struct Args {
    /// Protective device as written on a schedule: B16, RCBO C20, BS 88-3 32A
    #[arg(long)]
    pub device: String,
    /// External earth fault loop impedance Ze, Ω
    #[arg(long, value_name = "OHM")]
    pub ze: Option<f64>,
    /// R1+R2 of the circuit, Ω
    #[arg(long, value_name = "OHM")]
    pub r1r2: Option<f64>,
    /// R1+Rn of the circuit, Ω
    #[arg(long, value_name = "OHM")]
    pub r1rn: Option<f64>,
    /// Earth fault loop impedance measured at the circuit, Ω
    #[arg(long, value_name = "OHM")]
    pub zs: Option<f64>,
    /// Test temperature, °C
    #[arg(long, value_name = "C", allow_negative_numbers = true)]
    pub temp: Option<f64>,
    /// Cable insulation, thermoplastic70 (PVC) or thermosetting90 (XLPE); 90 °C is assumed when omitted, the lower limit
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
    disconnection: &'a DisconnectionChoice,
    report: &'a FaultPathReport,
    caution: &'a str,
}

fn outcome_words(o: PathOutcome) -> &'static str {
    match o {
        PathOutcome::Within => "within",
        PathOutcome::OverMeasuredLimit => "over measured-value limit",
        PathOutcome::OverTabulatedLimit => "over tabulated limit",
    }
}

pub fn run(args: &Args, out: &mut dyn Write) -> Result<()> {
    let device: Device = args.device.parse()?;
    let choice = match args.disconnect {
        Some(t) => default_disconnection(&CircuitFacts {
            recorded_s: Some(t.seconds()),
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
        },
        rule: args.rule.unwrap_or_default(),
        ..FaultPathInputs::new(device, choice.time)
    };
    let report = evaluate_fault_paths(&inputs)?;

    if args.json {
        let o = Output {
            disconnection: &choice,
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
    let mut rows = vec![
        Row::new(
            "disconnection time",
            choice.time.to_string(),
            sources.cite(&choice.source),
        ),
        Row::new(
            &format!("maximum Zs for {} (tabulated)", dl.device_text),
            format!("{:.2} Ω", dl.zs_max_ohm),
            sources.cite(&dl.source),
        ),
        Row::new(
            "Ia",
            format!("{:.0} A", dl.ia_a),
            sources.cite(&dl.ia_source),
        ),
        Row::new(
            &format!("measured-value limit ({})", ml.rule.words()),
            format!("{:.2} Ω", ml.limit_ohm),
            sources.cite(&ml.source),
        ),
    ];
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
            "path", "made of", "Z Ω", "limit Ω", "used %", "If A", "Ia A", "outcome",
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
            format!("{:.0}", p.fault_current_a),
            if p.ia_a < 1.0 {
                format!("{:.2}", p.ia_a)
            } else {
                format!("{:.0}", p.ia_a)
            },
            outcome_words(p.outcome).to_string(),
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
        run(&args, &mut buf)?;
        Ok(String::from_utf8(buf).unwrap())
    }

    const EXAMPLE: [&str; 11] = [
        "check", "--device", "B16", "--ze", "0.3", "--r1r2", "0.6", "--r1rn", "0.5", "--temp", "15",
    ];

    #[test]
    fn contract_example_in_words() {
        // B16: Table 41.3 2.73 Ω, Ia 80 A. 15 °C, insulation not given so 90 °C assumed:
        // 2.73 × (1 − 0.00393 × 5) / 1.28 = 2.73 × 0.98035 / 1.28 = 2.0909 → 2.09 Ω.
        // Earth fault 0.30 + 0.60 = 0.90 Ω: 43.1 % used, If = 218.5 / 0.9 = 243 A.
        // Line–neutral 0.30 + 0.50 = 0.80 Ω: 38.3 % used, If = 273 A.
        let s = output(&EXAMPLE).unwrap();
        for want in ["2.73 Ω", "2.09 Ω", "43.1", "243", "38.3", "273", "within"] {
            assert!(s.contains(want), "{want} in\n{s}");
        }
        assert!(s.contains("expected to disconnect within 0.4 s"), "{s}");
        assert!(s.contains("90 °C thermosetting assumed"), "{s}");
        assert!(s.contains("never replace"), "{s}");
        assert!(s.contains("no condition codes"), "{s}");
        assert!(
            s.contains("[1] BS 7671:2018+A2:2022 Regulation 411.3.2.2"),
            "{s}"
        );
    }

    #[test]
    fn a_failing_neutral_is_spelled_out() {
        // Invented: B32, R1+Rn 1.40 Ω with Ze 0.25: 1.65 Ω > 1.37 Ω; If = 218.5 / 1.65 = 132 A
        // below Ia 160 A.
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
        assert!(s.contains("over tabulated limit"), "{s}");
        assert!(s.contains("132 A is below Ia 160 A"), "{s}");
        assert!(s.contains("may not disconnect within 0.4 s"), "{s}");
    }

    #[test]
    fn json_output() {
        let mut argv = EXAMPLE.to_vec();
        argv.push("--json");
        let s = output(&argv).unwrap();
        let v: serde_json::Value = serde_json::from_str(&s).unwrap();
        assert_eq!(v["report"]["earth_fault"]["outcome"], "within");
        assert_eq!(v["report"]["measured_limit"]["limit_ohm"], 2.09);
        assert_eq!(v["disconnection"]["time"], "0.4s");
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
