//! Property tests: the data readers never panic, whatever the bytes, and every problem they
//! report points at a line that exists.

use proptest::prelude::*;
use std::path::Path;
use trialdesk::data::csvio::{LineGuard, MAX_LINE_BYTES};
use trialdesk::data::events::read_events;
use trialdesk::data::meta::{normalize_time, parse_meta, valid_iso_date};
use trialdesk::data::number::parse_plain_decimal;
use trialdesk::data::tables::{read_licks, read_photometry, read_spikes, read_trials, Span};
use trialdesk::data::Diagnostic;

fn read_all(bytes: &[u8]) -> Vec<Diagnostic> {
    let mut out = Vec::new();
    let p = Path::new("x.csv");
    let cues = ["tone-hi", "tone-lo"];
    let _ = read_trials(p, bytes, Some(&cues[..]), &mut out);
    let _ = read_spikes(p, bytes, Some(Span { end_s: 50.0 }), &mut out);
    let _ = read_licks(p, bytes, None, &mut out);
    let _ = read_photometry(p, bytes, &mut out);
    let _ = read_events(p, bytes, Some(&cues[..]), &mut out);
    let _ = parse_meta(Path::new("session.toml"), bytes, &mut out);
    out
}

fn lines_in(bytes: &[u8]) -> u64 {
    1 + bytes.iter().filter(|&&b| b == b'\n').count() as u64
}

/// CSV-like text built from tokens the readers care about, so rows get past the header.
fn csvish() -> impl Strategy<Value = Vec<u8>> {
    let header = prop::sample::select(vec![
        "trial,cue,cue_s,reward_s,reward_ul\n",
        "\u{feff}cue_s,trial,reward_ul,cue,reward_s,x\r\n",
        "unit,time_s\n",
        "time_s\n",
        "time_s,signal,control\n",
        "trial,kind,name,onset_s,offset_s,size\n",
        "trial,cue,cue_s,reward_s,reward_ul,cue_off_s\n",
    ]);
    let token = prop::sample::select(vec![
        "",
        "1",
        "2",
        "-1",
        "0",
        "1.5",
        "NaN",
        "inf",
        "-inf",
        "1e308",
        "1e999",
        "abc",
        "tone-hi",
        "tone-lo",
        "cue",
        "reward",
        "u1",
        "\"",
        "\"a,b\"",
        ",",
        "\n",
        "\r\n",
        " ",
        "\u{0}",
        "\u{ff}",
        "é",
        "9223372036854775808",
    ]);
    (header, prop::collection::vec(token, 0..60)).prop_map(|(h, toks)| {
        let mut s = h.as_bytes().to_vec();
        for t in toks {
            s.extend_from_slice(t.as_bytes());
        }
        s
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn random_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..400)) {
        let n = lines_in(&bytes);
        for d in read_all(&bytes) {
            prop_assert!(d.line.is_none_or(|l| (1..=n).contains(&l)), "{d}");
        }
    }

    #[test]
    fn csv_like_text_never_panics(bytes in csvish()) {
        let n = lines_in(&bytes);
        for d in read_all(&bytes) {
            prop_assert!(d.line.is_none_or(|l| (1..=n).contains(&l)), "{d}");
        }
    }

    #[test]
    fn date_and_time_checks_take_any_text(t in "[0-9:é-]{0,12}") {
        let _ = valid_iso_date(&t);
        let _ = normalize_time(&t);
    }

    /// Clinger's fast path must give exactly what the standard parser gives.
    #[test]
    fn fast_decimals_equal_the_standard_parser(text in "[0-9]{0,12}(\\.[0-9]{0,10})?") {
        if let Some(x) = parse_plain_decimal(text.as_bytes()) {
            prop_assert_eq!(Some(x), text.parse::<f64>().ok(), "{}", text);
        }
    }

    #[test]
    fn the_line_guard_passes_short_lines_through(text in "[a-z0-9,\n]{0,300}") {
        use std::io::Read;
        let mut out = Vec::new();
        let mut g = LineGuard::new(text.as_bytes());
        prop_assert!(g.read_to_end(&mut out).is_ok());
        prop_assert_eq!(out, text.as_bytes());
        prop_assert!(MAX_LINE_BYTES > 300);
    }

    /// Whole folders: one file of a valid session damaged (cut, overwritten, spliced), then
    /// the full check (all readers, cross-file checks, marks) must still answer.
    #[test]
    fn damaged_session_folders_never_panic(
        file in 0usize..6,
        cut in any::<prop::sample::Index>(),
        at in any::<prop::sample::Index>(),
        junk in prop::collection::vec(any::<u8>(), 0..40),
    ) {
        let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/valid_session");
        let tmp = tempfile::tempdir().unwrap();
        let names = ["session.toml", "trials.csv", "spikes.csv", "licks.csv", "photometry.csv", "marks.csv"];
        for name in names {
            std::fs::copy(src.join(name), tmp.path().join(name)).unwrap();
        }
        let target = tmp.path().join(names[file]);
        let mut bytes = std::fs::read(&target).unwrap();
        bytes.truncate(cut.index(bytes.len() + 1));
        let at = at.index(bytes.len() + 1);
        bytes.splice(at..at, junk);
        std::fs::write(&target, &bytes).unwrap();
        for d in trialdesk::check::check(tmp.path()) {
            if let (Some(line), Ok(text)) = (d.line, std::fs::read(&d.file)) {
                prop_assert!(line >= 1 && line <= lines_in(&text), "{}", d);
            }
        }
    }
}
