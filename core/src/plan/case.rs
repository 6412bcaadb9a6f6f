//! A standalone line case: one structure described by its own dimensions rather than by a stackup. This is what
//! `ohmstack calc`, `ohmstack solve` and `ohmstack batch` read, with lengths as text with units (`0.3mm`, `5mil`)
//! or as plain numbers in metres.

use crate::base::error::{self, Error, Result};
use crate::base::roots::{self, Bracket};
use crate::base::units::{parse_length, parse_number, MAX_LENGTH_M};
use crate::closed_form::{self, Evaluated};
use crate::design::project::Structure;
use crate::section::Dims;
use crate::section::{Cover, CrossSection, Medium};
use std::collections::BTreeMap;

/// The structure names a case may use, with what each one is.
pub const KINDS: &[(&str, &str)] = &[
    (
        "microstrip",
        "surface microstrip: --width --height --thickness --dk",
    ),
    (
        "coated-microstrip",
        "microstrip under solder mask: + --mask-thickness --mask-dk",
    ),
    (
        "embedded-microstrip",
        "microstrip under more dielectric: + --cover (height above trace) --cover-dk",
    ),
    (
        "edge-coupled-microstrip",
        "two traces side by side: --width --spacing --height --thickness --dk \
         [--mask-thickness --mask-dk | --cover --cover-dk]",
    ),
    (
        "stripline",
        "between two planes: --width --height (below) [--height2 (above)] --thickness --dk",
    ),
    (
        "edge-coupled-stripline",
        "pair side by side between two planes: + --spacing [--height2 (above)]",
    ),
    (
        "broadside-stripline",
        "pair stacked between two planes: --width --height (above) --separation [--height2 (below)] --thickness --dk",
    ),
    (
        "coplanar",
        "coplanar waveguide, no plane: --width --gap --height (substrate) --thickness --dk",
    ),
    (
        "grounded-coplanar",
        "coplanar waveguide over a plane: --width --gap --height --thickness --dk",
    ),
    (
        "coplanar-pair",
        "coplanar pair with grounds, no plane: --width --spacing --gap --height --thickness --dk",
    ),
    (
        "grounded-coplanar-pair",
        "coplanar pair with grounds over a plane: --width --spacing --gap --height --thickness --dk",
    ),
];

/// A parsed case: the cross-section and structure the models see, plus the given dimensions.
#[derive(Debug, Clone, PartialEq)]
pub struct LineCase {
    pub kind: String,
    pub cross_section: CrossSection,
    pub structure: Structure,
    pub dims: Dims,
}

