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

/// The structure names a case may use, with what each one is, in plain words (trade terms: microstrip,
/// stripline, coplanar).
pub const KINDS: &[(&str, &str)] = &[
    (
        "microstrip",
        "trace on an outer layer, bare: --width --height --thickness --dk",
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
        "trace between two planes: --width --height (below) [--height2 (above), off-centre] --thickness --dk",
    ),
    (
        "stripline-pair",
        "pair side by side between two planes: + --spacing [--height2 (above)]",
    ),
    (
        "stripline-pair-stacked",
        "pair stacked between two planes: --width --height (above) --separation [--height2 (below)] --thickness --dk",
    ),
    (
        "coplanar",
        "coplanar trace, ground beside it, no plane: --width --gap --height (substrate) --thickness --dk",
    ),
    (
        "grounded-coplanar",
        "coplanar trace, ground beside it, over a plane: --width --gap --height --thickness --dk",
    ),
    (
        "coplanar-pair",
        "coplanar pair, ground beside it, no plane: --width --spacing --gap --height --thickness --dk",
    ),
    (
        "grounded-coplanar-pair",
        "coplanar pair, ground beside it, over a plane: --width --spacing --gap --height --thickness --dk",
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
    let kind = canonical_kind(kind).unwrap_or(kind);
    let known: &[&str] = match kind {
        "microstrip" => &["width", "height", "thickness", "dk"],
        "microstrip-under-mask" => &[
            "width",
            "height",
            "thickness",
            "dk",
            "mask-thickness",
            "mask-dk",
        ],
        "microstrip-under-dielectric" => {
            &["width", "height", "thickness", "dk", "cover", "cover-dk"]
        }
        "stripline" => &["width", "height", "height2", "thickness", "dk"],
        "microstrip-pair" => &[
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
        "stripline-pair" => &["width", "spacing", "height", "height2", "thickness", "dk"],
        "stripline-pair-stacked" => &[
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
        "microstrip-under-mask" => Medium::Microstrip {
            h,
            er,
            cover: Cover::Mask {
                thickness_m: error::length("mask-thickness", length("mask-thickness")?)?,
                er: error::permittivity("mask-dk", number("mask-dk")?)?,
            },
        },
        "microstrip-under-dielectric" => Medium::Microstrip {
            h,
            er,
            cover: Cover::Dielectric {
                thickness_m: error::length("cover", length("cover")?)?,
                er: error::permittivity("cover-dk", number("cover-dk")?)?,
            },
        },
        "microstrip-pair" => {
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
        "stripline-pair-stacked" => Medium::Broadside {
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
        "stripline-pair" | "microstrip-pair" => (
            Structure::EdgePair,
            Some(error::length("spacing", length("spacing")?)?),
            None,
        ),
        "stripline-pair-stacked" => (Structure::BroadsidePair, None, None),
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

#[cfg(test)]
mod tests {
    use super::*;

    fn fields(pairs: &[(&str, &str)]) -> BTreeMap<String, String> {
        pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect()
    }

    #[test]
    fn earlier_kind_names_read_as_their_new_kinds() {
        let base = [
            ("width", "0.2mm"),
            ("height", "0.1mm"),
            ("thickness", "35um"),
            ("dk", "4"),
        ];
        let extra: &[(&str, &[(&str, &str)])] = &[
            (
                "coated-microstrip",
                &[("mask-thickness", "20um"), ("mask-dk", "3.8")],
            ),
            (
                "embedded-microstrip",
                &[("cover", "50um"), ("cover-dk", "4")],
            ),
            ("edge-coupled-microstrip", &[("spacing", "0.15mm")]),
            ("edge-coupled-stripline", &[("spacing", "0.15mm")]),
            ("broadside-stripline", &[("separation", "0.1mm")]),
        ];
        for (old, more) in extra {
            let new = canonical_kind(old).unwrap();
            assert_ne!(*old, new);
            let f = fields(&[&base[..], more].concat());
            let (a, b) = (parse(old, &f).unwrap(), parse(new, &f).unwrap());
            assert_eq!(a, b, "{old}");
            assert_eq!(a.kind, new);
            assert_eq!(a.analyze().unwrap().analysis, b.analyze().unwrap().analysis);
        }
        // Every alias points at a listed kind, no alias shadows a kind, and unknown names stay errors.
        for (old, new) in KIND_ALIASES {
            assert!(KINDS.iter().any(|k| k.0 == *new), "{new}");
            assert!(KINDS.iter().all(|k| k.0 != *old), "{old}");
        }
        assert_eq!(canonical_kind("microstrip"), Some("microstrip"));
        assert_eq!(canonical_kind("nonesuch"), None);
        let e = parse("nonesuch", &fields(&base)).unwrap_err().to_string();
        assert!(
            e.starts_with("structure") && e.contains("microstrip-under-mask"),
            "{e}"
        );
    }
}
