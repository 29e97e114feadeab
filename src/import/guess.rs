//! Proposing a layout from a file's headers: a table of the trade's ordinary header
//! spellings, then fuzzy matching (Jaro-Winkler, from `strsim`) for the rest. Nothing is
//! mapped silently: every proposal carries its score and basis, a doubtful one is a question,
//! and a header that matches nothing is listed. Pure.

use super::cell::Column;

/// Headers the trade writes for each column, normalised by [`normalise`]. Common practice, no
/// source: the usual headings of schedules of test results.
const SYNONYMS: &[(Column, &[&str])] = &[
    (
        Column::PropertyRef,
        &[
            "propertyref",
            "property",
            "propref",
            "ref",
            "reference",
            "propertyid",
            "siteref",
            "jobref",
        ],
    ),
    (
        Column::Address,
        &[
            "address",
            "propertyaddress",
            "siteaddress",
            "installationaddress",
        ],
    ),
    (
        Column::Board,
        &[
            "board",
            "db",
            "dbref",
            "distributionboard",
            "boardref",
            "consumerunit",
            "cu",
            "boardno",
        ],
    ),
    (
        Column::Earthing,
        &[
            "earthing",
            "earthingarrangement",
            "earthingsystem",
            "systemtype",
        ],
    ),
    (
        Column::Circuit,
        &[
            "circuit",
            "circuitno",
            "circuitnumber",
            "cct",
            "cctno",
            "cctnumber",
            "way",
            "wayno",
            "circuitref",
            "cctref",
        ],
    ),
    (
        Column::Description,
        &[
            "description",
            "circuitdescription",
            "desc",
            "cctdescription",
            "pointsserved",
        ],
    ),
    (Column::Ring, &["ring", "ringfinal", "ringcircuit"]),
    (
        Column::Device,
        &[
            "device",
            "protectivedevice",
            "ocpd",
            "breaker",
            "mcb",
            "overcurrentdevice",
        ],
    ),
    (
        Column::RcdMa,
        &[
            "rcdma",
            "idn",
            "rcdidn",
            "ratedresidualcurrent",
            "rcdrating",
            "residualcurrent",
        ],
    ),
    (Column::RcdType, &["rcdtype"]),
    (Column::RcdDelay, &["rcddelay"]),
    (
        Column::LiveMm2,
        &["live", "livemm2", "livecsa", "csalive", "livesize"],
    ),
    (
        Column::CpcMm2,
        &["cpc", "cpcmm2", "cpccsa", "csacpc", "cpcsize"],
    ),
    (
        Column::LengthM,
        &["length", "lengthm", "cablelength", "runlength"],
    ),
    (
        Column::VisitDate,
        &[
            "date",
            "visitdate",
            "testdate",
            "dateoftest",
            "inspectiondate",
            "datetested",
        ],
    ),
    (
        Column::Inspector,
        &[
            "inspector",
            "testedby",
            "inspectedby",
            "engineer",
            "electrician",
        ],
    ),
    (
        Column::Instrument,
        &[
            "instrument",
            "instrumentserial",
            "testinstrument",
            "serialno",
            "instrumentno",
        ],
    ),
    (
        Column::AmbientC,
        &[
            "ambient",
            "ambientc",
            "ambienttemperature",
            "ambienttemp",
            "temperature",
            "temp",
        ],
    ),
    (
        Column::ZeOhm,
        &["ze", "zeohm", "externalloopimpedance", "externalimpedance"],
    ),
    (
        Column::RingR1Ohm,
        &[
            "ringr1",
            "r1ring",
            "endtoendr1",
            "ringendtoendr1",
            "ringr1ohm",
        ],
    ),
    (Column::RingRnOhm, &["ringrn", "rnring", "endtoendrn", "rn"]),
    (Column::RingR2Ohm, &["ringr2", "r2ring", "endtoendr2"]),
    (
        Column::R1r2Ohm,
        &["r1r2", "r1plusr2", "r1r2ohm", "continuityr1r2"],
    ),
    (Column::R2Ohm, &["r2", "r2ohm"]),
    (Column::R1rnOhm, &["r1rn", "r1plusrn"]),
    (
        Column::ZsOhm,
        &[
            "zs",
            "zsohm",
            "measuredzs",
            "zsmeasured",
            "earthloopimpedance",
        ],
    ),
    (
        Column::IrLlMohm,
        &[
            "irll",
            "irlivelive",
            "irln",
            "insulationll",
            "irliveneutral",
            "insulationresistancell",
        ],
    ),
    (
        Column::IrLeMohm,
        &[
            "irle",
            "irliveearth",
            "irlpe",
            "insulationle",
            "irlivetoearth",
            "insulationresistancele",
        ],
    ),
    (
        Column::RcdMs,
        &[
            "rcdms",
            "rcdx1",
            "rcd1x",
            "rcdtrip",
            "rcdtime",
            "rcdtriptime",
            "rcd1xidn",
            "x1",
        ],
    ),
    (
        Column::Rcd5xMs,
        &["rcdx5", "rcd5x", "rcd5xms", "rcd5xidn", "x5"],
    ),
    (
        Column::Note,
        &["note", "notes", "remarks", "comments", "comment"],
    ),
    (
        Column::PfcKa,
        &[
            "ipf",
            "pfc",
            "pscc",
            "pefc",
            "ipfka",
            "pfcka",
            "prospectivefaultcurrent",
        ],
    ),
    (Column::ZdbOhm, &["zdb", "zdbohm"]),
    (Column::U0V, &["u0", "uo", "u0v", "nominalvoltage"]),
    (Column::RaOhm, &["ra", "raohm", "electroderesistance"]),
    (Column::FedFrom, &["fedfrom", "suppliedfrom"]),
    (
        Column::SubmainR1r2Ohm,
        &["submainr1r2", "submain", "submainr1r2ohm"],
    ),
    (
        Column::BondingCsaMm2,
        &["bondingcsa", "mainbondingcsa", "mainbonding", "bondingsize"],
    ),
    (
        Column::ReportRef,
        &["reportref", "reportno", "reportnumber", "reportreference"],
    ),
    (
        Column::IntervalMonths,
        &["interval", "retestinterval", "inspectioninterval"],
    ),
    (Column::Extent, &["extent", "extentofinspection"]),
    (
        Column::Insulation,
        &["insulationtype", "cableinsulation", "conductorinsulation"],
    ),
    (
        Column::WiringType,
        &["wiringtype", "typeofwiring", "cabletype", "wiring"],
    ),
    (
        Column::RefMethod,
        &[
            "refmethod",
            "referencemethod",
            "refmethodofinstallation",
            "installationmethod",
        ],
    ),
    (
        Column::Points,
        &["points", "noofpoints", "numberofpoints", "pointsserved"],
    ),
    (
        Column::BreakingKa,
        &[
            "breakingcapacity",
            "breakingcapacityka",
            "breakingka",
            "ratedbreakingcapacity",
            "icn",
        ],
    ),
    (Column::Afdd, &["afdd", "afddfitted", "arcfaultdetection"]),
    (
        Column::RcdId,
        &[
            "rcdid",
            "rcdref",
            "rcdreference",
            "protectingrcd",
            "rcddesignation",
        ],
    ),
    (
        Column::Polarity,
        &["polarity", "polaritycorrect", "polaritychecked"],
    ),
    (
        Column::IrTestV,
        &[
            "testvoltage",
            "testvoltagev",
            "irtestvoltage",
            "irtestv",
            "insulationtestvoltage",
            "irvoltage",
        ],
    ),
    (
        Column::RcdButton,
        &[
            "rcdbutton",
            "rcdtestbutton",
            "testbutton",
            "rcdtestbuttonoperation",
            "testbuttonoperation",
            "manualtestbutton",
        ],
    ),
];

