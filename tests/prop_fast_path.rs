//! The fast path for spikes.csv and licks.csv against the standard reader: for generated files,
//! clean and broken, whenever the fast path takes a file it must give exactly the standard
//! reader's table, and the standard reader must have nothing to say about that file (so the
//! loader, which falls back to the standard reader for every other file, reports the same
//! diagnostics as before). Clean files must be taken, or the fast path would never run.

use proptest::prelude::*;
use std::path::Path;
use trialdesk::data::diag::Diagnostic;
use trialdesk::data::tables::{read_licks, read_photometry, read_spikes, Span};
use trialdesk::data::{fast, Spikes};

/// One row's text: usually clean, sometimes with a flaw the fast path must refuse or read
/// exactly as the standard reader does.
fn field_time() -> impl Strategy<Value = String> {
    prop_oneof![
        8 => (0u32..40_000, 0u32..10_000).prop_map(|(a, b)| format!("{a}.{b:04}")),
        1 => (0u32..400).prop_map(|a| a.to_string()),
        1 => prop::sample::select(vec![
            "-1.5", "1e3", " 2.5", "2.5 ", "", "NaN", "inf", "+3", "1.2.3", "0x10", ".5", "7.",
            "\"3.5\"", "3,5", "12345678901234567",
        ])
        .prop_map(str::to_string),
    ]
}

fn unit_id() -> impl Strategy<Value = String> {
    prop_oneof![
        8 => (1u32..12).prop_map(|u| format!("u{u}")),
        1 => (1u32..4).prop_map(|u| format!("shank2-unit{u}")),
        1 => prop::sample::select(vec!["", " u1", "u1 ", "\u{e9}u", "u\"1", "a b"])
            .prop_map(str::to_string),
    ]
}

fn line_end() -> impl Strategy<Value = &'static str> {
    prop_oneof![20 => Just("\n"), 1 => Just("\r\n"), 1 => Just("\n\n")]
}

fn spikes_file() -> impl Strategy<Value = Vec<u8>> {
    (
        prop_oneof![10 => Just("unit,time_s"), 1 => Just("time_s,unit"), 1 => Just("unit,time_s,x")],
        any::<bool>(),
        prop::collection::vec((unit_id(), field_time(), line_end()), 0..40),
        any::<bool>(),
    )
        .prop_map(|(header, bom, rows, final_newline)| {
            let mut s = String::new();
            if bom {
                s.push('\u{feff}');
            }
            s.push_str(header);
            s.push('\n');
            for (i, (u, t, end)) in rows.iter().enumerate() {
                s.push_str(u);
                s.push(',');
                s.push_str(t);
                if i + 1 < rows.len() || final_newline {
                    s.push_str(end);
                }
            }
            s.into_bytes()
        })
}

fn licks_file() -> impl Strategy<Value = Vec<u8>> {
    (
        prop_oneof![10 => Just("time_s"), 1 => Just("time"), 1 => Just("time_s,x")],
        prop::collection::vec((field_time(), line_end()), 0..40),
        any::<bool>(),
    )
        .prop_map(|(header, rows, sorted)| {
            let mut rows = rows;
            if sorted {
                rows.sort_by(|a, b| {
                    let p = |s: &str| s.parse::<f64>().unwrap_or(f64::NAN);
                    p(&a.0).total_cmp(&p(&b.0))
                });
            }
            let mut s = format!("{header}\n");
            for (t, end) in rows {
                s.push_str(&t);
                s.push_str(end);
            }
            s.into_bytes()
        })
}

fn signed_value() -> impl Strategy<Value = String> {
    prop_oneof![
        8 => (-3000i32..3000, 0u32..10_000).prop_map(|(a, b)| {
            let sign = if a < 0 { "-" } else { "" };
            format!("{sign}{}.{b:04}", a.unsigned_abs())
        }),
        1 => prop::sample::select(vec!["-0", "-.5", "1e-3", "--1", "", " 1.0", "NaN", "-inf"])
            .prop_map(str::to_string),
    ]
}

fn photometry_file() -> impl Strategy<Value = Vec<u8>> {
    (
        prop_oneof![
            5 => Just("time_s,signal"),
            5 => Just("time_s,signal,control"),
            1 => Just("signal,time_s"),
            1 => Just("time_s,signal,extra"),
        ],
        prop::collection::vec(
            (0u32..50, signed_value(), signed_value(), line_end()),
            0..40,
        ),
        any::<bool>(),
        any::<bool>(),
    )
        .prop_map(|(header, rows, ragged, bom)| {
            let mut s = String::new();
            if bom {
                s.push('\u{feff}');
            }
            s.push_str(header);
            s.push('\n');
            // Times mostly increasing by a step; a zero step repeats a time.
            let mut t = 0u32;
            let three = header.split(',').count() == 3;
            for (i, (step, a, b, end)) in rows.iter().enumerate() {
                t += step % 5;
                s.push_str(&format!("{}.{:03},{a}", t, i % 1000));
                if three != (ragged && i == 3) {
                    s.push(',');
                    s.push_str(b);
                }
                s.push_str(end);
            }
            s.into_bytes()
        })
}

fn span() -> impl Strategy<Value = Option<Span>> {
    prop_oneof![
        Just(None),
        (1000.0..50_000.0f64).prop_map(|e| Some(Span { end_s: e }))
    ]
}

