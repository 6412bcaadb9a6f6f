//! Argument pieces several commands share: value parsers that hand the text to the core's own readers (so a bad
//! value is reported by the option it came in), the structure KIND, and the option groups of a line case, a
//! frequency sweep and the foil what-if.

use ohmstack_core::base::units::{parse_frequency, parse_length, parse_number, parse_time};
use ohmstack_core::design::roughness::Foil;
use ohmstack_core::line::loss::Sweep;
use ohmstack_core::plan::case;

use clap::builder::{PossibleValue, TypedValueParser};
use std::collections::BTreeMap;
use std::ffi::OsStr;

/// Closing note of the top-level help.
pub const UNITS_NOTE: &str =
    "Lengths take units: um, mm, mil, in (and oz for copper thickness); plain numbers are \
metres. Frequencies take Hz, kHz, MHz, GHz; plain numbers are hertz. FILE may be - to read stdin.\n\
Run `ohmstack COMMAND --help` for a command's options.";

/// The option's long name (`width`, `z-ref`), which is also the field name the core's messages use.
fn field_name(arg: Option<&clap::Arg>) -> String {
    arg.map(|a| {
        a.get_long()
            .map(str::to_string)
            .unwrap_or_else(|| a.get_id().to_string())
    })
    .unwrap_or_default()
}

/// Runs `read(field, text)` for the option being parsed. The core's message starts with the field name; clap's
/// error already carries the option, so that prefix is dropped to keep the one-line error free of repetition.
fn with_field<T, E>(
    cmd: &clap::Command,
    arg: Option<&clap::Arg>,
    value: &OsStr,
    read: fn(&str, &str) -> Result<T, E>,
) -> Result<T, clap::Error>
where
    T: Clone + Send + Sync + 'static,
    E: std::fmt::Display + 'static,
{
    let field = field_name(arg);
    let inner = move |text: &str| -> Result<T, String> {
        read(&field, text).map_err(|e| {
            let message = e.to_string();
            match message.strip_prefix(&format!("{field}: ")) {
                Some(reason) => reason.to_string(),
                None => message,
            }
        })
    };
    inner.parse_ref(cmd, arg, value)
}

/// Declares a value parser that reads the option's text with a core function of `(field, text)`.
macro_rules! core_parser {
    ($(#[$doc:meta])* $name:ident -> $value:ty = $read:expr) => {
        $(#[$doc])*
        #[derive(Clone, Copy)]
        pub struct $name;
        impl TypedValueParser for $name {
            type Value = $value;
            fn parse_ref(
                &self,
                cmd: &clap::Command,
                arg: Option<&clap::Arg>,
                value: &OsStr,
            ) -> Result<$value, clap::Error> {
                with_field(cmd, arg, value, $read)
            }
        }
    };
}

core_parser!(
    /// A length (`0.3mm`, `5mil`, `1oz`), in metres.
    Length -> f64 = parse_length
);
core_parser!(
    /// A frequency (`5GHz`, `100MHz`, `1e9`), in hertz.
    Frequency -> f64 = parse_frequency
);
core_parser!(
    /// A time (`50ps`, `0.1ns`), in seconds.
    Time -> f64 = parse_time
);
core_parser!(
    /// An impedance in ohms (`50`, `50ohm`, `50Ω`).
    Ohms -> f64 = |f, t| parse_number(f, t, &["ohm", "Ω"])
);
core_parser!(
    /// A loss in decibels (`12`, `12dB`).
    Decibels -> f64 = |f, t| parse_number(f, t, &["dB"])
);
core_parser!(
    /// A percentage (`0.5`, `0.5%`).
    Percent -> f64 = |f, t| parse_number(f, t, &["%"])
);
core_parser!(
    /// A calendar date, `YYYY-MM-DD`.
    Date -> ohmstack_core::output::report::IssueDate =
        |_, t| ohmstack_core::output::report::IssueDate::parse(t)
);
core_parser!(
    /// A length of a line case, checked here and kept as text: the case reader takes text.
    LengthText -> String = |f, t| parse_length(f, t).map(|_| t.to_string())
);
core_parser!(
    /// A plain number of a line case (a Dk), checked here and kept as text.
    NumberText -> String = |f, t| parse_number(f, t, &[]).map(|_| t.to_string())
);

/// The position of the rule called `name`, or an error for `--rule` that lists the project's rules.
pub fn rule_index(project: &ohmstack_core::Project, name: &str) -> anyhow::Result<usize> {
    project
        .rules
        .iter()
        .position(|r| r.name == name)
        .ok_or_else(|| {
            let names: Vec<String> = project
                .rules
                .iter()
                .map(|r| format!("{:?}", r.name))
                .collect();
            anyhow::anyhow!(
                "--rule: no rule named {name:?}; the project's rules are {}",
                names.join(", ")
            )
        })
}

/// The rules `--rule` picks: the one named, or every rule.
pub fn chosen_rules<'a>(
    project: &'a ohmstack_core::Project,
    only: Option<&str>,
) -> anyhow::Result<Vec<&'a ohmstack_core::design::project::ImpedanceRule>> {
    match only {
        Some(name) => Ok(vec![&project.rules[rule_index(project, name)?]]),
        None => Ok(project.rules.iter().collect()),
    }
}

