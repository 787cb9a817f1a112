//! The `twinstep` command. Parsing (clap) is kept apart from doing (the `twinstep_cli` library); every error
//! reaches one printer in `main`. Exit codes (`docs/cli.md`): 0 success, 1 a gate failed, 2 usage or input error,
//! 3 the audited program or its build failed.

use clap::{Args, Parser, Subcommand};
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use twinstep_cli::failure::{Exit, Failure};
use twinstep_cli::report::Format;
use twinstep_cli::run::{Harness, RunRequest};
use twinstep_cli::trace::Tolerance;

#[derive(Parser)]
#[command(name = "twinstep", version, about = "Audit how far floating-point rounding moves a stencil solver's fields")]
#[command(after_help = "twinstep judges rounding error only, not discretization or modelling error. Results that \
feed safety-relevant engineering decisions go through the verification and validation practice and codes that apply \
locally, and licensed review.\n\
Exit codes: 0 success, 1 a gate failed, 2 usage or input error, 3 the audited program or its build failed.")]
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
    /// Render a trace as a report: terminal text, Markdown, JSON, CSV, or a self-contained HTML page with plots.
    #[command(after_help = "A trace without a closing summary (a killed run) still renders, with an \
\"incomplete run\" notice.\nExit codes: 0 written, 2 unreadable or invalid trace, or unwritable output.")]
    Report {
        /// The trace file (JSON Lines, see docs/trace.md).
        trace: PathBuf,
        /// Output format.
        #[arg(long, short, value_enum, default_value = "text")]
        format: Format,
        /// Write to this file instead of stdout.
        #[arg(long, short)]
        output: Option<PathBuf>,
    },
    /// Exit 0 when every field stays within tolerance for the whole run, 1 when one does not.
    #[command(after_help = "Without --atol/--rtol/--ulps the tolerance recorded in the trace decides.\n\
--atol alone is absolute, --rtol alone relative, both together mixed (err <= atol + rtol*|u|).\n\
An incomplete run, a NaN or an infinity fails the gate.\n\
A pass says the rounding error stays within tolerance, nothing about discretization or modelling error; results \
that feed safety-relevant engineering decisions go through the verification and validation practice and codes \
that apply locally, and licensed review.\n\
Exit codes: 0 within tolerance, 1 a field crosses it (the first crossing is printed), 2 usage or input error.")]
    Gate {
        /// The trace file.
        trace: PathBuf,
        #[command(flatten)]
        tolerance: ToleranceArgs,
        /// Judge this lens (repeat for several) [default: the lenses without a guarantee, as the verdict judges;
        /// all lenses when every lens has one].
        #[arg(long = "lens", value_name = "LENS")]
        lenses: Vec<String>,
    },
    /// Run the built-in kiln-wall scenario through the audit driver and print its report.
    #[command(after_help = "The kiln wall: conduction through a 48-cell wall at about 1300 K during a slow firing \
ramp, two fields (T in kelvin, and rise = T - 1300 K, the same physics as an offset), lenses bound and shadow, \
absolute rounding budget 1 nK, and a precision sweep (f64, f32, bf16, f16, and the least precision between them).\n\
Exit codes: 0 the report was written, 2 unwritable output, 3 the audit failed.")]
    Demo {
        /// Also write the HTML report to this file.
        #[arg(long, value_name = "FILE")]
        html: Option<PathBuf>,
        /// Steps to run.
        #[arg(long, value_name = "N", default_value_t = twinstep_cli::demo::DEFAULT_STEPS)]
        steps: u64,
        /// Where the trace goes [default: twinstep-demo.jsonl in the system's temporary directory].
        #[arg(long, value_name = "FILE")]
        trace: Option<PathBuf>,
    },
    /// Add twinstep to your crate and write an audit harness for an annotated kernel.
    #[command(
        after_help = "With --kernel src/solver.rs::step (a function, Type::method of an annotated impl block, or \
module::function of an annotated module; the file relative to the crate), the harness is written to \
examples/twinstep_<kernel>.rs from the kernel's signature: fill in the places marked todo! with your run's initial \
data and parameters, then run the command printed.\n\
The dependency goes to [dependencies] (the attribute is on your own code), with your formatting and comments kept; \
nothing is written unless every check passes.\n\
Exit codes: 0 done, 2 usage or input error (no such kernel, a signature init cannot take, the harness exists)."
    )]
    Init {
        /// The annotated kernel: FILE::ITEM, e.g. src/solver.rs::step.
        #[arg(long, value_name = "FILE::ITEM")]
        kernel: Option<String>,
        /// The Cargo.toml of your crate [default: ./Cargo.toml].
        #[arg(long, value_name = "PATH")]
        manifest_path: Option<PathBuf>,
        /// Depend on a local checkout of twinstep instead of the registry's version.
        #[arg(long, value_name = "DIR")]
        twinstep_path: Option<PathBuf>,
        /// Replace the harness file if it exists.
        #[arg(long)]
        force: bool,
    },
    /// Print the precision sweep a trace records (every format's run, the least precision), or run the kiln wall's.
    #[command(after_help = "A sweep's main trace holds one format_run record per format and a sweep record after \
