//! The README as a new user reads it: every command it shows exists with the options it
//! names, the commands of its shell blocks run as written on a copy of the repository's
//! demo, and every link it makes points at a file of the repository.

use std::collections::BTreeSet;
use std::process::Command;

use clap::{CommandFactory, Parser};

use crate::support::{Folder, repo};

fn readme() -> String {
    std::fs::read_to_string(repo().join("README.md")).expect("README.md")
}

/// The lines of the README's ```sh blocks.
fn shell_lines(text: &str) -> Vec<String> {
    let mut lines = Vec::new();
    let mut inside = false;
    for line in text.lines() {
        let t = line.trim();
        if t.starts_with("```") {
            inside = !inside && t == "```sh";
            continue;
        }
        if inside && !t.is_empty() && !t.starts_with('#') {
            lines.push(t.to_string());
        }
    }
    lines
}

/// Every inline code span that starts with `tessera `.
fn inline_commands(text: &str) -> Vec<String> {
    let mut spans = Vec::new();
    let mut inside_block = false;
    for line in text.lines() {
        if line.trim().starts_with("```") {
            inside_block = !inside_block;
            continue;
        }
        if inside_block {
            continue;
        }
        for (i, part) in line.split('`').enumerate() {
            if i % 2 == 1 && part.starts_with("tessera ") {
                spans.push(part.to_string());
            }
        }
    }
    spans
}

/// The long options a (sub)command accepts, the global ones included.
fn options_of(name: &str) -> Option<BTreeSet<String>> {
    let cli = tessera::Cli::command();
    let mut names: BTreeSet<String> =
        cli.get_arguments().filter_map(|a| a.get_long()).map(|l| format!("--{l}")).collect();
    names.insert("--help".into());
    if name.is_empty() {
        return Some(names);
    }
    let sub = cli.find_subcommand(name)?;
    names.extend(sub.get_arguments().filter_map(|a| a.get_long()).map(|l| format!("--{l}")));
    Some(names)
}

#[test]
fn every_command_the_readme_names_exists_with_its_options() {
    let spans = inline_commands(&readme());
    assert!(spans.len() > 10, "the tour names the commands: {spans:?}");
    let mut wrong = Vec::new();
    for span in &spans {
        let words: Vec<&str> = span.split_whitespace().collect();
        // `tessera --help` or `tessera COMMAND --help` name no command of their own.
        let global = words[1].starts_with('-') || words[1] == "COMMAND";
        let name = if global { "" } else { words[1].trim_matches(|c: char| !c.is_ascii_alphanumeric()) };
        let Some(known) = options_of(name) else {
            wrong.push(format!("{span}: no command {name}"));
            continue;
        };
        for w in &words[1..] {
            let option = w.trim_start_matches('[').split(['=', ']', '|']).next().unwrap_or("");
            if option.starts_with("--") && !known.contains(option) {
                wrong.push(format!("{span}: {name} has no option {option}"));
            }
        }
        // A span without placeholders is a command as typed: it must parse.
        let concrete =
            !span.contains(['[', '|', '>']) && !words.iter().any(|w| w.chars().any(|c| c.is_ascii_uppercase()));
        if concrete {
            match tessera::Cli::try_parse_from(&words) {
                Err(e) if e.kind() != clap::error::ErrorKind::DisplayHelp => wrong.push(format!("{span}: {e}")),
                _ => {}
            }
        }
    }
    assert!(wrong.is_empty(), "the README names what the binary does not accept:\n{}", wrong.join("\n"));
}

#[test]
fn the_readme_shell_commands_run_as_written() {
    let lines = shell_lines(&readme());
    assert!(lines.iter().any(|l| l == "tessera close"), "the main command is shown: {lines:?}");
    let demo = Folder::demo();
    for line in &lines {
        let words: Vec<&str> = line.split_whitespace().collect();
        match words.as_slice() {
            ["tessera", args @ ..] => {
                let out = Command::new(env!("CARGO_BIN_EXE_tessera"))
                    .current_dir(demo.path())
                    .args(args)
                    .output()
                    .expect("run tessera");
                assert_eq!(
                    out.status.code(),
                    Some(0),
                    "`{line}` on the demo:\n{}{}",
                    String::from_utf8_lossy(&out.stdout),
                    String::from_utf8_lossy(&out.stderr)
                );
            }
            // A release run of the benchmark takes minutes: its arguments must parse.
            ["cargo", "run", "--release", "--", args @ ..] => {
                let mut argv = vec!["tessera"];
                argv.extend_from_slice(args);
                tessera::Cli::try_parse_from(&argv).unwrap_or_else(|e| panic!("`{line}`: {e}"));
            }
            // What CI itself runs (`cargo test`) and the install step (a release build).
            ["cargo", "install", "--path", "."] | ["cargo", "test"] => {}
            _ => panic!("a shell line the README test does not know how to check: `{line}`"),
        }
    }
    let written = demo.path().join("out");
    assert!(written.is_dir(), "`tessera close` writes under out/ in the data folder");
}

#[test]
fn every_link_in_the_readme_and_docs_points_at_a_file() {
    let mut dead = Vec::new();
    let mut pages = vec![repo().join("README.md"), repo().join("DEVELOPERS.md")];
    for e in std::fs::read_dir(repo().join("docs")).expect("docs") {
        let p = e.expect("entry").path();
        if p.extension().is_some_and(|x| x == "md") {
            pages.push(p);
        }
    }
    for page in pages {
        let text = std::fs::read_to_string(&page).expect("page");
        for part in text.split("](").skip(1) {
            let target = part.split(')').next().unwrap_or("");
            let path = target.split('#').next().unwrap_or("");
            if path.is_empty() || path.contains("://") || path.starts_with("mailto:") {
                continue;
            }
            let base = page.parent().expect("folder");
            if !base.join(path).exists() {
                dead.push(format!("{}: {target}", page.display()));
            }
        }
    }
    assert!(dead.is_empty(), "dead links:\n{}", dead.join("\n"));
}
