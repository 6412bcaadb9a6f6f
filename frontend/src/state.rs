//! The app's single state: the project being edited, the text of fields being typed, and a bounded undo history.
//! Plain Rust (no DOM), so every edit rule is unit-tested natively.
//!
//! Invariant: `project.stackup` always validates. An edit that would break it is not applied; the typed text stays
//! in its field with the core's message, and the project goes back to what it was when that edit began (issue 17:
//! a typo "12o" shows the figures of the value held before the edit, never those of the valid prefix "12").

use crate::bridge;
use ohmstack_core::base::error;
use ohmstack_core::base::units::{format_sig, LengthUnit, OZ_COPPER};
use ohmstack_core::design::material::{self, PresetUse};
use ohmstack_core::design::process::{Distribution, LayerProcess, Process, Tolerance};
use ohmstack_core::design::project::{ImpedanceRule, RuleModel, Solve, Structure};
use ohmstack_core::design::roughness::Foil;
use ohmstack_core::design::stackup::{Copper, CopperRole};
use ohmstack_core::design::starter;
use ohmstack_core::{Layer, Project};
use std::collections::BTreeMap;
use std::rc::Rc;
use yew::Reducible;

/// The most undo steps kept.
pub const HISTORY_LIMIT: usize = 100;

/// An editable text field of a layer.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum LayerField {
    Name,
    Thickness,
    Dk,
    Df,
    SpecFreq,
    Material,
    /// Copper fill, % (blank: the role's default).
    Fill,
    /// An outer copper layer's base foil under the plating.
    BaseFoil,
    /// This layer's thickness ± limit (blank: the project's limit for its kind).
    TolThickness,
    /// This layer's Dk ± limit (blank: the project's).
    TolDk,
    /// Plies of a core's or prepreg's glass construction.
    Plies,
    /// Resin content of the construction, %.
    Resin,
}

/// A ± limit of the process that the tolerance spread varies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum TolKind {
    EtchWidth,
    EtchFactor,
    CoreThickness,
    PrepregThickness,
    Dk,
    CopperThickness,
    MaskThickness,
}

impl TolKind {
    pub const ALL: [TolKind; 7] = [
        TolKind::EtchWidth,
        TolKind::EtchFactor,
        TolKind::CoreThickness,
        TolKind::PrepregThickness,
        TolKind::Dk,
        TolKind::CopperThickness,
        TolKind::MaskThickness,
    ];
    pub fn key(self) -> &'static str {
        match self {
            TolKind::EtchWidth => "etch-width",
            TolKind::EtchFactor => "etch-factor",
            TolKind::CoreThickness => "core-thickness",
            TolKind::PrepregThickness => "prepreg-thickness",
            TolKind::Dk => "dk",
            TolKind::CopperThickness => "copper-thickness",
            TolKind::MaskThickness => "mask-thickness",
        }
    }
    /// The name in tables and messages.
    pub fn label(self) -> &'static str {
        match self {
            TolKind::EtchWidth => "Etched width",
            TolKind::EtchFactor => "Etch factor",
            TolKind::CoreThickness => "Core thickness",
            TolKind::PrepregThickness => "Prepreg thickness",
            TolKind::Dk => "Laminate Dk",
            TolKind::CopperThickness => "Copper thickness",
            TolKind::MaskThickness => "Solder mask thickness",
        }
    }
    /// What the limit covers, in a few words.
    pub fn what(self) -> &'static str {
        match self {
            TolKind::EtchWidth => "whole trace width, both edges together",
            TolKind::EtchFactor => "varied only when an etch factor is set below",
            TolKind::CoreThickness => "every core",
            TolKind::PrepregThickness => "every prepreg, pressed",
            TolKind::Dk => "cores and prepregs; mask Dk is held unless a layer says",
            TolKind::CopperThickness => "every copper layer, finished",
            TolKind::MaskThickness => "over the trace",
        }
    }
    /// Lengths take a length or a percentage; Dk and etch factor a plain number or a percentage.
    pub fn is_length(self) -> bool {
        !matches!(self, TolKind::Dk | TolKind::EtchFactor)
    }
    pub fn get(self, p: &Process) -> Tolerance {
        match self {
            TolKind::EtchWidth => p.etch_width,
            TolKind::EtchFactor => p.etch_factor,
            TolKind::CoreThickness => p.core_thickness,
            TolKind::PrepregThickness => p.prepreg_thickness,
            TolKind::Dk => p.dk,
            TolKind::CopperThickness => p.copper_thickness,
            TolKind::MaskThickness => p.mask_thickness,
        }
    }
    fn get_mut(self, p: &mut Process) -> &mut Tolerance {
        match self {
            TolKind::EtchWidth => &mut p.etch_width,
            TolKind::EtchFactor => &mut p.etch_factor,
            TolKind::CoreThickness => &mut p.core_thickness,
            TolKind::PrepregThickness => &mut p.prepreg_thickness,
            TolKind::Dk => &mut p.dk,
            TolKind::CopperThickness => &mut p.copper_thickness,
            TolKind::MaskThickness => &mut p.mask_thickness,
        }
    }
    /// A limit as editable text: "12.5 µm", "10 %", "0.2".
    pub fn text(self, t: &Tolerance, unit: LengthUnit) -> String {
        match (t.abs, t.pct) {
            (Some(a), _) if self.is_length() => {
                // A limit such as ±12.5 µm is finer than the trade's whole µm: three significant digits there; the
                // other units are already fine enough at the trade's rounding (0.01 mil, 1 µm in mm).
                let number = match unit {
                    LengthUnit::Um => format_sig(unit.from_m(a), 3),
                    _ => bridge::length_text(a, unit),
                };
                format!("{number} {}", unit.symbol())
            }
            (Some(a), _) => format_sig(a, 4),
            (None, Some(p)) => format!("{} %", format_sig(p, 4)),
            (None, None) => String::new(),
        }
    }
    /// Reads a limit typed for this quantity (keeping `distribution`); errors name it in the user's words.
    pub fn parse(
        self,
        name: &str,
        text: &str,
        unit: LengthUnit,
        distribution: Distribution,
    ) -> Result<Tolerance, String> {
        let t = text
            .trim()
            .trim_start_matches('±')
            .trim_start_matches("+-")
            .trim();
        let e = |r: ohmstack_core::Result<f64>| r.map_err(|e| e.to_string());
        let tol = if let Some(p) = t.strip_suffix('%') {
            let v = bridge::parse_number(name, p.trim(), &[])?;
            Tolerance::pct(e(error::in_range(name, v, 0.0, 50.0, "%"))?)
        } else if self.is_length() {
            let v = bridge::parse_length(name, t, unit)?;
            if !(0.0..=1e-3).contains(&v) {
                return Err(format!(
                    "{name}: {} is more than 1 mm; give a length such as 10 µm, or a percentage such as 10 %",
                    bridge::length_label(v, unit)
                ));
            }
            Tolerance::abs(v)
        } else {
            let max = if self == TolKind::Dk { 5.0 } else { 50.0 };
            let v = bridge::parse_number(name, t, &[])?;
            Tolerance::abs(e(error::in_range(name, v, 0.0, max, ""))?)
        };
        Ok(tol.with(distribution))
    }
}

/// A project-wide process or fabrication field.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum ProcessField {
    /// `fab.etch_factor` (blank: rectangular traces).
    EtchFactor,
    /// `fab.outer_plating_m` (blank: not given).
    OuterPlating,
    /// `fab.thickness_tolerance_pct` (blank: the common ±10 %).
    BoardThicknessTol,
    /// `fab.target_thickness_m` (blank: no target).
    TargetThickness,
    Tol(TolKind),
}

impl ProcessField {
    pub fn key(self) -> String {
        match self {
            ProcessField::EtchFactor => "etch-factor".into(),
            ProcessField::OuterPlating => "outer-plating".into(),
            ProcessField::BoardThicknessTol => "board-thickness-tol".into(),
            ProcessField::TargetThickness => "target-thickness".into(),
            ProcessField::Tol(k) => format!("tol-{}", k.key()),
        }
    }
}

/// An editable figure of the routing budgets (`project.routing`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum RoutingField {
    /// Crosstalk budget per neighbour, %.
    CrosstalkBudget,
    /// Aggressor rise time, ps.
    Rise,
    /// Side-by-side run, in the display unit.
    Parallel,
    /// The link's Nyquist frequency, GHz (blank: no link budget, no reach).
    LinkNyquist,
    /// The link's loss budget, dB.
    LinkBudget,
    /// Fixed losses, dB.
    LinkFixed,
    /// A pair's weave-skew budget, share of the unit interval.
    SkewBudget,
}

impl RoutingField {
    pub fn key(self) -> &'static str {
        match self {
            RoutingField::CrosstalkBudget => "crosstalk-budget",
            RoutingField::Rise => "rise-time",
            RoutingField::Parallel => "parallel-length",
            RoutingField::LinkNyquist => "link-nyquist",
            RoutingField::LinkBudget => "link-budget",
            RoutingField::LinkFixed => "link-fixed",
            RoutingField::SkewBudget => "skew-budget",
        }
    }
}

/// How far a chosen glass style may move its resin content from the usual one to keep the layer's thickness,
/// ± fraction (common practice, no source: fabricators buy prepreg in a few resin contents around the usual).
pub const GLASS_RESIN_BAND: f64 = 0.06;

/// Link budget a Nyquist frequency starts with before the user sets one, dB (a round figure, not a standard's).
pub const STARTING_LINK_BUDGET_DB: f64 = 10.0;

/// An editable text field of a rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum RuleField {
    Name,
    Target,
    Tolerance,
    Width,
    Spacing,
    Gap,
    /// The rule's own link budget, dB (shown when the rule carries its own link).
    LinkBudget,
    /// The rule's own link's fixed losses, dB.
    LinkFixed,
}

/// Every text field of the app.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Field {
    Title,
    Revision,
    AnalysisFreq,
    MinTrace,
    MinSpace,
    Layer(usize, LayerField),
    Rule(usize, RuleField),
    Process(ProcessField),
    Routing(RoutingField),
}

impl Field {
    /// The DOM id (also the test hook) of the field's input.
    pub fn id(self) -> String {
        match self {
            Field::Title => "project-title".into(),
            Field::Revision => "project-revision".into(),
            Field::AnalysisFreq => "analysis-freq".into(),
            Field::MinTrace => "fab-min-trace".into(),
            Field::MinSpace => "fab-min-space".into(),
            Field::Layer(i, f) => format!(
                "layer-{i}-{}",
                match f {
                    LayerField::Name => "name",
                    LayerField::Thickness => "thickness",
                    LayerField::Dk => "dk",
                    LayerField::Df => "df",
                    LayerField::SpecFreq => "spec-freq",
                    LayerField::Material => "material",
                    LayerField::Fill => "fill",
                    LayerField::BaseFoil => "base-foil",
                    LayerField::TolThickness => "tol-thickness",
                    LayerField::TolDk => "tol-dk",
                    LayerField::Plies => "plies",
                    LayerField::Resin => "resin",
                }
            ),
            Field::Routing(r) => format!("routing-{}", r.key()),
            Field::Process(p) => match p {
                ProcessField::Tol(_) => p.key(),
                _ => format!("fab-{}", p.key()),
            },
            Field::Rule(i, f) => format!(
                "rule-{i}-{}-input",
                match f {
                    RuleField::Name => "name",
                    RuleField::Target => "target",
                    RuleField::Tolerance => "tolerance",
                    RuleField::Width => "width",
                    RuleField::Spacing => "spacing",
                    RuleField::Gap => "gap",
                    RuleField::LinkBudget => "link-budget",
                    RuleField::LinkFixed => "link-fixed",
                }
            ),
        }
    }
}