its summary (twinstep::sweep::Sweep writes them; docs/trace.md).\n\
Exit codes: 0 the summary was written, 2 no trace given, unreadable, or without a sweep, 3 the demo sweep failed.")]
    Sweep {
        /// The sweep's main trace.
        #[arg(required_unless_present = "demo")]
        trace: Option<PathBuf>,
        /// Run the sweep of the built-in kiln wall first (its trace: --trace-out, or the temporary directory).
        #[arg(long, conflicts_with = "trace")]
        demo: bool,
        /// Steps the demo sweep runs.
        #[arg(long, value_name = "N", default_value_t = twinstep_cli::demo::DEFAULT_STEPS, requires = "demo")]
        steps: u64,
        /// Where the demo sweep's main trace goes.
        #[arg(long, value_name = "FILE", requires = "demo")]
        trace_out: Option<PathBuf>,
    },
    /// Build and run your audit harness through cargo, then print its report.
    #[command(after_help = "The harness (an example, binary or test of your crate) must write its trace to the path \
in the TWINSTEP_TRACE environment variable, which `Audit::new` does unless told otherwise (`twinstep init` writes \
such a harness).\n\
It is built in its own target directory (default <workspace>/target/twinstep) with -C target-cpu=native appended to \
CARGO_ENCODED_RUSTFLAGS (for speed only: no flag is needed), so your own build settings and artefacts stay untouched.\n\
A progress bar is drawn on stderr when it is a terminal.\n\
Exit codes: 0 the harness ran and its report was written, 2 usage or input error, 3 the build or the harness failed \
(its partial trace, if any, is still reported).")]
    Run {
        #[command(flatten)]
        harness: HarnessArgs,
        /// The Cargo.toml of the crate that holds the harness.
        #[arg(long, value_name = "PATH")]
        manifest_path: Option<PathBuf>,
        /// Cargo features to enable (repeat, or separate with commas).
        #[arg(long, value_name = "FEATURES", value_delimiter = ',')]
        features: Vec<String>,
        /// The cargo profile to build the harness with.
        #[arg(long, value_name = "PROFILE", default_value = "release")]
        profile: String,
        // The next two doc comments are clap's `--help` text (pinned by tests/snapshots), where backticks would
        // show: the `<…>` are placeholders in clap's `[default: …]` style, not HTML tags.
        /// Cargo target directory for the audit build [default: <workspace>/target/twinstep].
        #[allow(rustdoc::invalid_html_tags)]
        #[arg(long, value_name = "DIR")]
        target_dir: Option<PathBuf>,
        /// Where the harness writes its trace [default: <target dir>/traces/<name>.jsonl].
        #[allow(rustdoc::invalid_html_tags)]
        #[arg(long, value_name = "FILE")]
        trace: Option<PathBuf>,
        /// Format of the report printed at the end.
        #[arg(long, short, value_enum, default_value = "text")]
        format: Format,
        /// Write the report to this file instead of stdout.
        #[arg(long, short)]
        output: Option<PathBuf>,
        /// Arguments for the harness, after `--`.
        #[arg(last = true, value_name = "ARGS")]
        args: Vec<String>,
    },
}

/// Which target of the user's crate is the audit harness: exactly one of the three.
#[derive(Args)]
#[group(required = true, multiple = false)]
struct HarnessArgs {
    /// The harness is this example (`cargo run --example NAME`).
    #[arg(long, value_name = "NAME")]
    example: Option<String>,
    /// The harness is this binary (`cargo run --bin NAME`).
    #[arg(long, value_name = "NAME")]
    bin: Option<String>,
    /// The harness is this integration test (`cargo test --test NAME`).
    #[arg(long, value_name = "NAME")]
    test: Option<String>,
}

