//! The project's references live in the repository (`docs/reference/`). This test scans the
//! sources and documents and fails when
//! - a citation `docs/reference/PAGE.md#ANCHOR` names a page or an anchor that does not exist
//!   (anchors are the `<a id="…">` tags of the page), or a link between the reference pages
//!   does;
//! - a line still cites a document kept outside the repository (the old reference notes, the
//!   design notes, the bench pipeline's README), or a bare `§` with no published source
//!   named before it.
//!
//! Why a scan and not a link checker: the citations sit in comments, which no Markdown tool
//! reads, and a renamed anchor would otherwise rot silently.

use std::collections::{BTreeMap, BTreeSet};
use std::fs;
use std::path::{Path, PathBuf};

use echobench_integration_tests::workspace_root;

/// Where the reference pages live, relative to the workspace root.
const REFERENCE_DIR: &str = "docs/reference";
/// Top-level folders scanned (besides the README, DEVELOPERS.md and the workspace manifest).
const SCANNED_DIRS: &[&str] = &[
    "crates",
    "tests",
    "benches",
    "examples",
    "fuzz",
    "docs",
    "scenarios",
];
/// File kinds that may hold a citation.
const SCANNED_EXTENSIONS: &[&str] = &["rs", "md", "py", "c", "h", "yaml", "yml", "toml", "sh"];
/// Folders never scanned (build output, version control).
const SKIPPED_DIRS: &[&str] = &["target", ".git"];
/// Names of documents kept outside the repository. Matched as whole names (so
/// `radar-physics.md` is not `physics.md`).
const OUTSIDE_DOCUMENTS: &[&str] = &[
    "physics.md",
    "detection.md",
    "DESIGN.md",
    "STYLE.md",
    "detection-checks.py",
];
/// Phrases that cite an outside document without naming its file (matched ignoring case).
const OUTSIDE_PHRASES: &[&str] = &[
    "shared/reference",
    "bench readme",
    "reference §",
    "reference's §",
];
/// Names of standards that may precede a `§` (besides a year or an italic title).
const STANDARD_MARKERS: &[&str] = &["RFC", "C99", "C11", "XML", "CFR", "ISO", "IEC", "IEEE"];

/// One problem found by the scan: file, 1-based line, what is wrong.
#[derive(Debug, PartialEq, Eq, PartialOrd, Ord)]
struct Finding {
    file: String,
    line: usize,
    problem: String,
}

/// The anchors of every reference page, by file name (`radar-physics.md` → {r1, r2, …});
/// other files of the folder (a script) are listed with no anchors.
fn reference_anchors(root: &Path) -> BTreeMap<String, BTreeSet<String>> {
    let mut pages = BTreeMap::new();
    let dir = root.join(REFERENCE_DIR);
    for entry in fs::read_dir(&dir).unwrap_or_else(|e| panic!("{}: {e}", dir.display())) {
        let path = entry.expect("directory entry").path();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        if path.extension().is_some_and(|e| e == "md") {
            let text = fs::read_to_string(&path).expect("reference page is UTF-8");
            pages.insert(name, anchors_of(&text));
        } else if path.is_file() {
            pages.insert(name, BTreeSet::new());
        }
    }
    pages
}

/// The ids of the `<a id="…">` tags in a page.
fn anchors_of(text: &str) -> BTreeSet<String> {
    let mut ids = BTreeSet::new();
    let mut rest = text;
    while let Some(at) = rest.find("<a id=\"") {
        rest = &rest[at + 7..];
        if let Some(end) = rest.find('"') {
            ids.insert(rest[..end].to_string());
            rest = &rest[end..];
        }
    }
    ids
}

/// Characters a page name or an anchor may contain.
fn is_name_char(c: char) -> bool {
    c.is_ascii_alphanumeric() || c == '-' || c == '_' || c == '.'
}

