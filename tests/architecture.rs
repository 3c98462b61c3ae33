//! The core stays free of terminal code: only `src/tui/` (and the CLI that starts it) may use
//! ratatui or crossterm. Keeps the library usable from scripts, tests and headless batch jobs.

use std::fs;
use std::path::Path;

const SHELLS: &[&str] = &["tui", "cli", "main.rs", "lib.rs"];

fn scan(dir: &Path, offenders: &mut Vec<String>) {
    for entry in fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            scan(&path, offenders);
        } else if path.extension().is_some_and(|e| e == "rs") {
            let text = fs::read_to_string(&path).unwrap();
            for (i, line) in text.lines().enumerate() {
                let code = line.trim_start();
                if code.starts_with("//") {
                    continue;
                }
                if code.contains("ratatui") || code.contains("crossterm") {
                    offenders.push(format!("{}:{}: {}", path.display(), i + 1, line.trim()));
                }
            }
        }
    }
}

#[test]
fn core_modules_do_not_use_terminal_crates() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut offenders = Vec::new();
    for entry in fs::read_dir(&src).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        if SHELLS.contains(&name.as_str()) {
            continue;
        }
        if path.is_dir() {
            scan(&path, &mut offenders);
        } else if name.ends_with(".rs") {
            let text = fs::read_to_string(&path).unwrap();
            if text.contains("ratatui") || text.contains("crossterm") {
                offenders.push(path.display().to_string());
            }
        }
    }
    assert!(
        offenders.is_empty(),
        "terminal code in the core:\n{}",
        offenders.join("\n")
    );
}

#[test]
fn no_source_file_grows_past_the_agreed_size() {
    // DEVELOPERS.md: split by concern before a file passes ~600 lines.
    let mut big = Vec::new();
    let mut stack = vec![Path::new(env!("CARGO_MANIFEST_DIR")).join("src")];
    while let Some(dir) = stack.pop() {
        for entry in fs::read_dir(&dir).unwrap() {
            let path = entry.unwrap().path();
            if path.is_dir() {
                stack.push(path);
            } else if path.extension().is_some_and(|e| e == "rs") {
                let n = fs::read_to_string(&path).unwrap().lines().count();
                if n > 600 {
                    big.push(format!("{} ({n} lines)", path.display()));
                }
            }
        }
    }
    assert!(big.is_empty(), "files to split:\n{}", big.join("\n"));
}