/// A whole number (`10000`); surrounding blanks are allowed.
pub fn whole<T: std::str::FromStr>(text: &str) -> Result<T, String> {
    text.trim()
        .parse()
        .map_err(|_| format!("{text:?} is not a whole number"))
}

/// The structure names of `ohmstack kinds`; listed in help and completions. Earlier names
/// (`case::KIND_ALIASES`) are still accepted, unlisted.
#[derive(Clone, Copy)]
pub struct Kind;

impl TypedValueParser for Kind {
    type Value = String;
    fn parse_ref(
        &self,
        cmd: &clap::Command,
        arg: Option<&clap::Arg>,
        value: &OsStr,
    ) -> Result<String, clap::Error> {
        let check = |text: &str| -> Result<String, String> {
            if let Some(kind) = case::canonical_kind(text) {
                return Ok(kind.to_string());
            }
            let names: Vec<&str> = case::KINDS.iter().map(|k| k.0).collect();
            Err(format!(
                "unknown structure {text:?}; known: {}",
                names.join(", ")
            ))
        };
        check.parse_ref(cmd, arg, value)
    }
    fn possible_values(&self) -> Option<Box<dyn Iterator<Item = PossibleValue> + '_>> {
        Some(Box::new(
            case::KINDS
                .iter()
                .map(|(name, what)| PossibleValue::new(*name).help(*what)),
        ))
    }
}

/// The dimensions of one line, as `calc`, `solve` and `field-calc` take them. Which fields a structure needs is
/// the case reader's business (`ohmstack kinds` lists them); here every field is optional.
#[derive(clap::Args)]
pub struct CaseArgs {
    /// Structure (see `ohmstack kinds`)
    #[arg(value_name = "KIND", value_parser = Kind, hide_possible_values = true)]
    pub kind: String,
    /// Trace width
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub width: Option<String>,
    /// Dielectric height (below the trace; above it for broadside-stripline)
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub height: Option<String>,
    /// The other dielectric height of a stripline (default: --height)
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub height2: Option<String>,
    /// Copper thickness (default 0)
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub thickness: Option<String>,
    /// Dielectric constant of the substrate
    #[arg(long, value_name = "NUMBER", value_parser = NumberText, allow_hyphen_values = true)]
    pub dk: Option<String>,
    /// Gap between the two traces of a pair
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub spacing: Option<String>,
    /// Gap from the trace to the coplanar grounds
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub gap: Option<String>,
    /// Dielectric between the two traces of a broadside pair
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub separation: Option<String>,
    /// Solder-mask thickness over the trace
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub mask_thickness: Option<String>,
    /// Solder-mask dielectric constant
    #[arg(long, value_name = "NUMBER", value_parser = NumberText, allow_hyphen_values = true)]
    pub mask_dk: Option<String>,
    /// Height of the covering dielectric above the trace
    #[arg(long, value_name = "LENGTH", value_parser = LengthText, allow_hyphen_values = true)]
    pub cover: Option<String>,
    /// Dielectric constant of the cover
    #[arg(long, value_name = "NUMBER", value_parser = NumberText, allow_hyphen_values = true)]
    pub cover_dk: Option<String>,
    /// Dielectric constant of the --height2 dielectric of a stripline (default: --dk)
    #[arg(long, value_name = "NUMBER", value_parser = NumberText, allow_hyphen_values = true)]
    pub dk2: Option<String>,
    /// Etch factor (thickness / one-side undercut): trapezoidal traces, narrower on top by 2·thickness/factor
    /// (default: rectangular; the field engines model it, the closed forms do not)
    #[arg(long, value_name = "NUMBER", value_parser = NumberText, allow_hyphen_values = true)]
    pub etch_factor: Option<String>,
}

