//! `ohmtrail limits DEVICE`: the published limits for one protective device, with sources.

use std::io::Write;

use anyhow::Result;
use serde::Serialize;

use ohmtrail::CAUTION;
use ohmtrail::limits::{
    DisconnectionTime, MeasuredLimit, MeasuredRule, RcdZsLimit, Source, TestConditions, ZsLimit,
    max_zs, measured_limit, measured_loop_limit, tt_rcd_zs_max,
};
use ohmtrail::model::{Device, Insulation};

/// Show the maximum Zs, Ia and measured-value limits for a protective device, with sources.
#[derive(clap::Args, Debug)]
#[command(after_help = super::caution_help())]
pub struct Args {
    /// Protective device as written on a schedule: B32, C16, RCBO B20, BS 88-3 32A, BS 3036 15A
    pub device: String,
    /// RCD rated residual current in mA: adds the TT limit 50 V / IΔn (Table 41.5)
    #[arg(long, value_name = "MA")]
    pub rcd: Option<u16>,
    /// Test temperature in °C, for the temperature-corrected measured-value limit
    #[arg(long, value_name = "C", allow_negative_numbers = true)]
    pub temp: Option<f64>,
    /// Cable insulation, thermoplastic70 (PVC) or thermosetting90 (XLPE); both are shown when omitted
    #[arg(long, value_name = "INSULATION")]
    pub insulation: Option<Insulation>,
    /// Ze in Ω: the limits then correct only the circuit's part (R1+R2, R1+Rn) for temperature
    /// and show how much of the loop is left for it
    #[arg(long, value_name = "OHM")]
    pub ze: Option<f64>,
    /// Maximum disconnection time of the circuit in seconds: 0.4 or 5
    #[arg(long, value_name = "SECONDS", default_value = "0.4")]
    pub disconnect: DisconnectionTime,
    /// Print JSON instead of a table
    #[arg(long)]
    pub json: bool,
}

#[derive(Serialize)]
struct Output<'a> {
    device: &'a str,
    disconnection: DisconnectionTime,
    device_limit: &'a ZsLimit,
    /// The 80 % rule first, then the temperature-corrected limits asked for.
    measured_limits: &'a [MeasuredLimit],
    default_rule: MeasuredRule,
    rcd_limit: Option<&'a RcdZsLimit>,
    notes: &'a [String],
    caution: &'a str,
}

pub fn run(args: &Args, out: &mut dyn Write) -> Result<()> {
    let device: Device = args.device.parse()?;
    let limit = max_zs(&device, args.disconnect)?;
    let zs = limit.zs_max_ohm;
    let mut notes = Vec::new();

    let limit_for = |rule, conditions: &TestConditions| match args.ze {
        Some(ze) => measured_loop_limit(zs, rule, conditions, ze),
        None => measured_limit(zs, rule, conditions),
    };
    let mut measured = vec![limit_for(
        MeasuredRule::RuleOfThumb80,
        &TestConditions {
            temp_c: args.temp,
            insulation: args.insulation,
            ..TestConditions::default()
        },
    )?];
    match args.temp {
        Some(t) => {
            let insulations = match args.insulation {
                Some(i) => vec![i],
                None => vec![Insulation::Thermoplastic70, Insulation::Thermosetting90],
            };
            for i in insulations {
                measured.push(limit_for(
                    MeasuredRule::TemperatureCorrected,
                    &TestConditions {
                        temp_c: Some(t),
                        insulation: Some(i),
                        ..TestConditions::default()
                    },
                )?);
            }
        }
        None => notes.push(
            "give --temp C for the temperature-corrected limit, the default rule".to_string(),
        ),
    }
    if args.temp.is_some() && args.ze.is_none() {
        notes.push(
            "Ze not given: the corrected limits treat the whole loop as the circuit's conductors, the lower figure; give --ze to correct only R1+R2".to_string(),
        );
    }
    for m in &measured {
        if let Some(c) = &m.caution
            && !notes.contains(c)
        {
            notes.push(c.clone());
        }
    }
    let rcd = args.rcd.map(tt_rcd_zs_max).transpose()?;
    if rcd.is_some() {
        notes.push(format!(
            "the rows above are for TN at {}; on TT the time is 0.2 s for a final circuit, 1 s for a distribution circuit (BS 7671 Table 41.1), met through the RCD: the TT row applies",
            args.disconnect
        ));
    }

    if args.json {
        let o = Output {
            device: &limit.device_text,
            disconnection: args.disconnect,
            device_limit: &limit,
            measured_limits: &measured,
            default_rule: MeasuredRule::default(),
            rcd_limit: rcd.as_ref(),
            notes: &notes,
            caution: CAUTION,
        };
        serde_json::to_writer_pretty(&mut *out, &o)?;
        writeln!(out)?;
        return Ok(());
    }

    let mut sources = SourceList::default();
    let mut rows = vec![
        Row::new(
            "maximum Zs (tabulated)",
            format!("{zs:.2} Ω"),
            sources.cite(&limit.source),
        ),
        Row::new(
            "Ia",
            format!("{:.0} A", limit.ia_a),
            sources.cite(&limit.ia_source),
        ),
    ];
    let with_ze = args
        .ze
        .map(|z| format!(" with Ze {z:.2} Ω (Ze as measured)"))
        .unwrap_or_default();
    match args.temp {
        Some(t) => rows.push(Row::heading(format!(
            "measured-value limit at {t} °C{with_ze}"
        ))),
        None => rows.push(Row::heading(format!("measured-value limit{with_ze}"))),
    }
    for m in &measured {
        let label = match (m.rule, m.insulation) {
            (MeasuredRule::RuleOfThumb80, _) => "  80 % rule".to_string(),
            (MeasuredRule::TemperatureCorrected, Some(Insulation::Thermoplastic70)) => {
                "  corrected, 70 °C thermoplastic".to_string()
            }
            (MeasuredRule::TemperatureCorrected, _) => {
                "  corrected, 90 °C thermosetting".to_string()
            }
        };
        let cite = sources.cite(&m.source);
        rows.push(Row::new(&label, format!("{:.2} Ω", m.limit_ohm), cite));
        if let Some(part) = m.circuit_part_ohm {
            rows.push(Row::new(
                "    of which R1+R2 or R1+Rn (less Ze)",
                format!("{part:.2} Ω"),
                cite,
            ));
        }
    }
    if let Some(r) = &rcd {
        rows.push(Row::new(
            &format!("TT with a {} mA RCD", r.rcd_ma),
            format!("{:.0} Ω", r.zs_max_ohm),
            sources.cite(&r.source),
        ));
    }
    writeln!(
        out,
        "{} at {} (default measured-value rule: {})",
        limit.device_text,
        args.disconnect,
        MeasuredRule::default()
    )?;
    write_rows(out, &rows)?;
    write_notes(out, &notes)?;
    sources.write(out)?;
    writeln!(out, "Caution: {CAUTION}")?;
    Ok(())
}

