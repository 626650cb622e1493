//! "Did you mean": the message for an unknown key in study.toml.
//!
//! The valid keys come from the settings type itself: every settings struct derives
//! `Deserialize` with `deny_unknown_fields`, and serde's error for an unknown key lists the
//! struct's own field names (`unknown field `x`, expected one of `a`, `b``). That list is
//! parsed here, so no key list is kept by hand and a new Params field is known at once. The
//! closest valid key is the one at the smallest optimal-string-alignment distance
//! (Levenshtein with adjacent transpositions, so `spatail` is one edit from `spatial`), offered
//! only when that distance is at most a third of the key's length (at least 1): a wild guess
//! is worse than the plain list.

/// The valid keys of an unknown-field message from serde, with the unknown key; `None` when
/// `message` is another error.
fn parse_unknown_field(message: &str) -> Option<(String, Vec<String>)> {
    let rest = message.trim().strip_prefix("unknown field `")?;
    let (key, rest) = rest.split_once('`')?;
    // serde writes "expected `a`", "expected `a` or `b`", "expected one of `a`, `b`", or
    // "there are no fields": in each, the valid keys are exactly the back-quoted words.
    let valid = rest
        .split('`')
        .skip(1)
        .step_by(2)
        .map(str::to_string)
        .collect();
    Some((key.to_string(), valid))
}

/// Optimal-string-alignment distance between `a` and `b`, in characters: insertions,
/// deletions, substitutions and swaps of two adjacent characters each cost 1.
pub(super) fn edit_distance(a: &str, b: &str) -> usize {
    let (a, b): (Vec<char>, Vec<char>) = (a.chars().collect(), b.chars().collect());
    // d[i][j]: distance between the first i characters of a and the first j of b.
    let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    d[0] = (0..=b.len()).collect();
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut best = (d[i - 1][j] + 1)
                .min(d[i][j - 1] + 1)
                .min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                best = best.min(d[i - 2][j - 2] + 1);
            }
            d[i][j] = best;
        }
    }
    d[a.len()][b.len()]
}

/// The valid key closest to `key`, if it is close enough to be a likely misspelling.
pub(super) fn closest<'a>(key: &str, valid: &'a [String]) -> Option<&'a str> {
    let limit = (key.chars().count() / 3).max(1);
    valid
        .iter()
        .map(|v| (edit_distance(&key.to_lowercase(), v), v))
        .filter(|(d, _)| *d <= limit)
        .min_by_key(|(d, _)| *d)
        .map(|(_, v)| v.as_str())
}

/// Line and column (both from 1, column in characters) of byte `offset` in `text`.
fn line_column(text: &str, offset: usize) -> (usize, usize) {
    let before = &text[..offset.min(text.len())];
    let line = before.matches('\n').count() + 1;
    let start = before.rfind('\n').map_or(0, |i| i + 1);
    (line, before[start..].chars().count() + 1)
}

/// The message for an unknown key, or `None` when `err` is another TOML error. Names the
/// line and column (when toml gives a span), the key, the closest valid key, the line itself
/// with a caret under the key, and the valid keys of that table when none is close.
pub(super) fn unknown_key_message(text: &str, err: &toml::de::Error) -> Option<String> {
    let (key, valid) = parse_unknown_field(err.message())?;
    let mut out = String::new();
    let span = err.span();
    if let Some(span) = &span {
        let (line, column) = line_column(text, span.start);
        out.push_str(&format!("line {line}, column {column}: "));
    }
    out.push_str(&format!("unknown key `{key}`"));
    let suggestion = closest(&key, &valid);
    match suggestion {
        Some(s) => out.push_str(&format!("; did you mean `{s}`?")),
        None if valid.is_empty() => out.push_str("; this table takes no keys"),
        None => out.push_str(&format!(
            "; the keys here are {}",
            valid
                .iter()
                .map(|v| format!("`{v}`"))
                .collect::<Vec<_>>()
                .join(", ")
        )),
    }
    if let Some(span) = span {
        let (line, column) = line_column(text, span.start);
        let source = text.lines().nth(line - 1).unwrap_or("");
        let width = text
            .get(span.clone())
            .map_or(1, |s| s.lines().next().unwrap_or("").chars().count().max(1));
        let gutter = " ".repeat(line.to_string().len());
        out.push_str(&format!(
            "\n{gutter} |\n{line} | {source}\n{gutter} | {}{}",
            " ".repeat(column - 1),
            "^".repeat(width)
        ));
    }
    Some(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Distances worked by hand: one substitution, one insertion, one adjacent swap, and the
    /// textbook pair kitten/sitting (3: two substitutions and an insertion).
    #[test]
    fn edit_distances() {
        assert_eq!(edit_distance("neighbors", "neighbours"), 1);
        assert_eq!(edit_distance("yaer", "year"), 1);
        assert_eq!(edit_distance("spatail", "spatial"), 1);
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn serde_messages_are_parsed() {
        let (k, v) = parse_unknown_field("unknown field `x`, expected one of `a`, `b_c`").unwrap();
        assert_eq!((k.as_str(), v), ("x", vec!["a".to_string(), "b_c".into()]));
        let (_, v) = parse_unknown_field("unknown field `x`, expected `a` or `b`").unwrap();
        assert_eq!(v, ["a", "b"]);
        let (_, v) = parse_unknown_field("unknown field `x`, there are no fields").unwrap();
        assert!(v.is_empty());
        assert!(parse_unknown_field("invalid type: string, expected f64").is_none());
    }

    #[test]
    fn far_keys_get_no_guess() {
        let valid = ["neighbours".to_string(), "ridge".into()];
        assert_eq!(closest("neighbors", &valid), Some("neighbours"));
        assert_eq!(closest("Ridge", &valid), Some("ridge"));
        assert_eq!(closest("colour", &valid), None);
    }

    #[test]
    fn columns_count_characters() {
        assert_eq!(line_column("a = 1\nbé = 2\n", 6), (2, 1));
        assert_eq!(line_column("a = 1\nbé = 2\n", 10), (2, 4));
    }
}
