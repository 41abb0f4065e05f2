//! Self-tests of `ADDING-A-DETECTOR.md`: the guide must name files, names and
//! commands that exist, and following it literally must give a crate that
//! builds on its own. (The guide tells you to delete this file in your copy.)

use std::path::{Path, PathBuf};
use std::process::Command;

/// The example name the guide uses, in its three spellings.
const NEW_NAME: &str = "zero-crossings";
const NEW_TYPE: &str = "ZeroCrossings";
const NEW_PACKAGE: &str = "echobench-detector-zero-crossings";

fn template_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn workspace_root() -> PathBuf {
    template_dir().join("../../..")
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

fn guide() -> String {
    read(&template_dir().join("ADDING-A-DETECTOR.md"))
}

/// The guide's fenced code blocks as (language, body).
fn code_blocks(markdown: &str) -> Vec<(String, String)> {
    let mut blocks = Vec::new();
    let mut open: Option<(String, String)> = None;
    for line in markdown.lines() {
        if let Some(language) = line.trim_start().strip_prefix("```") {
            match open.take() {
                Some(block) => blocks.push(block),
                None => open = Some((language.trim().to_string(), String::new())),
            }
        } else if let Some((_, body)) = &mut open {
            body.push_str(line);
            body.push('\n');
        }
    }
    assert!(open.is_none(), "unclosed code block in the guide");
    blocks
}

fn blocks_of(language: &str) -> Vec<String> {
    code_blocks(&guide())
        .into_iter()
        .filter(|(l, _)| l == language)
        .map(|(_, body)| body)
        .collect()
}

/// The shell blocks that edit files (steps 1 and 2), as opposed to cargo runs.
fn editing_commands() -> Vec<String> {
    blocks_of("sh")
        .into_iter()
        .flat_map(|b| b.lines().map(str::to_string).collect::<Vec<_>>())
        .filter(|line| !line.trim().is_empty() && !line.trim_start().starts_with("cargo"))
        .collect()
}

/// What the guide's `sed` commands do, done in Rust: the expected result.
fn renamed(text: &str) -> String {
    text.replace("echobench-detector-template", NEW_PACKAGE)
        .replace("Template", NEW_TYPE)
        .replacen("\"template\"", &format!("\"{NEW_NAME}\""), 1)
}

/// Every inline `code` span of the guide.
fn code_spans(markdown: &str) -> Vec<String> {
    let mut spans = Vec::new();
    for line in markdown
        .lines()
        .filter(|l| !l.trim_start().starts_with("```"))
    {
        let parts: Vec<&str> = line.split('`').collect();
        spans.extend(parts.iter().skip(1).step_by(2).map(|s| s.to_string()));
    }
    spans
}

#[test]
fn guide_names_files_names_and_commands_that_exist() {
    let root = workspace_root();
    let text = guide();

    // Step 1 removes three files of the template: they must exist.
    for file in ["ADDING-A-DETECTOR.md", "build.rs", "tests"] {
        assert!(template_dir().join(file).exists(), "{file} is missing");
        assert!(
            editing_commands()
                .iter()
                .any(|c| c.contains(&format!("{NEW_NAME}/{file}"))),
            "step 1 does not remove {file}"
        );
    }

    // Step 2's sed targets exist exactly as written.
    let manifest = read(&template_dir().join("Cargo.toml"));
    assert!(manifest.contains("name = \"echobench-detector-template\""));
    let lib = read(&template_dir().join("src/lib.rs"));
    assert!(lib.contains("const ID: &str = \"template\";"));
    assert_eq!(
        lib.matches("\"template\"").count(),
        1,
        "the id string must be unique"
    );
    assert!(text.contains("`const ID: &str = \"template\";`"));
    assert!(lib.contains("pub struct TemplatePlugin;"));
    assert!(lib.contains("struct TemplateDetector {"));
    assert!(
        !lib.contains("echobench_detector_template"),
        "crate name in code breaks renaming"
    );
    // After the rename, the names the guide announces are the ones in the code.
    let lib_after = renamed(&lib);
    for expected in [
        format!("pub struct {NEW_TYPE}Plugin;"),
        format!("struct {NEW_TYPE}Detector {{"),
        format!("const ID: &str = \"{NEW_NAME}\";"),
    ] {
        assert!(
            lib_after.contains(&expected),
            "after renaming, no `{expected}`"
        );
    }
    assert!(!lib_after.contains("Template"));
    for announced in [
        format!("`{NEW_TYPE}Plugin`"),
        format!("`{NEW_TYPE}Detector`"),
        format!("`{NEW_PACKAGE}`"),
    ] {
        assert!(
            text.contains(&announced),
            "the guide does not name {announced}"
        );
    }
    assert!(renamed(&manifest).contains(&format!("name = \"{NEW_PACKAGE}\"")));
    // The items the guide tells you to edit exist in the template and in core.
    for item in [
        "static PARAMS",
        "const FRAME_S: RealParam",
        "FRAME_S.get(params)?",
        "fn from_params",
        "fn process",
        "fn reset",
        "fn cost",
    ] {
        assert!(lib.contains(item), "the template has no `{item}`");
    }
    for (file, item) in [
        ("detector.rs", "pub fn resolve"),
        ("param_error.rs", "pub struct ParamError"),
        ("detector.rs", "pub struct ParamSpec"),
        ("param_decl.rs", "pub struct RealParam"),
        ("param_decl.rs", "pub struct IntegerParam"),
        ("param_decl.rs", "pub struct ChoiceParam"),
        ("param_decl.rs", "pub struct FlagParam"),
    ] {
        let core = read(&root.join("crates/core/src").join(file));
        assert!(core.contains(item), "core's {file} has no `{item}`");
    }
    assert!(read(&root.join("crates/detectors/dsp/src/lib.rs")).contains("pub struct Framer"));

    // Step 3's lines have the form of the template's own lines in the root manifest.
    let root_manifest = read(&root.join("Cargo.toml"));
    let toml = blocks_of("toml");
    assert_eq!(
        toml.len(),
        2,
        "step 3 has a members line and a dependency line"
    );
    for line in &toml {
        let as_template = line.trim().replace(NEW_NAME, "template");
        assert!(
            root_manifest.lines().any(|l| l.trim() == as_template),
            "the root Cargo.toml has no line `{as_template}`"
        );
    }
    assert!(root_manifest.contains("[workspace.dependencies]"));
    assert!(root_manifest.contains("echobench-detector-dsp = { path = \"crates/detectors/dsp\" }"));

    // Step 4: the registry line names the renamed crate and plugin, in the form of the
    // registry's own lines.
    let registry_line = format!(
        "Arc::new(echobench_detector_{}::{NEW_TYPE}Plugin),",
        NEW_NAME.replace('-', "_")
    );
    assert!(blocks_of("rust").iter().any(|b| b.trim() == registry_line));
    let template_line = registry_line
        .replace(&NEW_NAME.replace('-', "_"), "energy")
        .replace(NEW_TYPE, "Energy");
    assert!(
        read(&root.join("crates/detectors/registry/src/lib.rs"))
            .lines()
            .any(|l| l.trim() == template_line),
        "the registry has no line like `{template_line}`"
    );
    assert!(
        text.contains("add one line to `crates/detectors/registry/src/lib.rs`'s `builtin()` list")
            || text.contains(
                "Add one line to `crates/detectors/registry/src/lib.rs`'s `builtin()` list"
            )
    );
    let registry = root.join("crates/detectors/registry/src/lib.rs");
    if registry.exists() {
        assert!(
            read(&registry).contains("fn builtin"),
            "the registry has no builtin()"
        );
    } else {
        // The registry crate is not in this tree yet: its path is the one the
        // project's design names; everything else here is checked.
        eprintln!("note: {} does not exist yet", registry.display());
    }

    // Every path the guide names exists (or is the copy it tells you to make).
    for span in code_spans(&text) {
        if !span.starts_with("crates/") || span.contains(NEW_NAME) {
            continue;
        }
        if span.starts_with("crates/detectors/registry") && !registry.exists() {
            continue;
        }
        let path = root.join(span.trim_end_matches('/'));
        assert!(
            path.exists(),
            "the guide names `{span}`, which does not exist"
        );
    }

    // Every cargo command names a package that exists (after the rename).
    let cli_manifest = read(&root.join("crates/cli/Cargo.toml"));
    for block in blocks_of("sh") {
        for line in block
            .lines()
            .filter(|l| l.trim_start().starts_with("cargo"))
        {
            let words: Vec<&str> = line.split_whitespace().collect();
            let package = words
                .windows(2)
                .find(|w| w[0] == "-p")
                .map(|w| w[1])
                .unwrap_or_else(|| panic!("`{line}` names no package"));
            let known =
                package == NEW_PACKAGE || cli_manifest.contains(&format!("name = \"{package}\""));
            assert!(known, "`{line}`: no package `{package}`");
        }
    }
    assert!(text.contains(&format!("cargo test -p {NEW_PACKAGE}")));
    assert!(text.contains("`echobench detectors`"));
    // Step 8's verb exists in the command-line tool and lists the registry.
    // (The verb may live in the binary or in the command line's library.)
    let cli: String = std::fs::read_dir(root.join("crates/cli/src"))
        .expect("crates/cli/src")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "rs"))
        .map(|p| read(&p))
        .collect();
    assert!(
        cli.contains("Detectors {") && cli.contains("with_external("),
        "no `detectors` verb"
    );
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("create directory");
    for entry in std::fs::read_dir(from).expect("read directory") {
        let entry = entry.expect("directory entry");
        let target = to.join(entry.file_name());
        if entry.file_type().expect("file type").is_dir() {
            copy_dir(&entry.path(), &target);
        } else {
            std::fs::copy(entry.path(), &target).expect("copy file");
        }
    }
}

