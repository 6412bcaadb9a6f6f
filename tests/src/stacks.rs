//! Stacks built to order for the project-path checks: every (structure × cover) combination a stack can give a
//! rule, from a few numbers, so property tests and the field sweep go stack → cross-section → model like a user.

use ohmstack_core::base::units::LengthUnit;
use ohmstack_core::design::project::{Fab, SCHEMA_VERSION};
use ohmstack_core::design::stackup::{Copper, CopperRole, Dielectric};
use ohmstack_core::{ImpedanceRule, Layer, Project, Solve, Stackup, Structure};

/// What lies over a one-plane trace (or over a coplanar line without a plane).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Over {
    Air,
    /// Solder mask of this thickness (m) and Dk.
    Mask(f64, f64),
    /// Further core of this thickness (m) and Dk, then an unused signal layer.
    Dielectric(f64, f64),
}

/// Where the trace sits in the stack.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Place {
    /// On the outer layer over one plane at `h`.
    Microstrip(Over),
    /// Between two planes: `h` below, `h2` above.
    Stripline,
    /// Between two planes with a second signal layer (at mid-height of the upper core) between them.
    Dual,
    /// On the outer layer with no plane at all (coplanar only), the sheet of height `h` below.
    NoPlane(Over),
}

/// The numbers of a cross-section: heights (m), Dk of the substrate and copper thickness (m).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Geo {
    pub h: f64,
    pub h2: f64,
    pub er: f64,
    pub t: f64,
}

/// The trace's layer name in every built stack.
pub const TRACE: &str = "trace";

fn copper(name: &str, t: f64, role: CopperRole) -> Layer {
    Layer::Copper(Copper {
        name: name.into(),
        thickness_m: t,
        role,
        fill_pct: None,
        roughness: None,
    })
}

fn dielectric(name: &str, h: f64, dk: f64) -> Dielectric {
    Dielectric {
        name: name.into(),
        material: "test".into(),
        thickness_m: h,
        dk,
        df: 0.01,
        spec_freq_hz: 1e9,
        construction: None,
    }
}

/// Cores only, so no layer presses and the heights are exactly the ones given.
fn core(name: &str, h: f64, dk: f64) -> Layer {
    Layer::Core(dielectric(name, h, dk))
}

/// The stack for `place` with the trace on layer [`TRACE`].
pub fn stackup(place: Place, g: Geo) -> Stackup {
    let plane_t = 17.5e-6;
    let mut layers = Vec::new();
    let over = |layers: &mut Vec<Layer>, over: Over| match over {
        Over::Air => {}
        Over::Mask(c, dk) => layers.push(Layer::SolderMask(dielectric("mask", c, dk))),
        Over::Dielectric(c, dk) => {
            layers.push(copper("unused signal", plane_t, CopperRole::Signal));
            layers.push(core("cover", c, dk));
        }
    };
    match place {
        Place::Microstrip(o) => {
            over(&mut layers, o);
            layers.push(copper(TRACE, g.t, CopperRole::Signal));
            layers.push(core("substrate", g.h, g.er));
            layers.push(copper("plane", plane_t, CopperRole::Plane));
        }
        Place::NoPlane(o) => {
            over(&mut layers, o);
            layers.push(copper(TRACE, g.t, CopperRole::Signal));
            layers.push(core("substrate", g.h, g.er));
            layers.push(copper("bottom", plane_t, CopperRole::Signal));
        }
        Place::Stripline => {
            layers.push(copper("plane above", plane_t, CopperRole::Plane));
            layers.push(core("above", g.h2, g.er));
            layers.push(copper(TRACE, g.t, CopperRole::Signal));
            layers.push(core("below", g.h, g.er));
            layers.push(copper("plane below", plane_t, CopperRole::Plane));
        }
        Place::Dual => {
            layers.push(copper("plane above", plane_t, CopperRole::Plane));
            layers.push(core("above", g.h2, g.er));
            layers.push(copper("other signal", g.t, CopperRole::Signal));
            layers.push(core("between", g.h2, g.er));
            layers.push(copper(TRACE, g.t, CopperRole::Signal));
            layers.push(core("below", g.h, g.er));
            layers.push(copper("plane below", plane_t, CopperRole::Plane));
        }
    }
    Stackup { layers }
}

/// A project holding one rule of `structure` on `place`, analysed as given (solve "nothing").
pub fn project(
    place: Place,
    g: Geo,
    structure: Structure,
    w: f64,
    s: Option<f64>,
    gap: Option<f64>,
) -> Project {
    let mut references = Vec::new();
    if matches!(place, Place::NoPlane(_)) {
        references.push(TRACE.to_string());
    }
    let partner_layer = (structure == Structure::BroadsidePair).then(|| "other signal".to_string());
    Project {
        routing: Default::default(),
        schema: SCHEMA_VERSION,
        title: "built stack".into(),
        revision: String::new(),
        units: LengthUnit::Um,
        analysis_freq_hz: 1e9,
        fab: Fab {
            min_trace_m: 1e-6,
            min_space_m: 1e-6,
            etch_factor: None,
            thickness_tolerance_pct: None,
            outer_plating_m: None,
            target_thickness_m: None,
        },
        loss: Default::default(),
        process: None,
        stackup: stackup(place, g),
        rules: vec![ImpedanceRule {
            name: "rule".into(),
            layer: TRACE.into(),
            structure,
            target_ohm: 50.0,
            tolerance_pct: 10.0,
            solve: Solve::Nothing,
            model: Default::default(),
            width_m: w,
            spacing_m: s,
            gap_m: gap,
            partner_layer,
            references,
            link: None,
        }],
    }
}

/// A masked edge-coupled pair on an outer layer, as the dimensions give it: 130 µm lines 150 µm apart, 35 µm copper
/// under 20 µm of mask (Dk 3.8), 120 µm over the plane in Dk 4.1.
pub fn masked_pair() -> Project {
    project(
        Place::Microstrip(Over::Mask(20e-6, 3.8)),
        Geo {
            h: 120e-6,
            h2: 120e-6,
            er: 4.1,
            t: 35e-6,
        },
        Structure::EdgePair,
        130e-6,
        Some(150e-6),
        None,
    )
}
