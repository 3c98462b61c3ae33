//! What the terminal can show, from the environment: colour (off under NO_COLOR and on
//! terminals without colour, such as vt100 or dumb) and UTF-8 (off when the locale in force
//! names another character set, or `C`/`POSIX`, or the terminal is a vt100-class one). The
//! reviewer then draws plainly instead of sending codes the terminal prints as garbage.

/// Terminals known to have neither colour nor UTF-8.
const PLAIN_TERMS: &[&str] = &["dumb", "vt52", "vt100", "vt102", "vt220", "vt320"];

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Caps {
    pub color: bool,
    pub unicode: bool,
}

/// `term` is TERM; `no_color` NO_COLOR; `locale` the first of LC_ALL, LC_CTYPE, LANG that is
/// set and not empty (POSIX precedence). An unset TERM or locale says nothing and changes
/// nothing.
pub fn detect(term: Option<&str>, no_color: Option<&str>, locale: Option<&str>) -> Caps {
    let plain_term = term.is_some_and(|t| PLAIN_TERMS.contains(&t));
    let utf8_locale = match locale {
        None => true,
        Some(l) => {
            let l = l.to_ascii_lowercase();
            match l.split_once('.') {
                Some((_, codeset)) => {
                    let codeset = codeset.split('@').next().unwrap_or("");
                    codeset == "utf-8" || codeset == "utf8"
                }
                // No codeset: only C and POSIX say ASCII for sure.
                None => l != "c" && l != "posix",
            }
        }
    };
    Caps {
        color: no_color.is_none_or(str::is_empty) && !plain_term,
        unicode: utf8_locale && !plain_term,
    }
}

/// [`detect`] on this process's environment.
pub fn from_env() -> Caps {
    let var = |k: &str| std::env::var(k).ok().filter(|v| !v.is_empty());
    let locale = var("LC_ALL")
        .or_else(|| var("LC_CTYPE"))
        .or_else(|| var("LANG"));
    detect(
        var("TERM").as_deref(),
        std::env::var("NO_COLOR").ok().as_deref(),
        locale.as_deref(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn terminals_and_locales() {
        let full = Caps {
            color: true,
            unicode: true,
        };
        assert_eq!(
            detect(Some("xterm-256color"), None, Some("en_US.UTF-8")),
            full
        );
        assert_eq!(detect(Some("linux"), None, Some("C.UTF-8")), full);
        assert_eq!(detect(None, None, None), full);
        let plain = Caps {
            color: false,
            unicode: false,
        };
        assert_eq!(detect(Some("vt100"), None, Some("en_US.UTF-8")), plain);
        assert_eq!(detect(Some("dumb"), None, None), plain);
        assert!(!detect(Some("xterm"), None, Some("C")).unicode);
        assert!(!detect(Some("xterm"), None, Some("de_DE.ISO-8859-1")).unicode);
        assert!(detect(Some("xterm"), None, Some("de_DE.utf8@euro")).unicode);
        assert!(!detect(Some("xterm"), Some("1"), None).color);
        assert!(detect(Some("xterm"), Some(""), None).color);
    }
}
