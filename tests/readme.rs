//! The examples of the README and of `docs/` cannot go stale: marked
//! blocks are written to a scratch project (with the samples' library
//! under `parts/` and the shipped `rules/`), marked commands are run there,
//! and their output must equal the block that follows the mark.
//!
//! Marks are HTML comments on the line before a fenced block:
//! - `<!-- example: NAME -->`: the block is the file NAME;
//! - `<!-- example: NEW from OLD without PREFIX -->` (no block): NEW is
//!   OLD without the lines that start with PREFIX;
//! - `<!-- example-run: ARGS -->`: the block is what `armature ARGS`
//!   prints (stdout) in the project.
//!
//! Every fenced block that holds a netlist must be marked. With
//! `ARMATURE_WRITE_DOCS=1` the output blocks are rewritten from the runs.

use std::path::{Path, PathBuf};
use std::process::Command;

fn docs() -> Vec<PathBuf> {
    let mut v = vec![PathBuf::from("README.md")];
    for e in std::fs::read_dir("docs").into_iter().flatten().flatten() {
        if e.path().extension().is_some_and(|x| x == "md") {
            v.push(e.path());
        }
    }
    v.sort();
    v
}

fn scratch(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("armature-readme-{}-{tag}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let _ = std::fs::create_dir_all(dir.join(".git"));
    let _ = std::fs::create_dir_all(dir.join("parts"));
    let _ = std::fs::create_dir_all(dir.join("rules"));
    let _ = std::fs::copy(
        "samples/parts/greenhouse.yaml",
        dir.join("parts/greenhouse.yaml"),
    );
    for e in std::fs::read_dir("rules").into_iter().flatten().flatten() {
        let _ = std::fs::copy(e.path(), dir.join("rules").join(e.file_name()));
    }
    dir
}

/// The fenced block starting at line `i` (the fence): (body, index of the
/// closing fence).
fn block(lines: &[&str], i: usize) -> Option<(String, usize)> {
    if !lines.get(i)?.trim_start().starts_with("```") {
        return None;
    }
    let end = (i + 1..lines.len()).find(|&j| lines[j].trim_start().starts_with("```"))?;
    Some((
        lines[i + 1..end].iter().map(|l| format!("{l}\n")).collect(),
        end,
    ))
}

fn looks_like_netlist(body: &str) -> bool {
    let first = body.lines().find(|l| !l.trim().is_empty()).unwrap_or("");
    ["design ", "rail ", "library \"", "ground "]
        .iter()
        .any(|w| first.starts_with(w))
        && body.lines().count() > 2
}

fn run(dir: &Path, args: &str) -> String {
    let out = match Command::new(env!("CARGO_BIN_EXE_armature"))
        .args(args.split_whitespace())
        .current_dir(dir)
        .env_remove("CI")
        .output()
    {
        Ok(o) => o,
        Err(e) => panic!("{e}"),
    };
    String::from_utf8_lossy(&out.stdout).into_owned()
}

#[test]
fn marked_examples_run_as_shown() {
    let write = std::env::var_os("ARMATURE_WRITE_DOCS").is_some();
    let mut runs = 0;
    for doc in docs() {
        let text = std::fs::read_to_string(&doc).unwrap_or_default();
        let lines: Vec<&str> = text.lines().collect();
        let dir = scratch(&doc.to_string_lossy().replace(['/', '.'], "-"));
        let mut out_lines: Vec<String> = Vec::new();
        let mut i = 0;
        let mut marked_next = false;
        while i < lines.len() {
            let l = lines[i].trim();
            out_lines.push(lines[i].to_string());
            if let Some(m) = l
                .strip_prefix("<!-- example:")
                .and_then(|m| m.strip_suffix("-->"))
            {
                let m = m.trim();
                if let Some((new, rest)) = m.split_once(" from ") {
                    let Some((old, prefix)) = rest.split_once(" without ") else {
                        panic!("{}:{}: `from OLD without PREFIX`", doc.display(), i + 1);
                    };
                    let base = std::fs::read_to_string(dir.join(old.trim())).unwrap_or_default();
                    assert!(
                        !base.is_empty(),
                        "{}:{}: {old} not written yet",
                        doc.display(),
                        i + 1
                    );
                    let derived: String = base
                        .lines()
                        .filter(|x| !x.starts_with(prefix.trim()))
                        .map(|x| format!("{x}\n"))
                        .collect();
                    assert_ne!(
                        derived,
                        base,
                        "{}:{}: nothing dropped",
                        doc.display(),
                        i + 1
                    );
                    let _ = std::fs::write(dir.join(new.trim()), derived);
                } else {
                    marked_next = true;
                    let Some((body, _)) = block(&lines, i + 1) else {
                        panic!("{}:{}: no block after the mark", doc.display(), i + 1);
                    };
                    let p = dir.join(m);
                    if let Some(d) = p.parent() {
                        let _ = std::fs::create_dir_all(d);
                    }
                    let _ = std::fs::write(p, body);
                }
            } else if let Some(args) = l
                .strip_prefix("<!-- example-run:")
                .and_then(|m| m.strip_suffix("-->"))
            {
                let Some((body, end)) = block(&lines, i + 1) else {
                    panic!("{}:{}: no block after the mark", doc.display(), i + 1);
                };
                let got = run(&dir, args.trim());
                runs += 1;
                if write {
                    out_lines.push(lines[i + 1].to_string());
                    out_lines.extend(got.lines().map(str::to_string));
                    out_lines.push(lines[end].to_string());
                    i = end + 1;
                    continue;
                }
                assert!(
                    got == body,
                    "{}:{}: `armature {}` prints\n{got}\nbut the block shows\n{body}\n(ARMATURE_WRITE_DOCS=1 cargo test --test readme rewrites it)",
                    doc.display(),
                    i + 1,
                    args.trim()
                );
            } else if let Some((body, _)) = block(&lines, i) {
                // an unmarked block must not be a netlist
                let was_marked = std::mem::take(&mut marked_next);
                assert!(
                    was_marked || !looks_like_netlist(&body),
                    "{}:{}: a netlist block without an `example` mark",
                    doc.display(),
                    i + 1
                );
                // skip the block's body (its lines are kept as they are)
                let (_, end) = block(&lines, i).unwrap_or((String::new(), i));
                for line in lines.iter().take(end + 1).skip(i + 1) {
                    out_lines.push(line.to_string());
                }
                i = end + 1;
                continue;
            }
            i += 1;
        }
        if write {
            let mut new = out_lines.join("\n");
            new.push('\n');
            if new != text {
                let _ = std::fs::write(&doc, new);
            }
        }
        let _ = std::fs::remove_dir_all(&dir);
    }
    assert!(runs >= 2, "only {runs} example runs");
}
