//! Every citation resolves inside the repository.
//!
//! Scans every tracked text file (`git ls-files`, or a walk of the tree
//! without `target/` and `.git/` where git is not available) and fails when
//! one of them
//!
//! - links or names a repository path that does not exist: markdown links
//!   `[text](path)`, paths under the top-level folders (`docs/…`,
//!   `scripts/…`, `lc-core/…`, …) and `*.md` file names;
//! - cites `docs/references.md, <entry>` where `<entry>` is not one of that
//!   page's headings;
//! - cites a file that was never part of the repository (the project's
//!   planning notes and reference list) or one of their research tags.
//!
//! Run alone: `cargo test --test citations`.

use std::collections::BTreeSet;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;

/// Top-level folders whose paths are checked wherever they are mentioned.
/// (`src/` is left out: every crate has one, and tree listings name it
/// relative to a crate.)
const ROOTS: [&str; 8] = [
    "docs/",
    "scripts/",
    "examples/",
    "benches/",
    "tests/",
    "lc-core/",
    "lc-host/",
    ".ci/",
];

/// Extensions read as text.
const TEXT: [&str; 11] = [
    "rs", "md", "toml", "sh", "py", "txt", "yml", "yaml", "csv", "json", "run",
];

/// Names that must not appear: files that are not in the repository and
/// the tags of a reference list that is not either. Built from pieces so
/// that this file does not trip its own check.
fn forbidden() -> Vec<String> {
    let files = ["REFERENCES", "DESIGN"];
    let mut out = Vec::new();
    for f in files {
        out.push(format!("{f}.md"));
        out.push(format!("{f} §"));
    }
    for tag in ["CONFIRMED", "COMPUTED", "FROM MEMORY"] {
        out.push(format!("[{tag}"));
    }
    out
}

fn repo_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn tracked_files(root: &Path) -> Vec<PathBuf> {
    let git = Command::new("git")
        .arg("ls-files")
        .arg("-z")
        .current_dir(root)
        .output();
    if let Ok(out) = git {
        if out.status.success() && !out.stdout.is_empty() {
            return out
                .stdout
                .split(|b| *b == 0)
                .filter(|s| !s.is_empty())
                .map(|s| PathBuf::from(String::from_utf8_lossy(s).into_owned()))
                .filter(|p| root.join(p).is_file())
                .collect();
        }
    }
    let mut files = Vec::new();
    walk(root, root, &mut files);
    files
}

fn walk(root: &Path, dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for e in entries.flatten() {
        let p = e.path();
        let name = e.file_name().to_string_lossy().into_owned();
        if name == "target" || name == ".git" {
            continue;
        }
        if p.is_dir() {
            walk(root, &p, out);
        } else if let Ok(rel) = p.strip_prefix(root) {
            out.push(rel.to_path_buf());
        }
    }
}

fn is_text(p: &Path) -> bool {
    let name = p.file_name().map(|n| n.to_string_lossy().into_owned());
    if name.as_deref() == Some("Cargo.lock") {
        return false;
    }
    p.extension()
        .map(|e| TEXT.contains(&e.to_string_lossy().as_ref()))
        .unwrap_or(false)
}

/// Strips a comment leader (`///`, `//!`, `//`, `#`, `*`) and blanks.
fn strip_leader(line: &str) -> &str {
    let t = line.trim_start();
    let t = t
        .strip_prefix("///")
        .or_else(|| t.strip_prefix("//!"))
        .or_else(|| t.strip_prefix("//"))
        .or_else(|| t.strip_prefix('#'))
        .or_else(|| t.strip_prefix('*'))
        .unwrap_or(t);
    t.trim_start()
}

/// The `##`/`###` headings of docs/references.md: the entries one can cite.
fn reference_entries(root: &Path) -> Vec<String> {
    let text =
        fs::read_to_string(root.join("docs/references.md")).expect("docs/references.md is missing");
    text.lines()
        .filter_map(|l| l.strip_prefix("### ").or_else(|| l.strip_prefix("## ")))
        .map(|h| h.trim().to_string())
        .collect()
}

/// Characters a path mention is made of.
fn path_char(c: char) -> bool {
    c.is_ascii_alphanumeric() || matches!(c, '_' | '-' | '.' | '/')
}

/// Trims what follows a path in prose: a full stop, a colon, a slash.
fn trim_path(p: &str) -> &str {
    p.trim_end_matches(['.', ',', ':', ';'])
}

/// Whether `mention` names something that exists, relative to the
/// repository root or to the citing file's folder.
fn exists(root: &Path, file: &Path, mention: &str) -> bool {
    let dir = file.parent().unwrap_or(Path::new(""));
    root.join(mention).exists() || root.join(dir).join(mention).exists()
}

#[derive(Default)]
struct Findings(Vec<String>);

impl Findings {
    fn add(&mut self, file: &Path, line: usize, what: String) {
        self.0
            .push(format!("{}:{}: {what}", file.display(), line + 1));
    }
}

