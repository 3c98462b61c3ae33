//! The rule configuration: defaults shipped inside the binary (`default_rules.toml`, which
//! documents every parameter), overridden key by key by the user's `suggest.toml` in the
//! platform config folder.
//!
//! Every value is checked while it is read, so a bad value, an unknown key or a TOML syntax
//! error is reported as `file:line: what is wrong`.

use crate::marks::MarkKind;
use crate::util::SettingsError;
use serde::de::{Deserializer, Error as _};
use serde::Deserialize;
use std::path::{Path, PathBuf};

/// The shipped defaults (also the commented reference for users).
pub const DEFAULT_RULES: &str = include_str!("default_rules.toml");

/// File name of the user's override in the trialdesk config folder.
pub const USER_FILE: &str = "suggest.toml";

/// A parameter type: its checked value and the message for a bad one.
trait Param: Sized {
    type Value: Copy;
    fn value(self) -> Self::Value;
}

macro_rules! checked {
    ($(#[$doc:meta])* $name:ident($inner:ty), $ok:expr, $expected:literal) => {
        $(#[$doc])*
        #[derive(Debug, Clone, Copy)]
        struct $name($inner);
        impl Param for $name {
            type Value = $inner;
            fn value(self) -> $inner {
                self.0
            }
        }
        impl<'de> Deserialize<'de> for $name {
            fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
                let v = <$inner>::deserialize(d)?;
                let ok: fn($inner) -> bool = $ok;
                if ok(v) {
                    Ok($name(v))
                } else {
                    Err(D::Error::custom(format!("{v} is out of range: expected {}", $expected)))
                }
            }
        }
    };
}

checked!(
    /// A time relative to an event (may be negative).
    Secs(f64), |v| v.is_finite() && v.abs() <= 3600.0, "seconds between -3600 and 3600"
);
checked!(
    Positive(f64),
    |v| v.is_finite() && v > 0.0,
    "a positive number"
);
checked!(
    Ratio(f64),
    |v| (0.0..=1.0).contains(&v),
    "a number from 0 to 1"
);
checked!(
    Count(u32),
    |v| (1..=100_000).contains(&v),
    "a whole number from 1 to 100000"
);

/// The resolved parameters of one rule, plus the patch struct a file fills in.
macro_rules! rule_params {
    ($(#[$doc:meta])* $name:ident, $patch:ident, $section:literal {
        $( $(#[$fdoc:meta])* $field:ident : $ty:ty as $wrap:ident ),* $(,)?
    }) => {
        $(#[$doc])*
        #[derive(Debug, Clone, PartialEq)]
        pub struct $name {
            pub enabled: bool,
            $( $(#[$fdoc])* pub $field: $ty, )*
        }

        #[derive(Debug, Default, Deserialize)]
        #[serde(deny_unknown_fields)]
        struct $patch {
            enabled: Option<bool>,
            $( $field: Option<$wrap>, )*
        }

        impl $patch {
            fn over(self, base: Option<&$name>) -> Result<$name, String> {
                let missing = |key: &str| format!("[{}] {key} is missing", $section);
                Ok($name {
                    enabled: match self.enabled {
                        Some(v) => v,
                        None => base.map(|b| b.enabled).ok_or_else(|| missing("enabled"))?,
                    },
                    $( $field: match self.$field {
                        Some(v) => v.value(),
                        None => base.map(|b| b.$field).ok_or_else(|| missing(stringify!($field)))?,
                    }, )*
                })
            }
        }
    };
}

rule_params!(
    /// `baseline_licks`.
    BaselineLicks, BaselineLicksPatch, "baseline_licks" {
    from_s: f64 as Secs, to_s: f64 as Secs, min_licks: u32 as Count,
});
rule_params!(
    /// `no_consumption`.
    NoConsumption, NoConsumptionPatch, "no_consumption" {
    window_s: f64 as Positive, min_licks: u32 as Count,
});
rule_params!(
    /// `late_first_lick`.
    LateFirstLick, LateFirstLickPatch, "late_first_lick" {
    max_latency_s: f64 as Positive, k: f64 as Positive, min_trials: u32 as Count, give_up_s: f64 as Positive,
});
rule_params!(
    /// `reward_too_soon`.
    RewardTooSoon, RewardTooSoonPatch, "reward_too_soon" {
    min_interval_s: f64 as Positive,
});
rule_params!(
    /// `unit_drift`.
    UnitDrift, UnitDriftPatch, "unit_drift" {
    from_s: f64 as Secs, to_s: f64 as Secs, smooth_trials: u32 as Count, k: f64 as Positive, min_change: f64 as Ratio,
});
rule_params!(
    /// `control_motion`.
    ControlMotion, ControlMotionPatch, "control_motion" {
    from_s: f64 as Secs, to_s: f64 as Secs, min_deflection: f64 as Ratio, k: f64 as Positive,
});
rule_params!(
    /// `control_fit_poor`.
    ControlFitPoor, ControlFitPoorPatch, "control_fit_poor" {
    min_r_squared: f64 as Ratio, min_drift: f64 as Ratio,
});
rule_params!(
    /// `signal_clipped`.
    SignalClipped, SignalClippedPatch, "signal_clipped" {
    from_s: f64 as Secs, to_s: f64 as Secs, min_flat_samples: u32 as Count, max_gap_factor: f64 as Positive,
});

/// Every rule's parameters, and what accepting a suggestion writes.
#[derive(Debug, Clone, PartialEq)]
pub struct RuleSet {
    /// `Exclude` or `Suspect`.
    pub accept_as: MarkKind,
    pub baseline_licks: BaselineLicks,
    pub no_consumption: NoConsumption,
    pub late_first_lick: LateFirstLick,
    pub reward_too_soon: RewardTooSoon,
    pub unit_drift: UnitDrift,
    pub control_motion: ControlMotion,
    pub control_fit_poor: ControlFitPoor,
    pub signal_clipped: SignalClipped,
}

#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct FilePatch {
    accept_as: Option<AcceptAs>,
    baseline_licks: Option<BaselineLicksPatch>,
    no_consumption: Option<NoConsumptionPatch>,
    late_first_lick: Option<LateFirstLickPatch>,
    reward_too_soon: Option<RewardTooSoonPatch>,
    unit_drift: Option<UnitDriftPatch>,
    control_motion: Option<ControlMotionPatch>,
    control_fit_poor: Option<ControlFitPoorPatch>,
    signal_clipped: Option<SignalClippedPatch>,
}

#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(rename_all = "lowercase")]
enum AcceptAs {
    Exclude,
    Suspect,
}

impl Default for RuleSet {
    /// The shipped defaults (`default_rules.toml`).
    fn default() -> Self {
        RuleSet::parse(Path::new("default_rules.toml"), DEFAULT_RULES, None)
            .expect("the shipped default rules parse (tested)")
    }
}

impl RuleSet {
    /// Read `text` (from `file`, named in errors) over `base`; without a base every key is
    /// required.
    pub fn parse(
        file: &Path,
        text: &str,
        base: Option<&RuleSet>,
    ) -> Result<RuleSet, SettingsError> {
        let patch: FilePatch =
            toml::from_str(text).map_err(|e| crate::util::toml_error(file, text, &e))?;
        let at =
            |section: &str, e: String| SettingsError::new(file, section_line(text, section), e);
        macro_rules! section {
            ($field:ident) => {
                patch
                    .$field
                    .unwrap_or_default()
                    .over(base.map(|b| &b.$field))
                    .map_err(|e| at(stringify!($field), e))?
            };
        }
        let rules = RuleSet {
            accept_as: match (patch.accept_as, base) {
                (Some(AcceptAs::Exclude), _) => MarkKind::Exclude,
                (Some(AcceptAs::Suspect), _) => MarkKind::Suspect,
                (None, Some(b)) => b.accept_as,
                (None, None) => return Err(SettingsError::new(file, None, "accept_as is missing")),
            },
            baseline_licks: section!(baseline_licks),
            no_consumption: section!(no_consumption),
            late_first_lick: section!(late_first_lick),
            reward_too_soon: section!(reward_too_soon),
            unit_drift: section!(unit_drift),
            control_motion: section!(control_motion),
            control_fit_poor: section!(control_fit_poor),
            signal_clipped: section!(signal_clipped),
        };
        let windows = [
            (
                "baseline_licks",
                rules.baseline_licks.from_s,
                rules.baseline_licks.to_s,
            ),
            ("unit_drift", rules.unit_drift.from_s, rules.unit_drift.to_s),
        ];
        for (section, from, to) in windows {
            if from >= to {
                let e = format!("[{section}] from_s ({from}) must be before to_s ({to})");
                return Err(at(section, e));
            }
        }
        Ok(rules)
    }

    /// The defaults overridden by `suggest.toml` in `dir` when it exists; also returns the
    /// file that was read.
    pub fn load_from(dir: &Path) -> Result<(RuleSet, Option<PathBuf>), SettingsError> {
        let path = dir.join(USER_FILE);
        match crate::util::read_settings(&path) {
            Ok(text) => Ok((
                RuleSet::parse(&path, &text, Some(&RuleSet::default()))?,
                Some(path),
            )),
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok((RuleSet::default(), None)),
            Err(e) => Err(SettingsError::new(&path, None, e.to_string())),
        }
    }

    /// [`RuleSet::load_from`] the platform config folder (e.g. `~/.config/trialdesk/`).
    pub fn load_user() -> Result<(RuleSet, Option<PathBuf>), SettingsError> {
        match directories::ProjectDirs::from("", "", "trialdesk") {
            Some(d) => RuleSet::load_from(d.config_dir()),
            None => Ok((RuleSet::default(), None)),
        }
    }
}

/// 1-based line of the `[section]` header in `text`.
fn section_line(text: &str, section: &str) -> Option<usize> {
    let header = format!("[{section}]");
    text.lines()
        .position(|l| l.trim_start().starts_with(&header))
        .map(|i| i + 1)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The error as the user reads it (`FILE:LINE: message`).
    fn user(text: &str) -> Result<RuleSet, String> {
        RuleSet::parse(Path::new("suggest.toml"), text, Some(&RuleSet::default()))
            .map_err(|e| e.to_string())
    }

    #[test]
    fn shipped_defaults_parse_with_every_key() {
        let r = RuleSet::parse(Path::new("d"), DEFAULT_RULES, None).unwrap();
        // Accepting flags (suspect) unless the user chooses exclude.
        assert_eq!(r.accept_as, MarkKind::Suspect);
        // Qian et al. 2025 and Jeong et al. 2022 values.
        assert_eq!(r.late_first_lick.max_latency_s, 0.25);
        assert_eq!(r.reward_too_soon.min_interval_s, 3.0);
        assert!(r.unit_drift.enabled && r.signal_clipped.enabled);
    }

    #[test]
    fn a_user_file_overrides_only_its_keys() {
        let r = user("accept_as = \"exclude\"\n[late_first_lick]\nmax_latency_s = 0.3\n").unwrap();
        let d = RuleSet::default();
        assert_eq!(r.accept_as, MarkKind::Exclude);
        assert_eq!(r.late_first_lick.max_latency_s, 0.3);
        assert_eq!(r.late_first_lick.give_up_s, d.late_first_lick.give_up_s);
        assert_eq!(r.unit_drift, d.unit_drift);
        // Integers are accepted for seconds.
        assert_eq!(
            user("[reward_too_soon]\nmin_interval_s = 4\n")
                .unwrap()
                .reward_too_soon
                .min_interval_s,
            4.0
        );
    }

    #[test]
    fn errors_name_the_file_and_line() {
        let e = user("# c\n[unit_drift]\nk = -2\n").unwrap_err();
        assert!(e.starts_with("suggest.toml:3:"), "{e}");
        assert!(e.contains("positive"), "{e}");
        let e = user("[unit_drift]\n\nsmoothing = 3\n").unwrap_err();
        assert!(
            e.starts_with("suggest.toml:3:") && e.contains("smoothing"),
            "{e}"
        );
        let e = user("[no_such_rule]\nenabled = false\n").unwrap_err();
        assert!(e.starts_with("suggest.toml:1:"), "{e}");
        let e = user("accept_as = \"drop\"\n").unwrap_err();
        assert!(e.starts_with("suggest.toml:1:"), "{e}");
        let e = user("[baseline_licks]\nmin_licks = 0\n").unwrap_err();
        assert!(e.starts_with("suggest.toml:2:"), "{e}");
        let e = user("[baseline_licks\n").unwrap_err();
        assert!(e.starts_with("suggest.toml:1:"), "{e}");
        let e = user("\n[baseline_licks]\nfrom_s = 1.0\n").unwrap_err();
        assert!(
            e.starts_with("suggest.toml:2:") && e.contains("before to_s"),
            "{e}"
        );
        let e = user("[control_fit_poor]\nmin_r_squared = 1.5\n").unwrap_err();
        assert!(e.starts_with("suggest.toml:2:"), "{e}");
    }

    #[test]
    fn a_file_without_a_base_must_be_complete() {
        let e = RuleSet::parse(Path::new("x.toml"), "accept_as = \"exclude\"\n", None).unwrap_err();
        assert!(e.message.contains("missing"), "{e}");
    }

    #[test]
    fn missing_user_file_gives_the_defaults() {
        let dir = tempfile::tempdir().unwrap();
        let (r, path) = RuleSet::load_from(dir.path()).unwrap();
        assert_eq!((r, path), (RuleSet::default(), None));
        std::fs::write(
            dir.path().join(USER_FILE),
            "[signal_clipped]\nenabled = false\n",
        )
        .unwrap();
        let (r, path) = RuleSet::load_from(dir.path()).unwrap();
        assert!(!r.signal_clipped.enabled && path.is_some());
    }
}
