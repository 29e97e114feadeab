//! Copper conductor resistance and what a circuit of known cable should read.
//!
//! IEC 60228 gives maxima at 20 °C, so an expected value here is an upper estimate for sound
//! cable. Ring final checks follow the usual end-to-end and cross-connected relations.

use serde::{Deserialize, Serialize};

use super::source::{Source, SourceStatus};
use super::temperature::factor;
use super::{LimitsError, check_ohms};

/// IEC 60228 class 1/2 plain copper, maximum resistance at 20 °C: (csa mm², mΩ/m).
pub const IEC_60228_COPPER: [(f64, f64); 9] = [
    (1.0, 18.10),
    (1.5, 12.10),
    (2.5, 7.41),
    (4.0, 4.61),
    (6.0, 3.08),
    (10.0, 1.83),
    (16.0, 1.15),
    (25.0, 0.727),
    (35.0, 0.524),
];

/// R1+R2 per metre for the usual live/cpc pairs at 20 °C (IET On-Site Guide Table I1):
/// (live mm², cpc mm², mΩ/m).
pub const R1R2_PAIRS: [(f64, f64, f64); 10] = [
    (1.0, 1.0, 36.20),
    (1.5, 1.0, 30.20),
    (1.5, 1.5, 24.20),
    (2.5, 1.5, 19.51),
    (2.5, 2.5, 14.82),
    (4.0, 1.5, 16.71),
    (4.0, 2.5, 12.02),
    (6.0, 2.5, 10.49),
    (10.0, 4.0, 6.44),
    (16.0, 6.0, 4.23),
];

const IEC_60228: Source = Source::new(
    "IEC 60228 Table 2 (class 1/2 plain copper)",
    SourceStatus::Published,
    "maximum conductor resistance at 20 °C",
);
const OSG_I1: Source = Source::new(
    "IET On-Site Guide Table I1",
    SourceStatus::Published,
    "R1+R2 per metre at 20 °C for a live/cpc pair",
);
const PAIR_DERIVED: Source = Source::new(
    "IEC 60228 Table 2 (class 1/2 plain copper)",
    SourceStatus::Derived,
    "R1+R2 per metre = live + cpc conductor resistance at 20 °C",
);
const RING_PRACTICE: Source = Source::new(
    "IET Guidance Note 3 (ring final circuit continuity)",
    SourceStatus::CommonPractice,
    "r1 and rn within 0.05 Ω; r2 ≈ r1 × live csa / cpc csa; cross-connected readings ≈ (r1 + r2) / 4 and (r1 + rn) / 4",
);

fn same(a: f64, b: f64) -> bool {
    (a - b).abs() < 1e-9
}

fn known_sizes() -> String {
    IEC_60228_COPPER
        .iter()
        .map(|(c, _)| c.to_string())
        .collect::<Vec<_>>()
        .join(", ")
}

/// A resistance per metre with its source.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PerMetre {
    pub mohm_per_m: f64,
    pub source: Source,
}

/// Copper resistance of one conductor at 20 °C, mΩ/m.
pub fn copper_mohm_per_m(csa_mm2: f64) -> Result<PerMetre, LimitsError> {
    IEC_60228_COPPER
        .iter()
        .find(|(c, _)| same(*c, csa_mm2))
        .map(|&(_, r)| PerMetre {
            mohm_per_m: r,
            source: IEC_60228,
        })
        .ok_or_else(|| LimitsError::UnknownCsa {
            csa: csa_mm2,
            known: known_sizes(),
        })
}

/// R1+R2 per metre of a live/cpc pair at 20 °C: the published pair where there is one,
/// otherwise the sum of the two conductors.
pub fn r1r2_mohm_per_m(live_mm2: f64, cpc_mm2: f64) -> Result<PerMetre, LimitsError> {
    let live = copper_mohm_per_m(live_mm2)?;
    let cpc = copper_mohm_per_m(cpc_mm2)?;
    if let Some(&(_, _, r)) = R1R2_PAIRS
        .iter()
        .find(|(l, c, _)| same(*l, live_mm2) && same(*c, cpc_mm2))
    {
        return Ok(PerMetre {
            mohm_per_m: r,
            source: OSG_I1,
        });
    }
    Ok(PerMetre {
        mohm_per_m: live.mohm_per_m + cpc.mohm_per_m,
        source: PAIR_DERIVED,
    })
}