/// One aligned line: label, value, source number.
pub(crate) struct Row {
    label: String,
    value: String,
    cite: String,
}

impl Row {
    pub(crate) fn new(label: &str, value: String, cite: usize) -> Row {
        Row {
            label: label.to_string(),
            value,
            cite: format!("[{cite}]"),
        }
    }

    pub(crate) fn heading(label: String) -> Row {
        Row {
            label,
            value: String::new(),
            cite: String::new(),
        }
    }
}

pub(crate) fn write_rows(out: &mut dyn Write, rows: &[Row]) -> std::io::Result<()> {
    let lw = rows
        .iter()
        .map(|r| r.label.chars().count())
        .max()
        .unwrap_or(0);
    let vw = rows
        .iter()
        .map(|r| r.value.chars().count())
        .max()
        .unwrap_or(0);
    for r in rows {
        let line = format!("  {:<lw$}  {:>vw$}  {}", r.label, r.value, r.cite);
        writeln!(out, "{}", line.trim_end())?;
    }
    Ok(())
}

pub(crate) fn write_notes(out: &mut dyn Write, notes: &[String]) -> std::io::Result<()> {
    if !notes.is_empty() {
        writeln!(out, "Notes")?;
        for n in notes {
            writeln!(out, "  - {n}")?;
        }
    }
    Ok(())
}

/// Sources numbered in the order first cited.
#[derive(Default)]
pub(crate) struct SourceList(Vec<Source>);

impl SourceList {
    pub(crate) fn cite(&mut self, s: &Source) -> usize {
        match self.0.iter().position(|x| x == s) {
            Some(i) => i + 1,
            None => {
                self.0.push(s.clone());
                self.0.len()
            }
        }
    }

