//! Finding the line of a key path in a block-style YAML text.
//!
//! The YAML parser reports the position of syntax and type errors itself.
//! Errors found later, when the parsed values are checked against each other
//! (an unknown node, a wall thicker than the bore radius), know only their key
//! path, e.g. `elements[3].wall`. This module maps such a path back to the
//! line that holds it, by reading the indentation structure of the text. It
//! understands block mappings and block sequences, which is how circuit files
//! are written; for flow style (`{a: 1}`) it returns the deepest enclosing
//! line it can find.

/// One step of a key path.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum PathSegment {
    /// A mapping key.
    Key(String),
    /// A sequence index (0-based).
    Index(usize),
}

/// A key path such as `elements[3].wall`.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct KeyPath(pub Vec<PathSegment>);

impl KeyPath {
    /// The empty path (the document root).
    pub fn root() -> Self {
        KeyPath(Vec::new())
    }

    /// This path extended by a key.
    pub fn key(&self, key: &str) -> Self {
        let mut p = self.clone();
        p.0.push(PathSegment::Key(key.to_string()));
        p
    }

    /// This path extended by an index.
    pub fn index(&self, i: usize) -> Self {
        let mut p = self.clone();
        p.0.push(PathSegment::Index(i));
        p
    }
}

impl std::fmt::Display for KeyPath {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        for (i, seg) in self.0.iter().enumerate() {
            match seg {
                PathSegment::Key(k) if i == 0 => write!(f, "{k}")?,
                PathSegment::Key(k) => write!(f, ".{k}")?,
                PathSegment::Index(n) => write!(f, "[{n}]")?,
            }
        }
        Ok(())
    }
}

#[derive(Debug)]
struct Line<'a> {
    number: usize, // 1-based
    indent: usize,
    dash: bool,           // starts with "- "
    key: Option<&'a str>, // key of "key:" after any dash
    key_col: usize,       // 1-based column of the key (or of the dash content)
}

fn parse_lines(text: &str) -> Vec<Line<'_>> {
    let mut out = Vec::new();
    for (i, raw) in text.lines().enumerate() {
        let trimmed = raw.trim_start();
        if trimmed.is_empty() || trimmed.starts_with('#') || trimmed.starts_with("---") {
            continue;
        }
        let indent = raw.len() - trimmed.len();
        let (dash, rest, rest_col) = match trimmed.strip_prefix('-') {
            Some(r) if r.is_empty() || r.starts_with(' ') => {
                let r2 = r.trim_start();
                (true, r2, indent + 1 + (r.len() - r2.len()))
            }
            _ => (false, trimmed, indent),
        };
        let key = rest.find(':').and_then(|pos| {
            let k = rest[..pos].trim().trim_matches(|c| c == '"' || c == '\'');
            let after = &rest[pos + 1..];
            let ok = (after.is_empty() || after.starts_with(' '))
                && !k.is_empty()
                && !k.starts_with('{')
                && !k.starts_with('[');
            ok.then_some(k)
        });
        out.push(Line {
            number: i + 1,
            indent,
            dash,
            key,
            key_col: rest_col + 1,
        });
    }
    out
}

/// The (line, column), both 1-based, where `path` is written in `text`, or
/// the deepest enclosing entry found (a key missing from its entry, or an
/// entry written in flow style, points at the entry); `None` if not even the
/// first step is found.
pub fn locate(text: &str, path: &KeyPath) -> Option<(usize, usize)> {
    let lines = parse_lines(text);
    let mut found = None;
    // The current block: lines[lo..hi], whose entries sit at indent `inner`
    // (mapping keys) — for a sequence item, the item's own keys.
    let (mut lo, mut hi) = (0, lines.len());
    // Keys of a sequence item's first line sit after its dash.
    let mut item_first: Option<usize> = None;
    for seg in &path.0 {
        if lo >= hi {
            break;
        }
        match seg {
            PathSegment::Key(k) => {
                // Candidate lines: the item's first line (after its dash) and
                // lines of the block at the block's own key indent.
                let block_indent = match item_first {
                    Some(first) => lines[first].key_col - 1,
                    None => lines[lo].indent,
                };
                let pos = (lo..hi).find(|&i| {
                    let l = &lines[i];
                    let at_indent = if Some(i) == item_first {
                        true
                    } else {
                        !l.dash && l.indent == block_indent
                    };
                    at_indent && l.key == Some(k.as_str())
                });
                let Some(pos) = pos else { break };
                found = Some((lines[pos].number, lines[pos].key_col));
                let own = if Some(pos) == item_first {
                    lines[pos].key_col - 1
                } else {
                    lines[pos].indent
                };
                let end = (pos + 1..hi)
                    .find(|&i| lines[i].indent < own || (lines[i].indent == own && !lines[i].dash))
                    .unwrap_or(hi);
                lo = pos + 1;
                hi = end;
                item_first = None;
            }
            PathSegment::Index(n) => {
                let seq_indent = lines[lo].indent;
                let items: Vec<usize> = (lo..hi)
                    .filter(|&i| lines[i].dash && lines[i].indent == seq_indent)
                    .collect();
                let Some(&start) = items.get(*n) else { break };
                let end = items.get(n + 1).copied().unwrap_or(hi);
                found = Some((lines[start].number, lines[start].indent + 1));
                lo = start;
                hi = end;
                item_first = Some(start);
            }
        }
    }
    found
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "\
# comment
fluid:
  density: 870
elements:
  - name: a
    kind: tube
    length: 2 m
  -   name: b
      kind: volume
      volume: 1 L
taps:
- name: t
  node: x
";

    fn path(s: &[&str]) -> KeyPath {
        KeyPath(
            s.iter()
                .map(|p| match p.parse::<usize>() {
                    Ok(n) => PathSegment::Index(n),
                    Err(_) => PathSegment::Key(p.to_string()),
                })
                .collect(),
        )
    }

    #[test]
    fn finds_keys_and_items() {
        assert_eq!(locate(TEXT, &path(&["fluid", "density"])), Some((3, 3)));
        assert_eq!(
            locate(TEXT, &path(&["elements", "0", "name"])),
            Some((5, 5))
        );
        assert_eq!(
            locate(TEXT, &path(&["elements", "0", "length"])),
            Some((7, 5))
        );
        assert_eq!(locate(TEXT, &path(&["elements", "1"])), Some((8, 3)));
        assert_eq!(
            locate(TEXT, &path(&["elements", "1", "volume"])),
            Some((10, 7))
        );
        assert_eq!(locate(TEXT, &path(&["taps", "0", "node"])), Some((13, 3)));
    }

    #[test]
    fn missing_keys_fall_back_to_the_enclosing_entry() {
        let flow = "taps:\n  - {name: a, node: b}\n  - {name: c, node: d}\n";
        assert_eq!(locate(flow, &path(&["taps", "1", "node"])), Some((3, 3)));
        assert_eq!(
            locate(TEXT, &path(&["elements", "1", "bore"])),
            Some((8, 3))
        );
        assert_eq!(locate(TEXT, &path(&["nothing"])), None);
        assert_eq!(
            path(&["elements", "1", "bore"]).to_string(),
            "elements[1].bore"
        );
    }
}
