//! Dispatch from a resolved cross-section and a rule's structure to the family module that models it.
//! This is the one place that knows which published method serves which geometry.

pub mod bands;
pub mod coated_microstrip;
pub mod coplanar;
pub mod coupled_coplanar;
pub mod coupled_microstrip;
pub mod coupled_stripline;
pub mod microstrip;
pub mod strip_moments;
pub mod stripline;

use crate::base::error::{Error, Result};
use crate::base::validity::Warning;
use crate::closed_form::coated_microstrip::CoveredMicrostrip;
use crate::closed_form::coupled_microstrip::{CoveredEdgeCoupledMicrostrip, EdgeCoupledMicrostrip};
use crate::closed_form::coupled_stripline::{BroadsideStripline, EdgeCoupledStripline};
use crate::closed_form::microstrip::Microstrip;
use crate::closed_form::stripline::Stripline;
use crate::design::project::Structure;
use crate::section::{Analysis, Dims};
use crate::section::{Cover, CrossSection, Medium};

/// A model evaluation plus the name of the method used.
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluated {
    pub analysis: Analysis,
    pub method: &'static str,
}

fn unsupported(what: &str) -> Error {
    Error::Invalid {
        field: "structure".into(),
        reason: format!("{what} is not available yet"),
    }
}

/// Evaluates the structure `structure` on cross-section `cs` with dimensions `dims`.
pub fn evaluate(cs: &CrossSection, structure: Structure, dims: &Dims) -> Result<Evaluated> {
    match (structure, cs.medium) {
        (Structure::Single, Medium::Microstrip { h, er, cover }) => {
            let line = Microstrip {
                w: dims.w,
                h,
                t: cs.t,
                er,
            };
            if cover == Cover::Air {
                return Ok(Evaluated {
                    analysis: Analysis::Single(line.analyze()?),
                    method: "Hammerstad–Jensen 1980",
                });
            }
            Ok(Evaluated {
                analysis: Analysis::Single(CoveredMicrostrip { line, cover }.analyze()?),
                method: "Hammerstad–Jensen 1980 + filling-factor cover correction",
            })
        }
        (Structure::EdgePair, Medium::Microstrip { h, er, cover }) => {
            let s = dims.s.ok_or_else(|| Error::Invalid {
                field: "spacing".into(),
                reason: "missing (an edge-coupled pair needs the spacing between its traces)"
                    .into(),
            })?;
            let pair = EdgeCoupledMicrostrip {
                w: dims.w,
                s,
                h,
                t: cs.t,
                er,
            };
            Ok(Evaluated {
                analysis: Analysis::Pair(CoveredEdgeCoupledMicrostrip { pair, cover }.analyze()?),
                method: if cover == Cover::Air {
                    "Kirschning–Jansen 1984"
                } else {
                    "Kirschning–Jansen 1984 + filling-factor cover correction per mode"
                },
            })
        }
        (
            Structure::Single,
            Medium::Stripline {
                h_below,
                h_above,
                er,
                dual,
            },
        ) => {
            let line = Stripline {
                w: dims.w,
                h_below,
                h_above,
                t: cs.t,
                er,
            };
            let mut analysis = line.analyze()?;
            if dual {
                analysis.warnings.push(Warning::new(
                    "dual stripline: the other signal layer between the planes is ignored (computed as offset stripline)",
                ));
            }
            let method = if line.is_symmetric() {
                "Cohn 1954 + Wheeler 1978 thickness"
            } else {
                "Cohn 1954 + Wheeler 1978, offset by capacitance superposition"
            };
            Ok(Evaluated {
                analysis: Analysis::Single(analysis),
                method,
            })
        }
        (
            Structure::EdgePair,
            Medium::Stripline {
                h_below,
                h_above,
                er,
                dual,
            },
        ) => {
            let pair = EdgeCoupledStripline {
                w: dims.w,
                s: dims.s.ok_or_else(|| Error::Invalid {
                    field: "spacing".into(),
                    reason: "missing (an edge-coupled pair needs its spacing)".into(),
                })?,
                h_below,
                h_above,
                t: cs.t,
                er,
            };
            let mut analysis = pair.analyze()?;
            if dual {
                analysis.warnings.push(Warning::new(
                    "dual stripline: the other signal layer between the planes is ignored",
                ));
            }
            Ok(Evaluated {
                analysis: Analysis::Pair(analysis),
                method: "Cohn 1955 coupled strips + thickness superposition",
            })
        }
        (
            Structure::BroadsidePair,
            Medium::Broadside {
                h_above,
                separation,
                h_below,
                er,
            },
        ) => {
            let pair = BroadsideStripline {
                w: dims.w,
                h_above,
                separation,
                h_below,
                t: cs.t,
                er,
            };
            Ok(Evaluated {
                analysis: Analysis::Pair(pair.analyze()?),
                method: "moment method, exact parallel-plate Green's function",
            })
        }
        (Structure::Coplanar, Medium::NoPlane { .. } | Medium::Microstrip { .. }) => {
            coplanar_single(cs, dims)
        }
        (Structure::CoplanarPair, Medium::NoPlane { .. } | Medium::Microstrip { .. }) => {
            coplanar_pair(cs, dims)
        }
        (
            Structure::Coplanar | Structure::CoplanarPair,
            Medium::Stripline { .. } | Medium::Broadside { .. },
        ) => Err(Error::Invalid {
            field: "structure".into(),
            reason:
                "coplanar on an inner layer is not modelled in closed form; use the field solver"
                    .into(),
        }),
        (s, _) => Err(unsupported(&format!("{} on {}", s.label(), cs.family()))),
    }
}

