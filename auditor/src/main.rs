//! The `twinstep` command. Parsing (clap) is kept apart from doing; every error reaches one printer in `main`,
//! and the exit codes are documented in the README: 0 success, 1 a gate failed, 2 usage or input error.

use clap::{Parser, Subcommand};
use std::path::PathBuf;
use std::process::ExitCode;

#[derive(Parser)]
#[command(name = "twinstep", version, about = "Audit how far floating-point rounding moves a stencil solver's fields")]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Print the twins of the `#[twinstep::audit]` items of a Rust source file, formatted.
    Expand {
        /// The Rust source file.
        file: PathBuf,
        /// Only the item of this name (a function, a module, or an `impl` block's type).
        #[arg(long)]
        item: Option<String>,
    },
}

/// An error for the user: one line, and the exit code it maps to.
struct Failure {
    message: String,
    code: u8,
}

fn expand(file: &PathBuf, item: Option<&str>) -> Result<(), Failure> {
    let source = std::fs::read_to_string(file)
        .map_err(|e| Failure { message: format!("{}: cannot read: {e}", file.display()), code: 2 })?;
    match twinstep_engine::expand_source(&source, item) {
        Ok(text) => {
            print!("{text}");
            Ok(())
        }
        Err(errors) => {
            let lines: Vec<String> = errors.iter().map(|e| format!("{}:{e}", file.display())).collect();
            Err(Failure { message: lines.join("\n"), code: 2 })
        }
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match &cli.command {
        Command::Expand { file, item } => expand(file, item.as_deref()),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(failure) => {
            eprintln!("twinstep: {}", failure.message);
            ExitCode::from(failure.code)
        }
    }
}
