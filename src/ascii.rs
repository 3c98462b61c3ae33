//! Plain-ASCII spellings for the few non-ASCII characters trialdesk's own text uses (Greek
//! parameter names, ΔF/F, dashes, arrows, ≥, ±, ², ...), for `--ascii`: a terminal or a log that
//! shows only ASCII still reads `dF/F`, `alpha`, `R^2`, `>=` rather than `?`.
//!
//! Start at [`transliterate`]; [`spelling`] is the table, so a test can ask whether a character
//! has a spelling of its own or would only become `?`.

use std::borrow::Cow;

/// The ASCII spelling of one non-ASCII character, or `None` when the table has none (it then
/// becomes `?`). Greek letters are written out (`δ` → `delta`) except `Δ`, which reads as the
/// difference prefix it is in `ΔF/F` and `ΔAIC` (`dF/F`, `dAIC`).
pub fn spelling(c: char) -> Option<&'static str> {
    Some(match c {
        // Greek: the parameter and quantity names used in reports and help.
        'Δ' => "d",
        'δ' => "delta",
        'α' => "alpha",
        'β' => "beta",
        'γ' => "gamma",
        'ε' => "epsilon",
        'θ' => "theta",
        'λ' => "lambda",
        'µ' | 'μ' => "u",
        'π' => "pi",
        'σ' => "sigma",
        'Σ' => "sum",
        'τ' => "tau",
        'υ' => "upsilon",
        'Φ' | 'φ' => "phi",
        'χ' => "chi",
        'ψ' => "psi",
        // Punctuation and signs.
        '—' | '–' | '−' | '‐' | '‑' => "-",
        '…' => "...",
        '·' | '⋅' => "*",
        '×' => "x",
        '±' => "+/-",
        '≥' => ">=",
        '≤' => "<=",
        '≈' => "~",
        '≠' => "!=",
        '→' => "->",
        '←' => "<-",
        '↔' => "<->",
        '√' => "sqrt",
        '∞' => "inf",
        '∫' => "integral",
        '§' => "section ",
        '°' => " deg",
        '‘' | '’' => "'",
        '“' | '”' => "\"",
        '\u{00A0}' => " ",
        // A combining circumflex (F̂, "F hat").
        '\u{0302}' => "^",
        // Super- and subscripts.
        '²' => "^2",
        '³' => "^3",
        '¹' => "^1",
        '⁻' => "^-",
        '₀' => "0",
        '₁' => "1",
        '₂' => "2",
        '₊' => "+",
        '₋' => "-",
        // Glyphs the reviewer draws in Unicode mode (its ASCII mode picks its own).
        '─' | '━' => "-",
        '│' | '┃' => "|",
        '┊' => ":",
        '•' => "*",
        '✗' => "X",
        '✓' => "v",
        '◇' => "!",
        '▸' | '▶' => ">",
        '▾' | '▼' => "v",
        '░' | '▒' | '▓' | '█' | '▁' | '▂' | '▃' | '▄' | '▅' | '▆' | '▇' => {
            "#"
        }
        // Accented Latin letters: the letter without its accent.
        'à' | 'á' | 'â' | 'ã' | 'ä' | 'å' => "a",
        'À' | 'Á' | 'Â' | 'Ã' | 'Ä' | 'Å' => "A",
        'ç' => "c",
        'Ç' => "C",
        'è' | 'é' | 'ê' | 'ë' => "e",
        'È' | 'É' | 'Ê' | 'Ë' => "E",
        'ì' | 'í' | 'î' | 'ï' => "i",
        'Ì' | 'Í' | 'Î' | 'Ï' => "I",
        'ñ' => "n",
        'Ñ' => "N",
        'ò' | 'ó' | 'ô' | 'õ' | 'ö' | 'ø' => "o",
        'Ò' | 'Ó' | 'Ô' | 'Õ' | 'Ö' | 'Ø' => "O",
        'ù' | 'ú' | 'û' | 'ü' => "u",
        'Ù' | 'Ú' | 'Û' | 'Ü' => "U",
        'ý' | 'ÿ' => "y",
        'ß' => "ss",
        _ => return None,
    })
}