impl HarnessArgs {
    fn resolve(&self) -> Harness {
        match (&self.example, &self.bin, &self.test) {
            (Some(name), _, _) => Harness::Example(name.clone()),
            (None, Some(name), _) => Harness::Bin(name.clone()),
            (None, None, Some(name)) => Harness::Test(name.clone()),
            // clap's group makes one of the three required.
            (None, None, None) => Harness::Example(String::new()),
        }
    }
}

/// Tolerance options of `gate`, as typed.
#[derive(Args)]
struct ToleranceArgs {
    /// Absolute tolerance: err <= ATOL (with --rtol: err <= ATOL + RTOL*|u|).
    #[arg(long, value_name = "ATOL", conflicts_with = "ulps")]
    atol: Option<f64>,
    /// Relative tolerance: err <= RTOL*|u|.
    #[arg(long, value_name = "RTOL", conflicts_with = "ulps")]
    rtol: Option<f64>,
    /// Tolerance in units in the last place: err <= ULPS*ulp(u).
    #[arg(long, value_name = "ULPS")]
    ulps: Option<f64>,
}

impl ToleranceArgs {
    /// The tolerance the options name; `None` to use the trace's own.
    fn resolve(&self) -> Result<Option<Tolerance>, Failure> {
        let check = |name: &str, v: f64| {
            if v.is_finite() && v >= 0.0 {
                Ok(v)
            } else {
                Err(Failure::input(format!("--{name} must be a finite number >= 0, got {v}")))
            }
        };
        Ok(match (self.atol, self.rtol, self.ulps) {
            (_, _, Some(ulps)) => Some(Tolerance::Ulps { ulps: check("ulps", ulps)? }),
            (Some(atol), Some(rtol), None) => {
                Some(Tolerance::Mixed { atol: check("atol", atol)?, rtol: check("rtol", rtol)? })
            }
            (Some(atol), None, None) => Some(Tolerance::Absolute { atol: check("atol", atol)? }),
            (None, Some(rtol), None) => Some(Tolerance::Relative { rtol: check("rtol", rtol)? }),
            (None, None, None) => None,
        })
    }
}

fn expand(file: &Path, item: Option<&str>) -> Result<(), Failure> {
    let source =
        std::fs::read_to_string(file).map_err(|e| Failure::input(format!("{}: cannot read: {e}", file.display())))?;
    match twinstep_engine::expand_source(&source, item) {
        Ok(text) => {
            print!("{text}");
            Ok(())
        }
        Err(errors) => {
            let lines: Vec<String> = errors.iter().map(|e| format!("{}:{e}", file.display())).collect();
            Err(Failure::input(lines.join("\n")))
        }
    }
}

/// Colour only when the text goes to a terminal and the user has not asked for none (`NO_COLOR`, no-color.org).
fn colour_wanted(output: Option<&Path>) -> bool {
    output.is_none() && std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty())
}

fn report(trace: &Path, format: Format, output: Option<&Path>) -> Result<(), Failure> {
    report_to(&twinstep_cli::input::read_trace(trace)?, format, output)
}

fn gate(trace_path: &Path, tolerance: &ToleranceArgs, lenses: &[String]) -> Result<(), Failure> {
    let tolerance = tolerance.resolve()?;
    let trace = twinstep_cli::input::read_trace(trace_path)?;
    if let Some(unknown) = lenses.iter().find(|l| !trace.header.lenses.contains(l)) {
        return Err(Failure::input(format!(
            "{}: has no lens \"{unknown}\" (it has: {})",
            trace_path.display(),
            trace.header.lenses.join(", ")
        )));
    }
    let outcome = twinstep_cli::gate::gate(&trace, tolerance, lenses);
    if outcome.passed {
        println!("twinstep gate: {}", outcome.lines.join("\n"));
        Ok(())
    } else {
        Err(Failure { message: format!("gate failed: {}", outcome.lines.join("\n  ")), exit: Exit::GateFailed })
    }
}

/// Renders the trace at `path` in `format` to `output` (stdout when `None`).
fn report_to(trace: &twinstep_cli::trace::Trace, format: Format, output: Option<&Path>) -> Result<(), Failure> {
    let text = twinstep_cli::report::render(trace, format, colour_wanted(output));
    twinstep_cli::input::write_output(output, &text)
}

fn run(request: RunRequest, format: Format, output: Option<&Path>) -> Result<(), Failure> {
    let plan = request.resolve()?;
    let (trace_path, harness_failure) = twinstep_cli::run::run(&plan, std::io::stderr().is_terminal())?;
    let trace = twinstep_cli::input::read_trace(&trace_path)?;
    report_to(&trace, format, output)?;
    harness_failure.map_or(Ok(()), Err)
}

