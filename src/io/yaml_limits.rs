//! Bounds on YAML nesting and size, checked in one linear pass before the
//! parser sees the text: the parser's time grows with the square of the
//! nesting depth (100,000 nested `[` took half a minute), and it holds every
//! event of a document before the first value is checked (about 160 bytes a
//! node: an 8 MB file of tiny mappings took 380 MB to refuse). No circuit or
//! bench file needs more than a handful of levels.
//!
//! The scan over-estimates rather than misses: it counts the block
//! collections open at a line (by indentation), the compact sequence entries
//! on it (`- - - x`), and the open flow collections (`[`, `{`), skipping
//! comments, quoted scalars and block scalars (`|`, `>`). Brackets inside
//! plain scalars (`unit: m[3]`) are not collections and are not counted.

/// Deepest nesting accepted in a YAML input file.
pub const MAX_YAML_DEPTH: usize = 64;

/// Most nodes (keys, values, collections) accepted in a YAML input file:
/// a circuit at `limits::MAX_ELEMENTS` (some 17 to 20 nodes an element),
/// and about 160 MB for the parser at most.
pub const MAX_YAML_NODES: usize = 1_000_000;

/// Which bound a text exceeds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Excess {
    /// Nested deeper than the limit.
    Depth,
    /// More nodes than the limit.
    Nodes,
}

/// The first position (1-based line and column) where the nesting of `text`
/// exceeds `limit`, if any.
pub fn too_deep(text: &str, limit: usize) -> Option<(usize, usize)> {
    match excess(text, limit, usize::MAX) {
        Some((line, column, Excess::Depth)) => Some((line, column)),
        _ => None,
    }
}

/// The first position (1-based line and column) where `text` nests deeper
/// than `max_depth` or holds more than `max_nodes` nodes, and which.
pub fn excess(text: &str, max_depth: usize, max_nodes: usize) -> Option<(usize, usize, Excess)> {
    let mut nodes = 0usize;
    let mut indents: Vec<usize> = Vec::new();
    let mut flow = 0usize;
    let mut quote: Option<char> = None;
    // Indentation of the line that opened a block scalar, while inside one.
    let mut block_scalar: Option<usize> = None;
    for (ln, line) in text.lines().enumerate() {
        let indent = line.len() - line.trim_start_matches(' ').len();
        let rest = &line[indent..];
        if let Some(parent) = block_scalar {
            if rest.is_empty() || indent > parent {
                continue;
            }
            block_scalar = None;
        }
        if quote.is_none() && flow == 0 && !rest.is_empty() && !rest.starts_with('#') {
            while indents.last().is_some_and(|&i| i > indent) {
                indents.pop();
            }
            if indents.last() != Some(&indent) {
                indents.push(indent);
            }
        }
        let block = if flow == 0 { indents.len() } else { 0 };
        let mut compact = 0usize;
        // Whether the next character may start a token (collection, quote).
        let mut token_start = true;
        let mut last_token = "";
        let mut chars = rest.char_indices().peekable();
        while let Some((i, c)) = chars.next() {
            if let Some(q) = quote {
                if q == '"' && c == '\\' {
                    chars.next();
                } else if c == q {
                    if q == '\'' && chars.peek().is_some_and(|&(_, n)| n == '\'') {
                        chars.next();
                    } else {
                        quote = None;
                        token_start = false;
                    }
                }
                continue;
            }
            let next_blank = chars.peek().is_none_or(|&(_, n)| n == ' ' || n == '\t');
            let starts = match c {
                ' ' | '\t' | '#' => false,
                '[' | '{' | '"' | '\'' => token_start || flow > 0,
                '-' | '?' | ':' | ',' | ']' | '}' => false,
                _ => token_start,
            };
            if starts {
                nodes += 1;
                if nodes > max_nodes {
                    return Some((ln + 1, indent + i + 1, Excess::Nodes));
                }
            }
            match c {
                ' ' | '\t' => continue,
                '#' if token_start || rest[..i].ends_with([' ', '\t']) => break,
                '"' | '\'' if token_start => quote = Some(c),
                '[' | '{' if token_start || flow > 0 => {
                    flow += 1;
                    token_start = true;
                }
                ']' | '}' if flow > 0 => {
                    flow -= 1;
                    token_start = false;
                }
                ',' if flow > 0 => token_start = true,
                '-' | '?' if token_start && next_blank => {
                    if flow == 0 {
                        compact += 1;
                    }
                    token_start = true;
                }
                ':' if next_blank || flow > 0 => token_start = true,
                _ => {
                    if token_start {
                        last_token = &rest[i..];
                    }
                    token_start = false;
                }
            }
            if block + compact + flow > max_depth {
                return Some((ln + 1, indent + i + 1, Excess::Depth));
            }
        }
        let last = last_token.split(" #").next().unwrap_or("").trim_end();
        if quote.is_none()
            && flow == 0
            && last.starts_with(['|', '>'])
            && last[1..]
                .chars()
                .all(|c| c.is_ascii_digit() || c == '+' || c == '-')
        {
            block_scalar = Some(indent);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nested_flow_and_block_collections_are_counted() {
        // 5 levels: `a`, the sequence, and three flow sequences.
        // Counted: `a`'s mapping, the indented sequence and its entry (an
        // over-estimate by one), and three flow sequences.
        let text = "a:\n  - [[[x]]]\n";
        assert_eq!(too_deep(text, 6), None);
        assert_eq!(too_deep(text, 5), Some((2, 7)));
        // Compact nested sequences on one line.
        assert_eq!(too_deep("- - - - x\n", 3), Some((1, 5)));
        // Indentation levels.
        let deep: String = (0..10)
            .map(|i| format!("{}k{i}:\n", " ".repeat(i)))
            .collect();
        assert_eq!(too_deep(&deep, 9), Some((10, 10)));
        assert_eq!(too_deep(&deep, 10), None);
    }

    #[test]
    fn brackets_in_scalars_comments_and_block_scalars_are_not_collections() {
        let text = "\
title: 'a [[[[[[ quoted' # [[[[[[[[ comment
unit: m[[[[[[[[3
note: |
  [[[[[[[[[[[[[
  {{{{{{{{{{{{{
name: \"x \\\" [[[[[[[\"
";
        assert_eq!(too_deep(text, 2), None);
    }

    #[test]
    fn nodes_are_counted() {
        // a, 1, b, [, x, y, the quoted value: 7 nodes.
        let text = "a: 1\nb: [x, y, 'z z']\n";
        assert_eq!(excess(text, 64, 7), None);
        assert_eq!(excess(text, 64, 6), Some((2, 11, Excess::Nodes)));
        // `- {a: 1}` is three nodes; a million of them are refused early.
        let many = "- {a: 1}\n".repeat(1_000_000);
        assert_eq!(
            excess(&many, 64, MAX_YAML_NODES),
            Some((MAX_YAML_NODES / 3 + 1, 4, Excess::Nodes))
        );
    }

    #[test]
    fn a_hostile_file_is_refused_at_the_first_level_too_deep() {
        let text = format!("title: {}\n", "[".repeat(200_000));
        // `title` is level 1, the n-th `[` (column 7 + n) level n + 1.
        assert_eq!(
            too_deep(&text, MAX_YAML_DEPTH),
            Some((1, 7 + MAX_YAML_DEPTH))
        );
    }
}
