//! Finds the line and column of a key in rule-set or plan text, so that
//! problems found after parsing (decreasing times, impossible gains) are
//! reported where they are. Works on the block and flow styles of YAML that
//! people write by hand; when a key cannot be found the item's first line is
//! given.

/// One-based (line, column) of `key:` for item `item` of the top-level
/// sequence `list` (e.g. `checks`, `tests`), or anywhere outside it when
/// `item` is `None`.
pub fn locate(text: &str, list: &str, item: Option<usize>, key: &str) -> Option<(u64, u64)> {
    let lines: Vec<&str> = text.lines().collect();
    let list_line = lines
        .iter()
        .position(|l| l.starts_with(&format!("{list}:")));
    match item {
        None => {
            let end = list_line.unwrap_or(lines.len());
            find_key(&lines, 0, end, key).or_else(|| {
                // Keys after the list (top-level keys may come in any order).
                let after = list_line.map(|l| list_end(&lines, l + 1))?;
                find_key(&lines, after, lines.len(), key)
            })
        }
        Some(i) => {
            let start = list_line? + 1;
            let end = list_end(&lines, start);
            let items = item_starts(&lines, start, end);
            let from = *items.get(i)?;
            let to = items.get(i + 1).copied().unwrap_or(end);
            find_key(&lines, from, to, key).or(Some((from as u64 + 1, first_col(lines[from]))))
        }
    }
}

fn first_col(l: &str) -> u64 {
    (l.len() - l.trim_start().len()) as u64 + 1
}

/// First line after the list that starts at column 0 with a key.
fn list_end(lines: &[&str], start: usize) -> usize {
    (start..lines.len())
        .find(|&k| {
            let l = lines[k];
            !l.is_empty() && !l.starts_with(' ') && !l.starts_with('-') && !l.starts_with('#')
        })
        .unwrap_or(lines.len())
}

fn item_starts(lines: &[&str], start: usize, end: usize) -> Vec<usize> {
    let mut indent = None;
    let mut out = Vec::new();
    for k in start..end {
        let l = lines[k];
        let t = l.trim_start();
        if t.starts_with("- ") || t == "-" {
            let ind = l.len() - t.len();
            match indent {
                None => {
                    indent = Some(ind);
                    out.push(k);
                }
                Some(i) if i == ind => out.push(k),
                _ => {}
            }
        }
    }
    out
}

fn find_key(lines: &[&str], from: usize, to: usize, key: &str) -> Option<(u64, u64)> {
    let pat = format!("{key}:");
    for k in from..to.min(lines.len()) {
        let l = lines[k];
        let code = l.split(" #").next().unwrap_or(l);
        let mut search = 0;
        while let Some(pos) = code[search..].find(&pat) {
            let at = search + pos;
            let before = code[..at].chars().last();
            if matches!(before, None | Some(' ' | '{' | ',' | '-' | '\t')) {
                return Some((k as u64 + 1, code[..at].chars().count() as u64 + 1));
            }
            search = at + pat.len();
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::locate;

    #[test]
    fn finds_keys_in_items_and_at_top() {
        let text = "id: x\ndisturbance: { below_pu: 0.9 }\nchecks:\n  - id: a\n    type: envelope\n    points: [[0, 0]]\n  - id: b\n    gain: 3\nsource: s\n";
        assert_eq!(locate(text, "checks", Some(1), "gain"), Some((8, 5)));
        assert_eq!(locate(text, "checks", Some(0), "points"), Some((6, 5)));
        assert_eq!(locate(text, "checks", None, "below_pu"), Some((2, 16)));
        assert_eq!(locate(text, "checks", None, "source"), Some((9, 1)));
        assert_eq!(locate(text, "checks", Some(1), "nothing"), Some((7, 3)));
    }
}