impl CaseArgs {
    /// The given fields by name, as the core's case reader takes them.
    pub fn fields(&self) -> BTreeMap<String, String> {
        [
            ("width", &self.width),
            ("height", &self.height),
            ("height2", &self.height2),
            ("thickness", &self.thickness),
            ("dk", &self.dk),
            ("spacing", &self.spacing),
            ("gap", &self.gap),
            ("separation", &self.separation),
            ("mask-thickness", &self.mask_thickness),
            ("mask-dk", &self.mask_dk),
            ("cover", &self.cover),
            ("cover-dk", &self.cover_dk),
            ("dk2", &self.dk2),
            ("etch-factor", &self.etch_factor),
        ]
        .into_iter()
        .filter_map(|(k, v)| v.as_ref().map(|v| (k.to_string(), v.clone())))
        .collect()
    }
}

/// A log-spaced frequency sweep (`loss`, `touchstone`).
#[derive(clap::Args)]
#[command(next_help_heading = "Sweep")]
pub struct SweepArgs {
    /// First frequency [default: 10MHz]
    #[arg(long, value_name = "FREQ", value_parser = Frequency, allow_hyphen_values = true)]
    pub from: Option<f64>,
    /// Last frequency [default: 40GHz]
    #[arg(long, value_name = "FREQ", value_parser = Frequency, allow_hyphen_values = true)]
    pub to: Option<f64>,
    /// Number of frequencies [default: 50]
    #[arg(long, value_name = "N", value_parser = whole::<usize>, allow_hyphen_values = true)]
    pub points: Option<usize>,
}

impl SweepArgs {
    /// The sweep, defaults filled in and checked.
    pub fn sweep(&self) -> anyhow::Result<Sweep> {
        let mut sweep = Sweep::default();
        if let Some(f) = self.from {
            sweep.from_hz = f;
        }
        if let Some(f) = self.to {
            sweep.to_hz = f;
        }
        if let Some(n) = self.points {
            sweep.points = n;
        }
        sweep.frequencies()?;
        Ok(sweep)
    }
}

/// Roughness model of the `--foil` presets.
#[derive(Clone, Copy, clap::ValueEnum)]
pub enum FoilModel {
    #[value(alias = "hammerstad_groiss")]
    HammerstadGroiss,
    Huray,
}

/// A `--foil` choice: a foil preset or no roughness at all.
#[derive(Clone, Copy)]
pub enum Surface {
    Smooth,
    Foil(Foil),
}

/// A foil preset, read by the core's label reader (`low-profile`, `Low Profile`, …), or `smooth`.
#[derive(Clone, Copy)]
pub struct FoilPreset;