fn demo(html: Option<&Path>, steps: u64, trace: Option<&Path>) -> Result<(), Failure> {
    if steps == 0 {
        return Err(Failure::input("--steps must be at least 1"));
    }
    let trace_path = trace.map_or_else(|| std::env::temp_dir().join("twinstep-demo.jsonl"), Path::to_path_buf);
    twinstep_cli::demo::run_with_progress(&trace_path, steps, std::io::stderr().is_terminal())?;
    let trace = twinstep_cli::input::read_trace(&trace_path)?;
    report_to(&trace, Format::Text, None)?;
    if let Some(html) = html {
        report_to(&trace, Format::Html, Some(html))?;
        eprintln!("twinstep demo: HTML report written to {}", html.display());
    }
    eprintln!("twinstep demo: trace written to {}", trace_path.display());
    Ok(())
}

fn init(request: &twinstep_cli::init::InitRequest) -> Result<(), Failure> {
    let outcome = twinstep_cli::init::init(request)?;
    let manifest = request.manifest_path.as_deref().unwrap_or(Path::new("Cargo.toml")).display().to_string();
    if outcome.dependency_added {
        println!("twinstep init: added twinstep to [dependencies] of {manifest}");
    } else {
        println!("twinstep init: {manifest} already depends on twinstep");
    }
    if let (Some((path, _)), Some(command)) = (&outcome.harness, &outcome.command) {
        println!("twinstep init: wrote {}", path.display());
        println!("Fill in the places marked todo! with your run's initial data and parameters, then run:");
        println!("    {command}");
    }
    Ok(())
}

fn sweep(trace: Option<&Path>, demo: bool, steps: u64, trace_out: Option<&Path>) -> Result<(), Failure> {
    let path = match (demo, trace) {
        (true, _) => {
            if steps == 0 {
                return Err(Failure::input("--steps must be at least 1"));
            }
            let out =
                trace_out.map_or_else(|| std::env::temp_dir().join("twinstep-sweep-demo.jsonl"), Path::to_path_buf);
            twinstep_cli::sweep::run_demo(&out, steps)?;
            eprintln!("twinstep sweep: main trace written to {}", out.display());
            out
        }
        (false, Some(trace)) => trace.to_path_buf(),
        (false, None) => return Err(Failure::input("give a sweep's trace, or --demo")),
    };
    let text = twinstep_cli::sweep::summary(&twinstep_cli::input::read_trace(&path)?)
        .map_err(|f| Failure { message: format!("{}: {}", path.display(), f.message), ..f })?;
    twinstep_cli::input::write_output(None, &text)
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match &cli.command {
        Command::Expand { file, item } => expand(file, item.as_deref()),
        Command::Report { trace, format, output } => report(trace, *format, output.as_deref()),
        Command::Gate { trace, tolerance, lenses } => gate(trace, tolerance, lenses),
        Command::Demo { html, steps, trace } => demo(html.as_deref(), *steps, trace.as_deref()),
        Command::Init { kernel, manifest_path, twinstep_path, force } => {
            let source = match twinstep_path {
                // Cargo reads a relative path from the manifest's directory; the user typed it from theirs.
                Some(path) => match std::fs::canonicalize(path) {
                    Ok(path) => Ok(twinstep_cli::init::Source::Path(path)),
                    Err(e) => Err(Failure::input(format!(
                        "{}: cannot open: {}",
                        path.display(),
                        twinstep_cli::input::plain(&e)
                    ))),
                },
                None => Ok(twinstep_cli::init::Source::Version(env!("CARGO_PKG_VERSION").to_owned())),
            };
            source.and_then(|source| {
                init(&twinstep_cli::init::InitRequest {
                    kernel: kernel.clone(),
                    manifest_path: manifest_path.clone(),
                    source,
                    force: *force,
                })
            })
        }
        Command::Sweep { trace, demo, steps, trace_out } => {
            sweep(trace.as_deref(), *demo, *steps, trace_out.as_deref())
        }
        Command::Run { harness, manifest_path, features, profile, target_dir, trace, format, output, args } => {
            let request = RunRequest {
                harness: harness.resolve(),
                manifest_path: manifest_path.clone(),
                features: features.clone(),
                profile: profile.clone(),
                target_dir: target_dir.clone(),
                trace: trace.clone(),
                args: args.clone(),
            };
            run(request, *format, output.as_deref())
        }
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(failure) => {
            eprintln!("twinstep: {}", failure.message);
            ExitCode::from(failure.exit as u8)
        }
    }
}
