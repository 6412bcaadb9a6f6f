//! The saved design: a stackup, the impedance rules routed on it, fabrication limits and display preferences.
//! Serialised as JSON with `"schema": 2` (schema 1 files are migrated on read); unknown or wrong fields are errors
//! that name the field's path.

use crate::base::error::{self, Error, Result};
use crate::base::units::LengthUnit;
use crate::design::process::Process;
use crate::design::stackup::{Layer, Stackup};
use serde::{Deserialize, Serialize};

/// The longest revision label a project may carry, characters (a fab-notes heading, not a paragraph).
pub const MAX_REVISION_CHARS: usize = 40;

/// The schema version this build writes. Older versions are migrated on read (see [`Project::from_json`]).
pub const SCHEMA_VERSION: u32 = 2;

/// The routing structure of a rule. Whether it is microstrip or stripline (and which variant) follows from where the
/// layer sits in the stack, so the user picks only the shape of the net.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Structure {
    /// One trace over (or between) reference planes.
    Single,
    /// Two traces side by side on one layer (edge-coupled differential pair).
    EdgePair,
    /// Two traces stacked on adjacent signal layers between the same planes (broadside-coupled pair).
    BroadsidePair,
    /// One trace with ground copper beside it on the same layer, at `gap_m` (coplanar; grounded when a plane is near).
    Coplanar,
    /// An edge-coupled pair with ground copper beside it on the same layer.
    CoplanarPair,
}

impl Structure {
    pub const ALL: [Structure; 5] = [
        Structure::Single,
        Structure::EdgePair,
        Structure::BroadsidePair,
        Structure::Coplanar,
        Structure::CoplanarPair,
    ];

    pub fn is_pair(self) -> bool {
        matches!(
            self,
            Structure::EdgePair | Structure::BroadsidePair | Structure::CoplanarPair
        )
    }

    /// Plain geometric words for tables and menus (what is routed, not where: `section::CrossSection::describe`
    /// adds where the line sits). Only trade terms (coplanar) beyond plain words.
    pub fn label(self) -> &'static str {
        match self {
            Structure::Single => "single trace",
            Structure::EdgePair => "pair side by side",
            Structure::BroadsidePair => "pair stacked",
            Structure::Coplanar => "coplanar trace",
            Structure::CoplanarPair => "coplanar pair",
        }
    }
}

/// Which dimension synthesis is free to change.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum Solve {
    /// Find the trace width that hits the target (every structure).
    #[default]
    Width,
    /// Find the pair spacing that hits the target at the given width (pairs only).
    Spacing,
    /// Analyse the dimensions as given.
    Nothing,
}

/// What computes a rule's figures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum RuleModel {
    /// The published closed-form model of the structure, chosen explicitly (instant, but several per cent off on
    /// thick, masked, coupled and coplanar cross-sections: docs/accuracy.md).
    ClosedForm,
    /// The fast 2D field engine (the default since schema 2): the free dimension is solved on it, starting from
    /// the closed form's answer.
    #[default]
    FieldSolver,
}

impl RuleModel {
    /// Whether this is the default (left out of saved files).
    pub fn is_default(&self) -> bool {
        *self == RuleModel::default()
    }
}

/// One controlled-impedance net class.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImpedanceRule {
    pub name: String,
    /// The copper layer the net is routed on.
    pub layer: String,
    pub structure: Structure,
    /// Target impedance, Ω: Z0 for single-ended structures, Zdiff for pairs.
    pub target_ohm: f64,
    /// Allowed deviation, ± % of target (fabricators commonly hold ±10 %: common practice, no source).
    #[serde(default = "ten_pct")]
    pub tolerance_pct: f64,
    #[serde(default)]
    pub solve: Solve,
    /// What computes the figures.
    #[serde(default, skip_serializing_if = "RuleModel::is_default")]
    pub model: RuleModel,
    /// Trace width at the base of the trace, m (the starting value when solving for width).
    pub width_m: f64,
    /// Edge-to-edge spacing of a pair, m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub spacing_m: Option<f64>,
    /// Edge-to-edge gap from the trace to coplanar ground copper, m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gap_m: Option<f64>,
    /// For a broadside pair: the layer the second trace is on.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub partner_layer: Option<String>,
    /// Reference planes named explicitly; empty means the nearest plane layers above and below.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub references: Vec<String>,
    /// The link this net class carries (its Nyquist frequency, loss budget and fixed losses) for its reach and
    /// weave-skew budget; the board's link ([`Routing::link`]) when absent.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub link: Option<LinkBudget>,
}

