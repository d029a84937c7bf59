//! Helpers: run the built binary in a fresh temporary folder and show
//! "expected" and "got" in blocks when a check fails.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::sync::atomic::{AtomicUsize, Ordering};

static COUNTER: AtomicUsize = AtomicUsize::new(0);

/// A fresh, empty temporary folder for one test.
pub fn temp_dir(name: &str) -> PathBuf {
    let n = COUNTER.fetch_add(1, Ordering::SeqCst);
    let d = std::env::temp_dir().join(format!("quenchwise-test-{}-{n}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// The repository root (for shipped demo files and fixtures).
/// Wait (polling every 25 ms, at most 30 s) until `path` exists; `what`
/// names the stage it marks, for the failure message.
pub fn wait_for_file(path: &Path, what: &str) {
    for _ in 0..1200 {
        if path.exists() {
            return;
        }
        std::thread::sleep(std::time::Duration::from_millis(25));
    }
    panic!("{what}: {} never appeared", path.display());
}

/// Send `signal` ("-INT", "-TERM") to process `pid` with kill(1).
pub fn send_signal(pid: u32, signal: &str) {
    let status = Command::new("kill")
        .args([signal, &pid.to_string()])
        .status()
        .unwrap();
    assert!(status.success(), "kill {signal} {pid} failed");
}

pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A fixture file path.
pub fn fixture(name: &str) -> PathBuf {
    root().join("tests/fixtures").join(name)
}

/// The result of one run of the binary.
pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

/// Run `quenchwise ARGS` with `dir` as the working directory.
pub fn run_in(dir: &Path, args: &[&str]) -> Run {
    let Output {
        status,
        stdout,
        stderr,
    } = Command::new(env!("CARGO_BIN_EXE_quenchwise"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("the binary runs");
    Run {
        code: status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&stdout).into_owned(),
        stderr: String::from_utf8_lossy(&stderr).into_owned(),
    }
}

impl Run {
    fn show(&self) -> String {
        format!(
            "\n--- exit code ---\n{}\n--- stdout ---\n{}\n--- stderr ---\n{}\n",
            self.code, self.stdout, self.stderr
        )
    }

    /// Assert the exit code.
    pub fn code(&self, expected: i32) -> &Self {
        assert_eq!(
            self.code,
            expected,
            "\n--- expected exit code ---\n{expected}\n--- got ---{}",
            self.show()
        );
        self
    }

    /// Assert that stderr contains a piece of text.
    pub fn stderr_has(&self, needle: &str) -> &Self {
        assert!(
            self.stderr.contains(needle),
            "\n--- expected in stderr ---\n{needle}\n--- got ---{}",
            self.show()
        );
        self
    }

    /// Assert that stdout contains a piece of text.
    pub fn stdout_has(&self, needle: &str) -> &Self {
        assert!(
            self.stdout.contains(needle),
            "\n--- expected in stdout ---\n{needle}\n--- got ---{}",
            self.show()
        );
        self
    }

    /// stdout parsed as JSON.
    pub fn json(&self) -> serde_json::Value {
        serde_json::from_str(&self.stdout)
            .unwrap_or_else(|e| panic!("stdout is not JSON ({e}){}", self.show()))
    }
}

/// Relative difference |a − b| / |b|.
pub fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// A small XML well-formedness check for the SVG we write: every element opened
/// is closed in order, attributes are quoted, and there is one root.
pub fn check_xml(doc: &str) -> Result<(), String> {
    let body = match doc.trim_start().strip_prefix("<?xml") {
        Some(rest) => {
            rest.split_once("?>")
                .ok_or("unterminated XML declaration")?
                .1
        }
        None => doc,
    };
    let mut stack: Vec<String> = Vec::new();
    let mut roots = 0;
    let mut rest = body;
    while let Some(start) = rest.find('<') {
        let after = &rest[start + 1..];
        if let Some(c) = after.strip_prefix("!--") {
            rest = &c[c.find("-->").ok_or("unterminated comment")? + 3..];
            continue;
        }
        let end = after.find('>').ok_or("unterminated tag")?;
        let tag = &after[..end];
        rest = &after[end + 1..];
        if let Some(name) = tag.strip_prefix('/') {
            let open = stack
                .pop()
                .ok_or(format!("</{name}> without an opening tag"))?;
            if open != name.trim() {
                return Err(format!("<{open}> closed by </{name}>"));
            }
        } else {
            let name: String = tag
                .chars()
                .take_while(|c| !c.is_whitespace() && *c != '/')
                .collect();
            if tag.matches('"').count() % 2 != 0 {
                return Err(format!("unbalanced quotes in <{name}>"));
            }
            if stack.is_empty() {
                roots += 1;
            }
            if !tag.ends_with('/') {
                stack.push(name);
            }
        }
    }
    if !stack.is_empty() {
        return Err(format!("unclosed elements: {stack:?}"));
    }
    if roots != 1 {
        return Err(format!("{roots} root elements"));
    }
    Ok(())
}

/// The shipped demo melt card (demo-datasets/melt-card.toml), parsed.
pub fn demo_card() -> quenchwise::kinetics::Melt {
    let path = root().join("demo-datasets/melt-card.toml");
    let text = std::fs::read_to_string(&path).unwrap();
    let src = quenchwise::files::source::Source::new(path.display().to_string(), &text);
    quenchwise::files::melt_card::parse_melt_card(&src, &Default::default())
        .unwrap()
        .0
}
