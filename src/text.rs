//! Text from files on its way to a terminal, a spreadsheet or an error
//! message: control characters escaped, formula-leading cells neutralised,
//! quoted file content cut to a short excerpt.

use std::borrow::Cow;

/// Characters that change how a terminal or a text layout shows what
/// follows: C0 and C1 controls (ESC, CSI U+009B, BEL, CR …), DEL, and the
/// Unicode bidirectional controls (U+202A–U+202E, U+2066–U+2069, U+200E,
/// U+200F, U+061C) that can make text read backwards.
fn is_unsafe(c: char, keep_newlines: bool) -> bool {
    (c.is_control() && !(keep_newlines && c == '\n'))
        || matches!(c, '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}' | '\u{200E}' | '\u{200F}' | '\u{061C}')
}

fn escape(s: &str, keep_newlines: bool) -> Cow<'_, str> {
    if !s.chars().any(|c| is_unsafe(c, keep_newlines)) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        if is_unsafe(c, keep_newlines) {
            match c {
                '\t' => out.push_str("\\t"),
                '\r' => out.push_str("\\r"),
                '\n' => out.push_str("\\n"),
                c => out.push_str(&format!("\\u{{{:x}}}", c as u32)),
            }
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// One line of text, safe to show: every control and bidi character escaped
/// (`\u{1b}`, `\t`, `\n` …).
pub fn line(s: &str) -> Cow<'_, str> {
    escape(s, false)
}

/// Several lines of text, safe to show: newlines kept, everything else escaped.
pub fn lines(s: &str) -> Cow<'_, str> {
    escape(s, true)
}

/// At most `max` characters of file content for a message, escaped, with
/// `…` where it was cut.
pub fn excerpt(s: &str, max: usize) -> String {
    let cut: String = s.chars().take(max).collect();
    let more = s.chars().nth(max).is_some();
    format!("{}{}", line(&cut), if more { "…" } else { "" })
}

/// Shortens every quoted passage (`'…'`, `"…"` or `` `…` ``) of a message
/// that is longer than `max` characters: messages may quote file content,
/// which must not be echoed at length.
pub fn shorten_quotes(msg: &str, max: usize) -> Cow<'_, str> {
    let chars: Vec<char> = msg.chars().collect();
    let mut out = String::with_capacity(msg.len());
    let mut i = 0;
    let mut changed = false;
    while i < chars.len() {
        let c = chars[i];
        if matches!(c, '\'' | '"' | '`') {
            if let Some(len) = chars[i + 1..].iter().position(|x| *x == c) {
                let inner: String = chars[i + 1..i + 1 + len].iter().collect();
                out.push(c);
                if len > max {
                    out.push_str(&excerpt(&inner, max));
                    changed = true;
                } else {
                    out.push_str(&inner);
                }
                out.push(c);
                i += len + 2;
                continue;
            }
        }
        out.push(c);
        i += 1;
    }
    if changed {
        Cow::Owned(out)
    } else {
        Cow::Borrowed(msg)
    }
}

/// A text cell for a CSV file that spreadsheets open: a cell that starts
/// with `=`, `+`, `-`, `@`, tab or carriage return would be read as a
/// formula, so it gets a leading `'` (the usual neutralisation, e.g. OWASP's
/// advice on CSV injection); control characters are escaped.
pub fn csv_cell(s: &str) -> Cow<'_, str> {
    let risky = s
        .chars()
        .next()
        .is_some_and(|c| matches!(c, '=' | '+' | '-' | '@' | '\t' | '\r'));
    match (risky, line(s)) {
        (false, t) => t,
        (true, t) => Cow::Owned(format!("'{t}")),
    }
}

/// Keeps letters, digits, '-' and '_' of an id for file names.
pub fn file_safe(id: &str) -> String {
    let s: String = id
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .take(60)
        .collect();
    if s.is_empty() {
        "test".into()
    } else {
        s
    }
}