    pub(crate) fn write(&self, out: &mut dyn Write) -> std::io::Result<()> {
        writeln!(out, "Sources")?;
        for (i, s) in self.0.iter().enumerate() {
            writeln!(out, "  [{}] {s}", i + 1)?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::{Args as _, Command, FromArgMatches};

    fn parse(argv: &[&str]) -> Args {
        let cmd = Args::augment_args(Command::new("limits"));
        let m = cmd.try_get_matches_from(argv).unwrap();
        Args::from_arg_matches(&m).unwrap()
    }

    fn output(argv: &[&str]) -> Result<String> {
        let mut buf = Vec::new();
        run(&parse(argv), &mut buf)?;
        Ok(String::from_utf8(buf).unwrap())
    }

    #[test]
    fn b32_at_12_degrees() {
        // Table 41.3: B32 1.37 Ω, Ia 160 A. Measured-value limits at 12 °C:
        // 80 %: 1.096 → 1.09; 70 °C: 1.37 × 0.96856 / 1.20 = 1.1058 → 1.10; 90 °C: / 1.28 → 1.03.
        let s = output(&["limits", "B32", "--temp", "12"]).unwrap();
        assert!(s.contains("maximum Zs (tabulated)"), "{s}");
        for want in ["1.37 Ω", "160 A", "1.09 Ω", "1.10 Ω", "1.03 Ω"] {
            assert!(s.contains(want), "{want} in\n{s}");
        }
        assert!(
            s.contains("BS 7671:2018+A2:2022 Table 41.3 (published)"),
            "{s}"
        );
        assert!(s.contains("never replace"), "{s}");
        // Values line up in one column.
        let cols: Vec<usize> = s
            .lines()
            .filter(|l| l.contains(" Ω  ["))
            .map(|l| l[..l.find(" Ω  [").unwrap()].chars().count())
            .collect();
        assert!(cols.len() >= 4 && cols.iter().all(|&c| c == cols[0]), "{s}");
    }

    #[test]
    fn json_carries_the_sources() {
        let s = output(&["limits", "C20", "--temp", "-2", "--rcd", "30", "--json"]).unwrap();
        let v: serde_json::Value = serde_json::from_str(&s).unwrap();
        assert_eq!(v["device_limit"]["zs_max_ohm"], 1.09);
        assert_eq!(v["rcd_limit"]["zs_max_ohm"], 1667.0);
        assert!(
            v["notes"]
                .as_array()
                .unwrap()
                .iter()
                .any(|n| n.as_str().unwrap().contains("on TT the time is 0.2 s"))
        );
        assert_eq!(v["measured_limits"].as_array().unwrap().len(), 3);
        // The 80 % rule: BS 7671 Appendix 3, printed there as a rule of thumb.
        assert_eq!(v["measured_limits"][0]["source"]["status"], "published");
        assert_eq!(v["default_rule"], "temperature_corrected");
    }

    #[test]
    fn without_a_temperature_the_corrected_rule_is_asked_for() {
        let s = output(&["limits", "BS 88-2 32A", "--insulation", "pvc"]).unwrap();
        // Table 41.2 (derived): 0.99 Ω; 0.8 × 0.99 = 0.792 → 0.79.
        assert!(s.contains("0.99 Ω") && s.contains("0.79 Ω"), "{s}");
        assert!(s.contains("give --temp"), "{s}");
    }

    #[test]
    fn with_ze_the_circuit_part_is_shown() {
        // B32 at 10 °C, Ze 0.27: 70 °C: 0.27 + (1.37 − 0.27) × 0.9607 / 1.20 = 0.27 + 0.88064
        // = 1.15064 → 1.15 Ω, the circuit's part 0.88 Ω; 90 °C: 0.27 + 1.10 × 0.9607 / 1.28
        // = 0.27 + 0.82560 = 1.09560 → 1.09 Ω, part 0.82 Ω. 80 %: 1.096 → 1.09, part
        // 1.096 − 0.27 = 0.826 → 0.82 Ω.
        let s = output(&["limits", "B32", "--temp", "10", "--ze", "0.27"]).unwrap();
        for want in ["1.15 Ω", "0.88 Ω", "1.09 Ω", "0.82 Ω", "Ze 0.27 Ω"] {
            assert!(s.contains(want), "{want} in\n{s}");
        }
        assert!(!s.contains("Ze not given"), "{s}");
    }

    #[test]
    fn older_devices_are_shown_or_refused_with_a_reason() {
        // BS 3871 type 2 30 A: 218.5 / 210 = 1.0405 → 1.04 Ω (Ia multiple from memory).
        let s = output(&["limits", "BS 3871 type 2 30A"]).unwrap();
        assert!(s.contains("1.04 Ω") && s.contains("from memory"), "{s}");
        // BS 1361 30 A: 1.15 × 0.95 = 1.0925 → 1.09 Ω.
        let s = output(&["limits", "BS 1361 30A"]).unwrap();
        assert!(s.contains("1.09 Ω"), "{s}");
        let e = output(&["limits", "BS 88 32A"]).unwrap_err().to_string();
        assert!(
            e.contains("BS 88-2 32A") && e.contains("BS 88-3 32A"),
            "{e}"
        );
        let e = output(&["limits", "BS 88-3 45A"]).unwrap_err().to_string();
        assert!(e.contains("not known here with confidence"), "{e}");
    }

    #[test]
    fn bad_devices_and_untabulated_figures_are_refused() {
        let e = output(&["limits", "B33"]).unwrap_err().to_string();
        assert!(e.contains("B33 is not a standard rating"), "{e}");
        let e = output(&["limits", "BS 88-3 32A", "--disconnect", "5"])
            .unwrap_err()
            .to_string();
        assert!(e.contains("Table 41.4"), "{e}");
        let cmd = Args::augment_args(Command::new("limits"));
        assert!(
            cmd.try_get_matches_from(["limits", "B32", "--disconnect", "1"])
                .is_err()
        );
    }
}
