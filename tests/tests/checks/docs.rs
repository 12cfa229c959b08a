//! The documentation agrees with the program: the README's annotated site file is the demo's site
//! file, every option `--help` shows is documented in README.md or docs/*.md, and every option the
//! docs show exists (for the subcommand they show it with). The documented commands themselves are
//! run, twice, by `.ci/docs-commands`.

use std::collections::{BTreeMap, BTreeSet};
use std::fs;
use std::path::{Path, PathBuf};

use clap::CommandFactory;
use isodisc_runner::cli::Cli;

fn repo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

/// README.md and docs/*.md, by file name, in name order after the README.
fn user_docs() -> Vec<(String, String)> {
    let mut docs = vec![(
        "README.md".to_string(),
        fs::read_to_string(repo().join("README.md")).unwrap(),
    )];
    let mut names: Vec<PathBuf> = fs::read_dir(repo().join("docs"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "md"))
        .collect();
    names.sort();
    for p in names {
        let name = format!("docs/{}", p.file_name().unwrap().to_string_lossy());
        docs.push((name, fs::read_to_string(&p).unwrap()));
    }
    docs
}

/// The line range (0-based, exclusive of the fences) of the first ```toml block after `marker`.
fn toml_block_after(text: &str, marker: &str) -> Option<(usize, usize)> {
    let lines: Vec<&str> = text.lines().collect();
    let at = lines.iter().position(|l| l.contains(marker))?;
    let open = at + lines[at..].iter().position(|l| l.trim() == "```toml")?;
    let close = open + 1 + lines[open + 1..].iter().position(|l| l.trim() == "```")?;
    Some((open + 1, close))
}

/// The README says "this is `forcing-demo/site.toml`" above its annotated site file: it must be
/// that file, byte for byte, so the README's example gives the demo's results (common practice:
/// one source for an example). `ISODISC_UPDATE_DOCS=1` rewrites the README's block from the file.
#[test]
fn readme_site_file_is_the_demo_site_file() {
    const MARKER: &str = "(this is `forcing-demo/site.toml`)";
    let readme_path = repo().join("README.md");
    let readme = fs::read_to_string(&readme_path).unwrap();
    let site = fs::read_to_string(repo().join("forcing-demo/site.toml")).unwrap();
    let (from, to) = toml_block_after(&readme, MARKER)
        .unwrap_or_else(|| panic!("README.md: no ```toml block after {MARKER}"));
    let lines: Vec<&str> = readme.lines().collect();
    let block = lines[from..to].join("\n") + "\n";
    if block == site {
        return;
    }
    if std::env::var_os("ISODISC_UPDATE_DOCS").is_some() {
        let mut new = lines[..from].join("\n") + "\n" + &site + &lines[to..].join("\n");
        if readme.ends_with('\n') {
            new.push('\n');
        }
        fs::write(&readme_path, new).unwrap();
        return;
    }
    let first = block
        .lines()
        .zip(site.lines())
        .position(|(a, b)| a != b)
        .unwrap_or(block.lines().count().min(site.lines().count()));
    panic!(
        "README.md's site file (line {}) differs from forcing-demo/site.toml at its line {}:\n  \
         README: {:?}\n  file:   {:?}\nrun `ISODISC_UPDATE_DOCS=1 cargo test -p isodisc-checks \
         docs::readme` to copy the file into the README",
        from + 1 + first,
        first + 1,
        block.lines().nth(first),
        site.lines().nth(first)
    );
}

/// Every subcommand's long options, from clap's command tree (what `--help` prints).
fn options_by_subcommand() -> BTreeMap<String, BTreeSet<String>> {
    let mut out = BTreeMap::new();
    for sub in Cli::command().get_subcommands() {
        let names = sub
            .get_arguments()
            .filter(|a| !a.is_hide_set())
            .filter_map(|a| a.get_long())
            .filter(|l| *l != "help" && *l != "version")
            .map(|l| format!("--{l}"))
            .collect();
        out.insert(sub.get_name().to_string(), names);
    }
    out
}

/// The `--options` in `text` (letters, digits and dashes after two dashes).
fn options_in(text: &str) -> Vec<String> {
    let mut out = Vec::new();
    let b = text.as_bytes();
    let mut i = 0;
    while i + 2 < b.len() {
        let starts = b[i] == b'-'
            && b[i + 1] == b'-'
            && b[i + 2].is_ascii_lowercase()
            && (i == 0 || !(b[i - 1].is_ascii_alphanumeric() || b[i - 1] == b'-'));
        if starts {
            let end = (i + 2..b.len())
                .find(|&j| !(b[j].is_ascii_alphanumeric() || b[j] == b'-'))
                .unwrap_or(b.len());
            out.push(text[i..end].trim_end_matches('-').to_string());
            i = end;
        } else {
            i += 1;
        }
    }
    out
}