/// Text being typed into a field, and the core's message when it does not (yet) make a valid design.
#[derive(Debug, Clone, PartialEq)]
pub struct Draft {
    pub text: String,
    pub error: Option<String>,
}

/// A message for the status line.
#[derive(Debug, Clone, PartialEq)]
pub struct Notice {
    pub error: bool,
    pub text: String,
}

/// The layer types offered in the type menu.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LayerKind {
    Copper,
    Core,
    Prepreg,
    SolderMask,
}

impl LayerKind {
    pub const ALL: [LayerKind; 4] = [
        LayerKind::Copper,
        LayerKind::Core,
        LayerKind::Prepreg,
        LayerKind::SolderMask,
    ];
    pub fn of(layer: &Layer) -> LayerKind {
        match layer {
            Layer::Copper(_) => LayerKind::Copper,
            Layer::Core(_) => LayerKind::Core,
            Layer::Prepreg(_) => LayerKind::Prepreg,
            Layer::SolderMask(_) => LayerKind::SolderMask,
        }
    }
    pub fn label(self) -> &'static str {
        match self {
            LayerKind::Copper => "copper",
            LayerKind::Core => "core",
            LayerKind::Prepreg => "prepreg",
            LayerKind::SolderMask => "solder mask",
        }
    }
    pub fn key(self) -> &'static str {
        match self {
            LayerKind::Copper => "copper",
            LayerKind::Core => "core",
            LayerKind::Prepreg => "prepreg",
            LayerKind::SolderMask => "solder-mask",
        }
    }
    pub fn from_key(key: &str) -> Option<LayerKind> {
        LayerKind::ALL.into_iter().find(|k| k.key() == key)
    }
}

/// Everything the app holds.
#[derive(Debug, Clone, PartialEq)]
pub struct State {
    pub project: Project,
    /// Earlier projects, oldest first.
    pub undo: Vec<Project>,
    /// Undone projects, most recent last.
    pub redo: Vec<Project>,
    pub drafts: BTreeMap<Field, Draft>,
    pub notice: Option<Notice>,
    /// The edit in progress: further typing in its field extends the same undo step and is applied to the project
    /// as it was when the edit began.
    editing: Option<EditStart>,
}

/// The project as it was when typing into one field began.
#[derive(Debug, Clone, PartialEq)]
struct EditStart {
    field: Field,
    project: Project,
    /// Whether that project has been pushed onto the undo history by this edit.
    pushed: bool,
}

impl Default for State {
    fn default() -> Self {
        State::new(ohmstack_core::design::demo::project())
    }
}

/// Edits the user can make.
#[derive(Debug, Clone, PartialEq)]
pub enum Action {
    /// Text typed into a field.
    Edit(Field, String),
    /// The field lost focus: a valid draft gives way to the stored value's own formatting.
    Blur(Field),
    SetUnit(LengthUnit),
    SetLayerKind(usize, LayerKind),
    SetCopperRole(usize, CopperRole),
    /// Copper weight in oz/ft².
    SetCopperWeight(usize, f64),
    ApplyPreset(usize, &'static str),
    /// Build a core or prepreg from this glass style (its plies and resin content chosen to keep the thickness as
    /// near as the style allows), or enter its thickness and Dk directly again ("").
    SetGlass(usize, String),
    /// Insert a new layer below `usize` (the other kind: dielectric under copper, copper under dielectric), named
    /// by its position.
    InsertLayer(usize),
    /// Insert a new layer above `usize`, as [`Action::InsertLayer`] does below.
    InsertAbove(usize),
    /// Rename every copper layer "L1 …", "L2 …" from the top (keeping what follows the number) and every core and
    /// prepreg by the copper around it; rules and per-layer limits follow the new names.
    RenumberLayers,
    /// Replace the stack by the starter of this many copper layers (rules kept and moved by position); one undo step.
    Starter(usize),
    /// Append a layer at the bottom.
    AddLayer,
    RemoveLayer(usize),
    DuplicateLayer(usize),
    /// Move a layer one place up (`true`) or down.
    MoveLayer(usize, bool),
    AddRule,
    RemoveRule(usize),
    DuplicateRule(usize),
    SetRuleLayer(usize, String),
    SetRuleStructure(usize, Structure),
    SetRuleSolve(usize, Solve),
    SetRuleModel(usize, RuleModel),
    /// The rule's own link, one of the presets (`line::reach::LINK_PRESETS`, by index), or the board's (`None`).
    SetRuleLink(usize, Option<usize>),
    SetRulePartner(usize, String),
    /// Build a rule as shown: these width and spacing, solving for nothing (the nearest design to a target out of
    /// reach).
    UseDimensions(usize, f64, Option<f64>),
    /// The distribution of one process limit.
    SetDistribution(TolKind, Distribution),
    /// A copper layer's surface: a generic foil class, or smooth (`None`).
    SetFoil(usize, Option<Foil>),
    Undo,
    Redo,
    /// Replace the whole project (new, open, demo); undoable. The message says what was opened; the reducer adds
    /// that Undo brings the old design back only when there was work to bring back.
    Load(Box<Project>, String),
    /// Switch to another saved project with its own history (reopened from the recent list), with a message.
    Reopen(Box<State>, String),
    Notify(Option<Notice>),
}

fn unique_name(project: &Project, base: &str) -> String {
    let taken = |n: &str| project.stackup.layers.iter().any(|l| l.name() == n);
    if !taken(base) {
        return base.to_string();
    }
    (2..10_000)
        .map(|k| format!("{base} {k}"))
        .find(|n| !taken(n))
        .unwrap_or_else(|| format!("{base} {}", project.stackup.layers.len() + 1))
}

fn unique_rule_name(project: &Project, base: &str) -> String {
    let taken = |n: &str| project.rules.iter().any(|r| r.name == n);
    if !taken(base) {
        return base.to_string();
    }
    (2..10_000)
        .map(|k| format!("{base} {k}"))
        .find(|n| !taken(n))
        .unwrap_or_else(|| base.to_string())
}

fn new_copper(name: String) -> Layer {
    Layer::Copper(Copper {
        name,
        thickness_m: OZ_COPPER,
        role: CopperRole::Signal,
        fill_pct: None,
        roughness: None,
    })
}

fn rename_layer(layer: &mut Layer, name: String) {
    match layer {
        Layer::Copper(c) => c.name = name,
        Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d) => d.name = name,
    }
}

/// The name a layer inserted at `at` of `p` gets from where it sits: copper "L3" by its place among the copper
/// layers (or "L3 new" where a layer already carries that number), a prepreg by the copper around it
/// ("Prepreg L2–L3"). Existing names are left alone, so rules naming them stay as they are.
fn positional_name(p: &Project, at: usize, copper: bool) -> String {
    let layers = &p.stackup.layers;
    if copper {
        let k = layers[..at].iter().filter(|l| l.copper().is_some()).count() + 1;
        let tag = format!("L{k}");
        let numbered = layers
            .iter()
            .filter_map(Layer::copper)
            .any(|c| starter::copper_tag(&c.name) == tag);
        unique_name(p, &if numbered { format!("{tag} new") } else { tag })
    } else {
        let above = layers[..at].iter().rev().find_map(Layer::copper);
        // `at` holds the new layer's placeholder (or is past the end): what is below starts after it.
        let below = layers
            .get(at + 1..)
            .unwrap_or(&[])
            .iter()
            .find_map(Layer::copper);
        let name = starter::dielectric_name(
            "Prepreg",
            above.map(|c| c.name.as_str()),
            below.map(|c| c.name.as_str()),
        );
        unique_name(p, &name)
    }
}

/// Renames layers by the map `(old, new)` in the stack, the rules (layer, partner, references) and the per-layer
/// process limits, all at once (so "L3 → L4" and "L4 → L5" do not collide).
fn rename_all(p: &mut Project, map: &BTreeMap<String, String>) {
    let to = |n: &mut String| {
        if let Some(new) = map.get(n.as_str()) {
            *n = new.clone();
        }
    };
    for layer in &mut p.stackup.layers {
        let mut name = layer.name().to_string();
        to(&mut name);
        rename_layer(layer, name);
    }
    for r in &mut p.rules {
        to(&mut r.layer);
        if let Some(partner) = r.partner_layer.as_mut() {
            to(partner);
        }
        r.references.iter_mut().for_each(to);
    }
    for o in p.process.iter_mut().flat_map(|pr| pr.layers.iter_mut()) {
        to(&mut o.layer);
    }
}

/// The renumbering of [`Action::RenumberLayers`]: copper "L<k> <rest>" from the top (a name without a number keeps
/// it after the new one; a trailing "new" from an insert goes), cores and prepregs "Core L2–L3".
fn renumbered(p: &Project) -> BTreeMap<String, String> {
    let layers = &p.stackup.layers;
    let mut k = 0;
    let coppers: Vec<Option<String>> = layers
        .iter()
        .map(|l| {
            l.copper().map(|c| {
                k += 1;
                let name = c.name.trim();
                let tag = starter::copper_tag(name);
                // `copper_tag` gives back the whole name unless it starts with a number tag such as "L3".
                let numbered = tag.starts_with('L')
                    && tag.len() > 1
                    && tag[1..].chars().all(|ch| ch.is_ascii_digit());
                let rest = if numbered {
                    let after = name.strip_prefix(tag).unwrap_or_default().trim();
                    after.strip_suffix("new").unwrap_or(after).trim()
                } else {
                    name
                };
                if rest.is_empty() {
                    format!("L{k}")
                } else {
                    format!("L{k} {rest}")
                }
            })
        })
        .collect();
    let mut taken: Vec<String> = Vec::new();
    let mut map = BTreeMap::new();
    for (i, layer) in layers.iter().enumerate() {
        let new = match layer {
            Layer::Copper(_) => coppers[i].clone().unwrap_or_default(),
            Layer::Core(_) | Layer::Prepreg(_) => {
                let above = coppers[..i].iter().rev().flatten().next();
                let below = coppers[i..].iter().flatten().next();
                let kind = if matches!(layer, Layer::Core(_)) {
                    "Core"
                } else {
                    "Prepreg"
                };
                starter::dielectric_name(kind, above.map(String::as_str), below.map(String::as_str))
            }
            Layer::SolderMask(_) => layer.name().to_string(),
        };
        let mut name = new.clone();
        let mut n = 2;
        // Two prepregs between the same copper, or a mask already named like one: numbered apart.
        while taken.contains(&name) {
            name = format!("{new} {n}");
            n += 1;
        }
        taken.push(name.clone());
        if name != layer.name() {
            map.insert(layer.name().to_string(), name);
        }
    }
    map
}

