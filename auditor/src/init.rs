//! `twinstep init`: sets up a user's crate for an audit — adds the `twinstep` dependency to its `Cargo.toml`
//! (keeping the user's formatting and comments) and, for a named annotated kernel, writes an audit harness
//! skeleton from the kernel's signature, which the user completes with the run's initial data and parameters.
//!
//! The kernel's signature is read with the rewrite engine's own parser (`twinstep_engine::signature`), so the
//! harness calls the twin the attribute emits. What each parameter becomes:
//!
//! | kernel parameter | in the harness |
//! |---|---|
//! | `u: &[f64]` read, `out: &mut [f64]` written | field `u` (the read slices name the fields), `Scheme::TwoLevel` |
//! | only `&mut [f64]` | the fields it updates, `Scheme::InPlace` |
//! | `before: &[f64], now: &[f64], after: &mut [f64]` (twice as many read as written) | field `now`, `Scheme::ThreeLevel` |
//! | `r: f64` | a parameter of the run, `T::from_f64(self.r)` for the twin |
//! | `n: usize` (any integer) | a parameter of the run, as it is |
//! | `&mut self` / `&self` | the solver value, behind a `Mutex` for `&mut self` (a `methods_only` block; a block twinned with its struct is refused, with the reason) |
//! | returns `f64`, no slices | a one-cell field: the first `f64` parameter is the state |
//!
//! Why `examples/twinstep_<kernel>.rs`: `twinstep run --example` builds an example of the user's crate, which
//! reaches the library's public items and stays out of the user's binaries and tests; cargo finds it without a
//! manifest entry. A crate without a library gets the kernel's file included with `#[path]`.
//!
//! Nothing is written until everything is checked: the manifest parses and names a package, the kernel is found
//! and its signature is one a harness can take, and the harness file does not exist yet (`--force` replaces it).

use crate::failure::Failure;
use crate::input::plain;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use twinstep_engine::signature::{find_kernel, Kernel, ParamKind};

/// Where the `twinstep` dependency comes from.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Source {
    /// A version requirement on the registry (the CLI's own version by default).
    Version(String),
    /// A local checkout of twinstep.
    Path(PathBuf),
}

/// What the user asked `init` to do.
#[derive(Clone, Debug)]
pub struct InitRequest {
    /// `FILE::ITEM`, the file relative to the crate's directory: `src/solver.rs::step`.
    pub kernel: Option<String>,
    /// The crate's `Cargo.toml` (default: `./Cargo.toml`).
    pub manifest_path: Option<PathBuf>,
    pub source: Source,
    /// Replace a harness file that exists.
    pub force: bool,
}

/// What `init` did.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct InitOutcome {
    /// Whether the dependency was added (false: it was there).
    pub dependency_added: bool,
    /// The harness written, and the example's name.
    pub harness: Option<(PathBuf, String)>,
    /// The command that runs the harness.
    pub command: Option<String>,
}

/// The crate `init` works on.
struct Crate {
    manifest: PathBuf,
    dir: PathBuf,
    document: toml_edit::DocumentMut,
    /// The library's name as code spells it (`my_solver`), when the crate has one.
    library: Option<String>,
}

/// Runs `init`.
pub fn init(request: &InitRequest) -> Result<InitOutcome, Failure> {
    let krate = read_crate(request.manifest_path.as_deref())?;
    let harness = match &request.kernel {
        Some(spec) => Some(plan_harness(&krate, spec, request.force)?),
        None => None,
    };
    // Everything is checked: now write, the harness first (the manifest edit is the one a user would notice).
    if let Some((path, _, text)) = &harness {
        if let Some(parent) = path.parent() {
            std::fs::create_dir_all(parent)
                .map_err(|e| Failure::input(format!("{}: cannot create: {}", parent.display(), plain(&e))))?;
        }
        std::fs::write(path, text)
            .map_err(|e| Failure::input(format!("{}: cannot write: {}", path.display(), plain(&e))))?;
    }
    let dependency_added = add_dependency(krate.document.clone(), &request.source)
        .map(|edited| {
            std::fs::write(&krate.manifest, edited)
                .map_err(|e| Failure::input(format!("{}: cannot write: {}", krate.manifest.display(), plain(&e))))
        })
        .transpose()?
        .is_some();
    let command = harness.as_ref().map(|(_, name, _)| {
        let mut command = format!("twinstep run --example {name}");
        if let Some(path) = &request.manifest_path {
            let _ = write!(command, " --manifest-path {}", path.display());
        }
        command
    });
    Ok(InitOutcome { dependency_added, harness: harness.map(|(path, name, _)| (path, name)), command })
}

