//! A standalone line case: one structure described by its own dimensions rather than by a stackup. This is what
//! `ohmstack calc`, `ohmstack solve` and `ohmstack batch` read, with lengths as text with units (`0.3mm`, `5mil`)
//! or as plain numbers in metres. A case becomes a one-rule project ([`project`]): the stack its fields describe
//! and one rule on it, so it is resolved and computed exactly as a project's rule is, on any engine.

use crate::base::error::{self, Error, Result};
use crate::base::roots::{self, Bracket};
use crate::base::units::{parse_length, parse_number, MAX_LENGTH_M};
use crate::closed_form::{self, Evaluated};
use crate::design::project::{Fab, ImpedanceRule, Project, Solve, Structure, SCHEMA_VERSION};
use crate::design::stackup::{Copper, CopperRole, Dielectric, Layer, Stackup};
use crate::section::{self, CrossSection, Dims};
use std::collections::BTreeMap;

/// The structure names a case may use, with what each one is, in plain words (trade terms: microstrip, stripline,
/// coplanar). Every kind also takes `--etch-factor` (trapezoidal traces; the field engines model it, the closed
/// forms do not).
pub const KINDS: &[(&str, &str)] = &[
    (
        "microstrip",
        "trace on an outer layer: --width --height --thickness --dk \
         [--mask-thickness --mask-dk | --cover --cover-dk]",
    ),
    (
        "microstrip-under-mask",
        "trace on an outer layer under solder mask: + --mask-thickness --mask-dk",
    ),
    (
        "microstrip-under-dielectric",
        "trace over one plane, under more dielectric: + --cover (height above trace) --cover-dk",
    ),
    (
        "microstrip-pair",
        "pair side by side over one plane: --width --spacing --height --thickness --dk \
         [--mask-thickness --mask-dk | --cover --cover-dk]",
    ),
    (
        "stripline",
        "trace between two planes: --width --height (below) [--height2 --dk2 (above), off-centre] \
         --thickness --dk [--gap: coplanar grounds]",
    ),
    (
        "stripline-pair",
        "pair side by side between two planes: + --spacing [--height2 --dk2 (above)] [--gap]",
    ),
    (
        "stripline-pair-stacked",
        "pair stacked between two planes: --width --height (above) --separation \
         [--height2 --dk2 (below)] --thickness --dk",
    ),
    (
        "coplanar",
        "coplanar trace, ground beside it, no plane: --width --gap --height (substrate) --thickness --dk",
    ),
    (
        "grounded-coplanar",
        "coplanar trace, ground beside it, over a plane: --width --gap --height --thickness --dk \
         [--mask-thickness --mask-dk | --cover --cover-dk]",
    ),
    (
        "coplanar-pair",
        "coplanar pair, ground beside it, no plane: --width --spacing --gap --height --thickness --dk",
    ),
    (
        "grounded-coplanar-pair",
        "coplanar pair, ground beside it, over a plane: --width --spacing --gap --height --thickness --dk \
         [--mask-thickness --mask-dk | --cover --cover-dk]",
    ),
];

/// Earlier names of kinds, still read so scripts and saved batch files keep working: (old name, its kind).
pub const KIND_ALIASES: &[(&str, &str)] = &[
    ("coated-microstrip", "microstrip-under-mask"),
    ("embedded-microstrip", "microstrip-under-dielectric"),
    ("edge-coupled-microstrip", "microstrip-pair"),
    ("edge-coupled-stripline", "stripline-pair"),
    ("broadside-stripline", "stripline-pair-stacked"),
];

/// The kind `name` stands for (itself, or the kind an earlier name now has); `None` when it is no kind.
pub fn canonical_kind(name: &str) -> Option<&'static str> {
    KINDS.iter().map(|k| k.0).find(|k| *k == name).or_else(|| {
        KIND_ALIASES
            .iter()
            .find(|(old, _)| *old == name)
            .map(|(_, new)| *new)
    })
}

/// The copper layer a case's trace is on, in its one-rule project.
pub const TRACE_LAYER: &str = "trace";
/// The second trace's layer of a broadside case.
pub const PARTNER_LAYER: &str = "trace 2";
/// The narrowest width (and smallest space) a case's width search goes down to: far below any fabricator's limit, so
/// the search range is set by the physics, not by a fab class.
pub const CASE_MIN_FEATURE_M: f64 = 1e-6;
/// The width a solve starts from when no `--width` is given (only the field engines' search uses a start).
const START_WIDTH_M: f64 = 1e-4;

/// A parsed case: the cross-section and structure the models see, plus the given dimensions.
#[derive(Debug, Clone, PartialEq)]
pub struct LineCase {
    pub kind: String,
    pub cross_section: CrossSection,
    pub structure: Structure,
    pub dims: Dims,
}