fn ten_pct() -> f64 {
    10.0
}

/// Fabrication limits and process facts that bound synthesis and shape traces.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Fab {
    /// Narrowest trace the fabricator builds, m.
    pub min_trace_m: f64,
    /// Smallest copper-to-copper space, m.
    pub min_space_m: f64,
    /// Etch factor (thickness / one-side undercut); the trace top is narrower by 2·t/etch_factor.
    /// `None` treats traces as rectangles.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub etch_factor: Option<f64>,
    /// Finished board thickness tolerance, ± %; `None` means the common ±10 % (common practice, no source).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub thickness_tolerance_pct: Option<f64>,
    /// Copper plated onto the outer layers' base foil, m: part of each outer copper layer's finished thickness
    /// (base foil = finished − plating). `None` says nothing of how the outer copper was made.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub outer_plating_m: Option<f64>,
    /// The finished board thickness the design aims at, m (prepreg pressed, solder mask included, as the stack's
    /// total); `None` sets no target. Optional so files and links from before it open unchanged.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub target_thickness_m: Option<f64>,
}

/// Board thickness tolerance used when the project sets none, ± % (common practice, no source).
pub const DEFAULT_THICKNESS_TOLERANCE_PCT: f64 = 10.0;

/// The thickest board target accepted, m (a unit slip guard: boards over 10 mm are not built from this tool's stacks).
pub const MAX_TARGET_THICKNESS_M: f64 = 10e-3;

/// The finished thickness set against the target.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThicknessCheck {
    pub target_m: f64,
    pub finished_m: f64,
    /// Finished − target, m.
    pub difference_m: f64,
    /// Finished − target, % of the target.
    pub difference_pct: f64,
    /// The board thickness tolerance it is held to, ± %.
    pub tolerance_pct: f64,
    /// Whether the difference is inside the tolerance.
    pub within: bool,
}

/// The thickest outer plating accepted, m (a plated-through-hole panel plate is about 25 µm: common practice, no
/// source; four times that is surely a unit slip).
pub const MAX_OUTER_PLATING_M: f64 = 100e-6;

impl Default for Fab {
    fn default() -> Self {
        // 100 µm (≈4 mil) line and space: a common standard-class capability (common practice, no source).
        Fab {
            min_trace_m: 100e-6,
            min_space_m: 100e-6,
            etch_factor: None,
            thickness_tolerance_pct: None,
            outer_plating_m: None,
            target_thickness_m: None,
        }
    }
}

impl Fab {
    /// The board thickness tolerance, ± % (the project's, or the common default).
    pub fn thickness_tolerance(&self) -> f64 {
        self.thickness_tolerance_pct
            .unwrap_or(DEFAULT_THICKNESS_TOLERANCE_PCT)
    }

    /// `finished_m` against the target thickness, when one is set.
    pub fn thickness_check(&self, finished_m: f64) -> Option<ThicknessCheck> {
        let target_m = self.target_thickness_m?;
        let difference_m = finished_m - target_m;
        let difference_pct = 100.0 * difference_m / target_m;
        let tolerance_pct = self.thickness_tolerance();
        Some(ThicknessCheck {
            target_m,
            finished_m,
            difference_m,
            difference_pct,
            tolerance_pct,
            // A relative slack of 1e-9 keeps a board exactly at the limit inside it despite rounding.
            within: difference_pct.abs() <= tolerance_pct * (1.0 + 1e-9),
        })
    }

    /// The base foil under the plating of an outer copper layer `finished_m` thick, m (the whole thickness when no
    /// plating is given).
    pub fn base_foil_m(&self, finished_m: f64) -> f64 {
        finished_m - self.outer_plating_m.unwrap_or(0.0)
    }
}