/// Headers that look like a column but are not one, and why they are never mapped.
const NOT_COLUMNS: &[(&[&str], &str)] = &[(
    &[
        "maxzs",
        "zsmax",
        "maximumzs",
        "maxpermittedzs",
        "permittedzs",
        "tabulatedzs",
        "zslimit",
        "maxr1r2",
        "r1r2max",
    ],
    "a limit, not a reading: ohmtrail works each circuit's limits out itself",
)];

/// A score at or above this is proposed; below it, down to [`ASK`], it is a question.
pub const PROPOSE: f64 = 0.92;
/// Below this score nothing is proposed.
pub const ASK: f64 = 0.80;
/// Two columns within this of each other are ambiguous.
const AMBIGUOUS: f64 = 0.03;

/// What the guess says about one source header.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    /// Mapped with confidence.
    Mapped {
        column: Column,
        score: f64,
        basis: String,
    },
    /// A possible mapping that the user must confirm.
    Question {
        column: Column,
        score: f64,
        basis: String,
        why: String,
    },
    /// Nothing proposed.
    Unmapped { reason: String },
}

/// One source header and what the guess says about it.
#[derive(Debug, Clone, PartialEq)]
pub struct GuessRow {
    /// 1-based position in the header.
    pub position: usize,
    pub source: String,
    pub outcome: Outcome,
}

