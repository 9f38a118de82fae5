//! Error messages a person can read whatever the input: values quoted from a
//! file are cut when long (a 5 MB CSV cell must not become a 5 MB error
//! line), and numbers written out in hundreds of digits (Rust prints
//! `1e300_f64` with `{}` as 301 digits) are shown in scientific notation.

/// Longest run of non-blank characters kept whole in a message.
pub const MAX_WORD_CHARS: usize = 120;
/// Longest message kept whole.
pub const MAX_MESSAGE_CHARS: usize = 4000;
/// Digits beyond which a number is shown in scientific notation.
const MAX_DIGITS: usize = 17;

/// `text` with long numbers in scientific notation, long quoted values
/// (`"…"`, `` `…` ``) and long words cut in the middle (`head…tail (N
/// characters)`), and the whole cut to [`MAX_MESSAGE_CHARS`].
pub fn readable(text: &str) -> String {
    let quoted = cut_quoted(text);
    let text: &str = &quoted;
    let mut out = String::with_capacity(text.len().min(MAX_MESSAGE_CHARS + 64));
    let mut rest = text;
    while !rest.is_empty() {
        let start = rest
            .find(|c: char| !c.is_whitespace())
            .unwrap_or(rest.len());
        out.push_str(&rest[..start]);
        rest = &rest[start..];
        let end = rest.find(char::is_whitespace).unwrap_or(rest.len());
        push_word(&mut out, &rest[..end]);
        rest = &rest[end..];
        if out.len() > MAX_MESSAGE_CHARS + MAX_WORD_CHARS {
            break;
        }
    }
    let total = text.chars().count();
    if out.chars().count() > MAX_MESSAGE_CHARS {
        let kept: String = out.chars().take(MAX_MESSAGE_CHARS).collect();
        return format!("{kept}… (message cut; {total} characters)");
    }
    out
}

/// `text` with every quoted span longer than [`MAX_WORD_CHARS`] cut.
fn cut_quoted(text: &str) -> std::borrow::Cow<'_, str> {
    if text.len() <= MAX_WORD_CHARS {
        return text.into();
    }
    let mut out = String::new();
    let mut rest = text;
    while let Some(open) = rest.find(['"', '`']) {
        let q = &rest[open..=open];
        let Some(len) = rest[open + 1..].find(q) else {
            break;
        };
        let inner = &rest[open + 1..open + 1 + len];
        out.push_str(&rest[..=open]);
        let n = inner.chars().count();
        if n > MAX_WORD_CHARS {
            let head: String = inner.chars().take(60).collect();
            let tail: String = inner.chars().skip(n - 20).collect();
            out.push_str(&format!("{head}…{tail}{q} ({n} characters)"));
        } else {
            out.push_str(inner);
            out.push_str(q);
        }
        rest = &rest[open + 2 + len..];
    }
    out.push_str(rest);
    out.into()
}

/// Appends `word` with its long digit runs shortened, cut if still long.
fn push_word(out: &mut String, word: &str) {
    let word = shorten_numbers(word);
    let n = word.chars().count();
    if n <= MAX_WORD_CHARS {
        out.push_str(&word);
        return;
    }
    let head: String = word.chars().take(60).collect();
    let tail: String = word.chars().skip(n - 20).collect();
    out.push_str(&format!("{head}…{tail} ({n} characters)"));
}

/// Each run of more than [`MAX_DIGITS`] digits (with its point and sign) that
/// reads as a number, written as `d.ddddde±x`.
fn shorten_numbers(word: &str) -> std::borrow::Cow<'_, str> {
    let is_num = |c: char| c.is_ascii_digit() || c == '.';
    if word.chars().filter(char::is_ascii_digit).count() <= MAX_DIGITS {
        return word.into();
    }
    let mut out = String::new();
    let mut rest = word;
    while let Some(start) = rest.find(|c: char| c.is_ascii_digit()) {
        let start = if rest[..start].ends_with('-') {
            start - 1
        } else {
            start
        };
        out.push_str(&rest[..start]);
        let len = rest[start..]
            .char_indices()
            .find(|&(i, c)| !(is_num(c) || (i == 0 && c == '-')))
            .map_or(rest.len() - start, |(i, _)| i);
        let run = &rest[start..start + len];
        let digits = run.chars().filter(char::is_ascii_digit).count();
        match run.parse::<f64>() {
            Ok(v) if digits > MAX_DIGITS && v.is_finite() => out.push_str(&format!("{v:.6e}")),
            _ => out.push_str(run),
        }
        rest = &rest[start + len..];
    }
    out.push_str(rest);
    out.into()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_values_are_cut_and_numbers_shortened() {
        let cell = "x".repeat(5_000_000);
        let m = readable(&format!("data.csv:3: `{cell}` is not a number"));
        assert!(m.len() < 200, "{}", m.len());
        assert!(
            m.contains("` (5000000 characters)") && m.ends_with("is not a number"),
            "{m}"
        );
        let spaced = "ab ".repeat(1000);
        let m = readable(&format!(
            "invalid type: string \"{spaced}\", expected a map"
        ));
        assert!(
            m.len() < 200 && m.ends_with("(3000 characters), expected a map"),
            "{m}"
        );
        let big = format!("{}", 1e300_f64);
        assert_eq!(big.len(), 301);
        let m = readable(&format!(
            "time {big} s is off the grid (step {}.5 s)",
            1e30_f64
        ));
        assert_eq!(
            m,
            "time 1.000000e300 s is off the grid (step 1.000000e30 s)"
        );
        let m = readable(&format!("a value of -{}", 1e40_f64));
        assert_eq!(m, "a value of -1.000000e40");
    }

    #[test]
    fn ordinary_messages_are_unchanged() {
        let m = "circuit.yaml:12:9: elements[2].bore: 1234.5 mm is larger than 1 m\n  next line";
        assert_eq!(readable(m), m);
        let many = "word ".repeat(2000);
        let cut = readable(&many);
        assert!(cut.ends_with("(message cut; 10000 characters)"), "{cut}");
    }
}