/// The whole design as saved and shared.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Project {
    pub schema: u32,
    pub title: String,
    #[serde(default)]
    pub revision: String,
    /// Preferred display unit for lengths; the stored values are always metres.
    #[serde(default)]
    pub units: LengthUnit,
    /// Frequency for loss and delay in the results table, Hz.
    #[serde(default = "default_freq")]
    pub analysis_freq_hz: f64,
    #[serde(default)]
    pub fab: Fab,
    /// Options of the loss model (conductivity, dielectric and dispersion models).
    #[serde(
        default,
        skip_serializing_if = "crate::design::loss_options::LossOptions::is_default"
    )]
    pub loss: crate::design::loss_options::LossOptions,
    /// Process variation for tolerance spread; `None` takes the common-practice defaults of [`Process::default`].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub process: Option<Process>,
    /// What the routing figures (spacing for crosstalk, reach) are judged against; the common-practice defaults
    /// when absent, so files and links from before it open unchanged.
    #[serde(default, skip_serializing_if = "Routing::is_default")]
    pub routing: Routing,
    pub stackup: Stackup,
    #[serde(default)]
    pub rules: Vec<ImpedanceRule>,
}

/// The budgets behind each rule's routing figures.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Routing {
    /// Largest near- or far-end noise from one identical neighbour, % of the aggressor's swing.
    #[serde(default = "two")]
    pub crosstalk_budget_pct: f64,
    /// Aggressor rise time (10–90 %), s.
    #[serde(default = "fifty_ps")]
    pub rise_s: f64,
    /// Length two neighbours run side by side, m.
    #[serde(default = "quarter_decimetre")]
    pub parallel_m: f64,
    /// The intra-pair skew a pair's glass weave may add, as a share of the link's unit interval.
    #[serde(default = "tenth")]
    pub skew_budget_ui: f64,
    /// The links' loss budget for every rule's reach; no reach without it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub link: Option<LinkBudget>,
}

/// A serial link's insertion-loss budget at its Nyquist frequency.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LinkBudget {
    pub nyquist_hz: f64,
    pub budget_db: f64,
    /// Losses outside the traces (connectors, vias, packages), dB.
    #[serde(default)]
    pub fixed_db: f64,
}

impl LinkBudget {
    /// Checks the figures; errors name them.
    pub fn validate(&self) -> Result<()> {
        error::in_range(
            "link Nyquist frequency",
            self.nyquist_hz / 1e9,
            0.001,
            1000.0,
            "GHz",
        )?;
        error::in_range("link budget", self.budget_db, 0.01, 200.0, "dB")?;
        error::in_range("fixed losses", self.fixed_db, 0.0, 200.0, "dB")?;
        Ok(())
    }
}

fn two() -> f64 {
    2.0
}
fn tenth() -> f64 {
    0.1
}
fn fifty_ps() -> f64 {
    50e-12
}
fn quarter_decimetre() -> f64 {
    25e-3
}

impl Default for Routing {
    /// Common practice, no source: 2 % per neighbour, 50 ps edges, 25 mm side by side, weave skew a tenth of
    /// the unit interval.
    fn default() -> Self {
        Routing {
            crosstalk_budget_pct: two(),
            rise_s: fifty_ps(),
            parallel_m: quarter_decimetre(),
            skew_budget_ui: tenth(),
            link: None,
        }
    }
}

impl Routing {
    pub fn is_default(&self) -> bool {
        *self == Routing::default()
    }
}

/// Schema 1 → 2: a rule without `model` meant the closed form; in schema 2 it means the field engine. The
/// rules keep no `model` key, so they move to the field engine (the point of the change), and the note says so.
fn migrate_1_to_2(value: &mut serde_json::Value) -> Option<String> {
    value["schema"] = serde_json::json!(2);
    let moved: Vec<String> = value
        .get("rules")
        .and_then(|r| r.as_array())
        .into_iter()
        .flatten()
        .filter(|r| r.get("model").is_none())
        .map(|r| {
            r.get("name")
                .and_then(|n| n.as_str())
                .unwrap_or("?")
                .to_string()
        })
        .collect();
    (!moved.is_empty()).then(|| {
        format!(
            "saved by an older version, which solved {} on closed-form models; now solved on the 2D field \
             engine, so widths and figures may differ from the saved design (set a rule's model to closed form \
             for the old figures)",
            match moved.len() {
                1 => format!("rule \"{}\"", moved[0]),
                n => format!("{n} rules"),
            }
        )
    })
}

fn default_freq() -> f64 {
    1e9
}

/// The most rules a project may hold (a sanity cap for untrusted input).
pub const MAX_RULES: usize = 200;
/// The largest project text accepted, bytes.
pub const MAX_JSON_BYTES: usize = 1 << 20;

impl Project {
    /// Reads a project from JSON, migrating older schema versions; errors name the offending field's path.
    pub fn from_json(text: &str) -> Result<Project> {
        Project::from_json_noting(text).map(|(project, _)| project)
    }