/// A header lower-cased, units in brackets and unit words dropped, Ω spelt out, and only
/// letters and digits kept: `IR L-E (MΩ)` and `ir l/e` are both `irle`.
pub fn normalise(header: &str) -> (String, String) {
    let mut s = String::new();
    let mut depth = 0;
    for c in header.chars() {
        match c {
            '(' | '[' => depth += 1,
            ')' | ']' => depth -= 1,
            _ if depth > 0 => {}
            'Ω' | 'ω' | '\u{2126}' => s.push_str("ohm"),
            '+' => s.push_str(" plus "),
            _ => s.push(c),
        }
    }
    let lower = s.to_lowercase();
    let tokens: Vec<&str> = lower
        .split(|c: char| !c.is_alphanumeric())
        .filter(|t| !t.is_empty())
        .collect();
    // `R1 + R2` is r1r2, not r1plusr2: a plus between two terms is how the trade writes the sum.
    let whole: String = tokens.iter().filter(|t| **t != "plus").copied().collect();
    let units = [
        "ohm", "ohms", "mohm", "mohms", "megohm", "megohms", "ms", "mm2", "m", "c", "ma", "s",
        "ka", "v",
    ];
    let bare: String = tokens
        .iter()
        .filter(|t| **t != "plus" && !units.contains(t))
        .copied()
        .collect();
    (whole, bare)
}

/// The column a header names outright: its own name or one of the trade's usual headers for
/// it (no fuzzy matching).
pub fn usual_header(header: &str) -> Option<Column> {
    match guess_one(header) {
        Outcome::Mapped { column, score, .. } if score >= 1.0 => Some(column),
        _ => None,
    }
}

/// Propose a mapping for each header of a file.
pub fn guess(headers: &[String]) -> Vec<GuessRow> {
    let mut rows: Vec<GuessRow> = headers
        .iter()
        .enumerate()
        .map(|(i, h)| GuessRow {
            position: i + 1,
            source: h.clone(),
            outcome: guess_one(h),
        })
        .collect();
    // Two headers proposed for one column: the better keeps it, the other becomes a question.
    for i in 0..rows.len() {
        let Outcome::Mapped { column, score, .. } = rows[i].outcome.clone() else {
            continue;
        };
        for j in 0..rows.len() {
            if i == j {
                continue;
            }
            if let Outcome::Mapped {
                column: other,
                score: s2,
                basis,
            } = rows[j].outcome.clone()
                && other == column
                && (s2 < score || (s2 == score && j > i))
            {
                rows[j].outcome = Outcome::Question {
                    column,
                    score: s2,
                    basis,
                    why: format!(
                        "column {} ({:?}) also matches {}",
                        rows[i].position,
                        rows[i].source,
                        column.name()
                    ),
                };
            }
        }
    }
    rows
}