/// Where the docs show options: (file, line, subcommand or None for "some subcommand", option).
/// Command lines are those that start with `isodisc SUB` (with their `\` continuation lines);
/// elsewhere only inline code spans that start with `--` count, so cargo's and Slurm's options in
/// prose are not taken for isodisc's.
fn documented_options() -> Vec<(String, usize, Option<String>, String)> {
    let mut out = Vec::new();
    for (name, text) in user_docs() {
        let mut fence = false;
        let mut continued: Option<String> = None;
        for (n, line) in text.lines().enumerate() {
            let trimmed = line.trim_start();
            if trimmed.starts_with("```") {
                fence = !fence;
                continued = None;
                continue;
            }
            let sub = continued.take().or_else(|| {
                trimmed
                    .strip_prefix("isodisc ")
                    .and_then(|r| r.split_whitespace().next())
                    .filter(|s| !s.starts_with('-'))
                    .map(str::to_string)
            });
            if let Some(sub) = sub {
                let code = line.split(" #").next().unwrap_or(line);
                for o in options_in(code) {
                    out.push((name.clone(), n + 1, Some(sub.clone()), o));
                }
                if code.trim_end().ends_with('\\') {
                    continued = Some(sub);
                }
                continue;
            }
            if fence {
                continue;
            }
            for (k, span) in line.split('`').enumerate() {
                if k % 2 == 1 && span.starts_with("--") {
                    for o in options_in(span) {
                        out.push((name.clone(), n + 1, None, o));
                    }
                }
            }
        }
    }
    out
}

/// Options of other programs that the docs name in inline code.
const FOREIGN: [(&str, &str); 1] = [("--dependency", "Slurm's sbatch, in the cluster section")];

/// The subcommands a heading names in code spans (`isodisc keeling`, `compare`, …).
fn subcommands_in_heading(heading: &str, subs: &BTreeSet<String>) -> BTreeSet<String> {
    heading
        .split('`')
        .skip(1)
        .step_by(2)
        .filter_map(|span| {
            let span = span.strip_prefix("isodisc ").unwrap_or(span);
            span.split_whitespace().next().map(str::to_string)
        })
        .filter(|s| subs.contains(s))
        .collect()
}

/// Every option `--help` shows for a subcommand appears in README.md or docs/*.md where that
/// subcommand is discussed: on an `isodisc SUB` command line, or in a section whose heading (or a
/// parent heading) names SUB; a section whose headings name no subcommand counts for all (common
/// practice: an option nobody can find is as good as none).
#[test]
fn every_option_in_help_is_documented() {
    let options = options_by_subcommand();
    let subs: BTreeSet<String> = options.keys().cloned().collect();
    let mut mentioned: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    for (_, _, sub, o) in documented_options() {
        if let Some(s) = sub {
            mentioned.entry(s).or_default().insert(o);
        }
    }
    for (_, text) in user_docs() {
        let mut headings: Vec<(usize, String)> = Vec::new();
        let mut fence = false;
        for line in text.lines() {
            if line.trim_start().starts_with("```") {
                fence = !fence;
            }
            if !fence && line.starts_with('#') {
                let level = line.chars().take_while(|&c| c == '#').count();
                headings.retain(|h| h.0 < level);
                headings.push((level, line.to_string()));
                continue;
            }
            let mut scope: BTreeSet<String> = headings
                .iter()
                .flat_map(|h| subcommands_in_heading(&h.1, &subs))
                .collect();
            if scope.is_empty() {
                scope = subs.clone();
            }
            for o in options_in(line) {
                for s in &scope {
                    mentioned.entry(s.clone()).or_default().insert(o.clone());
                }
            }
        }
    }
    let mut missing = Vec::new();
    for (sub, set) in &options {
        for o in set {
            if !mentioned.get(sub).is_some_and(|m| m.contains(o)) {
                missing.push(format!("isodisc {sub} {o}"));
            }
        }
    }
    assert!(
        missing.is_empty(),
        "options in --help that README.md and docs/*.md do not mention where the subcommand is \
         discussed: {missing:?}"
    );
}

/// Every option the docs show exists: on a command line for that subcommand, in inline code for
/// some subcommand (common practice: docs that offer an option the program refuses are wrong).
#[test]
fn every_documented_option_exists() {
    let options = options_by_subcommand();
    let any: BTreeSet<&String> = options.values().flatten().collect();
    let found = documented_options();
    assert!(
        found.len() > 50,
        "only {} documented options found: is the scan broken?",
        found.len()
    );
    let mut wrong = Vec::new();
    for (file, line, sub, o) in found {
        let ok = match &sub {
            Some(s) => options.get(s).is_some_and(|set| set.contains(&o)),
            None => any.contains(&o) || FOREIGN.iter().any(|f| f.0 == o),
        };
        if !ok {
            let on = sub.map_or(String::new(), |s| format!(" of `isodisc {s}`"));
            wrong.push(format!("{file}:{line}: {o}{on}"));
        }
    }
    assert!(
        wrong.is_empty(),
        "documented options that do not exist: {wrong:#?}"
    );
}

/// The scanner itself: options are found in command lines and inline code, not in words with
/// dashes or in other programs' prose.
#[test]
fn option_scanner_finds_options() {
    assert_eq!(
        options_in("isodisc run A --out B --from 2025-01-01 x--y -- --t-leaf=3"),
        ["--out", "--from", "--t-leaf"]
    );
    assert!(options_in("a – b —c").is_empty());
}
