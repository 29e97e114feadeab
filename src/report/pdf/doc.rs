//! A document as a list of generic blocks (heading, paragraph, table, finding with its
//! chart, ...), serialised to JSON for the typesetting template. Builders in the sibling
//! modules turn each report model into blocks, using the same words as the HTML.

use serde::Serialize;

/// One line of a table cell; `s` is its style: "" plain, "b" bold, "m" small and muted,
/// "past" small bold in the exceeds colour, "badge" a severity pill (with `sev` and `mark`).
#[derive(Debug, Clone, Serialize)]
pub struct Line {
    pub t: String,
    pub s: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sev: Option<&'static str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mark: Option<&'static str>,
}

impl Line {
    pub fn plain(t: impl Into<String>) -> Line {
        Line::styled(t, "")
    }
    pub fn styled(t: impl Into<String>, s: &'static str) -> Line {
        Line {
            t: t.into(),
            s,
            sev: None,
            mark: None,
        }
    }
    /// A severity pill: shape, then words.
    pub fn badge(sev: Option<&str>) -> Line {
        let (mark, words) = super::super::model::severity_words(sev);
        Line {
            t: words.into(),
            s: "badge",
            sev: Some(sev_key(sev)),
            mark: Some(mark),
        }
    }
}

/// A table cell: its lines, one under the other.
pub type Cell = Vec<Line>;

/// A run of text, bold or not.
#[derive(Debug, Clone, Serialize)]
pub struct Span {
    pub t: String,
    pub b: bool,
}

pub fn text(t: impl Into<String>) -> Vec<Span> {
    vec![Span {
        t: t.into(),
        b: false,
    }]
}

/// The template's key for a severity ("none" when there is nothing to report).
pub fn sev_key(s: Option<&str>) -> &'static str {
    match s {
        Some("exceeds") => "exceeds",
        Some("approaching") => "approaching",
        Some("changed") => "changed",
        _ => "none",
    }
}

#[derive(Debug, Clone, Serialize)]
pub struct Contractor {
    pub name: String,
    /// Address and registration, one line each.
    pub lines: Vec<String>,
    /// The logo's virtual path, when one is set.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub logo: Option<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct TallyItem {
    pub sev: &'static str,
    pub mark: &'static str,
    pub n: usize,
    pub w: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct Step {
    pub what: String,
    pub when: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct Part {
    pub label: String,
    pub reason: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub facts: Option<String>,
    /// The chart's virtual path.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub chart: Option<String>,
    pub caption: String,
}

#[derive(Debug, Clone, Serialize)]
#[serde(tag = "k", rename_all = "lowercase")]
pub enum Block {
    Masthead {
        what: String,
        title: String,
        #[serde(skip_serializing_if = "Option::is_none")]
        badge: Option<String>,
        lines: Vec<String>,
        facts: Vec<(String, String)>,
        #[serde(skip_serializing_if = "Option::is_none")]
        contractor: Option<Contractor>,
    },
    H2 {
        t: String,
    },
    H3 {
        t: String,
    },
    P {
        spans: Vec<Span>,
    },
    Small {
        spans: Vec<Span>,
    },
    Verdict {
        sev: &'static str,
        mark: &'static str,
        words: &'static str,
        headline: String,
    },
    Tally {
        items: Vec<TallyItem>,
    },
    Steps {
        items: Vec<Step>,
    },
    Finding {
        sev: &'static str,
        mark: &'static str,
        words: &'static str,
        title: String,
        #[serde(skip_serializing_if = "Option::is_none")]
        sub: Option<String>,
        parts: Vec<Part>,
    },
    Table {
        #[serde(skip_serializing_if = "Option::is_none")]
        caption: Option<String>,
        header: Vec<String>,
        /// "l" or "r" per column.
        aligns: Vec<&'static str>,
        /// Shares of the width per column (fractions); 0 for as wide as its content.
        widths: Vec<f64>,
        rows: Vec<Vec<Cell>>,
        /// Font size in points.
        size: f64,
    },
    List {
        items: Vec<String>,
    },
    Dl {
        items: Vec<(String, Vec<String>)>,
    },
    /// Terms and their values side by side, one line each where they fit.
    Facts {
        items: Vec<(String, String)>,
    },
    Cautions {
        title: String,
        items: Vec<String>,
    },
    /// Blocks kept together on one page.
    Group {
        blocks: Vec<Block>,
    },
}

/// A whole document: its blocks and the files they refer to.
#[derive(Debug, Clone, Serialize)]
pub struct Doc {
    pub title: String,
    pub author: String,
    /// The page footer's left part.
    pub footer: String,
    pub blocks: Vec<Block>,
    /// Virtual path and bytes of every chart and logo.
    #[serde(skip)]
    pub files: Vec<(String, Vec<u8>)>,
}

impl Doc {
    pub fn new(title: String, footer: String) -> Doc {
        Doc {
            title,
            author: "ohmtrail".into(),
            footer,
            blocks: Vec::new(),
            files: Vec::new(),
        }
    }

    pub fn push(&mut self, b: Block) {
        self.blocks.push(b);
    }

    /// Keep a file for the template and return its virtual path.
    pub fn file(&mut self, name: &str, bytes: Vec<u8>) -> String {
        let path = format!("/{}-{}", self.files.len() + 1, name);
        self.files.push((path.clone(), bytes));
        path
    }
}
