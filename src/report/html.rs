//! Small helpers for writing HTML by hand: escaping, numbers, dates and the page frame.
//!
//! Every piece of text that came from the user or the database goes through [`esc`] or
//! [`attr`]; the renderers never splice raw strings into markup.

use chrono::NaiveDate;

/// Text content, escaped for HTML.
pub fn esc(s: &str) -> String {
    html_escape::encode_text(s).into_owned()
}

/// An attribute value, escaped for use inside double quotes.
pub fn attr(s: &str) -> String {
    html_escape::encode_double_quoted_attribute(s).into_owned()
}

/// A date as people read it: 8 July 2025.
pub fn date_words(d: NaiveDate) -> String {
    d.format("%-d %B %Y").to_string()
}

/// A date as a `<time>` element with the ISO date for machines.
pub fn time(d: NaiveDate) -> String {
    format!(
        "<time datetime=\"{}\">{}</time>",
        d.format("%Y-%m-%d"),
        date_words(d)
    )
}

/// An optional date, or the given words.
pub fn time_or(d: Option<NaiveDate>, none: &str) -> String {
    d.map(time).unwrap_or_else(|| esc(none))
}

/// A reading with as many places as the trade writes it: two for ohms under 10, fewer above.
pub fn reading(v: f64, unit: &str) -> String {
    match unit {
        "MΩ" if v >= 100.0 => format!("{v:.0}"),
        "MΩ" if v >= 1.0 => format!("{v:.1}"),
        "ms" => format!("{v:.0}"),
        _ if v >= 10.0 => format!("{v:.1}"),
        _ => format!("{v:.2}"),
    }
}

/// "1 circuit", "3 circuits".
pub fn count(n: usize, one: &str, many: &str) -> String {
    if n == 1 {
        format!("1 {one}")
    } else {
        format!("{n} {many}")
    }
}

/// A list in words: "a", "a and b", "a, b and c".
pub fn and_list(items: &[String]) -> String {
    match items {
        [] => String::new(),
        [a] => a.clone(),
        [rest @ .., last] => format!("{} and {last}", rest.join(", ")),
    }
}

/// A file name from a property reference: letters, digits, `-`, `_` and `.` are kept, anything
/// else becomes `_`. When anything was changed, a short hash of the original reference is
/// appended so that two references that differ only in such characters never share a file;
/// so is it when the reference itself ends like such a hash.
pub fn file_stem(reference: &str) -> String {
    let mut changed = false;
    let mut s: String = reference
        .trim()
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.') {
                c
            } else {
                changed = true;
                '_'
            }
        })
        .collect();
    if s.starts_with('.') || s.is_empty() {
        // No hidden files, no empty names.
        changed = true;
        s.insert(0, '_');
    }
    if s.len() > 80 {
        changed = true;
        s.truncate(80);
    }
    // A reference that already ends like an appended hash (`a_b_c-477dfb6b`) gets one of its
    // own too, so it can never take the name of a changed reference (`a/b/c`): a name ends in
    // `-` and eight hex digits exactly when a hash was appended, and the hash is of the
    // reference as given.
    if changed || s != reference || ends_like_a_hash(&s) {
        s.push('-');
        s.push_str(&format!("{:08x}", fnv1a(reference.as_bytes())));
    }
    s
}

/// True when `s` ends in `-` and eight lower-case hex digits.
fn ends_like_a_hash(s: &str) -> bool {
    let b = s.as_bytes();
    b.len() >= 9
        && b[b.len() - 9] == b'-'
        && b[b.len() - 8..]
            .iter()
            .all(|c| c.is_ascii_digit() || (b'a'..=b'f').contains(c))
}

/// FNV-1a, 32 bits: a stable, dependency-free hash for file names (not for security).
fn fnv1a(bytes: &[u8]) -> u32 {
    let mut h: u32 = 0x811c_9dc5;
    for b in bytes {
        h ^= u32::from(*b);
        h = h.wrapping_mul(0x0100_0193);
    }
    h
}

/// The per-property report's file name: `report-REF.html` (REF made safe by [`file_stem`]).
pub fn property_file_name(reference: &str, ext: &str) -> String {
    format!("report-{}.{ext}", file_stem(reference))
}

/// The opening of a page: doctype, head with the inline style sheet, and `<body>`.
pub fn page_start(title: &str, css: &str) -> String {
    format!(
        "<!DOCTYPE html>\n<html lang=\"en-GB\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <meta name=\"generator\" content=\"ohmtrail {}\">\n\
         <title>{}</title>\n<style>\n{css}</style>\n</head>\n<body>\n",
        env!("CARGO_PKG_VERSION"),
        esc(title)
    )
}

pub const PAGE_END: &str = "</body>\n</html>\n";

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_markup_and_quotes() {
        assert_eq!(
            esc("<script>alert(1)</script> & co"),
            "&lt;script&gt;alert(1)&lt;/script&gt; &amp; co"
        );
        assert_eq!(attr("a\"b<"), "a&quot;b&lt;");
    }

    #[test]
    fn file_names_are_safe_and_distinct() {
        assert_eq!(property_file_name("QL-001", "html"), "report-QL-001.html");
        let a = file_stem("A/B");
        let b = file_stem("A_B");
        let c = file_stem("A?B");
        assert!(a.starts_with("A_B-"), "{a}");
        assert_eq!(b, "A_B");
        assert_ne!(a, b);
        assert_ne!(a, c);
        assert!(!file_stem("../x").contains('/'));
        assert!(file_stem(".hidden").starts_with('_'));
        assert!(!file_stem("").is_empty());
        assert!(file_stem(&"x".repeat(300)).len() < 100);
        // A reference spelled like another's made-safe name does not take that name.
        let made_safe = file_stem("a/b/c");
        assert!(made_safe.starts_with("a_b_c-"), "{made_safe}");
        assert_ne!(file_stem(&made_safe), made_safe);
        assert!(file_stem(&made_safe).starts_with(&format!("{made_safe}-")));
        // An ordinary reference keeps its plain name.
        assert_eq!(file_stem("QL-001"), "QL-001");
        assert_eq!(file_stem("FLAT-12345678X"), "FLAT-12345678X");
    }

    #[test]
    fn words() {
        assert_eq!(
            date_words(NaiveDate::from_ymd_opt(2025, 7, 8).unwrap()),
            "8 July 2025"
        );
        assert_eq!(
            and_list(&["a".into(), "b".into(), "c".into()]),
            "a, b and c"
        );
        assert_eq!(count(1, "circuit", "circuits"), "1 circuit");
        assert_eq!(reading(0.5, "Ω"), "0.50");
        assert_eq!(reading(200.0, "MΩ"), "200");
    }
}