/// Reads and checks the crate's manifest.
fn read_crate(manifest_path: Option<&Path>) -> Result<Crate, Failure> {
    let manifest = manifest_path.map_or_else(|| PathBuf::from("Cargo.toml"), Path::to_path_buf);
    let name = manifest.display().to_string();
    let text = std::fs::read_to_string(&manifest)
        .map_err(|e| Failure::input(format!("{name}: cannot read: {}", plain(&e))))?;
    let document: toml_edit::DocumentMut =
        text.parse().map_err(|e: toml_edit::TomlError| Failure::input(format!("{name}: not valid TOML: {e}")))?;
    let Some(package) = document.get("package").and_then(|p| p.get("name")).and_then(|n| n.as_str()) else {
        return Err(Failure::input(format!(
            "{name}: has no [package] name (a workspace manifest?): name the crate's own Cargo.toml with --manifest-path"
        )));
    };
    let dir =
        manifest.parent().filter(|p| !p.as_os_str().is_empty()).map_or_else(|| PathBuf::from("."), Path::to_path_buf);
    let lib_name = document.get("lib").and_then(|l| l.get("name")).and_then(|n| n.as_str());
    let has_library = document.get("lib").is_some() || dir.join("src/lib.rs").is_file();
    let library = has_library.then(|| lib_name.unwrap_or(package).replace('-', "_"));
    Ok(Crate { manifest, dir, document, library })
}

/// The manifest with `twinstep` added to `[dependencies]`, or `None` when it is there already.
fn add_dependency(mut document: toml_edit::DocumentMut, source: &Source) -> Option<String> {
    let dependencies = document.entry("dependencies").or_insert_with(toml_edit::table);
    if dependencies.get("twinstep").is_some() {
        return None;
    }
    let value = match source {
        Source::Version(version) => toml_edit::value(version.as_str()),
        Source::Path(path) => {
            let mut table = toml_edit::InlineTable::new();
            table.insert("path", path.display().to_string().into());
            toml_edit::value(table)
        }
    };
    dependencies["twinstep"] = value;
    Some(document.to_string())
}

/// The harness's path, example name and text, after every check.
fn plan_harness(krate: &Crate, spec: &str, force: bool) -> Result<(PathBuf, String, String), Failure> {
    let Some((file, item)) = spec.split_once(".rs::").map(|(f, i)| (format!("{f}.rs"), i)) else {
        return Err(Failure::input(format!("--kernel {spec}: expected FILE::ITEM, e.g. src/solver.rs::step")));
    };
    let path = krate.dir.join(&file);
    let source = std::fs::read_to_string(&path)
        .map_err(|e| Failure::input(format!("{}: cannot read: {}", path.display(), plain(&e))))?;
    let kernel = find_kernel(&source, item).map_err(|e| Failure::input(format!("{}:{e}", path.display())))?;
    let reach = reach(krate, &file)?;
    let name = format!("twinstep_{}", kernel.path.replace("::", "_").to_lowercase());
    let harness = krate.dir.join("examples").join(format!("{name}.rs"));
    if harness.exists() && !force {
        return Err(Failure::input(format!("{}: exists: --force replaces it", harness.display())));
    }
    let text = harness_text(&kernel, &file, &reach).map_err(|e| Failure::input(format!("--kernel {spec}: {e}")))?;
    Ok((harness, name, text))
}

/// How the harness reaches the kernel's file: through the library (`my_solver::solver`), or by including the
/// file as a module of the example (a crate without a library).
enum Reach {
    Library(String),
    Include { module: String, path: String },
}

fn reach(krate: &Crate, file: &str) -> Result<Reach, Failure> {
    let relative = file.trim_start_matches("./");
    let Some(inside) = relative.strip_prefix("src/").and_then(|f| f.strip_suffix(".rs")) else {
        return Err(Failure::input(format!("{file}: the kernel's file must be under src/ of the crate")));
    };
    let modules: Vec<&str> = inside.split('/').filter(|m| *m != "mod").collect();
    if inside == "main" || inside.starts_with("bin/") {
        return Err(Failure::input(format!(
            "{file}: a binary's own file cannot be reached from an example: move the kernel into a module of its \
             own (src/solver.rs) or a library"
        )));
    }
    Ok(match &krate.library {
        Some(library) => {
            let path = std::iter::once(library.as_str()).chain(modules.iter().copied().filter(|m| *m != "lib"));
            Reach::Library(path.collect::<Vec<_>>().join("::"))
        }
        None => Reach::Include {
            module: modules.last().copied().unwrap_or("kernel").to_string(),
            path: format!("../{relative}"),
        },
    })
}

