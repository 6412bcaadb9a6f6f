//! How the command line fails: every error is one line on stderr, `error: ` and then the option or field it is
//! about, with exit status 2. clap's own messages (several lines with a usage block) are rendered here into that
//! form; `--help` and `--version` print as clap writes them and exit 0.

use clap::error::{ContextKind, ContextValue, ErrorKind};
use clap::CommandFactory;

/// Exit status of every error, usage or otherwise (what scripts driving the tool have always seen).
pub const ERROR_STATUS: i32 = 2;

/// `print!` panics when stdout fails; found by the hostile-input tests with `ohmstack random normal | head`.
/// A reader that went away (broken pipe) ends the program quietly with the shell's SIGPIPE status 141; any other
/// write error becomes the usual one-line error. Everything else keeps the default panic report.
pub fn quiet_output_errors() {
    let default = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        let payload = info
            .payload()
            .downcast_ref::<String>()
            .map(String::as_str)
            .or_else(|| info.payload().downcast_ref::<&str>().copied())
            .unwrap_or("");
        if let Some(reason) = payload.strip_prefix("failed printing to stdout: ") {
            if reason.contains("Broken pipe") {
                std::process::exit(141);
            }
            eprintln!("error: writing output: {reason}");
            std::process::exit(ERROR_STATUS);
        }
        default(info);
    }));
}

/// The help of the whole tool, for a bare `ohmstack`.
pub fn print_overview() -> anyhow::Result<()> {
    println!("{}", crate::Cli::command().render_help());
    Ok(())
}

/// Ends the program for a clap outcome: help and version are printed (exit 0), anything else is a usage error.
pub fn exit_for_clap(e: clap::Error) -> ! {
    match e.kind() {
        ErrorKind::DisplayHelp | ErrorKind::DisplayVersion => {
            // A closed stdout (`ohmstack --help | head -1`) is not worth a message.
            let _ = e.print();
            std::process::exit(0);
        }
        _ => {
            let argv: Vec<String> = std::env::args_os()
                .map(|a| a.to_string_lossy().into_owned())
                .collect();
            eprintln!("error: {}", one_line(&e, &command_path(&argv)));
            std::process::exit(ERROR_STATUS);
        }
    }
}

/// `calc`, `share decode`, …: the (sub)commands named on the command line, for "not an option of …".
fn command_path(argv: &[String]) -> String {
    let mut cmd = crate::Cli::command();
    let mut path = Vec::new();
    for a in argv.iter().skip(1).filter(|a| !a.starts_with('-')) {
        let Some(sub) = cmd.find_subcommand(a).cloned() else {
            break;
        };
        path.push(sub.get_name().to_string());
        cmd = sub;
    }
    if path.is_empty() {
        "ohmstack".into()
    } else {
        path.join(" ")
    }
}

fn context(e: &clap::Error, kind: ContextKind) -> Option<String> {
    match e.get(kind)? {
        ContextValue::String(s) => Some(s.clone()),
        ContextValue::Strings(v) => Some(v.join(", ")),
        ContextValue::StyledStr(s) => Some(s.to_string()),
        ContextValue::StyledStrs(v) => Some(
            v.iter()
                .map(ToString::to_string)
                .collect::<Vec<_>>()
                .join(", "),
        ),
        ContextValue::Number(n) => Some(n.to_string()),
        _ => None,
    }
}

/// The list context `kind` as its items (possible values, subcommands).
fn items(e: &clap::Error, kind: ContextKind) -> Vec<String> {
    match e.get(kind) {
        Some(ContextValue::Strings(v)) => v.clone(),
        Some(ContextValue::String(s)) => vec![s.clone()],
        Some(ContextValue::StyledStrs(v)) => v.iter().map(ToString::to_string).collect(),
        _ => Vec::new(),
    }
}