/// The fields each kind reads (besides `target`, which `solve` and `batch` handle).
fn known_fields(kind: &str) -> Option<&'static [&'static str]> {
    const COVERED: [&str; 4] = ["mask-thickness", "mask-dk", "cover", "cover-dk"];
    Some(match kind {
        "microstrip" | "microstrip-under-mask" | "microstrip-under-dielectric" => &[
            "width",
            "height",
            "thickness",
            "dk",
            COVERED[0],
            COVERED[1],
            COVERED[2],
            COVERED[3],
            "etch-factor",
        ],
        "microstrip-pair" => &[
            "width",
            "spacing",
            "height",
            "thickness",
            "dk",
            COVERED[0],
            COVERED[1],
            COVERED[2],
            COVERED[3],
            "etch-factor",
        ],
        "grounded-coplanar" => &[
            "width",
            "gap",
            "height",
            "thickness",
            "dk",
            COVERED[0],
            COVERED[1],
            COVERED[2],
            COVERED[3],
            "etch-factor",
        ],
        "grounded-coplanar-pair" => &[
            "width",
            "spacing",
            "gap",
            "height",
            "thickness",
            "dk",
            COVERED[0],
            COVERED[1],
            COVERED[2],
            COVERED[3],
            "etch-factor",
        ],
        "stripline" => &[
            "width",
            "height",
            "height2",
            "thickness",
            "dk",
            "dk2",
            "gap",
            "etch-factor",
        ],
        "stripline-pair" => &[
            "width",
            "spacing",
            "height",
            "height2",
            "thickness",
            "dk",
            "dk2",
            "gap",
            "etch-factor",
        ],
        "stripline-pair-stacked" => &[
            "width",
            "height",
            "separation",
            "height2",
            "thickness",
            "dk",
            "dk2",
            "etch-factor",
        ],
        "coplanar" => &["width", "gap", "height", "thickness", "dk", "etch-factor"],
        "coplanar-pair" => &[
            "width",
            "spacing",
            "gap",
            "height",
            "thickness",
            "dk",
            "etch-factor",
        ],
        _ => return None,
    })
}

/// What lies over a one-plane case's trace, as given.
enum Over {
    Air,
    Mask { thickness_m: f64, dk: f64 },
    Dielectric { thickness_m: f64, dk: f64 },
}

/// The dielectric and copper layers of a case, top to bottom, before they become a stack.
enum Build {
    /// Trace on a substrate over one plane (microstrip, grounded coplanar), with what covers it.
    OnePlane { h: f64, dk: f64, over: Over },
    /// Trace on a substrate, no plane (coplanar).
    NoPlane { h: f64, dk: f64 },
    /// Trace between two planes: dielectric above (`h2`, `dk2`) and below (`h`, `dk`).
    TwoPlanes { h: f64, dk: f64, h2: f64, dk2: f64 },
    /// Two traces between two planes: `h` above the upper, `separation` between, `h2` below the lower.
    Broadside {
        h: f64,
        dk: f64,
        separation: f64,
        h2: f64,
        dk2: f64,
    },
}

