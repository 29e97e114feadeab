//! Where a figure comes from, so every limit in a report can be cited.

use std::borrow::Cow;
use std::fmt;

use serde::{Deserialize, Serialize};

/// How sure a figure is: read from the document, computed from a published rule, recalled, or
/// a practice of the trade without a single document behind it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SourceStatus {
    Published,
    Derived,
    FromMemory,
    CommonPractice,
}

impl SourceStatus {
    pub fn as_str(self) -> &'static str {
        match self {
            SourceStatus::Published => "published",
            SourceStatus::Derived => "derived",
            SourceStatus::FromMemory => "from memory",
            SourceStatus::CommonPractice => "common practice",
        }
    }
}

impl fmt::Display for SourceStatus {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The published rule or table behind a figure, and the rule as applied.
#[derive(Debug, Clone, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct Source {
    /// Document and clause, table or regulation, e.g. "BS 7671:2018+A2:2022 Table 41.3".
    pub citation: Cow<'static, str>,
    pub status: SourceStatus,
    /// The rule in words, including any rounding.
    pub rule: Cow<'static, str>,
}

impl Source {
    pub const fn new(citation: &'static str, status: SourceStatus, rule: &'static str) -> Source {
        Source {
            citation: Cow::Borrowed(citation),
            status,
            rule: Cow::Borrowed(rule),
        }
    }

    /// The same source with the rule text replaced, e.g. to show the figures used.
    pub fn with_rule(mut self, rule: String) -> Source {
        self.rule = Cow::Owned(rule);
        self
    }
}

impl fmt::Display for Source {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} ({}): {}", self.citation, self.status, self.rule)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn serialises_for_the_report() {
        let s = Source::new(
            "BS 7671:2018+A2:2022 Table 41.3",
            SourceStatus::Published,
            "maximum Zs",
        );
        let json = serde_json::to_string(&s).unwrap();
        assert_eq!(
            json,
            r#"{"citation":"BS 7671:2018+A2:2022 Table 41.3","status":"published","rule":"maximum Zs"}"#
        );
        let back: Source = serde_json::from_str(&json).unwrap();
        assert_eq!(back, s);
        assert_eq!(
            SourceStatus::FromMemory.to_string(),
            "from memory",
            "status words as the report prints them"
        );
    }
}
