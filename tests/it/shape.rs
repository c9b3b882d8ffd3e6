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