/// A run of twin-and-cpc copper cable.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Cable {
    pub live_mm2: f64,
    pub cpc_mm2: f64,
    /// Route length, m: to the furthest point of a radial, or all the way round a ring.
    pub length_m: f64,
}

fn check_length(m: f64) -> Result<f64, LimitsError> {
    if m.is_finite() && m > 0.0 && m <= 10_000.0 {
        Ok(m)
    } else {
        Err(LimitsError::BadValue {
            what: "length m",
            value: m,
            expected: "a positive length of at most 10000 m",
        })
    }
}

/// What a radial of known cable should read at its far end.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RadialExpectation {
    pub cable: Cable,
    /// Conductor temperature the figures are for, °C (20 when none was asked for).
    pub temp_c: f64,
    pub r1r2_ohm: f64,
    pub r1rn_ohm: f64,
    pub sources: Vec<Source>,
}

/// Expected R1+R2 and R1+Rn of a radial; `temp_c` None gives the tabulated 20 °C values.
pub fn expected_radial(
    cable: &Cable,
    temp_c: Option<f64>,
) -> Result<RadialExpectation, LimitsError> {
    let len = check_length(cable.length_m)?;
    let t = temp_c.unwrap_or(20.0);
    let f = factor(t)?;
    let pair = r1r2_mohm_per_m(cable.live_mm2, cable.cpc_mm2)?;
    let live = copper_mohm_per_m(cable.live_mm2)?;
    let mut sources = vec![pair.source.clone()];
    if pair.source != live.source {
        sources.push(live.source.clone());
    }
    if t != 20.0 {
        sources.push(temperature_source());
    }
    Ok(RadialExpectation {
        cable: *cable,
        temp_c: t,
        r1r2_ohm: pair.mohm_per_m * len / 1000.0 * f,
        r1rn_ohm: 2.0 * live.mohm_per_m * len / 1000.0 * f,
        sources,
    })
}

fn temperature_source() -> Source {
    Source::new(
        "IEC 60228 (α = 0.00393 /K for copper)",
        SourceStatus::Published,
        "Rt = R20 × (1 + α(t − 20))",
    )
}

/// What a ring of known cable should read, end to end and cross-connected.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RingExpectation {
    pub cable: Cable,
    pub temp_c: f64,
    pub r1_ohm: f64,
    pub rn_ohm: f64,
    pub r2_ohm: f64,
    /// (r1 + r2) / 4: each socket with line and cpc cross-connected.
    pub r1r2_ohm: f64,
    /// (r1 + rn) / 4: each socket with line and neutral cross-connected.
    pub r1rn_ohm: f64,
    pub sources: Vec<Source>,
}

/// Expected readings of a ring whose total route length is `cable.length_m`.
pub fn expected_ring(cable: &Cable, temp_c: Option<f64>) -> Result<RingExpectation, LimitsError> {
    let len = check_length(cable.length_m)?;
    let t = temp_c.unwrap_or(20.0);
    let f = factor(t)?;
    let live = copper_mohm_per_m(cable.live_mm2)?.mohm_per_m;
    let cpc = copper_mohm_per_m(cable.cpc_mm2)?.mohm_per_m;
    let r1 = live * len / 1000.0 * f;
    let r2 = cpc * len / 1000.0 * f;
    let mut sources = vec![IEC_60228, RING_PRACTICE];
    if t != 20.0 {
        sources.push(temperature_source());
    }
    Ok(RingExpectation {
        cable: *cable,
        temp_c: t,
        r1_ohm: r1,
        rn_ohm: r1,
        r2_ohm: r2,
        r1r2_ohm: (r1 + r2) / 4.0,
        r1rn_ohm: (r1 + r1) / 4.0,
        sources,
    })
}