/// For a deserialiser's "unknown field `x`, expected one of `a`, `b`"
/// (or "unknown variant ..."), the expected name closest to the unknown one,
/// when it is close enough to be a misspelling (normalised Damerau–Levenshtein
/// similarity of at least 0.6, or one is the other with a part missing).
pub fn did_you_mean(msg: &str) -> Option<String> {
    let after = |m: &str, start: &str| -> Option<String> {
        let i = m.find(start)? + start.len();
        let rest = &m[i..];
        Some(rest[..rest.find('`')?].to_string())
    };
    let unknown = after(msg, "unknown field `").or_else(|| after(msg, "unknown variant `"))?;
    let list = &msg[msg.find("expected ")? + "expected ".len()..];
    let list = list.strip_prefix("one of ").unwrap_or(list);
    let names: Vec<&str> = list
        .split(',')
        .map(|n| n.trim().trim_matches('`').trim())
        .filter(|n| !n.is_empty() && !n.contains(' '))
        .collect();
    let lower = unknown.to_ascii_lowercase();
    names
        .iter()
        .map(|n| {
            let l = n.to_ascii_lowercase();
            let mut score = strsim::normalized_damerau_levenshtein(&lower, &l);
            if l.len() >= 3 && lower.len() >= 3 && (lower.contains(&l) || l.contains(&lower)) {
                score = score.max(0.6);
            }
            (score, *n)
        })
        .filter(|(score, n)| *score >= 0.6 && *n != unknown)
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .map(|(_, n)| n.to_string())
}

/// `msg` with "; did you mean `x`?" when [`did_you_mean`] finds one.
pub fn with_suggestion(msg: String) -> String {
    match did_you_mean(&msg) {
        Some(s) => format!("{msg}; did you mean `{s}`?"),
        None => msg,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn escapes_controls_and_bidi() {
        assert_eq!(line("T\u{1b}[31mX\u{7}"), "T\\u{1b}[31mX\\u{7}");
        assert_eq!(line("a\u{9b}b\u{202e}c"), "a\\u{9b}b\\u{202e}c");
        assert_eq!(line("x\r\ny"), "x\\r\\ny");
        assert_eq!(lines("x\ny\r"), "x\ny\\r");
        assert!(matches!(line("plain ünïcode"), Cow::Borrowed(_)));
    }

    #[test]
    fn neutralises_formula_cells() {
        assert_eq!(csv_cell("=cmd|' /C calc'!A0"), "'=cmd|' /C calc'!A0");
        assert_eq!(csv_cell("+1+1"), "'+1+1");
        assert_eq!(csv_cell("@SUM(1+1)"), "'@SUM(1+1)");
        assert_eq!(csv_cell("T01"), "T01");
    }

    #[test]
    fn shortens_long_quotes() {
        let m = format!("invalid type: string \"{}\", expected x", "r".repeat(500));
        let s = shorten_quotes(&m, 40);
        assert!(s.len() < 120, "{s}");
        assert!(s.contains("…"));
        assert_eq!(shorten_quotes("'short' stays", 40), "'short' stays");
    }

    #[test]
    fn suggests_the_closest_expected_name() {
        let m = "unknown field `pionts`, expected one of `id`, `bound`, `points`, `momentary_cessation`";
        assert_eq!(did_you_mean(m).as_deref(), Some("points"));
        let m = "unknown variant `envelop`, expected one of `envelope`, `duration_table`";
        assert_eq!(did_you_mean(m).as_deref(), Some("envelope"));
        let m =
            "unknown field `rulez`, expected one of description, project, unit, rules, channels";
        assert_eq!(did_you_mean(m).as_deref(), Some("rules"));
        // Nothing alike: no guess.
        let m = "unknown field `xyz`, expected one of `id`, `bound`, `points`";
        assert_eq!(did_you_mean(m), None);
        assert_eq!(did_you_mean("missing field `points`"), None);
    }
}