fn guess_one(header: &str) -> Outcome {
    let (whole, bare) = normalise(header);
    if whole.is_empty() {
        return Outcome::Unmapped {
            reason: "no name".into(),
        };
    }
    for key in [&whole, &bare] {
        if key.is_empty() {
            continue;
        }
        for (names, reason) in NOT_COLUMNS {
            if names.contains(&key.as_str()) {
                return Outcome::Unmapped {
                    reason: (*reason).to_string(),
                };
            }
        }
        if let Some(c) = Column::VISIT
            .iter()
            .find(|c| c.name().replace('_', "") == *key)
        {
            return Outcome::Mapped {
                column: *c,
                score: 1.0,
                basis: "the column's own name".into(),
            };
        }
        if let Some((c, _)) = SYNONYMS.iter().find(|(_, s)| s.contains(&key.as_str())) {
            return Outcome::Mapped {
                column: *c,
                score: 1.0,
                basis: format!("a usual header for {}", c.name()),
            };
        }
    }
    // Fuzzy: the best Jaro-Winkler similarity to any synonym, per column.
    let mut best: Vec<(f64, Column, &str)> = SYNONYMS
        .iter()
        .map(|(c, names)| {
            names
                .iter()
                .map(|n| (strsim::jaro_winkler(&whole, n), *c, *n))
                .fold((0.0, *c, ""), |a, b| if b.0 > a.0 { b } else { a })
        })
        .collect();
    best.sort_by(|a, b| b.0.total_cmp(&a.0));
    let near_limit = NOT_COLUMNS
        .iter()
        .flat_map(|(names, reason)| {
            let whole = &whole;
            names
                .iter()
                .map(move |n| (strsim::jaro_winkler(whole, n), *reason))
        })
        .fold((0.0, ""), |a, b| if b.0 > a.0 { b } else { a });
    let (score, column, like) = best[0];
    if near_limit.0 >= score && near_limit.0 >= ASK {
        return Outcome::Unmapped {
            reason: format!(
                "{} (near a header of that kind, {:.2})",
                near_limit.1, near_limit.0
            ),
        };
    }
    if score < ASK {
        return Outcome::Unmapped {
            reason: format!(
                "nothing near: the closest is {} ({like:?}, {score:.2})",
                column.name()
            ),
        };
    }
    let basis = format!("near {like:?} (Jaro-Winkler {score:.2})");
    let (second, other, _) = best[1];
    if score - second < AMBIGUOUS {
        return Outcome::Question {
            column,
            score,
            basis,
            why: format!("ambiguous: {} scores {second:.2}", other.name()),
        };
    }
    if score < PROPOSE {
        return Outcome::Question {
            column,
            score,
            basis,
            why: "a low score".into(),
        };
    }
    Outcome::Mapped {
        column,
        score,
        basis,
    }
}

