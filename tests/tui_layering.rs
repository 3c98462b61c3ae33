//! The line between the terminal-free core and the shells: no core module names the terminal
//! crates, and the reviewer's drawing code does no file I/O and never takes `&mut State`.

use std::path::Path;

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

#[test]
fn core_never_imports_terminal_crates() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let mut offenders = Vec::new();
    for f in files {
        let rel = f
            .strip_prefix(&src)
            .unwrap()
            .to_string_lossy()
            .replace('\\', "/");
        if rel.starts_with("tui/") || rel.starts_with("cli/") || rel == "main.rs" {
            continue;
        }
        let text = std::fs::read_to_string(&f).unwrap();
        if text.contains("ratatui") || text.contains("crossterm") {
            offenders.push(rel);
        }
    }
    assert!(
        offenders.is_empty(),
        "terminal crates named in core files: {offenders:?}"
    );
}

#[test]
fn drawing_code_reads_state_only() {
    let tui = Path::new(env!("CARGO_MANIFEST_DIR")).join("src/tui");
    let mut files = Vec::new();
    rust_files(&tui.join("screens"), &mut files);
    rust_files(&tui.join("widgets"), &mut files);
    assert!(files.len() >= 12, "screens and widgets not found");
    for f in files {
        let text = std::fs::read_to_string(&f).unwrap();
        for banned in ["&mut State", "std::fs", "marks::append", "read_journal"] {
            assert!(!text.contains(banned), "{} contains {banned}", f.display());
        }
    }
}