impl State {
    pub fn new(project: Project) -> State {
        State {
            project,
            undo: Vec::new(),
            redo: Vec::new(),
            drafts: BTreeMap::new(),
            notice: None,
            editing: None,
        }
    }

    /// A state restored from storage with its history.
    pub fn restored(project: Project, undo: Vec<Project>, redo: Vec<Project>) -> State {
        State {
            undo,
            redo,
            ..State::new(project)
        }
    }

    /// Whether replacing the project would lose something Undo should bring back: edits made, or a design other
    /// than the untouched demo a fresh browser starts with.
    pub fn has_work(&self) -> bool {
        !self.undo.is_empty() || self.project != ohmstack_core::design::demo::project()
    }

    /// True while some field holds text that could not be applied.
    pub fn has_errors(&self) -> bool {
        self.drafts.values().any(|d| d.error.is_some())
    }

    /// Stores `project` as the new current design, remembering the old one for undo; ends any edit in progress.
    fn commit(&mut self, project: Project) {
        self.editing = None;
        if project == self.project {
            return;
        }
        let old = std::mem::replace(&mut self.project, project);
        self.push_undo(old);
    }

    fn push_undo(&mut self, old: Project) {
        self.undo.push(old);
        if self.undo.len() > HISTORY_LIMIT {
            let excess = self.undo.len() - HISTORY_LIMIT;
            self.undo.drain(..excess);
        }
        self.redo.clear();
    }

    /// A structural change: drafts refer to positions that may have moved, so they go.
    fn structural(&mut self, project: Project) {
        self.drafts.clear();
        self.commit(project);
    }

    /// True while text is being typed into a field (until it loses focus or Enter is pressed): the figures follow
    /// each keystroke, the tolerance spread waits for a pause (app.rs).
    pub fn typing(&self) -> bool {
        self.editing.is_some()
    }

    /// Ends the edit in progress: the next keystroke anywhere starts a new undo step from the project as it is.
    fn end_edit(&mut self) {
        self.editing = None;
    }

    /// Typing into `field`: the text is applied to the project as it was when this edit began, so an invalid text
    /// leaves exactly that project (not the last valid prefix) and every keystroke of one field is one undo step.
    fn edit(&mut self, field: Field, text: String) {
        let mut start = match self.editing.take() {
            Some(e) if e.field == field => e,
            _ => EditStart {
                field,
                project: self.project.clone(),
                pushed: false,
            },
        };
        let base = start.project.clone();
        let (project, error) = match Self::apply_text_to(&base, field, &text) {
            Ok(project) => (project, None),
            Err(message) => (base.clone(), Some(user_words(&message))),
        };
        self.drafts.insert(field, Draft { text, error });
        let changed = project != base;
        if changed && !start.pushed {
            self.push_undo(base);
            start.pushed = true;
        } else if !changed && start.pushed {
            // Back to where the edit began: the step it opened holds nothing.
            self.undo.pop();
            start.pushed = false;
        }
        self.project = project;
        self.editing = Some(start);
    }

    /// A project-wide process field typed as `text`.
    fn process_text(p: &mut Project, f: ProcessField, text: &str) -> Result<(), String> {
        let unit = p.units;
        let e = |r: ohmstack_core::Result<f64>| r.map_err(|e| e.to_string());
        let blank = text.trim().is_empty();
        match f {
            ProcessField::EtchFactor => {
                p.fab.etch_factor = if blank {
                    None
                } else {
                    let v = bridge::parse_number("etch factor", text, &[])?;
                    Some(e(error::in_range("etch factor", v, 0.5, 100.0, ""))?)
                };
            }
            ProcessField::BoardThicknessTol => {
                p.fab.thickness_tolerance_pct = if blank {
                    None
                } else {
                    let v = bridge::parse_number("board thickness tolerance", text, &["%"])?;
                    Some(e(error::in_range(
                        "board thickness tolerance",
                        v,
                        0.0,
                        50.0,
                        "%",
                    ))?)
                };
            }
            ProcessField::TargetThickness => {
                p.fab.target_thickness_m = if blank {
                    None
                } else {
                    let v = bridge::parse_length("target board thickness", text, unit)?;
                    let max = ohmstack_core::design::project::MAX_TARGET_THICKNESS_M;
                    if !(v > 0.0 && v <= max) {
                        return Err(format!(
                            "target board thickness: {} is outside 0 to {}",
                            bridge::length_label(v, unit),
                            bridge::length_label(max, unit)
                        ));
                    }
                    Some(v)
                };
            }
            ProcessField::OuterPlating => {
                // The outer layers keep their base foil: the finished thickness is foil plus the new plating.
                let old = p.fab.outer_plating_m.unwrap_or(0.0);
                let new = if blank {
                    None
                } else {
                    let v = bridge::parse_length("outer plating", text, unit)?;
                    if !(0.0..=ohmstack_core::design::project::MAX_OUTER_PLATING_M).contains(&v) {
                        return Err(format!(
                            "outer plating: {} is outside 0 to {}",
                            bridge::length_label(v, unit),
                            bridge::length_label(
                                ohmstack_core::design::project::MAX_OUTER_PLATING_M,
                                unit
                            )
                        ));
                    }
                    Some(v)
                };
                let outer: Vec<String> = p
                    .stackup
                    .outer_coppers()
                    .iter()
                    .map(|c| c.name.clone())
                    .collect();
                for layer in &mut p.stackup.layers {
                    if let Layer::Copper(c) = layer {
                        if outer.contains(&c.name) {
                            c.thickness_m = c.thickness_m - old + new.unwrap_or(0.0);
                        }
                    }
                }
                p.fab.outer_plating_m = new;
            }
            ProcessField::Tol(k) => {
                let mut process = p.process.clone().unwrap_or_default();
                let current = k.get(&process);
                *k.get_mut(&mut process) = if blank {
                    k.get(&Process::default()).with(current.distribution)
                } else {
                    k.parse(
                        &format!("{} tolerance", k.label().to_lowercase()),
                        text,
                        unit,
                        current.distribution,
                    )?
                };
                p.process = Some(process);
            }
        }
        p.validate().map_err(|e| e.to_string())
    }

    /// One layer's own thickness or Dk ± limit; blank gives the layer back to the project's limit.
    fn layer_tolerance(p: &mut Project, i: usize, f: LayerField, text: &str) -> Result<(), String> {
        let unit = p.units;
        let Some(layer) = p.stackup.layers.get(i) else {
            return Err("this layer no longer exists".into());
        };
        let name = layer.name().to_string();
        let (kind, what) = match (f, layer) {
            (LayerField::TolDk, Layer::Copper(_)) => {
                return Err(format!("{name}: copper has no Dk"));
            }
            (LayerField::TolDk, _) => (TolKind::Dk, format!("{name} Dk tolerance")),
            (_, Layer::Copper(_)) => (
                TolKind::CopperThickness,
                format!("{name} thickness tolerance"),
            ),
            (_, Layer::Core(_)) => (
                TolKind::CoreThickness,
                format!("{name} thickness tolerance"),
            ),
            (_, Layer::Prepreg(_)) => (
                TolKind::PrepregThickness,
                format!("{name} thickness tolerance"),
            ),
            (_, Layer::SolderMask(_)) => (
                TolKind::MaskThickness,
                format!("{name} thickness tolerance"),
            ),
        };
        let mut process = p.process.clone().unwrap_or_default();
        let at = process.layers.iter().position(|o| o.layer == name);
        let tol = if text.trim().is_empty() {
            None
        } else {
            Some(kind.parse(&what, text, unit, kind.get(&process).distribution)?)
        };
        let entry = match at {
            Some(k) => &mut process.layers[k],
            None => {
                process.layers.push(LayerProcess {
                    layer: name,
                    thickness: None,
                    dk: None,
                });
                process.layers.last_mut().expect("just pushed")
            }
        };
        if f == LayerField::TolDk {
            entry.dk = tol;
        } else {
            entry.thickness = tol;
        }
        process
            .layers
            .retain(|o| o.thickness.is_some() || o.dk.is_some());
        p.process = Some(process);
        p.validate().map_err(|e| e.to_string())
    }

    /// A routing budget from its text; the project's own check names the figure when it is out of range.
    fn routing_text(p: &mut Project, f: RoutingField, text: &str) -> Result<(), String> {
        use ohmstack_core::design::project::LinkBudget;
        let r = &mut p.routing;
        let number = |what: &str, suffixes: &[&str]| bridge::parse_number(what, text, suffixes);
        match f {
            RoutingField::CrosstalkBudget => {
                r.crosstalk_budget_pct = number("crosstalk budget", &["%"])?
            }
            RoutingField::Rise => r.rise_s = number("rise time", &["ps"])? * 1e-12,
            RoutingField::Parallel => {
                r.parallel_m = bridge::parse_length("parallel length", text, p.units)?
            }
            RoutingField::SkewBudget => r.skew_budget_ui = number("skew budget", &["UI"])?,
            RoutingField::LinkNyquist if text.trim().is_empty() => r.link = None,
            RoutingField::LinkNyquist => {
                let f = bridge::parse_frequency_ghz("link Nyquist frequency", text)?;
                let old = r.link;
                r.link = Some(LinkBudget {
                    nyquist_hz: f,
                    budget_db: old.map_or(STARTING_LINK_BUDGET_DB, |l| l.budget_db),
                    fixed_db: old.map_or(0.0, |l| l.fixed_db),
                });
            }
            RoutingField::LinkBudget | RoutingField::LinkFixed => {
                let Some(link) = r.link.as_mut() else {
                    return Err("link budget: set the link's Nyquist frequency first".into());
                };
                let v = number(
                    if f == RoutingField::LinkBudget {
                        "link budget"
                    } else {
                        "fixed losses"
                    },
                    &["dB"],
                )?;
                if f == RoutingField::LinkBudget {
                    link.budget_db = v;
                } else {
                    link.fixed_db = v;
                }
            }
        }
        p.validate().map_err(|e| e.to_string())
    }