/// A citation `PAGE.md` or `PAGE.md#ANCHOR` starting at `text` (the part after
/// `docs/reference/` or after a Markdown link's `(`): the page name and the anchor, if any.
fn parse_target(text: &str) -> (String, Option<String>) {
    let page: String = text.chars().take_while(|&c| is_name_char(c)).collect();
    let page = page.trim_end_matches('.').to_string();
    let rest = &text[page.len()..];
    let anchor = rest.strip_prefix('#').map(|a| {
        a.chars()
            .take_while(|&c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
            .collect::<String>()
    });
    (page, anchor)
}

/// Checks one cited target against the pages; `None` when it exists. An empty page is a
/// mention of the folder itself.
fn check_target(
    pages: &BTreeMap<String, BTreeSet<String>>,
    page: &str,
    anchor: Option<&str>,
) -> Option<String> {
    if page.is_empty() {
        return None;
    }
    let Some(anchors) = pages.get(page) else {
        return Some(format!(
            "cites {REFERENCE_DIR}/{page}, which does not exist"
        ));
    };
    match anchor {
        Some(a) if !anchors.contains(a) => Some(format!(
            "cites {REFERENCE_DIR}/{page}#{a}, which has no such anchor"
        )),
        _ => None,
    }
}

/// True when `word` occurs in `line` as a whole file name (not inside a longer name).
fn cites_whole_name(line: &str, word: &str) -> bool {
    line.match_indices(word).any(|(at, _)| {
        let before = line[..at].chars().next_back();
        let after = line[at + word.len()..].chars().next();
        !before.is_some_and(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
            && !after.is_some_and(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
    })
}

/// True when `text` names a published source: a year (1500–2099), a standard, or an
/// italic title (`*…*`).
fn names_a_source(text: &str) -> bool {
    let bytes = text.as_bytes();
    let year = (0..bytes.len().saturating_sub(3)).any(|i| {
        let d = &bytes[i..i + 4];
        d.iter().all(u8::is_ascii_digit)
            && (d[0] == b'1' && d[1] >= b'5' || d[0] == b'2' && d[1] == b'0')
            && !(i > 0 && bytes[i - 1].is_ascii_digit())
            && !bytes.get(i + 4).is_some_and(u8::is_ascii_digit)
    });
    let standard = STANDARD_MARKERS.iter().any(|m| text.contains(m));
    let italic_title = text
        .split('*')
        .skip(1)
        .step_by(2)
        .zip(text.split('*').skip(2))
        .any(|(title, _)| title.chars().filter(|c| c.is_alphabetic()).count() > 3);
    year || standard || italic_title
}

/// The comment part of a line of Rust or C: from the first `//` outside a string literal
/// (empty when there is none).
fn comment_of(line: &str) -> &str {
    let bytes = line.as_bytes();
    let mut in_string = false;
    let mut i = 0;
    while i < bytes.len() {
        match bytes[i] {
            b'\\' if in_string => i += 1, // the escaped byte is skipped
            b'"' => in_string = !in_string,
            b'/' if !in_string && bytes.get(i + 1) == Some(&b'/') => return &line[i..],
            _ => {}
        }
        i += 1;
    }
    ""
}

/// The problems of one file's text. `reference_page` is true for the pages themselves,
/// which may name the old documents (their index maps them) and link to each other by
/// relative paths.
fn scan_text(
    file: &str,
    text: &str,
    pages: &BTreeMap<String, BTreeSet<String>>,
    reference_page: bool,
) -> Vec<Finding> {
    let this_page = file.rsplit('/').next().unwrap_or(file);
    let code_file = [".rs", ".c", ".h"].iter().any(|e| file.ends_with(e));
    let prefix = format!("{REFERENCE_DIR}/");
    let mut findings = Vec::new();
    let mut previous = "";
    for (index, line) in text.lines().enumerate() {
        let mut problems = Vec::new();
        for (at, _) in line.match_indices(&prefix) {
            let (page, anchor) = parse_target(&line[at + prefix.len()..]);
            problems.extend(check_target(pages, &page, anchor.as_deref()));
        }
        if reference_page {
            // Relative links between the pages: `](page.md#a)` and `](#a)`.
            for (at, _) in line.match_indices("](") {
                let target = &line[at + 2..];
                if target.starts_with("http") || target.starts_with("../") {
                    continue;
                }
                let (page, anchor) = match target.strip_prefix('#') {
                    Some(_) => (this_page.to_string(), parse_target(target).1),
                    None => parse_target(target),
                };
                problems.extend(check_target(pages, &page, anchor.as_deref()));
            }
        } else {
            // In code only comments are prose; a string is left to its owner (a message
            // shown to users is not a citation to rewrite here).
            let line = if code_file { comment_of(line) } else { line };
            for word in OUTSIDE_DOCUMENTS {
                if cites_whole_name(line, word) {
                    problems.push(format!("cites {word}, which is not in the repository"));
                }
            }
            let lower = line.to_lowercase();
            for phrase in OUTSIDE_PHRASES {
                if lower.contains(phrase) {
                    problems.push(format!(
                        "cites \"{phrase}\", which is not in the repository"
                    ));
                }
            }
            let bare_section = line
                .match_indices('§')
                .any(|(at, _)| !names_a_source(&line[..at]) && !names_a_source(previous));
            if bare_section && problems.is_empty() {
                problems.push("a bare § with no published source named before it".to_string());
            }
        }
        findings.extend(problems.into_iter().map(|problem| Finding {
            file: file.to_string(),
            line: index + 1,
            problem,
        }));
        previous = line;
    }
    findings
}

/// Every file under `dir` with a scanned extension, skipping build output.
fn collect_files(dir: &Path, files: &mut Vec<PathBuf>) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for entry in entries {
        let path = entry.expect("directory entry").path();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        if path.is_dir() {
            if !SKIPPED_DIRS.contains(&name.as_str()) {
                collect_files(&path, files);
            }
        } else if path
            .extension()
            .is_some_and(|e| SCANNED_EXTENSIONS.contains(&e.to_string_lossy().as_ref()))
        {
            files.push(path);
        }
    }
}

#[test]
fn citations_point_into_the_repository_and_resolve() {
    let root = workspace_root();
    let pages = reference_anchors(&root);
    assert!(
        pages.len() >= 8
            && pages
                .iter()
                .all(|(page, anchors)| !page.ends_with(".md") || !anchors.is_empty()),
        "expected the reference pages, each with anchors, under {REFERENCE_DIR}: {pages:?}"
    );
    let mut files = Vec::new();
    for top in SCANNED_DIRS {
        collect_files(&root.join(top), &mut files);
    }
    for top in ["README.md", "DEVELOPERS.md", "Cargo.toml"] {
        files.push(root.join(top));
    }
    let this_file = Path::new(file!()).file_name().unwrap().to_owned();
    let mut findings = Vec::new();
    let mut citations = 0;
    for path in &files {
        if path.file_name() == Some(this_file.as_os_str()) {
            continue; // names the patterns it looks for
        }
        let Ok(text) = fs::read_to_string(path) else {
            continue; // binary fixture
        };
        let relative = path.strip_prefix(&root).unwrap_or(path);
        let relative = relative.to_string_lossy().replace('\\', "/");
        let reference_page = relative.starts_with(REFERENCE_DIR);
        citations += text.matches("docs/reference/").count();
        findings.extend(scan_text(&relative, &text, &pages, reference_page));
    }
    findings.sort();
    assert!(
        findings.is_empty(),
        "{} problem(s):\n{}",
        findings.len(),
        findings
            .iter()
            .map(|f| format!("{}:{}: {}", f.file, f.line, f.problem))
            .collect::<Vec<_>>()
            .join("\n")
    );
    // The sources do cite the pages (a scan that found nothing would prove nothing).
    assert!(citations >= 100, "only {citations} citations found");
}

#[test]
fn every_section_heading_has_its_anchor() {
    // `## R4 Beam…` must be preceded by `<a id="r4"></a>`, so a citation by code works.
    let root = workspace_root();
    let mut missing = Vec::new();
    for (page, anchors) in reference_anchors(&root) {
        let text = fs::read_to_string(root.join(REFERENCE_DIR).join(&page)).unwrap();
        for line in text.lines() {
            let Some(title) = line.strip_prefix("## ") else {
                continue;
            };
            let code = title.split_whitespace().next().unwrap_or("");
            let is_code = code.len() >= 2
                && code.starts_with(|c: char| c.is_ascii_uppercase())
                && code[1..].chars().all(|c| c.is_ascii_digit());
            if is_code && !anchors.contains(&code.to_ascii_lowercase()) {
                missing.push(format!("{page}: {line}"));
            }
        }
    }
    assert!(
        missing.is_empty(),
        "headings without anchors:\n{}",
        missing.join("\n")
    );
}

#[test]
fn the_scan_catches_what_it_should() {
    // The checker itself, on made-up lines: each must be caught, and the good ones kept.
    let mut pages = BTreeMap::new();
    pages.insert(
        "radar-physics.md".to_string(),
        BTreeSet::from(["r1".to_string(), "r4".to_string()]),
    );
    let bad = [
        "// A = K·√σ/R² (physics.md §1.2).",
        "/// (detection.md CV7)",
        "// DESIGN.md: any block split gives the same scores.",
        "// bench README §3(c): bins 2–10.",
        "//! the recipe of reference §4.1.",
        "// §5: f_c = 1/(2πRC).",
        "// docs/reference/radar-physics.md#r9",
        "// docs/reference/missing.md#r1",
    ];
    for line in bad {
        assert_eq!(
            scan_text("x.rs", line, &pages, false).len(),
            1,
            "not caught exactly once: {line}"
        );
    }
    let good = [
        "// A = K·√σ/R² (docs/reference/radar-physics.md#r4).",
        "// docs/reference/radar-physics.md, R1 and docs/reference/radar-physics.md#r1.",
        "// (Richards 2014 §6.5.3; Coles 2001, §4.3.4 and §5.3.2)",
        "/// Standard base64 with padding (RFC 4648 §4).",
        "/// Faires, *Numerical Analysis*, §3.4).",
        "// see radar-physics.md in docs",
    ];
    for line in good {
        assert_eq!(scan_text("x.rs", line, &pages, false), vec![], "{line}");
    }
    // Strings are not comments: an assertion message is left alone, its comment is not.
    let code = "assert!(ok, \"see detection.md CV15\"); // physics.md §3";
    assert_eq!(scan_text("x.rs", code, &pages, false).len(), 1);
    assert_eq!(
        scan_text("x.rs", "let s = \"a // detection.md\";", &pages, false),
        vec![]
    );
    // A year on the line before carries over to a § that opens the next line.
    let wrapped = "// (Smith & Weissman 1994; Coles 2001,\n// §5.3.2) with the hold as the gap";
    assert_eq!(scan_text("x.rs", wrapped, &pages, false), vec![]);
    // Inside the pages, relative links are checked too.
    let page = "[R4](radar-physics.md#r4) and [here](#r1) but [gone](#r7)";
    let found = scan_text("docs/reference/radar-physics.md", page, &pages, true);
    assert_eq!(found.len(), 1, "{found:?}");
}