    /// [`Project::from_json`], also returning what the migration from an older schema changed, in the user's
    /// words (empty for a current file): the app and the CLI say it when an old file or link opens.
    pub fn from_json_noting(text: &str) -> Result<(Project, Vec<String>)> {
        if text.len() > MAX_JSON_BYTES {
            return Err(Error::Schema {
                message: format!("file is larger than {MAX_JSON_BYTES} bytes"),
            });
        }
        let mut value: serde_json::Value =
            serde_json::from_str(text).map_err(|e| Error::Schema {
                message: format!("not valid JSON: {e}"),
            })?;
        let schema = value
            .get("schema")
            .and_then(|v| v.as_u64())
            .ok_or_else(|| Error::Schema {
                message: "field `schema` is missing or not a whole number".into(),
            })?;
        let mut notes = Vec::new();
        match schema {
            1 => notes.extend(migrate_1_to_2(&mut value)),
            s if s == u64::from(SCHEMA_VERSION) => {}
            _ => {
                return Err(Error::Schema {
                    message: format!(
                        "schema {schema} is not known to this version (it reads schemas 1 to {SCHEMA_VERSION}); \
                         open it with a newer version"
                    ),
                })
            }
        }
        let mut project: Project =
            serde_path_to_error::deserialize(value).map_err(|e| Error::Schema {
                message: format!("at `{}`: {}", e.path(), e.inner()),
            })?;
        // A constructed layer's thickness, Dk and Df are what its construction gives, whatever the file says.
        project.stackup.apply_constructions()?;
        project.validate()?;
        Ok((project, notes))
    }

    /// Pretty JSON, the same schema the CLI and the web app read.
    pub fn to_json(&self) -> String {
        serde_json::to_string_pretty(self).expect("a project always serialises")
    }

    /// Checks everything that can be checked without solving: the stack, the fab limits, each rule's fields.
    pub fn validate(&self) -> Result<()> {
        if self.title.chars().count() > 200 {
            return Err(Error::Invalid {
                field: "title".into(),
                reason: "longer than 200 characters".into(),
            });
        }
        if self.revision.chars().count() > MAX_REVISION_CHARS {
            return Err(Error::Invalid {
                field: "revision".into(),
                reason: format!("longer than {MAX_REVISION_CHARS} characters"),
            });
        }
        error::in_range("analysis_freq", self.analysis_freq_hz, 1.0, 1e12, "Hz")?;
        error::length("fab.min_trace", self.fab.min_trace_m)?;
        error::length("fab.min_space", self.fab.min_space_m)?;
        if let Some(ef) = self.fab.etch_factor {
            error::in_range("fab.etch_factor", ef, 0.5, 100.0, "")?;
        }
        self.loss.validate()?;
        let r = &self.routing;
        error::in_range("crosstalk budget", r.crosstalk_budget_pct, 0.01, 50.0, "%")?;
        error::in_range("rise time", r.rise_s * 1e12, 1.0, 1e6, "ps")?;
        error::in_range("parallel length", r.parallel_m * 1e3, 0.01, 2000.0, "mm")?;
        error::in_range("skew budget", r.skew_budget_ui, 0.001, 1.0, "UI")?;
        if let Some(l) = r.link {
            l.validate()?;
        }
        if let Some(tol) = self.fab.thickness_tolerance_pct {
            error::in_range("fab.thickness_tolerance", tol, 0.0, 50.0, "%")?;
        }
        if let Some(t) = self.fab.target_thickness_m {
            error::length("fab.target_thickness", t)?;
            error::in_range("fab.target_thickness", t, 0.0, MAX_TARGET_THICKNESS_M, "m")?;
        }
        self.stackup.validate()?;
        if let Some(plating) = self.fab.outer_plating_m {
            error::in_range("fab.outer_plating", plating, 0.0, MAX_OUTER_PLATING_M, "m")?;
            for c in self.stackup.outer_coppers() {
                if c.thickness_m <= plating {
                    return Err(Error::Invalid {
                        field: "fab.outer_plating".into(),
                        reason: format!(
                            "{} is only {} thick, which leaves no base foil under the plating",
                            c.name,
                            crate::base::units::format_length(
                                c.thickness_m,
                                crate::base::units::LengthUnit::Um
                            )
                        ),
                    });
                }
            }
        }
        if let Some(process) = &self.process {
            process.validate(&self.stackup)?;
        }
        if self.rules.len() > MAX_RULES {
            return Err(Error::Invalid {
                field: "rules".into(),
                reason: format!(
                    "{} rules is more than the {MAX_RULES} allowed",
                    self.rules.len()
                ),
            });
        }
        for (i, rule) in self.rules.iter().enumerate() {
            rule.validate(&self.stackup)
                .map_err(|e| error::prefix(e, &format!("rules[{i}] {:?}", rule.name)))?;
        }
        Ok(())
    }
}