    /// The project with `text` applied to `field`, or the core's message why it cannot be.
    fn apply_text_to(base: &Project, field: Field, text: &str) -> Result<Project, String> {
        let unit = base.units;
        let mut p = base.clone();
        let e = |r: ohmstack_core::Result<f64>| r.map_err(|e| e.to_string());
        match field {
            Field::Title => {
                if text.chars().count() > 200 {
                    return Err("title: longer than 200 characters".into());
                }
                p.title = text.to_string();
            }
            Field::Revision => {
                p.revision = text.trim().to_string();
                p.validate().map_err(|e| e.to_string())?;
            }
            Field::AnalysisFreq => {
                let f = bridge::parse_frequency_ghz("analysis frequency", text)?;
                p.analysis_freq_hz = e(error::in_range("analysis frequency", f, 1.0, 1e12, "Hz"))?;
            }
            Field::MinTrace => {
                let v = bridge::parse_length("minimum trace", text, unit)?;
                p.fab.min_trace_m = e(error::length("minimum trace", v))?;
            }
            Field::MinSpace => {
                let v = bridge::parse_length("minimum space", text, unit)?;
                p.fab.min_space_m = e(error::length("minimum space", v))?;
            }
            Field::Layer(i, f @ (LayerField::TolThickness | LayerField::TolDk)) => {
                Self::layer_tolerance(&mut p, i, f, text)?
            }
            Field::Layer(i, f) => {
                let Some(layer) = p.stackup.layers.get_mut(i) else {
                    return Err("this layer no longer exists".into());
                };
                let old_name = layer.name().to_string();
                let name = old_name.clone();
                match (f, &mut *layer) {
                    (LayerField::Name, layer) => rename_layer(layer, text.trim().to_string()),
                    (LayerField::Thickness, Layer::Copper(c)) => {
                        c.thickness_m = bridge::parse_length("thickness", text, unit)?
                    }
                    (
                        LayerField::Thickness,
                        Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d),
                    ) => {
                        // A thickness typed in is entered directly: the layer is no longer built from glass.
                        d.construction = None;
                        d.thickness_m = bridge::parse_length("thickness", text, unit)?
                    }
                    (LayerField::Plies | LayerField::Resin, Layer::Core(d) | Layer::Prepreg(d)) => {
                        let Some(c) = d.construction.as_mut() else {
                            return Err(format!("{name}: choose a glass style first"));
                        };
                        if f == LayerField::Plies {
                            c.plies = text.trim().parse::<u32>().map_err(|_| {
                                format!("{name} plies: {:?} is not a whole number", text.trim())
                            })?;
                        } else {
                            c.resin_pct = bridge::parse_number("resin content", text, &["%"])?;
                        }
                    }
                    (f, Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d)) => match f {
                        LayerField::Dk => {
                            d.construction = None;
                            d.dk = bridge::parse_number("dk", text, &[])?
                        }
                        LayerField::Df => {
                            d.construction = None;
                            d.df = bridge::parse_number("df", text, &[])?
                        }
                        LayerField::SpecFreq => {
                            d.spec_freq_hz = bridge::parse_frequency_ghz("spec_freq", text)?
                        }
                        LayerField::Material => d.material = text.to_string(),
                        _ => return Err(format!("{name}: a dielectric has no such field")),
                    },
                    (LayerField::Fill, Layer::Copper(c)) => {
                        let what = format!("{name} copper fill");
                        c.fill_pct = if text.trim().is_empty() {
                            None
                        } else {
                            let v = bridge::parse_number(&what, text, &["%"])?;
                            Some(e(error::in_range(&what, v, 0.0, 100.0, "%"))?)
                        };
                    }
                    (LayerField::BaseFoil, Layer::Copper(c)) => {
                        let what = format!("{name} base foil");
                        let v = bridge::parse_length(&what, text, unit)?;
                        let foil = e(error::length(&what, v))?;
                        c.thickness_m = foil + base.fab.outer_plating_m.unwrap_or(0.0);
                    }
                    (_, Layer::Copper(_)) => return Err("copper has no such field".into()),
                }
                p.stackup.apply_constructions().map_err(|e| e.to_string())?;
                p.stackup.validate().map_err(|e| e.to_string())?;
                let new_name = p.stackup.layers[i].name().to_string();
                if new_name != old_name {
                    for r in &mut p.rules {
                        if r.layer == old_name {
                            r.layer = new_name.clone();
                        }
                        if r.partner_layer.as_deref() == Some(&old_name) {
                            r.partner_layer = Some(new_name.clone());
                        }
                        for reference in &mut r.references {
                            if *reference == old_name {
                                *reference = new_name.clone();
                            }
                        }
                    }
                    // A layer's own process limits follow its name.
                    for o in p.process.iter_mut().flat_map(|pr| pr.layers.iter_mut()) {
                        if o.layer == old_name {
                            o.layer = new_name.clone();
                        }
                    }
                }
            }
            Field::Process(f) => Self::process_text(&mut p, f, text)?,
            Field::Routing(f) => Self::routing_text(&mut p, f, text)?,
            Field::Rule(i, f) => {
                let Some(rule) = p.rules.get_mut(i) else {
                    return Err("this rule no longer exists".into());
                };
                match f {
                    RuleField::Name => {
                        if text.chars().count() > 80 {
                            return Err("name: longer than 80 characters".into());
                        }
                        rule.name = text.to_string();
                    }
                    RuleField::Target => {
                        let v = bridge::parse_number("target", text, &["ohm", "ohms", "Ω"])?;
                        rule.target_ohm = e(error::in_range("target", v, 1.0, 1000.0, "Ω"))?;
                    }
                    RuleField::Tolerance => {
                        let v = bridge::parse_number("tolerance", text, &["%"])?;
                        rule.tolerance_pct = e(error::in_range("tolerance", v, 0.0, 100.0, "%"))?;
                    }
                    RuleField::Width => {
                        let v = bridge::parse_length("width", text, unit)?;
                        rule.width_m = e(error::length("width", v))?;
                    }
                    RuleField::Spacing => {
                        let v = bridge::parse_length("spacing", text, unit)?;
                        rule.spacing_m = Some(e(error::length("spacing", v))?);
                    }
                    RuleField::Gap => {
                        let v = bridge::parse_length("gap", text, unit)?;
                        rule.gap_m = Some(e(error::length("gap", v))?);
                    }
                    RuleField::LinkBudget | RuleField::LinkFixed => {
                        let Some(link) = rule.link.as_mut() else {
                            return Err("link: choose the rule's link first".into());
                        };
                        if f == RuleField::LinkBudget {
                            link.budget_db = bridge::parse_number("link budget", text, &["dB"])?;
                        } else {
                            link.fixed_db = bridge::parse_number("fixed losses", text, &["dB"])?;
                        }
                        link.validate().map_err(|e| e.to_string())?;
                    }
                }
            }
        }
        Ok(p)
    }

    fn set_structure(rule: &mut ImpedanceRule, structure: Structure, project: &Project) {
        rule.structure = structure;
        if structure.is_pair() && structure != Structure::BroadsidePair && rule.spacing_m.is_none()
        {
            rule.spacing_m = Some(rule.width_m);
        }
        if matches!(structure, Structure::Coplanar | Structure::CoplanarPair)
            && rule.gap_m.is_none()
        {
            rule.gap_m = Some(rule.width_m.max(project.fab.min_space_m));
        }
        if structure == Structure::BroadsidePair {
            let ok = rule
                .partner_layer
                .as_deref()
                .is_some_and(|p| p != rule.layer && project.stackup.find(p).is_some());
            if !ok {
                rule.partner_layer = bridge::broadside_partners(&project.stackup, &rule.layer)
                    .into_iter()
                    .next()
                    .or_else(|| {
                        project
                            .stackup
                            .layers
                            .iter()
                            .filter_map(|l| l.copper())
                            .find(|c| c.name != rule.layer)
                            .map(|c| c.name.clone())
                    });
            }
        } else {
            rule.partner_layer = None;
        }
        if rule.solve == Solve::Spacing
            && !matches!(structure, Structure::EdgePair | Structure::CoplanarPair)
        {
            rule.solve = Solve::Width;
        }
    }

    fn layer_action(&mut self, action: Action) {
        let mut p = self.project.clone();
        let n = p.stackup.layers.len();
        match action {
            Action::SetLayerKind(i, kind) => {
                let Some(old) = p.stackup.layers.get(i).cloned() else {
                    return;
                };
                if LayerKind::of(&old) == kind {
                    return;
                }
                let name = old.name().to_string();
                let dielectric = old.dielectric().cloned();
                let mask = material::PRESETS
                    .iter()
                    .find(|m| m.used_for == PresetUse::Mask)
                    .map(|m| m.id)
                    .unwrap_or("fr4");
                let base = |preset: &str, t: f64| {
                    dielectric
                        .clone()
                        .unwrap_or_else(|| starter::laminate(name.clone(), preset, t))
                };
                p.stackup.layers[i] = match kind {
                    LayerKind::Copper => new_copper(name.clone()),
                    LayerKind::Core => Layer::Core(base("fr4", 200e-6)),
                    LayerKind::Prepreg => Layer::Prepreg(base("fr4", 100e-6)),
                    LayerKind::SolderMask => Layer::SolderMask(base(mask, 20e-6)),
                };
            }
            Action::SetCopperRole(i, role) => {
                if let Some(Layer::Copper(c)) = p.stackup.layers.get_mut(i) {
                    c.role = role;
                }
            }
            Action::SetCopperWeight(i, oz) => {
                if let Some(Layer::Copper(c)) = p.stackup.layers.get_mut(i) {
                    c.thickness_m = oz * OZ_COPPER;
                }
            }
            Action::ApplyPreset(i, id) => {
                let (Some(preset), Some(layer)) =
                    (material::preset(id), p.stackup.layers.get_mut(i))
                else {
                    return;
                };
                if let Layer::Core(d) | Layer::Prepreg(d) | Layer::SolderMask(d) = layer {
                    d.material = preset.name.to_string();
                    d.dk = preset.dk;
                    d.df = preset.df;
                    d.spec_freq_hz = preset.spec_freq_hz;
                    // A built layer keeps its glass; the preset is its new datasheet point.
                    if let Some(c) = d.construction.as_mut() {
                        c.datasheet_dk = preset.dk;
                        c.datasheet_df = preset.df;
                    }
                }
                if p.stackup.apply_constructions().is_err() {
                    return;
                }
            }
            Action::SetGlass(i, style) => {
                use ohmstack_core::design::construction::glass_style;
                use ohmstack_core::plan::proposal::nearest_construction;
                let core = matches!(p.stackup.layers.get(i), Some(Layer::Core(_)));
                let Some(Layer::Core(d) | Layer::Prepreg(d)) = p.stackup.layers.get_mut(i) else {
                    return;
                };
                if style.is_empty() {
                    d.construction = None;
                } else {
                    let Ok(g) = glass_style(&style) else { return };
                    let datasheet = d
                        .construction
                        .as_ref()
                        .map_or((d.dk, d.df), |c| (c.datasheet_dk, c.datasheet_df));
                    let max_plies = if core { 12 } else { 6 };
                    d.construction = Some(nearest_construction(
                        d.thickness_m,
                        datasheet,
                        &[g],
                        max_plies,
                        GLASS_RESIN_BAND,
                    ));
                }
                if p.stackup.apply_constructions().is_err() {
                    return;
                }
            }
            Action::InsertLayer(i) | Action::InsertAbove(i) => {
                if i >= n {
                    return;
                }
                let at = if matches!(action, Action::InsertAbove(_)) {
                    i
                } else {
                    i + 1
                };
                let copper = !matches!(p.stackup.layers[i], Layer::Copper(_));
                // Named in the stack as it will be, with a placeholder in the new layer's place.
                let mut probe = p.clone();
                probe.stackup.layers.insert(at, new_copper(String::new()));
                let name = positional_name(&probe, at, copper);
                let layer = if copper {
                    new_copper(name)
                } else {
                    Layer::Prepreg(starter::laminate(name, "fr4", 100e-6))
                };
                p.stackup.layers.insert(at, layer);
            }
            Action::RenumberLayers => {
                let map = renumbered(&p);
                rename_all(&mut p, &map);
            }
            Action::AddLayer => {
                let copper = !matches!(p.stackup.layers.last(), Some(Layer::Copper(_)));
                let name = positional_name(&p, n, copper);
                p.stackup.layers.push(if copper {
                    new_copper(name)
                } else {
                    Layer::Prepreg(starter::laminate(name, "fr4", 100e-6))
                });
            }
            Action::RemoveLayer(i) => {
                if n <= 1 {
                    self.notice = Some(Notice {
                        error: true,
                        text: "a stack needs at least one layer".into(),
                    });
                    return;
                }
                if i < n {
                    let gone = p.stackup.layers.remove(i);
                    // Its own process limits go with it.
                    if let Some(pr) = p.process.as_mut() {
                        pr.layers.retain(|o| o.layer != gone.name());
                    }
                }
            }
            Action::DuplicateLayer(i) => {
                let Some(mut copy) = p.stackup.layers.get(i).cloned() else {
                    return;
                };
                let name = unique_name(&p, &format!("{} copy", copy.name()));
                rename_layer(&mut copy, name);
                p.stackup.layers.insert(i + 1, copy);
            }
            Action::MoveLayer(i, up) => {
                let j = if up { i.checked_sub(1) } else { Some(i + 1) };
                match j {
                    Some(j) if i < n && j < n => p.stackup.layers.swap(i, j),
                    _ => return,
                }
            }
            _ => return,
        }
        if p.stackup.layers.len() > ohmstack_core::design::stackup::MAX_LAYERS {
            self.notice = Some(Notice {
                error: true,
                text: format!(
                    "a stack may have at most {} layers",
                    ohmstack_core::design::stackup::MAX_LAYERS
                ),
            });
            return;
        }
        match p.stackup.validate() {
            Ok(()) => self.structural(p),
            Err(e) => {
                self.notice = Some(Notice {
                    error: true,
                    text: e.to_string(),
                })
            }
        }
    }

    fn rule_action(&mut self, action: Action) {
        let mut p = self.project.clone();
        let n = p.rules.len();
        match action {
            Action::AddRule => {
                if n >= ohmstack_core::design::project::MAX_RULES {
                    return;
                }
                let layer = p
                    .stackup
                    .layers
                    .iter()
                    .filter_map(|l| l.copper())
                    .find(|c| c.role != CopperRole::Plane)
                    .or_else(|| p.stackup.layers.iter().find_map(|l| l.copper()))
                    .map(|c| c.name.clone())
                    .unwrap_or_default();
                let name = unique_rule_name(&p, "Single-ended 50 Ω");
                p.rules.push(ImpedanceRule {
                    name,
                    layer,
                    structure: Structure::Single,
                    target_ohm: 50.0,
                    tolerance_pct: 10.0,
                    solve: Solve::Width,
                    model: Default::default(),
                    width_m: 150e-6,
                    spacing_m: None,
                    gap_m: None,
                    partner_layer: None,
                    references: Vec::new(),
                    link: None,
                });
            }
            Action::RemoveRule(i) if i < n => {
                p.rules.remove(i);
            }
            Action::DuplicateRule(i) if i < n && n < ohmstack_core::design::project::MAX_RULES => {
                let mut copy = p.rules[i].clone();
                copy.name = unique_rule_name(&p, &format!("{} copy", copy.name));
                p.rules.insert(i + 1, copy);
            }
            Action::SetRuleLayer(i, layer) if i < n => {
                p.rules[i].layer = layer;
                let structure = p.rules[i].structure;
                let snapshot = p.clone();
                State::set_structure(&mut p.rules[i], structure, &snapshot);
            }
            Action::SetRuleStructure(i, structure) if i < n => {
                let snapshot = p.clone();
                State::set_structure(&mut p.rules[i], structure, &snapshot);
            }
            Action::SetRuleSolve(i, solve) if i < n => {
                let r = &mut p.rules[i];
                if solve == Solve::Spacing
                    && !matches!(r.structure, Structure::EdgePair | Structure::CoplanarPair)
                {
                    return;
                }
                r.solve = solve;
            }
            Action::SetRuleModel(i, model) if i < n => {
                p.rules[i].model = model;
            }
            Action::SetRuleLink(i, preset) if i < n => {
                use ohmstack_core::design::project::LinkBudget;
                use ohmstack_core::line::reach::LINK_PRESETS;
                let board = p.routing.link;
                let r = &mut p.rules[i];
                r.link = match preset.and_then(|k| LINK_PRESETS.get(k)) {
                    None => None,
                    // Budget and fixed losses start from the rule's own, else the board's.
                    Some(l) => {
                        let from = r.link.or(board);
                        Some(LinkBudget {
                            nyquist_hz: l.nyquist_hz(),
                            budget_db: from.map_or(STARTING_LINK_BUDGET_DB, |b| b.budget_db),
                            fixed_db: from.map_or(0.0, |b| b.fixed_db),
                        })
                    }
                };
            }
            Action::UseDimensions(i, width_m, spacing_m) if i < n => {
                let r = &mut p.rules[i];
                r.width_m = width_m;
                if spacing_m.is_some() {
                    r.spacing_m = spacing_m;
                }
                r.solve = Solve::Nothing;
            }
            Action::SetRulePartner(i, partner) if i < n => {
                p.rules[i].partner_layer = Some(partner);
            }
            _ => return,
        }
        self.structural(p);
    }

    fn step(&mut self, undo: bool) {
        let (from, to) = if undo {
            (&mut self.undo, &mut self.redo)
        } else {
            (&mut self.redo, &mut self.undo)
        };
        let Some(mut project) = from.pop() else {
            return;
        };
        // The display unit is a view preference, not an edit: it survives undo.
        project.units = self.project.units;
        let current = std::mem::replace(&mut self.project, project);
        to.push(current);
        self.drafts.clear();
        self.editing = None;
    }
}

