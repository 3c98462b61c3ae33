//! Property tests: the data readers never panic, whatever the bytes, and every problem they
//! report points at a line that exists.

use proptest::prelude::*;
use std::path::Path;
use trialdesk::data::csvio::{LineGuard, MAX_LINE_BYTES};
use trialdesk::data::meta::parse_meta;
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
    #![proptest_config(ProptestConfig::with_cases(400))]

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
}