impl ImpedanceRule {
    /// Field checks that need only the stack (geometry is checked again by the models).
    pub fn validate(&self, stackup: &Stackup) -> Result<()> {
        if self.name.chars().count() > 80 {
            return Err(Error::Invalid {
                field: "name".into(),
                reason: "longer than 80 characters".into(),
            });
        }
        if let Some(link) = &self.link {
            link.validate()?;
        }
        match stackup.find(&self.layer).map(|i| &stackup.layers[i]) {
            Some(Layer::Copper(_)) => {}
            Some(_) => {
                return Err(Error::Invalid {
                    field: "layer".into(),
                    reason: format!("{:?} is not a copper layer", self.layer),
                })
            }
            None => {
                return Err(Error::Invalid {
                    field: "layer".into(),
                    reason: format!("no layer named {:?}", self.layer),
                })
            }
        }
        error::in_range("target", self.target_ohm, 1.0, 1000.0, "Ω")?;
        error::in_range("tolerance", self.tolerance_pct, 0.0, 100.0, "%")?;
        error::length("width", self.width_m)?;
        if let Some(s) = self.spacing_m {
            error::length("spacing", s)?;
        }
        if let Some(g) = self.gap_m {
            error::length("gap", g)?;
        }
        if self.solve == Solve::Spacing
            && self.structure != Structure::EdgePair
            && self.structure != Structure::CoplanarPair
        {
            return Err(Error::Invalid {
                field: "solve".into(),
                reason: format!(
                    "only pairs side by side have a spacing to solve for, not a {}",
                    self.structure.label()
                ),
            });
        }
        if matches!(
            self.structure,
            Structure::EdgePair | Structure::CoplanarPair
        ) && self.spacing_m.is_none()
        {
            return Err(Error::Invalid {
                field: "spacing".into(),
                reason: "a pair needs a spacing".into(),
            });
        }
        if matches!(
            self.structure,
            Structure::Coplanar | Structure::CoplanarPair
        ) && self.gap_m.is_none()
        {
            return Err(Error::Invalid {
                field: "gap".into(),
                reason: "a coplanar structure needs a gap to ground".into(),
            });
        }
        if self.structure == Structure::BroadsidePair && self.partner_layer.is_none() {
            return Err(Error::Invalid {
                field: "partner_layer".into(),
                reason: "a broadside pair needs the second trace's layer".into(),
            });
        }
        for r in self.references.iter().chain(self.partner_layer.iter()) {
            if stackup
                .find(r)
                .and_then(|i| stackup.layers[i].copper())
                .is_none()
            {
                return Err(Error::Invalid {
                    field: "references".into(),
                    reason: format!("no copper layer named {r:?}"),
                });
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_round_trips_through_json() {
        let p = crate::design::demo::project();
        let back = Project::from_json(&p.to_json()).unwrap();
        assert_eq!(p, back);
    }

    #[test]
    fn target_thickness_is_optional_and_checked_against_the_tolerance() {
        // Files and links from before the field open unchanged and write it back without it.
        let p = crate::design::demo::project();
        assert_eq!(p.fab.target_thickness_m, None);
        assert!(!p.to_json().contains("target_thickness"));
        assert_eq!(p.fab.thickness_check(1.6e-3), None);
        let mut t = p.clone();
        t.fab.target_thickness_m = Some(1.6e-3);
        assert_eq!(Project::from_json(&t.to_json()).unwrap(), t);
        // 1.5 mm against 1.6 mm is −100 µm, −6.25 % (arithmetic): inside the default ±10 %, outside ±5 %.
        let c = t.fab.thickness_check(1.5e-3).unwrap();
        assert!((c.difference_m + 100e-6).abs() < 1e-12, "{c:?}");
        assert!((c.difference_pct + 6.25).abs() < 1e-9, "{c:?}");
        assert!(c.within && c.tolerance_pct == DEFAULT_THICKNESS_TOLERANCE_PCT);
        t.fab.thickness_tolerance_pct = Some(5.0);
        assert!(!t.fab.thickness_check(1.5e-3).unwrap().within);
        // Exactly at the limit is inside.
        assert!(t.fab.thickness_check(1.68e-3).unwrap().within);
        for bad in [0.0, -1e-3, f64::NAN, 1.0] {
            t.fab.target_thickness_m = Some(bad);
            let e = t.validate().unwrap_err().to_string();
            assert!(e.contains("target_thickness"), "{bad}: {e}");
        }
    }

    #[test]
    fn outer_plating_is_optional_and_leaves_base_foil() {
        // A file without the field (every file before it) opens as before and writes it back without it.
        let p = crate::design::demo::project();
        assert_eq!(p.fab.outer_plating_m, None);
        assert!(!p.to_json().contains("outer_plating"));
        let mut plated = p.clone();
        plated.fab.outer_plating_m = Some(25e-6);
        assert!(plated.validate().is_ok());
        assert_eq!(Project::from_json(&plated.to_json()).unwrap(), plated);
        let outer = plated.stackup.outer_coppers()[0].thickness_m;
        assert!((plated.fab.base_foil_m(outer) - (outer - 25e-6)).abs() < 1e-15);
        // Plating as thick as the finished outer copper leaves no foil: refused, naming the layer.
        plated.fab.outer_plating_m = Some(outer);
        let e = plated.validate().unwrap_err().to_string();
        assert!(
            e.contains("outer_plating") && e.contains("base foil"),
            "{e}"
        );
        plated.fab.outer_plating_m = Some(-1e-6);
        assert!(plated.validate().is_err());
    }

    #[test]
    fn unknown_field_is_named() {
        let mut v: serde_json::Value =
            serde_json::from_str(&crate::design::demo::project().to_json()).unwrap();
        v["stackup"][1]["colour"] = serde_json::json!("green");
        let e = Project::from_json(&v.to_string()).unwrap_err().to_string();
        assert!(e.contains("colour") && e.contains("stackup[1]"), "{e}");
    }

    #[test]
    fn wrong_type_is_named() {
        let mut v: serde_json::Value =
            serde_json::from_str(&crate::design::demo::project().to_json()).unwrap();
        v["rules"][0]["target_ohm"] = serde_json::json!("fifty");
        let e = Project::from_json(&v.to_string()).unwrap_err().to_string();
        assert!(e.contains("rules[0].target_ohm"), "{e}");
    }

    #[test]
    fn schema_1_rules_move_to_the_field_engine_and_say_so() {
        // Schema 1 left `model` out for the closed form; schema 2 leaves it out for the field engine.
        let mut v: serde_json::Value =
            serde_json::from_str(&crate::design::demo::project().to_json()).unwrap();
        v["schema"] = serde_json::json!(1);
        let (p, notes) = Project::from_json_noting(&v.to_string()).unwrap();
        assert_eq!(p.schema, SCHEMA_VERSION);
        assert!(p.rules.iter().all(|r| r.model == RuleModel::FieldSolver));
        assert_eq!(notes.len(), 1);
        assert!(
            notes[0].contains(&format!("{} rules", p.rules.len())) && notes[0].contains("field"),
            "{notes:?}"
        );
        // A rule that named its model keeps it, and then there is nothing to say about it.
        for r in v["rules"].as_array_mut().unwrap() {
            r["model"] = serde_json::json!("closed_form");
        }
        let (p, notes) = Project::from_json_noting(&v.to_string()).unwrap();
        assert!(p.rules.iter().all(|r| r.model == RuleModel::ClosedForm));
        assert!(notes.is_empty(), "{notes:?}");
        // A current file has nothing to say either.
        let current = crate::design::demo::project().to_json();
        assert!(Project::from_json_noting(&current).unwrap().1.is_empty());
    }

    #[test]
    fn future_schema_is_refused() {
        let text =
            crate::design::demo::project()
                .to_json()
                .replacen("\"schema\": 2", "\"schema\": 99", 1);
        let e = Project::from_json(&text).unwrap_err().to_string();
        assert!(e.contains("schema 99"), "{e}");
    }

    #[test]
    fn bad_rule_value_names_rule_and_field() {
        let mut p = crate::design::demo::project();
        p.rules[0].target_ohm = -5.0;
        let e = p.validate().unwrap_err().to_string();
        assert!(e.contains("rules[0]") && e.contains("target"), "{e}");
    }
}