/// `s` with every non-ASCII character replaced by its [`spelling`], or `?` when it has none.
/// Borrowed when `s` is already ASCII.
///
/// Tables stay aligned: a spelling longer than one column takes its extra room from the
/// padding beside its word, before the word if at least one space would be left there and the
/// spaces are not the line's indentation (a right-aligned cell), else after the word (a
/// left-aligned cell), so `"  x      λ"` becomes `"  x lambda"` and `"|     R²|"` becomes
/// `"|    R^2|"`. Prose has no such runs of spaces and simply grows.
pub fn transliterate(s: &str) -> Cow<'_, str> {
    if s.is_ascii() {
        return Cow::Borrowed(s);
    }
    let mut chars: Vec<char> = s.chars().collect();
    let mut out = String::with_capacity(s.len() + 16);
    let mut i = 0;
    while i < chars.len() {
        let c = chars[i];
        i += 1;
        if c.is_ascii() {
            out.push(c);
            continue;
        }
        let spelled = spelling(c).unwrap_or("?");
        let extra = spelled.len().saturating_sub(1);
        if extra > 0 {
            // The word so far (in `out`, all ASCII by now) and the spaces before it.
            let word = out.len() - out.trim_end_matches(|c: char| c != ' ' && c != '\n').len();
            let head = &out[..out.len() - word];
            let before = head.len() - head.trim_end_matches(' ').len();
            let indentation =
                head.trim_end_matches(' ').is_empty() || head.trim_end_matches(' ').ends_with('\n');
            // The rest of the word (in `chars`) and the spaces after it.
            let rest = chars[i..]
                .iter()
                .take_while(|&&c| c != ' ' && c != '\n')
                .count();
            let after = chars[i + rest..].iter().take_while(|&&c| c == ' ').count();
            if before > extra && !indentation {
                let at = out.len() - word - extra;
                out.replace_range(at..at + extra, "");
            } else if after > extra {
                chars.drain(i + rest..i + rest + extra);
            }
        }
        out.push_str(spelled);
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn report_words_read_in_ascii() {
        assert_eq!(transliterate("ΔF/F"), "dF/F");
        assert_eq!(transliterate("α, γ, λ"), "alpha, gamma, lambda");
        assert_eq!(transliterate("model δ"), "model delta");
        assert_eq!(transliterate("R² = 0.9"), "R^2 = 0.9");
        assert_eq!(transliterate("a — b, 2–3, −1"), "a - b, 2-3, -1");
        assert_eq!(transliterate("x ≥ 0, ± 1, 3 × 4"), "x >= 0, +/- 1, 3 x 4");
        assert_eq!(transliterate("F\u{302}"), "F^");
        assert_eq!(transliterate("reward_ul (µL)"), "reward_ul (uL)");
        assert_eq!(transliterate("tône"), "tone");
        // Padded cells keep their width, from the padding before or after.
        assert_eq!(
            transliterate("  model       λ    lnL"),
            "  model  lambda    lnL"
        );
        assert_eq!(transliterate("|λ       |"), "|lambda  |");
        assert_eq!(transliterate("|     R²|"), "|    R^2|");
        assert_eq!(transliterate("a λ b"), "a lambda b");
        assert_eq!(transliterate("x  -λ      |"), "x  -lambda |");
        // Indentation is not padding.
        assert_eq!(transliterate("      δ sum"), "      delta sum");
        assert_eq!(transliterate("a\n      δ"), "a\n      delta");
        // No spelling: a question mark, one per character.
        assert_eq!(transliterate("a😀b"), "a?b");
        assert!(matches!(transliterate("plain"), Cow::Borrowed(_)));
    }

    #[test]
    fn every_spelling_is_ascii() {
        for c in ('\u{80}'..='\u{2FFF}').filter(|c| spelling(*c).is_some()) {
            let s = spelling(c).unwrap();
            assert!(s.is_ascii() && !s.is_empty(), "{c:?} -> {s:?}");
        }
    }
}