/// `--width <LENGTH>` → `--width`, `<FILE>` → `FILE`: the name the message leads with.
fn arg_name(display: &str) -> String {
    let display = display.trim();
    if let Some(rest) = display.strip_prefix('<') {
        return rest.split('>').next().unwrap_or(rest).to_string();
    }
    display
        .split([' ', '='])
        .next()
        .unwrap_or(display)
        .to_string()
}

/// `a`, `a or b`, `a, b or c`.
fn or_list(v: &[String]) -> String {
    match v {
        [] => String::new(),
        [one] => one.clone(),
        [init @ .., last] => format!("{} or {last}", init.join(", ")),
    }
}

/// Options that belong to another command, with the pointer the message gives instead of "not an option".
const ELSEWHERE: &[(&str, &str, &str)] = &[
    ("calc", "--target", "only `solve` takes a target"),
    (
        "field-calc",
        "--target",
        "field-calc analyses the given width; use `solve` for synthesis",
    ),
];

/// clap's error as one line, without the `error: ` prefix.
pub fn one_line(e: &clap::Error, command: &str) -> String {
    let arg = context(e, ContextKind::InvalidArg)
        .map(|a| arg_name(&a))
        .unwrap_or_default();
    let help = format!("see `ohmstack {command} --help`");
    let first = || {
        // Anything not handled below: clap's own first line, without its `error: `.
        let text = e.render().to_string();
        let line = text.lines().next().unwrap_or("").trim();
        line.strip_prefix("error: ").unwrap_or(line).to_string()
    };
    match e.kind() {
        ErrorKind::ValueValidation => {
            let reason = std::error::Error::source(e)
                .map(ToString::to_string)
                .unwrap_or_else(first);
            format!("{arg}: {reason}")
        }
        ErrorKind::InvalidValue => {
            // Without a list of valid values, the option simply had no value (`--width` at the end).
            let valid = items(e, ContextKind::ValidValue);
            match context(e, ContextKind::InvalidValue) {
                Some(value) if !valid.is_empty() => {
                    format!("{arg}: {value:?} is not {}", or_list(&valid))
                }
                _ => format!("{arg}: missing value"),
            }
        }
        ErrorKind::UnknownArgument => {
            let tip = context(e, ContextKind::SuggestedArg)
                .map(|s| format!(" (did you mean {s}?)"))
                .unwrap_or_default();
            if let Some((_, _, hint)) = ELSEWHERE
                .iter()
                .find(|(c, a, _)| *c == command && *a == arg)
            {
                format!("{arg}: {hint}")
            } else if arg.starts_with('-') && arg != "-" {
                format!("{arg}: not an option of {command}{tip}")
            } else {
                format!("{arg:?}: unexpected argument to {command}; {help}")
            }
        }
        ErrorKind::ArgumentConflict => {
            let prior = context(e, ContextKind::PriorArg)
                .map(|p| arg_name(&p))
                .unwrap_or_default();
            if prior == arg {
                format!("{arg}: given twice")
            } else {
                format!("{arg}: cannot be used with {prior}")
            }
        }
        ErrorKind::MissingRequiredArgument => {
            let missing: Vec<String> = items(e, ContextKind::InvalidArg)
                .iter()
                .map(|a| arg_name(a))
                .collect();
            format!("{}: missing; {help}", missing.join(", "))
        }
        ErrorKind::InvalidSubcommand => {
            let name = context(e, ContextKind::InvalidSubcommand).unwrap_or_default();
            let tip = context(e, ContextKind::SuggestedSubcommand)
                .map(|s| format!(" (did you mean {s}?)"))
                .unwrap_or_default();
            if command == "ohmstack" {
                format!("unknown command {name:?}{tip}; run `ohmstack --help`")
            } else {
                format!("unknown command {name:?} for {command}{tip}; {help}")
            }
        }
        ErrorKind::MissingSubcommand => {
            let valid = or_list(&items(e, ContextKind::ValidSubcommand));
            format!("{command}: missing command ({valid}); {help}")
        }
        _ => first(),
    }
}