fn run(command: &mut Command, what: &str) {
    let output = command.output().unwrap_or_else(|e| panic!("{what}: {e}"));
    assert!(
        output.status.success(),
        "{what} failed ({}):\n{}\n{}",
        output.status,
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    );
}

/// Follows steps 1–3 and 7 of the guide literally in a temporary workspace
/// whose dependencies point at this workspace's core and dsp, then builds and
/// tests the renamed copy offline. Slow (it compiles the dependencies), so it
/// runs only with `ECHOBENCH_TEMPLATE_BUILD=1` (see build.rs).
#[test]
#[cfg_attr(
    not(echobench_template_build),
    ignore = "copies the template to a temporary workspace and builds it: set ECHOBENCH_TEMPLATE_BUILD=1"
)]
fn template_builds_standalone_following_the_guide() {
    let root = workspace_root().canonicalize().expect("workspace root");
    let scratch =
        std::env::temp_dir().join(format!("echobench-template-build-{}", std::process::id()));
    if scratch.exists() {
        std::fs::remove_dir_all(&scratch).expect("clear old scratch");
    }
    // The repository as far as the guide needs it: the template crate.
    copy_dir(&template_dir(), &scratch.join("crates/detectors/template"));

    // Steps 1 and 2, run as written.
    for command in editing_commands() {
        run(
            Command::new("sh")
                .arg("-c")
                .arg(&command)
                .current_dir(&scratch),
            &format!("guide command `{command}`"),
        );
    }
    std::fs::remove_dir_all(scratch.join("crates/detectors/template")).expect("drop the original");
    let copy = scratch.join(format!("crates/detectors/{NEW_NAME}"));
    assert!(!copy.join("build.rs").exists() && !copy.join("tests").exists());

    // Step 3: a workspace with the guide's two lines, the real workspace's
    // settings and its dependencies made absolute (core, dsp, rand, ...).
    let toml = blocks_of("toml");
    let real = read(&root.join("Cargo.toml"));
    let mut manifest = String::new();
    let mut in_members = false;
    for line in real.lines() {
        if line.starts_with("members = [") {
            in_members = true;
            manifest.push_str("members = [\n");
            manifest.push_str(&toml[0]);
            manifest.push_str("]\n");
            continue;
        }
        if in_members {
            in_members = line.trim() != "]";
            continue;
        }
        if line.starts_with("default-members") {
            continue;
        }
        let absolute = format!("path = \"{}/crates/", root.display());
        manifest.push_str(&line.replace("path = \"crates/", &absolute));
        manifest.push('\n');
        if line.trim() == "[workspace.dependencies]" {
            manifest.push_str(&toml[1]);
        }
    }
    std::fs::write(scratch.join("Cargo.toml"), manifest).expect("write manifest");
    // The same versions as the real workspace, so nothing needs fetching.
    std::fs::copy(root.join("Cargo.lock"), scratch.join("Cargo.lock")).expect("copy lock file");

    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".to_string());
    let target = scratch.join("target");
    run(
        Command::new(&cargo)
            .args(["build", "--offline"])
            .current_dir(&scratch)
            .env("CARGO_TARGET_DIR", &target),
        "cargo build --offline",
    );
    // Step 7's commands (test, clippy, fmt of the new package), as written, offline.
    let ours = |l: &&str| l.trim_start().starts_with("cargo") && l.contains(NEW_PACKAGE);
    for block in blocks_of("sh") {
        for line in block.lines().filter(ours) {
            let command = line.replacen("cargo", &cargo, 1);
            run(
                Command::new("sh")
                    .arg("-c")
                    .arg(&command)
                    .current_dir(&scratch)
                    .env("CARGO_TARGET_DIR", &target)
                    .env("CARGO_NET_OFFLINE", "true"),
                &format!("guide command `{line}`"),
            );
        }
    }
    std::fs::remove_dir_all(&scratch).expect("clean up");
}