impl Reducible for State {
    type Action = Action;

    fn reduce(self: Rc<Self>, action: Action) -> Rc<Self> {
        let mut s = (*self).clone();
        // A message is about the last thing done: any edit replaces or clears it, so none lingers.
        if !matches!(action, Action::Blur(_) | Action::Notify(_)) {
            s.notice = None;
        }
        match action {
            Action::Edit(field, text) => s.edit(field, text),
            Action::Blur(field) => {
                if s.drafts.get(&field).is_some_and(|d| d.error.is_none()) {
                    s.drafts.remove(&field);
                }
                s.end_edit();
            }
            Action::SetUnit(unit) => {
                // Only the display changes; valid drafts are re-shown in the new unit, stored metres stay as they are.
                s.project.units = unit;
                s.drafts.retain(|_, d| d.error.is_some());
                s.end_edit();
            }
            a @ (Action::SetLayerKind(..)
            | Action::SetCopperRole(..)
            | Action::SetCopperWeight(..)
            | Action::ApplyPreset(..)
            | Action::SetGlass(..)
            | Action::InsertLayer(_)
            | Action::InsertAbove(_)
            | Action::RenumberLayers
            | Action::AddLayer
            | Action::RemoveLayer(_)
            | Action::DuplicateLayer(_)
            | Action::MoveLayer(..)) => s.layer_action(a),
            a @ (Action::AddRule
            | Action::RemoveRule(_)
            | Action::DuplicateRule(_)
            | Action::SetRuleLayer(..)
            | Action::SetRuleStructure(..)
            | Action::SetRuleSolve(..)
            | Action::SetRuleModel(..)
            | Action::SetRuleLink(..)
            | Action::SetRulePartner(..)
            | Action::UseDimensions(..)) => s.rule_action(a),
            Action::SetDistribution(k, distribution) => {
                let mut p = s.project.clone();
                let mut process = p.process.clone().unwrap_or_default();
                k.get_mut(&mut process).distribution = distribution;
                p.process = Some(process);
                s.commit(p);
            }
            Action::SetFoil(i, foil) => {
                let mut p = s.project.clone();
                if let Some(Layer::Copper(c)) = p.stackup.layers.get_mut(i) {
                    c.roughness = foil.map(Foil::hammerstad_groiss);
                    s.commit(p);
                }
            }
            Action::Starter(copper_layers) => {
                if let Some((p, moved)) = starter::apply(&s.project, copper_layers) {
                    let mut text = format!(
                        "started from the generic {copper_layers}-layer stack (common-practice values: replace them with your fabricator's)"
                    );
                    if !moved.is_empty() {
                        text.push_str("; ");
                        text.push_str(&moved.join("; "));
                    }
                    text.push_str("; Undo brings back the previous stack");
                    s.structural(p);
                    s.notice = Some(Notice { error: false, text });
                }
            }
            Action::Undo => s.step(true),
            Action::Redo => s.step(false),
            Action::Load(project, message) => {
                let text = if s.has_work() {
                    format!("{message} (Undo brings back your previous work)")
                } else {
                    message
                };
                s.structural(*project);
                s.notice = Some(Notice { error: false, text });
            }
            Action::Reopen(state, message) => {
                s = State {
                    notice: Some(Notice {
                        error: false,
                        text: message,
                    }),
                    ..*state
                };
            }
            Action::Notify(notice) => s.notice = notice,
        }
        if s == *self {
            self
        } else {
            Rc::new(s)
        }
    }
}

/// A core message in the user's words: a leading `layers[2] "PP1".thickness` or `rules[5] "USB".width` path
/// becomes `PP1 thickness` / `USB width` (the name, never the position).
pub fn user_words(message: &str) -> String {
    let Some((path, rest)) = message.split_once(": ") else {
        return message.to_string();
    };
    let named = ["layers[", "rules["].iter().find_map(|p| {
        let after = path.strip_prefix(p)?;
        let (_, tail) = after.split_once("] \"")?;
        let (name, field) = tail.split_once('"')?;
        let field = field.trim_start_matches('.').replace(['.', '_'], " ");
        Some(format!("{name} {field}").trim_end().to_string())
    });
    match named {
        Some(path) => format!("{path}: {rest}"),
        None => message.to_string(),
    }
}

/// A blank project: one signal layer over a plane with a prepreg between, no rules.
pub fn blank_project() -> Project {
    let mut p = ohmstack_core::design::demo::project();
    p.title = "Untitled".into();
    p.revision = String::new();
    p.rules.clear();
    p.stackup.layers = vec![
        new_copper("Top".into()),
        Layer::Prepreg(starter::laminate("Dielectric 1".into(), "fr4", 100e-6)),
        Layer::Copper(Copper {
            name: "Plane".into(),
            thickness_m: OZ_COPPER,
            role: CopperRole::Plane,
            fill_pct: None,
            roughness: None,
        }),
    ];
    p
}

#[cfg(test)]
mod tests {
    use super::*;