impl TypedValueParser for FoilPreset {
    type Value = Surface;
    fn parse_ref(
        &self,
        cmd: &clap::Command,
        arg: Option<&clap::Arg>,
        value: &OsStr,
    ) -> Result<Surface, clap::Error> {
        let read = |text: &str| -> Result<Surface, String> {
            if text.trim().eq_ignore_ascii_case("smooth") {
                return Ok(Surface::Smooth);
            }
            Foil::from_label(text).map(Surface::Foil).ok_or_else(|| {
                format!(
                    "unknown foil {text:?}; use standard, low-profile, very-low-profile or smooth"
                )
            })
        };
        read.parse_ref(cmd, arg, value)
    }
    fn possible_values(&self) -> Option<Box<dyn Iterator<Item = PossibleValue> + '_>> {
        let names = ["standard", "low-profile", "very-low-profile", "smooth"];
        Some(Box::new(names.into_iter().map(PossibleValue::new)))
    }
}

/// `--foil` with `--foil-model`: every copper layer's roughness as a what-if over the project's own values.
#[derive(clap::Args)]
#[command(next_help_heading = "Copper roughness")]
pub struct FoilArgs {
    /// Set every copper layer's roughness to a foil preset (`smooth`: none)
    #[arg(long, value_name = "FOIL", value_parser = FoilPreset, allow_hyphen_values = true)]
    pub foil: Option<Surface>,
    /// Roughness model of the preset [default: hammerstad-groiss]
    #[arg(long, value_name = "MODEL", ignore_case = true)]
    pub foil_model: Option<FoilModel>,
}

/// The engines a single cross-section (`calc`, `solve`, `batch`) is computed on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, clap::ValueEnum)]
pub enum CaseEngine {
    /// The published closed-form models (instant; rectangular traces)
    ClosedForm,
    /// The fast 2D field engine (boundary elements, milliseconds)
    #[default]
    Field,
    /// The finite-volume 2D field solver, the independent reference (up to seconds)
    Reference,
}

impl CaseEngine {
    /// The name as typed on the command line and in batch lines (`closed-form`, `field`, `reference`).
    pub fn name(self) -> &'static str {
        match self {
            CaseEngine::ClosedForm => "closed-form",
            CaseEngine::Field => "field",
            CaseEngine::Reference => "reference",
        }
    }

    /// Reads a name as `name` gives it (batch lines carry the engine as text).
    pub fn from_name(text: &str) -> Option<CaseEngine> {
        [
            CaseEngine::ClosedForm,
            CaseEngine::Field,
            CaseEngine::Reference,
        ]
        .into_iter()
        .find(|e| e.name() == text.trim())
    }
}

/// `--engine` of `calc`, `solve` and `batch`.
#[derive(clap::Args)]
#[command(next_help_heading = "Engine")]
pub struct CaseEngineArgs {
    /// Engine: `field` (2D field engine, boundary elements; the default), `closed-form` (published formulas,
    /// instant) or `reference` (finite-volume field solver, slow)
    #[arg(long, value_enum, value_name = "ENGINE", default_value_t = CaseEngine::Field)]
    pub engine: CaseEngine,
}

/// `--engine`: which engine answers every rule, over each rule's own choice.
#[derive(clap::Args)]
#[command(next_help_heading = "Engine")]
pub struct EngineArgs {
    /// Engine for every rule: `closed-form` (published formulas, instant), `field` (2D field engine, boundary
    /// elements); default: each rule's own model
    #[arg(long, value_enum, value_name = "ENGINE")]
    pub engine: Option<RuleEngine>,
}

/// The engines a whole project can be planned on from the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum RuleEngine {
    /// The published closed-form models
    ClosedForm,
    /// The 2D field engine (boundary elements)
    Field,
}

impl EngineArgs {
    /// Sets every rule's model to the chosen engine (nothing when none was chosen).
    pub fn apply(&self, project: &mut ohmstack_core::Project) {
        use ohmstack_core::design::project::RuleModel;
        if let Some(engine) = self.engine {
            let model = match engine {
                RuleEngine::ClosedForm => RuleModel::ClosedForm,
                RuleEngine::Field => RuleModel::FieldSolver,
            };
            for rule in &mut project.rules {
                rule.model = model;
            }
        }
    }
}
