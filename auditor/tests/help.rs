//! `--help` of the command and of every subcommand is complete: each names every option of its subcommand and
//! the exit codes where the subcommand has its own. Snapshots pin the wording.

mod common;
use common::{stdout, twinstep};

fn help(args: &[&str]) -> String {
    let output = twinstep(args);
    assert_eq!(output.status.code(), Some(0), "{args:?} --help succeeds");
    stdout(&output)
}

#[test]
fn top_level_help_lists_every_subcommand() {
    let text = help(&["--help"]);
    for sub in ["expand", "report", "gate", "run", "demo", "init"] {
        assert!(text.contains(sub), "{sub} listed");
    }
    assert!(text.contains("Exit codes"));
    assert!(text.contains("rounding error only"));
    assert!(text.contains("codes that apply locally, and licensed review"), "the defer-to-local-codes caution");
    insta::assert_snapshot!("help_top", text);
}

#[test]
fn every_subcommand_documents_its_options() {
    let cases: [(&str, &[&str]); 6] = [
        ("expand", &["--item"]),
        ("report", &["--format", "--output", "text", "md", "json", "csv", "html", "incomplete run", "Exit codes"]),
        ("gate", &["--atol", "--rtol", "--ulps", "--lens", "Exit codes", "first crossing", "licensed review"]),
        (
            "run",
            &[
                "--example",
                "--bin",
                "--test",
                "--manifest-path",
                "--features",
                "--trace",
                "--format",
                "TWINSTEP_TRACE",
                "Exit codes",
            ],
        ),
        ("demo", &["--html", "--steps", "Exit codes"]),
        ("init", &["--kernel", "--manifest-path", "--twinstep-path", "--force", "todo!", "Exit codes"]),
    ];
    for (sub, words) in cases {
        let text = help(&[sub, "--help"]);
        for word in words {
            assert!(text.contains(word), "`{sub} --help` mentions {word}:\n{text}");
        }
        insta::assert_snapshot!(format!("help_{sub}"), text);
    }
}