/// Reads the named fields of a case. Every value is text (a number with an optional unit).
pub fn parse(kind: &str, fields: &BTreeMap<String, String>) -> Result<LineCase> {
    let known: &[&str] = match kind {
        "microstrip" => &["width", "height", "thickness", "dk"],
        "coated-microstrip" => &[
            "width",
            "height",
            "thickness",
            "dk",
            "mask-thickness",
            "mask-dk",
        ],
        "embedded-microstrip" => &["width", "height", "thickness", "dk", "cover", "cover-dk"],
        "stripline" => &["width", "height", "height2", "thickness", "dk"],
        "edge-coupled-microstrip" => &[
            "width",
            "spacing",
            "height",
            "thickness",
            "dk",
            "mask-thickness",
            "mask-dk",
            "cover",
            "cover-dk",
        ],
        "edge-coupled-stripline" => &["width", "spacing", "height", "height2", "thickness", "dk"],
        "broadside-stripline" => &[
            "width",
            "height",
            "separation",
            "height2",
            "thickness",
            "dk",
        ],
        "coplanar" | "grounded-coplanar" => &["width", "gap", "height", "thickness", "dk"],
        "coplanar-pair" | "grounded-coplanar-pair" => {
            &["width", "spacing", "gap", "height", "thickness", "dk"]
        }
        _ => {
            let names: Vec<&str> = KINDS.iter().map(|k| k.0).collect();
            return Err(Error::Invalid {
                field: "structure".into(),
                reason: format!("unknown structure {kind:?}; known: {}", names.join(", ")),
            });
        }
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
    let length = |name: &str| -> Result<f64> {
        let text = fields.get(name).ok_or_else(|| Error::Invalid {
            field: name.into(),
            reason: "missing".into(),
        })?;
        parse_length(name, text)
    };
    let optional_length = |name: &str, default: f64| -> Result<f64> {
        match fields.get(name) {
            Some(text) => parse_length(name, text),
            None => Ok(default),
        }
    };
    let number = |name: &str| -> Result<f64> {
        let text = fields.get(name).ok_or_else(|| Error::Invalid {
            field: name.into(),
            reason: "missing".into(),
        })?;
        parse_number(name, text, &[])
    };
    let t = optional_length("thickness", 0.0)?;
    error::length_or_zero("thickness", t)?;
    let w = length("width")?;
    let h = error::length("height", length("height")?)?;
    let er = error::permittivity("dk", number("dk")?)?;
    let medium = match kind {
        "microstrip" => Medium::Microstrip {
            h,
            er,
            cover: Cover::Air,
        },
        "coated-microstrip" => Medium::Microstrip {
            h,
            er,
            cover: Cover::Mask {
                thickness_m: error::length("mask-thickness", length("mask-thickness")?)?,
                er: error::permittivity("mask-dk", number("mask-dk")?)?,
            },
        },
        "embedded-microstrip" => Medium::Microstrip {
            h,
            er,
            cover: Cover::Dielectric {
                thickness_m: error::length("cover", length("cover")?)?,
                er: error::permittivity("cover-dk", number("cover-dk")?)?,
            },
        },
        "edge-coupled-microstrip" => {
            let has = |a: &str, b: &str| fields.contains_key(a) || fields.contains_key(b);
            let cover = match (has("mask-thickness", "mask-dk"), has("cover", "cover-dk")) {
                (true, true) => {
                    return Err(Error::Invalid {
                        field: "cover".into(),
                        reason: "give either a solder mask or a covering dielectric, not both"
                            .into(),
                    })
                }
                (true, false) => Cover::Mask {
                    thickness_m: error::length("mask-thickness", length("mask-thickness")?)?,
                    er: error::permittivity("mask-dk", number("mask-dk")?)?,
                },
                (false, true) => Cover::Dielectric {
                    thickness_m: error::length("cover", length("cover")?)?,
                    er: error::permittivity("cover-dk", number("cover-dk")?)?,
                },
                (false, false) => Cover::Air,
            };
            Medium::Microstrip { h, er, cover }
        }
        "broadside-stripline" => Medium::Broadside {
            h_above: h,
            separation: error::length("separation", length("separation")?)?,
            h_below: error::length("height2", optional_length("height2", h)?)?,
            er,
        },
        "coplanar" | "coplanar-pair" => Medium::NoPlane { h, er },
        "grounded-coplanar" | "grounded-coplanar-pair" => Medium::Microstrip {
            h,
            er,
            cover: Cover::Air,
        },
        _ => {
            let h2 = error::length("height2", optional_length("height2", h)?)?;
            Medium::Stripline {
                h_below: h,
                h_above: h2,
                er,
                dual: false,
            }
        }
    };
    let (structure, s, gap) = match kind {
        "edge-coupled-stripline" | "edge-coupled-microstrip" => (
            Structure::EdgePair,
            Some(error::length("spacing", length("spacing")?)?),
            None,
        ),
        "broadside-stripline" => (Structure::BroadsidePair, None, None),
        "coplanar" | "grounded-coplanar" => (
            Structure::Coplanar,
            None,
            Some(error::length("gap", length("gap")?)?),
        ),
        "coplanar-pair" | "grounded-coplanar-pair" => (
            Structure::CoplanarPair,
            Some(error::length("spacing", length("spacing")?)?),
            Some(error::length("gap", length("gap")?)?),
        ),
        _ => (Structure::Single, None, None),
    };
    Ok(LineCase {
        kind: kind.to_string(),
        cross_section: CrossSection {
            loss: Default::default(),
            layering: None,
            medium,
            t,
            references: Vec::new(),
            warnings: Vec::new(),
        },
        structure,
        dims: Dims { w, s, gap },
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
