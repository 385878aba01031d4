//! The estimator core stays pure: no file system, DOM, JavaScript, clocks or printing outside
//! the front ends (src/bin/, and src/web/ once it exists). `cargo xtask test` also builds the
//! library for wasm32 without default features, which proves the same from the compiler's side.

use std::path::Path;

const FORBIDDEN: &[&str] = &[
    "std::fs",
    "web_sys",
    "wasm_bindgen",
    "js_sys",
    "std::time",
    "Instant::now",
    "println!",
    "eprintln!",
    "std::process",
    "std::env",
];

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            let name = path.file_name().unwrap().to_string_lossy().to_string();
            if name != "bin" && name != "web" {
                rust_files(&path, out);
            }
        } else if path.extension().is_some_and(|e| e == "rs") {
            out.push(path);
        }
    }
}

#[test]
fn core_uses_no_io_dom_or_clock() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = vec![];
    rust_files(&src, &mut files);
    assert!(files.len() >= 10, "found only {} files", files.len());
    let mut offences = vec![];
    for file in &files {
        let text = std::fs::read_to_string(file).unwrap();
        for (i, line) in text.lines().enumerate() {
            let code = line.split("//").next().unwrap_or("");
            for word in FORBIDDEN {
                if code.contains(word) {
                    offences.push(format!("{}:{}: {}", file.display(), i + 1, line.trim()));
                }
            }
        }
    }
    assert!(
        offences.is_empty(),
        "core touches the outside world:\n{}",
        offences.join("\n")
    );
}