/// Spike times sorted per unit, as a recording writes them.
fn sorted_per_unit(bytes: &[u8]) -> Vec<u8> {
    let text = String::from_utf8_lossy(bytes).into_owned();
    let mut lines = text.lines();
    let header = lines.next().unwrap_or_default().to_string();
    let mut rows: Vec<(String, String)> = lines
        .filter_map(|l| l.split_once(','))
        .map(|(u, t)| (u.to_string(), t.to_string()))
        .collect();
    rows.sort_by(|a, b| {
        let p = |s: &str| s.parse::<f64>().unwrap_or(f64::NAN);
        p(&a.1).total_cmp(&p(&b.1))
    });
    let mut s = format!("{header}\n");
    for (u, t) in rows {
        s.push_str(&format!("{u},{t}\n"));
    }
    s.into_bytes()
}

fn standard_spikes(bytes: &[u8], span: Option<Span>) -> (Option<(Spikes, usize)>, Vec<Diagnostic>) {
    let mut diags = Vec::new();
    let r = read_spikes(Path::new("spikes.csv"), bytes, span, &mut diags);
    (r.map(|p| (p.value, p.errors)), diags)
}

fn fast_spikes(bytes: &[u8], span: Option<Span>) -> Option<(Spikes, Vec<Diagnostic>)> {
    let mut diags = Vec::new();
    fast::spikes(Path::new("spikes.csv"), bytes, span, &mut diags).map(|s| (s, diags))
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    #[test]
    fn spikes_fast_path_agrees(file in spikes_file(), sort in any::<bool>(), span in span()) {
        let file = if sort { sorted_per_unit(&file) } else { file };
        if let Some((fast, fast_diags)) = fast_spikes(&file, span) {
            let (standard, diags) = standard_spikes(&file, span);
            prop_assert_eq!(fast_diags, diags, "{}", String::from_utf8_lossy(&file));
            let (value, errors) = standard.expect("the standard reader reads it too");
            prop_assert_eq!(errors, 0);
            prop_assert_eq!(fast, value);
        }
    }

    #[test]
    fn licks_fast_path_agrees(file in licks_file(), span in span()) {
        if let Some(fast) = fast::licks(&file[..], span) {
            let mut diags = Vec::new();
            let standard = read_licks(Path::new("licks.csv"), &file[..], span, &mut diags);
            prop_assert!(diags.is_empty(), "{:?}\n{}", diags, String::from_utf8_lossy(&file));
            let standard = standard.expect("the standard reader reads it too");
            prop_assert_eq!(standard.errors, 0);
            prop_assert_eq!(fast, standard.value);
        }
    }

    #[test]
    fn photometry_fast_path_agrees(file in photometry_file()) {
        if let Some(fast) = fast::photometry(&file[..]) {
            let mut diags = Vec::new();
            let standard = read_photometry(Path::new("photometry.csv"), &file[..], &mut diags);
            prop_assert!(diags.is_empty(), "{:?}\n{}", diags, String::from_utf8_lossy(&file));
            let standard = standard.expect("the standard reader reads it too");
            prop_assert_eq!(standard.errors, 0);
            prop_assert_eq!(fast, standard.value);
        }
    }

    /// Clean files are taken by the fast path.
    #[test]
    fn clean_files_take_the_fast_path(
        rows in prop::collection::vec((1u32..9, 0u32..40_000, 0u32..1000), 1..60),
    ) {
        let mut rows = rows;
        rows.sort_by_key(|&(_, a, b)| (a, b));
        let mut s = String::from("unit,time_s\n");
        let mut l = String::from("time_s\n");
        for (u, a, b) in &rows {
            s.push_str(&format!("u{u},{a}.{b:03}\n"));
            l.push_str(&format!("{a}.{b:03}\n"));
        }
        let fast = fast_spikes(s.as_bytes(), None);
        prop_assert!(fast.is_some());
        let (standard, _) = standard_spikes(s.as_bytes(), None);
        prop_assert_eq!(fast.unwrap().0, standard.unwrap().0);
        prop_assert!(fast::licks(l.as_bytes(), None).is_some());
        // Trains out of order are taken too, with the standard reader's own warning.
        let mut r = String::from("unit,time_s\n");
        for (u, a, b) in rows.iter().rev() {
            r.push_str(&format!("u{u},{a}.{b:03}\n"));
        }
        let (fast, fast_diags) = fast_spikes(r.as_bytes(), None).expect("taken");
        let (standard, diags) = standard_spikes(r.as_bytes(), None);
        prop_assert_eq!(fast_diags, diags);
        prop_assert_eq!(fast, standard.unwrap().0);
        let mut p = String::from("time_s,signal,control\n");
        for (i, (_, a, b)) in rows.iter().enumerate() {
            p.push_str(&format!("{i}.5,{a}.{b:03},-{b}.{a}\n"));
        }
        let fast = fast::photometry(p.as_bytes());
        prop_assert!(fast.is_some());
        let standard = read_photometry(Path::new("photometry.csv"), p.as_bytes(), &mut Vec::new());
        prop_assert_eq!(fast.unwrap(), standard.unwrap().value);
    }
}

/// A unit id that is not UTF-8 goes to the standard reader, which reports it.
#[test]
fn a_unit_id_that_is_not_utf8_is_left_to_the_standard_reader() {
    let file = b"unit,time_s\nu1,1.5\nu\xff2,2.5\n";
    assert!(fast_spikes(file, None).is_none());
    let (_, diags) = standard_spikes(file, None);
    assert!(!diags.is_empty());
}
