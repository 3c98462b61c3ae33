//! The reviewer's config file (`config.toml` in the platform config folder, e.g.
//! `~/.config/trialdesk/` on Linux): who is reviewing and which reasons the picker offers.
//!
//! ```toml
//! reviewer = "ana"
//! reasons = ["artifact", "lost unit", "valve failure", "lick contamination", "other"]
//! ```
//! The user keymap lives beside it as `keymap.toml`.

use crate::util::SettingsError;
use std::path::{Path, PathBuf};

#[derive(Debug, Clone, Default, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Config {
    pub reviewer: Option<String>,
    pub reasons: Option<Vec<String>>,
}

/// The platform config folder for trialdesk, if the platform has one.
pub fn config_dir() -> Option<PathBuf> {
    directories::ProjectDirs::from("", "", "trialdesk").map(|d| d.config_dir().to_path_buf())
}

/// Parse a config file's text; errors name the file and line.
pub fn parse(file: &Path, text: &str) -> Result<Config, SettingsError> {
    let cfg: Config = toml::from_str(text).map_err(|e| crate::util::toml_error(file, text, &e))?;
    if let Some(r) = &cfg.reasons {
        if r.is_empty() || r.len() > 9 {
            return Err(SettingsError::new(
                file,
                None,
                format!(
                    "reasons: expected 1 to 9 reasons (the picker numbers them 1-9), found {}",
                    r.len()
                ),
            ));
        }
        if r.iter().any(|x| x.trim().is_empty()) {
            return Err(SettingsError::new(file, None, "reasons: a reason is empty"));
        }
    }
    Ok(cfg)
}

/// Read `config.toml` from `dir`; an absent file is the empty config.
pub fn load(dir: &Path) -> Result<Config, SettingsError> {
    let path = dir.join("config.toml");
    match crate::util::read_settings(&path) {
        Ok(text) => parse(&path, &text),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(Config::default()),
        Err(e) => Err(SettingsError::new(&path, None, e.to_string())),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_and_rejects() {
        let p = Path::new("config.toml");
        let c = parse(p, "reviewer = \"ana\"\nreasons = [\"a\", \"other\"]\n").unwrap();
        assert_eq!(c.reviewer.as_deref(), Some("ana"));
        let e = parse(p, "reviewer = \"ana\"\nreviwer = 3\n").unwrap_err();
        assert_eq!(e.line, Some(2));
        assert!(e.to_string().starts_with("config.toml:2:"), "{e}");
        let e = parse(p, "reasons = []\n").unwrap_err();
        assert!(e.message.contains("1 to 9"), "{e}");
    }
}