/// Ring final readings as taken: end-to-end r1, rn, r2 and the highest cross-connected readings.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct RingReadings {
    pub r1_ohm: f64,
    pub rn_ohm: f64,
    pub r2_ohm: Option<f64>,
    pub live_mm2: Option<f64>,
    pub cpc_mm2: Option<f64>,
    /// Highest R1+R2 measured at a socket with line and cpc cross-connected.
    pub r1r2_ohm: Option<f64>,
    /// Highest R1+Rn measured at a socket with line and neutral cross-connected.
    pub r1rn_ohm: Option<f64>,
}

/// How far a ring may stray from the ideal relations before it is a finding.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RingTolerance {
    /// Largest difference between r1 and rn, Ω (common practice: 0.05).
    pub ends_ohm: f64,
    /// Largest departure of r2 / r1 from the csa ratio, % (our choice: 10, which covers
    /// 0.01 Ω display resolution on a short ring and the 2 % gap between the csa ratio 1.67
    /// and the IEC 60228 resistance ratio 1.63 for 2.5/1.5).
    pub ratio_pct: f64,
    /// Largest difference between a cross-connected reading and its expected value, Ω
    /// (our choice: 0.05, matching the end-to-end tolerance).
    pub cross_ohm: f64,
}

impl Default for RingTolerance {
    fn default() -> Self {
        RingTolerance {
            ends_ohm: 0.05,
            ratio_pct: 10.0,
            cross_ohm: 0.05,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RingFindingKind {
    /// r1 and rn differ by more than the tolerance.
    LineNeutralEnds,
    /// r2 / r1 is away from the csa ratio.
    CpcRatio,
    /// Highest R1+R2 is away from (r1 + r2) / 4.
    CrossR1R2,
    /// Highest R1+Rn is away from (r1 + rn) / 4.
    CrossR1Rn,
}

/// A departure from the ring relations, in words with the figures.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RingFinding {
    pub kind: RingFindingKind,
    pub text: String,
    pub source: Source,
}

/// The ring relations worked out from the readings, and any findings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RingCheck {
    pub expected_r1r2_ohm: Option<f64>,
    pub expected_r1rn_ohm: f64,
    pub r2_over_r1: Option<f64>,
    pub expected_ratio: Option<f64>,
    pub tolerance: RingTolerance,
    pub findings: Vec<RingFinding>,
    /// Checks that could not be made, and why.
    pub not_checked: Vec<String>,
    /// Departures that are not ring faults: a cross-connected reading above its expected value
    /// is what a spur on the ring (or a reading taken at a spur's end) gives.
    pub notes: Vec<String>,
    pub source: Source,
}

fn beyond(diff: f64, tol: f64) -> bool {
    // Readings are to 0.01 Ω; a difference equal to the tolerance is within it.
    diff > tol + 1e-9
}

/// Check ring final readings against the usual relations.
pub fn check_ring(r: &RingReadings, tol: &RingTolerance) -> Result<RingCheck, LimitsError> {
    let r1 = check_ohms("ring r1", r.r1_ohm)?;
    let rn = check_ohms("ring rn", r.rn_ohm)?;
    let r2 = r.r2_ohm.map(|v| check_ohms("ring r2", v)).transpose()?;
    let mut findings = Vec::new();
    let mut not_checked = Vec::new();
    let finding = |kind, text: String| RingFinding {
        kind,
        text,
        source: RING_PRACTICE,
    };

    let ends = (r1 - rn).abs();
    if beyond(ends, tol.ends_ohm) {
        findings.push(finding(
            RingFindingKind::LineNeutralEnds,
            format!(
                "r1 {r1:.2} Ω and rn {rn:.2} Ω differ by {ends:.2} Ω, more than the {:.2} Ω expected of a continuous ring",
                tol.ends_ohm
            ),
        ));
    }

    let ratio = match r2 {
        Some(r2) if r1 > 0.0 => Some(r2 / r1),
        Some(_) => {
            not_checked.push("r2 / r1: r1 is zero".to_string());
            None
        }
        None => {
            not_checked.push("r2 / r1 and (r1 + r2) / 4: r2 not recorded".to_string());
            None
        }
    };
    let expected_ratio = match (r.live_mm2, r.cpc_mm2) {
        (Some(l), Some(c)) if l > 0.0 && c > 0.0 => Some(l / c),
        _ => {
            not_checked.push("r2 / r1 against the csa ratio: live or cpc size not recorded".into());
            None
        }
    };
    if let (Some(ratio), Some(want), Some(r2)) = (ratio, expected_ratio, r2) {
        let off_pct = (ratio / want - 1.0).abs() * 100.0;
        if beyond(off_pct, tol.ratio_pct) {
            findings.push(finding(
                RingFindingKind::CpcRatio,
                format!(
                    "r2 / r1 is {ratio:.2} (r2 {r2:.2} Ω, r1 {r1:.2} Ω) against {want:.2} expected for {}/{} cable, {off_pct:.0} % away, more than {:.0} %",
                    r.live_mm2.unwrap_or_default(),
                    r.cpc_mm2.unwrap_or_default(),
                    tol.ratio_pct
                ),
            ));
        }
    }

    let expected_r1r2 = r2.map(|r2| (r1 + r2) / 4.0);
    let expected_r1rn = (r1 + rn) / 4.0;
    let mut notes = Vec::new();
    let mut cross = |kind, name: &str, formula: &str, measured: Option<f64>, want: f64| {
        if let Some(m) = measured {
            let d = (m - want).abs();
            if !beyond(d, tol.cross_ohm) {
                return;
            }
            // Above is what a spur gives: the spur's own cable adds to the reading at its end
            // (common practice, no source). It is not a fault of the ring.
            if m > want {
                notes.push(format!(
                    "highest {name} {m:.2} Ω is {d:.2} Ω above {formula} = {want:.2} Ω: usual where a spur is on the ring or the reading was taken at a spur's end, not a ring fault in itself"
                ));
                return;
            }
            findings.push(finding(
                kind,
                format!(
                    "highest {name} {m:.2} Ω is {d:.2} Ω below {formula} = {want:.2} Ω, more than {:.2} Ω",
                    tol.cross_ohm
                ),
            ));
        }
    };
    if let Some(want) = expected_r1r2 {
        cross(
            RingFindingKind::CrossR1R2,
            "R1+R2",
            "(r1 + r2) / 4",
            r.r1r2_ohm,
            want,
        );
    }
    cross(
        RingFindingKind::CrossR1Rn,
        "R1+Rn",
        "(r1 + rn) / 4",
        r.r1rn_ohm,
        expected_r1rn,
    );

    Ok(RingCheck {
        expected_r1r2_ohm: expected_r1r2,
        expected_r1rn_ohm: expected_r1rn,
        r2_over_r1: ratio,
        expected_ratio,
        tolerance: *tol,
        findings,
        not_checked,
        notes,
        source: RING_PRACTICE,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn copper_table_matches_iec_60228() {
        // IEC 60228 Table 2, class 1/2 plain copper, maximum mΩ/m at 20 °C (reference).
        let published = [
            (1.0, 18.10),
            (1.5, 12.10),
            (2.5, 7.41),
            (4.0, 4.61),
            (6.0, 3.08),
            (10.0, 1.83),
            (16.0, 1.15),
            (25.0, 0.727),
            (35.0, 0.524),
        ];
        for (csa, want) in published {
            let r = copper_mohm_per_m(csa).unwrap();
            assert_eq!(r.mohm_per_m, want, "{csa} mm²");
            assert_eq!(r.source.status, SourceStatus::Published);
        }
        let err = copper_mohm_per_m(3.0).unwrap_err().to_string();
        assert!(err.contains("1, 1.5, 2.5, 4, 6, 10, 16, 25, 35"), "{err}");
    }

    #[test]
    fn pairs_match_the_on_site_guide_and_the_sum_of_conductors() {
        // IET On-Site Guide Table I1 (reference list); each is also the IEC 60228 sum,
        // e.g. 2.5/1.5: 7.41 + 12.10 = 19.51.
        let published = [
            (1.0, 1.0, 36.20),
            (1.5, 1.0, 30.20),
            (1.5, 1.5, 24.20),
            (2.5, 1.5, 19.51),
            (2.5, 2.5, 14.82),
            (4.0, 1.5, 16.71),
            (4.0, 2.5, 12.02),
            (6.0, 2.5, 10.49),
            (10.0, 4.0, 6.44),
            (16.0, 6.0, 4.23),
        ];
        for (l, c, want) in published {
            let p = r1r2_mohm_per_m(l, c).unwrap();
            assert_eq!(p.mohm_per_m, want, "{l}/{c}");
            assert_eq!(p.source.citation, "IET On-Site Guide Table I1");
            let sum =
                copper_mohm_per_m(l).unwrap().mohm_per_m + copper_mohm_per_m(c).unwrap().mohm_per_m;
            assert!((sum - want).abs() < 1e-9, "{l}/{c}: {sum}");
        }
        // 6/1.5 is not listed: derived as 3.08 + 12.10 = 15.18.
        let p = r1r2_mohm_per_m(6.0, 1.5).unwrap();
        assert!((p.mohm_per_m - 15.18).abs() < 1e-9);
        assert_eq!(p.source.status, SourceStatus::Derived);
    }

    #[test]
    fn radial_worked_example() {
        // Invented radial: 20 m of 2.5/1.5 at 20 °C.
        // R1+R2 = 19.51 mΩ/m × 20 m = 0.3902 Ω; R1+Rn = 2 × 7.41 × 20 = 0.2964 Ω.
        let cable = Cable {
            live_mm2: 2.5,
            cpc_mm2: 1.5,
            length_m: 20.0,
        };
        let e = expected_radial(&cable, None).unwrap();
        assert!((e.r1r2_ohm - 0.3902).abs() < 1e-12);
        assert!((e.r1rn_ohm - 0.2964).abs() < 1e-12);
        // At 10 °C: × (1 + 0.00393 × −10) = × 0.9607 → R1+R2 0.37486514 Ω.
        let cold = expected_radial(&cable, Some(10.0)).unwrap();
        assert!((cold.r1r2_ohm - 0.3902 * 0.9607).abs() < 1e-12);
        assert!(
            expected_radial(
                &Cable {
                    length_m: 0.0,
                    ..cable
                },
                None
            )
            .is_err()
        );
    }

    const RING: Cable = Cable {
        live_mm2: 2.5,
        cpc_mm2: 1.5,
        length_m: 60.0,
    };

    #[test]
    fn invented_ring_of_known_length() {
        // Invented 60 m ring of 2.5/1.5 at 20 °C (IEC 60228; GN3 relations):
        // r1 = rn = 60 × 7.41 / 1000 = 0.4446 Ω; r2 = 60 × 12.10 / 1000 = 0.726 Ω;
        // (r1 + r2) / 4 = 1.1706 / 4 = 0.29265 Ω; (r1 + rn) / 4 = 0.8892 / 4 = 0.2223 Ω;
        // r2 / r1 = 12.10 / 7.41 = 1.633, near the csa ratio 2.5 / 1.5 = 1.667.
        let e = expected_ring(&RING, None).unwrap();
        assert!((e.r1_ohm - 0.4446).abs() < 1e-12);
        assert!((e.r2_ohm - 0.726).abs() < 1e-12);
        assert!((e.r1r2_ohm - 0.29265).abs() < 1e-12);
        assert!((e.r1rn_ohm - 0.2223).abs() < 1e-12);
        assert!((e.r2_ohm / e.r1_ohm - 1.633).abs() < 0.001);
    }

    fn readings() -> RingReadings {
        // The 60 m ring above as an instrument showing 0.01 Ω would read it.
        RingReadings {
            r1_ohm: 0.44,
            rn_ohm: 0.45,
            r2_ohm: Some(0.73),
            live_mm2: Some(2.5),
            cpc_mm2: Some(1.5),
            r1r2_ohm: Some(0.29),
            r1rn_ohm: Some(0.22),
        }
    }

    #[test]
    fn sound_ring_has_no_findings() {
        let c = check_ring(&readings(), &RingTolerance::default()).unwrap();
        assert!(c.findings.is_empty(), "{:?}", c.findings);
        // (0.44 + 0.73) / 4 = 0.2925; (0.44 + 0.45) / 4 = 0.2225; 0.73 / 0.44 = 1.659.
        assert!((c.expected_r1r2_ohm.unwrap() - 0.2925).abs() < 1e-12);
        assert!((c.expected_r1rn_ohm - 0.2225).abs() < 1e-12);
        assert!((c.r2_over_r1.unwrap() - 1.659).abs() < 0.001);
        assert!(c.not_checked.is_empty());
    }

    #[test]
    fn each_departure_is_a_finding_in_words() {
        let tol = RingTolerance::default();
        // rn 0.52 against r1 0.44: 0.08 Ω apart, beyond 0.05 (common practice).
        let c = check_ring(
            &RingReadings {
                rn_ohm: 0.52,
                r1rn_ohm: Some(0.24),
                ..readings()
            },
            &tol,
        )
        .unwrap();
        assert_eq!(c.findings.len(), 1, "{:?}", c.findings);
        assert_eq!(c.findings[0].kind, RingFindingKind::LineNeutralEnds);
        assert!(
            c.findings[0].text.contains("differ by 0.08 Ω"),
            "{}",
            c.findings[0].text
        );
        // Exactly 0.05 apart is within the tolerance.
        let c = check_ring(
            &RingReadings {
                rn_ohm: 0.49,
                r1rn_ohm: None,
                ..readings()
            },
            &tol,
        )
        .unwrap();
        assert!(c.findings.is_empty(), "{:?}", c.findings);
        // r2 0.44 on 2.5/1.5: ratio 1.00 against 1.67, 40 % away; (0.44 + 0.44) / 4 = 0.22 so
        // the 0.29 cross reading is 0.07 Ω above.
        let c = check_ring(
            &RingReadings {
                r2_ohm: Some(0.44),
                ..readings()
            },
            &tol,
        )
        .unwrap();
        let kinds: Vec<_> = c.findings.iter().map(|f| f.kind).collect();
        assert_eq!(kinds, [RingFindingKind::CpcRatio]);
        // The cross reading above (r1 + r2) / 4 is what a spur gives: a note, not a fault.
        assert!(c.notes[0].contains("spur"), "{:?}", c.notes);
        assert!(
            c.findings[0].text.contains("1.00"),
            "{}",
            c.findings[0].text
        );
        assert!(
            c.findings[0].text.contains("1.67"),
            "{}",
            c.findings[0].text
        );
        assert!(c.notes[0].contains("0.07 Ω above"), "{}", c.notes[0]);
        // A cross reading far below (r1 + rn) / 4 is also a finding.
        let c = check_ring(
            &RingReadings {
                r1rn_ohm: Some(0.10),
                ..readings()
            },
            &tol,
        )
        .unwrap();
        assert_eq!(c.findings[0].kind, RingFindingKind::CrossR1Rn);
        assert!(c.findings[0].text.contains("below"));
    }

    #[test]
    fn missing_readings_are_named_not_guessed() {
        let c = check_ring(
            &RingReadings {
                r2_ohm: None,
                cpc_mm2: None,
                ..readings()
            },
            &RingTolerance::default(),
        )
        .unwrap();
        assert_eq!(c.not_checked.len(), 2);
        assert_eq!(c.expected_r1r2_ohm, None);
        assert!(
            check_ring(
                &RingReadings {
                    r1_ohm: -1.0,
                    ..readings()
                },
                &RingTolerance::default()
            )
            .is_err()
        );
    }
}