/// The time levels the kernel's slices describe.
#[derive(Clone, Copy, PartialEq, Eq)]
enum TimeLevels {
    InPlace,
    TwoLevel,
    ThreeLevel,
    /// A kernel returning the next value of one cell.
    Cell,
}

/// `heat_step` → `HeatStep`.
fn camel(path: &str) -> String {
    path.split(['_', ':']).filter(|w| !w.is_empty()).map(|w| w[..1].to_uppercase() + &w[1..]).collect()
}

/// Appends a line to the harness text (writing to a `String` cannot fail).
macro_rules! emit {
    ($w:expr) => {
        $w.push('\n')
    };
    ($w:expr, $($arg:tt)*) => {{
        let _ = writeln!($w, $($arg)*);
    }};
}

/// Writes the harness; an error says why the signature does not tell the time levels.
fn harness_text(kernel: &Kernel, file: &str, reach: &Reach) -> Result<String, String> {
    let names = |kind: &dyn Fn(&ParamKind) -> bool| -> Vec<&str> {
        kernel.params.iter().filter(|p| kind(&p.kind)).map(|p| p.name.as_str()).collect()
    };
    let reads = names(&|k| *k == ParamKind::Reads);
    let writes = names(&|k| *k == ParamKind::Writes);
    let floats = names(&|k| *k == ParamKind::Float);
    let levels = match (reads.len(), writes.len()) {
        (_, 0) if kernel.returns_float && reads.is_empty() && !floats.is_empty() => TimeLevels::Cell,
        (_, 0) => return Err("the kernel writes no field (no `&mut [f64]` parameter) and returns no cell value".into()),
        (0, _) => TimeLevels::InPlace,
        (r, w) if r == w => TimeLevels::TwoLevel,
        (r, w) if r == 2 * w => TimeLevels::ThreeLevel,
        (r, w) => {
            return Err(format!(
                "{r} slices read and {w} written: twinstep init cannot tell the fields from the coefficients; write \
                 the harness by hand (docs/audit.md)"
            ))
        }
    };
    if kernel.returns_float && levels != TimeLevels::Cell {
        return Err("the kernel writes fields and returns a value: write the harness by hand (docs/audit.md)".into());
    }
    // The fields, named after the slices holding step n; and the struct members holding the run's data.
    let fields: Vec<&str> = match levels {
        TimeLevels::InPlace => writes.clone(),
        TimeLevels::TwoLevel => reads.clone(),
        TimeLevels::ThreeLevel => reads[writes.len()..].to_vec(),
        TimeLevels::Cell => vec![floats[0]],
    };
    let solver = kernel.receiver.as_ref();
    // The solver's type as the harness names it: imported from the library, or inside the included module.
    let solver_type = solver.map(|s| match reach {
        Reach::Library(_) => s.self_type.clone(),
        Reach::Include { module, .. } => format!("{module}::{}", s.self_type),
    });
    let run = format!("{}Run", camel(&kernel.path));
    let mut out = String::new();
    let w = &mut out;
    emit!(w, "//! Audit harness for `{}` ({file}), written by `twinstep init`.", kernel.path);
    emit!(w, "//!");
    let _ = writeln!(
        w,
        "//! Complete the places marked `todo!` with the initial data and parameters of the run you plan, choose"
    );
    let _ = writeln!(
        w,
        "//! the tolerance and the steps, then run it: `twinstep run --example <this file's name>`. The guide:"
    );
    let _ = writeln!(
        w,
        "//! docs/audit.md of twinstep. twinstep judges rounding error only, not discretization or modelling error."
    );
    emit!(w);
    emit!(w, "use std::process::ExitCode;");
    if solver.is_some_and(|s| s.mutable) {
        emit!(w, "use std::sync::Mutex;");
    }
    emit!(w);
    let scheme = match levels {
        TimeLevels::InPlace => "InPlace",
        TimeLevels::TwoLevel | TimeLevels::Cell => "TwoLevel",
        TimeLevels::ThreeLevel => "ThreeLevel",
    };
    let mut imports = vec![
        "use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Scheme, Tolerance};".to_string(),
        "use twinstep::lens::{Bound, Shadow};".to_string(),
    ];
    let (original, twin) = match reach {
        Reach::Library(module) => {
            let imported = match solver {
                Some(s) => s.self_type.clone(),
                None => kernel.original.split("::").next().unwrap_or_default().to_string(),
            };
            let twin_import = match (solver, kernel.twin.split_once("::")) {
                (None, Some((twin_module, _))) => format!(", {twin_module}"),
                (None, None) => format!(", {}", kernel.twin),
                (Some(_), _) => String::new(),
            };
            imports.push(format!("use {module}::{{{imported}{twin_import}}};"));
            imports.sort();
            for line in &imports {
                emit!(w, "{line}");
            }
            (kernel.original.clone(), kernel.twin.clone())
        }
        Reach::Include { module, path } => {
            for line in &imports {
                emit!(w, "{line}");
            }
            emit!(w);
            let _ = writeln!(
                w,
                "// The crate has no library, so the example includes the kernel's file as a module of its own."
            );
            emit!(w, "#[path = \"{path}\"]");
            emit!(w, "#[allow(dead_code)]");
            emit!(w, "mod {module};");
            (format!("{module}::{}", kernel.original), format!("{module}::{}", kernel.twin))
        }
    };
    emit!(w);
    // The struct: the initial data of each field (three-level: both starting levels), the parameters, the solver.
    emit!(w, "/// The run to audit: its initial data and the kernel's parameters.");
    emit!(w, "struct {run} {{");
    // Every member of the run's struct: its name, its type and what the user fills in.
    let mut members: Vec<(String, String, String)> = Vec::new();
    match levels {
        TimeLevels::Cell => members.push((fields[0].into(), "f64".into(), format!("the initial `{}`", fields[0]))),
        TimeLevels::ThreeLevel => members.extend(
            reads
                .iter()
                .map(|r| ((*r).into(), "Vec<f64>".into(), format!("`{r}` at the start: one f64 per cell, row-major"))),
        ),
        _ => members.extend(
            fields
                .iter()
                .map(|f| ((*f).into(), "Vec<f64>".into(), format!("the initial `{f}`: one f64 per cell, row-major"))),
        ),
    }
    for p in &kernel.params {
        let ty = match &p.kind {
            ParamKind::Float if !(levels == TimeLevels::Cell && p.name == fields[0]) => "f64".to_string(),
            ParamKind::Integer(ty) => ty.clone(),
            _ => continue,
        };
        members.push((p.name.clone(), ty, format!("`{}` in your run", p.name)));
    }
    for (name, ty, _) in &members {
        emit!(w, "    {name}: {ty},");
    }
    if let Some(s) = solver {
        if s.mutable {
            let _ = writeln!(
                w,
                "    /// `step` takes `&mut self`: every run (each lens and the f64 original) steps this one solver."
            );
            let _ = writeln!(
                w,
                "    /// If the step changes state that its arithmetic reads, give each run its own and check that the"
            );
            emit!(w, "    /// audit reports no `primal_mismatch`.");
            emit!(w, "    solver: Mutex<{}>,", solver_type.as_deref().unwrap_or_default());
        } else {
            emit!(w, "    solver: {},", solver_type.as_deref().unwrap_or_default());
        }
    }
    emit!(w, "}}");
    emit!(w);
    emit!(w, "#[twinstep::scenario]");
    emit!(w, "impl Scenario for {run} {{");
    let specs: Vec<String> = match levels {
        TimeLevels::Cell => vec![format!("FieldSpec::new(\"{}\", &[1])", fields[0])],
        _ => fields.iter().map(|f| format!("FieldSpec::new(\"{f}\", &[self.{f}.len()])")).collect(),
    };
    emit!(w, "    fn fields(&self) -> Vec<FieldSpec> {{");
    emit!(w, "        vec![{}]", specs.join(", "));
    emit!(w, "    }}");
    emit!(w);
    emit!(w, "    fn scheme(&self) -> Scheme {{");
    emit!(w, "        Scheme::{scheme}");
    emit!(w, "    }}");
    emit!(w);
    match levels {
        TimeLevels::ThreeLevel => {
            let n = writes.len();
            let _ =
                writeln!(w, "    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), twinstep::audit::Error> {{");
            for (k, (before, now)) in reads[..n].iter().zip(&reads[n..]).enumerate() {
                emit!(w, "        levels.previous[{k}].set_f64(&self.{before})?;");
                emit!(w, "        levels.current[{k}].set_f64(&self.{now})?;");
            }
            emit!(w, "        Ok(())");
            emit!(w, "    }}");
        }
        TimeLevels::Cell => {
            emit!(w, "    fn initial_values(&self) -> Vec<Vec<f64>> {{");
            emit!(w, "        vec![vec![self.{}]]", fields[0]);
            emit!(w, "    }}");
        }
        _ => {
            let values: Vec<String> = fields.iter().map(|f| format!("self.{f}.clone()")).collect();
            emit!(w, "    fn initial_values(&self) -> Vec<Vec<f64>> {{");
            emit!(w, "        vec![{}]", values.join(", "));
            emit!(w, "    }}");
        }
    }
    for lens_generic in [true, false] {
        emit!(w);
        if lens_generic {
            emit!(w, "    fn step<T>(&self, levels: &mut Levels<T>) {{");
        } else {
            emit!(w, "    fn step_original(&self, levels: &mut Levels<f64>) {{");
        }
        let call = call(kernel, levels, &writes, if lens_generic { &twin } else { &original }, lens_generic);
        for line in call {
            emit!(w, "        {line}");
        }
        emit!(w, "    }}");
    }
    emit!(w, "}}");
    emit!(w);
    emit!(w, "#[allow(unreachable_code, unused_variables)] // until the todo!s are filled in");
    emit!(w, "fn main() -> ExitCode {{");
    emit!(w, "    let run = {run} {{");
    for (name, _, what) in &members {
        emit!(w, "        {name}: todo!(\"{what}\"),");
    }
    if let Some(s) = solver {
        let value = format!("todo!(\"your {} as your program builds it\")", s.self_type);
        let value = if s.mutable { format!("Mutex::new({value})") } else { value };
        emit!(w, "        solver: {value},");
    }
    emit!(w, "    }};");
    let _ = writeln!(
        w,
        "    // The rounding error you accept in a cell, and the steps to audit (`.horizon(n)` extrapolates the"
    );
    emit!(w, "    // verdict to a longer run): docs/audit.md, \"Tolerances\".");
    emit!(w, "    Audit::new(&run, Tolerance::mixed(1e-12, 1e-9), 1_000)");
    emit!(w, "        .kernel(\"{}\")", kernel.path);
    emit!(w, "        .lens::<Bound>()");
    emit!(w, "        .lens::<Shadow>()");
    emit!(w, "        .report()");
    emit!(w, "}}");
    Ok(out)
}