/// Reads a case's fields as a one-rule project: a stack of the given dielectrics and copper with its planes, and
/// one rule on the trace layer, so a case takes the same path as a project's rule (`section::resolve` → engine).
/// With a `target` (Ω) the rule solves the width (`width`, if given, is where a field engine's search starts);
/// without, it analyses the dimensions as given (its target is then a placeholder, 50 Ω). Every error names the
/// field as the user gave it (`mask-dk`, `etch-factor`).
pub fn project(
    kind: &str,
    fields: &BTreeMap<String, String>,
    target: Option<f64>,
) -> Result<Project> {
    let kind = canonical_kind(kind).unwrap_or(kind);
    let Some(known) = known_fields(kind) else {
        let names: Vec<&str> = KINDS.iter().map(|k| k.0).collect();
        return Err(Error::Invalid {
            field: "structure".into(),
            reason: format!("unknown structure {kind:?}; known: {}", names.join(", ")),
        });
    };
    if let Some(extra) = fields
        .keys()
        .find(|k| !known.contains(&k.as_str()) && k.as_str() != "target")
    {
        return Err(Error::Invalid {
            field: extra.clone(),
            reason: format!("not a field of {kind}; its fields are {}", known.join(", ")),
        });
    }
    let missing = |name: &str| Error::Invalid {
        field: name.into(),
        reason: "missing".into(),
    };
    let length = |name: &str| -> Result<f64> {
        let text = fields.get(name).ok_or_else(|| missing(name))?;
        error::length(name, parse_length(name, text)?)
    };
    let optional_length = |name: &str| -> Result<Option<f64>> {
        fields
            .get(name)
            .map(|text| error::length(name, parse_length(name, text)?))
            .transpose()
    };
    let dk_of = |name: &str| -> Result<Option<f64>> {
        fields
            .get(name)
            .map(|text| error::permittivity(name, parse_number(name, text, &[])?))
            .transpose()
    };
    let target = target
        .map(|z| error::in_range("target", z, 1.0, 1000.0, "Ω"))
        .transpose()?;
    let t = match fields.get("thickness") {
        Some(text) => error::length_or_zero("thickness", parse_length("thickness", text)?)?,
        None => 0.0,
    };
    let w = match (fields.get("width"), target) {
        (None, Some(_)) => START_WIDTH_M,
        _ => length("width")?,
    };
    let h = length("height")?;
    let dk = dk_of("dk")?.ok_or_else(|| missing("dk"))?;
    let etch_factor = fields
        .get("etch-factor")
        .map(|text| {
            error::in_range(
                "etch-factor",
                parse_number("etch-factor", text, &[])?,
                0.5,
                100.0,
                "",
            )
        })
        .transpose()?;
    let over = || -> Result<Over> {
        let has = |a: &str, b: &str| fields.contains_key(a) || fields.contains_key(b);
        let mask = has("mask-thickness", "mask-dk") || kind == "microstrip-under-mask";
        let cover = has("cover", "cover-dk") || kind == "microstrip-under-dielectric";
        Ok(match (mask, cover) {
            (true, true) => {
                return Err(Error::Invalid {
                    field: "cover".into(),
                    reason: "give either a solder mask or a covering dielectric, not both".into(),
                })
            }
            (true, false) => Over::Mask {
                thickness_m: length("mask-thickness")?,
                dk: dk_of("mask-dk")?.ok_or_else(|| missing("mask-dk"))?,
            },
            (false, true) => Over::Dielectric {
                thickness_m: length("cover")?,
                dk: dk_of("cover-dk")?.ok_or_else(|| missing("cover-dk"))?,
            },
            (false, false) => Over::Air,
        })
    };
    let build = match kind {
        "coplanar" | "coplanar-pair" => Build::NoPlane { h, dk },
        "stripline" | "stripline-pair" => Build::TwoPlanes {
            h,
            dk,
            h2: optional_length("height2")?.unwrap_or(h),
            dk2: dk_of("dk2")?.unwrap_or(dk),
        },
        "stripline-pair-stacked" => Build::Broadside {
            h,
            dk,
            separation: length("separation")?,
            h2: optional_length("height2")?.unwrap_or(h),
            dk2: dk_of("dk2")?.unwrap_or(dk),
        },
        _ => Build::OnePlane {
            h,
            dk,
            over: over()?,
        },
    };
    let spacing = || length("spacing");
    let gap = || length("gap");
    let (structure, s, g) = match kind {
        "microstrip-pair" => (Structure::EdgePair, Some(spacing()?), None),
        "stripline-pair" => match optional_length("gap")? {
            Some(g) => (Structure::CoplanarPair, Some(spacing()?), Some(g)),
            None => (Structure::EdgePair, Some(spacing()?), None),
        },
        "stripline" => match optional_length("gap")? {
            Some(g) => (Structure::Coplanar, None, Some(g)),
            None => (Structure::Single, None, None),
        },
        "stripline-pair-stacked" => (Structure::BroadsidePair, None, None),
        "coplanar" | "grounded-coplanar" => (Structure::Coplanar, None, Some(gap()?)),
        "coplanar-pair" | "grounded-coplanar-pair" => {
            (Structure::CoplanarPair, Some(spacing()?), Some(gap()?))
        }
        _ => (Structure::Single, None, None),
    };
    // The width search must keep a positive top width on an etched trace.
    let min_trace_m = match etch_factor {
        Some(ef) => CASE_MIN_FEATURE_M.max(2.1 * t / ef),
        None => CASE_MIN_FEATURE_M,
    };
    let project = Project {
        routing: Default::default(),
        schema: SCHEMA_VERSION,
        title: kind.to_string(),
        revision: String::new(),
        units: Default::default(),
        analysis_freq_hz: 1e9,
        fab: Fab {
            min_trace_m,
            min_space_m: CASE_MIN_FEATURE_M,
            etch_factor,
            thickness_tolerance_pct: None,
            outer_plating_m: None,
            target_thickness_m: None,
        },
        loss: Default::default(),
        process: None,
        stackup: Stackup {
            layers: layers(&build, t),
        },
        rules: vec![ImpedanceRule {
            name: kind.to_string(),
            layer: TRACE_LAYER.into(),
            structure,
            target_ohm: target.unwrap_or(50.0),
            tolerance_pct: 10.0,
            solve: if target.is_some() {
                Solve::Width
            } else {
                Solve::Nothing
            },
            model: Default::default(),
            width_m: w,
            spacing_m: s,
            gap_m: g,
            partner_layer: matches!(build, Build::Broadside { .. }).then(|| PARTNER_LAYER.into()),
            references: Vec::new(),
            link: None,
        }],
    };
    // Every value was checked above under the name the user gave it; the project's own check (with its layer
    // paths) is only a guard here, skipped in release builds where batch runs it per line.
    debug_assert!(project.validate().is_ok(), "{:?}", project.validate());
    Ok(project)
}