fn check_file(
    root: &Path,
    file: &Path,
    text: &str,
    entries: &[String],
    names: &BTreeSet<String>,
    findings: &mut Findings,
) {
    let forbidden = forbidden();
    let lines: Vec<&str> = text.lines().collect();
    let is_md = file.extension().is_some_and(|e| e == "md");
    for (i, line) in lines.iter().enumerate() {
        for f in &forbidden {
            if line.contains(f.as_str()) {
                findings.add(
                    file,
                    i,
                    format!("cites `{f}`, which is not in the repository; cite docs/references.md"),
                );
            }
        }

        // Markdown links [text](target).
        if is_md {
            let mut rest = *line;
            while let Some(at) = rest.find("](") {
                rest = &rest[at + 2..];
                let Some(end) = rest.find(')') else { break };
                let target = rest[..end].split('#').next().unwrap_or("").trim();
                let external = target.contains("://") || target.starts_with("mailto:");
                if !target.is_empty() && !external && !exists(root, file, target) {
                    findings.add(
                        file,
                        i,
                        format!("links to `{target}`, which does not exist"),
                    );
                }
            }
        }

        // Paths under the top-level folders, and *.md names.
        let bytes: Vec<(usize, char)> = line.char_indices().collect();
        let mut k = 0;
        while k < bytes.len() {
            let (start, c) = bytes[k];
            let prev_ok = k == 0 || !path_char(bytes[k - 1].1);
            if !(prev_ok && path_char(c)) {
                k += 1;
                continue;
            }
            let mut j = k;
            while j < bytes.len() && path_char(bytes[j].1) {
                j += 1;
            }
            let end = bytes.get(j).map(|b| b.0).unwrap_or(line.len());
            let word = trim_path(&line[start..end]);
            // A glob, a placeholder or a path built in code (`$dir/x.md`,
            // `{dir}/x.md`) is not a mention.
            let next = line[end..].chars().next();
            let prev = line[..start].chars().next_back();
            let built = matches!(next, Some('*' | '{' | '<' | '$'))
                || matches!(prev, Some('$' | '}' | '{'));
            if !built && !word.is_empty() {
                if ROOTS.iter().any(|r| word.starts_with(r)) {
                    if !exists(root, file, word) {
                        findings.add(file, i, format!("names `{word}`, which does not exist"));
                    }
                } else if word.ends_with(".md") && !forbidden.iter().any(|f| f == word) {
                    let base = word.rsplit('/').next().unwrap_or(word);
                    let found = if word.contains('/') {
                        exists(root, file, word)
                    } else {
                        names.contains(base)
                    };
                    if !found {
                        findings.add(
                            file,
                            i,
                            format!("names `{word}`, which is not in the repository"),
                        );
                    }
                }
            }
            k = j.max(k + 1);
        }

        // docs/references.md, <entry>
        let key = "docs/references.md, ";
        let mut rest = *line;
        while let Some(at) = rest.find(key) {
            rest = &rest[at + key.len()..];
            // The entry may wrap onto the next line.
            let mut cited = rest.trim().to_string();
            if let Some(next) = lines.get(i + 1) {
                cited = format!("{cited} {}", strip_leader(next)).trim().to_string();
            }
            // `<entry>` is how the page itself describes the form.
            let template = cited.starts_with('<');
            if !template && !entries.iter().any(|e| cited.starts_with(e.as_str())) {
                findings.add(
                    file,
                    i,
                    format!(
                        "cites docs/references.md entry `{cited}`, which is not a heading there"
                    ),
                );
            }
        }
    }
}

#[test]
fn every_citation_resolves_inside_the_repository() {
    let root = repo_root();
    let files = tracked_files(&root);
    assert!(
        files.iter().any(|f| f == Path::new("docs/references.md")),
        "no docs/references.md among {} files",
        files.len()
    );
    let entries = reference_entries(&root);
    assert!(
        entries.len() > 20,
        "docs/references.md has {} entries",
        entries.len()
    );
    let names: BTreeSet<String> = files
        .iter()
        .filter_map(|f| f.file_name().map(|n| n.to_string_lossy().into_owned()))
        .collect();
    let mut findings = Findings::default();
    let mut scanned = 0;
    for file in files.iter().filter(|f| is_text(f)) {
        if file == Path::new("tests/citations.rs") {
            continue;
        }
        let Ok(text) = fs::read_to_string(root.join(file)) else {
            continue;
        };
        scanned += 1;
        check_file(&root, file, &text, &entries, &names, &mut findings);
    }
    assert!(scanned > 50, "only {scanned} text files scanned");
    assert!(
        findings.0.is_empty(),
        "{} citation(s) point outside the repository:\n{}",
        findings.0.len(),
        findings.0.join("\n")
    );
}

/// The checker itself finds what it should: a missing file, a missing
/// entry, a foreign file and a research tag, and passes a good line.
#[test]
fn the_checker_catches_each_kind_of_bad_citation() {
    let root = repo_root();
    let entries = reference_entries(&root);
    let names: BTreeSet<String> = ["README.md".to_string()].into_iter().collect();
    let file = Path::new("lc-core/src/lib.rs");
    let cases = [
        ("// see docs/no-such-page.md", 1),
        ("// docs/references.md, No such entry 1999", 1),
        (&*format!("// {}.md §8", "DESIGN"), 1),
        (&*format!("// value [{}]", "COMPUTED"), 1),
        ("// see NOWHERE.md", 1),
        ("// docs/references.md, Mohan 1999, Table I; README.md", 0),
        ("// docs/references.md,\n// Nagaoka coefficient", 0),
        (
            "/// docs/references.md, Monotone\n/// interpolation cases.",
            0,
        ),
        ("/// docs/references.md, Monotone\n/// splines.", 1),
        ("// examples/firmware/data/*.lcim", 0),
        ("cat \"$work/cost.md\"", 0),
    ];
    for (text, expected) in cases {
        let mut f = Findings::default();
        check_file(&root, file, text, &entries, &names, &mut f);
        assert_eq!(f.0.len(), expected, "{text:?}: {:?}", f.0);
    }
}
