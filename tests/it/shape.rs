//! The code's shape, checked: the chain is designed in one place, never in the GUI.

use std::path::Path;

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).expect("readable source folder") {
        let p = e.expect("entry").path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// Every `.design(` call site with an argument (designing a chain at a rate), listed; none may
/// be under `src/gui`: the views take the DSP thread's design (`Pipeline::design`, the
/// snapshots' `design`).
#[test]
fn no_file_under_src_gui_designs_a_chain() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut files = Vec::new();
    rust_files(&root.join("src"), &mut files);
    let mut sites = Vec::new();
    for f in &files {
        let text = std::fs::read_to_string(f).expect("source text");
        for (n, line) in text.lines().enumerate() {
            let mut rest = line;
            while let Some(i) = rest.find(".design(") {
                let after = &rest[i + ".design(".len()..];
                if !after.starts_with(')') && !line.trim_start().starts_with("//") {
                    let rel = f.strip_prefix(root).expect("under the root");
                    sites.push(format!("{}:{}", rel.display(), n + 1));
                }
                rest = after;
            }
        }
    }
    println!("{} design call sites:\n{}", sites.len(), sites.join("\n"));
    assert!(sites.len() > 5, "the scan found the call sites: {sites:?}");
    let in_gui: Vec<&String> = sites.iter().filter(|s| s.starts_with("src/gui")).collect();
    assert!(in_gui.is_empty(), "designed under src/gui: {in_gui:?}");
}

/// The length of each function in `text`: from its `fn` line to the closing brace at the same
/// indentation (the layout rustfmt gives), as (first line, lines, name).
fn function_lengths(text: &str) -> Vec<(usize, usize, String)> {
    let lines: Vec<&str> = text.lines().collect();
    let mut out = Vec::new();
    for (i, line) in lines.iter().enumerate() {
        let trimmed = line.trim_start();
        let indent = &line[..line.len() - trimmed.len()];
        let head = [
            "pub fn ",
            "fn ",
            "pub(crate) fn ",
            "pub(super) fn ",
            "const fn ",
        ]
        .iter()
        .find_map(|p| trimmed.strip_prefix(p));
        let Some(rest) = head else { continue };
        let name: String = rest
            .chars()
            .take_while(|c| c.is_alphanumeric() || *c == '_')
            .collect();
        // The signature ends at its opening brace (or a `;` for a declaration).
        let Some(open) = (i..lines.len()).find(|&j| {
            let t = lines[j].trim_end();
            t.ends_with('{') || t.ends_with(';')
        }) else {
            continue;
        };
        if lines[open].trim_end().ends_with(';') {
            continue;
        }
        let close = format!("{indent}}}");
        if let Some(end) = (open + 1..lines.len()).find(|&j| lines[j] == close) {
            out.push((i + 1, end - i + 1, name));
        }
    }
    out
}

/// The limits of the code's shape: no source file over 700 lines, no function over 100.
#[test]
fn no_file_over_700_lines_and_no_function_over_100() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut files = Vec::new();
    rust_files(&root.join("src"), &mut files);
    let (mut long_files, mut long_fns, mut counted) = (Vec::new(), Vec::new(), 0);
    for f in &files {
        let text = std::fs::read_to_string(f).expect("source text");
        let rel = f
            .strip_prefix(root)
            .expect("under the root")
            .display()
            .to_string();
        let n = text.lines().count();
        if n > 700 {
            long_files.push(format!("{rel}: {n} lines"));
        }
        for (line, len, name) in function_lengths(&text) {
            counted += 1;
            if len > 100 {
                long_fns.push(format!("{rel}:{line} {name}: {len} lines"));
            }
        }
    }
    assert!(counted > 1000, "the scan found the functions: {counted}");
    assert!(
        long_files.is_empty(),
        "files over 700 lines: {long_files:?}"
    );
    assert!(
        long_fns.is_empty(),
        "functions over 100 lines: {long_fns:?}"
    );
}

#[test]
fn the_function_scan_measures_a_known_layout() {
    let text = "fn a() {\n    let x = 1;\n}\n\nimpl S {\n    pub fn b(\n        y: u8,\n    ) -> u8 {\n        y\n    }\n}\n";
    assert_eq!(
        function_lengths(text),
        vec![(1, 3, "a".to_string()), (6, 5, "b".to_string())]
    );
}