/// The stack of a case, top to bottom. Dielectrics are cores (they keep the height given; a prepreg would press
/// into the trace layer) and the planes have the trace's copper thickness (no figure depends on it).
fn layers(build: &Build, t: f64) -> Vec<Layer> {
    let copper = |name: &str, role: CopperRole| {
        Layer::Copper(Copper {
            name: name.into(),
            thickness_m: t,
            role,
            fill_pct: None,
            roughness: None,
        })
    };
    let dielectric = |name: &str, thickness_m: f64, dk: f64| Dielectric {
        name: name.into(),
        material: String::new(),
        thickness_m,
        dk,
        df: 0.0,
        spec_freq_hz: 1e9,
        construction: None,
    };
    let trace = || copper(TRACE_LAYER, CopperRole::Signal);
    match *build {
        Build::OnePlane { h, dk, ref over } => {
            let mut layers = match *over {
                Over::Air => vec![],
                Over::Mask { thickness_m, dk } => vec![Layer::SolderMask(dielectric(
                    "solder mask",
                    thickness_m,
                    dk,
                ))],
                Over::Dielectric { thickness_m, dk } => {
                    vec![Layer::Core(dielectric("cover", thickness_m, dk))]
                }
            };
            layers.extend([
                trace(),
                Layer::Core(dielectric("substrate", h, dk)),
                copper("plane", CopperRole::Plane),
            ]);
            layers
        }
        Build::NoPlane { h, dk } => vec![trace(), Layer::Core(dielectric("substrate", h, dk))],
        Build::TwoPlanes { h, dk, h2, dk2 } => vec![
            copper("plane above", CopperRole::Plane),
            Layer::Core(dielectric("dielectric above", h2, dk2)),
            trace(),
            Layer::Core(dielectric("dielectric below", h, dk)),
            copper("plane below", CopperRole::Plane),
        ],
        Build::Broadside {
            h,
            dk,
            separation,
            h2,
            dk2,
        } => vec![
            copper("plane above", CopperRole::Plane),
            Layer::Core(dielectric("dielectric above", h, dk)),
            trace(),
            Layer::Core(dielectric("separation", separation, dk)),
            copper(PARTNER_LAYER, CopperRole::Signal),
            Layer::Core(dielectric("dielectric below", h2, dk2)),
            copper("plane below", CopperRole::Plane),
        ],
    }
}

/// Reads the named fields of a case (every value is text: a number with an optional unit) and resolves its
/// cross-section the way a project's rule is resolved ([`project`], then `section::resolve`).
pub fn parse(kind: &str, fields: &BTreeMap<String, String>) -> Result<LineCase> {
    let project = project(kind, fields, None)?;
    let rule = &project.rules[0];
    let cross_section = section::resolve(&project.stackup, rule)?;
    Ok(LineCase {
        kind: kind.to_string(),
        cross_section,
        structure: rule.structure,
        dims: Dims {
            w: rule.width_m,
            s: rule.spacing_m,
            gap: rule.gap_m,
        },
    })
}

impl LineCase {
    /// Analyses the case as given.
    pub fn analyze(&self) -> Result<Evaluated> {
        closed_form::evaluate(&self.cross_section, self.structure, &self.dims)
    }

    /// Solves the width for `target` Ω, searching from 1 µm to 100 × the structure height, and returns the case
    /// with that width.
    pub fn solve_width(&self, target: f64) -> Result<LineCase> {
        let hi = (100.0 * self.cross_section.scale_height()).min(MAX_LENGTH_M);
        let bracket = Bracket {
            lo: 1e-6,
            hi,
            lo_reason: "the narrowest width searched (1 µm)",
            hi_reason: "the widest width searched (100 × height)",
        };
        let w = roots::solve("width", target, &bracket, |w| {
            closed_form::evaluate(
                &self.cross_section,
                self.structure,
                &Dims { w, ..self.dims },
            )
            .map(|e| e.analysis.controlled())
        })?;
        Ok(LineCase {
            dims: Dims { w, ..self.dims },
            ..self.clone()
        })
    }
}