    fn reduce(s: State, a: Action) -> State {
        (*Rc::new(s).reduce(a)).clone()
    }

    fn thickness_of(s: &State, i: usize) -> f64 {
        s.project.stackup.layers[i].thickness_m()
    }

    #[test]
    fn valid_text_applies_in_the_display_unit() {
        // PP1 is layer 2 of the demo; 5 mil = 127 µm exactly.
        let mut s = State::default();
        s.project.units = LengthUnit::Mil;
        let s = reduce(
            s,
            Action::Edit(Field::Layer(2, LayerField::Thickness), "5".into()),
        );
        assert!((thickness_of(&s, 2) - 127e-6).abs() < 1e-15);
        assert_eq!(s.undo.len(), 1);
        assert!(!s.has_errors());
    }

    #[test]
    fn routing_budgets_edit_by_name_and_the_link_needs_its_frequency_first() {
        let s0 = State::default();
        let link = |s: &State| s.project.routing.link;
        // A budget before any frequency: refused, naming what to set first; nothing changes.
        let s = reduce(
            s0.clone(),
            Action::Edit(Field::Routing(RoutingField::LinkBudget), "12".into()),
        );
        assert_eq!(s.project, s0.project);
        let msg = s.drafts[&Field::Routing(RoutingField::LinkBudget)]
            .error
            .clone()
            .unwrap_or_default();
        assert!(msg.contains("Nyquist"), "{msg}");
        // Frequency, then budget and fixed losses; a blank frequency removes the link.
        let mut s = reduce(
            s0.clone(),
            Action::Edit(Field::Routing(RoutingField::LinkNyquist), "8".into()),
        );
        assert_eq!(link(&s).unwrap().nyquist_hz, 8e9);
        assert_eq!(link(&s).unwrap().budget_db, STARTING_LINK_BUDGET_DB);
        s = reduce(
            s,
            Action::Edit(Field::Routing(RoutingField::LinkBudget), "14 dB".into()),
        );
        s = reduce(
            s,
            Action::Edit(Field::Routing(RoutingField::LinkFixed), "3".into()),
        );
        assert_eq!(
            (link(&s).unwrap().budget_db, link(&s).unwrap().fixed_db),
            (14.0, 3.0)
        );
        s = reduce(
            s,
            Action::Edit(Field::Routing(RoutingField::LinkNyquist), " ".into()),
        );
        assert!(link(&s).is_none());
        // Crosstalk figures in the user's units; out of range names the figure.
        s = reduce(
            s,
            Action::Edit(Field::Routing(RoutingField::SkewBudget), "0.2 UI".into()),
        );
        assert_eq!(s.project.routing.skew_budget_ui, 0.2);
        s = reduce(
            s,
            Action::Edit(Field::Routing(RoutingField::Rise), "35".into()),
        );
        assert!((s.project.routing.rise_s - 35e-12).abs() < 1e-24);
        s = reduce(
            s,
            Action::Edit(Field::Routing(RoutingField::Parallel), "40000".into()),
        );
        assert!(
            (s.project.routing.parallel_m - 40e-3).abs() < 1e-12,
            "µm is the demo's unit"
        );
        let bad = reduce(
            s.clone(),
            Action::Edit(Field::Routing(RoutingField::CrosstalkBudget), "80".into()),
        );
        let msg = bad.drafts[&Field::Routing(RoutingField::CrosstalkBudget)]
            .error
            .clone()
            .unwrap_or_default();
        assert!(msg.contains("crosstalk budget"), "{msg}");
        assert_eq!(bad.project, s.project);
    }

    #[test]
    fn invalid_text_keeps_the_design_and_names_the_field() {
        let s0 = State::default();
        let before = s0.project.clone();
        for text in ["-1", "0", "abc", "1e9"] {
            let s = reduce(
                s0.clone(),
                Action::Edit(Field::Layer(2, LayerField::Thickness), text.into()),
            );
            assert_eq!(s.project, before, "{text}");
            let d = &s.drafts[&Field::Layer(2, LayerField::Thickness)];
            assert_eq!(d.text, text);
            let msg = d.error.as_deref().unwrap_or_default();
            assert!(msg.contains("thickness"), "{text}: {msg}");
            assert!(s.has_errors());
        }
    }

    #[test]
    fn a_typo_shows_the_value_held_before_the_edit_not_the_last_valid_prefix() {
        // Issue 17: "12o" on the way from PP1's 120 µm to 130 µm. The prefix "12" is valid (12 µm) but is not
        // what the user means; while the text is invalid, the project is the one from before the edit began.
        let field = Field::Layer(2, LayerField::Thickness);
        let s0 = State::default();
        let mut s = s0.clone();
        for text in ["1", "12"] {
            s = reduce(s, Action::Edit(field, text.into()));
            assert!(s.typing());
        }
        assert!((thickness_of(&s, 2) - 12e-6).abs() < 1e-15);
        assert_eq!(s.undo, vec![s0.project.clone()]);
        s = reduce(s, Action::Edit(field, "12o".into()));
        assert_eq!(s.project, s0.project, "the pre-edit project, not 12 µm");
        assert!(
            s.undo.is_empty(),
            "an edit that changed nothing leaves no undo step"
        );
        assert_eq!(s.drafts[&field].text, "12o");
        assert!(s.drafts[&field]
            .error
            .as_deref()
            .unwrap()
            .contains("thickness"));
        // The correction applies to the pre-edit project as one undo step.
        s = reduce(s, Action::Edit(field, "130".into()));
        assert!((thickness_of(&s, 2) - 130e-6).abs() < 1e-15);
        assert_eq!(s.undo, vec![s0.project.clone()]);
        // Leaving the field (or Enter) ends the edit; an invalid text left there keeps the pre-edit project.
        s = reduce(s, Action::Blur(field));
        assert!(!s.typing());
        let edited = s.project.clone();
        s = reduce(s, Action::Edit(field, "9x".into()));
        assert_eq!(s.project, edited);
        s = reduce(s, Action::Blur(field));
        assert_eq!(s.project, edited);
        assert_eq!(s.drafts[&field].text, "9x", "nothing typed is lost");
        s = reduce(s, Action::Undo);
        assert_eq!(s.project, s0.project);
    }

    #[test]
    fn an_edit_in_another_field_starts_from_the_current_project() {
        let a = Field::Layer(2, LayerField::Thickness);
        let b = Field::Layer(2, LayerField::Dk);
        let s = reduce(State::default(), Action::Edit(a, "150".into()));
        let s = reduce(s, Action::Edit(b, "4.4".into()));
        assert!((thickness_of(&s, 2) - 150e-6).abs() < 1e-15);
        assert_eq!(s.project.stackup.layers[2].dielectric().unwrap().dk, 4.4);
        assert_eq!(s.undo.len(), 2);
        // A typo in the second field goes back to the project its edit began from: the first edit stays.
        let s = reduce(s, Action::Edit(b, "4.4q".into()));
        assert!((thickness_of(&s, 2) - 150e-6).abs() < 1e-15);
        assert_eq!(s.project.stackup.layers[2].dielectric().unwrap().dk, 4.0);
        assert_eq!(s.undo.len(), 1);
    }

    #[test]
    fn process_limits_are_edited_with_their_names_and_blank_restores_the_default() {
        use ohmstack_core::design::process::DEFAULT_ETCH_WIDTH;
        let etch = Field::Process(ProcessField::Tol(TolKind::EtchWidth));
        let s = reduce(State::default(), Action::Edit(etch, "20".into()));
        let p = s.project.process.clone().unwrap();
        assert!(
            (p.etch_width.abs.unwrap() - 20e-6).abs() < 1e-15,
            "a bare number is in µm"
        );
        let s = reduce(s, Action::Blur(etch));
        let s = reduce(s, Action::Edit(etch, "8 %".into()));
        assert_eq!(
            s.project.process.as_ref().unwrap().etch_width.pct,
            Some(8.0)
        );
        // Bad limits name the quantity in words, never a path such as process.etch_width.abs.
        for bad in ["-3", "x", "60 %", "2mm"] {
            let t = reduce(s.clone(), Action::Edit(etch, bad.into()));
            let msg = t.drafts[&etch].error.clone().unwrap_or_default();
            assert!(msg.starts_with("etched width tolerance"), "{bad}: {msg}");
            assert!(!msg.contains("process."), "{bad}: {msg}");
        }
        let s = reduce(s, Action::Edit(etch, "".into()));
        assert_eq!(
            s.project.process.as_ref().unwrap().etch_width,
            DEFAULT_ETCH_WIDTH
        );
        let s = reduce(
            s,
            Action::SetDistribution(TolKind::Dk, Distribution::Uniform),
        );
        assert_eq!(
            s.project.process.as_ref().unwrap().dk.distribution,
            Distribution::Uniform
        );
    }

    #[test]
    fn a_layer_gets_its_own_limits_and_they_follow_its_name() {
        let tol = Field::Layer(2, LayerField::TolThickness);
        let s = reduce(State::default(), Action::Edit(tol, "5 %".into()));
        let over = &s.project.process.as_ref().unwrap().layers;
        assert_eq!(over.len(), 1);
        assert_eq!(
            (over[0].layer.as_str(), over[0].thickness.unwrap().pct),
            ("PP1", Some(5.0))
        );
        let s = reduce(s, Action::Blur(tol));
        let s = reduce(
            s,
            Action::Edit(Field::Layer(2, LayerField::Name), "Prepreg top".into()),
        );
        assert_eq!(
            s.project.process.as_ref().unwrap().layers[0].layer,
            "Prepreg top"
        );
        assert!(s.project.validate().is_ok());
        // Copper has no Dk; the message names the layer.
        let t = reduce(
            s.clone(),
            Action::Edit(Field::Layer(1, LayerField::TolDk), "0.1".into()),
        );
        let msg = t.drafts[&Field::Layer(1, LayerField::TolDk)]
            .error
            .clone()
            .unwrap();
        assert!(msg.contains("L1 Top"), "{msg}");
        // Removing the layer removes its limits (the project stays valid).
        let s = reduce(s, Action::RemoveLayer(2));
        assert!(s.project.process.as_ref().unwrap().layers.is_empty());
        // Blank gives a layer back to the project's limit.
        let s = reduce(State::default(), Action::Edit(tol, "5 %".into()));
        let s = reduce(s, Action::Edit(tol, " ".into()));
        assert!(s.project.process.as_ref().unwrap().layers.is_empty());
    }