/// The layout text a guess proposes: confident mappings in `[columns]`, questions commented
/// out beside them for the user to answer, unmatched headers in `ignore`, and a commented
/// constant for each required column no header fills.
pub fn layout_text(rows: &[GuessRow]) -> String {
    let q = |s: &str| serde_json::to_string(s).unwrap_or_default();
    let mut out = String::from(
        "# A layout proposed by `ohmtrail layout guess`: check every line before using it.\n",
    );
    let ignored: Vec<&GuessRow> = rows
        .iter()
        .filter(|r| matches!(r.outcome, Outcome::Unmapped { .. }))
        .collect();
    out.push_str("date_order = \"day_first\"\n");
    out.push_str(&format!(
        "ignore = [{}]\n",
        ignored
            .iter()
            .map(|r| q(&r.source))
            .collect::<Vec<_>>()
            .join(", ")
    ));
    out.push_str("\n[columns]\n");
    let mut filled = Vec::new();
    for r in rows {
        match &r.outcome {
            Outcome::Mapped { column, score, basis } => {
                filled.push(*column);
                out.push_str(&format!(
                    "{} = {}  # {score:.2}, {basis}\n",
                    q(&r.source),
                    q(column.name())
                ));
            }
            Outcome::Question {
                column,
                score,
                basis,
                why,
            } => out.push_str(&format!(
                "# {} = {}  # QUESTION ({why}): {score:.2}, {basis}; uncomment it, or add the header to ignore\n",
                q(&r.source),
                q(column.name())
            )),
            Outcome::Unmapped { .. } => {}
        }
    }
    let missing: Vec<&Column> = Column::VISIT_REQUIRED
        .iter()
        .filter(|c| !filled.contains(c))
        .collect();
    if !missing.is_empty() {
        out.push_str("\n[constants]\n");
        for c in missing {
            out.push_str(&format!(
                "# {} = \"...\"  # no header gives it: set it here or with `import --set {}=...`\n",
                c.name(),
                c.name()
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn one(h: &str) -> Outcome {
        guess(&[h.to_string()]).remove(0).outcome
    }

    fn mapped(h: &str) -> Option<Column> {
        match one(h) {
            Outcome::Mapped { column, .. } => Some(column),
            _ => None,
        }
    }

    /// The trade's usual headers (common practice, no source) map to their columns.
    #[test]
    fn ordinary_trade_headers_map() {
        for (h, c) in [
            ("Circuit No", Column::Circuit),
            ("Cct", Column::Circuit),
            ("Date", Column::VisitDate),
            ("R1+R2", Column::R1r2Ohm),
            ("R1 + R2", Column::R1r2Ohm),
            ("R1+R2 (Ω)", Column::R1r2Ohm),
            ("Zs", Column::ZsOhm),
            ("Zs (ohms)", Column::ZsOhm),
            ("IR L-E", Column::IrLeMohm),
            ("IR L/L", Column::IrLlMohm),
            ("IR L-E MΩ", Column::IrLeMohm),
            ("RCD ms", Column::RcdMs),
            ("RCD x1", Column::RcdMs),
            ("RCD x5", Column::Rcd5xMs),
            ("Ze", Column::ZeOhm),
            ("zs_ohm", Column::ZsOhm),
        ] {
            assert_eq!(mapped(h), Some(c), "{h}");
        }
    }

    /// The schedule's other columns under the headers the trade writes for them (common
    /// practice, no source), units in the header or not.
    #[test]
    fn schedule_headers_map() {
        for (h, c) in [
            ("Polarity", Column::Polarity),
            ("Polarity ✓/✗", Column::Polarity),
            ("Points", Column::Points),
            ("No. of points", Column::Points),
            ("Ref Method", Column::RefMethod),
            ("Reference method", Column::RefMethod),
            ("Breaking capacity kA", Column::BreakingKa),
            ("Breaking capacity (kA)", Column::BreakingKa),
            ("AFDD", Column::Afdd),
            ("Test voltage", Column::IrTestV),
            ("Test voltage (V)", Column::IrTestV),
            ("IR test voltage V", Column::IrTestV),
            ("RCD test button", Column::RcdButton),
            ("Test button operation", Column::RcdButton),
            ("Type of wiring", Column::WiringType),
            ("RCD ref", Column::RcdId),
            ("Sub-main R1+R2", Column::SubmainR1r2Ohm),
            ("U0 (V)", Column::U0V),
        ] {
            assert_eq!(mapped(h), Some(c), "{h}: {:?}", one(h));
        }
    }

    #[test]
    fn a_limit_is_never_a_reading() {
        for h in ["Max Zs", "Zs max", "Max. permitted Zs", "Maximum Zs (Ω)"] {
            assert!(
                matches!(one(h), Outcome::Unmapped { .. }),
                "{h}: {:?}",
                one(h)
            );
        }
        for h in ["Ipf", "PFC", "PFC (kA)"] {
            assert_eq!(mapped(h), Some(Column::PfcKa), "{h}");
        }
    }

    #[test]
    fn doubtful_headers_are_questions_and_strangers_unmapped() {
        assert!(matches!(
            one("Circuit Numbr"),
            Outcome::Question { .. } | Outcome::Mapped { .. }
        ));
        assert!(matches!(one("Colour of door"), Outcome::Unmapped { .. }));
        // Two headers for one column: the second is asked about.
        let g = guess(&["Zs".to_string(), "Zs (measured)".to_string()]);
        assert!(matches!(g[0].outcome, Outcome::Mapped { .. }));
        assert!(
            matches!(g[1].outcome, Outcome::Question { .. }),
            "{:?}",
            g[1]
        );
    }
}