/// The statements of `step` (the twin, `lens_generic`) or `step_original` (the original): borrow the levels and
/// call the kernel with its arguments in its own order.
fn call(kernel: &Kernel, levels: TimeLevels, writes: &[&str], function: &str, lens_generic: bool) -> Vec<String> {
    let mut lines = Vec::new();
    let written = if levels == TimeLevels::InPlace { "current" } else { "next" };
    // Several fields written at once: borrow them apart (the levels hold exactly the fields of `fields()`).
    if writes.len() > 1 {
        lines.push(format!(
            "let [{}] = &mut levels.{written}[..] else {{ unreachable!(\"the levels hold the fields of fields()\") }};",
            writes.join(", ")
        ));
    }
    let n = writes.len();
    let (mut read, mut write) = (0, 0);
    let args: Vec<String> = kernel
        .params
        .iter()
        .map(|p| match &p.kind {
            ParamKind::Reads => {
                let k = read;
                read += 1;
                match levels {
                    TimeLevels::ThreeLevel if k < n => format!("&levels.previous[{k}]"),
                    TimeLevels::ThreeLevel => format!("&levels.current[{}]", k - n),
                    _ => format!("&levels.current[{k}]"),
                }
            }
            ParamKind::Writes => {
                let k = write;
                write += 1;
                if n > 1 {
                    p.name.clone()
                } else {
                    format!("&mut levels.{written}[{k}]")
                }
            }
            ParamKind::Float if levels == TimeLevels::Cell && p.name == kernel_state(kernel) => {
                "levels.current[0][0]".to_string()
            }
            ParamKind::Float if lens_generic => format!("T::from_f64(self.{})", p.name),
            ParamKind::Float | ParamKind::Integer(_) => format!("self.{}", p.name),
        })
        .collect();
    let callee = match &kernel.receiver {
        Some(r) => {
            let method = function.rsplit("::").next().unwrap_or(function);
            let solver = if r.mutable { "self.solver.lock().expect(\"the solver\")" } else { "self.solver" };
            format!("{solver}.{method}")
        }
        None => function.to_string(),
    };
    let assign = if levels == TimeLevels::Cell { "levels.next[0][0] = " } else { "" };
    let call = format!("{assign}{callee}({});", args.join(", "));
    // rustfmt's width (120, less the 8 columns of indentation), so the file reads as the user's own code does.
    if call.len() <= 112 {
        lines.push(call);
    } else {
        lines.push(format!("{assign}{callee}("));
        lines.extend(args.iter().map(|a| format!("    {a},")));
        lines.push(");".to_string());
    }
    lines
}

/// The state of a one-cell kernel: its first float parameter.
fn kernel_state(kernel: &Kernel) -> &str {
    kernel.params.iter().find(|p| p.kind == ParamKind::Float).map_or("", |p| p.name.as_str())
}