    #[test]
    fn plating_keeps_the_outer_base_foil_and_fill_and_foil_apply() {
        let plating = Field::Process(ProcessField::OuterPlating);
        let s0 = State::default();
        let top = thickness_of(&s0, 1);
        let s = reduce(s0.clone(), Action::Edit(plating, "15".into()));
        assert!((s.project.fab.outer_plating_m.unwrap() - 15e-6).abs() < 1e-15);
        // The outer layers are now foil plus plating; inner copper is untouched.
        assert!((thickness_of(&s, 1) - (top + 15e-6)).abs() < 1e-15);
        assert_eq!(thickness_of(&s, 5), thickness_of(&s0, 5));
        let s = reduce(s, Action::Blur(plating));
        let foil = Field::Layer(1, LayerField::BaseFoil);
        let s = reduce(s, Action::Edit(foil, "18".into()));
        assert!((thickness_of(&s, 1) - 33e-6).abs() < 1e-15);
        assert!(s.project.validate().is_ok());
        let t = reduce(s.clone(), Action::Edit(plating, "500".into()));
        let msg = t.drafts[&plating].error.clone().unwrap();
        assert!(msg.starts_with("outer plating"), "{msg}");
        let fill = Field::Layer(3, LayerField::Fill);
        let s = reduce(s, Action::Edit(fill, "75".into()));
        let c = s.project.stackup.layers[3].copper().unwrap().clone();
        assert_eq!(c.fill_pct, Some(75.0));
        let t = reduce(s.clone(), Action::Edit(fill, "120".into()));
        assert!(t.drafts[&fill]
            .error
            .as_deref()
            .unwrap()
            .starts_with("L2 GND copper fill"));
        let s = reduce(s, Action::SetFoil(3, Some(Foil::LowProfile)));
        assert_eq!(
            s.project.stackup.layers[3].copper().unwrap().roughness,
            Some(Foil::LowProfile.hammerstad_groiss())
        );
        let etch = Field::Process(ProcessField::EtchFactor);
        let s = reduce(s, Action::Edit(etch, "3".into()));
        assert_eq!(s.project.fab.etch_factor, Some(3.0));
        let s = reduce(s, Action::Edit(etch, "".into()));
        assert_eq!(s.project.fab.etch_factor, None);
    }

    #[test]
    fn the_nearest_design_can_be_kept_as_drawn() {
        let s = reduce(
            State::default(),
            Action::UseDimensions(1, 100e-6, Some(150e-6)),
        );
        let r = &s.project.rules[1];
        assert_eq!(
            (r.width_m, r.spacing_m, r.solve),
            (100e-6, Some(150e-6), Solve::Nothing)
        );
        assert_eq!(s.undo.len(), 1);
    }

    #[test]
    fn messages_name_layers_not_positions() {
        // 1 m of prepreg passes the length reader but not the stack's check, whose message names the layer by
        // position and name; the field's message keeps the name only.
        let f = Field::Layer(2, LayerField::Thickness);
        let s = reduce(State::default(), Action::Edit(f, "1m".into()));
        let msg = s.drafts[&f].error.clone().unwrap();
        assert!(msg.starts_with("PP1 thickness"), "{msg}");
        assert!(!msg.contains("layers["), "{msg}");
        assert_eq!(
            user_words("rules[5] \"USB data 90 Ω\".width: too narrow"),
            "USB data 90 Ω width: too narrow"
        );
        assert_eq!(user_words("width: fine"), "width: fine");
    }

    #[test]
    fn partial_text_is_kept_verbatim() {
        let s = reduce(
            State::default(),
            Action::Edit(Field::Rule(0, RuleField::Width), "0.".into()),
        );
        assert_eq!(s.drafts[&Field::Rule(0, RuleField::Width)].text, "0.");
    }

    #[test]
    fn typing_in_one_field_is_one_undo_step() {
        let mut s = State::default();
        let original = s.project.clone();
        for text in ["1", "13", "130"] {
            s = reduce(
                s,
                Action::Edit(Field::Layer(2, LayerField::Thickness), text.into()),
            );
        }
        let after_first = s.project.clone();
        s = reduce(s, Action::Blur(Field::Layer(2, LayerField::Thickness)));
        s = reduce(
            s,
            Action::Edit(Field::Layer(2, LayerField::Dk), "4.5".into()),
        );
        assert_eq!(s.undo.len(), 2);
        s = reduce(s, Action::Undo);
        assert_eq!(s.project, after_first);
        s = reduce(s, Action::Undo);
        assert_eq!(s.project, original);
        s = reduce(s, Action::Redo);
        assert_eq!(s.project, after_first);
    }

    #[test]
    fn history_is_bounded() {
        let mut s = State::default();
        for k in 0..(HISTORY_LIMIT + 20) {
            s = reduce(
                s,
                Action::Edit(
                    Field::Rule(0, RuleField::Target),
                    format!("{}", 40 + k % 20),
                ),
            );
            s = reduce(s, Action::Blur(Field::Rule(0, RuleField::Target)));
        }
        assert_eq!(s.undo.len(), HISTORY_LIMIT);
    }

    #[test]
    fn renaming_a_layer_renames_it_in_rules() {
        let s = reduce(
            State::default(),
            Action::Edit(Field::Layer(1, LayerField::Name), "Top signal".into()),
        );
        assert_eq!(s.project.stackup.layers[1].name(), "Top signal");
        assert!(s.project.rules.iter().all(|r| r.layer != "L1 Top"));
        assert_eq!(s.project.rules[0].layer, "Top signal");
        // A duplicate name is refused with the core's message and nothing changes.
        let s = reduce(s, Action::Blur(Field::Layer(1, LayerField::Name)));
        let s2 = reduce(
            s.clone(),
            Action::Edit(Field::Layer(1, LayerField::Name), "L2 GND".into()),
        );
        assert_eq!(s2.project, s.project);
        assert!(s2.drafts.values().any(|d| d
            .error
            .as_deref()
            .is_some_and(|e| e.contains("already used"))));
    }

    #[test]
    fn unit_switch_leaves_values_bit_identical() {
        let s0 = State::default();
        let mut s = s0.clone();
        for u in [
            LengthUnit::Mm,
            LengthUnit::Mil,
            LengthUnit::In,
            LengthUnit::Um,
        ] {
            s = reduce(s, Action::SetUnit(u));
        }
        assert_eq!(s.project.stackup, s0.project.stackup);
        assert_eq!(s.project.rules, s0.project.rules);
        assert!(s.undo.is_empty());
    }

    #[test]
    fn layers_move_duplicate_insert_and_remove() {
        let s0 = State::default();
        let n = s0.project.stackup.layers.len();
        let s = reduce(s0.clone(), Action::MoveLayer(2, true));
        assert_eq!(s.project.stackup.layers[1].name(), "PP1");
        let s = reduce(s, Action::MoveLayer(0, true));
        assert_eq!(s.project.stackup.layers[0].name(), "Top mask");
        let s = reduce(s0.clone(), Action::DuplicateLayer(2));
        assert_eq!(s.project.stackup.layers.len(), n + 1);
        assert_eq!(s.project.stackup.layers[3].name(), "PP1 copy");
        let s = reduce(s, Action::InsertLayer(3));
        assert!(matches!(s.project.stackup.layers[4], Layer::Copper(_)));
        let s = reduce(s, Action::RemoveLayer(4));
        let s = reduce(s, Action::RemoveLayer(3));
        assert_eq!(s.project.stackup, s0.project.stackup);
        let one = State::new(Project {
            stackup: ohmstack_core::Stackup {
                layers: vec![new_copper("Only".into())],
            },
            ..blank_project()
        });
        let s = reduce(one.clone(), Action::RemoveLayer(0));
        assert_eq!(s.project, one.project);
        assert!(s.notice.is_some_and(|n| n.error));
    }

    #[test]
    fn inserted_layers_are_named_by_position_and_renumbering_keeps_rules() {
        // Demo: Top mask, L1 Top, PP1, L2 GND, Core 1, L3 Inner, PP2, L4 Inner, …; one rule moved to L4 Inner.
        let s0 = reduce(State::default(), Action::SetRuleLayer(3, "L4 Inner".into()));
        let names = |s: &State| -> Vec<String> {
            s.project
                .stackup
                .layers
                .iter()
                .map(|l| l.name().to_string())
                .collect()
        };
        // Above PP2 (index 6): copper, the fourth copper from the top; "L4" is taken by "L4 Inner".
        let s = reduce(s0.clone(), Action::InsertAbove(6));
        assert_eq!(names(&s)[6], "L4 new");
        assert!(matches!(s.project.stackup.layers[6], Layer::Copper(_)));
        // Below it: a prepreg named by the copper around it.
        let s = reduce(s, Action::InsertLayer(6));
        assert_eq!(names(&s)[7], "Prepreg L4–L4");
        // Above L1 Top (index 1): a prepreg over L1.
        let a = reduce(s0.clone(), Action::InsertAbove(1));
        assert_eq!(names(&a)[1], "Prepreg over L1");
        assert_eq!(a.undo.len(), s0.undo.len() + 1);
        // Renumbering: coppers L1…L7 from the top keeping their words, dielectrics by their copper, and every
        // rule still on its layer (now under the new name).
        let on = |s: &State| -> Vec<String> {
            s.project.rules.iter().map(|r| r.layer.clone()).collect()
        };
        let before: Vec<usize> = s0
            .project
            .rules
            .iter()
            .map(|r| s0.project.stackup.find(&r.layer).unwrap())
            .collect();
        let r = reduce(s, Action::RenumberLayers);
        let n = names(&r);
        assert_eq!(
            &n[1..9],
            [
                "L1 Top",
                "Prepreg L1–L2",
                "L2 GND",
                "Core L2–L3",
                "L3 Inner",
                "L4",
                "Prepreg L4–L5",
                "Prepreg L4–L5 2"
            ]
            .map(String::from)
        );
        assert_eq!(n[9], "L5 Inner");
        r.project.validate().unwrap();
        for (rule, at) in r.project.rules.iter().zip(before) {
            // Two layers went in below L3 Inner (index 5); rules above it keep their index, the others move by two.
            let want = if at <= 5 { at } else { at + 2 };
            assert_eq!(
                r.project.stackup.find(&rule.layer),
                Some(want),
                "{}",
                rule.name
            );
        }
        assert_eq!(r.project.rules[3].layer, "L5 Inner");
        let u = reduce(r, Action::Undo);
        assert_eq!(on(&u), on(&s0));
    }

    #[test]
    fn renumbering_takes_any_name() {
        // Names from a file may carry odd spacing, other scripts, or a bare number tag: none may panic, and each
        // copper ends up with its number first.
        let mut p = blank_project();
        let names = ["\u{3000}L3 wide space", "L", "L12", "Ω plane"];
        p.stackup.layers = names
            .iter()
            .flat_map(|n| {
                [
                    new_copper(n.to_string()),
                    Layer::Prepreg(starter::laminate(format!("between {n}"), "fr4", 100e-6)),
                ]
            })
            .collect();
        p.stackup.layers.pop();
        let s = reduce(State::new(p), Action::RenumberLayers);
        let copper: Vec<&str> = s
            .project
            .stackup
            .layers
            .iter()
            .filter_map(|l| l.copper())
            .map(|c| c.name.as_str())
            .collect();
        assert_eq!(copper, ["L1 wide space", "L2 L", "L3", "L4 Ω plane"]);
    }