/// The coplanar backing and substrate of a no-plane or one-plane cross-section.
fn coplanar_medium(cs: &CrossSection) -> (f64, f64, crate::closed_form::coplanar::Backing) {
    use crate::closed_form::coplanar::Backing;
    match cs.medium {
        Medium::Microstrip { h, er, cover } => (h, er, Backing::Plane(cover)),
        Medium::NoPlane { h, er } => (h, er, Backing::None),
        // The caller only passes the two media above; a stripline never reaches here.
        Medium::Stripline { h_below, er, .. } => (h_below, er, Backing::None),
        Medium::Broadside { h_below, er, .. } => (h_below, er, Backing::None),
    }
}

fn coplanar_gap(dims: &Dims) -> Result<f64> {
    dims.gap.ok_or_else(|| Error::Invalid {
        field: "gap".into(),
        reason: "missing: coplanar structures need the gap to the coplanar ground".into(),
    })
}

fn coplanar_method(backing: crate::closed_form::coplanar::Backing, pair: bool) -> &'static str {
    use crate::closed_form::coplanar::Backing;
    match (backing, pair) {
        (Backing::None, false) => "Ghione–Naldi 1984 partial capacitance",
        (Backing::Plane(_), false) => "Ghione–Naldi 1983 conductor-backed CPW",
        (Backing::None, true) => "conformal mapping, odd/even modes (partial capacitance)",
        (Backing::Plane(_), true) => {
            "conformal mapping, odd/even modes, conductor-backed (partial capacitance)"
        }
    }
}

fn coplanar_single(cs: &CrossSection, dims: &Dims) -> Result<Evaluated> {
    let (h, er, backing) = coplanar_medium(cs);
    let line = crate::closed_form::coplanar::Coplanar {
        w: dims.w,
        g: coplanar_gap(dims)?,
        h,
        t: cs.t,
        er,
        backing,
    };
    Ok(Evaluated {
        analysis: Analysis::Single(line.analyze()?),
        method: coplanar_method(backing, false),
    })
}

fn coplanar_pair(cs: &CrossSection, dims: &Dims) -> Result<Evaluated> {
    let (h, er, backing) = coplanar_medium(cs);
    let s = dims.s.ok_or_else(|| Error::Invalid {
        field: "spacing".into(),
        reason: "missing: a coplanar pair needs the spacing between its traces".into(),
    })?;
    let pair = crate::closed_form::coupled_coplanar::CoplanarPair {
        w: dims.w,
        s,
        g: coplanar_gap(dims)?,
        h,
        t: cs.t,
        er,
        backing,
    };
    Ok(Evaluated {
        analysis: Analysis::Pair(pair.analyze()?),
        method: coplanar_method(backing, true),
    })
}
