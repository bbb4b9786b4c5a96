//! The README's tour runs as written: every `$ ` command in its code
//! blocks, in order, in one fresh folder, with `candor` on the PATH. Each
//! must succeed, and every output line the README shows under it (other
//! than a `...` standing for lines left out) must appear in what the
//! command printed, so the README cannot drift from the tool.

use std::path::Path;
use std::process::Command;

/// The `$ ` commands of the README with the lines shown under each.
fn tour() -> Vec<(String, Vec<String>)> {
    let text = std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md"))
        .expect("README.md");
    let mut steps: Vec<(String, Vec<String>)> = Vec::new();
    let mut in_block = false;
    let mut current: Option<usize> = None;
    for line in text.lines() {
        if line.starts_with("```") {
            in_block = !in_block;
            current = None;
            continue;
        }
        if !in_block {
            continue;
        }
        if let Some(cmd) = line.strip_prefix("$ ") {
            steps.push((cmd.to_string(), Vec::new()));
            current = Some(steps.len() - 1);
        } else if let Some(i) = current {
            if line.trim() != "..." {
                steps[i].1.push(line.to_string());
            }
        }
    }
    steps
}

#[test]
fn every_readme_command_runs_as_written_and_prints_what_is_shown() {
    let steps = tour();
    assert!(steps.len() >= 10, "the tour was not found: {steps:?}");
    let tmp = tempfile::tempdir().unwrap();
    let bin = Path::new(env!("CARGO_BIN_EXE_candor"))
        .parent()
        .unwrap()
        .to_path_buf();
    let path = format!(
        "{}:{}",
        bin.display(),
        std::env::var("PATH").unwrap_or_default()
    );
    for (cmd, shown) in &steps {
        assert!(
            cmd.starts_with("candor ")
                || cmd.starts_with("head ")
                || cmd.starts_with("tail ")
                || cmd.starts_with("grep "),
            "a README command this test does not expect: {cmd}"
        );
        let out = Command::new("sh")
            .arg("-c")
            .arg(cmd)
            .env("PATH", &path)
            .current_dir(tmp.path())
            .output()
            .unwrap();
        let printed = format!(
            "{}{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        );
        assert!(out.status.success(), "`{cmd}` failed:\n{printed}");
        let lines: Vec<&str> = printed.lines().collect();
        for want in shown {
            assert!(
                lines.iter().any(|l| l.trim_end() == want.trim_end()),
                "`{cmd}`: the README shows\n{want}\nbut it printed:\n{printed}"
            );
        }
    }
}