    #[test]
    fn a_starter_replaces_the_stack_as_one_undo_step() {
        let s0 = State::default();
        let s = reduce(s0.clone(), Action::Starter(8));
        assert_eq!(s.project.stackup.copper_count(), 8);
        assert_eq!(s.undo, vec![s0.project.clone()]);
        s.project.validate().unwrap();
        let text = &s.notice.as_ref().unwrap().text;
        assert!(
            text.contains("moved from") && text.contains("Undo"),
            "{text}"
        );
        assert_eq!(reduce(s, Action::Undo).project, s0.project);
        // A count without a starter changes nothing.
        assert_eq!(reduce(s0.clone(), Action::Starter(7)).project, s0.project);
    }

    #[test]
    fn target_thickness_is_typed_in_the_unit_and_blank_clears_it() {
        let f = Field::Process(ProcessField::TargetThickness);
        let mut s0 = State::default();
        s0.project.units = LengthUnit::Mm;
        let s = reduce(s0.clone(), Action::Edit(f, "1.6".into()));
        assert_eq!(s.project.fab.target_thickness_m, Some(1.6e-3));
        let s = reduce(s, Action::Edit(f, "".into()));
        assert_eq!(s.project.fab.target_thickness_m, None);
        for bad in ["-1", "abc", "20"] {
            let s = reduce(s0.clone(), Action::Edit(f, bad.into()));
            let e = s.drafts[&f].error.clone().unwrap();
            assert!(e.contains("target board thickness"), "{bad}: {e}");
        }
    }

    #[test]
    fn a_rule_may_carry_its_own_link() {
        use ohmstack_core::line::reach::LINK_PRESETS;
        let s = State::default();
        assert!(s.project.rules[0].link.is_none());
        // A preset: its Nyquist frequency, with the starting budget while the board has no link.
        let s = reduce(s, Action::SetRuleLink(0, Some(5)));
        let own = s.project.rules[0].link.unwrap();
        assert_eq!(own.nyquist_hz, LINK_PRESETS[5].nyquist_hz());
        assert_eq!(
            (own.budget_db, own.fixed_db),
            (STARTING_LINK_BUDGET_DB, 0.0)
        );
        let s = reduce(
            s,
            Action::Edit(Field::Rule(0, RuleField::LinkFixed), "3 dB".into()),
        );
        assert_eq!(s.project.rules[0].link.unwrap().fixed_db, 3.0);
        let bad = reduce(
            s.clone(),
            Action::Edit(Field::Rule(0, RuleField::LinkBudget), "-4".into()),
        );
        let msg = bad.drafts[&Field::Rule(0, RuleField::LinkBudget)]
            .error
            .clone()
            .unwrap_or_default();
        assert!(msg.contains("link budget"), "{msg}");
        // Another preset keeps the rule's budget; "the board's" drops the rule's own.
        let s = reduce(s, Action::SetRuleLink(0, Some(2)));
        assert_eq!(s.project.rules[0].link.unwrap().fixed_db, 3.0);
        let s = reduce(s, Action::SetRuleLink(0, None));
        assert!(s.project.rules[0].link.is_none());
    }

    #[test]
    fn a_layer_built_from_glass_follows_its_construction_until_typed_over() {
        let s = State::default();
        let i = s
            .project
            .stackup
            .layers
            .iter()
            .position(|l| matches!(l, Layer::Prepreg(_)))
            .unwrap();
        let before = s.project.stackup.layers[i].dielectric().unwrap().clone();
        let s = reduce(s, Action::SetGlass(i, "1080".into()));
        let d = s.project.stackup.layers[i].dielectric().unwrap().clone();
        let c = d.construction.clone().expect("built from 1080");
        assert_eq!(c.glass, "1080");
        // Plies and resin chosen to keep the thickness as near as the style allows; the Dk as entered is its
        // datasheet point, and the layer's figures are the construction's.
        assert_eq!((c.datasheet_dk, c.datasheet_df), (before.dk, before.df));
        let l = c.construction().unwrap().laminate().unwrap();
        assert_eq!((d.thickness_m, d.dk, d.df), (l.thickness_m, l.dk, l.df));
        assert!(
            (d.thickness_m / before.thickness_m - 1.0).abs() < 0.2,
            "{d:?}"
        );
        // One more ply: thicker. An impossible resin content names the field and keeps the layer.
        let s = reduce(
            s,
            Action::Edit(
                Field::Layer(i, LayerField::Plies),
                (c.plies + 1).to_string(),
            ),
        );
        let thicker = s.project.stackup.layers[i].thickness_m();
        assert!(thicker > d.thickness_m);
        let bad = reduce(
            s.clone(),
            Action::Edit(Field::Layer(i, LayerField::Resin), "95".into()),
        );
        let msg = bad.drafts[&Field::Layer(i, LayerField::Resin)]
            .error
            .clone()
            .unwrap();
        assert!(msg.contains("resin content"), "{msg}");
        assert_eq!(bad.project.stackup.layers[i].thickness_m(), thicker);
        // A thickness typed in enters the layer directly again.
        let s = reduce(
            s,
            Action::Edit(Field::Layer(i, LayerField::Thickness), "120".into()),
        );
        let d = s.project.stackup.layers[i].dielectric().unwrap();
        assert!(d.construction.is_none() && (d.thickness_m - 120e-6).abs() < 1e-15);
        // Plies without a style say what to do first.
        let s = reduce(
            s,
            Action::Edit(Field::Layer(i, LayerField::Plies), "2".into()),
        );
        let msg = s.drafts[&Field::Layer(i, LayerField::Plies)]
            .error
            .clone()
            .unwrap();
        assert!(msg.contains("glass style first"), "{msg}");
    }

    #[test]
    fn kind_change_keeps_dielectric_values_and_presets_apply() {
        let s = reduce(State::default(), Action::SetLayerKind(2, LayerKind::Core));
        let d = s.project.stackup.layers[2].dielectric().unwrap().clone();
        assert!(matches!(s.project.stackup.layers[2], Layer::Core(_)));
        assert_eq!(d.dk, 4.0);
        let s = reduce(s, Action::ApplyPreset(2, "ptfe-ceramic"));
        let p = material::preset("ptfe-ceramic").unwrap();
        let d = s.project.stackup.layers[2].dielectric().unwrap();
        assert_eq!((d.dk, d.df, d.material.as_str()), (p.dk, p.df, p.name));
        let s = reduce(s, Action::SetCopperWeight(1, 2.0));
        assert!((s.project.stackup.layers[1].thickness_m() - 2.0 * OZ_COPPER).abs() < 1e-18);
    }

    #[test]
    fn structure_change_fills_what_it_needs() {
        let s = reduce(
            State::default(),
            Action::SetRuleStructure(0, Structure::CoplanarPair),
        );
        let r = &s.project.rules[0];
        assert!(r.spacing_m.is_some() && r.gap_m.is_some());
        assert!(r.validate(&s.project.stackup).is_ok());
        let s = reduce(s, Action::SetRuleSolve(0, Solve::Spacing));
        let s = reduce(s, Action::SetRuleStructure(0, Structure::Single));
        assert_eq!(s.project.rules[0].solve, Solve::Width);
        let s = reduce(s, Action::SetRuleLayer(0, "L3 Inner".into()));
        let s = reduce(s, Action::SetRuleStructure(0, Structure::BroadsidePair));
        assert_eq!(
            s.project.rules[0].partner_layer.as_deref(),
            Some("L4 Inner")
        );
    }

    #[test]
    fn rules_add_duplicate_remove() {
        let s0 = State::default();
        let n = s0.project.rules.len();
        let s = reduce(s0.clone(), Action::AddRule);
        assert_eq!(s.project.rules.len(), n + 1);
        assert!(s.project.validate().is_ok());
        let s = reduce(s, Action::DuplicateRule(0));
        assert_eq!(
            s.project.rules[1].name,
            format!("{} copy", s0.project.rules[0].name)
        );
        let s = reduce(s, Action::RemoveRule(1));
        let s = reduce(s, Action::RemoveRule(n));
        assert_eq!(s.project.rules, s0.project.rules);
    }

    #[test]
    fn load_is_undoable_and_blank_is_valid() {
        let blank = blank_project();
        assert!(blank.validate().is_ok());
        let s = reduce(
            State::default(),
            Action::Load(Box::new(blank.clone()), "new".into()),
        );
        assert_eq!(s.project, blank);
        let s = reduce(s, Action::Undo);
        assert_eq!(s.project, ohmstack_core::design::demo::project());
    }

    #[test]
    fn a_message_goes_with_the_next_edit() {
        let s = reduce(
            State::default(),
            Action::Load(Box::new(blank_project()), "new blank project".into()),
        );
        assert!(s.notice.is_some());
        // Leaving a field is not an edit; typing is.
        let s = reduce(s, Action::Blur(Field::Title));
        assert!(s.notice.is_some());
        let s = reduce(s, Action::Edit(Field::Title, "Board A".into()));
        assert_eq!(s.notice, None);
        // An edit that is refused says so, replacing nothing else.
        let mut one = State::default();
        one.project.stackup.layers.truncate(1);
        let s = reduce(one, Action::RemoveLayer(0));
        assert!(s.notice.is_some_and(|n| n.error));
    }

    #[test]
    fn undo_is_offered_only_when_there_was_work() {
        let text = |s: &State| s.notice.clone().map(|n| n.text).unwrap_or_default();
        let load = Action::Load(Box::new(blank_project()), "new blank project".into());
        // A fresh browser shows the untouched demo: nothing to bring back.
        let fresh = reduce(State::default(), load.clone());
        assert_eq!(text(&fresh), "new blank project");
        let edited = reduce(
            State::default(),
            Action::Edit(Field::Title, "Board A".into()),
        );
        assert!(text(&reduce(edited, load.clone())).contains("Undo brings back"));
        let mut restored = ohmstack_core::design::demo::project();
        restored.title = "Board A".into();
        let restored = State::restored(restored, Vec::new(), Vec::new());
        assert!(text(&reduce(restored, load)).contains("Undo brings back"));
    }

    #[test]
    fn revision_is_edited_and_checked_by_the_core() {
        let s = reduce(
            State::default(),
            Action::Edit(Field::Revision, " B2 ".into()),
        );
        assert_eq!(s.project.revision, "B2");
        let s = reduce(s, Action::Blur(Field::Revision));
        let long = "x".repeat(ohmstack_core::design::project::MAX_REVISION_CHARS + 1);
        let s = reduce(s, Action::Edit(Field::Revision, long));
        assert_eq!(s.project.revision, "B2");
        let message = s.drafts[&Field::Revision].error.clone().unwrap();
        assert!(message.starts_with("revision:"), "{message}");
    }

    #[test]
    fn reopen_brings_its_own_history() {
        let mut other = ohmstack_core::design::demo::project();
        other.title = "Board B".into();
        let target = State::restored(other.clone(), vec![blank_project()], Vec::new());
        let s = reduce(
            State::default(),
            Action::Edit(Field::Title, "Board A".into()),
        );
        let s = reduce(s, Action::Reopen(Box::new(target), "reopened".into()));
        assert_eq!(s.project, other);
        assert_eq!(s.undo, vec![blank_project()]);
        assert!(s.notice.is_some());
    }
}
